/*
 * lantern campaign: every task of a campaign file (data sets x models x
 * methods), one record per task in OUT/tasks/, then summary.json with bias
 * and coverage, bias.csv and figures of pulls and coverage.
 */
#include <dirent.h>
#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include "campaign.h"

static void usage(FILE *f)
{
    fputs(cli_help_campaign, f);
}

static double seconds_since(const struct timespec *t0)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)(t.tv_sec - t0->tv_sec) + 1e-9 * (double)(t.tv_nsec - t0->tv_nsec);
}

static void task_path(const cli_campaign_state *cc, size_t index, char *buf, size_t size)
{
    snprintf(buf, size, "%s/tasks/%06zu.json", cc->out, index);
}

/* A failure injected for the tests of the retry (LANTERN_TEST_FAIL_ONCE=I,J,...):
 * tasks I, J fail on their first attempt, as a machine that drops out would. */
static int injected_failure(size_t index, int attempt)
{
    const char *v = getenv("LANTERN_TEST_FAIL_ONCE");
    if (!v || attempt > 1)
        return 0;
    char buf[256];
    snprintf(buf, sizeof buf, "%s", v);
    for (char *t = strtok(buf, ","); t; t = strtok(NULL, ","))
        if (strtoul(t, NULL, 10) == index)
            return 1;
    return 0;
}

char *cli_campaign_task(cli_campaign_state *cc, size_t index, int attempt, int rank, int *code)
{
    struct timespec t0;
    clock_gettime(CLOCK_MONOTONIC, &t0);
    lt_error err;
    lt_error_clear(&err);
    cJSON *rec = NULL;
    if (injected_failure(index, attempt))
        *code = lt_error_set(&err, LT_EIO, NULL, 0,
                             "failure injected by LANTERN_TEST_FAIL_ONCE (a test of the retry)");
    else
        *code = lt_campaign_task_run(&cc->c, index, cc->threads, cc->stop, &rec, &err);
    if (*code == LT_EINTR)
        return NULL;
    if (*code)
        rec = lt_campaign_task_failed(&cc->c, index, &err);
    char host[256] = "";
    gethostname(host, sizeof host - 1);
    cJSON *where = cJSON_AddObjectToObject(rec, "where");
    cJSON_AddNumberToObject(where, "rank", rank);
    cJSON_AddStringToObject(where, "host", host);
    cJSON_AddNumberToObject(where, "attempt", attempt);
    cJSON_AddNumberToObject(where, "seconds", round(seconds_since(&t0) * 1000) / 1000);
    char path[4200];
    task_path(cc, index, path, sizeof path);
    lt_error werr;
    if (lt_report_write_json(path, rec, &werr)) {
        /* the record still reaches rank 0, which keeps it in the summary */
        char msg[600];
        lt_error_format(&werr, msg, sizeof msg);
        fprintf(stderr, "lantern: %s\n", msg);
    }
    char *text = cJSON_PrintUnformatted(rec);
    cJSON_Delete(rec);
    return text;
}

int cli_campaign_finished(cli_campaign_state *cc, size_t index, int code, const char *text)
{
    cJSON *rec = text ? cJSON_Parse(text) : NULL;
    int ok = code == LT_OK && rec;
    int again = lt_campaign_queue_done(&cc->q, index, ok);
    char label[512];
    lt_campaign_task_label(&cc->c, index, label, sizeof label);
    const cJSON *where = cJSON_GetObjectItemCaseSensitive(rec, "where");
    double secs = cJSON_GetNumberValue(cJSON_GetObjectItemCaseSensitive(where, "seconds"));
    int rank = (int)cJSON_GetNumberValue(cJSON_GetObjectItemCaseSensitive(where, "rank"));
    if (!again) {
        cJSON_Delete(cc->results[index]);
        cc->results[index] = rec;
        cc->finished_now++;
    }
    if (ok && !cc->quiet)
        fprintf(stderr, "campaign: %zu/%zu %s: ok, %.1f s (rank %d)\n", cc->finished_now,
                cc->to_run, label, secs, rank);
    if (!ok) {
        const cJSON *e = cJSON_GetObjectItemCaseSensitive(rec, "error");
        fprintf(stderr, "lantern: campaign task %zu (%s) failed: %s%s\n", index, label,
                cJSON_IsString(e) ? e->valuestring : "no record", again ? "; retrying it" : "");
    }
    if (again)
        cJSON_Delete(rec);
    return again;
}

