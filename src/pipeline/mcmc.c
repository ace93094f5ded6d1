/*
 * The MCMC method (lt_method_mcmc): the best fit as the chains' centre,
 * adaptive Metropolis until converged, the compression checked on the
 * draws (and the chains drawn again where more knots fix it). lantern
 * sample, run's models and campaign tasks all run it through
 * lt_pipeline_run, which owns the checkpoint folder.
 *
 * Besides the chains' state file, a refined run keeps compression.txt in
 * the checkpoint folder: "KNOTS MAX_ABS_DCHI2", the knots it samples with
 * and the check that asked for them, so that a resumed run samples with
 * the same knots and reports the same numbers; absent: the set-up's knots.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "lantern/digest.h"
#include "lantern/file.h"
#include "lantern/inference.h"
#include "lantern/pipeline.h"
#include "lantern/text.h"
#include "internal.h"

typedef struct {
    lt_like *l;
    const lt_job *j;
    lt_mcmc *m;
    lt_sample_compression cmp;
    size_t nchains;
    pipeline_works w;   /* the chains' work spaces, which m's log density uses */
    char *knots;        /* the checkpoint's compression.txt, or NULL */
    char *counts;       /* its evaluations.txt, or NULL */
    size_t evals_before; /* evaluations not in the chains' work spaces: the best fit, a
                          * resumed run's first part (chains a refinement replaced: w.gone) */
    size_t evals_check;  /* the compression checks that led to a refinement */
    size_t evals_last;   /* the last check's, which found the draws good: not kept in
                          * evaluations.txt, because a resumed run checks again */
} mcmc_run;

/* Every evaluation so far. */
static size_t evals_now(const mcmc_run *r)
{
    return r->evals_before + r->evals_check + r->w.gone + pipeline_works_evals(&r->w);
}

/* evaluations.txt: every evaluation so far, so that a resumed run counts
 * its first part (the chains' work spaces start afresh). */
static int save_counts(const mcmc_run *r, lt_error *err)
{
    return pipeline_save_counts(r->counts, evals_now(r) - r->evals_check, r->evals_check, err);
}

static void mcmc_free(void *p)
{
    mcmc_run *r = p;
    if (!r)
        return;
    lt_mcmc_free(r->m);
    pipeline_works_free(&r->w);
    free(r->knots);
    free(r->counts);
    free(r);
}

static void *mcmc_alloc(lt_like *l, lt_job *j, const char *ckdir, lt_error *err)
{
    size_t d = lt_like_dim(l);
    if (d == 0) {
        lt_error_set(err, LT_EINPUT, NULL, 0, "every parameter is fixed: nothing to sample");
        return NULL;
    }
    if (j->warmup == 0)
        j->warmup = d * 1000 > 2000 ? (long)d * 1000 : 2000;
    mcmc_run *r = calloc(1, sizeof *r);
    if (r) {
        r->l = l, r->j = j, r->nchains = (size_t)j->chains;
        if (ckdir) {
            r->knots = lt_path_join(ckdir, "compression.txt", NULL);
            r->counts = lt_path_join(ckdir, "evaluations.txt", NULL);
        }
    }
    if (!r || (ckdir && (!r->knots || !r->counts))) {
        mcmc_free(r);
        lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        return NULL;
    }
    lt_like_compression(l, &r->cmp.knots_setup, &r->cmp.setup_dchi2);
    r->cmp.first_dchi2 = NAN;
    if (pipeline_works_alloc(&r->w, l, r->nchains, err)) {
        mcmc_free(r);
        return NULL;
    }
    return r;
}

/* The likelihood's parts, then the seed and the sampler settings (not the
 * thread count, which does not change the draws). */
static uint64_t mcmc_fingerprint(const void *p, lt_fingerprint *fp)
{
    const mcmc_run *r = p;
    const lt_job *j = r->j;
    lt_fingerprint_like(r->l, fp);
    long settings[] = {(long)j->seed, j->chains, j->warmup, j->check_every, j->max_steps};
    lt_digest_add(&fp->part[LT_FP_SETTINGS], settings, sizeof settings);
    lt_digest_add(&fp->part[LT_FP_SETTINGS], &j->target_ess, sizeof j->target_ess);
    return lt_fingerprint_value(fp);
}

/* The chains' start: the best fit and its Laplace covariance as centre. */
static int mcmc_start(void *p, volatile sig_atomic_t *stop, lt_error *err)
{
    mcmc_run *r = p;
    const lt_job *j = r->j;
    size_t d = lt_like_dim(r->l);
    lt_fit_opts fo = {.seed = j->seed, .starts = (size_t)j->starts, .stop = stop};
    lt_fit_result fr;
    int rc = lt_fit_run(r->l, &fo, &fr, err);
    r->evals_before += fr.evals;
    if (rc)
        return rc;
    double scale[LT_MAX_FREE], start_cov[LT_MAX_FREE * LT_MAX_FREE];
    lt_fit_start_cov(r->l, &fr, start_cov);
    for (size_t i = 0; i < d; i++) {
        const lt_prior *pr = lt_like_prior(r->l, i);
        scale[i] = pr->kind == LT_PRIOR_UNIFORM ? pr->b - pr->a : 4 * pr->b;
    }
    lt_mcmc_opts mo = {.dim = d, .nextra = 1, .nchains = r->nchains, .seed = j->seed,
                       .center = fr.best, .cov = fr.laplace_ok ? start_cov : NULL, .scale = scale,
                       .warmup = (size_t)j->warmup, .check_every = (size_t)j->check_every,
                       .max_steps = (size_t)j->max_steps, .target_ess = j->target_ess,
                       .rhat_tol = 0.01, .threads = (int)j->threads, .memory_limit = 0};
    r->m = lt_mcmc_alloc(&mo, lt_like_logdensity, r->w.ctxp, err);
    return r->m ? LT_OK : err->code;
}

