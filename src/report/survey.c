/*
 * A survey described (lantern inspect): its size, redshifts, errors and
 * covariance, as JSON and as a table.
 */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "lantern/json.h"
#include "lantern/report.h"

/* Object k of the survey as a reader finds it: its id, else its row. */
static void object_name(const lt_survey *s, size_t k, char *buf, size_t size)
{
    if (s->id)
        snprintf(buf, size, "'%s'", s->id[k]);
    else
        snprintf(buf, size, "row %ld", s->row[k]);
}

/* Below this |lambda_min| / lambda_max a negative eigenvalue is what
 * rounding the matrix's elements to a few digits can make (a file with 6
 * significant digits perturbs each element by ~1e-6 of its size; common
 * practice, no source). */
#define ROUNDING_SCALE 1e-6

void lt_report_cov_hint(const lt_survey_spec *spec, const lt_survey *s,
                        const lt_cov_diagnosis *d, char *buf, size_t size)
{
    char a[300] = "", b[300] = "";
    if (d->ntop >= 2)
        object_name(s, d->top[0], a, sizeof a), object_name(s, d->top[1], b, sizeof b);
    double lo = d->neigen ? d->eigen[0] : NAN;
    if (d->ntop >= 2 && fabs(d->pair_correlation) > 1.0)
        snprintf(buf, size,
                 "objects %s and %s are correlated beyond 1 (C_ab / sqrt(C_aa C_bb) = %.4g): "
                 "no covariance can hold that pair; check their elements in the --cov files "
                 "(a sign, a scale, or rows in another order than the table's)",
                 a, b, d->pair_correlation);
    else if (spec->no_err_diag)
        snprintf(buf, size,
                 "with --no-err-diag the --cov files alone make the covariance: if they hold "
                 "only systematics (no statistical errors), they are singular or nearly so; "
                 "drop --no-err-diag so that diag(err^2) is added");
    else if (-lo <= ROUNDING_SCALE * d->max_eigenvalue)
        snprintf(buf, size,
                 "the smallest eigenvalue is %.3g of the largest, as small as rounding makes "
                 "it: a matrix written with too few digits, or two rows that are copies of one "
                 "another (the same object twice); write the matrix with more digits, or drop "
                 "the copy",
                 -lo / d->max_eigenvalue);
    else
        snprintf(buf, size,
                 "a negative direction this large means the matrix is not a covariance as "
                 "given: a part subtracted instead of added, a matrix whose rows follow another "
                 "order than the table's, or files that double-count one another; look at the "
                 "objects above in each --cov file");
}

static cJSON *diagnosis_json(const lt_survey_spec *spec, const lt_survey *s,
                             const lt_cov_diagnosis *d)
{
    cJSON *o = cJSON_CreateObject();
    cJSON_AddItemToObject(o, "n_negative", lt_json_number((double)d->n_negative));
    cJSON_AddItemToObject(o, "n_zero", lt_json_number((double)d->n_zero));
    cJSON_AddItemToObject(o, "tolerance", lt_json_number(d->tolerance));
    cJSON *ev = cJSON_AddArrayToObject(o, "smallest_eigenvalues");
    for (size_t k = 0; k < d->neigen; k++)
        cJSON_AddItemToArray(ev, lt_json_number(d->eigen[k]));
    cJSON *dir = cJSON_AddArrayToObject(o, "direction");
    for (size_t t = 0; t < d->ntop; t++) {
        size_t k = d->top[t];
        cJSON *x = cJSON_CreateObject();
        cJSON_AddItemToObject(x, "object", lt_json_number((double)(k + 1)));
        cJSON_AddItemToObject(x, "row", lt_json_number((double)s->row[k]));
        if (s->id)
            cJSON_AddStringToObject(x, "id", s->id[k]);
        else
            cJSON_AddNullToObject(x, "id");
        cJSON_AddItemToObject(x, "z", lt_json_number(s->z[k]));
        cJSON_AddItemToObject(x, "weight", lt_json_number(d->weight[t]));
        cJSON_AddItemToArray(dir, x);
    }
    cJSON_AddItemToObject(o, "pair_correlation", lt_json_number(d->pair_correlation));
    char hint[1024];
    lt_report_cov_hint(spec, s, d, hint, sizeof hint);
    cJSON_AddStringToObject(o, "hint", hint);
    return o;
}

