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

static void usage_run(FILE *f)
{
    fputs(cli_help_run, f);
}

/* Write the report of rs into dir, then say what the tables mark where
 * the user looks first. Returns the exit status (3 if a model did not
 * converge). */
static int write_report(lt_report_set *rs, const char *dir, const char *name, const lt_survey *s)
{
    lt_error err;
    lt_error_clear(&err);
    if (lt_report_set_write(rs, dir, name, s, &err))
        return cli_report(&err);
    int status = CLI_OK;
    const lt_run_model *models = rs->models;
    for (size_t i = 0; i < rs->n; i++) {
        if (!models[i].converged) {
            char rhat[64];
            fprintf(stderr,
                    "lantern: warning: %s did not converge (worst R-hat %s, smallest ESS %.0f): "
                    "its numbers are provisional; the tables mark it with a double dagger\n",
                    models[i].label, lt_run_model_rhat_text(&models[i], rhat, sizeof rhat),
                    models[i].ess_min);
            status = CLI_UNCONVERGED;
        }
        if (!lt_run_model_same_data(&models[0], &models[i]))
            fprintf(stderr,
                    "lantern: note: %s was fitted to other data (%zu objects) than %s (%zu "
                    "objects): the tables leave its AIC, BIC and ln B differences blank\n",
                    models[i].label, models[i].n_data, models[0].label, models[0].n_data);
    }
    return status;
}

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
    if (argc > 1 && !strcmp(argv[1], "--help")) {
        usage_run(stdout);
        return CLI_OK;
    }
    if (argc < 2 || !strncmp(argv[1], "--", 2))
        return cli_usage_error("run", "give the run file first (see 'lantern run --help')");
    const char *sets[64], *set_flags[64], *out = NULL, *resume = NULL;
    int warned_set = 0, over = 0;
    size_t nsets = 0;
    int force = 0, quiet = 0, verbose = 0;
    long threads_flag = -1; /* -1: as the run file says */
    cli_args a = cli_args_start(argc, argv, 2);
    while (cli_args_more(&a)) {
        const char *v;
        if (cli_flag(&a, "--help")) {
            usage_run(stdout);
            return CLI_OK;
        } else if (cli_take(&a, "--out", &v)) {
            out = v;
        } else if (cli_take(&a, "--resume", &v)) {
            resume = v;
        } else if (cli_flag(&a, "--force")) {
            force = 1;
        } else if (cli_flag(&a, "--quiet")) {
            quiet = 1;
        } else if (cli_flag(&a, "--verbose")) {
            verbose = 1;
        } else if (cli_take(&a, "--threads", &v)) {
            if (lt_parse_long(v, 0, 256, &threads_flag))
                return cli_usage_error("--threads", "'%s' is not a whole number from 0 to 256", v);
        } else if ((over = cli_take(&a, "--override", &v)) || cli_take(&a, "--set", &v)) {
            /* --set is --override's old name, kept for one release: elsewhere
             * (distance) --set sets parameter values, and it will only mean that */
            const char *flag = over ? "--override" : "--set";
            if (!strcmp(flag, "--set") && !warned_set++)
                fputs("lantern: warning: 'run --set section.key=value' is now 'run --override "
                      "section.key=value'; --set will be refused here in a later release\n",
                      stderr);
            if (nsets == 64)
                return cli_usage_error(flag, "given more than 64 times");
            set_flags[nsets] = flag;
            sets[nsets++] = v;
        } else {
            return cli_args_unknown(&a, "run");
        }
    }
    if (a.failed)
        return CLI_USAGE;
    lt_job j;
    lt_job_init(&j);
    int prepared = 0, hint = 0;
    char *dir = NULL;
    lt_report_set rs;
    lt_report_set_init(&rs);
    int status = cli_job_load(&j, argv[1], sets, set_flags, nsets);
    lt_survey *s = NULL;
    if (status)
        goto done;
    j.lenient = 1;
    j.quiet |= quiet, j.verbose |= verbose;
    if (threads_flag >= 0)
        j.threads = threads_flag;
    if (!j.models) {
        status = cli_usage_error(argv[1], "[run] needs models = M1, M2, ... (lcdm-flat, lcdm, "
                                          "wcdm-flat, wcdm, w0wa-flat, w0wa)");
        goto done;
    }
    /* the models */
    char list[1024], *names[MAX_MODELS];
    size_t nm = 0;
    snprintf(list, sizeof list, "%s", j.models);
    char *save = NULL;
    for (char *p = strtok_r(list, ", \t", &save); p; p = strtok_r(NULL, ", \t", &save)) {
        if (!lt_cosmo_model_find(p)) {
            status = cli_usage_error(argv[1], "[run] models: unknown model '%s'", p);
            goto done;
        }
        for (size_t k = 0; k < nm; k++)
            if (!strcmp(names[k], p)) {
                status = cli_usage_error(argv[1], "[run] models lists %s twice", p);
                goto done;
            }
        if (nm == MAX_MODELS) {
            status = cli_usage_error(argv[1], "[run] models: at most %d", MAX_MODELS);
            goto done;
        }
        names[nm++] = p;
    }
    if (nm == 0) {
        status = cli_usage_error(argv[1], "[run] models is empty");
        goto done;
    }
    /* the folder: out/NAME by default */
    char stem[256];
    const char *base = strrchr(argv[1], '/') ? strrchr(argv[1], '/') + 1 : argv[1];
    snprintf(stem, sizeof stem, "%.*s", (int)strcspn(base, "."), base);
    const char *name = j.name ? j.name : stem;
    const char *given = resume ? resume : out ? out : j.out;
    if (!(dir = given ? strdup(given) : lt_path_join("out", name, NULL))) {
        status = cli_usage_error("run", "out of memory");
        goto done;
    }
    lt_error err;
    lt_error_clear(&err);
    if (!resume && lt_outdir_prepare(dir, force, &err)) {
        status = cli_report(&err);
        goto done;
    }
    prepared = !resume;
    if (resume && !lt_path_exists(dir)) {
        status = cli_usage_error("--resume", "%s does not exist", dir);
        goto done;
    }
    if (resume) {
        /* "report" too: lantern report rebuilding a run in place re-marks it */
        char made_by[64];
        if (lt_outdir_command(dir, made_by, sizeof made_by, &err)) {
            status = cli_report(&err);
            goto done;
        }
        if (strcmp(made_by, "run") && strcmp(made_by, "report")) {
            status = cli_usage_error(dir, "holds the output of 'lantern %s', not of a run: "
                                          "nothing to resume",
                                     made_by);
            goto done;
        }
    }
    if (lt_job_absolute(&j, &j.data, &err)) {
        status = cli_report(&err);
        goto done;
    }
    /* the data, once */
    if (!j.quiet)
        fprintf(stderr, "lantern run %s: reading %s\n", name,
                j.data.data ? j.data.data : "no survey (measurements only)");
    if (lt_job_survey(&j, &s, &err)) {
        status = cli_report(&err);
        goto done;
    }
    cli_print_warnings(s);
    char what[128];
    snprintf(what, sizeof what, "lantern %s run (running)", LT_VERSION);
    if (lt_outdir_mark(dir, what, &err)) {
        status = cli_report(&err);
        goto done;
    }
    for (size_t k = 0; k < nm; k++) {
        if (lt_report_set_add(&rs, dir, names[k], NULL, &err)) {
            status = cli_report(&err);
            goto done;
        }
        char *sum = lt_path_join(rs.dirs[k], "summary.json", NULL);
        char *chk = lt_path_join(rs.dirs[k], "checkpoint/state.bin", NULL);
        /* a model's summary is written once, whole, with its evidence: a
         * folder with one is done (its convergence is read with the report) */
        int kept = sum && resume && lt_path_exists(sum), again = chk && resume && lt_path_exists(chk);
        int oom = !sum || !chk;
        free(sum);
        free(chk);
        if (oom) {
            status = cli_usage_error("run", "out of memory");
            goto done;
        }
        if (kept) {
            if (!j.quiet)
                fprintf(stderr, "[%zu/%zu] %s: finished earlier, kept\n", k + 1, nm, names[k]);
            continue;
        }
        if (!j.quiet)
            fprintf(stderr, "[%zu/%zu] %s: %s\n", k + 1, nm, names[k],
                    again ? "resuming the sampler" : "best fit, then sampling");
        lt_job mj = j; /* the model's own copy of the settings */
        mj.model = names[k];
        mj.force = 1;
        mj.ini = NULL; /* owned by j, as are its strings */
        mj.pool = NULL, mj.npool = mj.cap = 0;
        lt_like_spec spec;
        lt_like *l = NULL;
        if ((status = cli_job_model(&mj, &spec)))
            goto done;
        if (!(l = lt_like_alloc(s, &spec, &err))) {
            status = cli_report(&err);
            goto done;
        }
        char label[64];
        snprintf(label, sizeof label, "[%zu/%zu] %s", k + 1, nm, names[k]);
        int st = cli_sample_model(&mj, l, &spec, rs.dirs[k], again, 0, CLI_TABLE, label);
        lt_like_free(l);
        if (st == CLI_FAILED || st == CLI_USAGE) {
            status = st;
            if (st == CLI_FAILED)
                fputs("lantern: run stopped\n", stderr), hint = 1;
            goto done;
        }
    }
    if (!j.quiet)
        fprintf(stderr, "report: tables and figures in %s/\n", dir);
    status = write_report(&rs, dir, name, s);
    if (status == CLI_OK || status == CLI_UNCONVERGED) {
        snprintf(what, sizeof what, "lantern %s run %s", LT_VERSION, argv[1]);
        if (lt_outdir_finish(dir, what, &err))
            status = cli_report(&err);
        else
            print_constraints(dir);
    }
