/*
 * lantern/likelihood.h - parameters by name, priors, and the likelihood as
 * a sum of terms.
 *
 * A likelihood joins a cosmological model and terms, each bringing its
 * own data and perhaps parameters of its own:
 *   - supernovae: a survey, whose model prediction is
 *         mu_i = 5 log10( (1 + zhel_i) D_M(z_i) / 10 pc )  [+ offset]
 *     and chi2 = r^T C^-1 r with r = observed - predicted, using the
 *     survey's factored covariance; for dl data, r = dl_observed - (1 + zhel) D_M;
 *   - measurements: a Gaussian measurement of any parameter or derived
 *     quantity, chi2 = ((x - mean) / sd)^2.
 * chi2 and the log-likelihood are the sums over the terms.
 *
 * Parameters live in a table built at set-up: the model's cosmological
 * parameters and every term's own, each with a name, a LaTeX label, a
 * unit, a prior, and free or fixed. Everything addresses them by name;
 * arrays of values are indexed by free-parameter position (0 .. dim - 1,
 * in the table's order: the cosmological ones in the model's order, then
 * the terms').
 *
 * The supernova offset (the absolute magnitude M of mag = mu + M) can be
 *   - marginal: integrated out analytically with a flat prior (Goliath et
 *     al. 2001, A&A 380, 6; Conley et al. 2011, ApJS 192, 1, appendix C):
 *         chi2_marg = A - B^2/C + ln(C / 2 pi),
 *     A = r^T C^-1 r, B = 1^T C^-1 r, C = 1^T C^-1 1 with r = observed - mu.
 *     The reported chi2 is A - B^2/C (chi2 at the best offset B/C); the
 *     ln(C/2pi) term is a constant of the data, kept so that ln Z is that
 *     of a flat offset prior of unit width (1 mag). h0 is then degenerate
 *     with the offset and held at its fixed value (70 unless fixed
 *     otherwise) unless another term depends on h0.
 *   - sampled: a parameter like any other, with a prior (for example an H0
 *     calibration); h0 is then free.
 *   - none: no offset (the default for mu and dl data); h0 is free.
 *
 * The evaluation allocates nothing: each thread owns an lt_like_work.
 */
#ifndef LANTERN_LIKELIHOOD_H
#define LANTERN_LIKELIHOOD_H

#include "lantern/cosmology.h"
#include "lantern/survey.h"

typedef enum { LT_PRIOR_UNIFORM = 0, LT_PRIOR_GAUSS } lt_prior_kind;

typedef struct lt_prior {
    lt_prior_kind kind;
    double a, b; /* uniform: lo, hi; gauss: mean, sd */
} lt_prior;

/* Parse "uniform:LO:HI" or "gauss:MEAN:SD"; LT_EINPUT with a message. */
int lt_prior_parse(const char *text, lt_prior *p, lt_error *err);
/* ln of the prior density at x (-inf outside a uniform prior). */
double lt_prior_logpdf(const lt_prior *p, double x);
/* Print "U(0, 1)" or "N(-19.3, 0.1)" into buf. */
void lt_prior_format(const lt_prior *p, char *buf, size_t size);

/* ---- parameters ---- */

#define LT_NAME_MAX 32   /* a parameter's name, with its terminating NUL */
#define LT_MAX_PARAMS 64 /* parameters of one likelihood, free and fixed */
#define LT_MAX_FREE 48   /* free parameters of one likelihood: the length of
                          * arrays indexed by free-parameter position (the
                          * latent standardisation of four groups has 25) */

typedef struct lt_param {
    char name[LT_NAME_MAX]; /* "omega_m", "offset" */
    char label[64];         /* LaTeX, without $: "\\Omega_m", "\\sigma_\\mathrm{int}^{(2)}" */
    const char *unit;       /* "" (none), "km/s/Mpc", "mag", "K" */
    lt_prior prior;         /* of a free parameter */
    int free;
    double value;           /* of a fixed parameter */
} lt_param;

