/*
 * lantern inspect: read a survey as a fit would, and describe it: size,
 * redshifts, errors, the covariance and anything worth a warning.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "cli.h"

#define NBINS 10

static void usage(FILE *f)
{
    fputs(cli_help_inspect, f);
}

static void print_json(const lt_survey_spec *spec, const lt_survey *s,
                       const lt_survey_stats *st, const lt_cov_info *ci)
{
    cJSON *o = cJSON_CreateObject();
    cJSON_AddItemToObject(o, "n_data", lt_json_number((double)s->n));
    cJSON_AddItemToObject(o, "n_read", lt_json_number((double)s->n_read));
    cJSON_AddStringToObject(o, "observable", lt_obs_name(s->kind));
    cJSON_AddItemToObject(o, "z_min", lt_json_number(st->z_min));
    cJSON_AddItemToObject(o, "z_max", lt_json_number(st->z_max));
    cJSON_AddItemToObject(o, "zhel_min", lt_json_number(st->zhel_min));
    cJSON_AddItemToObject(o, "zhel_max", lt_json_number(st->zhel_max));
    cJSON_AddItemToObject(o, "observable_min", lt_json_number(st->obs_min));
    cJSON_AddItemToObject(o, "observable_max", lt_json_number(st->obs_max));
    cJSON *h = cJSON_AddObjectToObject(o, "z_histogram");
    cJSON *edges = cJSON_AddArrayToObject(h, "edges"), *counts = cJSON_AddArrayToObject(h, "counts");
    for (size_t b = 0; b <= st->nbins; b++)
        cJSON_AddItemToArray(edges, lt_json_number(st->edges[b]));
    for (size_t b = 0; b < st->nbins; b++)
        cJSON_AddItemToArray(counts, lt_json_number((double)st->counts[b]));
    if (s->err) {
        cJSON *e = cJSON_AddObjectToObject(o, "err");
        cJSON_AddItemToObject(e, "min", lt_json_number(st->err_min));
        cJSON_AddItemToObject(e, "median", lt_json_number(st->err_median));
        cJSON_AddItemToObject(e, "mean", lt_json_number(st->err_mean));
        cJSON_AddItemToObject(e, "max", lt_json_number(st->err_max));
    }
    cJSON *c = cJSON_AddObjectToObject(o, "covariance");
    cJSON_AddStringToObject(c, "kind", lt_cov_kind_name(ci->kind));
    cJSON_AddBoolToObject(c, "positive_definite", ci->positive_definite);
    cJSON_AddItemToObject(c, "condition", lt_json_number(ci->condition));
    cJSON_AddItemToObject(c, "min_eigenvalue", lt_json_number(ci->min_eigenvalue));
    cJSON_AddItemToObject(c, "max_eigenvalue", lt_json_number(ci->max_eigenvalue));
    cJSON_AddStringToObject(c, "method", ci->method);
    cJSON_AddItemToObject(c, "n_modes", lt_json_number((double)lt_cov_nmodes(s->cov)));
    cJSON_AddBoolToObject(c, "err_diag", !spec->no_err_diag);
    cJSON *files = cJSON_AddObjectToObject(o, "files");
    cJSON_AddStringToObject(files, "data", spec->data);
    cJSON *covs = cJSON_AddArrayToObject(files, "cov");
    for (size_t i = 0; i < spec->ncov; i++)
        cJSON_AddItemToArray(covs, cJSON_CreateString(spec->cov[i]));
    if (spec->modes)
        cJSON_AddStringToObject(files, "modes", spec->modes);
    else
        cJSON_AddNullToObject(files, "modes");
    cJSON *w = cJSON_AddArrayToObject(o, "warnings");
    for (size_t i = 0; i < s->nwarnings; i++)
        cJSON_AddItemToArray(w, cJSON_CreateString(s->warnings[i]));
    char *text = cJSON_Print(o);
    if (text)
        printf("%s\n", text);
    free(text);
    cJSON_Delete(o);
}

static void print_table(const lt_survey_spec *spec, const lt_survey *s,
                        const lt_survey_stats *st, const lt_cov_info *ci)
{
    static const char *obs_text[] = {"distance modulus mu (mag)",
                                     "standardised magnitude mag (mu + unknown offset)",
                                     "luminosity distance dl (Mpc)"};
    printf("survey     %s\n", spec->data);
    printf("objects    %zu", s->n);
    if (s->n != s->n_read)
        printf(" (of %zu read)", s->n_read);
    printf("\nobservable %s, from %.6g to %.6g\n", obs_text[s->kind], st->obs_min, st->obs_max);
    printf("redshift   z from %.6g to %.6g; zhel from %.6g to %.6g\n", st->z_min, st->z_max,
           st->zhel_min, st->zhel_max);
    if (s->err)
        printf("errors     min %.4g, median %.4g, mean %.4g, max %.4g\n", st->err_min,
               st->err_median, st->err_mean, st->err_max);
    else
        printf("errors     none in the table (the covariance holds them)\n");
    printf("\n  z from      to   objects\n");
    size_t most = 1;
    for (size_t b = 0; b < st->nbins; b++)
        most = st->counts[b] > most ? st->counts[b] : most;
    for (size_t b = 0; b < st->nbins; b++) {
        int bar = (int)(40.0 * (double)st->counts[b] / (double)most + 0.5);
        printf("  %7.4f %7.4f %9zu  ", st->edges[b], st->edges[b + 1], st->counts[b]);
        for (int i = 0; i < bar; i++)
            putchar('#');
        putchar('\n');
    }
    printf("\ncovariance %s", lt_cov_kind_name(ci->kind));
    if (lt_cov_nmodes(s->cov))
        printf(" with %zu systematic modes", lt_cov_nmodes(s->cov));
    printf(": %s%s", spec->no_err_diag ? "" : "diag(err^2)",
           spec->no_err_diag || (!spec->ncov && !spec->modes) ? "" : " + ");
    for (size_t i = 0; i < spec->ncov; i++)
        printf("%s%s", i ? " + " : "", spec->cov[i]);
    if (spec->modes)
        printf("%smodes %s", spec->ncov ? " + " : "", spec->modes);
    printf("\n           positive definite: %s\n", ci->positive_definite ? "yes" : "no");
    if (!strcmp(ci->method, "estimate"))
        printf("           condition number ~ %.4g (LAPACK 1-norm estimate)\n", ci->condition);
    else if (!strcmp(ci->method, "bound"))
        printf("           condition number <= %.4g, smallest eigenvalue >= %.4g (bounds)\n",
               ci->condition, ci->min_eigenvalue);
    else
        printf("           condition number %.4g; eigenvalues from %.4g to %.4g\n",
               ci->condition, ci->min_eigenvalue, ci->max_eigenvalue);
}

int cli_inspect(int argc, char **argv)
{
    lt_job j;
    lt_job_init(&j);
    const char *format_text = "table";
    int status = CLI_OK;
    lt_survey *s = NULL;
    cli_args a = cli_args_start(argc, argv, 1);
    while (cli_args_more(&a)) {
        const char *v;
        if (cli_flag(&a, "--help")) {
            usage(stdout);
            goto done;
        } else if (cli_take_job(&a, &j, LT_JOB_DATA)) {
            continue;
        } else if (cli_take(&a, "--format", &v)) {
            format_text = v;
        } else {
            status = cli_args_unknown(&a, "inspect");
            goto done;
        }
    }
    cli_format format;
    if (a.failed)
        status = CLI_USAGE;
    else
        status = cli_parse_format(format_text, (1u << CLI_TABLE) | (1u << CLI_JSON), &format);
    if (status)
        goto done;
    lt_error err;
    lt_error_clear(&err);
    if (!(s = lt_survey_read(&j.data, &err))) {
        status = cli_report(&err);
        goto done;
    }
    lt_survey_stats st;
    lt_cov_info ci;
    if (lt_survey_stats_compute(s, NBINS, &st, &err) || lt_cov_inspect(s->cov, &ci, &err)) {
        status = cli_report(&err);
    } else {
        cli_print_warnings(s);
        if (format == CLI_JSON)
            print_json(&j.data, s, &st, &ci);
        else
            print_table(&j.data, s, &st, &ci);
    }
done:
    lt_survey_free(s);
    lt_job_free(&j);
    return status;
}
