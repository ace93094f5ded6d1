/*
 * lantern run: the whole job from one run file: the data read once, then
 * for each model a best fit and a sampled posterior, then the comparison
 * and the report (tables and figures). lantern report rebuilds the report
 * from saved runs, one or several.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include <cjson/cJSON.h>
#include <omp.h>

#include "cli.h"
#include "lantern/report.h"

#define MAX_MODELS 16

static void usage_run(FILE *f)
{
    fputs(cli_help_run, f);
}

static int exists(const char *path)
{
    struct stat st;
    return stat(path, &st) == 0;
}

/* summary.json of the whole run: every model's summary and the comparison. */
static int write_run_summary(const char *dir, const char *name, const lt_run_model *models,
                             size_t n, char dirs[][4200], lt_error *err)
{
    cJSON *o = cJSON_CreateObject();
    cJSON_AddStringToObject(o, "command", "run");
    cJSON_AddStringToObject(o, "name", name);
    cJSON *list = cJSON_AddArrayToObject(o, "models");
    cJSON *cmp = cJSON_AddArrayToObject(o, "comparison");
    for (size_t i = 0; i < n; i++) {
        char path[4400], *text = NULL;
        size_t size;
        snprintf(path, sizeof path, "%.4000s/summary.json", dirs[i]);
        if (lt_file_read(path, (size_t)64 << 20, &text, &size, err)) {
            cJSON_Delete(o);
            return err->code;
        }
        cJSON *m = cJSON_Parse(text);
        free(text);
        if (m) {
            cJSON_AddStringToObject(m, "folder", models[i].name);
            cJSON_AddItemToArray(list, m);
        }
        cJSON *c = cJSON_CreateObject();
        cJSON_AddStringToObject(c, "model", models[i].name);
        cJSON_AddItemToObject(c, "k_params", lt_json_number((double)models[i].k_params));
        cJSON_AddItemToObject(c, "chi2_min", lt_json_number(models[i].chi2_min));
        cJSON_AddItemToObject(c, "dof", lt_json_number((double)models[i].dof));
        cJSON_AddItemToObject(c, "aic", lt_json_number(models[i].aic));
        cJSON_AddItemToObject(c, "bic", lt_json_number(models[i].bic));
        /* differences across other data compare nothing: null, and said so */
        int same = lt_run_model_same_data(&models[0], &models[i]);
        double other = same ? 0.0 : NAN;
        cJSON_AddItemToObject(c, "delta_aic", lt_json_number(models[i].aic - models[0].aic + other));
        cJSON_AddItemToObject(c, "delta_bic", lt_json_number(models[i].bic - models[0].bic + other));
        cJSON_AddBoolToObject(c, "same_data_as_first", same);
        cJSON_AddBoolToObject(c, "converged", models[i].converged);
        if (isfinite(models[i].ln_z)) {
            double lnb = models[i].ln_z - models[0].ln_z + other;
            cJSON_AddItemToObject(c, "ln_z", lt_json_number(models[i].ln_z));
            cJSON_AddItemToObject(c, "ln_z_err", lt_json_number(models[i].ln_z_err));
            cJSON_AddItemToObject(c, "ln_b", lt_json_number(lnb));
            cJSON_AddItemToObject(c, "two_ln_b", lt_json_number(2 * lnb));
            char rd[160];
            snprintf(rd, sizeof rd, i == 0 ? "reference" : "%s: %s", 2 * lnb >= 0 ? "for this model" : "for the reference",
                     lt_report_kass_raftery(2 * lnb));
            if (!same)
                snprintf(rd, sizeof rd, "not compared: fitted to other data than the first model");
            cJSON_AddStringToObject(c, "reading", rd);
        }
        cJSON_AddItemToArray(cmp, c);
    }
    char path[4200];
    snprintf(path, sizeof path, "%s/summary.json", dir);
    int rc = lt_report_write_json(path, o, err);
    cJSON_Delete(o);
    return rc;
}

