/*
 * lantern bench: how fast one likelihood evaluation is on given data, how
 * long the set-up takes, how much memory it needs, and how closely the
 * compressed path follows the exact one.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <time.h>

#include <cjson/cJSON.h>

#include "cli.h"
#include "lantern/report.h"

static double now(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

static void usage(FILE *f)
{
    fputs(cli_help_bench, f);
}

int cli_bench(int argc, char **argv)
{
    lt_job j;
    lt_job_init(&j);
    long evals = 20000;
    int exact = 0, status = CLI_OK;
    lt_survey *s = NULL;
    lt_like *l = NULL, *lx = NULL;
    lt_like_work *w = NULL, *wx = NULL;
    cli_args a = cli_args_start(argc, argv, 1);
    while (cli_args_more(&a)) {
        const char *v;
        if (cli_flag(&a, "--help")) {
            usage(stdout);
            goto done;
        } else if (cli_take(&a, "--evals", &v)) {
            if (lt_parse_long(v, 1, 1000000000, &evals)) {
                status = cli_usage_error("--evals", "'%s' is not a whole number >= 1", v);
                goto done;
            }
        } else if (cli_flag(&a, "--exact")) {
            exact = 1;
        } else if (!cli_take_job(&a, &j, LT_JOB_DATA | LT_JOB_MODEL | LT_JOB_PARAMS | LT_JOB_FIT | LT_JOB_OUTPUT)) {
            status = cli_args_unknown(&a, "bench");
            goto done;
        }
    }
    if (a.failed) {
        status = CLI_USAGE;
        goto done;
    }
    cli_format format;
    if ((status = cli_parse_format(j.format, (1u << CLI_TABLE) | (1u << CLI_JSON), &format)))
        goto done;
    lt_like_spec spec;
    if ((status = cli_job_model(&j, &spec)))
        goto done;
    spec.exact = exact;
    lt_error err;
    lt_error_clear(&err);
    double t0 = now();
    if (!(s = lt_survey_read(&j.data, &err)) || !(l = lt_like_alloc(s, &spec, &err))) {
        status = cli_report(&err);
        goto done;
    }
    double setup = now() - t0;
    size_t K;
    double set_dchi2;
    int compressed = lt_like_compression(l, &K, &set_dchi2);
    /* The other path: the exact one to compare with, or (with --exact) the
     * compressed one, which finds the best fit faster on large surveys. */
    lt_like_spec other = spec;
    other.exact = !exact;
    if (!(lx = lt_like_alloc(s, &other, &err)) || !(wx = lt_like_work_alloc(lx))) {
        status = cli_report(&err);
        goto done;
    }
    /* points near the best fit, for the timing and the comparison */
    lt_fit_opts fo = {.seed = j.seed, .starts = 4, .stop = NULL};
    lt_fit_result fr;
    if (lt_fit_run(exact ? lx : l, &fo, &fr, &err)) {
        status = cli_report(&err);
        goto done;
    }
    size_t d = lt_like_dim(l);
    enum { NP = 200 };
    static double pts[NP][LT_MAX_FREE];
    lt_rng r;
    lt_rng_seed(&r, j.seed, 7);
    for (int k = 0; k < NP; k++)
        for (size_t i = 0; i < d; i++) {
            double sd = fr.laplace_ok ? sqrt(fr.cov[i * d + i]) : 0.01;
            pts[k][i] = fr.best[i] + 3.0 * sd * lt_rng_normal(&r);
        }
    w = lt_like_work_alloc(l);
    if (!w) {
        status = cli_usage_error("bench", "out of memory");
        goto done;
    }
    lt_like_point pt;
    double t1 = now();
    for (long e = 0; e < evals; e++)
        lt_like_eval(l, w, pts[e % NP], &pt);
    double rate = (double)evals / (now() - t1);
    double max_d = 0.0;
    if (compressed) {
        for (int k = 0; k < NP; k++) {
            lt_like_point pe, pc;
            lt_like_eval_exact(lx, wx, pts[k], &pe);
            lt_like_eval(l, w, pts[k], &pc);
            if (pe.domain_ok && pe.chi2 - fr.at_best.chi2 < 50.0)
                max_d = fmax(max_d, pc.domain_ok ? fabs(pc.chi2 - pe.chi2) : INFINITY);
        }
    }
    struct rusage ru;
    getrusage(RUSAGE_SELF, &ru);
    double rss = ru.ru_maxrss / 1024.0;
    if (format == CLI_JSON) {
        cJSON *o = cJSON_CreateObject();
        cJSON_AddStringToObject(o, "model", lt_like_model(l)->name);
        cJSON_AddItemToObject(o, "n_data", lt_json_number((double)s->n));
        cJSON_AddStringToObject(o, "path", compressed ? "compressed" : "exact");
        cJSON_AddItemToObject(o, "knots", lt_json_number((double)K));
        cJSON_AddItemToObject(o, "evals_per_s", lt_json_number(rate));
        cJSON_AddItemToObject(o, "setup_s", lt_json_number(setup));
        cJSON_AddItemToObject(o, "peak_rss_mb", lt_json_number(rss));
        cJSON_AddItemToObject(o, "max_abs_dchi2", lt_json_number(max_d));
        cJSON_AddStringToObject(o, "covariance", lt_cov_kind_name(lt_cov_kind_of(s->cov)));
        char *text = cJSON_Print(o);
        printf("%s\n", text ? text : "{}");
        free(text);
        cJSON_Delete(o);
    } else {
        printf("%s on %zu objects (%s covariance), %s path%s\n", lt_like_model(l)->name, s->n,
               lt_cov_kind_name(lt_cov_kind_of(s->cov)), compressed ? "compressed" : "exact",
               compressed ? "" : " (--exact)");
        if (compressed)
            printf("  knots            %zu\n", K);
        printf("  evaluations/s    %.0f (one thread)\n  set-up           %.3f s\n"
               "  peak memory      %.1f MB\n",
               rate, setup, rss);
        if (compressed)
            printf("  max |dchi2|      %.2e (against the exact path, Delta chi2 < 50)\n", max_d);
    }
done:
    lt_like_work_free(w);
    lt_like_work_free(wx);
    lt_like_free(l);
    lt_like_free(lx);
    lt_survey_free(s);
    lt_job_free(&j);
    return status;
}