/* Whether name is a parameter some model or term can have: the
 * cosmological ones (m_nu and omega_b_h2 included), offset, rd_h, and the
 * standardisation's (alpha, beta, gamma, sigma_int, x1_mean, x1_sd,
 * color_mean, color_sd; offset, sigma_int and the last four also per group
 * as NAME@GROUP). */
int lt_param_known(const char *name);
/* Whether name is one of the standardisation's (lt_param_known's list). */
int lt_param_is_standardisation(const char *name);
/* Whether a likelihood of model m can have parameter name: offset always
 * (where the data need one); omega_de not in a flat model, where it is
 * derived; the model's cosmological parameters. */
int lt_param_of_model(const lt_cosmo_model *m, const char *name);
/* The names lt_param_known accepts, for messages: "h0, omega_m, ...". */
const char *lt_param_known_list(void);
/* The default prior of a parameter for an observable (DESIGN.md):
 * omega_m U(0,1), omega_de U(0,1.6), w0 U(-2,0), wa U(-3,2), h0 U(40,100),
 * omega_b_h2 U(0.005,0.1), rd_h U(50,150) (Mpc), offset U(-21,-17) for mag
 * and mb data and U(-2,2) otherwise; the standardisation's alpha U(0,1),
 * beta U(0,10), gamma U(-0.5,0.5), sigma_int U(0,1), x1_mean U(-5,5),
 * x1_sd U(0,5), color_mean U(-1,1), color_sd U(0,1), offset@GROUP
 * U(-1,1); U(0, 0) for a name without one (m_nu: fixed unless given a
 * prior). */
lt_prior lt_param_default_prior(const char *name, lt_obs kind);

/* The part of a name before '@' (the whole name without one) into base
 * (LT_NAME_MAX); the group after it, or NULL. */
const char *lt_param_split(const char *name, char *base);

/*
 * The standardisation of a light-curve table (Tripp 1998, A&A 331, 815):
 *     mu_obs = mb - M - gamma P(high mass) + alpha x1 - beta c,
 * M the offset (plus offset@GROUP where asked for), P the probability that
 * the host's log10 mass is at least mass_split (a step without err_mass).
 * Each object's magnitude also scatters by sigma_int (one per group unless
 * shared), by its redshift error and peculiar velocity,
 *     sigma_z = (5 / ln 10) sqrt(dz^2 + (v / c)^2) (1 + z) / (z (1 + z/2))
 * (the formula lantern simulate uses), and by lensing, 0.055 z (Jonsson et
 * al. 2010, MNRAS 405, 535). Two likelihoods (src/likelihood/standard.c):
 *   latent (the default): the true x1 and c of each object drawn from a
 *     Gaussian population per group (x1_mean, x1_sd, color_mean, color_sd)
 *     and integrated out analytically with the true magnitude's scatter
 *     (March et al. 2011, MNRAS 418, 2308): a normalised likelihood of
 *     (mb, x1, c), so sigma_int is a parameter and ln Z means something;
 *   chi2: the residuals of mu_obs against C(alpha, beta) without its ln
 *     det (Conley et al. 2011, ApJS 192, 1), sigma_int fixed, set per group
 *     so that its chi2 per degree of freedom is 1 (lt_like_scatter_tune).
 */
typedef enum { LT_STD_LATENT = 0, LT_STD_CHI2 } lt_std_method;
const char *lt_std_method_name(lt_std_method m); /* "latent", "chi2" */
int lt_std_method_parse(const char *text);        /* -1 if neither */
typedef struct lt_std_spec {
    lt_std_method method;
    int shared_scatter;         /* 1: one sigma_int for every group */
    double velocity_dispersion; /* km/s (150, as JLA) */
    double mass_split;          /* log10 M / M_sun (LT_MASS_SPLIT) */
} lt_std_spec;

/* Groups of one light-curve table (each has its own scatter and, for the
 * latent method, populations). */
#define LT_STD_GROUPS_MAX 16