/* Read the model folders, then write the tables, figures and summary. */
static int write_report(const char *dir, const char *name, char dirs[][4200], size_t n,
                        const char *labels[], const lt_survey *s)
{
    lt_run_model models[MAX_MODELS];
    lt_error err;
    lt_error_clear(&err);
    size_t loaded = 0;
    int status = CLI_OK;
    for (; loaded < n; loaded++)
        if (lt_run_model_load(dirs[loaded], &models[loaded], &err)) {
            status = cli_report(&err);
            goto done;
        } else if (labels && labels[loaded]) {
            free(models[loaded].label);
            models[loaded].label = strdup(labels[loaded]);
        }
    if (lt_report_write_tables(dir, models, n, &err) ||
        lt_report_write_figures(dir, models, n, s, &err) ||
        write_run_summary(dir, name, models, n, dirs, &err)) {
        status = cli_report(&err);
        goto done;
    }
    /* what the tables mark, said where the user looks first */
    for (size_t i = 0; i < n; i++) {
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
done:
    for (size_t i = 0; i < loaded; i++)
        lt_run_model_free(&models[i]);
    return status;
}

static void print_constraints(const char *dir)
{
    char path[4200], *text = NULL;
    size_t size;
    snprintf(path, sizeof path, "%s/constraints.md", dir);
    if (lt_file_read(path, 1 << 20, &text, &size, NULL) == LT_OK)
        fputs(text, stdout);
    free(text);
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
    char stem[256], dir[4096];
    const char *base = strrchr(argv[1], '/') ? strrchr(argv[1], '/') + 1 : argv[1];
    snprintf(stem, sizeof stem, "%.*s", (int)strcspn(base, "."), base);
    const char *name = j.name ? j.name : stem;
    snprintf(dir, sizeof dir, "%s", resume ? resume : out ? out : j.out ? j.out : "");
    if (!dir[0])
        snprintf(dir, sizeof dir, "out/%s", name);
    lt_error err;
    lt_error_clear(&err);
    if (!resume && lt_outdir_prepare(dir, force, &err)) {
        status = cli_report(&err);
        goto done;
    }
    prepared = !resume;
    if (resume && !exists(dir)) {
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
    static char dirs[MAX_MODELS][4200];
    for (size_t k = 0; k < nm; k++) {
        snprintf(dirs[k], sizeof dirs[k], "%s/%s", dir, names[k]);
        char sum[4400], chk[4400];
        snprintf(sum, sizeof sum, "%.4000s/summary.json", dirs[k]);
        snprintf(chk, sizeof chk, "%.4000s/checkpoint/state.bin", dirs[k]);
        /* a model's summary is written once, whole, with its evidence: a
         * folder with one is done (its convergence is read with the report) */
        if (resume && exists(sum)) {
            if (!j.quiet)
                fprintf(stderr, "[%zu/%zu] %s: finished earlier, kept\n", k + 1, nm, names[k]);
            continue;
        }
        int again = resume && exists(chk);
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
        int st = cli_sample_model(&mj, l, &spec, dirs[k], again, 0, CLI_TABLE, label);
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
    const char *labels[MAX_MODELS] = {0};
    status = write_report(dir, name, dirs, nm, labels, s);
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
    if (prepared && status != CLI_OK && status != CLI_UNCONVERGED)
        lt_outdir_abandon(dir);
    /* the way back, if there is one: a run stopped before it wrote
     * anything leaves no folder */
    if (hint && exists(dir))
        fprintf(stderr, "lantern: continue with 'lantern run %s --resume %s'\n", argv[1], dir);
    else if (hint)
        fputs("lantern: nothing was saved; run it again\n", stderr);
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
    static char dirs[MAX_MODELS][4200];
    static char label_text[MAX_MODELS][300];
    char first_name[256] = "";
    const char *labels[MAX_MODELS];
    size_t n = 0;
    lt_error err;
    lt_error_clear(&err);
    lt_survey *s = NULL;
    int prepared = 0;
    int status = CLI_OK;
    for (size_t r = 0; r < nr; r++) {
        char path[4200], *text = NULL;
        size_t size;
        snprintf(path, sizeof path, "%s/summary.json", runs[r]);
        if (lt_file_read(path, (size_t)64 << 20, &text, &size, &err)) {
            status = cli_report(&err);
            goto done;
        }
        cJSON *j = cJSON_Parse(text);
        free(text);
        const cJSON *models = j ? cJSON_GetObjectItemCaseSensitive(j, "models") : NULL;
        const cJSON *rname = j ? cJSON_GetObjectItemCaseSensitive(j, "name") : NULL;
        if (!cJSON_IsArray(models)) {
            cJSON_Delete(j);
            status = cli_usage_error(path, "not the summary of a lantern run (no models list)");
            goto done;
        }
        size_t n_before = n;
        if (r == 0)
            snprintf(first_name, sizeof first_name, "%s",
                     cJSON_IsString(rname) ? rname->valuestring : runs[0]);
        const cJSON *m;
        cJSON_ArrayForEach(m, models)
        {
            const cJSON *folder = cJSON_GetObjectItemCaseSensitive(m, "folder");
            if (!cJSON_IsString(folder) || n == MAX_MODELS)
                continue;
            snprintf(dirs[n], sizeof dirs[n], "%s/%s", runs[r], folder->valuestring);
            snprintf(label_text[n], sizeof label_text[n], "%s: %s",
                     cJSON_IsString(rname) ? rname->valuestring : runs[r], folder->valuestring);
            labels[n] = nr > 1 ? label_text[n] : NULL;
            /* the data of the first model of the first run, for the Hubble diagram */
            const cJSON *data = cJSON_GetObjectItemCaseSensitive(m, "data");
            const cJSON *dfile = cJSON_GetObjectItemCaseSensitive(data, "file");
            if (!s && cJSON_IsString(dfile) && dfile->valuestring[0]) {
                lt_survey_spec spec;
                lt_survey_spec_init(&spec);
                const cJSON *f = cJSON_GetObjectItemCaseSensitive(data, "file");
                const cJSON *c = cJSON_GetObjectItemCaseSensitive(data, "columns");
                const cJSON *cov = cJSON_GetObjectItemCaseSensitive(data, "cov");
                const cJSON *modes = cJSON_GetObjectItemCaseSensitive(data, "modes");
                spec.data = cJSON_IsString(f) ? f->valuestring : NULL;
                spec.columns = cJSON_IsString(c) ? c->valuestring : NULL;
                const cJSON *e;
                cJSON_ArrayForEach(e, cov) if (cJSON_IsString(e) && spec.ncov < LT_SURVEY_MAX_COV)
                    spec.cov[spec.ncov++] = e->valuestring;
                spec.modes = cJSON_IsString(modes) ? modes->valuestring : NULL;
                if (!(s = lt_survey_read(&spec, &err))) {
                    cJSON_Delete(j);
                    status = cli_report(&err);
                    goto done;
                }
            }
            n++;
        }
        cJSON_Delete(j);
        if (n == n_before) {
            /* a campaign or forecast summary also has "models", as names */
            status = cli_usage_error(path, "not the summary of a lantern run (no model folders)");
            goto done;
        }
    }
    const char *dir = out ? out : runs[0];
    if (out && lt_outdir_prepare(out, force, &err)) {
        status = cli_report(&err);
        goto done;
    }
    prepared = out != NULL;
    status = write_report(dir, out ? "joint report" : first_name, dirs, n, labels, s);
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
    lt_survey_free(s);
    return status;
}
