/*
 * lantern fit: the best fit of a model to a survey, with Laplace errors.
 */
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "cli.h"
#include "lantern/report.h"

int cli_fit(int argc, char **argv)
{
    lt_job j;
    lt_job_init(&j);
    int status, prepared = 0, options;
    lt_survey *s = NULL;
    lt_like *l = NULL;
    cJSON *json = NULL;
    lt_posterior post;
    memset(&post, 0, sizeof post);
    if ((status = cli_job_args(argc, argv, "fit", cli_help_fit,
                               LT_JOB_DATA | LT_JOB_MODEL | LT_JOB_PARAMS | LT_JOB_FIT |
                                   LT_JOB_OUTPUT,
                               NULL, NULL, &j, &options)))
        goto done;
    cli_format format;
    if ((status = cli_parse_format(j.format, (1u << CLI_TABLE) | (1u << CLI_JSON), &format)))
        goto done;
    lt_like_spec spec;
    if ((status = cli_job_model(&j, &spec)))
        goto done;
    lt_error err;
    lt_error_clear(&err);
    if (lt_job_survey(&j, &s, &err) || !(l = lt_like_alloc(s, &spec, &err)) ||
        (j.out && lt_outdir_prepare(j.out, j.force, &err))) {
        status = cli_report(&err);
        goto done;
    }
    prepared = j.out != NULL;
    cli_print_warnings(s);
    lt_run_opts o = {NULL, NULL, NULL, LT_RUN_FRESH, cli_catch_signals(), NULL};
    if (lt_pipeline_run(lt_method_fit, l, &j, &o, NULL, &post, &err)) {
        if (err.code == LT_EINTR) {
            fprintf(stderr, "lantern: interrupted during the best fit: nothing written\n");
            status = CLI_FAILED;
        } else
            status = cli_report(&err);
        goto done;
    }
    const lt_fit_result r = post.fit;
    if (!r.laplace_ok)
        fprintf(stderr, "lantern: warning: %s\n", r.laplace_note);
    json = lt_report_fit_json(l, &r, &j.data, j.seed);
    if (format == CLI_JSON) {
        cli_print_json(json, 0);
    } else {
        lt_report_fit_table(stdout, l, &r, &j.data);
    }
    if (j.out) {
        char what[128];
        snprintf(what, sizeof what, "lantern %s fit", LT_VERSION);
        char *path = lt_path_join(j.out, "summary.json", NULL);
        int rc = path ? lt_report_write_json(path, json, &err)
                      : lt_error_set(&err, LT_ENOMEM, NULL, 0, "out of memory");
        free(path);
        path = rc ? NULL : lt_path_join(j.out, "residuals.csv", NULL);
        if (!rc && !path)
            rc = lt_error_set(&err, LT_ENOMEM, NULL, 0, "out of memory");
        if (!rc && s) { /* residuals of the survey, where there is one */
            double *model = malloc(s->n * sizeof *model);
            rc = !model ? lt_error_set(&err, LT_ENOMEM, NULL, 0, "out of memory")
                        : lt_pipeline_predict(l, r.best, model, &err);
            if (!rc)
                rc = lt_report_write_residuals(path, l, model, &err);
            free(model);
        }
        free(path);
        if (!rc)
            rc = lt_outdir_finish(j.out, what, &err);
        if (rc) {
            status = cli_report(&err);
            goto done;
        }
    }
    if (!r.info.converged) {
        fputs("lantern: warning: the optimiser did not converge; the result is marked "
              "\"converged\": false\n",
              stderr);
        status = CLI_UNCONVERGED;
    }
done:
    if (prepared && status != CLI_OK && status != CLI_UNCONVERGED)
        lt_outdir_abandon(j.out);
    cJSON_Delete(json);
    lt_posterior_free(&post);
    lt_like_free(l);
    lt_survey_free(s);
    lt_job_free(&j);
    return status < 0 ? CLI_OK : status;
}