typedef enum { LT_OFFSET_DEFAULT = -1, LT_OFFSET_NONE = 0, LT_OFFSET_MARGINAL,
               LT_OFFSET_SAMPLED } lt_offset_mode;
const char *lt_offset_name(lt_offset_mode m); /* "none", "marginal", "sampled" */
/* "none", "marginal" or "sampled"; -1 if none of them. */
int lt_offset_parse(const char *text);

/* ---- what the user asked for ---- */

/* A prior on a parameter, or its fixed value, by name. */
typedef struct lt_param_setting {
    char name[LT_NAME_MAX];
    int fixed;
    lt_prior prior; /* unless fixed */
    double value;   /* if fixed */
    /* where it was given, for error messages: a run file and its line, or
     * NULL (then "--prior" or "--fix"); the string must outlive the spec */
    const char *origin;
    long line;
} lt_param_setting;

/* A Gaussian measurement of a parameter or derived quantity by name. */
typedef struct lt_measurement {
    char name[LT_NAME_MAX];
    double mean, sd;
    const char *origin; /* as in lt_param_setting; NULL: "--measure" */
    long line;
} lt_measurement;

#define LT_MAX_MEASUREMENTS 16

/* Start with lt_like_spec_init; a plain value (copies are independent). */
typedef struct lt_like_spec {
    const lt_cosmo_model *model;
    lt_offset_mode offset;      /* LT_OFFSET_DEFAULT: marginal for mag, else none */
    int exact; /* 1: always the exact N-object path (the compressed one is the default
                * for mu and mag data) */
    size_t nsettings;
    lt_param_setting settings[LT_MAX_PARAMS];
    size_t nmeasurements;
    lt_measurement measurements[LT_MAX_MEASUREMENTS];
    /* the BAO term: its table and covariance files (lt_probe_read; NULL:
     * no BAO term, or errors from the table's err column); rd_free samples
     * rd_h = r_d h instead of r_d from its formula. The strings must
     * outlive the spec. */
    const char *bao, *bao_cov;
    int rd_free;
    /* the CMB distance-prior term: its table and covariance files, or NULL */
    const char *cmb, *cmb_cov;
    /* 1: a setting of a parameter this likelihood lacks for want of a term
     * (rd_h, offset, m_nu, omega_b_h2, a free h0) is passed over, not
     * refused: a run file's priors serve every probe combination it lists.
     * A parameter the model lacks is refused all the same. */
    int lenient;
    lt_std_spec std; /* for a light-curve table */
    int std_given;   /* 1: std was asked for (refused without a light-curve table) */
} lt_like_spec;

void lt_like_spec_init(lt_like_spec *s, const lt_cosmo_model *m);
/* A prior on name, or its fixed value, replacing any earlier setting of
 * name. LT_EINPUT for a name too long or a full list. Whether the
 * likelihood has that parameter is checked by lt_like_alloc. */
int lt_like_spec_prior(lt_like_spec *s, const char *name, lt_prior p, lt_error *err);
int lt_like_spec_fix(lt_like_spec *s, const char *name, double value, lt_error *err);
/* The setting of name, or NULL. */
const lt_param_setting *lt_like_spec_setting(const lt_like_spec *s, const char *name);
/* Add a measurement name = mean +- sd (sd > 0). LT_EINPUT for a bad sd, a
 * name too long or a full list. Two measurements of one quantity are two
 * terms. The likelihood orders them by name (stably), so that the same
 * measurements in any order make the same likelihood, to the last bit. */
int lt_like_spec_measure(lt_like_spec *s, const char *name, double mean, double sd,
                         lt_error *err);

typedef struct lt_like lt_like;
typedef struct lt_like_work lt_like_work;

