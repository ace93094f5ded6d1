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

const char *cli_kass_raftery(double two_ln_b)
{
    double a = fabs(two_ln_b);
    return a < 2 ? "not worth more than a bare mention" : a < 6 ? "positive" : a < 10 ? "strong"
                                                                                   : "very strong";
}

typedef struct {
    const char *name;
    lt_like_spec spec;
    lt_like *l;
    lt_fit_result fit;
    lt_nested_result nr;
    lt_posterior post;
    char warning[512];
    char dic_warning[256];
    int rc;      /* of the model's best fit and nested run */
    lt_error err;
} model_run;

/* The nested run's posterior (moments, DIC, prior edges) and what it
 * warns of. */
static int posterior(model_run *mr, size_t live)
{
    int rc = lt_pipeline_nested_posterior(mr->l, &mr->nr, live, &mr->post, &mr->err);
    if (rc)
        return rc;
    /* p_V near k is what a well-constrained Gaussian posterior gives; far
     * from it, DIC is not a fair penalty (a posterior cut by its prior, or
     * far from Gaussian) and the ranking by DIC deserves doubt */
    size_t d = lt_like_dim(mr->l);
    double k = (double)d, p_v = mr->post.p_v;
    mr->dic_warning[0] = '\0';
    if (isfinite(p_v) && fabs(p_v - k) > fmax(1.0, k / 2.0))
        snprintf(mr->dic_warning, sizeof mr->dic_warning,
                 "p_V = %.2f effective parameters against %zu sampled: the posterior is far from "
                 "Gaussian or cut by its prior, so DIC is a poor guide for this model",
                 p_v, d);
    /* a posterior reaching a prior edge (its density there above a tenth of
     * its peak) makes ln Z depend on where the edge is */
    mr->warning[0] = '\0';
    for (size_t i = 0; i < d; i++) {
        char note[256];
        if (lt_post_edge_note(lt_like_param_name(mr->l, i), lt_like_prior(mr->l, i),
                              mr->post.edge_lo[i], mr->post.edge_hi[i], note, sizeof note))
            snprintf(mr->warning + strlen(mr->warning), sizeof mr->warning - strlen(mr->warning),
                     "%s%s; ln Z depends on that prior", mr->warning[0] ? "; " : "", note);
    }
    return LT_OK;
}

static int write_samples(const char *dir, const model_run *mr, lt_error *err)
{
    char path[4200], tmp[4300];
    snprintf(path, sizeof path, "%s/nested_%s.csv", dir, mr->name);
    lt_tmp_name(path, tmp, sizeof tmp);
    FILE *f = fopen(tmp, "w");
    if (!f)
        return lt_error_set(err, LT_EIO, tmp, 0, "cannot write: %s", strerror(errno));
    size_t d = lt_like_dim(mr->l);
    fputs("weight,loglike", f);
    for (size_t i = 0; i < d; i++)
        fprintf(f, ",%s", lt_like_param_name(mr->l, i));
    fputc('\n', f);
    char b[32];
    for (size_t j = 0; j < mr->nr.nsamples; j++) {
        lt_format_double(exp(mr->nr.logw[j]), b, sizeof b);
        fputs(b, f);
        lt_format_double(mr->nr.loglike[j], b, sizeof b);
        fprintf(f, ",%s", b);
        for (size_t i = 0; i < d; i++) {
            lt_format_double(mr->nr.theta[j * d + i], b, sizeof b);
            fprintf(f, ",%s", b);
        }
        fputc('\n', f);
    }
    return lt_file_close_commit(f, path, err);
}

/* One model of a comparison, in a thread of its own: the best fit, the
 * nested run (continued from its checkpoint when there is one) and its
 * posterior summary. The outcome goes into mr (rc, err), never to the
 * terminal, except the one progress line, printed whole by one call. */
