/*
 * lantern fit's job: the best-fit method on a likelihood, its summary and
 * residual table written into the output folder (see lantern/pipeline.h).
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "lantern/file.h"
#include "lantern/outdir.h"
#include "lantern/pipeline.h"
#include "internal.h"
#include "lantern/report.h"
#include "lantern/version.h"

/* summary.json and residuals.csv (of the survey, where there is one) into
 * out, and the folder marked done. */
static int write(const char *out, const lt_like *l, const lt_fit_result *r, const cJSON *json,
                 lt_error *err)
{
    char what[128];
    snprintf(what, sizeof what, "lantern %s fit", LT_VERSION);
    char *path = lt_path_join(out, "summary.json", err);
    int rc = path ? lt_report_write_json(path, json, err) : LT_ENOMEM;
    free(path);
    path = rc ? NULL : lt_path_join(out, "residuals.csv", err);
    if (!rc && !path)
        rc = LT_ENOMEM;
    if (!rc && lt_like_survey(l)) {
        double *model = malloc(lt_like_survey(l)->n * sizeof *model);
        rc = !model ? lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory")
                    : lt_pipeline_predict(l, r->best, model, err);
        if (!rc)
            rc = lt_report_write_residuals(path, l, model, err);
        free(model);
    }
    free(path);
    return rc ? rc : lt_outdir_finish(out, what, err);
}

int lt_pipeline_fit(lt_like *l, lt_job *j, volatile sig_atomic_t *stop,
                    const lt_pipeline_hooks *hooks, lt_posterior *post, cJSON **summary,
                    lt_error *err)
{
    memset(post, 0, sizeof *post);
    *summary = NULL;
    /* the folder first: refuse before the work, not after it */
    if (j->out && lt_outdir_prepare(j->out, j->force, err))
        return err->code;
    lt_run_opts o = {NULL, NULL, NULL, LT_RUN_FRESH, stop, hooks};
    int rc = lt_pipeline_run(lt_method_fit, l, j, &o, NULL, post, err);
    if (!rc) {
        if (!post->fit.laplace_ok)
            pipeline_warn(hooks, LT_WARN_LAPLACE, post->fit.laplace_note);
        *summary = lt_report_fit_json(l, &post->fit, &j->data, j->seed);
        if (!*summary)
            rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    }
    if (!rc && j->out)
        rc = write(j->out, l, &post->fit, *summary, err);
    if (!rc && !post->fit.info.converged)
        pipeline_warn(hooks, LT_WARN_NOT_CONVERGED,
                     "the optimiser did not converge; the result is marked \"converged\": false");
    if (rc && j->out)
        lt_outdir_abandon(j->out);
    return rc;
}
