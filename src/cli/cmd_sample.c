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

/* FNV-1a over what makes a run what it is: the data as read, the whole
 * covariance, the model, the priors and fixed values (cli_fingerprint_like),
 * then the seed and the sampler settings (not the thread count, which does
 * not change the draws). */
static void fingerprint(const lt_like *l, const cli_job *j,
                        cli_fingerprint *fp)
{
    cli_fingerprint_like(l, fp);
    long settings[] = {(long)j->seed, j->chains, j->warmup, j->check_every, j->max_steps};
    lt_digest_add(&fp->part[CLI_FP_SETTINGS], settings, sizeof settings);
    lt_digest_add(&fp->part[CLI_FP_SETTINGS], &j->target_ess, sizeof j->target_ess);
}

typedef struct {
    struct timespec start;
    int tty, quiet, verbose;
    double target;
    const char *state_path;
    uint64_t fp;
    lt_error err;
    int save_failed;
    int printed;
} progress;

static double elapsed(const struct timespec *t0)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)(t.tv_sec - t0->tv_sec) + 1e-9 * (double)(t.tv_nsec - t0->tv_nsec);
}

static void on_check(const lt_mcmc *m, void *p)
{
    progress *pr = p;
    if (pr->state_path && !pr->save_failed &&
        lt_mcmc_save(m, pr->state_path, pr->fp, &pr->err) != LT_OK)
        pr->save_failed = 1;
    if (pr->quiet || (!pr->tty && !pr->verbose))
        return;
    const lt_mcmc_diag *d = lt_mcmc_diagnostics(m);
    double t = elapsed(&pr->start), left = NAN;
    if (d->ess_min > 0 && isfinite(d->ess_min))
        left = t * fmax(0.0, pr->target / d->ess_min - 1.0);
    char eta[32] = "";
    if (isfinite(left) && !lt_mcmc_converged(m))
        snprintf(eta, sizeof eta, ", about %.0f s left", left);
    fprintf(stderr, "%ssampling: %zu draws per chain, worst R-hat %.4f, smallest ESS %.0f, %.1f s%s%s",
            pr->tty && !pr->verbose ? "\r" : "", d->draws_per_chain, d->rhat_max, d->ess_min, t,
            eta, pr->tty && !pr->verbose ? "   " : "\n");
    pr->printed = 1;
}

static int finish(const cli_job *j, lt_like *l, lt_mcmc *m, cli_format format, const char *out,
                  int print, const lt_sample_compression *cmp)
{
    lt_sample_result r;
    lt_error err;
    lt_error_clear(&err);
    /* the compression still off where more knots did not help: weight a
     * thinned set of the draws by the exact likelihood */
    int off = cmp->checked_ok && cmp->posterior_dchi2 > LT_CHECK_BOUND;
    if (off)
        fprintf(stderr, "lantern: weighting the draws by the exact likelihood (at most %zu of "
                        "them evaluated)\n", lt_like_reweight_draws(l));
    if (lt_sample_collect(l, m, off ? lt_like_reweight_draws(l) : 0, &r, &err))
        return cli_report(&err);
    r.compression = *cmp;
    if (off) {
        char text[512];
        lt_report_compression_warning(&r, text, sizeof text);
        fprintf(stderr, "lantern: warning: %s\n", text);
        if (r.ess_min_weighted < j->target_ess)
            fprintf(stderr, "lantern: warning: the weighted draws' effective sample size %.0f is "
                            "below --target-ess %g\n", r.ess_min_weighted, j->target_ess);
    }
    cJSON *json = lt_report_sample_json(l, &r, &j->data, j->seed);
    for (size_t i = 0; i < r.nparams; i++) {
        char note[256];
        if (lt_post_edge_note(r.cols[r.first_param + i], lt_like_prior(l, i), r.edge_lo[i],
                              r.edge_hi[i], note, sizeof note))
            fprintf(stderr, "lantern: warning: %s: %s\n", lt_like_model(l)->name, note);
    }
    if (!print) {
    } else if (format == CLI_JSON) {
        char *text = cJSON_Print(json);
        printf("%s\n", text ? text : "{}");
        free(text);
    } else {
        lt_report_sample_table(stdout, l, &r, &j->data);
    }
    int status = CLI_OK;
    if (out) {
        char path[4096], what[128];
        snprintf(path, sizeof path, "%s/summary.json", out);
        snprintf(what, sizeof what, "lantern %s sample", LT_VERSION);
        if (lt_report_write_json(path, json, &err) ||
            lt_report_write_chains(out, l, &r, &j->data, j->seed, &err) ||
            lt_outdir_finish(out, what, &err))
            status = cli_report(&err);
    }
    if (!status && !r.converged) {
        fputs("lantern: warning: the chains did not converge within --max-steps; the results "
              "are written and marked \"converged\": false\n",
              stderr);
        /* ESS grows about linearly with the draws once the chains mix: say
         * what cap should reach the target at the rate seen so far. */
        double e = r.diag ? r.diag->ess_min : NAN;
        if (isfinite(e) && e > 0.0 && e < j->target_ess)
            fprintf(stderr,
                    "lantern: the smallest ESS is %.0f after %zu draws per chain; at that rate "
                    "--max-steps %.0f should reach %g\n",
                    e, r.steps, ceil(1.1 * (double)r.steps * j->target_ess / e / 1000.0) * 1000.0,
                    j->target_ess);
        status = CLI_UNCONVERGED;
    }
    cJSON_Delete(json);
    lt_sample_result_free(&r);
    return status;
}