/*
 * Join survey s (NULL: no supernovae; it must outlive the likelihood) and
 * spec's terms. Fails with LT_EINPUT for a prior or fix on a parameter the
 * likelihood lacks, a derived parameter, impossible bounds, an offset with
 * dl data, h0 given a prior while only a marginalised offset depends on it,
 * a measurement of an unknown quantity, or no term at all.
 *
 * The parameter table: the model's (h0 free when a term depends on it),
 * then with radiation on (t_cmb fixed > 0, or a term that needs the early
 * universe, which sets t_cmb = 2.7255 K) m_nu (fixed at 0.06 eV unless
 * given a prior), then omega_b_h2 where a term reads it, then the terms'
 * own (offset, rd_h).
 */
lt_like *lt_like_alloc(const lt_survey *s, const lt_like_spec *spec, lt_error *err);
void lt_like_free(lt_like *l);

size_t lt_like_dim(const lt_like *l);
/* Free parameter i (0 <= i < dim): its name, label, unit and prior. */
const lt_param *lt_like_param(const lt_like *l, size_t i);
const char *lt_like_param_name(const lt_like *l, size_t i);
const lt_prior *lt_like_prior(const lt_like *l, size_t i);
/* The free position of the parameter called name, or -1. */
int lt_like_param_index(const lt_like *l, const char *name);
/* The fixed parameters, in the table's order (value holds each). */
size_t lt_like_nfixed(const lt_like *l);
const lt_param *lt_like_fixed(const lt_like *l, size_t k);
lt_offset_mode lt_like_offset_mode(const lt_like *l);
/* The table of the supernova or standardisation term, or NULL. */
const lt_survey *lt_like_table(const lt_like *l);
/* The standardisation's options, or NULL without a light-curve table. */
const lt_std_spec *lt_like_std(const lt_like *l);
/* The supernova survey, or NULL when there is no supernova term (a
 * light-curve table's is not one: its magnitudes are not distances). */
const lt_survey *lt_like_survey(const lt_like *l);
/* The BAO term's table, or NULL without one; *rd_free (if not NULL): it
 * samples rd_h rather than r_d from the formula. */
const lt_probe *lt_like_bao(const lt_like *l, int *rd_free);
/* The CMB term's table, or NULL without one. */
const lt_probe *lt_like_cmb(const lt_like *l);
const lt_cosmo_model *lt_like_model(const lt_like *l);
/* Parameters other than the free ones: fixed values and defaults. */
const lt_cosmo_params *lt_like_base(const lt_like *l);
/* Is h0 known (free or fixed by the user), so that an age means something? */
int lt_like_h0_known(const lt_like *l);
/* Data points over all terms: the survey's objects and one a measurement. */
size_t lt_like_ndata(const lt_like *l);
/* Degrees of freedom: data points - free parameters - 1 for a marginalised offset. */
long lt_like_dof(const lt_like *l);
/* Parameters counted by information criteria: free + marginalised offset. */
size_t lt_like_nparams_counted(const lt_like *l);
/* The measurements, by name (two of one name in the order given). */
size_t lt_like_nmeasurements(const lt_like *l);
const lt_measurement *lt_like_measurement(const lt_like *l, size_t k);
/* ln of the likelihood's normalisation, summed over the terms:
 * -(N ln 2 pi + ln det C) / 2 for a survey, -ln(2 pi sd^2) / 2 a
 * measurement; what turns exp(-chi2_eff / 2) into a density (ln Z). */
double lt_like_lognorm(const lt_like *l);

lt_like_work *lt_like_work_alloc(const lt_like *l);
void lt_like_work_free(lt_like_work *w);
/* The evaluations made with w so far: every lt_like_eval or _exact call at
 * a point inside the prior (a point outside it costs nothing and is not
 * counted), whether or not the point is physical. What summaries report as
 * convergence.evaluations, summed over a run's work spaces. */
size_t lt_like_work_evals(const lt_like_work *w);

typedef struct lt_like_point {
    double logpost;  /* loglike + logprior; -inf outside the prior or the domain */
    double loglike;  /* -chi2_eff / 2 */
    double logprior;
    double chi2;     /* at the best offset (A - B^2/C) when marginalised */
    double chi2_eff; /* what enters the likelihood: chi2 + ln(C/2pi) if marginal */
    double offset;   /* best offset B/C (marginal), the sampled value, or 0 */
    int domain_ok;   /* 0 if the parameters are unphysical for the data */
} lt_like_point;