/* ---- the plain runner: one task after another, here ---- */

static int local_run(cli_campaign_state *cc)
{
    long i;
    while (!*cc->stop && (i = lt_campaign_queue_take(&cc->q)) >= 0) {
        int code;
        char *text = cli_campaign_task(cc, (size_t)i, cc->q.attempts[i], 0, &code);
        if (code == LT_EINTR) {
            free(text);
            return LT_EINTR;
        }
        cli_campaign_finished(cc, (size_t)i, code, text);
        free(text);
    }
    return *cc->stop ? LT_EINTR : LT_OK;
}

static int local_agree(int ok) { return ok; }

static const cli_campaign_runner local_runner = {"local", local_run, local_agree};

int cli_campaign(int argc, char **argv) { return cli_campaign_main(argc, argv, &local_runner, 1); }

/* ---- setting up the folder and finishing ---- */

/* Remove the task records of an earlier campaign in dir (--force). */
static void clear_tasks(const char *dir)
{
    char path[4200];
    snprintf(path, sizeof path, "%s/tasks", dir);
    DIR *d = opendir(path);
    if (!d)
        return;
    struct dirent *e;
    while ((e = readdir(d))) {
        size_t n = strlen(e->d_name);
        if (n > 5 && !strcmp(e->d_name + n - 5, ".json")) {
            char f[4500];
            snprintf(f, sizeof f, "%s/%s", path, e->d_name);
            remove(f);
        }
    }
    closedir(d);
}

/* The campaign's identity in DIR/campaign.json, checked on resume. */
static int write_manifest(const cli_campaign_state *cc, lt_error *err)
{
    cJSON *o = cJSON_CreateObject();
    char digest[32];
    snprintf(digest, sizeof digest, "%016llx", (unsigned long long)cc->c.digest);
    cJSON_AddStringToObject(o, "campaign", cc->c.name);
    cJSON_AddStringToObject(o, "file", cc->c.path);
    cJSON_AddStringToObject(o, "digest", digest);
    cJSON_AddNumberToObject(o, "tasks", (double)cc->c.ntasks);
    char path[4200];
    snprintf(path, sizeof path, "%s/campaign.json", cc->out);
    int rc = lt_report_write_json(path, o, err);
    cJSON_Delete(o);
    return rc;
}

static cJSON *read_json(const char *path)
{
    char *text = NULL;
    size_t size;
    lt_error e;
    if (lt_file_read(path, 64u << 20, &text, &size, &e))
        return NULL;
    cJSON *o = cJSON_Parse(text);
    free(text);
    return o;
}

/* The manifest of DIR: its campaign file (for a resume without one) and
 * whether its digest is that of c. */
static int check_manifest(const char *dir, const char *campaign_file, char *file, size_t size)
{
    char path[4200];
    snprintf(path, sizeof path, "%s/campaign.json", dir);
    cJSON *o = read_json(path);
    if (!o)
        return cli_usage_error(dir, "no campaign to resume here (campaign.json is missing or "
                                    "unreadable)");
    const cJSON *f = cJSON_GetObjectItemCaseSensitive(o, "file");
    snprintf(file, size, "%s", cJSON_IsString(f) ? f->valuestring : "");
    if (!campaign_file && !file[0]) {
        cJSON_Delete(o);
        return cli_usage_error(path, "names no campaign file; give it");
    }
    cJSON_Delete(o);
    return CLI_OK;
}

static int digest_matches(const char *dir, uint64_t digest)
{
    char path[4200], want[32];
    snprintf(path, sizeof path, "%s/campaign.json", dir);
    snprintf(want, sizeof want, "%016llx", (unsigned long long)digest);
    cJSON *o = read_json(path);
    const cJSON *d = cJSON_GetObjectItemCaseSensitive(o, "digest");
    int same = cJSON_IsString(d) && !strcmp(d->valuestring, want);
    cJSON_Delete(o);
    return same;
}