/* The chains' start: the best fit and its Laplace covariance as centre. */
static int start_chains(const cli_job *j, const lt_like *l, void **ctxp, lt_mcmc **m,
                        lt_error *err)
{
    size_t d = lt_like_dim(l);
    lt_fit_opts fo = {.seed = j->seed, .starts = (size_t)j->starts, .stop = cli_catch_signals()};
    lt_fit_result fr;
    if (lt_fit_run(l, &fo, &fr, err))
        return err->code;
    double scale[LT_MAX_FREE];
    for (size_t i = 0; i < d; i++) {
        const lt_prior *p = lt_like_prior(l, i);
        scale[i] = p->kind == LT_PRIOR_UNIFORM ? p->b - p->a : 4 * p->b;
    }
    lt_mcmc_opts mo = {.dim = d, .nextra = 1, .nchains = (size_t)j->chains, .seed = j->seed,
                       .center = fr.best, .cov = fr.laplace_ok ? fr.cov : NULL, .scale = scale,
                       .warmup = (size_t)j->warmup, .check_every = (size_t)j->check_every,
                       .max_steps = (size_t)j->max_steps, .target_ess = j->target_ess,
                       .rhat_tol = 0.01, .threads = (int)j->threads, .memory_limit = 0};
    *m = lt_mcmc_alloc(&mo, lt_like_logdensity, ctxp, err);
    return *m ? LT_OK : err->code;
}

/*
 * checkpoint/compression.txt: the knots a refined run samples with and the
 * check that asked for them, so that a resumed run samples with the same
 * knots and reports the same numbers. Absent: the set-up's knots.
 */
static int save_knots(const char *out, size_t K, double first, lt_error *err)
{
    char path[4200], buf[32], text[64];
    snprintf(path, sizeof path, "%s/checkpoint/compression.txt", out);
    lt_format_double(first, buf, sizeof buf);
    snprintf(text, sizeof text, "%zu %s\n", K, buf);
    return lt_file_write_text(path, text, err);
}

static int load_knots(const char *out, lt_like *l, lt_sample_compression *cmp, lt_error *err)
{
    char path[4200], text[64] = "";
    snprintf(path, sizeof path, "%s/checkpoint/compression.txt", out);
    FILE *f = fopen(path, "r");
    if (!f)
        return LT_OK;
    size_t K;
    char *sp = fgets(text, sizeof text, f) ? strchr(text, ' ') : NULL;
    fclose(f);
    if (!sp || sscanf(text, "%zu", &K) != 1 || lt_parse_double(strtok(sp + 1, "\n"), &cmp->first_dchi2))
        return lt_error_set(err, LT_EINPUT, path, 1, "not 'KNOTS MAX_ABS_DCHI2'");
    return lt_like_compression_set(l, K, err);
}