/* Evaluate at theta (lt_like_dim values, in free-parameter order), by the
 * supernova term's compressed path where it is set up, else the exact one. */
void lt_like_eval(const lt_like *l, lt_like_work *w, const double *theta, lt_like_point *out);
/* The exact path always: residuals of every object against C. */
void lt_like_eval_exact(const lt_like *l, lt_like_work *w, const double *theta, lt_like_point *out);

/*
 * The compressed path (see src/likelihood/compress.c): K knots in ln(1+z),
 * chosen at set-up so that |chi2_compressed - chi2_exact| stays below 2e-4
 * on test points within Delta chi2 < 50 of the best of them (the worst seen
 * is *max_dchi2). Returns 0 (and K = 0) when the exact path is in use:
 * for dl data, with spec.exact, or when K would exceed N/2 (small surveys).
 */
int lt_like_compression(const lt_like *l, size_t *K, double *max_dchi2);

/*
 * The compression checked where it matters: the set-up's test points can
 * miss the posterior (closed, low-omega_m models near the bounce boundary,
 * where 1/E(z) peaks sharply, were off by 4e-3 while the set-up saw 1e-5).
 * lt_like_check_posterior re-evaluates a thinned set of n draws (rows of
 * stride doubles, parameters first) by the exact path: evenly spaced rows,
 * LT_CHECK_DRAWS of them up to 10^4 objects, 100 up to 10^5 and 25 above
 * (an exact evaluation costs N, N^2 for a dense covariance), and reports the
 * largest |chi2_compressed - chi2_exact| among them. Above the bound it
 * doubles the knots until those draws agree within the bound, while the
 * error falls at least fourfold a doubling and 2K <= N; at 2K > N it
 * switches to the exact path (a small survey). If that worked, refined is
 * 1 and l has changed: its work spaces must be allocated again and the
 * draws drawn again. Deterministic: the same draws give the same answer
 * with any thread count. Returns LT_OK or LT_ENOMEM.
 */
#define LT_CHECK_DRAWS 400
#define LT_CHECK_BOUND 1e-3 /* the accuracy the compressed path promises */
typedef struct lt_compression_check {
    size_t checked;      /* draws re-evaluated by the exact path */
    size_t knots_before; /* K the draws were sampled with (0: exact path) */
    size_t knots;        /* K now */
    double max_before;   /* largest |dchi2| over the checked draws with knots_before */
    double max_after;    /* the same with knots (= max_before unless refined) */
    int refined;
    size_t evals;        /* likelihood evaluations the check made: the screening of every
                          * draw by two compressions, the exact ones, the comparisons */
} lt_compression_check;
/* The compression's check on the draws (lt_like_check_posterior), across a run, as
 * summary.json "compression" reports it; knots 0 means the exact path. */
typedef struct lt_sample_compression {
    size_t knots_setup, knots, checked;
    double setup_dchi2;     /* the set-up's own check */
    double first_dchi2;     /* the check on the first draws, before refining */
    double posterior_dchi2; /* on the draws reported */
    int checked_ok;         /* the check ran (0: no "compression" field) */
} lt_sample_compression;
/* The check ran and found the draws' compressed chi2 off by more than
 * LT_CHECK_BOUND: what the warnings and the MCMC's exact weighting go by. */
int lt_sample_compression_missed(const lt_sample_compression *c);

int lt_like_check_posterior(lt_like *l, const double *draws, size_t n, size_t stride, double bound,
                            lt_compression_check *out, lt_error *err);
/* The exact path at n points (rows of stride doubles, parameters first),
 * in parallel, into out[n]; the same with any thread count. LT_ENOMEM. */
