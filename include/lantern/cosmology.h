/*
 * lantern/cosmology.h - expansion history, distances and ages.
 *
 * A model (lt_cosmo_model) is an entry of a fixed table: a name, whether it
 * is spatially flat, which parameters it reads, and its dark energy (a small
 * table of function pointers). A cosmology (lt_cosmo) is a model with
 * parameter values, checked and with its derived densities worked out; it is
 * a plain value and needs no allocation.
 *
 * Distances for many redshifts cost about one pass: an lt_zgrid is built once
 * for a set of redshifts (sorted, with a quadrature plan in x = ln(1+z)), and
 * lt_cosmo_eval then integrates cumulatively from one redshift to the next
 * for any cosmology, allocating nothing.
 *
 * Conventions (see DESIGN.md): distances in Mpc, H0 in km/s/Mpc, times in Gyr,
 * omega_* are density fractions today (Omega_m, not Omega_m h^2).
 */
#ifndef LANTERN_COSMOLOGY_H
#define LANTERN_COSMOLOGY_H

#include <stddef.h>

#include "lantern/error.h"

/* Speed of light in km/s (exact, SI definition of the metre). */
#define LT_C_KM_S 299792.458

/* Parameters a model may read, by index. */
enum {
    LT_P_H0 = 0,  /* Hubble constant, km/s/Mpc */
    LT_P_OMEGA_M, /* matter density fraction today */
    LT_P_OMEGA_DE,/* dark-energy density fraction today (derived if flat) */
    LT_P_W0,      /* dark-energy equation of state today */
    LT_P_WA,      /* its slope in the scale factor, w = w0 + wa (1 - a) */
    LT_P_T_CMB,   /* CMB temperature today, K; 0 switches radiation off */
    LT_P_N_EFF,   /* effective number of neutrino species (3.046) */
    LT_P_M_NU,    /* sum of the neutrino masses, eV, in one massive state */
    LT_P_OMEGA_B_H2, /* physical baryon density omega_b h^2 */
    LT_P_COUNT
};
/* m_nu and omega_b_h2 are early-universe parameters: no model lists them,
 * every model takes them, and they matter only with radiation on (m_nu)
 * or to the sound horizon and the CMB (omega_b_h2). */
#define LT_P_EARLY(id) ((id) == LT_P_M_NU || (id) == LT_P_OMEGA_B_H2)

#define LT_PMASK(id) (1u << (id))

typedef struct lt_cosmo_params {
    double h0, omega_m, omega_de, w0, wa, t_cmb, n_eff, m_nu, omega_b_h2;
} lt_cosmo_params;

typedef struct lt_cosmo lt_cosmo;

/* Dark energy, as a table of functions of the cosmology c. */
typedef struct lt_dark_energy {
    const char *name;
    /* rho_de(z) / rho_de(0) at x = ln(1+z); inv_y = 1/(1+z) is passed so
     * that no implementation has to recompute it. */
    double (*density)(const lt_cosmo *c, double x, double inv_y);
    /* equation of state w at redshift z, given inv_y = 1/(1+z) */
    double (*w)(const lt_cosmo *c, double inv_y);
    /* the limit of w as z -> infinity */
    double (*w_early)(const lt_cosmo *c);
} lt_dark_energy;

typedef struct lt_cosmo_model {
    const char *name;             /* "lcdm-flat", "w0wa", ... */
    const char *summary;          /* one line for --help */
    int flat;                     /* 1: omega_de = 1 - omega_m - omega_r */
    unsigned params;              /* LT_PMASK bits of the parameters it reads */
    const lt_dark_energy *de;
} lt_cosmo_model;

/* The model table. */
size_t lt_cosmo_model_count(void);
const lt_cosmo_model *lt_cosmo_model_at(size_t i);
/* NULL if no model has that name. */
const lt_cosmo_model *lt_cosmo_model_find(const char *name);
/* The model called name; else NULL, with "unknown model 'NAME' (models:
 * ...)" at file:line in err (file NULL or a flag such as "--model"). */
