/*
 * The importance-sampling method (lt_method_importance): a short nested
 * run (or, for many parameters, a rough best fit and its Laplace
 * covariance) to fit the first proposal to, adaptive importance
 * sampling (lt_ais) until converged, the compression checked on a weighted
 * resample of the draws (and the sampling done again where more knots fix
 * it). lantern sample and run's models run it through lt_pipeline_run,
 * which owns the checkpoint folder.
 *
 * Besides the sampler's state file, the checkpoint folder keeps
 * compression.txt (as the MCMC method does: the knots of a refined run)
 * and evaluations.txt, the evaluations made before the state file's
 * sampling began (the best fit, and earlier samplings a refinement threw
 * away), so that a resumed run reports every evaluation of the command.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <omp.h>

#include "lantern/digest.h"
#include "lantern/file.h"
#include "lantern/inference.h"
#include "lantern/pipeline.h"
#include "internal.h"

/* Draws of the weighted resample the compression check reads: as many as
 * it evaluates exactly (LT_CHECK_DRAWS), so that it checks each of them
 * and screens none (screening costs two evaluations a draw). */
#define CHECK_RESAMPLE LT_CHECK_DRAWS

typedef struct {
    lt_like *l;
    const lt_job *j;
    lt_ais *s;
    lt_sample_compression cmp;
    int threads;
    pipeline_works w;     /* one per thread */
    char *knots, *counts; /* the checkpoint's compression.txt, evaluations.txt, or NULL */
    size_t evals_before;  /* evaluations before the current sampling began: the best fit,
                           * samplings a refinement replaced */
    size_t evals_check;   /* the compression checks that led to a refinement */
    size_t evals_last;    /* the last check's, which found the draws good: not kept in
                           * evaluations.txt, because a resumed run checks again */
} ais_run;

/* The sampling's evaluations: every draw inside the prior (the
 * likelihood is not called outside it), counted from the draws so that a
 * resumed run counts its first part too. */
static size_t inside_draws(const ais_run *r)
{
    size_t n, rs = lt_ais_row_size(r->s), d = lt_like_dim(r->l), inside = 0;
    const double *rows = lt_ais_draws(r->s, &n);
    for (size_t k = 0; k < n; k++) {
        double lp = 0.0;
        for (size_t i = 0; i < d; i++)
            lp += lt_prior_logpdf(lt_like_prior(r->l, i), rows[k * rs + i]);
        inside += isfinite(lp);
    }
    return inside;
}

/* Fresh work spaces (after a refinement the old ones belong to the old
 * compression). Evaluations are counted from the draws (inside_draws) and
 * the nested start's own count, not from the work spaces, which a resumed
 * run does not have for its first part. */
static int works(ais_run *r, lt_error *err)
{
    int rc = pipeline_works_renew(&r->w, err);
    r->w.gone = 0;
    return rc;
}

static void ais_free(void *p)
{
    ais_run *r = p;
    if (!r)
        return;
    lt_ais_free(r->s);
    pipeline_works_free(&r->w);
    free(r->knots);
    free(r->counts);
    free(r);
}

static void *ais_alloc(lt_like *l, lt_job *j, const char *ckdir, lt_error *err)
{
    if (lt_like_dim(l) == 0) {
        lt_error_set(err, LT_EINPUT, NULL, 0, "every parameter is fixed: nothing to sample");
        return NULL;
    }
    ais_run *r = calloc(1, sizeof *r);
    if (r) {
        r->l = l, r->j = j;
        r->threads = j->threads > 0 ? (int)j->threads : omp_get_max_threads();
        if (ckdir) {
            r->knots = lt_path_join(ckdir, "compression.txt", NULL);
            r->counts = lt_path_join(ckdir, "evaluations.txt", NULL);
        }
    }
    if (!r || (ckdir && (!r->knots || !r->counts))) {
        ais_free(r);
        lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        return NULL;
    }
    lt_like_compression(l, &r->cmp.knots_setup, &r->cmp.setup_dchi2);
    r->cmp.first_dchi2 = NAN;
    if (pipeline_works_alloc(&r->w, l, (size_t)r->threads, err)) {
        ais_free(r);
        return NULL;
    }
    return r;
}

