/*
 * lantern compare: models side by side: chi2_min, AIC, BIC and DIC, and the
 * Bayesian evidence by nested sampling with Bayes factors against the first
 * model, read on the scale of Kass & Raftery 1995.
 */
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "cli.h"
#include "lantern/report.h"

int cli_compare(int argc, char **argv)
{
    lt_job j;
    lt_job_init(&j);
    const char *resume = NULL, *fmt = NULL, *threads = NULL, *model = NULL;
    int quiet = 0, verbose = 0, options, status;
    /* besides the run description's: these also go with --resume alone */
    const cli_opt opts[] = {{"--resume", .text = &resume},   {"--format", .text = &fmt},
                            {"--threads", .text = &threads}, {"--quiet", .flag = &quiet},
                            {"--verbose", .flag = &verbose}, {"--model", .text = &model},
                            {0}};
    lt_comparison *c = calloc(1, sizeof *c); /* large: on the heap */
    if (!c)
        return cli_usage_error("compare", "out of memory");
    status = cli_job_args(argc, argv, "compare",
                          LT_JOB_RUN | LT_JOB_DATA | LT_JOB_MODEL | LT_JOB_PARAMS | LT_JOB_FIT |
                              LT_JOB_NESTED | LT_JOB_OUTPUT,
                          opts, &j, &options);
    if (!status && model)
        status = cli_usage_error("--model", "compare takes --models M1,M2,...");
    if (status)
        goto done;
    lt_error err;
    lt_error_clear(&err);
    /* --resume DIR alone: the settings are in DIR/checkpoint/settings.ini
     * (a comparison that wrote none, or a resume given the options again,
     * takes them from the options, and each model's checkpoint refuses
     * other ones) */
    if (resume && !options &&
        lt_job_resume(&j, resume,
                      "give the comparison's options again with --resume, or the folder of a "
                      "stopped lantern compare run",
                      &err)) {
        status = cli_report(&err);
        goto done;
    }
    if (threads && lt_job_flag(&j, "--threads", threads, &err)) {
        status = cli_report(&err);
        goto done;
    }
    if (fmt)
        j.format = fmt;
    j.quiet |= quiet, j.verbose |= verbose;
    cli_format format;
    if ((status = cli_parse_format(j.format, (1u << CLI_TABLE) | (1u << CLI_JSON), &format)))
        goto done;
    if (resume) {
        if (j.out && strcmp(j.out, resume) != 0) {
            status = cli_usage_error("--resume", "give --resume DIR instead of --out, not both");
            goto done;
        }
        j.out = resume;
    }
    cli_progress pr;
    lt_pipeline_hooks hooks = cli_progress_start(&pr, &j);
    int rc = lt_pipeline_compare_job(&j, resume != NULL, cli_catch_signals(), &hooks, c, &err);
    cli_progress_end(&pr);
    if (rc == LT_EINTR && j.out) {
        fprintf(stderr,
                "lantern: interrupted; %s/checkpoint holds the state of every model so far: "
                "continue with the same options and --resume %s, or with 'lantern compare "
                "--resume %s' alone\n",
                j.out, j.out, j.out);
        status = CLI_FAILED;
    } else if (rc == LT_EINTR) {
        fputs("lantern: interrupted (no --out folder, so nothing was saved)\n", stderr);
        status = CLI_FAILED;
    } else if (rc) {
        status = cli_report(&err);
    } else if (format == CLI_JSON) {
        cli_print_json(c->summary, 0);
    } else {
        lt_report_compare_table(stdout, c->m, c->n, &j.data);
    }
done:
    lt_comparison_free(c);
    free(c);
    lt_job_free(&j);
    return status;
}