/* On resume: the records of tasks that finished well are kept. */
static void load_finished(cli_campaign_state *cc)
{
    for (size_t i = 0; i < cc->c.ntasks; i++) {
        char path[4200];
        task_path(cc, i, path, sizeof path);
        cJSON *o = read_json(path);
        const cJSON *st = cJSON_GetObjectItemCaseSensitive(o, "status");
        const cJSON *t = cJSON_GetObjectItemCaseSensitive(o, "task");
        if (cJSON_IsString(st) && !strcmp(st->valuestring, "ok") && cJSON_IsNumber(t) &&
            (size_t)t->valuedouble == i) {
            cc->results[i] = o;
            lt_campaign_queue_skip(&cc->q, i);
        } else
            cJSON_Delete(o);
    }
}

static void print_table(FILE *f, const cJSON *summary)
{
    fprintf(f, "campaign %s: %d tasks, %d done, %d failed, %d not run, %d unconverged\n",
            cJSON_GetObjectItemCaseSensitive(summary, "campaign")->valuestring,
            (int)cJSON_GetNumberValue(cJSON_GetObjectItemCaseSensitive(summary, "tasks")),
            (int)cJSON_GetNumberValue(cJSON_GetObjectItemCaseSensitive(summary, "done")),
            (int)cJSON_GetNumberValue(cJSON_GetObjectItemCaseSensitive(summary, "failed")),
            (int)cJSON_GetNumberValue(cJSON_GetObjectItemCaseSensitive(summary, "not_run")),
            (int)cJSON_GetNumberValue(cJSON_GetObjectItemCaseSensitive(summary, "unconverged")));
    const cJSON *g;
    cJSON_ArrayForEach(g, cJSON_GetObjectItemCaseSensitive(summary, "bias"))
    {
#define V(o, k) cJSON_GetNumberValue(cJSON_GetObjectItemCaseSensitive(o, k))
        fprintf(f, "\n%s / %s / %s: %d of %d realizations used, %d dropped",
                cJSON_GetObjectItemCaseSensitive(g, "dataset")->valuestring,
                cJSON_GetObjectItemCaseSensitive(g, "model")->valuestring,
                cJSON_GetObjectItemCaseSensitive(g, "method")->valuestring, (int)V(g, "used"),
                (int)V(g, "realizations"), (int)V(g, "dropped"));
        if (V(g, "dropped") > 0)
            fprintf(f, " (%d without errors, %d failed; summary.json lists them)",
                    (int)V(g, "dropped_no_errors"), (int)V(g, "dropped_failed"));
        fputc('\n', f);
        /* the headers name the probability each coverage is tested against */
        const cJSON *p = cJSON_GetObjectItemCaseSensitive(g, "params")->child;
        char h68[32] = "", h95[32] = "";
        if (p) {
            snprintf(h68, sizeof h68, "cover %.4g%% (p)",
                     100 * V(cJSON_GetObjectItemCaseSensitive(p, "coverage68"), "nominal"));
            snprintf(h95, sizeof h95, "cover %.4g%% (p)",
                     100 * V(cJSON_GetObjectItemCaseSensitive(p, "coverage95"), "nominal"));
        }
        fprintf(f, "  %-9s %9s %21s %15s %15s %17s %17s\n", "parameter", "truth", "bias",
                "pull mean", "pull width", h68, h95);
        cJSON_ArrayForEach(p, cJSON_GetObjectItemCaseSensitive(g, "params"))
        {
            const cJSON *c68 = cJSON_GetObjectItemCaseSensitive(p, "coverage68");
            const cJSON *c95 = cJSON_GetObjectItemCaseSensitive(p, "coverage95");
            fprintf(f, "  %-9s %9.4g %10.3g +- %7.2g %6.3f +- %5.3f %6.3f +- %5.3f %6.3f (%6.2g) "
                       "%6.3f (%6.2g)\n",
                    p->string, V(p, "truth"), V(p, "bias_mean"), V(p, "bias_err"),
                    V(p, "pull_mean"), V(p, "pull_mean_err"), V(p, "pull_width"),
                    V(p, "pull_width_err"), V(c68, "fraction"), V(c68, "p_value"),
                    V(c95, "fraction"), V(c95, "p_value"));
        }
#undef V
    }
    /* Data sets without a truth (survey files) have no bias to show: their
     * estimates are listed instead, one line per task; then every failure. */
    const cJSON *r;
    int header = 0;
    cJSON_ArrayForEach(r, cJSON_GetObjectItemCaseSensitive(summary, "results"))
    {
        const cJSON *kind = cJSON_GetObjectItemCaseSensitive(r, "kind");
        const cJSON *st = cJSON_GetObjectItemCaseSensitive(r, "status");
        if (!cJSON_IsString(kind) || strcmp(kind->valuestring, "file") || !cJSON_IsString(st) ||
            strcmp(st->valuestring, "ok"))
            continue;
        if (!header++)
            fprintf(f, "\nsurvey files (estimate +- sd; posterior mean for sample and nested):\n");
        fprintf(f, "  %-36s chi2_min %9.2f / %-5d",
                cJSON_GetObjectItemCaseSensitive(r, "label")->valuestring,
                cJSON_GetNumberValue(cJSON_GetObjectItemCaseSensitive(r, "chi2_min")),
                (int)cJSON_GetNumberValue(cJSON_GetObjectItemCaseSensitive(r, "dof")));
        const cJSON *p;
        cJSON_ArrayForEach(p, cJSON_GetObjectItemCaseSensitive(r, "params"))
        {
            fprintf(f, "  %s = %.4g +- %.2g", p->string,
                    cJSON_GetNumberValue(cJSON_GetObjectItemCaseSensitive(p, "estimate")),
                    cJSON_GetNumberValue(cJSON_GetObjectItemCaseSensitive(p, "sd")));
        }
        fputc('\n', f);
    }
    header = 0;
    cJSON_ArrayForEach(r, cJSON_GetObjectItemCaseSensitive(summary, "results"))
    {
        const cJSON *st = cJSON_GetObjectItemCaseSensitive(r, "status");
        if (!cJSON_IsString(st) || strcmp(st->valuestring, "failed"))
            continue;
        if (!header++)
            fprintf(f, "\nfailed tasks (tried twice):\n");
        const cJSON *e = cJSON_GetObjectItemCaseSensitive(r, "error");
        fprintf(f, "  %s: %s\n", cJSON_GetObjectItemCaseSensitive(r, "label")->valuestring,
                cJSON_IsString(e) ? e->valuestring : "(no message)");
    }
}