/* Draws that importance sampling may take under --sampler auto before
 * MCMC takes over: fifty per effective sample wanted. Fewer effective
 * samples per draw than that means weights too uneven to trust, where the
 * chains' 0.003 to 0.05 per evaluation still converge. */
#define AUTO_DRAWS_PER_ESS 50

/* The cap on draws: --max-steps x --chains, the chains' budget; under
 * auto at most AUTO_DRAWS_PER_ESS per effective sample wanted. */
static size_t max_draws(const lt_job *j)
{
    double cap = (double)j->max_steps * (double)(j->chains > 0 ? j->chains : 1);
    if (!strcmp(j->sampler, "auto"))
        cap = fmin(cap, ceil(AUTO_DRAWS_PER_ESS * j->target_ess));
    return (size_t)cap;
}

/* The likelihood's parts, the method's name, the seed and the settings
 * that change the draws (not the thread count, which does not). */
static uint64_t ais_fingerprint(const void *p, lt_fingerprint *fp)
{
    const ais_run *r = p;
    const lt_job *j = r->j;
    lt_fingerprint_like(r->l, fp);
    long settings[] = {(long)j->seed, (long)max_draws(j)};
    lt_digest_add(&fp->part[LT_FP_SETTINGS], "importance", 10);
    lt_digest_add(&fp->part[LT_FP_SETTINGS], settings, sizeof settings);
    lt_digest_add(&fp->part[LT_FP_SETTINGS], &j->target_ess, sizeof j->target_ess);
    return lt_fingerprint_value(fp);
}

/* Seeding by nested sampling: live points (at least SEED_LIVE_MIN, and
 * SEED_LIVE_PER_DIM per parameter), stopped once the live points could
 * add less than SEED_DLOGZ to ln Z, for models of up to SEED_DIM_MAX
 * parameters (beyond, the ellipsoids of a short run bound the posterior
 * poorly and a nested run costs more than the sampling). The seed decides
 * what the proposal covers: a tail the seed misses, the adaptation rarely
 * finds. Measured on supernovae + BAO with r_d h free, flat w0-wa, whose
 * Omega_m posterior has a long tail to the prior edge at 0 (nested
 * sampling with 2000 live points: mean 0.267, sd 0.074), over 12 seeds:
 * with 100 live points the sd came out between 0.041 and 0.079 (0.044
 * with the seed of configs/combined-probes.ini, yet Pareto k 0.22); with
 * 250, between 0.063 and 0.077, mean 0.265 to 0.276, at 0.07 to 0.13
 * effective samples per evaluation. */
#define SEED_LIVE_MIN 250
#define SEED_LIVE_PER_DIM 25
#define SEED_DLOGZ 0.5
#define SEED_DIM_MAX LT_NESTED_DIM_MAX

/* A short nested run from the prior: its dead and live points, weighted,
 * are a rough posterior that finds curved and prior-bounded shapes (and
 * several modes) that a Laplace covariance at the best fit misses. The
 * evaluations join evals_before; nr is filled (free it) on LT_OK. */
