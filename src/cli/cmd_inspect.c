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

static void usage(FILE *f)
{
    fputs(cli_help_inspect, f);
}

int cli_inspect(int argc, char **argv)
{
    lt_job j;
    lt_job_init(&j);
    const char *format_text = "table";
    int status = CLI_OK;
    lt_survey *s = NULL;
    cli_args a = cli_args_start(argc, argv, 1);
    while (cli_args_more(&a)) {
        const char *v;
        if (cli_flag(&a, "--help")) {
            usage(stdout);
            goto done;
        } else if (cli_take_job(&a, &j, LT_JOB_DATA)) {
            continue;
        } else if (cli_take(&a, "--format", &v)) {
            format_text = v;
        } else {
            status = cli_args_unknown(&a, "inspect");
            goto done;
        }
    }
    cli_format format;
    if (a.failed)
        status = CLI_USAGE;
    else
        status = cli_parse_format(format_text, (1u << CLI_TABLE) | (1u << CLI_JSON), &format);
    if (status)
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
