/*
 * lantern/inference.h - best fits and their errors, samplers, nested
 * sampling and convergence diagnostics. The methods know nothing about
 * files or cosmology: they work on an objective function or a log-density
 * of a parameter vector. Small adapters (lt_like_chain, lt_like_nested,
 * lt_fit_run) join them to a likelihood (lantern/likelihood.h), which in
 * turn knows nothing of inference.
 */
#ifndef LANTERN_INFERENCE_H
#define LANTERN_INFERENCE_H

#include <signal.h>
#include <stddef.h>
#include <stdint.h>

#include "lantern/error.h"
#include "lantern/likelihood.h" /* the adapters below sample and fit an lt_like */

/* The function to minimise: -2 ln(posterior) up to a constant, or +inf
 * where the parameters are impossible. */
typedef double (*lt_objective)(const double *x, void *ctx);

typedef struct lt_optim_opts {
    size_t dim;
    size_t nstarts;
    const double *starts; /* nstarts x dim starting points */
    const double *scale;  /* dim: a typical size of each parameter's range */
    double tol;           /* simplex size at which to stop, in units of scale */
    size_t max_evals;     /* per start and stage */
    int quick;            /* no BFGS polish: simplex runs only, restarted until a restart
                           * no longer helps (a sampler's starting point, or a polish from
                           * a good start: one simplex run can stall on a long, curved
                           * valley, 0.01 off in chi2 for w0-wa, where a restart moves on) */
    /* when set, checked between simplex iterations: a nonzero value stops
     * the search with LT_EINTR (a signal during a long best fit); NULL: none */
    volatile sig_atomic_t *stop;
} lt_optim_opts;

typedef struct lt_optim_info {
    size_t evals;        /* objective calls in all */
    size_t best_start;   /* which start led to the optimum */
    int converged;       /* the best start met the tolerance, or 2+ starts agree */
    size_t agree;        /* starts that ended within 1e-6 of the best f */
} lt_optim_info;

/*
 * Minimise f from each start: GSL's Nelder-Mead simplex (nmsimplex2),
 * restarted at its own result until it stops improving, then a BFGS
 * polish (vector_bfgs2) on central-difference gradients, kept only if it
 * improves f. x_best (dim) and *f_best receive the best of all starts.
 * Fails with LT_ENUMERIC if no start reaches a finite value.
 */
int lt_optimize(lt_objective f, void *ctx, const lt_optim_opts *o, double *x_best,
                double *f_best, lt_optim_info *info, lt_error *err);

/*
 * The Laplace approximation at a minimum x of f = -2 ln P: the Hessian H
 * of f by central differences, and cov = 2 H^-1. Steps are a tenth of each
 * parameter's width, found in a first pass with steps of 1e-3 scale.
 * Returns LT_ENUMERIC (cov filled with NaN) where H is not positive
 * definite, and LT_EDOMAIN where a step leaves the prior or the physical
 * domain (a best fit at a prior edge), naming the parameter in *bad.
 */
int lt_laplace(lt_objective f, void *ctx, size_t dim, const double *x, const double *scale,
               double *cov, size_t *bad, lt_error *err);

/* ---------------------------------------------------------------------- */
/* Convergence diagnostics                                                 */
/* ---------------------------------------------------------------------- */

/*
 * Draws of one quantity from m chains of n draws each, chain after chain:
 * x[c * n + i]. The definitions are those of Vehtari, Gelman, Simpson,
 * Carpenter & Burkner 2021 (Bayesian Analysis 16, 667): split chains in
 * halves, rank-normalise (Blom's offset 3/8), R-hat as the larger of the
 * bulk and the folded (|x - median|) values; ESS from the multi-chain
 * autocorrelation with Geyer's initial monotone sequence (Geyer 1992,
 * Statist. Sci. 7, 473); tail ESS the smaller of the ESS of the indicators
 * of the 5% and 95% quantiles.
 */