static int seed_nested(ais_run *r, volatile sig_atomic_t *stop, lt_nested_result *nr,
                       lt_error *err)
{
    size_t d = lt_like_dim(r->l), live = SEED_LIVE_PER_DIM * d;
    lt_like_nested *ctx = calloc(r->w.n, sizeof *ctx);
    void **cp = calloc(r->w.n, sizeof *cp);
    if (!ctx || !cp) {
        free(ctx), free(cp);
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    }
    for (size_t t = 0; t < r->w.n; t++)
        ctx[t] = (lt_like_nested){r->w.ctx[t], lt_like_lognorm(r->l)}, cp[t] = &ctx[t];
    lt_nested_opts no = {.dim = d, .nlive = live > SEED_LIVE_MIN ? live : SEED_LIVE_MIN,
                         .seed = r->j->seed, .dlogz = SEED_DLOGZ, .enlarge = 1.25,
                         .max_iter = 10000000, .threads = r->threads};
    int rc;
    lt_nested *ns = lt_nested_alloc(&no, lt_like_prior_transform, (void *)r->l,
                                    lt_like_nested_loglike, cp, err);
    if (!ns)
        rc = err->code;
    else if (!(rc = lt_nested_iterate(ns, stop, err)))
        rc = lt_nested_result_get(ns, nr, err);
    if (!rc)
        r->evals_before += nr->evals;
    lt_nested_free(ns);
    free(ctx), free(cp);
    return rc;
}

/* The first proposal. Up to SEED_DIM_MAX parameters: fitted to a short
 * nested run's posterior. Beyond: a rough best fit (one start, no polish)
 * and its Laplace covariance, or where that fails (a best fit at a prior
 * edge) a tenth of each prior's width, which the adaptation then corrects. */
static int ais_start(void *p, volatile sig_atomic_t *stop, lt_error *err)
{
    ais_run *r = p;
    const lt_job *j = r->j;
    size_t d = lt_like_dim(r->l);
    double scale[LT_MAX_FREE];
    for (size_t i = 0; i < d; i++) {
        const lt_prior *pr = lt_like_prior(r->l, i);
        scale[i] = pr->kind == LT_PRIOR_UNIFORM ? 0.1 * (pr->b - pr->a) : pr->b;
    }
    lt_ais_opts ao = {.dim = d, .nextra = 1, .seed = j->seed, .scale = scale,
                      .max_draws = max_draws(j), .target_ess = j->target_ess,
                      .threads = r->threads};
    int rc;
    if (d <= SEED_DIM_MAX) {
        lt_nested_result nr;
        if ((rc = seed_nested(r, stop, &nr, err)))
            return rc;
        double *w = malloc((nr.nsamples ? nr.nsamples : 1) * sizeof *w);
        size_t best = 0;
        for (size_t k = 0; w && k < nr.nsamples; k++) {
            w[k] = exp(nr.logw[k]);
            if (nr.loglike[k] > nr.loglike[best])
                best = k;
        }
        if (w) {
            ao.center = nr.theta + best * d;
            ao.seed_draws = nr.theta, ao.seed_weights = w, ao.nseed = nr.nsamples;
            r->s = lt_ais_alloc(&ao, lt_like_logdensity, r->w.ctxp, err);
        } else {
            lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        }
        free(w);
        lt_nested_result_free(&nr);
        return r->s ? LT_OK : err->code;
    }
    lt_fit_opts fo = {.seed = j->seed, .starts = 1, .quick = 1, .stop = stop};
    lt_fit_result fr;
    rc = lt_fit_run(r->l, &fo, &fr, err);
    r->evals_before += fr.evals;
    if (rc)
        return rc;
    double start_cov[LT_MAX_FREE * LT_MAX_FREE];
    lt_fit_start_cov(r->l, &fr, start_cov);
    ao.center = fr.best, ao.cov = fr.laplace_ok ? start_cov : NULL;
    r->s = lt_ais_alloc(&ao, lt_like_logdensity, r->w.ctxp, err);
    return r->s ? LT_OK : err->code;
}

static int save_counts(const ais_run *r, lt_error *err)
{
    return pipeline_save_counts(r->counts, r->evals_before, r->evals_check, err);
}

static int ais_save(const void *p, const char *path, uint64_t fp, lt_error *err)
{
    const ais_run *r = p;
    if (!r->s)
        return LT_OK;
    int rc = lt_ais_save(r->s, path, fp, err);
    return rc ? rc : save_counts(r, err);
}

