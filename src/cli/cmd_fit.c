/*
 * lantern fit: the best fit of a model to a survey, with Laplace errors.
 */
#include <cjson/cJSON.h>

#include "cli.h"
#include "lantern/report.h"

int cli_fit(int argc, char **argv)
{
    lt_job j;
    lt_job_init(&j);
    int given;
    lt_survey *s = NULL;
    lt_like *l = NULL;
    cJSON *json = NULL;
    lt_posterior post = {0};
    cli_format format;
    lt_like_spec spec;
    int status = cli_job_args(argc, argv, "fit",
                              LT_JOB_DATA | LT_JOB_MODEL | LT_JOB_PARAMS | LT_JOB_FIT |
                                  LT_JOB_OUTPUT,
                              NULL, &j, &given);
    if (status ||
        (status = cli_parse_format(j.format, (1u << CLI_TABLE) | (1u << CLI_JSON), &format)) ||
        (status = cli_job_model(&j, &spec)))
        goto done;
    lt_error err;
    lt_error_clear(&err);
    if (lt_job_survey(&j, &s, &err) || !(l = lt_like_alloc(s, &spec, &err))) {
        status = cli_report(&err);
        goto done;
    }
    cli_print_warnings(s, &j);
    cli_notes notes = {0, &j};
    lt_pipeline_hooks hooks = {.note = cli_note, .ctx = &notes};
    if (lt_pipeline_fit(l, &j, cli_catch_signals(), &hooks, &post, &json, &err)) {
        if (err.code == LT_EINTR)
            fputs("lantern: interrupted during the best fit: nothing written\n", stderr);
        status = err.code == LT_EINTR ? CLI_FAILED : cli_report(&err);
    } else if (format == CLI_JSON)
        cli_print_json(json, 0);
    else
        lt_report_fit_table(stdout, l, &post.fit, &j.data);
    if (!status && !post.fit.info.converged)
        status = CLI_UNCONVERGED;
done:
    cJSON_Delete(json);
    lt_posterior_free(&post);
    lt_like_free(l);
    lt_survey_free(s);
    lt_job_free(&j);
    return status;
}