double lt_diag_rhat_basic(const double *x, size_t m, size_t n); /* no split, no ranks */
double lt_diag_rhat(const double *x, size_t m, size_t n);
double lt_diag_ess(const double *x, size_t m, size_t n);        /* plain multi-chain ESS */
double lt_diag_ess_bulk(const double *x, size_t m, size_t n);
double lt_diag_ess_tail(const double *x, size_t m, size_t n);
/* All three at once, sharing the sorting (what the sampler calls). */
void lt_diag_all(const double *x, size_t m, size_t n, double *rhat, double *ess_bulk,
                 double *ess_tail);
/*
 * The ESS of the weighted mean of f over m chains of n draws with weights
 * w (importance weights on a Markov chain's draws; not normalised). The
 * self-normalised estimate mu = sum w f / sum w has, to first order (the
 * delta method: Owen 2013, Monte Carlo theory, methods and examples,
 * sec. 9.2, from memory), the error of the plain mean of
 * g = (w / mean w)(f - mu), so its variance is var(g) / ESS(g), ESS(g)
 * being lt_diag_ess of g (its autocorrelation over the chains), and
 * ESS_f = var_w(f) ESS(g) / var(g). For independent draws this is
 * sum w (f - mu)^2 sum w / sum w^2 (f - mu)^2, an f-specific form of
 * Kish's (sum w)^2 / sum w^2; for equal weights it is lt_diag_ess of f.
 * Draws with a NaN f or a weight <= 0 count as draws that add nothing.
 * The summaries' ess_min of weighted draws is the smallest of this for
 * the mean and for the indicators of the weighted 5% and 95% quantiles.
 */
double lt_diag_ess_weighted(const double *f, const double *w, size_t m, size_t n);
/* The integrated autocorrelation time of one chain with Sokal's automatic
 * window: the smallest W with W >= 5 tau(W) (Sokal 1997, in Functional
 * Integration, Plenum, 131). */
double lt_diag_tau(const double *x, size_t n);

/*
 * The deviance information criterion of weighted draws of the deviance
 * D = -2 ln L (any constant offset of D shifts DIC alike for every model,
 * so differences are what matter). DIC = mean(D) + p, with the effective
 * number of parameters p = p_V = var(D) / 2 (Gelman, Carlin, Stern, Dunson,
 * Vehtari & Rubin 2013, Bayesian Data Analysis, 3rd ed., sec. 7.2). Unlike
 * Spiegelhalter et al.'s (2002) p_D = mean(D) - D(mean of the parameters),
 * p_V needs no point estimate, so it cannot go negative when the posterior
 * mean lies off a curved ridge, and for a Gaussian posterior of k
 * parameters far from prior edges it is k (D - D_min follows chi2_k, whose
 * variance is 2k). w may be NULL (equal weights); weights need not be
 * normalised; draws with zero weight or a non-finite D are left out.
 * Returns LT_EDOMAIN when no draw has positive weight.
 */
typedef struct {
    double d_mean; /* weighted mean of D */
    double p_v;    /* var(D) / 2 */
    double dic;    /* d_mean + p_v */
} lt_dic;
int lt_dic_compute(const double *dev, const double *w, size_t n, lt_dic *out);
/* The words written beside p_d in JSON summaries (p_d_definition). */
#define LT_DIC_P_DEFINITION "p_V = var(D)/2 over the posterior draws (Gelman et al. 2013, BDA3 sec. 7.2)"

/* ---------------------------------------------------------------------- */
/* Adaptive Metropolis                                                     */
/* ---------------------------------------------------------------------- */

/* The log-density to sample, up to a constant; -inf where impossible.
 * extra (nextra values) receives quantities to keep with each draw. Each
 * chain gets its own ctx, so the function may use scratch space there. */
typedef double (*lt_logdensity)(const double *x, void *ctx, double *extra);