/* bias.csv: one row per group and parameter. */
static int write_bias_csv(const char *dir, const cJSON *summary, lt_error *err)
{
    size_t cap = 1 << 16, len = 0;
    char *s = malloc(cap);
    if (!s)
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    len += (size_t)snprintf(s, cap,
                            "dataset,model,method,parameter,truth,n,bias_mean,bias_err,pull_mean,"
                            "pull_mean_err,pull_width,pull_width_err,coverage68,coverage68_err,"
                            "coverage68_p,coverage95,coverage95_err,coverage95_p,coverage68_nominal,"
                            "coverage95_nominal,dropped\n");
    const cJSON *g, *p;
    cJSON_ArrayForEach(g, cJSON_GetObjectItemCaseSensitive(summary, "bias"))
    {
        cJSON_ArrayForEach(p, cJSON_GetObjectItemCaseSensitive(g, "params"))
        {
            const cJSON *c68 = cJSON_GetObjectItemCaseSensitive(p, "coverage68");
            const cJSON *c95 = cJSON_GetObjectItemCaseSensitive(p, "coverage95");
            const cJSON *vals[] = {
                cJSON_GetObjectItemCaseSensitive(p, "truth"),
                cJSON_GetObjectItemCaseSensitive(p, "n"),
                cJSON_GetObjectItemCaseSensitive(p, "bias_mean"),
                cJSON_GetObjectItemCaseSensitive(p, "bias_err"),
                cJSON_GetObjectItemCaseSensitive(p, "pull_mean"),
                cJSON_GetObjectItemCaseSensitive(p, "pull_mean_err"),
                cJSON_GetObjectItemCaseSensitive(p, "pull_width"),
                cJSON_GetObjectItemCaseSensitive(p, "pull_width_err"),
                cJSON_GetObjectItemCaseSensitive(c68, "fraction"),
                cJSON_GetObjectItemCaseSensitive(c68, "err"),
                cJSON_GetObjectItemCaseSensitive(c68, "p_value"),
                cJSON_GetObjectItemCaseSensitive(c95, "fraction"),
                cJSON_GetObjectItemCaseSensitive(c95, "err"),
                cJSON_GetObjectItemCaseSensitive(c95, "p_value"),
                cJSON_GetObjectItemCaseSensitive(c68, "nominal"),
                cJSON_GetObjectItemCaseSensitive(c95, "nominal"),
                cJSON_GetObjectItemCaseSensitive(g, "dropped")};
            if (cap - len < 1024) {
                char *t = realloc(s, cap *= 2);
                if (!t) {
                    free(s);
                    return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
                }
                s = t;
            }
            len += (size_t)snprintf(s + len, cap - len, "%s,%s,%s,%s",
                                    cJSON_GetObjectItemCaseSensitive(g, "dataset")->valuestring,
                                    cJSON_GetObjectItemCaseSensitive(g, "model")->valuestring,
                                    cJSON_GetObjectItemCaseSensitive(g, "method")->valuestring,
                                    p->string);
            for (size_t k = 0; k < sizeof vals / sizeof vals[0]; k++) {
                char b[32] = "";
                if (cJSON_IsNumber(vals[k]))
                    lt_format_double(vals[k]->valuedouble, b, sizeof b);
                len += (size_t)snprintf(s + len, cap - len, ",%s", b);
            }
            len += (size_t)snprintf(s + len, cap - len, "\n");
        }
    }
    char path[4200];
    snprintf(path, sizeof path, "%s/bias.csv", dir);
    int rc = lt_file_write_text(path, s, err);
    free(s);
    return rc;
}

