/*
 * lantern bench: how fast one likelihood evaluation is on given data, how
 * long the set-up takes, how much memory it needs, and how closely the
 * compressed path follows the exact one.
 */
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "cli.h"
#include "lantern/report.h"

/* bench's own flags: --evals N, --exact. */
typedef struct {
    long evals;
    int exact;
} own_flags;

static int own(cli_args *a, void *ctx)
{
    own_flags *o = ctx;
    const char *v;
    if (cli_flag(a, "--exact"))
        return o->exact = 1;
    if (!cli_take(a, "--evals", &v))
        return 0;
    if (lt_parse_long(v, 1, 1000000000, &o->evals)) {
        cli_usage_error("--evals", "'%s' is not a whole number >= 1", v);
        a->failed = 1;
    }
    return 1;
}

int cli_bench(int argc, char **argv)
{
    lt_job j;
    lt_job_init(&j);
    own_flags of = {20000, 0};
    int options;
    int status = cli_job_args(argc, argv, "bench", cli_help_bench,
                              LT_JOB_DATA | LT_JOB_MODEL | LT_JOB_PARAMS | LT_JOB_FIT |
                                  LT_JOB_OUTPUT,
                              own, &of, &j, &options);
    if (status)
        goto done;
    cli_format format;
    if ((status = cli_parse_format(j.format, (1u << CLI_TABLE) | (1u << CLI_JSON), &format)))
        goto done;
    lt_like_spec spec;
    if ((status = cli_job_model(&j, &spec)))
        goto done;
    spec.exact = of.exact;
    lt_error err;
    lt_error_clear(&err);
    lt_bench b;
    if (lt_pipeline_bench(&j, &spec, of.evals, &b, &err)) {
        status = cli_report(&err);
        goto done;
    }
    if (format == CLI_JSON) {
        cJSON *o = cJSON_CreateObject();
        cJSON_AddStringToObject(o, "model", b.model);
        cJSON_AddItemToObject(o, "n_data", lt_json_number((double)b.n_data));
        cJSON_AddStringToObject(o, "path", b.compressed ? "compressed" : "exact");
        cJSON_AddItemToObject(o, "knots", lt_json_number((double)b.knots));
        cJSON_AddItemToObject(o, "evals_per_s", lt_json_number(b.evals_per_s));
        cJSON_AddItemToObject(o, "setup_s", lt_json_number(b.setup_s));
        cJSON_AddItemToObject(o, "peak_rss_mb", lt_json_number(b.peak_rss_mb));
        cJSON_AddItemToObject(o, "max_abs_dchi2", lt_json_number(b.max_abs_dchi2));
        cJSON_AddStringToObject(o, "covariance", b.covariance);
        cli_print_json(o, 1);
    } else {
        printf("%s on %zu objects (%s covariance), %s path%s\n", b.model, b.n_data, b.covariance,
               b.compressed ? "compressed" : "exact", b.compressed ? "" : " (--exact)");
        if (b.compressed)
            printf("  knots            %zu\n", b.knots);
        printf("  evaluations/s    %.0f (one thread)\n  set-up           %.3f s\n"
               "  peak memory      %.1f MB\n",
               b.evals_per_s, b.setup_s, b.peak_rss_mb);
        if (b.compressed)
            printf("  max |dchi2|      %.2e (against the exact path, Delta chi2 < 50)\n",
                   b.max_abs_dchi2);
    }
done:
    lt_job_free(&j);
    return status < 0 ? CLI_OK : status;
}