static void run_model(model_run *mr, size_t k, size_t nm, const lt_job *j, long live,
                      int threads, const char *ckdir, volatile sig_atomic_t *stop)
{
    lt_error_clear(&mr->err);
    if (!j->quiet)
        fprintf(stderr, "[%zu/%zu] %s: best fit, then nested sampling with %ld live points\n",
                k + 1, nm, mr->name, live);
    lt_fit_opts fo = {.seed = j->seed, .starts = (size_t)j->starts, .stop = stop};
    if ((mr->rc = lt_fit_run(mr->l, &fo, &mr->fit, &mr->err)))
        return;
    char ck[4400];
    snprintf(ck, sizeof ck, "%s/nested_%s.bin", ckdir, mr->name);
    mr->rc = lt_pipeline_nested_run(mr->l, live, j->seed, threads, j->out ? ck : NULL, stop,
                              &mr->nr, &mr->err);
    if (mr->rc)
        return;
    mr->rc = posterior(mr, (size_t)live);
}

int cli_compare(int argc, char **argv)
{
    lt_job j;
    lt_job_init(&j);
    const char *resume = NULL, *format_flag = NULL, *threads_flag = NULL;
    int status = CLI_OK, first = 1, prepared = 0, options = 0, quiet = 0, verbose = 0;
    lt_survey *s = NULL;
    model_run runs[MAX_MODELS];
    size_t nm = 0;
    memset(runs, 0, sizeof runs);
    cJSON *json = NULL;
    char *settings = NULL;
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
    long live = j.live_points;
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
    char ckdir[4200] = "";
    if (j.out)
        snprintf(ckdir, sizeof ckdir, "%s/checkpoint", j.out);
    if (resume && access(ckdir, F_OK) != 0) {
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
        if (mkdir(ckdir, 0777) != 0 && errno != EEXIST) {
            status = cli_usage_error(ckdir, "cannot make the checkpoint folder: %s", strerror(errno));
            goto done;
        }
        char path[4300];
        snprintf(path, sizeof path, "%s/settings.ini", ckdir);
        if (lt_job_write(&j, NULL, path, &err)) {
            status = cli_report(&err);
            goto done;
        }
        /* --force over an earlier comparison: its checkpoints belong to it,
         * and a new run must not continue them (they are refused as another
         * run's, or, with the same settings, would skip the work) */
        for (size_t k = 0; k < nm; k++) {
            char ck[4400];
            snprintf(ck, sizeof ck, "%s/nested_%s.bin", ckdir, runs[k].name);
            remove(ck);
        }
    }
    cli_print_warnings(s);
    /* the likelihoods, one after another: this may refuse the input */
    for (size_t k = 0; k < nm; k++) {
        model_run *mr = &runs[k];
        lt_job mj = j;
        mj.model = mr->name;
        if ((status = cli_job_model(&mj, &mr->spec)))
            goto done;
        if (!(mr->l = lt_like_alloc(s, &mr->spec, &err))) {
            status = cli_report(&err);
            goto done;
        }
    }
    /* Then the models side by side, one per thread, each with its own work
     * spaces and random streams: that is where the work is. A model's nested
     * run gets the threads left over only when models do not fill them (it
     * shares a batch out only when the likelihood is slow; see
     * lt_nested_iterate). The results do not depend on the thread count. */
    int threads = j.threads > 0 ? (int)j.threads : omp_get_max_threads();
    int outer = (size_t)threads < nm ? threads : (int)nm;
    int inner = outer > 1 ? 1 : threads;
#pragma omp parallel for schedule(dynamic, 1) num_threads(outer)
    for (size_t k = 0; k < nm; k++)
        run_model(&runs[k], k, nm, &j, live, inner, ckdir, stop);
    /* in model order, so that the first failure is the one reported */
    int interrupted = 0;
    for (size_t k = 0; k < nm; k++)
        interrupted |= runs[k].rc == LT_EINTR;
    if (interrupted) {
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
    for (size_t k = 0; k < nm; k++)
        if (runs[k].rc) {
            status = cli_report(&runs[k].err);
            goto done;
        }
    for (size_t k = 0; k < nm; k++) {
        if (runs[k].warning[0])
            fprintf(stderr, "lantern: warning: %s: %s\n", runs[k].name, runs[k].warning);
        if (runs[k].dic_warning[0])
            fprintf(stderr, "lantern: warning: %s: %s\n", runs[k].name, runs[k].dic_warning);
    }
    /* final files only once every model is done: an interrupted comparison
     * leaves nothing but its checkpoints */
    for (size_t k = 0; j.out && k < nm; k++)
        if (write_samples(j.out, &runs[k], &err)) {
            status = cli_report(&err);
            goto done;
        }
    /* the JSON summary */
    json = cJSON_CreateObject();
    cJSON_AddStringToObject(json, "command", "compare");
    cJSON_AddItemToObject(json, "n_data", lt_json_number((double)lt_like_ndata(runs[0].l)));
    cJSON_AddStringToObject(json, "reference", runs[0].name);
    cJSON_AddStringToObject(json, "evidence_convention",
                            "ln Z of the normalised Gaussian likelihood; a marginalised offset "
                            "has a flat prior of unit width (1 mag)");
    cJSON *list_j = cJSON_AddArrayToObject(json, "models");
    for (size_t k = 0; k < nm; k++) {
        model_run *mr = &runs[k];
        cJSON *o = cJSON_CreateObject();
        size_t d = lt_like_dim(mr->l);
        cJSON_AddStringToObject(o, "model", mr->name);
        cJSON_AddItemToObject(o, "n_data", lt_json_number((double)lt_like_ndata(mr->l)));
        cJSON_AddItemToObject(o, "k_params", lt_json_number((double)mr->fit.k_counted));
        cJSON_AddItemToObject(o, "chi2_min", lt_json_number(mr->fit.at_best.chi2));
        cJSON_AddItemToObject(o, "delta_chi2", lt_json_number(mr->fit.at_best.chi2 - runs[0].fit.at_best.chi2));
        cJSON_AddItemToObject(o, "dof", lt_json_number((double)mr->fit.dof));
        cJSON_AddItemToObject(o, "aic", lt_json_number(mr->fit.aic));
        cJSON_AddItemToObject(o, "bic", lt_json_number(mr->fit.bic));
        cJSON_AddItemToObject(o, "dic", lt_json_number(mr->post.dic));
        cJSON_AddItemToObject(o, "p_d", lt_json_number(mr->post.p_v));
        cJSON_AddStringToObject(o, "p_d_definition", LT_DIC_P_DEFINITION);
        cJSON_AddBoolToObject(o, "converged", mr->nr.finished && mr->fit.info.converged);
        cJSON *ev = cJSON_AddObjectToObject(o, "evidence");
        cJSON_AddItemToObject(ev, "ln_z", lt_json_number(mr->nr.logz));
        cJSON_AddItemToObject(ev, "ln_z_err", lt_json_number(mr->nr.logz_err));
        cJSON_AddItemToObject(ev, "information", lt_json_number(mr->nr.info));
        cJSON_AddItemToObject(ev, "live_points", lt_json_number((double)live));
        cJSON_AddItemToObject(ev, "iterations", lt_json_number((double)mr->nr.iterations));
        cJSON_AddItemToObject(ev, "evals", lt_json_number((double)mr->nr.evals));
        double lnb = mr->nr.logz - runs[0].nr.logz;
        double lnb_err = k ? sqrt(mr->nr.logz_err * mr->nr.logz_err + runs[0].nr.logz_err * runs[0].nr.logz_err) : 0;
        cJSON_AddItemToObject(o, "ln_b", lt_json_number(lnb));
        cJSON_AddItemToObject(o, "ln_b_err", lt_json_number(lnb_err));
        cJSON_AddItemToObject(o, "two_ln_b", lt_json_number(2 * lnb));
        char rd[160];
        snprintf(rd, sizeof rd, k == 0 ? "reference" : "%s: %s", 2 * lnb >= 0 ? "for this model" : "for the reference", cli_kass_raftery(2 * lnb));
        cJSON_AddStringToObject(o, "reading", rd);
        cJSON *params = cJSON_AddObjectToObject(o, "params");
        for (size_t i = 0; i < d; i++) {
            cJSON *p = cJSON_AddObjectToObject(params, lt_like_param_name(mr->l, i));
            cJSON_AddItemToObject(p, "best", lt_json_number(mr->fit.best[i]));
            cJSON_AddItemToObject(p, "mean", lt_json_number(mr->post.stats[mr->post.first_param + i].mean));
            cJSON_AddItemToObject(p, "sd", lt_json_number(mr->post.stats[mr->post.first_param + i].sd));
            char pr[64];
            lt_prior_format(lt_like_prior(mr->l, i), pr, sizeof pr);
            cJSON_AddStringToObject(p, "prior", pr);
        }
        cJSON *w = cJSON_AddArrayToObject(o, "warnings");
        if (mr->warning[0])
            cJSON_AddItemToArray(w, cJSON_CreateString(mr->warning));
        if (mr->dic_warning[0])
            cJSON_AddItemToArray(w, cJSON_CreateString(mr->dic_warning));
        cJSON_AddItemToArray(list_j, o);
    }
    if (format == CLI_JSON) {
        char *text = cJSON_Print(json);
        printf("%s\n", text ? text : "{}");
        free(text);
    } else {
        char what[4400];
        lt_report_describe_data(runs[0].l, &j.data, what, sizeof what);
        printf("model comparison on %s\n\n", what);
        printf("  %-10s %2s %9s %7s %9s %9s %9s %17s %15s  %s\n", "model", "k", "chi2_min", "dchi2",
               "AIC", "BIC", "DIC", "ln Z", "ln B", "reading (Kass & Raftery 1995, on 2 ln B)");
        for (size_t k = 0; k < nm; k++) {
            model_run *mr = &runs[k];
            double lnb = mr->nr.logz - runs[0].nr.logz;
            double e = sqrt(mr->nr.logz_err * mr->nr.logz_err + runs[0].nr.logz_err * runs[0].nr.logz_err);
            char zb[64], bb[64], rd[128];
            snprintf(zb, sizeof zb, "%.2f +- %.2f", mr->nr.logz, mr->nr.logz_err);
            if (k)
                snprintf(bb, sizeof bb, "%+.2f +- %.2f", lnb, e),
                    snprintf(rd, sizeof rd, "%s: %s", 2 * lnb >= 0 ? mr->name : runs[0].name, cli_kass_raftery(2 * lnb));
            else
                snprintf(bb, sizeof bb, "0"), snprintf(rd, sizeof rd, "(reference)");
            printf("  %-10s %2zu %9.3f %+7.3f %9.3f %9.3f %9.3f %17s %15s  %s\n", mr->name,
                   mr->fit.k_counted, mr->fit.at_best.chi2,
                   mr->fit.at_best.chi2 - runs[0].fit.at_best.chi2, mr->fit.aic, mr->fit.bic, mr->post.dic,
                   zb, bb, rd);
        }
        printf("\n  priors:");
        for (size_t k = 0; k < nm; k++) {
            printf("\n    %-10s", runs[k].name);
            for (size_t i = 0; i < lt_like_dim(runs[k].l); i++) {
                char pr[64];
                lt_prior_format(lt_like_prior(runs[k].l, i), pr, sizeof pr);
                printf(" %s %s%s", lt_like_param_name(runs[k].l, i), pr,
                       i + 1 < lt_like_dim(runs[k].l) ? "," : "");
            }
            if (lt_like_offset_mode(runs[k].l) == LT_OFFSET_MARGINAL)
                printf("; offset marginalised (flat, unit width)");
        }
        const lt_like *l0 = runs[0].l;
        for (size_t k = 0; k < lt_like_nmeasurements(l0); k++) {
            const lt_measurement *m = lt_like_measurement(l0, k);
            printf("%s%s = %g +- %g", k ? ", " : "\n  measured (every model): ", m->name, m->mean,
                   m->sd);
        }
        printf("\n  ln Z depends on these prior volumes%s.\n",
               lt_like_offset_mode(l0) == LT_OFFSET_MARGINAL ? "; k counts a marginalised offset"
                                                             : "");
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
    for (size_t k = 0; k < nm; k++) {
        lt_nested_result_free(&runs[k].nr);
        lt_posterior_free(&runs[k].post);
        lt_like_free(runs[k].l);
    }
    lt_survey_free(s);
    lt_job_free(&j);
    free(settings);
    return status;
}