/* bias_<dataset>_<model>_<method>.{png,pdf} for each group of the summary. */
static int write_figures(const char *dir, const cJSON *summary, lt_error *err)
{
    const cJSON *g;
    cJSON_ArrayForEach(g, cJSON_GetObjectItemCaseSensitive(summary, "bias"))
    {
        lt_bias_panel panels[LT_MAX_FREE];
        double *pulls[LT_MAX_FREE];
        size_t np = 0;
        const cJSON *p;
        cJSON_ArrayForEach(p, cJSON_GetObjectItemCaseSensitive(g, "params"))
        {
            if (np == LT_MAX_FREE)
                break;
            const cJSON *pl = cJSON_GetObjectItemCaseSensitive(p, "pulls"), *x;
            const cJSON *c68 = cJSON_GetObjectItemCaseSensitive(p, "coverage68");
            const cJSON *c95 = cJSON_GetObjectItemCaseSensitive(p, "coverage95");
            size_t n = (size_t)cJSON_GetArraySize(pl), i = 0;
            pulls[np] = malloc((n + 1) * sizeof(double));
            if (!pulls[np])
                break;
            cJSON_ArrayForEach(x, pl) pulls[np][i++] = cJSON_IsNumber(x) ? x->valuedouble : NAN;
#define V(o, k) cJSON_GetNumberValue(cJSON_GetObjectItemCaseSensitive(o, k))
            panels[np] = (lt_bias_panel){p->string,          n,
                                         pulls[np],          V(p, "pull_mean"),
                                         V(p, "pull_width"), V(c68, "fraction"),
                                         V(c68, "err"),      V(c95, "fraction"),
                                         V(c95, "err"),      V(c68, "nominal"),
                                         V(c95, "nominal")};
#undef V
            np++;
        }
        const char *ds = cJSON_GetObjectItemCaseSensitive(g, "dataset")->valuestring;
        const char *mo = cJSON_GetObjectItemCaseSensitive(g, "model")->valuestring;
        const char *me = cJSON_GetObjectItemCaseSensitive(g, "method")->valuestring;
        char name[600], title[700];
        snprintf(name, sizeof name, "bias_%s_%s_%s", ds, mo, me);
        int used = (int)cJSON_GetNumberValue(cJSON_GetObjectItemCaseSensitive(g, "used"));
        int dropped = (int)cJSON_GetNumberValue(cJSON_GetObjectItemCaseSensitive(g, "dropped"));
        if (dropped > 0)
            snprintf(title, sizeof title, "%s, %s by %s: %d realizations (%d dropped)", ds, mo,
                     me, used, dropped);
        else
            snprintf(title, sizeof title, "%s, %s by %s: %d realizations", ds, mo, me, used);
        int rc = lt_report_write_bias_figure(dir, name, title, panels, np, err);
        for (size_t k = 0; k < np; k++)
            free(pulls[k]);
        if (rc)
            return rc;
    }
    return LT_OK;
}