int cli_sample_model(cli_job *j, lt_like *l, const lt_like_spec *spec, const char *out,
                     int resume, int print, cli_format format)
{
    int status = CLI_OK, prepared = 0;
    lt_mcmc *m = NULL;
    lt_like_chain *ctx = NULL;
    void **ctxp = NULL;
    char state[4200] = "", settings[4200] = "";
    lt_error err;
    lt_error_clear(&err);
    size_t d = lt_like_dim(l);
    lt_sample_compression cmp = {0};
    lt_like_compression(l, &cmp.knots_setup, &cmp.setup_dchi2);
    cmp.first_dchi2 = NAN;
    if (d == 0) {
        status = cli_usage_error("sample", "every parameter is fixed: nothing to sample");
        goto done;
    }
    if (resume && load_knots(out, l, &cmp, &err)) {
        status = cli_report(&err);
        goto done;
    }
    if (j->warmup == 0)
        j->warmup = d * 1000 > 2000 ? (long)d * 1000 : 2000;
    ctx = calloc((size_t)j->chains, sizeof *ctx);
    ctxp = calloc((size_t)j->chains, sizeof *ctxp);
    if (!ctx || !ctxp) {
        status = cli_usage_error("sample", "out of memory");
        goto done;
    }
    for (long c = 0; c < j->chains; c++) {
        ctx[c] = (lt_like_chain){l, lt_like_work_alloc(l)};
        ctxp[c] = &ctx[c];
        if (!ctx[c].w) {
            status = cli_usage_error("sample", "out of memory");
            goto done;
        }
    }
    cli_fingerprint parts;
    fingerprint(l, j, &parts);
    uint64_t fp = cli_fingerprint_value(&parts);
    if (out) {
        snprintf(state, sizeof state, "%s/checkpoint/state.bin", out);
        snprintf(settings, sizeof settings, "%s/checkpoint/settings.ini", out);
    }
    if (resume) {
        if (cli_fingerprint_check(settings, &parts, &err) ||
            !(m = lt_mcmc_load(state, fp, lt_like_logdensity, ctxp, &err))) {
            status = cli_report(&err);
            goto done;
        }
    } else {
        if (out && lt_outdir_prepare(out, j->force, &err)) {
            status = cli_report(&err);
            goto done;
        }
        prepared = out != NULL;
        if (start_chains(j, l, ctxp, &m, &err)) {
            if (err.code == LT_EINTR) {
                fputs("lantern: interrupted during the best fit, before sampling began\n", stderr);
                status = CLI_FAILED;
                goto done;
            }
            status = cli_report(&err);
            goto done;
        }
        if (out) {
            char dir[4200];
            snprintf(dir, sizeof dir, "%s/checkpoint", out);
            char what[128];
            snprintf(what, sizeof what, "lantern %s sample (running)", LT_VERSION);
            if ((mkdir(dir, 0777) != 0 && errno != EEXIST) ||
                cli_job_write(j, spec, settings, &err) ||
                cli_fingerprint_write(settings, &parts, &err) || lt_outdir_mark(out, what, &err)) {
                status = err.code ? cli_report(&err)
                                  : cli_usage_error(dir, "cannot make the checkpoint folder");
                goto done;
            }
        }
    }
    for (;;) {
        /* threads may be set differently on resume: the draws do not depend on it */
        progress pr = {{0, 0}, isatty(2), j->quiet, j->verbose, j->target_ess,
                       out ? state : NULL, fp, {0, 0, "", ""}, 0, 0};
        clock_gettime(CLOCK_MONOTONIC, &pr.start);
        int rc = lt_mcmc_run(m, cli_catch_signals(), on_check, &pr, &err);
        if (pr.printed && pr.tty && !pr.verbose)
            fputc('\n', stderr);
        if (pr.save_failed) {
            status = cli_report(&pr.err);
            goto done;
        }
        if (rc == LT_EINTR) {
            if (out && lt_mcmc_save(m, state, fp, &err) == LT_OK)
                fprintf(stderr, "lantern: interrupted; the checkpoint in %s/checkpoint holds every "
                                "draw so far: continue with 'lantern sample --resume %s'\n",
                        out, out);
            else if (out)
                cli_report(&err);
            else
                fputs("lantern: interrupted (no --out folder, so nothing was saved)\n", stderr);
            status = CLI_FAILED;
            goto done;
        }
        if (rc) {
            status = cli_report(&err);
            goto done;
        }
        /* the compression checked on the draws by the exact path; where
         * more knots (or the exact path) fix it, sample again with them */
        lt_compression_check chk;
        if (lt_mcmc_check_compression(l, m, &chk, &err)) {
            status = cli_report(&err);
            goto done;
        }
        if (!chk.refined) {
            cmp.knots = chk.knots, cmp.checked = chk.checked;
            cmp.posterior_dchi2 = chk.max_after, cmp.checked_ok = 1;
            break;
        }
        if (isnan(cmp.first_dchi2))
            cmp.first_dchi2 = chk.max_before;
        char how[64] = "the exact path";
        if (chk.knots)
            snprintf(how, sizeof how, "%zu knots", chk.knots);
        fprintf(stderr, "lantern: the compressed likelihood is off by %.2g in chi2 on the posterior "
                        "draws (more than %g; its set-up saw %.2g): sampling again with %s\n",
                chk.max_before, LT_CHECK_BOUND, cmp.setup_dchi2, how);
        if (out && save_knots(out, chk.knots, cmp.first_dchi2, &err)) {
            status = cli_report(&err);
            goto done;
        }
        lt_mcmc_free(m);
        m = NULL;
        for (long c = 0; c < j->chains; c++) {
            lt_like_work_free(ctx[c].w);
            if (!(ctx[c].w = lt_like_work_alloc(l))) {
                status = cli_usage_error("sample", "out of memory");
                goto done;
            }
        }
        if (start_chains(j, l, ctxp, &m, &err)) {
            status = cli_report(&err);
            goto done;
        }
    }
    status = finish(j, l, m, format, out, print, &cmp);
done:
    /* a failure leaves the earlier run (or no folder) behind, a checkpoint
     * to resume from stays */
    if (prepared && status != CLI_OK && status != CLI_UNCONVERGED)
        lt_outdir_abandon(out);
    lt_mcmc_free(m);
    for (long c = 0; ctx && c < j->chains; c++)
        lt_like_work_free(ctx[c].w);
    free(ctx);
    free(ctxp);
    return status;
}