cJSON *lt_report_survey_json(const lt_survey_spec *spec, const lt_survey *s,
                             const lt_survey_stats *st, const lt_cov_info *ci,
                             const lt_cov_diagnosis *d)
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
    if (s->lc && !s->lc->x1) /* a standardised table with calibrators */
        cJSON_AddItemToObject(o, "n_calibrators", lt_json_number((double)st->lc.ncalibrators));
    if (s->lc && s->lc->x1) {
        const lt_lightcurve_stats *lc = &st->lc;
        cJSON *l = cJSON_AddObjectToObject(o, "lightcurve");
        cJSON_AddItemToObject(l, "x1_min", lt_json_number(lc->x1_min));
        cJSON_AddItemToObject(l, "x1_max", lt_json_number(lc->x1_max));
        cJSON_AddItemToObject(l, "color_min", lt_json_number(lc->color_min));
        cJSON_AddItemToObject(l, "color_max", lt_json_number(lc->color_max));
        cJSON_AddBoolToObject(l, "mass", s->lc->mass != NULL);
        if (s->lc->mass) {
            cJSON_AddItemToObject(l, "mass_min", lt_json_number(lc->mass_min));
            cJSON_AddItemToObject(l, "mass_max", lt_json_number(lc->mass_max));
            cJSON_AddItemToObject(l, "mass_split", lt_json_number(LT_MASS_SPLIT));
            cJSON_AddItemToObject(l, "n_mass_high", lt_json_number((double)lc->n_mass_high));
            cJSON_AddItemToObject(l, "n_mass_low", lt_json_number((double)lc->n_mass_low));
            cJSON_AddItemToObject(l, "n_mass_placeholder",
                                  lt_json_number((double)lc->n_mass_placeholder));
        }
        cJSON *g = cJSON_AddObjectToObject(l, "groups");
        for (size_t k = 0; k < lc->ngroups; k++)
            cJSON_AddItemToObject(g, lc->group[k], lt_json_number((double)lc->group_n[k]));
        cJSON_AddItemToObject(l, "n_calibrators", lt_json_number((double)lc->ncalibrators));
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
    if (d)
        cJSON_AddItemToObject(c, "diagnosis", diagnosis_json(spec, s, d));
    cJSON *files = cJSON_AddObjectToObject(o, "files");
    cJSON_AddStringToObject(files, "data", spec->data);
    cJSON *covs = cJSON_AddArrayToObject(files, "cov");
    for (size_t i = 0; i < spec->ncov; i++)
        cJSON_AddItemToArray(covs, cJSON_CreateString(spec->cov[i]));
    if (spec->modes)
        cJSON_AddStringToObject(files, "modes", spec->modes);
    else
        cJSON_AddNullToObject(files, "modes");
    cJSON_AddArrayToObject(o, "warnings");
    cJSON_AddArrayToObject(o, "warning_ids");
    for (size_t i = 0; i < s->nwarnings; i++)
        lt_report_json_warning(o, s->warning_ids[i], s->warnings[i]);
    return o;
}

/* The diagnosis of a covariance that is not positive definite. */
static void diagnosis_table(FILE *f, const lt_survey_spec *spec, const lt_survey *s,
                            const lt_cov_diagnosis *d)
{
    fprintf(f, "           %zu negative eigenvalue%s", d->n_negative,
            d->n_negative == 1 ? "" : "s");
    if (d->n_zero)
        fprintf(f, ", %zu zero within rounding (|lambda| <= %.3g)", d->n_zero, d->tolerance);
    fprintf(f, "; the smallest:");
    for (size_t k = 0; k < d->neigen; k++)
        fprintf(f, "%s %.6g", k ? "," : "", d->eigen[k]);
    fprintf(f, "\n           the direction of the smallest (unit eigenvector), its heaviest "
               "objects:\n");
    int w = 2;
    for (size_t t = 0; t < d->ntop; t++) {
        int len = s->id ? (int)strlen(s->id[d->top[t]]) : 0;
        w = len > w ? len : w;
    }
    fprintf(f, "             object     row  %-*s  %9s  %8s\n", w, "id", "z", "weight");
    for (size_t t = 0; t < d->ntop; t++) {
        size_t k = d->top[t];
        fprintf(f, "           %8zu %7ld  %-*s  %9.5f  %8.4f\n", k + 1, s->row[k], w,
                s->id ? s->id[k] : "-", s->z[k], d->weight[t]);
    }
    char hint[1024];
    lt_report_cov_hint(spec, s, d, hint, sizeof hint);
    fprintf(f, "           hint: %s\n", hint);
}