static int ais_load(void *p, const char *path, uint64_t fp, lt_error *err)
{
    ais_run *r = p;
    int rc = r->knots ? pipeline_load_knots(r->knots, r->l, &r->cmp, err) : LT_OK;
    if (rc || (rc = works(r, err)))
        return rc;
    if ((rc = pipeline_load_counts(r->counts, &r->evals_before, &r->evals_check, err)))
        return rc;
    lt_ais_opts ao = {.dim = lt_like_dim(r->l), .nextra = 1, .threads = r->threads};
    r->s = lt_ais_load(path, fp, &ao, lt_like_logdensity, r->w.ctxp, err);
    return r->s ? LT_OK : err->code;
}

/* After each iteration: the checkpoint, then the caller's hook. */
typedef struct {
    const ais_run *r;
    const char *state;
    uint64_t fp;
    lt_error err;
    int save_failed;
    const lt_pipeline_hooks *h;
} at_iteration;

static void on_iteration(const lt_ais *s, void *ctx)
{
    at_iteration *a = ctx;
    if (a->state && !a->save_failed &&
        (lt_ais_save(s, a->state, a->fp, &a->err) || save_counts(a->r, &a->err)))
        a->save_failed = 1;
    if (a->h && a->h->check) {
        const lt_ais_diag *d = lt_ais_diagnostics(s);
        lt_progress pr = {d->draws, NAN, d->ess_min, lt_ais_converged(s), 1, d->pareto_k};
        a->h->check(&pr, a->h->ctx);
    }
}

/* The compression checked on a weighted resample of the draws. */
static int check(ais_run *r, lt_compression_check *chk, lt_error *err)
{
    size_t n, rs = lt_ais_row_size(r->s);
    const double *rows = lt_ais_draws(r->s, &n);
    double *pick = malloc(CHECK_RESAMPLE * rs * sizeof *pick);
    if (!pick)
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    size_t m = pipeline_resample(rows, lt_ais_weights(r->s), n, rs, CHECK_RESAMPLE, 0.5, pick);
    int rc = lt_like_check_posterior(r->l, pick, m, rs, LT_CHECK_BOUND, chk, err);
    free(pick);
    if (!rc && !chk->refined)
        r->evals_last = chk->evals;
    else
        r->evals_check += chk->evals;
    return rc;
}

static int ais_iterate(void *p, const char *state, uint64_t fp, volatile sig_atomic_t *stop,
                       const lt_pipeline_hooks *h, lt_error *err)
{
    ais_run *r = p;
    lt_sample_compression *cmp = &r->cmp;
    for (;;) {
        at_iteration a = {r, state, fp, {0, 0, "", ""}, 0, h};
        int rc = lt_ais_run(r->s, stop, on_iteration, &a, err);
        if (a.save_failed) {
            *err = a.err;
            return a.err.code;
        }
        if (rc)
            return rc;
        lt_compression_check chk;
        if ((rc = check(r, &chk, err)))
            return rc;
        if (!pipeline_after_check(h, cmp, &chk))
            return LT_OK;
        r->evals_before += inside_draws(r); /* the draws thrown away */
        lt_ais_free(r->s);
        r->s = NULL;
        if ((rc = works(r, err)) || (rc = ais_start(r, stop, err)))
            return rc;
        if ((state && (rc = ais_save(r, state, fp, err))) ||
            (r->knots && (rc = pipeline_save_knots(r->knots, chk.knots, cmp->first_dchi2, err))))
            return rc;
    }
}

static int ais_result(void *p, const lt_pipeline_hooks *h, lt_posterior *post, lt_error *err)
{
    ais_run *r = p;
    (void)h;
    int rc = lt_pipeline_ais_posterior(r->l, r->s, post, err);
    if (rc)
        return rc;
    post->compression = r->cmp;
    post->evals += r->evals_before + r->evals_check + r->evals_last + inside_draws(r);
    return LT_OK;
}

static const lt_method_type ais_type = {"importance", ais_alloc,   ais_fingerprint,
                                        ais_start,    ais_iterate, ais_save,
                                        ais_load,     ais_result,  ais_free};
const lt_method_type *lt_method_importance = &ais_type;