int cli_sample(int argc, char **argv)
{
    cli_job j;
    cli_job_init(&j);
    int status = CLI_OK, first = 1;
    const char *resume = NULL, *format_flag = NULL;
    int quiet = 0, verbose = 0;
    lt_survey *s = NULL;
    lt_like *l = NULL;
    char settings[4200] = "";
    if (argc > 1 && strncmp(argv[1], "--", 2) != 0) {
        if ((status = cli_job_load(&j, argv[1])))
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
        if (resume || !cli_take_job(&a, &j)) {
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
        snprintf(settings, sizeof settings, "%s/checkpoint/settings.ini", resume);
        struct stat st;
        if (stat(settings, &st) != 0) {
            status = cli_usage_error(resume, "no checkpoint here (checkpoint/settings.ini is "
                                             "missing): not a stopped lantern sample run");
            goto done;
        }
        if ((status = cli_job_load(&j, settings)))
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
    if ((status = cli_job_model(&j, "sample", &spec)))
        goto done;
    lt_error err;
    lt_error_clear(&err);
    if (cli_job_survey(&j, &s, &err) || !(l = lt_like_alloc(s, &spec, &err))) {
        status = cli_report(&err);
        goto done;
    }
    cli_print_warnings(s);
    status = cli_sample_model(&j, l, &spec, j.out, resume != NULL, 1, format);
done:
    lt_like_free(l);
    lt_survey_free(s);
    cli_job_free(&j);
    return status;
}
