/*
 * lantern compare: models side by side: chi2_min, AIC, BIC and DIC, and the
 * Bayesian evidence by nested sampling with Bayes factors against the first
 * model, read on the scale of Kass & Raftery 1995.
 */
#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cjson/cJSON.h>
#include <gsl/gsl_cdf.h>
#include <omp.h>

#include "cli.h"
#include "lantern/report.h"

#define MAX_MODELS 16

static void usage(FILE *f)
{
    fputs(cli_help_compare, f);
}

/* Each model's progress line, whole, from its thread. */
static void on_note(const char *text, void *ctx)
{
    if (!*(const int *)ctx)
        fprintf(stderr, "%s\n", text);
}

int cli_compare(int argc, char **argv)
{
    lt_job j;
    lt_job_init(&j);
    const char *resume = NULL, *format_flag = NULL, *threads_flag = NULL;
    int status = CLI_OK, first = 1, prepared = 0, options = 0, quiet = 0, verbose = 0;
    lt_survey *s = NULL;
    lt_model_result runs[MAX_MODELS];
    size_t nm = 0;
    memset(runs, 0, sizeof runs);
    cJSON *json = NULL;
    char *settings = NULL, *ckdir = NULL;
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
        struct stat st;
        if (!(settings = malloc(strlen(resume) + 32))) {
            status = cli_usage_error("compare", "out of memory");
            goto done;
        }
        sprintf(settings, "%s/checkpoint/settings.ini", resume);
        if (stat(settings, &st) != 0) {
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
    if (!j.models) {
        status = cli_usage_error("compare", "--models M1,M2,... is required");
        goto done;
    }
    char list[1024], *save = NULL;
    snprintf(list, sizeof list, "%s", j.models);
    for (char *p = strtok_r(list, ", \t", &save); p; p = strtok_r(NULL, ", \t", &save)) {
        if (!lt_cosmo_model_find(p)) {
            status = cli_usage_error("--models", "unknown model '%s'", p);
            goto done;
        }
        if (nm == MAX_MODELS) {
            status = cli_usage_error("--models", "at most %d models", MAX_MODELS);
            goto done;
        }
        runs[nm++].name = p;
    }
    if (nm == 0) {
        status = cli_usage_error("--models", "no models given");
        goto done;
    }
    j.lenient = 1;
    if (resume) {
        if (j.out && strcmp(j.out, resume) != 0) {
            status = cli_usage_error("--resume", "give --resume DIR instead of --out, not both");
            goto done;
        }
        j.out = resume;
    }
    if (j.out && !(ckdir = lt_path_join(j.out, "checkpoint", NULL))) {
        status = cli_usage_error("compare", "out of memory");
        goto done;
    }
    if (resume && !lt_path_exists(ckdir)) {
        status = cli_usage_error(resume, "no checkpoint here (no checkpoint/ folder) to resume");
        goto done;
    }
    volatile sig_atomic_t *stop = cli_catch_signals();
    /* no survey where measurements alone are compared */
    if (lt_job_survey(&j, &s, &err)) {
        status = cli_report(&err);
        goto done;
    }
    if (j.out && !resume) {
        char what[128];
        snprintf(what, sizeof what, "lantern %s compare (running)", LT_VERSION);
        if (lt_outdir_prepare(j.out, j.force, &err)) {
            status = cli_report(&err);
            goto done;
        }
        prepared = 1;
        if (lt_outdir_mark(j.out, what, &err)) {
            status = cli_report(&err);
            goto done;
        }
    }
    cli_print_warnings(s);
    /* the likelihoods, one after another: this may refuse the input */
    if (lt_pipeline_compare_setup(runs, nm, &j, s, &err)) {
        status = cli_report(&err);
        goto done;
    }
    lt_pipeline_hooks hooks = {NULL, on_note, &j.quiet};
    int rc = lt_pipeline_compare(runs, nm, &j, ckdir, resume != NULL, stop, &hooks, &err);
    if (rc == LT_EINTR) {
        if (j.out)
            fprintf(stderr,
                    "lantern: interrupted; %s/checkpoint holds the state of every model so "
                    "far: continue with the same options and --resume %s, or with "
                    "'lantern compare --resume %s' alone\n",
                    j.out, j.out, j.out);
        else
            fputs("lantern: interrupted (no --out folder, so nothing was saved)\n", stderr);
        status = CLI_FAILED;
        goto done;
    }
    if (rc) {
        status = cli_report(&err);
        goto done;
    }
    for (size_t k = 0; k < nm; k++) {
        char edges[512], dic[256];
        lt_report_compare_warnings(&runs[k], edges, sizeof edges, dic, sizeof dic);
        if (edges[0])
            fprintf(stderr, "lantern: warning: %s: %s\n", runs[k].name, edges);
        if (dic[0])
            fprintf(stderr, "lantern: warning: %s: %s\n", runs[k].name, dic);
    }
    /* final files only once every model is done: an interrupted comparison
     * leaves nothing but its checkpoints */
    for (size_t k = 0; j.out && k < nm; k++)
        if (lt_report_write_nested(j.out, &runs[k], &err)) {
            status = cli_report(&err);
            goto done;
        }
    json = lt_report_compare_json(runs, nm);
    if (format == CLI_JSON) {
        cli_print_json(json, 0);
    } else {
        lt_report_compare_table(stdout, runs, nm, &j.data);
    }
    if (j.out) {
        char path[4200], what[128];
        snprintf(path, sizeof path, "%s/summary.json", j.out);
        snprintf(what, sizeof what, "lantern %s compare", LT_VERSION);
        if (lt_report_write_json(path, json, &err) || lt_outdir_finish(j.out, what, &err))
            status = cli_report(&err);
    }
done:
    if (prepared && status != CLI_OK && status != CLI_UNCONVERGED)
        lt_outdir_abandon(j.out);
    cJSON_Delete(json);
    for (size_t k = 0; k < nm; k++)
        lt_model_result_free(&runs[k]);
    lt_survey_free(s);
    lt_job_free(&j);
    free(settings);
    free(ckdir);
    return status;
}
