/*
 * Comparing models on one data set: each model's best fit, nested run and
 * posterior, the models side by side (see lantern/pipeline.h).
 */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include <omp.h>

#include "lantern/file.h"
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
                      const char *ckdir, int resume, volatile sig_atomic_t *stop,
                      const lt_pipeline_hooks *h)
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
    char state[96];
    snprintf(state, sizeof state, "nested_%s.bin", m->name);
    /* the model's share of the threads; resumed, its nested run continues
     * the checkpoint it finds (a model not reached before the stop has
     * none); fresh, an earlier comparison's is removed */
    lt_job mj = *j;
    mj.threads = threads;
    lt_run_opts o = {ckdir, state, NULL, resume ? LT_RUN_IF_PRESENT : LT_RUN_FRESH, stop, NULL};
    m->rc = lt_pipeline_run(lt_method_nested, m->l, &mj, &o, NULL, &m->post, &m->err);
}

int lt_pipeline_compare(lt_model_result *m, size_t n, const lt_job *j, const char *ckdir,
                        int resume, volatile sig_atomic_t *stop, const lt_pipeline_hooks *h,
                        lt_error *err)
{
    /* The models side by side, one per thread, each with its own work
     * spaces and random streams: that is where the work is. A model's
     * nested run gets the threads left over only when models do not fill
     * them (it shares a batch out only when the likelihood is slow; see
     * lt_nested_iterate). The results do not depend on the thread count. */
    /* a fresh comparison's settings, for a resume from the folder alone */
    if (ckdir && !resume) {
        char *settings = lt_path_join(ckdir, "settings.ini", NULL);
        int rc = !settings ? lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory")
                 : mkdir(ckdir, 0777) != 0 && errno != EEXIST
                     ? lt_error_set(err, LT_EIO, ckdir, 0, "cannot make the checkpoint folder: %s",
                                    strerror(errno))
                     : lt_job_write(j, NULL, settings, err);
        free(settings);
        if (rc)
            return rc;
    }
    int threads = j->threads > 0 ? (int)j->threads : omp_get_max_threads();
    int outer = (size_t)threads < n ? threads : (int)n;
    int inner = outer > 1 ? 1 : threads;
#pragma omp parallel for schedule(dynamic, 1) num_threads(outer)
    for (size_t k = 0; k < n; k++)
        run_model(&m[k], k, n, j, inner, ckdir, resume, stop, h);
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