typedef struct lt_mcmc_opts {
    size_t dim, nextra, nchains;
    uint64_t seed;
    const double *center;   /* dim: chains start around it (the best fit) */
    const double *cov;      /* dim x dim: its covariance (Laplace), or NULL */
    const double *scale;    /* dim: widths to use where cov is NULL */
    size_t warmup;          /* adaptation steps per chain, then discarded */
    size_t check_every;     /* kept steps per chain between convergence checks */
    size_t max_steps;       /* kept steps per chain at most */
    double target_ess;      /* every quantity needs ESS (bulk and tail) >= this */
    double rhat_tol;        /* and R-hat - 1 < this */
    int threads;            /* OpenMP threads (0: the default) */
    double memory_limit;    /* bytes the draws may take (0: 80% of the machine's memory);
                             * a run that would need more stops with LT_ENOMEM */
} lt_mcmc_opts;

/* What a convergence check found. */
typedef struct lt_mcmc_diag {
    size_t draws_per_chain;
    double rhat_max, ess_min;     /* over all parameters; ESS is bulk and tail */
    double *rhat, *ess_bulk, *ess_tail, *tau; /* per parameter (dim) */
    double *acceptance;       /* per chain, after warm-up: steps that moved */
    double *acceptance_first; /* of those, moved by the first-stage proposal */
} lt_mcmc_diag;

typedef struct lt_mcmc lt_mcmc;

/* Chains are set up but not run. ctx[c] is chain c's context. */
lt_mcmc *lt_mcmc_alloc(const lt_mcmc_opts *o, lt_logdensity f, void **ctx, lt_error *err);
void lt_mcmc_free(lt_mcmc *m);

/* A likelihood as a sampler's log-density: give each chain an
 * lt_like_chain (its own work space) as ctx; extra[0] receives chi2. */
typedef struct lt_like_chain {
    const lt_like *l;
    lt_like_work *w;
} lt_like_chain;
double lt_like_logdensity(const double *x, void *ctx, double *extra);
/* -2 ln posterior at x (an lt_objective; ctx an lt_like_chain): what the
 * best fit minimises. */
double lt_like_neg2logpost(const double *x, void *ctx);
/* lt_like_check_posterior on m's kept draws (chain after chain, each cut
 * to the shortest chain's length, as lt_pipeline_mcmc_posterior keeps them). */
int lt_mcmc_check_compression(lt_like *l, const lt_mcmc *m, lt_compression_check *out,
                              lt_error *err);

/* Called after every convergence check (from the calling thread). */
typedef void (*lt_mcmc_progress)(const lt_mcmc *m, void *ctx);

/*
 * Run until converged (every parameter's R-hat - 1 < rhat_tol and ESS >=
 * target_ess, checked every check_every steps) or until max_steps. Returns
 * LT_OK either way (lt_mcmc_converged tells which); LT_EINTR if *stop was
 * set, with every chain stopped after a whole step, so that the state can
 * be saved and the run resumed. Chains run in parallel; each uses only its
 * own random stream, so the draws do not depend on the thread count.
 */
int lt_mcmc_run(lt_mcmc *m, volatile sig_atomic_t *stop, lt_mcmc_progress progress,
                void *progress_ctx, lt_error *err);

int lt_mcmc_converged(const lt_mcmc *m);
const lt_mcmc_diag *lt_mcmc_diagnostics(const lt_mcmc *m);
const lt_mcmc_opts *lt_mcmc_options(const lt_mcmc *m);
/* Kept draws of chain c: n rows of (dim params, logdensity, nextra extras). */
const double *lt_mcmc_draws(const lt_mcmc *m, size_t c, size_t *n);
size_t lt_mcmc_row_size(const lt_mcmc *m); /* dim + 1 + nextra */

/* Save the whole state (every draw included) to path, atomically; and
 * restore it. fingerprint ties a checkpoint to its data and settings. */
int lt_mcmc_save(const lt_mcmc *m, const char *path, uint64_t fingerprint, lt_error *err);
lt_mcmc *lt_mcmc_load(const char *path, uint64_t fingerprint, lt_logdensity f, void **ctx,
                      lt_error *err);

