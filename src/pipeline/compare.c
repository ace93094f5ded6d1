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

#include <cjson/cJSON.h>

#include "lantern/file.h"
#include "lantern/inference.h"
#include "lantern/outdir.h"
#include "lantern/report.h"
#include "lantern/version.h"
#include "lantern/pipeline.h"
#include "internal.h"

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
    char text[256];
    snprintf(text, sizeof text, "[%zu/%zu] %s: best fit, then nested sampling with %ld live points",
             k + 1, n, m->name, j->live_points);
    pipeline_say(h, LT_NOTE_PROGRESS, text);
    lt_fit_opts fo = {.seed = j->seed, .starts = (size_t)j->starts, .stop = stop};
    if ((m->rc = lt_fit_run(m->l, &fo, &m->fit, &m->err)))
        return;
    char state[96];
    snprintf(state, sizeof state, "nested_%s.bin", m->name);
    /* the model's share of the threads; resumed, its nested run continues
     * the checkpoint it finds (a model not reached before the stop has
     * none); fresh, an earlier comparison's is removed */
    lt_job mj = *j;
    mj.pool = NULL, mj.npool = mj.cap = 0; /* the strings stay j's */
    mj.threads = threads;
    lt_run_opts o = {ckdir, state, NULL, resume ? LT_RUN_IF_PRESENT : LT_RUN_FRESH, stop, h};
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
        /* an earlier comparison's checkpoints (--force) belong to it: all
         * go now, so that a stop before a model starts leaves none of them */
        for (size_t k = 0; k < n; k++) {
            char state[96], *path;
            snprintf(state, sizeof state, "nested_%s.bin", m[k].name);
            if ((path = lt_path_join(ckdir, state, NULL)))
                remove(path);
            free(path);
        }
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

/* ---- lantern compare's job ---- */

void lt_comparison_free(lt_comparison *c)
{
    for (size_t k = 0; k < c->n; k++)
        lt_model_result_free(&c->m[k]);
    lt_survey_free(c->survey);
    cJSON_Delete(c->summary);
    memset(c, 0, sizeof *c);
}

/* j's --models into c, each a known model, none twice. */
static int model_list(const lt_job *j, lt_comparison *c, lt_error *err)
{
    if (!j->models)
        return lt_error_set(err, LT_EINPUT, NULL, 0, "--models M1,M2,... is required");
    const lt_cosmo_model *m[LT_MAX_COMPARED];
    int rc = lt_cosmo_model_list(j->models, "--models", 0, "", LT_MAX_COMPARED, m, &c->n, err);
    for (size_t k = 0; !rc && k < c->n; k++)
        c->m[k].name = m[k]->name;
    return rc;
}

int lt_pipeline_compare_job(lt_job *j, int resume, volatile sig_atomic_t *stop,
                            const lt_pipeline_hooks *h, lt_comparison *c, lt_error *err)
{
    memset(c, 0, sizeof *c);
    char *ckdir = NULL, *path = NULL, what[128];
    int rc, prepared = 0;
    if ((rc = model_list(j, c, err)))
        return rc;
    j->lenient = 1; /* a prior applies to the models that have the parameter */
    if (j->out && !(ckdir = lt_path_join(j->out, "checkpoint", err)))
        return LT_ENOMEM;
    if (resume && !lt_path_exists(ckdir)) {
        rc = lt_error_set(err, LT_EINPUT, j->out, 0,
                          "no checkpoint here (no checkpoint/ folder) to resume");
        goto done;
    }
    /* no survey where measurements alone are compared */
    if ((rc = lt_job_survey(j, &c->survey, err)))
        goto done;
    if (j->out && !resume) {
        snprintf(what, sizeof what, "lantern %s compare (running)", LT_VERSION);
        if ((rc = lt_outdir_prepare(j->out, j->force, err)))
            goto done;
        prepared = 1;
        if ((rc = lt_outdir_mark(j->out, what, err)))
            goto done;
    }
    for (size_t i = 0; c->survey && i < c->survey->nwarnings; i++)
        pipeline_warn(h, c->survey->warning_ids[i], c->survey->warnings[i]);
    /* the likelihoods, one after another (this may refuse the input), then
     * the models side by side */
    if ((rc = lt_pipeline_compare_setup(c->m, c->n, j, c->survey, err)) ||
        (rc = lt_pipeline_compare(c->m, c->n, j, ckdir, resume, stop, h, err)))
        goto done;
    for (size_t k = 0; k < c->n; k++) {
        char edges[512], dic[256], text[600];
        lt_report_compare_warnings(&c->m[k], edges, sizeof edges, dic, sizeof dic);
        if (edges[0])
            snprintf(text, sizeof text, "%s: %s", c->m[k].name, edges),
                pipeline_warn(h, LT_WARN_PRIOR_EDGE, text);
        if (dic[0])
            snprintf(text, sizeof text, "%s: %s", c->m[k].name, dic),
                pipeline_warn(h, LT_WARN_DIC, text);
    }
    /* final files only once every model is done: an interrupted comparison
     * leaves nothing but its checkpoints */
    for (size_t k = 0; j->out && k < c->n; k++)
        if ((rc = lt_report_write_nested(j->out, &c->m[k], err)))
            goto done;
    c->summary = lt_report_compare_json(c->m, c->n);
    if (j->out) {
        snprintf(what, sizeof what, "lantern %s compare", LT_VERSION);
        if (!(path = lt_path_join(j->out, "summary.json", err)))
            rc = LT_ENOMEM;
        else if ((rc = lt_report_write_json(path, c->summary, err)) ||
                 (rc = lt_outdir_finish(j->out, what, err)))
            goto done;
    }
done:
    if (prepared && rc)
        lt_outdir_abandon(j->out);
    free(ckdir);
    free(path);
    return rc;
}
