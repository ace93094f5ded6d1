/*
 * lantern/simulate.h - synthetic surveys from a scenario file.
 *
 * A module of its own because it needs both the cosmology engine (the true
 * distances) and the survey types (what it makes), while the survey module
 * itself must not know about models (DESIGN.md).
 *
 * The scenario (an INI file, keys in lantern simulate --help) gives a
 * model and its parameters, the observable, the noise and one or more tiers
 * of redshift range and count. For object i in tier t:
 *
 *   observed = truth(z_i, zhel_i) + [offset for mag] + d_t
 *              + N(0, error_t) + N(0, intrinsic) + N(0, sigma_pv(z_i))
 *   err_i^2  = error_t^2 + intrinsic^2 + sigma_pv(z_i)^2
 *
 * with d_t ~ N(0, calibration_t) one draw per tier (a calibration offset
 * shared by the tier), whose covariance, sum_t calibration_t^2 1_t 1_t^T,
 * is written both as a dense matrix and as one mode per tier. The
 * peculiar-velocity term is
 *
 *   sigma_pv(z) = (5 / ln 10) (sigma_v / c) (1 + z) / (z (1 + z/2)),
 *
 * the change of 5 log10 d_L for a redshift error sigma_v / c when
 * d_L = (c/H0) z (1 + z/2) (the low-redshift expansion of Hogg 1999 eq. 21
 * with q0 = 0, differentiated here); it tends to (5 / ln 10) sigma_v/(c z).
 * Heliocentric redshifts carry the Sun's motion: 1 + zhel = (1 + z)(1 + v
 * cos(theta)/c) with cos(theta) uniform in [-1, 1].
 *
 * For dl data the same magnitude noise is applied as a factor 10^(d/5) and
 * errors are dl (ln 10 / 5) sigma.
 */
#ifndef LANTERN_SIMULATE_H
#define LANTERN_SIMULATE_H

#include "lantern/ini.h"
#include "lantern/cosmology.h"
#include "lantern/survey.h"

typedef struct lt_sim_tier {
    char *name;
    double z_min, z_max;
    long count;
    double error;       /* measurement error, mag */
    double calibration; /* calibration-offset amplitude, mag */
    int volume;         /* 1: redshifts follow the comoving volume; 0: uniform in z */
} lt_sim_tier;

typedef struct lt_scenario {
    char *path;
    char *name;
    unsigned long seed;
    lt_obs kind;
    double offset;              /* absolute magnitude M for mag data */
    double intrinsic;           /* mag */
    double velocity_dispersion; /* km/s */
    double solar_motion;        /* km/s */
    const lt_cosmo_model *model;
    lt_cosmo_params params;
    size_t ntiers;
    lt_sim_tier *tiers;
} lt_scenario;

/* Read and check a scenario file; errors name the file and line. The
 * sections a forecast adds ([forecast], [priors], [fixed]) are passed over:
 * lt_forecast_read checks them. */
int lt_scenario_read(const char *path, lt_scenario *sc, lt_error *err);
/* The same from an INI file already read, for files that add sections of
 * their own (forecasts): the caller checks for unused keys. */
int lt_scenario_from_ini(lt_ini *ini, lt_scenario *sc, lt_error *err);
void lt_scenario_free(lt_scenario *sc);

typedef struct lt_sim {
    lt_survey *survey;  /* the objects; cov = diag(err^2) + modes, factored */
    size_t *tier;       /* tier index of each object */
    double *truth;      /* the noiseless observable of each object */
    double *calib;      /* the calibration offset drawn for each tier */
    size_t n, ntiers;
    double *modes;      /* n x ntiers: the unit tier indicators (dl: scaled) */
    double *amplitude;  /* ntiers */
} lt_sim;

/* Simulate; the same scenario (and seed) gives the same survey, bit for bit. */
int lt_simulate(const lt_scenario *sc, lt_sim *out, lt_error *err);
void lt_sim_free(lt_sim *sim);

/* Dense matrices above this size go to covariance.fits, not text; above
 * LT_SIM_DENSE_MAX objects no dense matrix is written at all (10^4 objects
 * already make 800 MB): the modes carry the same covariance in N k. */
#define LT_SIM_TEXT_COV_MAX 2000
#define LT_SIM_DENSE_MAX 10000

/* The dense covariance file's name for n objects, or NULL when none is
 * written. */
const char *lt_sim_cov_name(size_t n);

/*
 * Write survey.csv, survey.fits, covariance.txt (or covariance.fits for
 * more than LT_SIM_TEXT_COV_MAX objects, none above LT_SIM_DENSE_MAX),
 * modes.csv and truth.json into dir
 * (which lt_outdir_prepare has accepted). Each file is written to a
 * temporary name and renamed only once every file is complete.
 */
int lt_sim_write(const lt_scenario *sc, const lt_sim *sim, const char *dir, lt_error *err);

#endif
