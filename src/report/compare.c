/*
 * Model comparisons as the user sees them (lantern compare): the JSON
 * summary, the table with the priors it depends on, the warnings, and the
 * weighted draws of each model's nested run.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "lantern/file.h"
#include "lantern/json.h"
#include "lantern/report.h"
#include "lantern/text.h"

static cJSON *num(double v) { return lt_json_number(v); }

const char *lt_report_kass_raftery(double two_ln_b)
{
    double a = fabs(two_ln_b);
    return a < 2 ? "not worth more than a bare mention" : a < 6 ? "positive" : a < 10 ? "strong"
                                                                                   : "very strong";
}

void lt_report_compare_warnings(const lt_model_result *m, char *edges, size_t esize, char *dic,
                                size_t dsize)
{
    /* p_V near k is what a well-constrained Gaussian posterior gives; far
     * from it, DIC is not a fair penalty (a posterior cut by its prior, or
     * far from Gaussian) and the ranking by DIC deserves doubt */
    size_t d = lt_like_dim(m->l);
    double k = (double)d, p_v = m->post.p_v;
    dic[0] = '\0';
    if (isfinite(p_v) && fabs(p_v - k) > fmax(1.0, k / 2.0))
        snprintf(dic, dsize,
                 "p_V = %.2f effective parameters against %zu sampled: the posterior is far from "
                 "Gaussian or cut by its prior, so DIC is a poor guide for this model",
                 p_v, d);
    /* a posterior reaching a prior edge (its density there above a tenth of
     * its peak) makes ln Z depend on where the edge is */
    edges[0] = '\0';
    for (size_t i = 0; i < d; i++) {
        char note[256];
        size_t used = strlen(edges);
        if (lt_post_edge_note(lt_like_param_name(m->l, i), lt_like_prior(m->l, i),
                              m->post.edge_lo[i], m->post.edge_hi[i], note, sizeof note))
            snprintf(edges + used, esize - used, "%s%s; ln Z depends on that prior",
                     edges[0] ? "; " : "", note);
    }
}

/* ln B of model k against the first, its error and its reading. */
static void bayes(const lt_model_result *m, size_t k, double *lnb, double *err)
{
    *lnb = m[k].post.ln_z - m[0].post.ln_z;
    *err = sqrt(m[k].post.ln_z_err * m[k].post.ln_z_err + m[0].post.ln_z_err * m[0].post.ln_z_err);
}

cJSON *lt_report_compare_json(const lt_model_result *m, size_t n)
{
    cJSON *json = cJSON_CreateObject();
    cJSON_AddStringToObject(json, "command", "compare");
    cJSON_AddItemToObject(json, "n_data", num((double)lt_like_ndata(m[0].l)));
    cJSON_AddStringToObject(json, "reference", m[0].name);
    cJSON_AddStringToObject(json, "evidence_convention",
                            "ln Z of the normalised Gaussian likelihood; a marginalised offset "
                            "has a flat prior of unit width (1 mag)");
    cJSON *list = cJSON_AddArrayToObject(json, "models");
    for (size_t k = 0; k < n; k++) {
        const lt_model_result *mr = &m[k];
        const lt_posterior *p = &mr->post;
        cJSON *o = cJSON_CreateObject();
        size_t d = lt_like_dim(mr->l);
        cJSON_AddStringToObject(o, "model", mr->name);
        cJSON_AddItemToObject(o, "n_data", num((double)lt_like_ndata(mr->l)));
        cJSON_AddItemToObject(o, "k_params", num((double)mr->fit.k_counted));
        cJSON_AddItemToObject(o, "chi2_min", num(mr->fit.at_best.chi2));
        cJSON_AddItemToObject(o, "delta_chi2", num(mr->fit.at_best.chi2 - m[0].fit.at_best.chi2));
        cJSON_AddItemToObject(o, "dof", num((double)mr->fit.dof));
        cJSON_AddItemToObject(o, "aic", num(mr->fit.aic));
        cJSON_AddItemToObject(o, "bic", num(mr->fit.bic));
        cJSON_AddItemToObject(o, "dic", num(p->dic));
        cJSON_AddItemToObject(o, "p_d", num(p->p_v));
        cJSON_AddStringToObject(o, "p_d_definition", LT_DIC_P_DEFINITION);
        cJSON_AddBoolToObject(o, "converged", p->finished && mr->fit.info.converged);
        cJSON *ev = cJSON_AddObjectToObject(o, "evidence");
        cJSON_AddItemToObject(ev, "ln_z", num(p->ln_z));
        cJSON_AddItemToObject(ev, "ln_z_err", num(p->ln_z_err));
        cJSON_AddItemToObject(ev, "information", num(p->information));
        cJSON_AddItemToObject(ev, "live_points", num((double)p->live_points));
        cJSON_AddItemToObject(ev, "iterations", num((double)p->iterations));
        cJSON_AddItemToObject(ev, "evals", num((double)p->evals));
        double lnb, lnb_err;
        bayes(m, k, &lnb, &lnb_err);
        cJSON_AddItemToObject(o, "ln_b", num(lnb));
        cJSON_AddItemToObject(o, "ln_b_err", num(k ? lnb_err : 0));
        cJSON_AddItemToObject(o, "two_ln_b", num(2 * lnb));
        char rd[160];
        snprintf(rd, sizeof rd, k == 0 ? "reference" : "%s: %s",
                 2 * lnb >= 0 ? "for this model" : "for the reference",
                 lt_report_kass_raftery(2 * lnb));
        cJSON_AddStringToObject(o, "reading", rd);
        cJSON *params = cJSON_AddObjectToObject(o, "params");
        for (size_t i = 0; i < d; i++) {
            cJSON *q = cJSON_AddObjectToObject(params, lt_like_param_name(mr->l, i));
            cJSON_AddItemToObject(q, "best", num(mr->fit.best[i]));
            cJSON_AddItemToObject(q, "mean", num(p->stats[p->first_param + i].mean));
            cJSON_AddItemToObject(q, "sd", num(p->stats[p->first_param + i].sd));
            char pr[64];
            lt_prior_format(lt_like_prior(mr->l, i), pr, sizeof pr);
            cJSON_AddStringToObject(q, "prior", pr);
        }
        char edges[512], dic[256];
        lt_report_compare_warnings(mr, edges, sizeof edges, dic, sizeof dic);
        cJSON_AddArrayToObject(o, "warnings");
        cJSON_AddArrayToObject(o, "warning_ids");
        if (edges[0])
            lt_report_json_warning(o, LT_WARN_PRIOR_EDGE, edges);
        if (dic[0])
            lt_report_json_warning(o, LT_WARN_DIC, dic);
        cJSON_AddItemToArray(list, o);
    }
    return json;
}