static int mcmc_save(const void *p, const char *path, uint64_t fp, lt_error *err)
{
    const mcmc_run *r = p;
    /* no chains: stopped while a refinement restarted them; the state file
     * still holds the chains its knots file belongs to */
    int rc = r->m ? lt_mcmc_save(r->m, path, fp, err) : LT_OK;
    return rc ? rc : save_counts(r, err);
}

static int mcmc_load(void *p, const char *path, uint64_t fp, lt_error *err)
{
    mcmc_run *r = p;
    int rc = r->knots ? pipeline_load_knots(r->knots, r->l, &r->cmp, err) : LT_OK;
    if (rc || (rc = pipeline_works_renew(&r->w, err)))
        return rc;
    if ((rc = pipeline_load_counts(r->counts, &r->evals_before, &r->evals_check, err)))
        return rc;
    r->m = lt_mcmc_load(path, fp, lt_like_logdensity, r->w.ctxp, err);
    return r->m ? LT_OK : err->code;
}

/* What lt_mcmc_run's progress hook gets: the checkpoint to save, then the
 * caller's hook. */
typedef struct {
    const mcmc_run *r;
    const char *state;
    uint64_t fp;
    lt_error err;
    int save_failed;
    const lt_pipeline_hooks *h;
} at_check;

static void on_check(const lt_mcmc *m, void *ctx)
{
    at_check *a = ctx;
    if (a->state && !a->save_failed &&
        (lt_mcmc_save(m, a->state, a->fp, &a->err) != LT_OK || save_counts(a->r, &a->err)))
        a->save_failed = 1;
    if (a->h && a->h->check) {
        const lt_mcmc_diag *d = lt_mcmc_diagnostics(m);
        lt_progress pr = {d->draws_per_chain, d->rhat_max, d->ess_min, lt_mcmc_converged(m), 0,
                          NAN};
        a->h->check(&pr, a->h->ctx);
    }
}

static int mcmc_iterate(void *p, const char *state, uint64_t fp, volatile sig_atomic_t *stop,
                        const lt_pipeline_hooks *h, lt_error *err)
{
    mcmc_run *r = p;
    lt_sample_compression *cmp = &r->cmp;
    for (;;) {
        at_check a = {r, state, fp, {0, 0, "", ""}, 0, h};
        int rc = lt_mcmc_run(r->m, stop, on_check, &a, err);
        if (a.save_failed) {
            *err = a.err;
            return a.err.code;
        }
        if (rc)
            return rc;
        /* the compression checked on the draws by the exact path; where
         * more knots (or the exact path) fix it, sample again with them */
        lt_compression_check chk;
        rc = lt_mcmc_check_compression(r->l, r->m, &chk, err);
        if (rc)
            return rc;
        if (!chk.refined)
            r->evals_last = chk.evals;
        else
            r->evals_check += chk.evals;
        if (!pipeline_after_check(h, cmp, &chk))
            return LT_OK;
        lt_mcmc_free(r->m);
        r->m = NULL;
        if ((rc = pipeline_works_renew(&r->w, err)) || (rc = mcmc_start(r, stop, err)))
            return rc;
        /* the new chains and their knots saved together (no stop is looked
         * at between the two), so that a resume finds them consistent; a
         * stop before this leaves the old chains with the old knots, which
         * a resume refines again to the same result */
        if ((state && (rc = lt_mcmc_save(r->m, state, fp, err))) ||
            (r->knots && (rc = pipeline_save_knots(r->knots, chk.knots, cmp->first_dchi2, err))))
            return rc;
    }
}

/* The posterior of the chains; where more knots did not bring the
 * compression within its bound, a thinned set of the draws weighted by the
 * exact likelihood. */
static int mcmc_result(void *p, const lt_pipeline_hooks *h, lt_posterior *post, lt_error *err)
{
    mcmc_run *r = p;
    int off = lt_sample_compression_missed(&r->cmp);
    if (off) {
        char text[160];
        snprintf(text, sizeof text,
                 "weighting the draws by the exact likelihood (at most %zu of them evaluated)",
                 lt_like_reweight_draws(r->l));
        pipeline_say(h, LT_NOTE_NEWS, text);
    }
    int rc = lt_pipeline_mcmc_posterior(r->l, r->m, off ? lt_like_reweight_draws(r->l) : 0, post,
                                        err);
    if (!rc) {
        post->compression = r->cmp;
        post->evals += evals_now(r) + r->evals_last;
    }
    return rc;
}

static const lt_method_type mcmc_type = {"mcmc",      mcmc_alloc, mcmc_fingerprint, mcmc_start,
                                         mcmc_iterate, mcmc_save, mcmc_load,        mcmc_result,
                                         mcmc_free};
const lt_method_type *lt_method_mcmc = &mcmc_type;
