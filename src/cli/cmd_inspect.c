/*
 * lantern inspect: read a survey as a fit would, and describe it: size,
 * redshifts, errors, the covariance and anything worth a warning. A
 * covariance that is not positive definite, which every other command
 * refuses, gets its diagnosis here (the smallest eigenvalues and the
 * objects in the most negative direction), and the status is then 2.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "cli.h"
#include "lantern/report.h"

#define NBINS 10

/* The refusal, without its pointer to lantern inspect: this is it. (A
 * message cut short at LT_ERROR_MSG_MAX may have lost the pointer, or its
 * end: then it stays as it is.) */
static void report_refusal(lt_error *err)
{
    size_t n = strlen(err->msg), h = strlen(LT_SURVEY_INSPECT_HINT);
    if (n >= h && !strcmp(err->msg + n - h, LT_SURVEY_INSPECT_HINT))
        err->msg[n - h] = '\0';
    cli_report(err);
}

int cli_inspect(int argc, char **argv)
{
    lt_job j;
    lt_job_init(&j);
    const char *format_text = "table";
    lt_survey *s = NULL;
    const cli_opt opts[] = {{"--format", .text = &format_text}, {0}};
    cli_format format;
    int status = cli_options(argc, argv, 1, "inspect", opts, &j, LT_JOB_DATA, NULL);
    if (status ||
        (status = cli_parse_format(format_text, (1u << CLI_TABLE) | (1u << CLI_JSON), &format)))
        goto done;
    lt_error err;
    lt_error_clear(&err);
    if (!(s = lt_survey_read_unfactored(&j.data, &err))) {
        status = cli_report(&err);
        goto done;
    }
    lt_survey_stats st;
    lt_cov_info ci;
    lt_cov_diagnosis diag, *d = NULL;
    int rc = lt_survey_factor(&j.data, s, &err);
    if (rc == LT_EINPUT) {
        /* not positive definite: say so, then why */
        report_refusal(&err);
        lt_error_clear(&err);
        if (lt_cov_diagnose(s->cov, &diag, &err)) {
            status = cli_report(&err);
            goto done;
        }
        d = &diag;
        ci = (lt_cov_info){lt_cov_kind_of(s->cov), 0, diag.neigen ? diag.eigen[0] : NAN,
                           diag.max_eigenvalue, NAN, "exact"};
    }
    if ((rc && rc != LT_EINPUT) || lt_survey_stats_compute(s, NBINS, &st, &err) ||
        (!d && lt_cov_inspect(s->cov, &ci, &err))) {
        status = cli_report(&err);
        goto done;
    }
    cli_print_warnings(s, &j);
    if (format == CLI_JSON)
        cli_print_json(lt_report_survey_json(&j.data, s, &st, &ci, d), 1);
    else
        lt_report_survey_table(stdout, &j.data, s, &st, &ci, d);
    status = d ? CLI_USAGE : CLI_OK;
done:
    lt_survey_free(s);
    lt_job_free(&j);
    return status;
}
