/*
 * The nested-sampling method (lt_method_nested): live points drawn from the
 * prior, then iterations until the live points could add less than 0.01 to
 * ln Z, the run's progress passed to the hooks' nested (with the model's
 * name). compare's models, run's evidence and campaign tasks run it
 * through lt_pipeline_run.
 */
#include <stdlib.h>
#include <string.h>

#include <omp.h>

#include "lantern/digest.h"
#include "lantern/inference.h"
#include "lantern/pipeline.h"

typedef struct {
    const lt_like *l;
    long live;
    uint64_t seed;
    int threads;
    lt_like_nested *ctx; /* per thread */
    void **cp;
    lt_nested *ns;
    const lt_pipeline_hooks *h; /* the caller's, during iterate */
} nested_run;

static void nested_free(void *p)
{
    nested_run *r = p;
    if (!r)
        return;
    lt_nested_free(r->ns);
    for (int t = 0; r->ctx && t < r->threads; t++)
        lt_like_work_free(r->ctx[t].c.w);
    free(r->ctx);
    free(r->cp);
    free(r);
}

static void *nested_alloc(lt_like *l, lt_job *j, const char *ckdir, lt_error *err)
{
    (void)ckdir;
    nested_run *r = calloc(1, sizeof *r);
    int ok = r != NULL;
    if (ok) {
        r->l = l, r->live = j->live_points, r->seed = j->seed;
        r->threads = j->threads > 0 ? (int)j->threads : omp_get_max_threads();
        r->ctx = calloc((size_t)r->threads, sizeof *r->ctx);
        r->cp = calloc((size_t)r->threads, sizeof *r->cp);
        ok = r->ctx && r->cp;
    }
    for (int t = 0; ok && t < r->threads; t++) {
        r->ctx[t] = (lt_like_nested){{l, lt_like_work_alloc(l)}, lt_like_lognorm(l)};
        r->cp[t] = &r->ctx[t];
        ok = r->ctx[t].c.w != NULL;
    }
    if (!ok) {
        nested_free(r);
        lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        return NULL;
    }
    return r;
}

/* The sampler's status, to the caller's hook with the model's name. */
static void on_status(const lt_nested_status *st, void *p)
{
    const nested_run *r = p;
    if (r->h && r->h->nested) {
        lt_nested_progress np = {lt_like_model(r->l)->name, st->iterations, st->evals, st->logz,
                                 st->dlogz};
        r->h->nested(&np, r->h->ctx);
    }
}

static lt_nested_opts options(nested_run *r)
{
    return (lt_nested_opts){.dim = lt_like_dim(r->l), .nlive = (size_t)r->live, .seed = r->seed,
                            .dlogz = 0.01, .enlarge = 1.25, .max_iter = 10000000,
                            .threads = r->threads, .progress = on_status, .progress_ctx = r};
}

/* The likelihood's parts; the number stored adds the seed and the live
 * points (not the threads, which do not change the samples). */
static uint64_t nested_fingerprint(const void *p, lt_fingerprint *fp)
{
    const nested_run *r = p;
    lt_fingerprint_like(r->l, fp);
    uint64_t v = lt_fingerprint_value(fp);
    uint64_t settings[] = {r->seed, (uint64_t)r->live};
    lt_digest_add(&v, settings, sizeof settings);
    return v;
}

static int nested_start(void *p, volatile sig_atomic_t *stop, lt_error *err)
{
    (void)stop;
    nested_run *r = p;
    lt_nested_opts no = options(r);
    r->ns = lt_nested_alloc(&no, lt_like_prior_transform, (void *)r->l, lt_like_nested_loglike,
                            r->cp, err);
    return r->ns ? LT_OK : err->code;
}

static int nested_load(void *p, const char *path, uint64_t fp, lt_error *err)
{
    nested_run *r = p;
    lt_nested_opts no = options(r);
    r->ns = lt_nested_load(path, fp, &no, lt_like_prior_transform, (void *)r->l,
                           lt_like_nested_loglike, r->cp, err);
    return r->ns ? LT_OK : err->code;
}

static int nested_iterate(void *p, const char *state, uint64_t fp, volatile sig_atomic_t *stop,
                          const lt_pipeline_hooks *h, lt_error *err)
{
    (void)state, (void)fp;
    nested_run *r = p;
    r->h = h;
    int rc = lt_nested_iterate(r->ns, stop, err);
    r->h = NULL;
    return rc;
}

static int nested_save(const void *p, const char *path, uint64_t fp, lt_error *err)
{
    const nested_run *r = p;
    return lt_nested_save(r->ns, path, fp, err);
}

static int nested_result(void *p, const lt_pipeline_hooks *h, lt_posterior *post, lt_error *err)
{
    (void)h;
    nested_run *r = p;
    lt_nested_result nr;
    int rc = lt_nested_result_get(r->ns, &nr, err);
    if (!rc)
        rc = lt_pipeline_nested_posterior(r->l, &nr, (size_t)r->live, post, err);
    lt_nested_result_free(&nr);
    return rc;
}

static const lt_method_type nested_type = {"nested",       nested_alloc, nested_fingerprint,
                                           nested_start,   nested_iterate, nested_save,
                                           nested_load,    nested_result,  nested_free};
const lt_method_type *lt_method_nested = &nested_type;