void lt_report_survey_table(FILE *f, const lt_survey_spec *spec, const lt_survey *s,
                            const lt_survey_stats *st, const lt_cov_info *ci,
                            const lt_cov_diagnosis *d)
{
    static const char *obs_text[] = {"distance modulus mu (mag)",
                                     "standardised magnitude mag (mu + unknown offset)",
                                     "luminosity distance dl (Mpc)",
                                     "peak magnitude mb, to be standardised with x1 and color"};
    fprintf(f, "survey     %s\n", spec->data);
    fprintf(f, "objects    %zu", s->n);
    if (s->n != s->n_read)
        fprintf(f, " (of %zu read)", s->n_read);
    fprintf(f, "\nobservable %s, from %.6g to %.6g\n", obs_text[s->kind], st->obs_min, st->obs_max);
    fprintf(f, "redshift   z from %.6g to %.6g; zhel from %.6g to %.6g\n", st->z_min, st->z_max,
           st->zhel_min, st->zhel_max);
    if (s->err)
        fprintf(f, "errors     min %.4g, median %.4g, mean %.4g, max %.4g\n", st->err_min,
               st->err_median, st->err_mean, st->err_max);
    else
        fprintf(f, "errors     none in the table (the covariance holds them)\n");
    if (s->lc && !s->lc->x1)
        fprintf(f, "calibrators %zu\n", st->lc.ncalibrators);
    if (s->lc && s->lc->x1) {
        const lt_lightcurve_stats *lc = &st->lc;
        fprintf(f, "stretch    x1 from %.4g to %.4g; colour from %.4g to %.4g\n", lc->x1_min,
                lc->x1_max, lc->color_min, lc->color_max);
        if (s->lc->mass)
            fprintf(f, "host mass  log10 M from %.4g to %.4g: %zu at or above %g, %zu below; "
                       "%zu placeholders (below %g)\n",
                    lc->mass_min, lc->mass_max, lc->n_mass_high, LT_MASS_SPLIT, lc->n_mass_low,
                    lc->n_mass_placeholder, LT_MASS_PLACEHOLDER);
        else
            fprintf(f, "host mass  no column (no host-mass step)\n");
        if (lc->ngroups) {
            fprintf(f, "groups     %zu:", lc->ngroups + (lc->groups_more ? 1 : 0));
            for (size_t k = 0; k < lc->ngroups; k++)
                fprintf(f, "%s %s (%zu)", k ? "," : "", lc->group[k], lc->group_n[k]);
            if (lc->groups_more)
                fprintf(f, ", and %zu objects in further groups", lc->groups_more);
            fputc('\n', f);
        }
        fprintf(f, "calibrators %zu\n", lc->ncalibrators);
    }
    fprintf(f, "\n  z from      to   objects\n");
    size_t most = 1;
    for (size_t b = 0; b < st->nbins; b++)
        most = st->counts[b] > most ? st->counts[b] : most;
    for (size_t b = 0; b < st->nbins; b++) {
        int bar = (int)(40.0 * (double)st->counts[b] / (double)most + 0.5);
        fprintf(f, "  %7.4f %7.4f %9zu  ", st->edges[b], st->edges[b + 1], st->counts[b]);
        for (int i = 0; i < bar; i++)
            fputc('#', f);
        fputc('\n', f);
    }
    fprintf(f, "\ncovariance %s", lt_cov_kind_name(ci->kind));
    if (lt_cov_nmodes(s->cov))
        fprintf(f, " with %zu systematic modes", lt_cov_nmodes(s->cov));
    fprintf(f, ": %s%s", spec->no_err_diag ? "" : "diag(err^2)",
           spec->no_err_diag || (!spec->ncov && !spec->modes) ? "" : " + ");
    for (size_t i = 0; i < spec->ncov; i++)
        fprintf(f, "%s%s", i ? " + " : "", spec->cov[i]);
    if (spec->modes)
        fprintf(f, "%smodes %s", spec->ncov ? " + " : "", spec->modes);
    fprintf(f, "\n           positive definite: %s\n", ci->positive_definite ? "yes" : "no");
    if (d)
        diagnosis_table(f, spec, s, d);
    else if (!strcmp(ci->method, "estimate"))
        fprintf(f, "           condition number ~ %.4g (LAPACK 1-norm estimate)\n", ci->condition);
    else if (!strcmp(ci->method, "bound"))
        fprintf(f, "           condition number <= %.4g, smallest eigenvalue >= %.4g (bounds)\n",
               ci->condition, ci->min_eigenvalue);
    else
        fprintf(f, "           condition number %.4g; eigenvalues from %.4g to %.4g\n",
               ci->condition, ci->min_eigenvalue, ci->max_eigenvalue);
}