const lt_cosmo_model *lt_cosmo_model_lookup(const char *name, const char *file, long line,
                                            lt_error *err);
/* The models of text, a list "M1, M2 ..." (commas or blanks between), into
 * out[max] in order, *n of them. An unknown name, a model listed twice,
 * more than max or none is refused at file:line, the message after what
 * (a prefix such as "[run] models: ", or ""). */
int lt_cosmo_model_list(const char *text, const char *file, long line, const char *what,
                        size_t max, const lt_cosmo_model **out, size_t *n, lt_error *err);
/* Whether model m reads parameter id (t_cmb and n_eff: every model). */
int lt_cosmo_model_uses(const lt_cosmo_model *m, int id);

/* Parameter names ("h0", "omega_m", ...) and back; -1 if unknown. */
const char *lt_cosmo_param_name(int id);
int lt_cosmo_param_find(const char *name);
/* Defaults: h0 70, omega_m 0.3, omega_de 0.7, w0 -1, wa 0, t_cmb 0 (radiation
 * off), n_eff 3.046, m_nu 0.06, omega_b_h2 0.02237. */
void lt_cosmo_params_default(lt_cosmo_params *p);
/* The slot of parameter id inside p. */
double *lt_cosmo_params_slot(lt_cosmo_params *p, int id);
/*
 * Set parameter name to value in p, for model m. Fails with LT_EINPUT, and a
 * message that says what to do instead, for an unknown name, a parameter the
 * model does not read, or a derived one (omega_k; omega_de of a flat model).
 * Every model takes the early-universe parameters (LT_P_EARLY).
 */
int lt_cosmo_params_set(lt_cosmo_params *p, const lt_cosmo_model *m,
                        const char *name, double value, lt_error *err);

/* A list "name=value,name=value" (as --set takes it) applied with
 * lt_cosmo_params_set. *seen collects the LT_PMASK bits given so far, over
 * several lists: a name given twice is an error. Errors name where as their
 * file (the option, say). */
int lt_cosmo_params_parse(lt_cosmo_params *p, const lt_cosmo_model *m, const char *text,
                          unsigned *seen, const char *where, lt_error *err);

/*
 * A model with parameter values and what follows from them. Read the fields
 * freely; fill it only with lt_cosmo_init.
 *
 * With radiation on (t_cmb > 0) the neutrinos are N_eff/3 species each
 * (DESIGN.md): with m_nu > 0 one of them carries the whole mass m_nu and
 * the other two are massless. The massive one's density follows the
 * fitting function of Komatsu et al. 2011 (ApJS 192, 18, eq. 26; astropy
 * uses it too): rho(z) = 7/8 (4/11)^(4/3) (N_eff/3) rho_gamma(z) f(y/(1+z)),
 * f(u) = (1 + (0.3173 u)^1.83)^(1/1.83), y = m_nu / (k_B T_nu0),
 * T_nu0 = (4/11)^(1/3) T_CMB: radiation early, matter late. omega_m
 * includes it today (as Planck and DESI quote omega_m); omega_r counts the
 * photons and the massless species; flat models close with
 * omega_de = 1 - omega_m - omega_r. With radiation off all of these are 0
 * and m_nu is ignored.
 */
struct lt_cosmo {
    const lt_cosmo_model *model;
    lt_cosmo_params p;   /* as given; p.omega_de holds the derived value if flat */
    double omega_gamma;  /* photons, from t_cmb */
    double omega_nu;     /* massless neutrinos, from t_cmb and n_eff */
    double omega_r;      /* omega_gamma + omega_nu */
    double omega_k;      /* 1 - omega_m - omega_de - omega_r (0 if flat) */
    double omega_nu_mass;/* the massive neutrino today (part of omega_m) */
    double omega_cb;     /* omega_m - omega_nu_mass: cold dark matter and baryons */
    double nu_coef;      /* the massive state's density over f, times (1+z)^-4 */
    double nu_y;         /* m_nu / (k_B T_nu0) */
    double dh_mpc;       /* Hubble distance c/H0 */
    double th_gyr;       /* Hubble time 1/H0 */
};