/* ---------------------------------------------------------------------- */
/* Adaptive importance sampling                                            */
/* ---------------------------------------------------------------------- */

/*
 * The importance-sampling ESS of the self-normalised weighted mean of f
 * (f[i * stride], i < n) over independent draws with weights w (not
 * normalised): var_w(f) divided by the estimate's first-order (delta
 * method) variance, sum w (f - mu)^2 sum w / sum w^2 (f - mu)^2, an
 * f-specific form of Kish's (sum w)^2 / sum w^2 (Kish 1965, Survey
 * Sampling, sec. 11.7). Draws with a weight <= 0 or a non-finite f add
 * nothing; 0 if no draw counts.
 */
double lt_diag_ess_is(const double *f, size_t stride, const double *w, size_t n);

/*
 * The Pareto k diagnostic of importance weights (Vehtari, Simpson, Gelman,
 * Yao & Gabry, arXiv:1507.02646): the shape of a generalized Pareto
 * distribution fitted (Zhang & Stephens 2009, Technometrics 51, 316) to
 * the largest M = min(n/5, 3 sqrt(n)) weights' excesses over the next one,
 * shrunk towards 0.5 as that paper does (weight of 10 observations). Below
 * 0.5 the weights have a finite variance; above 0.7 the estimates are not
 * to be trusted. logw: ln of the weights (any constant offset; -inf for a
 * zero weight). NaN for fewer than 25 draws.
 */
double lt_diag_pareto_k(const double *logw, size_t n);

/*
 * Adaptive importance sampling with recycling (src/inference/importance.c
 * has the method and its sources): a mixture of Student-t components, seeded
 * from a centre and a covariance (the best fit and its Laplace covariance)
 * or fitted to draws of a rough posterior (a short nested run),
 * is adapted by weighted EM from iteration to iteration; every draw of every
 * iteration is kept, weighted by p(x) over the mixture of all proposals so
 * far. Iterations stop once an adapted proposal has drawn and every
 * parameter's importance-sampling ESS (the smallest of those of its mean
 * and its 5% and 95% quantile indicators, lt_diag_ess_is) reaches
 * target_ess: converged if Pareto k is then at most max_k; a k above it
 * is estimated again when the ESS reaches twice the target (on a thousand
 * or two draws the estimate is noisy), and then decides; or at max_draws
 * (not converged). Draws outside the prior
 * cost no likelihood evaluation (the log-density returns -inf there first).
 * The same seed gives the same draws with any thread count and after save
 * and load between iterations.
 */
typedef struct lt_ais_opts {
    size_t dim, nextra;
    uint64_t seed;
    const double *center;  /* dim */
    const double *cov;     /* dim x dim, or NULL (or not positive definite): diag(scale^2) */
    const double *scale;   /* dim */
    /* A rough posterior to start from (a short nested run), or nseed 0:
     * the first proposal is then fitted to these draws by weighted EM,
     * and center and cov are their weighted moments; they are copied, and
     * they weigh nothing in the estimates (their density is unknown). */
    const double *seed_draws;   /* nseed x dim */
    const double *seed_weights; /* nseed, >= 0, any scale */
    size_t nseed;
    size_t batch;          /* draws of each adapting iteration (0: max(500, 100 dim)) */
    size_t max_draws;      /* 0: 10^6 */
    double target_ess;
    double max_k;          /* 0: 0.7 */
    int threads;           /* 0: OpenMP's default; ctx must hold that many contexts */
} lt_ais_opts;

typedef struct lt_ais_diag {
    size_t draws, iterations;
    double ess_min;     /* the smallest of ess[] */
    double *ess;        /* per parameter (dim) */
    double kish;        /* (sum w)^2 / sum w^2 */
    double pareto_k;
    double ln_z, ln_z_err; /* ln of the mean weight p / q, and its standard error */
} lt_ais_diag;