/* The summary, its table and figures; returns the exit status. */
static int finish(cli_campaign_state *cc, cli_format format, int interrupted)
{
    lt_error err;
    lt_error_clear(&err);
    /* the summary's numbers are raw text (exact digits); read it back for
     * the table, bias.csv and figures */
    cJSON *raw = lt_campaign_summary(&cc->c, cc->results);
    char *text = cJSON_PrintUnformatted(raw);
    cJSON *summary = text ? cJSON_Parse(text) : NULL;
    free(text);
    if (!summary) {
        cJSON_Delete(raw);
        return cli_usage_error("campaign", "out of memory for the summary");
    }
    char path[4200];
    snprintf(path, sizeof path, "%s/summary.json", cc->out);
    int status = CLI_OK;
    if (interrupted) {
        /* the task records are the state: no summary of a part */
        fprintf(stderr, "lantern: interrupted; %s/tasks holds every finished task: continue with "
                        "'lantern campaign %s --resume %s'\n",
                cc->out, cc->c.path, cc->out);
        cJSON_Delete(summary);
        cJSON_Delete(raw);
        return CLI_FAILED;
    }
    if (lt_report_write_json(path, raw, &err) || write_bias_csv(cc->out, summary, &err) ||
        write_figures(cc->out, summary, &err)) {
        cJSON_Delete(summary);
        cJSON_Delete(raw);
        return cli_report(&err);
    }
    char what[128];
    snprintf(what, sizeof what, "lantern %s campaign", LT_VERSION);
    if (lt_outdir_finish(cc->out, what, &err)) {
        cJSON_Delete(summary);
        cJSON_Delete(raw);
        return cli_report(&err);
    }
    if (format == CLI_JSON) {
        char *pretty = cJSON_Print(raw);
        if (pretty)
            puts(pretty);
        free(pretty);
    } else
        print_table(stdout, summary);
    double failed = cJSON_GetNumberValue(cJSON_GetObjectItemCaseSensitive(summary, "failed"));
    double unconv = cJSON_GetNumberValue(cJSON_GetObjectItemCaseSensitive(summary, "unconverged"));
    if (failed > 0) {
        fprintf(stderr, "lantern: %g task%s failed twice; their records in %s/tasks say why; "
                        "'lantern campaign %s --resume %s' runs them again\n",
                failed, failed == 1 ? "" : "s", cc->out, cc->c.path, cc->out);
        status = CLI_FAILED;
    } else if (unconv > 0) {
        fprintf(stderr, "lantern: %g task%s did not converge within the step budget\n", unconv,
                unconv == 1 ? "" : "s");
        status = CLI_UNCONVERGED;
    }
    cJSON_Delete(summary);
    cJSON_Delete(raw);
    return status;
}