int lt_like_eval_exact_many(const lt_like *l, const double *pts, size_t n, size_t stride,
                            lt_like_point *out, lt_error *err);
/* How many draws a run may re-evaluate by the exact path to weight them
 * where the compression misses its bound and more knots do not help:
 * 4000 up to 10^4 objects, 1000 up to 10^5, 250 above (an exact evaluation
 * costs N, N^2 for a dense covariance; above 10^5 objects it runs at about
 * 11 a second, so all draws, or sampling again by the exact path, would
 * take hours). */
size_t lt_like_reweight_draws(const lt_like *l);
/* Rebuild the compressed path with K knots (0: the exact path), as a
 * resumed run does to sample with the knots its first part used. */
int lt_like_compression_set(lt_like *l, size_t K, lt_error *err);

/*
 * The chi2 method's intrinsic scatter (lt_std_method): the sigma_int
 * entries no setting fixed are set, at theta (a best fit), so that the
 * chi2 of the objects each serves, r_g^T (C^-1 r)_g (these sum to the whole
 * chi2), equals their share of the degrees of freedom, N_g (1 - dim / N);
 * an entry whose objects' chi2 is below that even at 0 is set to 0. The
 * entries are solved one at a time by bisection, in sweeps until none
 * moves by 1e-9 (one sweep when the covariance is diagonal). A fit then
 * iterates fit and tune (lt_fit_scatter) until they agree. Changes l.
 */
typedef struct lt_scatter_tune {
    size_t n;                                 /* entries tuned */
    const char *name[LT_STD_GROUPS_MAX];      /* "sigma_int@2" (l's strings) */
    double sigma[LT_STD_GROUPS_MAX];
    double dof[LT_STD_GROUPS_MAX];            /* the chi2 each was set to */
    size_t nobj[LT_STD_GROUPS_MAX];
    int at_zero[LT_STD_GROUPS_MAX];           /* chi2 below dof even without scatter */
    double max_change;                        /* largest change of a sigma */
} lt_scatter_tune;
int lt_like_scatter_tune(lt_like *l, const double *theta, lt_scatter_tune *out, lt_error *err);
/* 1 if l has scatter entries to tune and lt_like_scatter_tune has not run. */
int lt_like_scatter_untuned(const lt_like *l);
/* The tuned entries' names and values (either may be NULL); their number. */
size_t lt_like_scatter_tuned(const lt_like *l, const char **names, double *sigma);

/* A fit's first start: the centre of each prior (the mean of a Gaussian
 * one), where a term has no better guess from its data (the
 * standardisation's populations and scatter). */
void lt_like_guess(const lt_like *l, double *theta);

/* The cosmology at theta (for derived quantities); LT_EDOMAIN etc. */
int lt_like_cosmo(const lt_like *l, const double *theta, lt_cosmo *c, lt_error *err);

/* The model's prediction for every object at theta, including the offset
 * (its best value when marginalised): what residual tables print. */
int lt_like_predict(const lt_like *l, lt_like_work *w, const double *theta, double *model,
                    lt_error *err);

/* ---- derived parameters ---- */
enum {
    LT_DER_OMEGA_K = 0,
    LT_DER_OMEGA_DE,
    LT_DER_Q0,
    LT_DER_Z_T,
    LT_DER_AGE,
    LT_DER_RD,   /* r_d (Mpc) from Aubourg et al. 2015, where the early universe is on */
    LT_DER_RD_H, /* r_d h (Mpc), likewise (sampled instead with --rd free) */
    LT_NDER
};
const char *lt_derived_name(int d); /* "omega_k", "omega_de", "q0", "z_t", "age_gyr" */
int lt_derived_find(const char *name); /* LT_DER_*, or -1 */
/* Which derived parameters l reports: omega_k (curved) or omega_de (flat),
 * q0, z_t, and age_gyr when h0 is known. */
int lt_like_has_derived(const lt_like *l, int d);
/* The value at theta (NaN where undefined: z_t with no acceleration, an
 * age with no big bang). */