/*
 * Check the parameter values and fill c. Fails (LT_EINPUT) for non-finite
 * values, h0 <= 0, t_cmb < 0, n_eff < 0, m_nu < 0 or omega_b_h2 < 0. Densities may take any sign here:
 * whether E^2 stays positive depends on the redshift range and is checked by
 * the functions that integrate.
 */
int lt_cosmo_init(lt_cosmo *c, const lt_cosmo_model *m, const lt_cosmo_params *p,
                  lt_error *err);

/* E^2(z) = H^2(z)/H0^2, E(z), H(z) in km/s/Mpc (NaN where E^2 < 0). */
double lt_cosmo_e2(const lt_cosmo *c, double z);
double lt_cosmo_efunc(const lt_cosmo *c, double z);
double lt_cosmo_hubble(const lt_cosmo *c, double z);
/* Dark-energy equation of state w(z). */
double lt_cosmo_w(const lt_cosmo *c, double z);
/* Deceleration parameter q(z) = -a (d^2a/dt^2) / (da/dt)^2. */
double lt_cosmo_q(const lt_cosmo *c, double z);

/*
 * Age of the universe at redshift z, in Gyr: the time since the big bang,
 * integral of dz'/((1+z') H) from z to infinity. Requires E^2 > 0 on
 * [0, infinity): otherwise there was no big bang and the call fails with
 * LT_EDOMAIN. A universe with no matter, radiation or curvature and w <= -1
 * at early times (de Sitter) has an infinite age: *age_gyr = +INFINITY and
 * LT_OK.
 */
int lt_cosmo_age(const lt_cosmo *c, double z, double *age_gyr, lt_error *err);

/* A set of redshifts prepared for cumulative integration. */
typedef struct lt_zgrid lt_zgrid;

/* Sort and plan n redshifts (each finite and >= 0). NULL on failure. */
lt_zgrid *lt_zgrid_alloc(size_t n, const double *z, lt_error *err);
void lt_zgrid_free(lt_zgrid *g);
size_t lt_zgrid_size(const lt_zgrid *g);
/* Quadrature nodes used by one evaluation (for benchmarks and tests). */
size_t lt_zgrid_nodes(const lt_zgrid *g);

/*
 * Output arrays for lt_cosmo_eval, each of the grid's size, in the order the
 * redshifts were given. A NULL pointer means "not wanted".
 */
typedef struct lt_cosmo_table {
    double *comoving;   /* line-of-sight comoving distance D_C, Mpc */
    double *transverse; /* transverse comoving distance D_M, Mpc */
    double *luminosity; /* luminosity distance (1+z) D_M, Mpc */
    double *angular;    /* angular-diameter distance D_M/(1+z), Mpc */
    double *distmod;    /* distance modulus 5 log10(D_L / 10 pc), mag (-inf at z=0) */
    double *lookback;   /* lookback time, Gyr */
    double *age;        /* age at z, Gyr (+INFINITY for de Sitter) */
    double *hubble;     /* H(z), km/s/Mpc */
} lt_cosmo_table;

/*
 * Fill the requested columns of out for cosmology c on grid g, allocating
 * nothing. Fails with LT_EDOMAIN where E^2 <= 0 somewhere in [0, z_max], where
 * a closed universe's comoving distance reaches the antipode, and, if ages
 * are wanted, where there was no big bang. On failure the outputs hold
 * unspecified values.
 */
int lt_cosmo_eval(const lt_cosmo *c, const lt_zgrid *g, const lt_cosmo_table *out,
                  lt_error *err);

