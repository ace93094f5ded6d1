/*
 * Sampling a posterior with checkpoints: the best fit as the chains'
 * centre, adaptive Metropolis until converged, the compression checked on
 * the draws (and the chains drawn again where more knots fix it), and a
 * checkpoint folder that a resumed run continues from. One path for
 * lantern sample, run's models and campaign tasks.
 *
 * The checkpoint folder (DIR/checkpoint):
 *   settings.ini     the run description (lt_job_write) and the fingerprint
 *   state.bin        the chains (lt_mcmc_save), at every convergence check
 *   compression.txt  "KNOTS MAX_ABS_DCHI2": the knots a refined run samples
 *                    with and the check that asked for them, so that a
 *                    resumed run samples with the same knots and reports
 *                    the same numbers; absent: the set-up's knots.
 */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "lantern/digest.h"
#include "lantern/file.h"
#include "lantern/inference.h"
#include "lantern/pipeline.h"
#include "lantern/text.h"

/* The fingerprint of a sampled run: the likelihood's parts, then the seed
 * and the sampler settings (not the thread count, which does not change
 * the draws). */
static void fingerprint(const lt_like *l, const lt_job *j, lt_fingerprint *fp)
{
    lt_fingerprint_like(l, fp);
    long settings[] = {(long)j->seed, j->chains, j->warmup, j->check_every, j->max_steps};
    lt_digest_add(&fp->part[LT_FP_SETTINGS], settings, sizeof settings);
    lt_digest_add(&fp->part[LT_FP_SETTINGS], &j->target_ess, sizeof j->target_ess);
}

static int save_knots(const char *path, size_t K, double first, lt_error *err)
{
    char buf[32], text[64];
    lt_format_double(first, buf, sizeof buf);
    snprintf(text, sizeof text, "%zu %s\n", K, buf);
    return lt_file_write_text(path, text, err);
}

static int load_knots(const char *path, lt_like *l, lt_sample_compression *cmp, lt_error *err)
{
    char text[64] = "";
    FILE *f = fopen(path, "r");
    if (!f)
        return LT_OK;
    size_t K;
    char *sp = fgets(text, sizeof text, f) ? strchr(text, ' ') : NULL;
    fclose(f);
    if (!sp || sscanf(text, "%zu", &K) != 1 ||
        lt_parse_double(strtok(sp + 1, "\n"), &cmp->first_dchi2))
        return lt_error_set(err, LT_EINPUT, path, 1, "not 'KNOTS MAX_ABS_DCHI2'");
    return lt_like_compression_set(l, K, err);
}

/* Each chain's work space, made afresh (after a refinement the old ones
 * belong to the old compression). */
static int chains_work(lt_pipeline_mcmc *p, const lt_like *l, lt_error *err)
{
    for (size_t c = 0; c < p->nchains; c++) {
        lt_like_work_free(p->ctx[c].w);
        p->ctx[c] = (lt_like_chain){l, lt_like_work_alloc(l)};
        p->ctxp[c] = &p->ctx[c];
        if (!p->ctx[c].w)
            return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    }
    return LT_OK;
}

/* The chains' start: the best fit and its Laplace covariance as centre. */
static int start_chains(const lt_job *j, const lt_like *l, lt_pipeline_mcmc *p,
                        volatile sig_atomic_t *stop, lt_error *err)
{
    size_t d = lt_like_dim(l);
    lt_fit_opts fo = {.seed = j->seed, .starts = (size_t)j->starts, .stop = stop};
    lt_fit_result fr;
    if (lt_fit_run(l, &fo, &fr, err)) {
        p->stopped_in_fit = err->code == LT_EINTR;
        return err->code;
    }
    double scale[LT_MAX_FREE];
    for (size_t i = 0; i < d; i++) {
        const lt_prior *pr = lt_like_prior(l, i);
        scale[i] = pr->kind == LT_PRIOR_UNIFORM ? pr->b - pr->a : 4 * pr->b;
    }
    lt_mcmc_opts mo = {.dim = d, .nextra = 1, .nchains = p->nchains, .seed = j->seed,
                       .center = fr.best, .cov = fr.laplace_ok ? fr.cov : NULL, .scale = scale,
                       .warmup = (size_t)j->warmup, .check_every = (size_t)j->check_every,
                       .max_steps = (size_t)j->max_steps, .target_ess = j->target_ess,
                       .rhat_tol = 0.01, .threads = (int)j->threads, .memory_limit = 0};
    p->m = lt_mcmc_alloc(&mo, lt_like_logdensity, p->ctxp, err);
    return p->m ? LT_OK : err->code;
}

/* What lt_mcmc_run's progress hook gets: the checkpoint to save, then the
 * caller's hook. */
typedef struct {
    const char *state;
    uint64_t fp;
    lt_error err;
    int save_failed;
    const lt_pipeline_hooks *h;
} at_check;

static void on_check(const lt_mcmc *m, void *ctx)
{
    at_check *a = ctx;
    if (a->state && !a->save_failed && lt_mcmc_save(m, a->state, a->fp, &a->err) != LT_OK)
        a->save_failed = 1;
    if (a->h && a->h->check)
        a->h->check(m, a->h->ctx);
}

