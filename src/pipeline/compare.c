/*
 * Comparing models on one data set: each model's best fit, nested run and
 * posterior, the models side by side (see lantern/pipeline.h).
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <omp.h>

#include "lantern/inference.h"
#include "lantern/pipeline.h"

int lt_pipeline_compare_setup(lt_model_result *m, size_t n, const lt_job *j, const lt_survey *s,
                              lt_error *err)
{
    for (size_t k = 0; k < n; k++) {
        const lt_cosmo_model *cm = lt_cosmo_model_find(m[k].name);
        if (!cm)
            return lt_error_set(err, LT_EINPUT, "--models", 0, "unknown model '%s'", m[k].name);
        int rc = lt_job_like_spec(j, cm, &m[k].spec, err);
        if (rc)
            return rc;
        if (!(m[k].l = lt_like_alloc(s, &m[k].spec, err)))
            return err->code;
    }
    return LT_OK;
}

/* One model in a thread of its own: the best fit, the nested run
 * (continued from its checkpoint when there is one) and its posterior. The
 * outcome goes into m (rc, err); the one progress note, whole, to h. */
static void run_model(lt_model_result *m, size_t k, size_t n, const lt_job *j, int threads,
                      const char *ckdir, volatile sig_atomic_t *stop, const lt_pipeline_hooks *h)
{
    lt_error_clear(&m->err);
    if (h && h->note) {
        char text[256];
        snprintf(text, sizeof text, "[%zu/%zu] %s: best fit, then nested sampling with %ld live points",
                 k + 1, n, m->name, j->live_points);
        h->note(text, h->ctx);
    }
    lt_fit_opts fo = {.seed = j->seed, .starts = (size_t)j->starts, .stop = stop};
    if ((m->rc = lt_fit_run(m->l, &fo, &m->fit, &m->err)))
        return;
    char *ck = NULL;
    if (ckdir) {
        size_t len = strlen(ckdir) + strlen(m->name) + 16;
        if (!(ck = malloc(len))) {
            m->rc = lt_error_set(&m->err, LT_ENOMEM, NULL, 0, "out of memory");
            return;
        }
        snprintf(ck, len, "%s/nested_%s.bin", ckdir, m->name);
    }
    m->rc = lt_pipeline_nested_run(m->l, j->live_points, j->seed, threads, ck, stop, &m->nested,
                                   &m->err);
    free(ck);
    if (!m->rc)
        m->rc = lt_pipeline_nested_posterior(m->l, &m->nested, (size_t)j->live_points, &m->post,
                                             &m->err);
}

int lt_pipeline_compare(lt_model_result *m, size_t n, const lt_job *j, const char *ckdir,
                        volatile sig_atomic_t *stop, const lt_pipeline_hooks *h, lt_error *err)
{
    /* The models side by side, one per thread, each with its own work
     * spaces and random streams: that is where the work is. A model's
     * nested run gets the threads left over only when models do not fill
     * them (it shares a batch out only when the likelihood is slow; see
     * lt_nested_iterate). The results do not depend on the thread count. */
    int threads = j->threads > 0 ? (int)j->threads : omp_get_max_threads();
    int outer = (size_t)threads < n ? threads : (int)n;
    int inner = outer > 1 ? 1 : threads;
#pragma omp parallel for schedule(dynamic, 1) num_threads(outer)
    for (size_t k = 0; k < n; k++)
        run_model(&m[k], k, n, j, inner, ckdir, stop, h);
    /* a stop first (every model's state is kept), then the first failure
     * in model order */
    for (size_t k = 0; k < n; k++)
        if (m[k].rc == LT_EINTR)
            return lt_error_set(err, LT_EINTR, NULL, 0, "interrupted");
    for (size_t k = 0; k < n; k++)
        if (m[k].rc) {
            *err = m[k].err;
            return m[k].rc;
        }
    return LT_OK;
}
