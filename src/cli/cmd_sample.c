/*
 * lantern sample: the posterior by adaptive Metropolis with parallel chains,
 * convergence checks, chain files and checkpoints; --resume continues a
 * stopped run.
 */
#include <errno.h>
#include <math.h>
#include <signal.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include <cjson/cJSON.h>

#include "cli.h"
#include "lantern/report.h"

static void usage(FILE *f)
{
    fputs(cli_help_sample, f);
}

typedef struct {
    struct timespec start;
    int tty, quiet, verbose;
    double target;
    int printed;
} progress;

static double elapsed(const struct timespec *t0)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)(t.tv_sec - t0->tv_sec) + 1e-9 * (double)(t.tv_nsec - t0->tv_nsec);
}

static void on_check(const lt_progress *d, void *p)
{
    progress *pr = p;
    if (pr->quiet || (!pr->tty && !pr->verbose))
        return;
    double t = elapsed(&pr->start), left = NAN;
    if (d->ess_min > 0 && isfinite(d->ess_min))
        left = t * fmax(0.0, pr->target / d->ess_min - 1.0);
    char eta[32] = "";
    if (isfinite(left) && !d->converged)
        snprintf(eta, sizeof eta, ", about %.0f s left", left);
    fprintf(stderr, "%ssampling: %zu draws per chain, worst R-hat %.4f, smallest ESS %.0f, %.1f s%s%s",
            pr->tty && !pr->verbose ? "\r" : "", d->draws_per_chain, d->rhat_max, d->ess_min, t,
            eta, pr->tty && !pr->verbose ? "   " : "\n");
    pr->printed = 1;
}

/* A refinement of the compression: sampling starts again, so the progress
 * clock does too. */
static void on_note(const char *text, void *p)
{
    progress *pr = p;
    if (pr->printed && pr->tty && !pr->verbose)
        fputc('\n', stderr);
    pr->printed = 0;
    fprintf(stderr, "lantern: %s\n", text);
    clock_gettime(CLOCK_MONOTONIC, &pr->start);
}

/* The posterior r of a finished run (the evidence added where asked):
 * its warnings, the summary printed and written with the chains. */
static int finish(lt_job *j, lt_like *l, lt_posterior *r, cli_format format, const char *out,
                  int print, const char *evidence_label, const lt_run_opts *o)
{
    lt_error err;
    lt_error_clear(&err);
    int off = r->weights != NULL;
    if (off) {
        char text[512];
        lt_report_compression_warning(r, text, sizeof text);
        fprintf(stderr, "lantern: warning: %s\n", text);
        if (r->ess_min_weighted < j->target_ess)
            fprintf(stderr, "lantern: warning: the weighted draws' effective sample size %.0f is "
                            "below --target-ess %g\n", r->ess_min_weighted, j->target_ess);
    }
    for (size_t i = 0; i < r->nparams; i++) {
        char note[256];
        if (lt_post_edge_note(r->cols[r->first_param + i], lt_like_prior(l, i), r->edge_lo[i],
                              r->edge_hi[i], note, sizeof note))
            fprintf(stderr, "lantern: warning: %s: %s\n", lt_like_model(l)->name, note);
    }
    if (evidence_label) {
        if (!j->quiet)
            fprintf(stderr, "%s: evidence by nested sampling\n", evidence_label);
        lt_posterior ev;
        lt_run_opts eo = *o;
        eo.state = "nested.bin", eo.spec = NULL;
        eo.mode = o->mode == LT_RUN_FRESH ? LT_RUN_FRESH : LT_RUN_IF_PRESENT;
        int rc = lt_pipeline_run(lt_method_nested, l, j, &eo, NULL, &ev, &err);
        r->ln_z = ev.ln_z, r->ln_z_err = ev.ln_z_err, r->information = ev.information;
        r->live_points = ev.live_points;
        lt_posterior_free(&ev);
        if (rc == LT_EINTR) {
            fputs("lantern: interrupted during the evidence; the checkpoints are kept\n", stderr);
            return CLI_FAILED;
        }
        if (rc)
            return cli_report(&err);
    }
    cJSON *json = lt_report_sample_json(l, r, &j->data, j->seed);
    if (!print) {
    } else if (format == CLI_JSON) {
        cli_print_json(json, 0);
    } else {
        lt_report_sample_table(stdout, l, r, &j->data);
    }
    int status = CLI_OK;
    if (out) {
        char *path = lt_path_join(out, "summary.json", NULL), what[128];
        snprintf(what, sizeof what, "lantern %s sample", LT_VERSION);
        if (!path)
            status = cli_usage_error("sample", "out of memory");
        else if (lt_report_write_json(path, json, &err) ||
            lt_report_write_chains(out, l, r, &j->data, j->seed, &err) ||
                 lt_outdir_finish(out, what, &err))
            status = cli_report(&err);
        free(path);
    }
    if (!status && !r->converged) {
        fputs("lantern: warning: the chains did not converge within --max-steps; the results "
              "are written and marked \"converged\": false\n",
              stderr);
        /* ESS grows about linearly with the draws once the chains mix: say
         * what cap should reach the target at the rate seen so far. */
        double e = r->diag.ess_min;
        if (isfinite(e) && e > 0.0 && e < j->target_ess)
            fprintf(stderr,
                    "lantern: the smallest ESS is %.0f after %zu draws per chain; at that rate "
                    "--max-steps %.0f should reach %g\n",
                    e, r->steps, ceil(1.1 * (double)r->steps * j->target_ess / e / 1000.0) * 1000.0,
                    j->target_ess);
        status = CLI_UNCONVERGED;
    }
    cJSON_Delete(json);
    return status;
}