typedef struct lt_ais lt_ais;
typedef void (*lt_ais_progress)(const lt_ais *s, void *ctx);

lt_ais *lt_ais_alloc(const lt_ais_opts *o, lt_logdensity f, void **ctx, lt_error *err);
void lt_ais_free(lt_ais *s);
/* Iterate until converged or max_draws (LT_OK either way), or LT_EINTR
 * when *stop is set (checked between iterations); progress after each,
 * once the next proposal is made (or at the end), where a save and a load
 * resume the same run. */
int lt_ais_run(lt_ais *s, volatile sig_atomic_t *stop, lt_ais_progress progress, void *pctx,
               lt_error *err);
int lt_ais_converged(const lt_ais *s);
/* The ESS target was reached (converged, or stopped on its Pareto k);
 * 0 when the draws ran out first. */
int lt_ais_finished(const lt_ais *s);
const lt_ais_diag *lt_ais_diagnostics(const lt_ais *s);
const lt_ais_opts *lt_ais_options(const lt_ais *s);
/* The n draws: rows of (dim params, logdensity, nextra extras); and their
 * weights, mean 1 (0 where the density is 0). */
const double *lt_ais_draws(const lt_ais *s, size_t *n);
const double *lt_ais_weights(const lt_ais *s);
size_t lt_ais_row_size(const lt_ais *s);
/* The whole state, between iterations; load refuses another fingerprint
 * or other dimensions (threads may differ). */
int lt_ais_save(const lt_ais *s, const char *path, uint64_t fingerprint, lt_error *err);
lt_ais *lt_ais_load(const char *path, uint64_t fingerprint, const lt_ais_opts *o,
                    lt_logdensity f, void **ctx, lt_error *err);

/* ---------------------------------------------------------------------- */
/* Nested sampling                                                         */
/* ---------------------------------------------------------------------- */

/*
 * Nested sampling (Skilling 2004, AIP Conf. Proc. 735, 395; Skilling 2006,
 * Bayesian Analysis 1, 833) in the unit cube of the prior: live points are
 * drawn from the prior, the lowest-likelihood one is replaced by a draw
 * from the prior above its likelihood, the prior volume shrinks as
 * X_i = exp(-i/N), Z = sum of L_i (X_{i-1} - X_i) plus the live points at
 * the end. Replacements come from a union of ellipsoids bounding the live
 * points (Feroz & Hobson 2008, MNRAS 384, 449; Feroz, Hobson & Bridges
 * 2009, MNRAS 398, 1601): the points are split in two by 2-means, again and
 * again (up to 32 ellipsoids), while the halves' ellipsoids hold less than
 * half their parent's volume, or less than it when the parent is over
 * twice the volume X m/N its m points are expected to fill; each is made
 * at least that volume, then its axes are enlarged by `enlarge`; the bound
 * is rebuilt every N/20 iterations. A candidate is drawn from an ellipsoid
 * chosen in proportion to its volume, uniformly inside it, and kept with
 * probability 1/(ellipsoids holding it), so the union is drawn uniformly;
 * it replaces the worst point when its ln L is above it. When a
 * replacement from the bound costs more evaluations than a short
 * constrained random walk from a live point (20 d; acceptance below
 * 1/(20 d)), the walk replaces points until the next bound is built, which
 * gets a fresh trial. Candidates are generated in
 * fixed batches of 8 from one stream; the first acceptable one in batch
 * order replaces the worst point and the other acceptable ones are queued
 * for the next iterations, used (oldest first) while still above the
 * rising threshold, so no evaluation above the threshold is wasted; every
 * evaluation, used or not, counts in evals. Results do not depend on the
 * thread count, and a checkpoint holds the bound and the queue. A batch is
 * computed in parallel only when one thread takes at least 10 ms over it
 * (timed on the first batches): a parallel region around microseconds of
 * work stalls on a busy machine. Cheap likelihoods are parallelised by the
 * caller instead, e.g. one model per thread. The error of ln Z comes from
 * simulated shrinkage (Skilling 2006, sec. 5.2): 48 draws of the volume
 * ratios t_i ~ Beta(N, 1) give 48 values of ln Z on the run's likelihoods,
 * and their standard deviation is the error (close to sqrt(H/N)).
 */
