/*
 * The timing of a likelihood (lantern bench) as JSON and as a table.
 */
#include <cjson/cJSON.h>

#include "lantern/json.h"
#include "lantern/report.h"

cJSON *lt_report_bench_json(const lt_bench *b)
{
    cJSON *o = cJSON_CreateObject();
    cJSON_AddStringToObject(o, "model", b->model);
    cJSON_AddItemToObject(o, "n_data", lt_json_number((double)b->n_data));
    cJSON_AddStringToObject(o, "path", b->compressed ? "compressed" : "exact");
    cJSON_AddItemToObject(o, "knots", lt_json_number((double)b->knots));
    cJSON_AddItemToObject(o, "evals_per_s", lt_json_number(b->evals_per_s));
    cJSON_AddItemToObject(o, "setup_s", lt_json_number(b->setup_s));
    cJSON_AddItemToObject(o, "peak_rss_mb", lt_json_number(b->peak_rss_mb));
    cJSON_AddItemToObject(o, "max_abs_dchi2", lt_json_number(b->max_abs_dchi2));
    cJSON_AddStringToObject(o, "covariance", b->covariance);
    return o;
}

void lt_report_bench_table(FILE *f, const lt_bench *b)
{
    fprintf(f, "%s on %zu objects (%s covariance), %s path%s\n", b->model, b->n_data,
            b->covariance, b->compressed ? "compressed" : "exact",
            b->compressed ? "" : " (--exact)");
    if (b->compressed)
        fprintf(f, "  knots            %zu\n", b->knots);
    fprintf(f, "  evaluations/s    %.0f (one thread)\n  set-up           %.3f s\n"
               "  peak memory      %.1f MB\n",
            b->evals_per_s, b->setup_s, b->peak_rss_mb);
    if (b->compressed)
        fprintf(f, "  max |dchi2|      %.2e (against the exact path, Delta chi2 < 50)\n",
                b->max_abs_dchi2);
}
