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


static void usage(FILE *f)
{
    fputs(cli_help_compare, f);
}

/* Each model's progress line, whole, from its thread. */
static void on_note(lt_note_kind kind, const char *text, void *ctx)
{
    if (kind != LT_NOTE_PROGRESS)
        fprintf(stderr, "lantern: %s%s\n", kind == LT_NOTE_WARNING ? "warning: " : "", text);
    else if (!*(const int *)ctx)
        fprintf(stderr, "%s\n", text);
}

int cli_compare(int argc, char **argv)
{
    lt_job j;
    lt_job_init(&j);
    const char *resume = NULL, *format_flag = NULL, *threads_flag = NULL;
    int status = CLI_OK, first = 1, options = 0, quiet = 0, verbose = 0;
    lt_comparison *c = calloc(1, sizeof *c); /* large: on the heap */
    char *settings = NULL;
    if (!c)
        return cli_usage_error("compare", "out of memory");
    if (argc > 1 && strncmp(argv[1], "--", 2) != 0) {
        if ((status = cli_job_load(&j, argv[1], NULL, NULL, 0)))
            goto done;
        first = 2, options = 1;
    }
    cli_args a = cli_args_start(argc, argv, first);
    while (cli_args_more(&a)) {
        const char *v;
        if (cli_flag(&a, "--help")) {
            usage(stdout);
            goto done;
        } else if (cli_take(&a, "--resume", &v)) {
            resume = v;
        } else if (cli_take(&a, "--format", &v)) {
            format_flag = v;
        } else if (cli_take(&a, "--threads", &v)) {
            threads_flag = v;
        } else if (cli_flag(&a, "--quiet")) {
            quiet = 1;
        } else if (cli_flag(&a, "--verbose")) {
            verbose = 1;
        } else if (!strcmp(a.argv[a.i], "--model") || !strncmp(a.argv[a.i], "--model=", 8)) {
            status = cli_usage_error("--model", "compare takes --models M1,M2,...");
            goto done;
        } else if (cli_take_job(&a, &j,
                                LT_JOB_RUN | LT_JOB_DATA | LT_JOB_MODEL | LT_JOB_PARAMS |
                                    LT_JOB_FIT | LT_JOB_NESTED | LT_JOB_OUTPUT)) {
            options = 1;
        } else {
            status = cli_args_unknown(&a, "compare");
            goto done;
        }
    }
    if (a.failed) {
        status = CLI_USAGE;
        goto done;
    }
    /* --resume DIR alone: the settings are in DIR/checkpoint/settings.ini
     * (a comparison that wrote none, or a resume given the options again,
     * takes them from the options, and each model's checkpoint refuses
     * other ones) */
    if (resume && !options) {
        if (!(settings = lt_path_join(resume, "checkpoint/settings.ini", NULL))) {
            status = cli_usage_error("compare", "out of memory");
            goto done;
        }
        if (!lt_path_exists(settings)) {
            status = cli_usage_error(resume, "no checkpoint here (checkpoint/settings.ini is "
                                             "missing): give the comparison's options again "
                                             "with --resume, or the folder of a stopped lantern "
                                             "compare run");
            goto done;
        }
        if ((status = cli_job_load(&j, settings, NULL, NULL, 0)))
            goto done;
    }
    lt_error err;
    lt_error_clear(&err);
    if (threads_flag && lt_job_flag(&j, "--threads", threads_flag, &err)) {
        status = cli_report(&err);
        goto done;
    }
    if (format_flag)
        j.format = format_flag;
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
    lt_pipeline_hooks hooks = {NULL, on_note, &j.quiet};
    int rc = lt_pipeline_compare_job(&j, resume != NULL, cli_catch_signals(), &hooks, c, &err);
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
    free(settings);
    return status;
}
