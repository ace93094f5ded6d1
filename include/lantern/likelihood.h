/*
 * lantern/likelihood.h - parameters, priors and the supernova likelihood.
 *
 * A likelihood joins a survey and a cosmological model. Its free parameters
 * are the model's (h0, omega_m, omega_de, w0, wa as the model has them) less
 * those fixed, plus the offset when it is sampled. For distance-modulus or
 * magnitude data the model prediction is
 *     mu_i = 5 log10( (1 + zhel_i) D_M(z_i) / 10 pc )  [+ offset]
 * and chi2 = r^T C^-1 r with r = observed - predicted, using the survey's
 * factored covariance. For dl data, r = dl_observed - (1 + zhel) D_M.
 *
 * The offset (the absolute magnitude M of mag = mu + M) can be
 *   - marginal: integrated out analytically with a flat prior (Goliath et
 *     al. 2001, A&A 380, 6; Conley et al. 2011, ApJS 192, 1, appendix C):
 *         chi2_marg = A - B^2/C + ln(C / 2 pi),
 *     A = r^T C^-1 r, B = 1^T C^-1 r, C = 1^T C^-1 1 with r = observed - mu.
 *     The reported chi2 is A - B^2/C (chi2 at the best offset B/C); the
 *     ln(C/2pi) term is a constant of the data, kept so that ln Z is that
 *     of a flat offset prior of unit width (1 mag). h0 is then degenerate
 *     with the offset and held at its fixed value (70 unless --fix).
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

/* Parameter ids: the cosmology's (LT_P_*) and the offset. */
#define LT_PAR_OFFSET LT_P_COUNT
#define LT_NPAR (LT_P_COUNT + 1)

/* "h0", ..., "n_eff", "offset"; and back (-1 if unknown). */
const char *lt_par_name(int id);
int lt_par_find(const char *name);

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

typedef enum { LT_OFFSET_DEFAULT = -1, LT_OFFSET_NONE = 0, LT_OFFSET_MARGINAL,
               LT_OFFSET_SAMPLED } lt_offset_mode;
const char *lt_offset_name(lt_offset_mode m); /* "none", "marginal", "sampled" */
/* "none", "marginal" or "sampled"; -1 if none of them. */
int lt_offset_parse(const char *text);

/* What the user asked for. Start with lt_like_spec_init. */
typedef struct lt_like_spec {
    const lt_cosmo_model *model;
    lt_offset_mode offset;      /* LT_OFFSET_DEFAULT: marginal for mag, else none */
    int has_prior[LT_NPAR];
    lt_prior prior[LT_NPAR];
    int has_fix[LT_NPAR];
    double fix[LT_NPAR];
    int exact; /* 1: always the exact N-object path (the compressed one is the default
                * for mu and mag data) */
} lt_like_spec;

void lt_like_spec_init(lt_like_spec *s, const lt_cosmo_model *m);
/* The default prior of a parameter for an observable (DESIGN.md):
 * omega_m U(0,1), omega_de U(0,1.6), w0 U(-2,0), wa U(-3,2), h0 U(40,100),
 * offset U(-21,-17) for mag data and U(-2,2) otherwise. */
lt_prior lt_prior_default(int id, lt_obs kind);

typedef struct lt_like lt_like;
typedef struct lt_like_work lt_like_work;

/*
 * Join survey s (which must outlive the likelihood) and spec. Fails with
 * LT_EINPUT for a prior or fix on a parameter the model lacks, a derived
 * parameter, both a prior and a fix on one parameter, impossible bounds,
 * an offset with dl data, or h0 free against a marginalised offset.
 */
lt_like *lt_like_alloc(const lt_survey *s, const lt_like_spec *spec, lt_error *err);
void lt_like_free(lt_like *l);

size_t lt_like_dim(const lt_like *l);
int lt_like_param_id(const lt_like *l, size_t i);   /* LT_P_* or LT_PAR_OFFSET */
const lt_prior *lt_like_prior(const lt_like *l, size_t i);
lt_offset_mode lt_like_offset_mode(const lt_like *l);
const lt_survey *lt_like_survey(const lt_like *l);
const lt_cosmo_model *lt_like_model(const lt_like *l);
/* Parameters other than the free ones: fixed values and defaults. */
const lt_cosmo_params *lt_like_base(const lt_like *l);
/* Is h0 known (free or fixed by the user), so that an age means something? */
int lt_like_h0_known(const lt_like *l);
/* Degrees of freedom: N - free parameters - 1 for a marginalised offset. */
long lt_like_dof(const lt_like *l);
/* Parameters counted by information criteria: free + marginalised offset. */
size_t lt_like_nparams_counted(const lt_like *l);

lt_like_work *lt_like_work_alloc(const lt_like *l);
void lt_like_work_free(lt_like_work *w);

typedef struct lt_like_point {
    double logpost;  /* loglike + logprior; -inf outside the prior or the domain */
    double loglike;  /* -chi2_eff / 2 */
    double logprior;
    double chi2;     /* at the best offset (A - B^2/C) when marginalised */
    double chi2_eff; /* what enters the likelihood: chi2 + ln(C/2pi) if marginal */
    double offset;   /* best offset B/C (marginal), the sampled value, or 0 */
    int domain_ok;   /* 0 if the parameters are unphysical for the data */
} lt_like_point;

/* Evaluate at theta (lt_like_dim values, in lt_like_param_id order), by the
 * compressed path where it is set up, else the exact one. */
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
} lt_compression_check;
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

/* The cosmology at theta (for derived quantities); LT_EDOMAIN etc. */
int lt_like_cosmo(const lt_like *l, const double *theta, lt_cosmo *c, lt_error *err);

/* The model's prediction for every object at theta, including the offset
 * (its best value when marginalised): what residual tables print. */
int lt_like_predict(const lt_like *l, lt_like_work *w, const double *theta, double *model,
                    lt_error *err);

/* ---- derived parameters ---- */
enum { LT_DER_OMEGA_K = 0, LT_DER_OMEGA_DE, LT_DER_Q0, LT_DER_Z_T, LT_DER_AGE, LT_NDER };
const char *lt_derived_name(int d); /* "omega_k", "omega_de", "q0", "z_t", "age_gyr" */
/* Which derived parameters l reports: omega_k (curved) or omega_de (flat),
 * q0, z_t, and age_gyr when h0 is known. */
int lt_like_has_derived(const lt_like *l, int d);
/* The value at theta (NaN where undefined: z_t with no acceleration, an
 * age with no big bang). */
double lt_like_derived(const lt_like *l, const double *theta, int d);

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