/* ---- the early universe ---- */

/*
 * The sound horizon at the baryon drag epoch, r_d in Mpc, by the fitting
 * formula of Aubourg et al. 2015 (PRD 92, 123516, eq. 16):
 *     r_d = 55.154 exp(-72.3 (w_nu + 0.0006)^2) / (w_cb^0.25351 w_b^0.12807),
 * w_b = omega_b_h2, w_nu = m_nu / 93.14 eV (0 with radiation off),
 * w_cb = omega_m h^2 - w_nu. It holds for n_eff = 3.046 only: another
 * n_eff is refused (LT_EINPUT); w_b or w_cb <= 0 is LT_EDOMAIN.
 */
int lt_cosmo_rd(const lt_cosmo *c, double *rd, lt_error *err);
/* The redshift of photon decoupling z_* by the fitting formula of Hu &
 * Sugiyama 1996 (ApJ 471, 542, eqs. E1-E3) in omega_b_h2 and omega_m h^2. */
double lt_cosmo_z_star(const lt_cosmo *c);
/* The comoving sound horizon at redshift z, r_s(z) = integral from z to
 * infinity of c_s / H dz in Mpc, c_s = c / sqrt(3 (1 + R_b)) with
 * R_b = 3 omega_b / (4 omega_gamma (1+z)). Needs radiation (t_cmb > 0,
 * else LT_EINPUT); LT_EDOMAIN where E^2 <= 0 beyond z. */
int lt_cosmo_sound_horizon(const lt_cosmo *c, double z, double *rs, lt_error *err);
/* D_M at one redshift, in Mpc, without a grid (for a redshift that moves
 * with the parameters, as z_* does); LT_EDOMAIN as lt_cosmo_eval. */
int lt_cosmo_transverse_at(const lt_cosmo *c, double z, double *dm, lt_error *err);

/* What the CMB's distance priors compare. */
typedef struct lt_cmb_point {
    double z_star;     /* lt_cosmo_z_star */
    double rs_star;    /* r_s(z_*), Mpc */
    double dm_star;    /* D_M(z_*), Mpc */
    double shift_r;    /* R = sqrt(omega_m) H0 D_M(z_*) / c */
    double acoustic_l; /* l_A = pi D_M(z_*) / r_s(z_*) */
} lt_cmb_point;
/* The CMB quantities of c (radiation on) at decoupling z_star, or, with
 * z_star NaN, at lt_cosmo_z_star; errors as above. */
int lt_cosmo_cmb(const lt_cosmo *c, double z_star, lt_cmb_point *out, lt_error *err);
/* Whether c has the standard early universe the r_d formula and the CMB
 * quantities assume: radiation on, and dark energy negligible early (w < 0
 * as z -> infinity: w0 + wa < 0 for w0-wa, as DESI 2024 VI required). */
int lt_cosmo_early_standard(const lt_cosmo *c);
/* r_d and the CMB quantities together, for a report: each NaN where it is
 * undefined (not lt_cosmo_early_standard, n_eff other than 3.046 for r_d,
 * E^2 <= 0). */
typedef struct lt_cosmo_early {
    double rd;
    lt_cmb_point cmb;
} lt_cosmo_early;
void lt_cosmo_early_eval(const lt_cosmo *c, lt_cosmo_early *e);

/* Redshifts from text into a new array *z of *n: a comma-separated list
 * ("0.1,0.5,1"; every item a finite number >= 0, none empty), or a range
 * "LO:HI:N" or "LO:HI:N:log" (N from 1 to 10^7 points, evenly or
 * logarithmically spaced, the last exactly HI). Errors name origin (the
 * flag). */
int lt_z_parse_list(const char *text, const char *origin, double **z, size_t *n, lt_error *err);
int lt_z_parse_range(const char *text, const char *origin, double **z, size_t *n,
                     lt_error *err);

#endif
