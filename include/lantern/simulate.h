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
 *
 * Light curves (observable = mb) follow the generative model of the latent
 * standardisation (March et al. 2011; lantern/likelihood.h), so that a fit
 * can be checked for bias: in tier t, true x1 ~ N(x1_mean, x1_sd), true
 * c ~ N(color_mean, color_sd), log10 host mass ~ N(mass_mean, mass_sd)
 * (recorded exactly), and
 *
 *   mb = mu(z, zhel) + M + gamma [mass >= mass_split] - alpha x1 + beta c
 *        + d_t + N(0, intrinsic_t) + N(0, sigma_pv(z)) + N(0, 0.055 z)
 *        + N(0, error_t),
 *
 * observed x1 and c with N(0, err_x1_t) and N(0, err_color_t); err_mb is
 * error_t alone (the fit adds the scatter, velocities and lensing). A tier
 * of calibrators (calibrators = yes) has calib_mu = mu + N(0, calib_error)
 * and neither velocities nor lensing in mb: its distance is its own.
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
    /* light curves (observable mb) only */
    double intrinsic;                        /* this tier's sigma_int, mag */
    double x1_mean, x1_sd, color_mean, color_sd; /* the true populations */
    double err_x1, err_color;                /* measurement errors */
    double mass_mean, mass_sd;               /* log10 host mass */
    int calibrators;                         /* 1: every object is a calibrator */
    double calib_error;                      /* a calibrator's distance error, mag */
} lt_sim_tier;

typedef struct lt_scenario {
    char *path;
    char *name;
    unsigned long seed;
    lt_obs kind;
    double offset;              /* absolute magnitude M for mag and mb data */
    double alpha, beta, gamma;  /* mb: the standardisation (Tripp 1998) */
    double mass_split;          /* mb: gamma applies at log10 mass >= this */
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
    double *x1_true, *color_true; /* mb: each object's true x1 and colour */
} lt_sim;

/* The true value of a fitted parameter's name in scenario sc, or NaN when
 * the scenario does not set it: cosmological parameters; offset (M, shifted
 * by 5 log10(h0_fixed / h0) when the fit holds h0 at h0_fixed; M itself
 * for h0_fixed NaN, h0 free); and for light curves alpha, beta, gamma, sigma_int,
 * x1_mean, x1_sd, color_mean, color_sd, with @TIER for a tier's (sigma_int
 * alone only where every tier has the same). */
double lt_scenario_truth(const lt_scenario *sc, const char *name, double h0_fixed);

/* Simulate; the same scenario (and seed) gives the same survey, bit for bit. */
int lt_simulate(const lt_scenario *sc, lt_sim *out, lt_error *err);
void lt_sim_free(lt_sim *sim);

/* Dense matrices above this size go to covariance.fits, not text; above
 * LT_SIM_DENSE_MAX objects no dense matrix is written at all (10^4 objects
 * already make 800 MB): the modes carry the same covariance in N k. */
#define LT_SIM_TEXT_COV_MAX 2000
#define LT_SIM_DENSE_MAX 10000

/* The --columns option that reads sim's survey.csv, into buf (size at
 * least LT_SIM_COLUMNS_MAX holds it). */
#define LT_SIM_COLUMNS_MAX 256
void lt_sim_columns(const lt_sim *sim, char *buf, size_t size);

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