static void note(const lt_pipeline_hooks *h, const char *text)
{
    if (h && h->note)
        h->note(text, h->ctx);
}

void lt_pipeline_mcmc_free(lt_pipeline_mcmc *p)
{
    lt_mcmc_free(p->m);
    for (size_t c = 0; p->ctx && c < p->nchains; c++)
        lt_like_work_free(p->ctx[c].w);
    free(p->ctx);
    free(p->ctxp);
    memset(p, 0, sizeof *p);
}

int lt_pipeline_mcmc_run(lt_like *l, lt_job *j, const lt_like_spec *spec, const char *dir,
                         int resume, volatile sig_atomic_t *stop, const lt_pipeline_hooks *h,
                         lt_pipeline_mcmc *p, lt_error *err)
{
    memset(p, 0, sizeof *p);
    size_t d = lt_like_dim(l);
    char *ckdir = NULL, *state = NULL, *settings = NULL, *knots = NULL;
    int rc = LT_OK;
    lt_sample_compression *cmp = &p->cmp;
    lt_like_compression(l, &cmp->knots_setup, &cmp->setup_dchi2);
    cmp->first_dchi2 = NAN;
    if (d == 0)
        return lt_error_set(err, LT_EINPUT, NULL, 0,
                            "every parameter is fixed: nothing to sample");
    if (dir && (!(ckdir = lt_path_join(dir, "checkpoint")) ||
                !(state = lt_path_join(ckdir, "state.bin")) ||
                !(settings = lt_path_join(ckdir, "settings.ini")) ||
                !(knots = lt_path_join(ckdir, "compression.txt")))) {
        rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        goto done;
    }
    if (resume && (!dir || (rc = load_knots(knots, l, cmp, err))))
        goto done;
    if (j->warmup == 0)
        j->warmup = d * 1000 > 2000 ? (long)d * 1000 : 2000;
    p->nchains = (size_t)j->chains;
    p->ctx = calloc(p->nchains, sizeof *p->ctx);
    p->ctxp = calloc(p->nchains, sizeof *p->ctxp);
    if (!p->ctx || !p->ctxp) {
        rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        goto done;
    }
    if ((rc = chains_work(p, l, err)))
        goto done;
    lt_fingerprint parts;
    fingerprint(l, j, &parts);
    uint64_t fp = lt_fingerprint_value(&parts);
    if (resume) {
        if ((rc = lt_fingerprint_check(settings, &parts, err)) ||
            !(p->m = lt_mcmc_load(state, fp, lt_like_logdensity, p->ctxp, err))) {
            rc = err->code;
            goto done;
        }
    } else {
        if ((rc = start_chains(j, l, p, stop, err)))
            goto done;
        if (dir && mkdir(ckdir, 0777) != 0 && errno != EEXIST) {
            rc = lt_error_set(err, LT_EIO, ckdir, 0, "cannot make the checkpoint folder: %s",
                              strerror(errno));
            goto done;
        }
        if (dir && ((rc = lt_job_write(j, spec, settings, err)) ||
                    (rc = lt_fingerprint_write(settings, &parts, err))))
            goto done;
    }
    for (;;) {
        at_check a = {dir ? state : NULL, fp, {0, 0, "", ""}, 0, h};
        rc = lt_mcmc_run(p->m, stop, on_check, &a, err);
        if (a.save_failed) {
            *err = a.err;
            rc = a.err.code;
            goto done;
        }
        if (rc == LT_EINTR) {
            /* the state at the stop, so that nothing drawn is lost */
            if (dir && lt_mcmc_save(p->m, state, fp, err) == LT_OK)
                lt_error_set(err, LT_EINTR, NULL, 0, "interrupted");
            rc = err->code;
            goto done;
        }
        if (rc)
            goto done;
        /* the compression checked on the draws by the exact path; where
         * more knots (or the exact path) fix it, sample again with them */
        lt_compression_check chk;
        if ((rc = lt_mcmc_check_compression(l, p->m, &chk, err)))
            goto done;
        if (!chk.refined) {
            cmp->knots = chk.knots, cmp->checked = chk.checked;
            cmp->posterior_dchi2 = chk.max_after, cmp->checked_ok = 1;
            break;
        }
        if (isnan(cmp->first_dchi2))
            cmp->first_dchi2 = chk.max_before;
        char how[64] = "the exact path", text[512];
        if (chk.knots)
            snprintf(how, sizeof how, "%zu knots", chk.knots);
        snprintf(text, sizeof text,
                 "the compressed likelihood is off by %.2g in chi2 on the posterior draws (more "
                 "than %g; its set-up saw %.2g): sampling again with %s",
                 chk.max_before, LT_CHECK_BOUND, cmp->setup_dchi2, how);
        note(h, text);
        if (dir && (rc = save_knots(knots, chk.knots, cmp->first_dchi2, err)))
            goto done;
        lt_mcmc_free(p->m);
        p->m = NULL;
        if ((rc = chains_work(p, l, err)) || (rc = start_chains(j, l, p, stop, err)))
            goto done;
    }
done:
    free(ckdir);
    free(state);
    free(settings);
    free(knots);
    return rc;
}