int cli_sample_model(lt_job *j, lt_like *l, const lt_like_spec *spec, const char *out,
                     int resume, int print, cli_format format, const char *evidence_label)
{
    int status = CLI_OK, prepared = 0, started = 0;
    lt_error err;
    lt_error_clear(&err);
    lt_posterior post;
    memset(&post, 0, sizeof post);
    char *ckdir = out ? lt_path_join(out, "checkpoint", NULL) : NULL;
    if (out && !ckdir) {
        status = cli_usage_error("sample", "out of memory");
        goto done;
    }
    if (out && !resume) {
        char what[128];
        snprintf(what, sizeof what, "lantern %s sample (running)", LT_VERSION);
        if (lt_outdir_prepare(out, j->force, &err) || (prepared = 1, 0) ||
            lt_outdir_mark(out, what, &err)) {
            status = cli_report(&err);
            goto done;
        }
    }
    /* threads may be set differently on resume: the draws do not depend on it */
    progress pr = {{0, 0}, isatty(2), j->quiet, j->verbose, j->target_ess, 0};
    clock_gettime(CLOCK_MONOTONIC, &pr.start);
    lt_pipeline_hooks hooks = {on_check, on_note, &pr};
    lt_run_opts o = {ckdir, "state.bin", spec, resume ? LT_RUN_RESUME : LT_RUN_FRESH,
                     cli_catch_signals(), &hooks};
    int rc = lt_pipeline_run(lt_method_mcmc, l, j, &o, &started, &post, &err);
    if (pr.printed && pr.tty && !pr.verbose)
        fputc('\n', stderr);
    if (rc == LT_EINTR && !started) {
        fputs("lantern: interrupted during the best fit, before sampling began\n", stderr);
        status = CLI_FAILED;
    } else if (rc == LT_EINTR && out) {
        fprintf(stderr, "lantern: interrupted; the checkpoint in %s/checkpoint holds every "
                        "draw so far: continue with 'lantern sample --resume %s'\n",
                out, out);
        status = CLI_FAILED;
    } else if (rc == LT_EINTR) {
        fputs("lantern: interrupted (no --out folder, so nothing was saved)\n", stderr);
        status = CLI_FAILED;
    } else if (rc) {
        status = cli_report(&err);
    } else {
        status = finish(j, l, &post, format, out, print, evidence_label, &o);
    }
done:
    /* a failure leaves the earlier run (or no folder) behind, a checkpoint
     * to resume from stays */
    if (prepared && status != CLI_OK && status != CLI_UNCONVERGED)
        lt_outdir_abandon(out);
    lt_posterior_free(&post);
    free(ckdir);
    return status;
}

int cli_sample(int argc, char **argv)
{
    lt_job j;
    lt_job_init(&j);
    int status = CLI_OK, first = 1;
    const char *resume = NULL, *format_flag = NULL;
    int quiet = 0, verbose = 0;
    lt_survey *s = NULL;
    lt_like *l = NULL;
    char *settings = NULL;
    if (argc > 1 && strncmp(argv[1], "--", 2) != 0) {
        if ((status = cli_job_load(&j, argv[1], NULL, NULL, 0)))
            goto done;
        first = 2;
    }
    cli_args a = cli_args_start(argc, argv, first);
    while (cli_args_more(&a)) {
        const char *v;
        if (cli_flag(&a, "--help")) {
            usage(stdout);
            goto done;
        }
        if (cli_take(&a, "--resume", &v)) {
            resume = v;
            continue;
        }
        if (cli_take(&a, "--format", &v)) {
            format_flag = v;
            continue;
        }
        if (cli_flag(&a, "--quiet")) {
            quiet = 1;
            continue;
        }
        if (cli_flag(&a, "--verbose")) {
            verbose = 1;
            continue;
        }
        if (resume || !cli_take_job(&a, &j, LT_JOB_DATA | LT_JOB_MODEL | LT_JOB_PARAMS | LT_JOB_FIT | LT_JOB_SAMPLER | LT_JOB_OUTPUT)) {
            status = resume ? cli_usage_error("--resume",
                                              "takes no other options than --format, --quiet "
                                              "and --verbose: the run's settings are in its "
                                              "checkpoint")
                            : cli_args_unknown(&a, "sample");
            goto done;
        }
    }
    if (a.failed) {
        status = CLI_USAGE;
        goto done;
    }
    if (resume) {
        if (first == 2) {
            status = cli_usage_error("--resume", "give the run folder only, not a run file");
            goto done;
        }
        if (!(settings = lt_path_join(resume, "checkpoint/settings.ini", NULL))) {
            status = cli_usage_error("sample", "out of memory");
            goto done;
        }
        struct stat st;
        if (stat(settings, &st) != 0) {
            status = cli_usage_error(resume, "no checkpoint here (checkpoint/settings.ini is "
                                             "missing): not a stopped lantern sample run");
            goto done;
        }
        if ((status = cli_job_load(&j, settings, NULL, NULL, 0)))
            goto done;
        j.out = resume;
    }
    if (format_flag)
        j.format = format_flag;
    j.quiet |= quiet, j.verbose |= verbose;
    cli_format format;
    if ((status = cli_parse_format(j.format, (1u << CLI_TABLE) | (1u << CLI_JSON), &format)))
        goto done;
    lt_like_spec spec;
    if ((status = cli_job_model(&j, &spec)))
        goto done;
    lt_error err;
    lt_error_clear(&err);
    if (lt_job_survey(&j, &s, &err) || !(l = lt_like_alloc(s, &spec, &err))) {
        status = cli_report(&err);
        goto done;
    }
    cli_print_warnings(s);
    status = cli_sample_model(&j, l, &spec, j.out, resume != NULL, 1, format, NULL);
done:
    lt_like_free(l);
    lt_survey_free(s);
    lt_job_free(&j);
    free(settings);
    return status;
}
