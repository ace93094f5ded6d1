/*
 * lantern campaign: every task of a campaign file (data sets x models x
 * methods), one record per task in OUT/tasks/, then summary.json with bias
 * and coverage, bias.csv and figures of pulls and coverage.
 */
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "campaign.h"

/* A failure injected for the tests of the retry (LANTERN_TEST_FAIL_ONCE=I,J,...):
 * tasks I, J fail on their first attempt, as a machine that drops out would. */
static int injected_failure(size_t index, int attempt)
{
    const char *v = getenv("LANTERN_TEST_FAIL_ONCE");
    if (!v || attempt > 1)
        return 0;
    /* parsed in place: strtok would keep hidden state between calls */
    for (const char *p = v; p; p = strchr(p, ',') ? strchr(p, ',') + 1 : NULL) {
        char *end;
        if (strtoul(p, &end, 10) == index && end != p)
            return 1;
    }
    return 0;
}

char *cli_campaign_task(cli_campaign_state *cc, size_t index, int attempt, int rank, int *code)
{
    lt_error werr;
    char *text = lt_campaign_run_task(&cc->run, index, attempt, rank,
                                      injected_failure(index, attempt), code, &werr);
    if (werr.code) /* the record still reaches rank 0, which keeps it in the summary */
        cli_report(&werr);
    return text;
}

int cli_campaign_finished(cli_campaign_state *cc, size_t index, int code, const char *text)
{
    lt_campaign_progress p;
    lt_campaign_run_finished(&cc->run, index, code, text, &p);
    if (p.ok && !cc->quiet)
        fprintf(stderr, "campaign: %zu/%zu %s: ok, %.1f s (rank %d)\n", cc->run.finished_now,
                cc->run.to_run, p.label, p.seconds, p.rank);
    if (!p.ok)
        fprintf(stderr, "lantern: campaign task %zu (%s) failed: %s%s\n", index, p.label, p.error,
                p.again ? "; retrying it" : "");
    return p.again;
}

/* ---- the plain runner: one task after another, here ---- */

static int local_run(cli_campaign_state *cc)
{
    long i;
    while (!*cc->run.stop && (i = lt_campaign_queue_take(&cc->run.q)) >= 0) {
        int code;
        char *text = cli_campaign_task(cc, (size_t)i, cc->run.q.attempts[i], 0, &code);
        if (code == LT_EINTR) {
            free(text);
            return LT_EINTR;
        }
        cli_campaign_finished(cc, (size_t)i, code, text);
        free(text);
    }
    return *cc->run.stop ? LT_EINTR : LT_OK;
}

static int local_agree(int ok) { return ok; }

static const cli_campaign_runner local_runner = {"local", local_run, local_agree};

int cli_campaign(int argc, char **argv) { return cli_campaign_main(argc, argv, &local_runner, 1); }

/* The summary, its table and figures; returns the exit status. */
static int finish(cli_campaign_state *cc, cli_format format, int interrupted)
{
    const lt_campaign_run *run = &cc->run;
    if (interrupted) {
        /* the task records are the state: no summary of a part */
        fprintf(stderr, "lantern: interrupted; %s/tasks holds every finished task: continue with "
                        "'lantern campaign %s --resume %s'\n",
                run->out, cc->c.path, run->out);
        return CLI_FAILED;
    }
    lt_error err;
    lt_campaign_result *res = lt_campaign_result_alloc(&cc->c, run->results, &err);
    if (!res)
        return cli_report(&err);
    cJSON *summary = lt_campaign_result_json(res, &cc->c, run->results);
    int status = CLI_OK;
    if (lt_campaign_out_finish(run, res, summary, &err))
        status = cli_report(&err);
    else if (format == CLI_JSON) {
        cli_print_json(summary, 0);
    } else
        lt_campaign_result_print(stdout, res);
    if (status == CLI_OK && res->failed > 0) {
        fprintf(stderr, "lantern: %zu task%s failed twice; their records in %s/tasks say why; "
                        "'lantern campaign %s --resume %s' runs them again\n",
                res->failed, res->failed == 1 ? "" : "s", run->out, cc->c.path, run->out);
        status = CLI_FAILED;
    } else if (status == CLI_OK && res->unconverged > 0) {
        fprintf(stderr, "lantern: %zu task%s did not converge within the step budget\n",
                res->unconverged, res->unconverged == 1 ? "" : "s");
        status = CLI_UNCONVERGED;
    }
    cJSON_Delete(summary);
    lt_campaign_result_free(res);
    return status;
}

int cli_campaign_main(int argc, char **argv, const cli_campaign_runner *runner, int is_root)
{
    const char *file = NULL, *out = NULL, *resume = NULL, *fmt = "table", *threads_text = NULL;
    int force = 0, quiet = 0;
    long threads = 0;
    const cli_opt opts[] = {{"--out", .text = &out},         {"--resume", .text = &resume},
                            {"--format", .text = &fmt},      {"--threads", .text = &threads_text},
                            {"--force", .flag = &force},     {"--quiet", .flag = &quiet},
                            {"", .text = &file},             {0}};
    int status = cli_options(argc, argv, 1, "campaign", opts, NULL, 0, NULL);
    if (status)
        return status;
    if (threads_text && lt_parse_long(threads_text, 0, 1024, &threads))
        return cli_usage_error("--threads", "'%s' is not a number from 0 to 1024", threads_text);
    cli_format format;
    if (cli_parse_format(fmt, 1u << CLI_TABLE | 1u << CLI_JSON, &format))
        return CLI_USAGE;
    if (resume && out)
        return cli_usage_error("campaign", "give --out DIR for a new campaign or --resume DIR "
                                           "to continue one, not both");
    if (!resume && !out) {
        if (is_root)
            fputs(cli_help_campaign, stderr);
        return CLI_USAGE;
    }
    char *stored = NULL;
    lt_error err;
    lt_error_clear(&err);
    if (resume && lt_campaign_manifest_file(resume, file, &stored, &err))
        return is_root ? cli_report(&err) : cli_status(err.code);
    if (stored)
        file = stored;
    if (!file)
        return cli_usage_error("campaign", "give the campaign file");

    cli_campaign_state cc;
    memset(&cc, 0, sizeof cc);
    cc.quiet = quiet;
    int ok = lt_campaign_read(file, &cc.c, &err) == LT_OK;
    free(stored);
    if (!ok && is_root)
        status = cli_report(&err);
    if (!runner->agree(ok))
        return ok ? CLI_FAILED : status ? status : CLI_USAGE;
    ok = lt_campaign_run_init(&cc.run, &cc.c, resume ? resume : out, (int)threads,
                              cli_catch_signals(), &err) == LT_OK;
    /* rank 0 keeps the folder; the others only run tasks */
    if (ok && is_root)
        ok = (resume ? lt_campaign_out_resume(&cc.run, &err)
                     : lt_campaign_out_create(&cc.run, force, &err)) == LT_OK;
    if (!ok && is_root)
        status = cli_report(&err);
    if (!runner->agree(ok)) {
        status = status ? status : CLI_FAILED;
        goto done;
    }
    if (is_root && !quiet)
        fprintf(stderr, "campaign %s: %zu tasks (data sets %zu, models %zu, methods %zu), %zu to "
                        "run (%s)\n",
                cc.c.name, cc.c.ntasks, cc.c.ndata, cc.c.nmodels, cc.c.nmethods, cc.run.to_run,
                runner->name);
    int rc = runner->run(&cc);
    if (is_root)
        status = finish(&cc, format, rc == LT_EINTR);
done:
    lt_campaign_run_free(&cc.run);
    lt_campaign_free(&cc.c);
    return status;
}
