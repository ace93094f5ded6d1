/*
 * lantern inspect: read a survey as a fit would, and describe it: size,
 * redshifts, errors, the covariance and anything worth a warning.
 */
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "cli.h"
#include "lantern/report.h"

#define NBINS 10

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
    if (!(s = lt_survey_read(&j.data, &err))) {
        status = cli_report(&err);
        goto done;
    }
    lt_survey_stats st;
    lt_cov_info ci;
    if (lt_survey_stats_compute(s, NBINS, &st, &err) || lt_cov_inspect(s->cov, &ci, &err)) {
        status = cli_report(&err);
    } else {
        cli_print_warnings(s);
        if (format == CLI_JSON)
            cli_print_json(lt_report_survey_json(&j.data, s, &st, &ci), 1);
        else
            lt_report_survey_table(stdout, &j.data, s, &st, &ci);
    }
done:
    lt_survey_free(s);
    lt_job_free(&j);
    return status;
}
