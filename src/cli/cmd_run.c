/*
 * lantern run: the whole job from one run file: the data read once, then
 * for each model a best fit and a sampled posterior, then the comparison
 * and the report (tables and figures). lantern report rebuilds the report
 * from saved runs, one or several.
 */
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "lantern/report.h"

#define MAX_MODELS 16

static void print_constraints(const char *dir)
{
    char *path = lt_path_join(dir, "constraints.md", NULL), *text = NULL;
    size_t size;
    if (path && lt_file_read(path, 1 << 20, &text, &size, NULL) == LT_OK)
        fputs(text, stdout);
    free(text);
    free(path);
}

int cli_run(int argc, char **argv)
{
    const char *file = NULL, *out = NULL, *resume = NULL, *threads = NULL, *fsize = NULL;
    const char *sets[64], *set_flags[64], *no_warn[64];
    size_t nsets = 0, nno_warn = 0;
    int force = 0, quiet = 0, verbose = 0;
    /* --set is --override's old name, kept for one release: elsewhere
     * (distance) --set sets parameter values, and it will only mean that */
    const cli_opt opts[] = {
        {"--out", .text = &out}, {"--resume", .text = &resume}, {"--threads", .text = &threads},
        {"--figure-size", .text = &fsize},
        {"--force", .flag = &force}, {"--quiet", .flag = &quiet}, {"--verbose", .flag = &verbose},
        {"--override", .list = sets, .origin = set_flags, .n = &nsets, .max = 64},
        {"--set", .list = sets, .origin = set_flags, .n = &nsets, .max = 64},
        {"--no-warn", .list = no_warn, .n = &nno_warn, .max = 64},
        {"", .text = &file}, {0}};
    int status = cli_options(argc, argv, 1, "run", opts, NULL, 0, NULL);
    if (status)
        return status;
    if (!file)
        return cli_usage_error("run", "give the run file (see 'lantern run --help')");
    lt_job j;
    lt_job_init(&j);
    char *dir = NULL;
    int unconverged = 0;
    lt_error err;
    lt_error_clear(&err);
    if ((status = cli_job_load(&j, file, sets, set_flags, nsets)))
        goto done;
    if (fsize && lt_report_figure_width(fsize, &j.figure_width)) {
        status = cli_usage_error("--figure-size", "'%s' is not %s", fsize, LT_FIGURE_WIDTH_TEXT);
        goto done;
    }
    /* --threads and --no-warn by the run file's rules, which name the flags */
    if (threads && lt_job_flag(&j, "--threads", threads, &err)) {
        status = cli_report(&err);
        goto done;
    }
    for (size_t i = 0; i < nno_warn; i++)
        if (lt_job_flag(&j, "--no-warn", no_warn[i], &err)) {
            status = cli_report(&err);
            goto done;
        }
    for (size_t i = 0; i < nsets; i++)
        if (!strcmp(set_flags[i], "--set")) {
            cli_warning(&j, LT_WARN_RENAMED_FLAG,
                        "'run --set section.key=value' is now 'run --override "
                        "section.key=value'; --set will be refused here in a later release");
            break;
        }
    j.quiet |= quiet, j.verbose |= verbose;
    cli_progress pr;
    lt_pipeline_hooks hooks = cli_progress_start(&pr, &j);
    lt_run_job_opts o = {file, resume ? resume : out, resume != NULL, force,
                         cli_catch_signals(), &hooks};
    int stage;
    int rc = lt_pipeline_run_job(&j, &o, &dir, &unconverged, &stage, &err);
    cli_progress_end(&pr);
    if (rc == LT_EINTR) {
        fprintf(stderr, "lantern: interrupted %s\nlantern: run stopped\n",
                stage == 0   ? "during the best fit, before sampling began"
                : stage == 2 ? "during the evidence; the checkpoints are kept"
                             : "while sampling; the checkpoints are kept");
        status = CLI_FAILED;
    } else if (rc) {
        status = cli_report(&err);
        if (status == CLI_FAILED)
            fputs("lantern: run stopped\n", stderr);
    } else {
        print_constraints(dir);
        status = unconverged ? CLI_UNCONVERGED : CLI_OK;
    }
    /* the way back, if there is one: a run stopped before it wrote
     * anything leaves no folder */
    if (status == CLI_FAILED && dir && lt_path_exists(dir))
        fprintf(stderr, "lantern: continue with 'lantern run %s --resume %s'\n", file, dir);
    else if (status == CLI_FAILED)
        fputs("lantern: nothing was saved; run it again\n", stderr);
done:
    free(dir);
    lt_job_free(&j);
    return status;
}

/* ---- lantern report ---- */
int cli_report_runs(int argc, char **argv)
{
    const char *runs[MAX_MODELS], *out = NULL, *size = NULL;
    size_t nr = 0;
    int force = 0;
    const cli_opt opts[] = {{"--out", .text = &out}, {"--force", .flag = &force},
                            {"--figure-size", .text = &size},
                            {"", .list = runs, .n = &nr, .max = MAX_MODELS}, {0}};
    int status = cli_options(argc, argv, 1, "report", opts, NULL, 0, NULL);
    if (status)
        return status;
    if (nr == 0)
        return cli_usage_error("report", "give at least one run folder");
    if (nr > 1 && !out)
        return cli_usage_error("report", "several runs need --out DIR for the joint report");
    lt_error err;
    lt_error_clear(&err);
    lt_report_set rs;
    lt_report_set_init(&rs);
    if (size && lt_report_figure_width(size, &rs.figure_width_in))
        return cli_usage_error("--figure-size", "'%s' is not %s", size, LT_FIGURE_WIDTH_TEXT);
    int prepared = 0;
    for (size_t r = 0; r < nr; r++)
        if (lt_report_set_add_run(&rs, runs[r], nr > 1, &err)) {
            status = cli_report(&err);
            goto done;
        }
    const char *dir = out ? out : runs[0];
    if (out && lt_outdir_prepare(out, force, &err)) {
        status = cli_report(&err);
        goto done;
    }
    prepared = out != NULL;
    int unconverged = 0;
    cli_notes notes = {0, NULL}; /* a saved run: nothing to silence */
    lt_pipeline_hooks hooks = {.note = cli_note, .ctx = &notes};
    if (lt_pipeline_report(&rs, dir, out ? "joint report" : rs.name, NULL, &hooks, &unconverged,
                           &err))
        status = cli_report(&err);
    else if (unconverged)
        status = CLI_UNCONVERGED;
    if (*cli_catch_signals()) {
        fputs("lantern: interrupted\n", stderr);
        status = CLI_FAILED;
    }
    if (status == CLI_OK || status == CLI_UNCONVERGED) {
        char what[128];
        snprintf(what, sizeof what, "lantern %s report", LT_VERSION);
        if (lt_outdir_finish(dir, what, &err))
            status = cli_report(&err);
        else
            print_constraints(dir);
    }
done:
    if (prepared && status != CLI_OK && status != CLI_UNCONVERGED)
        lt_outdir_abandon(out);
    lt_report_set_free(&rs);
    return status;
}