void lt_report_compare_table(FILE *f, const lt_model_result *m, size_t n,
                             const lt_survey_spec *data)
{
    fputs("model comparison on ", f);
    lt_report_describe_data(f, m[0].l, data);
    fputs("\n\n", f);
    fprintf(f, "  %-10s %2s %9s %7s %9s %9s %9s %17s %15s  %s\n", "model", "k", "chi2_min",
            "dchi2", "AIC", "BIC", "DIC", "ln Z", "ln B", "reading (Kass & Raftery 1995, on 2 ln B)");
    for (size_t k = 0; k < n; k++) {
        const lt_model_result *mr = &m[k];
        double lnb, e;
        bayes(m, k, &lnb, &e);
        char zb[64], bb[64], rd[128];
        snprintf(zb, sizeof zb, "%.2f +- %.2f", mr->post.ln_z, mr->post.ln_z_err);
        if (k)
            snprintf(bb, sizeof bb, "%+.2f +- %.2f", lnb, e),
                snprintf(rd, sizeof rd, "%s: %s", 2 * lnb >= 0 ? mr->name : m[0].name,
                         lt_report_kass_raftery(2 * lnb));
        else
            snprintf(bb, sizeof bb, "0"), snprintf(rd, sizeof rd, "(reference)");
        fprintf(f, "  %-10s %2zu %9.3f %+7.3f %9.3f %9.3f %9.3f %17s %15s  %s\n", mr->name,
                mr->fit.k_counted, mr->fit.at_best.chi2,
                mr->fit.at_best.chi2 - m[0].fit.at_best.chi2, mr->fit.aic, mr->fit.bic,
                mr->post.dic, zb, bb, rd);
    }
    fprintf(f, "\n  priors:");
    for (size_t k = 0; k < n; k++) {
        fprintf(f, "\n    %-10s", m[k].name);
        size_t d = lt_like_dim(m[k].l);
        for (size_t i = 0; i < d; i++) {
            char pr[64];
            lt_prior_format(lt_like_prior(m[k].l, i), pr, sizeof pr);
            fprintf(f, " %s %s%s", lt_like_param_name(m[k].l, i), pr, i + 1 < d ? "," : "");
        }
        if (lt_like_offset_mode(m[k].l) == LT_OFFSET_MARGINAL)
            fprintf(f, "; offset marginalised (flat, unit width)");
    }
    const lt_like *l0 = m[0].l;
    for (size_t k = 0; k < lt_like_nmeasurements(l0); k++) {
        const lt_measurement *ms = lt_like_measurement(l0, k);
        fprintf(f, "%s%s = %g +- %g", k ? ", " : "\n  measured (every model): ", ms->name,
                ms->mean, ms->sd);
    }
    fprintf(f, "\n  ln Z depends on these prior volumes%s.\n",
            lt_like_offset_mode(l0) == LT_OFFSET_MARGINAL ? "; k counts a marginalised offset"
                                                          : "");
}

int lt_report_write_nested(const char *dir, const lt_model_result *m, lt_error *err)
{
    char *path = lt_path_format(err, "%s/nested_%s.csv", dir, m->name);
    FILE *f = NULL;
    int rc = path ? lt_file_open_tmp(path, &f, err) : LT_ENOMEM;
    if (rc)
        goto done;
    size_t d = lt_like_dim(m->l);
    const lt_posterior *p = &m->post;
    fputs("weight,loglike", f);
    for (size_t i = 0; i < d; i++)
        fprintf(f, ",%s", lt_like_param_name(m->l, i));
    fputc('\n', f);
    char b[32];
    for (size_t j = 0; j < p->ndraws; j++) {
        lt_format_double(p->weights[j], b, sizeof b);
        fputs(b, f);
        lt_format_double(p->loglike[j], b, sizeof b);
        fprintf(f, ",%s", b);
        for (size_t i = 0; i < d; i++) {
            lt_format_double(p->rows[j * p->ncols + p->first_param + i], b, sizeof b);
            fprintf(f, ",%s", b);
        }
        fputc('\n', f);
    }
    rc = lt_file_close_commit(f, path, err);
done:
    free(path);
    return rc;
}