double lt_like_derived(const lt_like *l, const double *theta, int d);

/* The value at theta of the quantity called name: a parameter (free or
 * fixed), a derived quantity, or a cosmological parameter the model holds
 * at its default (w0 in LCDM); NaN if there is no such quantity or it is
 * undefined there. What a measurement of name compares with. */
double lt_like_quantity(const lt_like *l, const double *theta, const char *name);

/* The value of derived quantity d for cosmology c (as lt_like_derived). */
double lt_derived_of(const lt_cosmo *c, int d);

/* ---- terms ---- */

/*
 * A term of the likelihood, as a table of functions in the manner of GSL's
 * gsl_rng_type: set up once from its configuration, a work space per
 * thread, and an evaluation that adds its chi2 and allocates nothing.
 * The built-in terms are the supernova survey and the measurements; the
 * likelihood makes them from lt_like_alloc's survey and spec.
 */
typedef struct lt_term_in {
    const lt_cosmo *cosmo;  /* at the parameters */
    const double *values;   /* every table entry's value, free or fixed */
    int exact;              /* the exact path where a term has a faster one */
} lt_term_in;

typedef struct lt_term_out {
    double chi2;     /* the term's chi2 (at the best offset when marginalised) */
    double chi2_eff; /* what enters the likelihood: chi2 plus any marginalisation term */
    double offset;   /* the supernova offset, best or sampled; else untouched */
} lt_term_out;

/* A parameter a term brings, free with this default prior, or fixed at
 * value (the setting of the name, if any, decides). */
typedef struct lt_term_param {
    char name[LT_NAME_MAX];
    lt_prior prior;
    int fixed;
    double value;
} lt_term_param;

/* What a term needs of the parameter table, declared before the table is
 * built (DESIGN.md: add_params): h0 free, the early universe (radiation
 * on), omega_b_h2, and parameters of its own. */
#define LT_TERM_OWN_MAX LT_MAX_FREE
typedef struct lt_term_needs {
    int h0, early, omega_b_h2;
    size_t nown;
    lt_term_param own[LT_TERM_OWN_MAX];
    int overflow; /* a term asked for more than LT_TERM_OWN_MAX */
} lt_term_needs;

typedef struct lt_term_type {
    const char *name;
    /* Add what the term with config needs to *needs (NULL: nothing). */
    void (*add_params)(const void *config, lt_term_needs *needs);
    /* Set up from config with the parameter table final (lt_like_param
     * etc. work on l); NULL and err on failure. */
    void *(*setup)(const void *config, const lt_like *l, lt_error *err);
    void *(*work_alloc)(const void *state);
    void (*work_free)(void *work);
    /* Evaluate at in, writing only out (and the work space): no allocation,
     * nothing shared written. Returns 0, or -1 outside the term's domain. */
    int (*eval)(const void *state, void *work, const lt_term_in *in, lt_term_out *out);
    size_t (*ndata)(const void *state);
    double (*lognorm)(const void *state);
    void (*free)(void *state);
    /* Optional (NULL: none): a starting point for a fit, from the term's
     * data, written into the table values of its free parameters (values
     * holds the prior centres); lt_like_guess keeps it only inside the
     * prior. */
    void (*guess)(const void *state, double *values);
} lt_term_type;

/*
 * The pivot of w0-wa: the scale factor a_p at which w_p = w0 + wa (1 - a_p)
 * is uncorrelated with wa, 1 - a_p = -Cov(w0, wa) / Var(wa) (Huterer &
 * Turner 2001, PRD 64, 123527; the DETF report, Albrecht et al. 2006).
 * Returns z_p = 1/a_p - 1 (NaN if Var(wa) <= 0 or a_p <= 0).
 */
double lt_pivot_redshift(double cov_w0_wa, double var_wa);

/* The redshift where q(z) changes sign (deceleration to acceleration), or
 * NaN if the universe does not accelerate today or never decelerated. */
double lt_cosmo_transition_z(const lt_cosmo *c);

#endif