done:
    /* a failed run leaves the earlier one (or no folder); a stopped one its
     * checkpoints, to resume */
    if (prepared && status != CLI_OK && status != CLI_UNCONVERGED && dir)
        lt_outdir_abandon(dir);
    /* the way back, if there is one: a run stopped before it wrote
     * anything leaves no folder */
    if (hint && dir && lt_path_exists(dir))
        fprintf(stderr, "lantern: continue with 'lantern run %s --resume %s'\n", argv[1], dir);
    else if (hint)
        fputs("lantern: nothing was saved; run it again\n", stderr);
    lt_report_set_free(&rs);
    free(dir);
    lt_survey_free(s);
    lt_job_free(&j);
    return status;
}

/* ---- lantern report ---- */
static void usage_report(FILE *f)
{
    fputs(cli_help_report, f);
}

int cli_report_runs(int argc, char **argv)
{
    const char *runs[MAX_MODELS], *out = NULL;
    size_t nr = 0;
    int force = 0;
    cli_args a = cli_args_start(argc, argv, 1);
    while (cli_args_more(&a)) {
        const char *v;
        if (cli_flag(&a, "--help")) {
            usage_report(stdout);
            return CLI_OK;
        } else if (cli_take(&a, "--out", &v)) {
            out = v;
        } else if (cli_flag(&a, "--force")) {
            force = 1;
        } else if ((v = cli_positional(&a))) {
            if (nr == MAX_MODELS)
                return cli_usage_error("report", "at most %d runs", MAX_MODELS);
            runs[nr++] = v;
        } else {
            return cli_args_unknown(&a, "report");
        }
    }
    if (a.failed)
        return CLI_USAGE;
    if (nr == 0)
        return cli_usage_error("report", "give at least one run folder");
    if (nr > 1 && !out)
        return cli_usage_error("report", "several runs need --out DIR for the joint report");
    lt_error err;
    lt_error_clear(&err);
    lt_report_set rs;
    lt_report_set_init(&rs);
    int prepared = 0;
    int status = CLI_OK;
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
    status = write_report(&rs, dir, out ? "joint report" : rs.name, NULL);
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