typedef void (*lt_prior_transform)(const double *u, double *theta, void *ctx);
/* ln L (not the prior) at theta; -inf where impossible; ctx per thread. */
typedef double (*lt_loglike)(const double *theta, void *ctx);

/* Where a run is, for a progress display: every LT_NESTED_PROGRESS_EVERY
 * iterations and once at the end. */
typedef struct lt_nested_status {
    size_t iterations, evals;
    double logz;  /* ln Z of the dead points so far */
    double dlogz; /* what the live points could still add to it (the
                   * stopping rule's quantity; it stops below opts.dlogz) */
} lt_nested_status;
#define LT_NESTED_PROGRESS_EVERY 1000

typedef struct lt_nested_opts {
    size_t dim, nlive;
    uint64_t seed;
    double dlogz;     /* stop when the live points could add less than this to ln Z */
    double enlarge;   /* the ellipsoid's axes grow by this factor (1.25) */
    size_t max_iter;
    int threads;      /* 0: OpenMP's default (omp_get_max_threads); ctx must hold
                       * this many contexts */
    /* NULL, or called on the calling thread with the run's status (not part
     * of the state: a checkpoint neither holds nor checks it) */
    void (*progress)(const lt_nested_status *st, void *ctx);
    void *progress_ctx;
} lt_nested_opts;

typedef struct lt_nested_result {
    double logz, logz_err, info; /* ln Z, its error, H in nats */
    size_t iterations, evals;
    int finished;                /* stopped by dlogz, not max_iter */
    size_t nsamples;             /* dead points and the final live points */
    double *theta;               /* nsamples x dim */
    double *loglike, *logw;      /* ln L and ln of the posterior weight (sum 1) */
} lt_nested_result;

int lt_nested_run(const lt_nested_opts *o, lt_prior_transform transform, void *tctx,
                  lt_loglike f, void **ctx, lt_nested_result *r, lt_error *err);
void lt_nested_result_free(lt_nested_result *r);

/*
 * The same run in steps, for interruption and resume: alloc draws and
 * evaluates the live points (LT_ENUMERIC if not one of them is possible:
 * no replacement could ever be found); iterate runs until the stopping rule (or
 * max_iter) and returns LT_OK, or LT_EINTR as soon as *stop is set, between
 * two iterations, so that save then load then iterate gives exactly the
 * result of an uninterrupted run; result_get gives the evidence and
 * weighted samples. lt_nested_run is alloc, iterate, result_get, free.
 * load refuses a checkpoint whose fingerprint (the caller's digest of data,
 * model and priors) or options differ; threads may differ.
 */
typedef struct lt_nested lt_nested;
lt_nested *lt_nested_alloc(const lt_nested_opts *o, lt_prior_transform transform, void *tctx,
                           lt_loglike f, void **ctx, lt_error *err);
int lt_nested_iterate(lt_nested *s, volatile sig_atomic_t *stop, lt_error *err);
int lt_nested_result_get(const lt_nested *s, lt_nested_result *r, lt_error *err);
size_t lt_nested_iterations(const lt_nested *s);
int lt_nested_save(const lt_nested *s, const char *path, uint64_t fingerprint, lt_error *err);
lt_nested *lt_nested_load(const char *path, uint64_t fingerprint, const lt_nested_opts *o,
                          lt_prior_transform transform, void *tctx, lt_loglike f, void **ctx,
                          lt_error *err);
void lt_nested_free(lt_nested *s);

/* A likelihood for the nested sampler: the prior transform of its priors
 * (uniform a + (b - a) u, Gaussian mean + sd Phi^-1(u); tctx is the const
 * lt_like *), and its normalised ln L: -chi2_eff/2 - ln det(2 pi C)/2
 * (ctx an lt_like_nested per thread; -inf outside the domain). */
