/*
 * Nested sampling with checkpoints: one path for compare's models, run's
 * evidence and campaign tasks (see lantern/pipeline.h).
 */
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "lantern/digest.h"
#include "lantern/inference.h"
#include "lantern/pipeline.h"

int lt_pipeline_nested_run(const lt_like *l, long live, uint64_t seed, int threads,
                           const char *checkpoint, volatile sig_atomic_t *stop,
                           lt_nested_result *r, lt_error *err)
{
    memset(r, 0, sizeof *r);
    lt_fingerprint parts;
    lt_fingerprint_like(l, &parts);
    uint64_t fp = lt_fingerprint_value(&parts);
    uint64_t settings[] = {seed, (uint64_t)live};
    lt_digest_add(&fp, settings, sizeof settings);
    lt_like_nested *ctx = calloc((size_t)threads, sizeof *ctx);
    void **cp = calloc((size_t)threads, sizeof *cp);
    int ok = ctx && cp, rc;
    for (int t = 0; ok && t < threads; t++) {
        ctx[t] = (lt_like_nested){{l, lt_like_work_alloc(l)}, lt_like_lognorm(l)};
        cp[t] = &ctx[t];
        ok = ctx[t].c.w != NULL;
    }
    lt_nested_opts no = {.dim = lt_like_dim(l), .nlive = (size_t)live, .seed = seed, .dlogz = 0.01,
                         .enlarge = 1.25, .max_iter = 10000000, .threads = threads};
    lt_nested *ns = NULL;
    if (!ok) {
        rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        goto done;
    }
    if (checkpoint && access(checkpoint, F_OK) == 0)
        ns = lt_nested_load(checkpoint, fp, &no, lt_like_prior_transform, (void *)l,
                            lt_like_nested_loglike, cp, err);
    else
        ns = lt_nested_alloc(&no, lt_like_prior_transform, (void *)l, lt_like_nested_loglike, cp,
                             err);
    if (!ns) {
        rc = err->code;
        goto done;
    }
    rc = lt_nested_iterate(ns, stop, err);
    if (checkpoint && (rc == LT_OK || rc == LT_EINTR)) {
        lt_error serr;
        if (lt_nested_save(ns, checkpoint, fp, &serr)) {
            *err = serr;
            rc = serr.code;
        }
    }
    if (rc == LT_OK)
        rc = lt_nested_result_get(ns, r, err);
done:
    lt_nested_free(ns);
    for (int t = 0; ctx && t < threads; t++)
        lt_like_work_free(ctx[t].c.w);
    free(ctx);
    free(cp);
    return rc;
}