int cli_campaign_main(int argc, char **argv, const cli_campaign_runner *runner, int is_root)
{
    const char *file = NULL, *out = NULL, *resume = NULL, *fmt = "table";
    int force = 0, quiet = 0;
    long threads = 0;
    cli_args a = cli_args_start(argc, argv, 1);
    while (cli_args_more(&a)) {
        const char *v;
        if (cli_flag(&a, "--help")) {
            if (is_root)
                usage(stdout);
            return CLI_OK;
        } else if (cli_take(&a, "--out", &v))
            out = v;
        else if (cli_take(&a, "--resume", &v))
            resume = v;
        else if (cli_take(&a, "--format", &v))
            fmt = v;
        else if (cli_take(&a, "--threads", &v)) {
            if (lt_parse_long(v, 0, 1024, &threads))
                return cli_usage_error("--threads", "'%s' is not a number from 0 to 1024", v);
        } else if (cli_flag(&a, "--force"))
            force = 1;
        else if (cli_flag(&a, "--quiet"))
            quiet = 1;
        else if (!file && (v = cli_positional(&a)))
            file = v;
        else
            return cli_args_unknown(&a, "campaign");
    }
    if (a.failed)
        return CLI_USAGE;
    cli_format format;
    if (cli_parse_format(fmt, 1u << CLI_TABLE | 1u << CLI_JSON, &format))
        return CLI_USAGE;
    if (resume && out)
        return cli_usage_error("campaign", "give --out DIR for a new campaign or --resume DIR "
                                           "to continue one, not both");
    if (!resume && !out) {
        if (is_root)
            usage(stderr);
        return CLI_USAGE;
    }
    char stored[4200] = "";
    if (resume) {
        int st = check_manifest(resume, file, stored, sizeof stored);
        if (st)
            return st;
        if (!file)
            file = stored;
    }
    if (!file)
        return cli_usage_error("campaign", "give the campaign file");

    cli_campaign_state cc;
    memset(&cc, 0, sizeof cc);
    cc.out = resume ? resume : out;
    cc.threads = (int)threads;
    cc.quiet = quiet;
    cc.stop = cli_catch_signals();
    lt_error err;
    lt_error_clear(&err);
    int status = CLI_OK;
    int ok = lt_campaign_read(file, &cc.c, &err) == LT_OK;
    if (!ok && is_root)
        status = cli_report(&err);
    if (!runner->agree(ok))
        return ok ? CLI_FAILED : status ? status : CLI_USAGE;
    ok = lt_campaign_queue_init(&cc.q, cc.c.ntasks) == LT_OK &&
         (cc.results = calloc(cc.c.ntasks + 1, sizeof *cc.results));
    if (!ok && is_root)
        status = cli_usage_error("campaign", "out of memory for %zu tasks", cc.c.ntasks);
    if (ok && is_root) {
        char tasks[4200];
        snprintf(tasks, sizeof tasks, "%s/tasks", cc.out);
        if (resume) {
            if (!digest_matches(resume, cc.c.digest)) {
                status = cli_usage_error(resume, "holds a campaign made from another version of "
                                                 "%s (or of its scenarios); start it anew with "
                                                 "--out",
                                         file);
                ok = 0;
            } else
                load_finished(&cc);
        } else if (lt_outdir_prepare(out, force, &err)) {
            status = cli_report(&err);
            ok = 0;
        } else
            clear_tasks(out);
        if (ok && ((mkdir(tasks, 0777) != 0 && errno != EEXIST) || write_manifest(&cc, &err))) {
            status = err.code ? cli_report(&err) : cli_usage_error(tasks, "cannot make the folder");
            ok = 0;
        }
        if (ok) {
            char what[128];
            snprintf(what, sizeof what, "lantern %s campaign (running)", LT_VERSION);
            if (lt_outdir_mark(cc.out, what, &err)) {
                status = cli_report(&err);
                ok = 0;
            }
        }
    }
    if (!runner->agree(ok)) {
        status = status ? status : CLI_FAILED;
        goto done;
    }
    for (size_t i = 0; i < cc.c.ntasks; i++)
        cc.to_run += cc.results[i] == NULL;
    if (is_root && !quiet)
        fprintf(stderr, "campaign %s: %zu tasks (data sets %zu, models %zu, methods %zu), %zu to "
                        "run (%s)\n",
                cc.c.name, cc.c.ntasks, cc.c.ndata, cc.c.nmodels, cc.c.nmethods, cc.to_run,
                runner->name);
    int rc = runner->run(&cc);
    if (is_root)
        status = finish(&cc, format, rc == LT_EINTR);
done:
    for (size_t i = 0; cc.results && i < cc.c.ntasks; i++)
        cJSON_Delete(cc.results[i]);
    free(cc.results);
    lt_campaign_queue_free(&cc.q);
    lt_campaign_free(&cc.c);
    return status;
}