void lt_like_prior_transform(const double *u, double *theta, void *tctx);
typedef struct lt_like_nested {
    lt_like_chain c;
    double norm; /* lt_like_lognorm */
} lt_like_nested;
double lt_like_nested_loglike(const double *theta, void *ctx);

/* ---------------------------------------------------------------------- */
/* Best fit of a likelihood                                                */
/* ---------------------------------------------------------------------- */

typedef struct lt_fit_opts {
    unsigned long seed; /* for the random starts */
    size_t starts;      /* how many (the first is the centre of the prior) */
    int quick;          /* a rough best fit (tolerance 1e-4 of the prior widths, no
                         * polish: lt_optim_opts.quick), as a sampler's start */
    volatile sig_atomic_t *stop; /* as in lt_optim_opts; NULL: none */
} lt_fit_opts;

typedef struct lt_fit_result {
    size_t dim;                       /* arrays by free position (lt_like_param_name) */
    double best[LT_MAX_FREE];
    double sd[LT_MAX_FREE];           /* Laplace sigma; NaN without one */
    int edge[LT_MAX_FREE];            /* -1, 1: the best fit is on the lower, upper edge of
                                       * a uniform prior (held there for the others' Laplace
                                       * errors; sd NaN); 0 inside */
    double limit[LT_MAX_FREE];        /* at an edge: the 95% one-sided limit, -2 ln P up by
                                       * 2.71 with the others at their best (NaN: none
                                       * inside the prior) */
    double cov[LT_MAX_FREE * LT_MAX_FREE]; /* Laplace covariance */
    int laplace_ok;
    char laplace_note[LT_ERROR_MSG_MAX]; /* why not, if not */
    lt_like_point at_best;
    double f_best;                    /* -2 ln posterior at the best fit */
    long dof;
    double p_value;                   /* P(chi2 >= chi2_min) for dof */
    double aic, bic;                  /* chi2_min + 2k, chi2_min + k ln N */
    size_t k_counted;
    int has_der[LT_NDER];
    double der_best[LT_NDER], der_sd[LT_NDER];
    int has_pivot;                    /* w0-wa models */
    double z_pivot, w_pivot, w_pivot_sd;
    double measured[LT_MAX_MEASUREMENTS]; /* each measured quantity at the best fit */
    lt_optim_info info;
    size_t evals;                     /* likelihood evaluations (lt_like_work_evals), the
                                       * Laplace step and the delta method included */
} lt_fit_result;

/* Fit l: starts drawn from the prior (seeded), lt_optimize, then
 * lt_laplace; derived parameters with errors by the delta method. */
int lt_fit_run(const lt_like *l, const lt_fit_opts *o, lt_fit_result *r, lt_error *err);

/* The Laplace covariance as a sampler's start: r->cov with a parameter at
 * an edge given the variance ((limit - edge) / 2)^2 (a tenth of its prior
 * width squared without a limit), uncorrelated with the rest. cov: d x d. */
void lt_fit_start_cov(const lt_like *l, const lt_fit_result *r, double *cov);

/* The most parameters nested sampling takes (its ellipsoids' fixed arrays):
 * beyond it there is no evidence, and importance sampling starts from a
 * fit instead of a short nested run. */
#define LT_NESTED_DIM_MAX 16

/*
 * The chi2 standardisation's fit: lt_fit_run and lt_like_scatter_tune in
 * turn until no sigma_int moves by 1e-6 (r is then the fit at the scatter
 * l holds, tune the last tuning), at most LT_SCATTER_ITERATIONS rounds
 * (LT_ENUMERIC beyond). Changes l.
 */
#define LT_SCATTER_ITERATIONS 30
int lt_fit_scatter(lt_like *l, const lt_fit_opts *o, lt_fit_result *r, lt_scatter_tune *tune,
                   int *iterations, lt_error *err);

#endif
