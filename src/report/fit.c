/*
 * Reports of a best fit: the JSON summary, the table, the residuals.
 */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "lantern/digest.h"
#include "lantern/text.h"
#include "lantern/file.h"
#include "lantern/json.h"
#include "lantern/report.h"

int lt_report_write_json(const char *path, const cJSON *o, lt_error *err)
{
    char *text = cJSON_Print(o);
    if (!text)
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory printing JSON");
    size_t n = strlen(text);
    char *full = malloc(n + 2);
    if (!full) {
        free(text);
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    }
    memcpy(full, text, n);
    full[n] = '\n';
    full[n + 1] = '\0';
    free(text);
    int rc = lt_file_write_text(path, full, err);
    free(full);
    return rc;
}

static cJSON *num(double v) { return lt_json_number(v); }

/* A digest of the data a model was fitted to, after cuts: the size, the
 * observable, z, zhel, the observations and the covariance's diagonal, and
 * each measurement's name, mean and sd. lantern report compares it to tell
 * runs on other data apart. */
static void data_digest(const lt_like *l, char *out, size_t size)
{
    uint64_t h = LT_DIGEST_START;
    const lt_survey *s = lt_like_table(l);
    if (s) {
        int kind = (int)s->kind;
        lt_digest_add(&h, &s->n, sizeof s->n);
        lt_digest_add(&h, &kind, sizeof kind);
        lt_digest_add(&h, s->z, s->n * sizeof *s->z);
        lt_digest_add(&h, s->zhel, s->n * sizeof *s->zhel);
        lt_digest_add(&h, s->obs, s->n * sizeof *s->obs);
        double *diag = malloc((s->n ? s->n : 1) * sizeof *diag);
        if (diag && s->cov) {
            lt_cov_diagonal(s->cov, diag);
            lt_digest_add(&h, diag, s->n * sizeof *diag);
        }
        free(diag);
        lt_survey_digest_lightcurve(s, &h);
    }
    for (size_t k = 0; k < lt_like_nmeasurements(l); k++) {
        const lt_measurement *m = lt_like_measurement(l, k);
        double v[2] = {m->mean, m->sd};
        lt_digest_add(&h, m->name, strlen(m->name) + 1);
        lt_digest_add(&h, v, sizeof v);
    }
    /* the BAO and CMB tables too (nothing is added without them, so a
     * supernova run's digest is what it was): runs that differ in a probe
     * are not the same data, and a report compares only the same data */
    const lt_probe *probe[2] = {lt_like_bao(l, NULL), lt_like_cmb(l)};
    for (int k = 0; k < 2; k++) {
        const lt_probe *d = probe[k];
        if (!d)
            continue;
        const char *tag = k ? "cmb" : "bao";
        lt_digest_add(&h, tag, 4);
        for (size_t i = 0; i < d->n; i++) {
            double v[4] = {d->z[i], d->value[i], d->cov[i * d->n + i], d->rd_fid[i]};
            lt_digest_add(&h, d->quantity[i], strlen(d->quantity[i]) + 1);
            lt_digest_add(&h, v, sizeof v);
        }
    }
    snprintf(out, size, "fnv1a64:%016llx", (unsigned long long)h);
}

/* A table's columns, covariance files and modes into o. */
static void table_json(cJSON *o, const lt_survey_spec *t)
{
    cJSON_AddStringToObject(o, "columns", t->columns ? t->columns : "");
    cJSON *covs = cJSON_AddArrayToObject(o, "cov");
    for (size_t i = 0; i < t->ncov; i++)
        cJSON_AddItemToArray(covs, cJSON_CreateString(t->cov[i]));
    if (t->modes)
        cJSON_AddStringToObject(o, "modes", t->modes);
}

void lt_report_json_warning(cJSON *o, const char *id, const char *text)
{
    cJSON *w = cJSON_GetObjectItemCaseSensitive(o, "warnings");
    cJSON *ids = cJSON_GetObjectItemCaseSensitive(o, "warning_ids");
    if (!w)
        w = cJSON_AddArrayToObject(o, "warnings");
    if (!ids)
        ids = cJSON_AddArrayToObject(o, "warning_ids");
    cJSON_AddItemToArray(w, cJSON_CreateString(text));
    cJSON_AddItemToArray(ids, cJSON_CreateString(id));
}

void lt_report_add_data(cJSON *o, const lt_survey_spec *data, const lt_like *l)
{
    const lt_survey *s = lt_like_table(l);
    cJSON *files = cJSON_AddObjectToObject(o, "data");
    cJSON_AddStringToObject(files, "file", data->data ? data->data : "");
    char digest[64];
    data_digest(l, digest, sizeof digest);
    cJSON_AddStringToObject(files, "digest", digest);
    /* the terms by name, as a run's combinations of probes spell them */
    char probes[64] = "";
    const char *has[4] = {s ? "sn" : NULL, lt_like_bao(l, NULL) ? "bao" : NULL,
                          lt_like_cmb(l) ? "cmb" : NULL,
                          lt_like_nmeasurements(l) ? "measurements" : NULL};
    for (int k = 0; k < 4; k++)
        if (has[k])
            snprintf(probes + strlen(probes), sizeof probes - strlen(probes), "%s%s",
                     probes[0] ? "+" : "", has[k]);
    cJSON_AddStringToObject(files, "probes", probes);
    table_json(files, data);
    if (data->nmore) { /* several tables joined: each by name (file and cov above: the first's) */
        cJSON *tables = cJSON_AddArrayToObject(files, "tables");
        for (size_t p = 0; p <= data->nmore; p++) {
            const lt_survey_spec *t = p ? &data->more[p - 1] : data;
            char name[256];
            lt_survey_spec_name(t, name, sizeof name);
            cJSON *e = cJSON_CreateObject();
            cJSON_AddStringToObject(e, "name", name);
            cJSON_AddStringToObject(e, "file", t->data ? t->data : "");
            table_json(e, t);
            cJSON_AddItemToArray(tables, e);
        }
        if (data->cross_cov)
            cJSON_AddStringToObject(files, "cross_cov", data->cross_cov);
    }
    int rd_free;
    const lt_probe *bao = lt_like_bao(l, &rd_free);
    if (bao) {
        cJSON *b = cJSON_AddObjectToObject(o, "bao");
        cJSON_AddStringToObject(b, "file", bao->path);
        cJSON_AddStringToObject(b, "cov", bao->cov_path ? bao->cov_path : "");
        cJSON_AddItemToObject(b, "n_data", num((double)bao->n));
        cJSON_AddStringToObject(b, "rd", rd_free ? "free" : "formula");
    }
    const lt_probe *cmb = lt_like_cmb(l);
    if (cmb) {
        cJSON *b = cJSON_AddObjectToObject(o, "cmb");
        cJSON_AddStringToObject(b, "file", cmb->path);
        cJSON_AddStringToObject(b, "cov", cmb->cov_path ? cmb->cov_path : "");
        cJSON_AddItemToObject(b, "n_data", num((double)cmb->n));
    }
    /* both lists, empty when there is nothing to say */
    cJSON_AddArrayToObject(o, "warnings");
    cJSON_AddArrayToObject(o, "warning_ids");
    for (size_t i = 0; s && i < s->nwarnings; i++)
        lt_report_json_warning(o, s->warning_ids[i], s->warnings[i]);
}

int lt_report_calibrated(const lt_like *l, const double *cov, lt_calibrated *c)
{
    memset(c, 0, sizeof *c);
    const lt_survey *s = lt_like_table(l);
    if (!s || !s->lc || !s->lc->ncalibrators)
        return 0;
    c->ncal = s->lc->ncalibrators;
    size_t d = lt_like_dim(l), ih = d, im = d;
    for (size_t i = 0; i < d; i++) {
        if (!strcmp(lt_like_param_name(l, i), "h0"))
            ih = i;
        if (!strcmp(lt_like_param_name(l, i), "offset"))
            im = i;
    }
    if (ih == d || im == d)
        return 0;
    c->h0_at = ih, c->offset_at = im;
    c->correlation = cov ? cov[ih * d + im] / sqrt(cov[ih * d + ih] * cov[im * d + im]) : NAN;
    return 1;
}

void lt_report_calibrated_line(FILE *f, const lt_calibrated *c, const double *value,
                               const double *sd)
{
    fprintf(f, "  calibrators: %zu external distances set M, so H0 is measured: H0 = %.2f +- "
               "%.2f km/s/Mpc, M = %.4f +- %.4f, correlation %.3f\n",
            c->ncal, value[c->h0_at], sd[c->h0_at], value[c->offset_at], sd[c->offset_at],
            c->correlation);
}

void lt_report_std_json(cJSON *o, const lt_like *l, const double *cov)
{
    lt_calibrated c;
    if (lt_report_calibrated(l, cov, &c)) {
        cJSON *k = cJSON_AddObjectToObject(o, "calibrators");
        cJSON_AddItemToObject(k, "n", num((double)c.ncal));
        cJSON_AddItemToObject(k, "h0_offset_correlation", num(c.correlation));
    }
    const lt_std_spec *std = lt_like_std(l);
    if (!std)
        return;
    cJSON *j = cJSON_AddObjectToObject(o, "standardisation");
    cJSON_AddItemToObject(j, "n_objects", num((double)lt_like_table(l)->n));
    cJSON_AddStringToObject(j, "method", lt_std_method_name(std->method));
    cJSON_AddStringToObject(j, "scatter", std->shared_scatter ? "shared" : "per-group");
    cJSON_AddItemToObject(j, "velocity_dispersion_km_s", num(std->velocity_dispersion));
    cJSON_AddItemToObject(j, "mass_split", num(std->mass_split));
    cJSON_AddItemToObject(j, "lensing_per_z", num(0.055));
    const char *names[LT_STD_GROUPS_MAX];
    double sigma[LT_STD_GROUPS_MAX];
    size_t n = lt_like_scatter_tuned(l, names, sigma);
    if (!n)
        return;
    cJSON *t = cJSON_AddObjectToObject(j, "tuned_sigma_int");
    for (size_t e = 0; e < n; e++)
        cJSON_AddItemToObject(t, names[e], num(sigma[e]));
}

void lt_report_describe_data(FILE *f, const lt_like *l, const lt_survey_spec *data)
{
    const lt_survey *s = lt_like_table(l);
    size_t nm = lt_like_nmeasurements(l);
    if (s) {
        fputs(data->data, f);
        for (size_t p = 0; p < data->nmore; p++)
            fprintf(f, " + %s", data->more[p].data);
        if (data->nmore)
            fprintf(f, " (%zu tables joined%s)", data->nmore + 1,
                    data->cross_cov ? ", with a cross-covariance" : "");
    }
    if (s && s->kind == LT_OBS_MB)
        fprintf(f, ": %zu objects, light curves (mb, x1, color) standardised", s->n);
    else if (s)
        fprintf(f, ": %zu objects, observable %s", s->n, lt_obs_name(s->kind));
    int rd_free;
    const lt_probe *bao = lt_like_bao(l, &rd_free);
    if (bao)
        fprintf(f, "%sBAO %s: %zu measurements (r_d %s)", s ? "; " : "", bao->path, bao->n,
                rd_free ? "free: r_d h sampled" : "from omega_b_h2, omega_m h^2");
    const lt_probe *cmb = lt_like_cmb(l);
    if (cmb)
        fprintf(f, "%sCMB %s: %zu quantities", s || bao ? "; " : "", cmb->path, cmb->n);
    if (nm)
        fprintf(f, "%s%zu measurement%s", s || bao || cmb ? "; " : "", nm, nm == 1 ? "" : "s");
}

void lt_report_add_fixed(cJSON *o, const lt_like *l, const double *measured)
{
    cJSON *fixed = cJSON_AddObjectToObject(o, "fixed");
    for (size_t k = 0; k < lt_like_nfixed(l); k++)
        cJSON_AddItemToObject(fixed, lt_like_fixed(l, k)->name, num(lt_like_fixed(l, k)->value));
    if (lt_like_nmeasurements(l) == 0)
        return;
    cJSON *ms = cJSON_AddArrayToObject(o, "measurements");
    for (size_t k = 0; k < lt_like_nmeasurements(l); k++) {
        const lt_measurement *m = lt_like_measurement(l, k);
        cJSON *e = cJSON_CreateObject();
        cJSON_AddStringToObject(e, "name", m->name);
        cJSON_AddItemToObject(e, "mean", num(m->mean));
        cJSON_AddItemToObject(e, "sd", num(m->sd));
        double x = measured[k];
        cJSON_AddItemToObject(e, "at_best", num(x));
        cJSON_AddItemToObject(e, "pull", num((x - m->mean) / m->sd));
        cJSON_AddItemToArray(ms, e);
    }
}

void lt_report_print_measurements(FILE *f, const lt_like *l, const double *measured)
{
    for (size_t k = 0; k < lt_like_nmeasurements(l); k++) {
        const lt_measurement *m = lt_like_measurement(l, k);
        double x = measured[k];
        fprintf(f, "  measured %s = %g +- %g: %.6g at the best fit, pull %+.2f\n", m->name,
                m->mean, m->sd, x, (x - m->mean) / m->sd);
    }
}

/* A note on h0 when it is not a free parameter. */
static const char *h0_note(const lt_like *l)
{
    if (lt_like_offset_mode(l) == LT_OFFSET_MARGINAL && !lt_like_h0_known(l))
        return "degenerate with the marginalised offset";
    return NULL;
}

cJSON *lt_report_fit_json(const lt_like *l, const lt_fit_result *r, const lt_survey_spec *data,
                          unsigned long seed)
{
    size_t d = r->dim;
    cJSON *o = cJSON_CreateObject();
    cJSON_AddStringToObject(o, "command", "fit");
    cJSON_AddStringToObject(o, "model", lt_like_model(l)->name);
    cJSON_AddItemToObject(o, "n_data", num((double)lt_like_ndata(l)));
    const lt_survey *table = lt_like_table(l); /* light-curve tables too */
    cJSON_AddStringToObject(o, "observable", table ? lt_obs_name(table->kind) : "none");
    cJSON_AddItemToObject(o, "chi2_min", num(r->at_best.chi2));
    cJSON_AddItemToObject(o, "dof", num((double)r->dof));
    cJSON_AddItemToObject(o, "p_value", num(r->p_value));
    cJSON_AddItemToObject(o, "aic", num(r->aic));
    cJSON_AddItemToObject(o, "bic", num(r->bic));
    cJSON_AddItemToObject(o, "k_params", num((double)r->k_counted));
    cJSON_AddBoolToObject(o, "converged", r->info.converged);
    cJSON_AddBoolToObject(o, "laplace_ok", r->laplace_ok);
    if (!r->laplace_ok)
        cJSON_AddStringToObject(o, "laplace_note", r->laplace_note);
    lt_report_std_json(o, l, r->laplace_ok ? r->cov : NULL);

    cJSON *params = cJSON_AddObjectToObject(o, "params");
    for (size_t i = 0; i < d; i++) {
        cJSON *p = cJSON_AddObjectToObject(params, lt_like_param_name(l, i));
        cJSON_AddItemToObject(p, "best", num(r->best[i]));
        cJSON_AddItemToObject(p, "sd", num(r->sd[i]));
        if (r->edge[i]) { /* at a prior edge: a one-sided limit instead of an error */
            cJSON_AddStringToObject(p, "edge", r->edge[i] < 0 ? "lower" : "upper");
            cJSON_AddItemToObject(p, "limit95", num(r->limit[i]));
        }
        char buf[64];
        lt_prior_format(lt_like_prior(l, i), buf, sizeof buf);
        cJSON_AddStringToObject(p, "prior", buf);
    }
    cJSON *der = cJSON_AddObjectToObject(o, "derived");
    for (int k = 0; k < LT_NDER; k++) {
        if (!r->has_der[k])
            continue;
        cJSON *p = cJSON_AddObjectToObject(der, lt_derived_name(k));
        cJSON_AddItemToObject(p, "best", num(r->der_best[k]));
        cJSON_AddItemToObject(p, "sd", num(r->der_sd[k]));
    }
    if (r->has_pivot) {
        cJSON *p = cJSON_AddObjectToObject(der, "w_pivot");
        cJSON_AddItemToObject(p, "best", num(r->w_pivot));
        cJSON_AddItemToObject(p, "sd", num(r->w_pivot_sd));
        p = cJSON_AddObjectToObject(der, "z_pivot");
        cJSON_AddItemToObject(p, "best", num(r->z_pivot));
        cJSON_AddItemToObject(p, "sd", num(NAN));
    }
    cJSON *off = cJSON_AddObjectToObject(o, "offset");
    cJSON_AddStringToObject(off, "mode", lt_offset_name(lt_like_offset_mode(l)));
    if (lt_like_offset_mode(l) != LT_OFFSET_NONE)
        cJSON_AddItemToObject(off, "best", num(r->at_best.offset));

    lt_report_add_fixed(o, l, r->measured);
    const char *note = h0_note(l);
    if (note)
        cJSON_AddStringToObject(o, "h0_note", note);

    cJSON *cov = cJSON_AddObjectToObject(o, "covariance");
    cJSON *names = cJSON_AddArrayToObject(cov, "names");
    cJSON *mat = cJSON_AddArrayToObject(cov, "matrix");
    cJSON *cor = cJSON_AddArrayToObject(cov, "correlation");
    for (size_t i = 0; i < d; i++) {
        cJSON_AddItemToArray(names, cJSON_CreateString(lt_like_param_name(l, i)));
        cJSON *row = cJSON_CreateArray(), *crow = cJSON_CreateArray();
        for (size_t j = 0; j < d; j++) {
            cJSON_AddItemToArray(row, num(r->cov[i * d + j]));
            cJSON_AddItemToArray(crow, num(r->cov[i * d + j] / (r->sd[i] * r->sd[j])));
        }
        cJSON_AddItemToArray(mat, row);
        cJSON_AddItemToArray(cor, crow);
    }
    cJSON *opt = cJSON_AddObjectToObject(o, "optimizer");
    cJSON_AddItemToObject(opt, "seed", num((double)seed));
    cJSON_AddItemToObject(opt, "evals", num((double)r->info.evals));
    cJSON_AddItemToObject(opt, "best_start", num((double)r->info.best_start));
    cJSON_AddItemToObject(opt, "starts_agreeing", num((double)r->info.agree));

    lt_report_add_data(o, data, l);
    if (!r->laplace_ok)
        lt_report_json_warning(o, LT_WARN_LAPLACE, r->laplace_note);
    return o;
}

/* A Laplace sigma as printed: "-" where there is none (a best fit at a
 * prior edge; the JSON has null there, and the note below the table says
 * why), never "nan". */
static const char *sigma_text(double sd, char *buf, size_t size)
{
    if (isfinite(sd))
        snprintf(buf, size, "%.4g", sd);
    else
        snprintf(buf, size, "-");
    return buf;
}

void lt_report_fit_table(FILE *f, const lt_like *l, const lt_fit_result *r,
                         const lt_survey_spec *data)
{
    const lt_cosmo_model *m = lt_like_model(l);
    fprintf(f, "best fit of %s (%s) to ", m->name, m->summary);
    lt_report_describe_data(f, l, data);
    fputs("\n\n", f);
    /* names like color_mean@GROUP widen the first column */
    int w = 12;
    for (size_t i = 0; i < r->dim; i++)
        w = (int)fmax(w, (double)strlen(lt_like_param_name(l, i)));
    fprintf(f, "  %-*s %12s %12s   %s\n", w, "parameter", "best", "+-sigma", "prior");
    char sd[32];
    size_t edges = 0;
    for (size_t i = 0; i < r->dim; i++) {
        char prior[64];
        lt_prior_format(lt_like_prior(l, i), prior, sizeof prior);
        if (r->edge[i] && isfinite(r->limit[i]))
            snprintf(sd, sizeof sd, "%s %.4g", r->edge[i] < 0 ? "<" : ">", r->limit[i]);
        else
            sigma_text(r->sd[i], sd, sizeof sd);
        fprintf(f, "  %-*s %12.6g %12s   %s\n", w, lt_like_param_name(l, i), r->best[i], sd,
                prior);
        edges += r->edge[i] != 0;
    }
    fprintf(f, "\n  %-*s %12s %12s\n", w, "derived", "best", "+-sigma");
    for (int k = 0; k < LT_NDER; k++)
        if (r->has_der[k])
            fprintf(f, "  %-*s %12.6g %12s\n", w, lt_derived_name(k), r->der_best[k],
                    sigma_text(r->der_sd[k], sd, sizeof sd));
    if (r->has_pivot) {
        fprintf(f, "  %-*s %12.6g %12s\n", w, "w_pivot", r->w_pivot,
                sigma_text(r->w_pivot_sd, sd, sizeof sd));
        fprintf(f, "  %-*s %12.6g\n", w, "z_pivot", r->z_pivot);
    }
    lt_cosmo_params base = *lt_like_base(l);
    int first = 1;
    for (size_t k = 0; k < lt_like_nfixed(l); k++) {
        const lt_param *p = lt_like_fixed(l, k);
        if (!strcmp(p->name, "n_eff") || (!strcmp(p->name, "t_cmb") && p->value == 0.0))
            continue;
        fprintf(f, "%s%s = %g", first ? "\n  fixed: " : ", ", p->name, p->value);
        if (!strcmp(p->name, "h0") && h0_note(l))
            fprintf(f, " (%s)", h0_note(l));
        first = 0;
    }
    if (base.t_cmb > 0.0)
        fprintf(f, ", n_eff = %g", base.n_eff);
    fputs(first ? "\n" : "\n", f);
    lt_report_print_measurements(f, l, r->measured);
    lt_offset_mode om = lt_like_offset_mode(l);
    if (om == LT_OFFSET_MARGINAL)
        fprintf(f, "  offset: marginalised analytically (flat prior); best value %.5g\n",
                r->at_best.offset);
    char pv[32] = "-: no degrees of freedom left";
    if (isfinite(r->p_value))
        snprintf(pv, sizeof pv, "%.3g", r->p_value);
    fprintf(f, "\n  chi2_min %.4f for %ld degrees of freedom (p = %s)\n", r->at_best.chi2,
            r->dof, pv);
    fprintf(f, "  AIC %.3f, BIC %.3f (k = %zu parameter%s%s)\n", r->aic, r->bic, r->k_counted,
            r->k_counted == 1 ? "" : "s",
            om == LT_OFFSET_MARGINAL ? ", the marginalised offset counted" : "");
    fprintf(f, "  best fit reached by %zu of the starts (%zu evaluations)%s\n", r->info.agree,
            r->info.evals, r->info.converged ? "" : "; NOT CONVERGED");
    if (!r->laplace_ok)
        fprintf(f, "  note: %s%s\n", r->laplace_note,
                r->dim ? " (the sigmas shown as -)" : "");
    if (edges)
        fprintf(f, "  note: %zu parameter%s at an edge of the prior, held there for the "
                   "others' errors; '<' or '>' gives the 95%% one-sided limit with the others "
                   "at their best fit ('lantern sample' gives the marginal one)\n",
                edges, edges == 1 ? " lies" : "s lie");
    lt_calibrated cal;
    if (r->laplace_ok && lt_report_calibrated(l, r->cov, &cal))
        lt_report_calibrated_line(f, &cal, r->best, r->sd);
    lt_report_std_line(f, l);
}

void lt_report_std_line(FILE *f, const lt_like *l)
{
    const lt_std_spec *std = lt_like_std(l);
    if (!std)
        return;
    const lt_survey *s = lt_like_table(l);
    char step[64] = "no host-mass step (no mass column)";
    if (s->lc->mass)
        snprintf(step, sizeof step, "host-mass step at %g", std->mass_split);
    fprintf(f, "  standardisation: %s likelihood, %s scatter, %s, peculiar velocities %g km/s, "
               "lensing 0.055 z%s\n",
            lt_std_method_name(std->method),
            std->shared_scatter || !s->lc->group ? "one shared" : "per-group", step,
            std->velocity_dispersion,
            std->method == LT_STD_CHI2 ? "; sigma_int (fixed above) set so that chi2/dof = 1 "
                                         "in each group"
                                       : "");
}

int lt_report_write_residuals(const char *path, const lt_like *l, const double *model,
                              lt_error *err)
{
    const lt_survey *s = lt_like_survey(l);
    size_t n = s->n;
    double *var = malloc((n ? n : 1) * sizeof *var);
    int rc = LT_OK;
    if (!var) {
        rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        goto done;
    }
    lt_cov_diagonal(s->cov, var);
    FILE *f;
    if ((rc = lt_file_open_tmp(path, &f, err)))
        goto done;
    fputs("id,z,zhel,observed,model,residual,pull\n", f);
    char b[7][32];
    for (size_t i = 0; i < n; i++) {
        double res = s->obs[i] - model[i];
        lt_format_double(s->z[i], b[0], 32);
        lt_format_double(s->zhel[i], b[1], 32);
        lt_format_double(s->obs[i], b[2], 32);
        lt_format_double(model[i], b[3], 32);
        lt_format_double(res, b[4], 32);
        lt_format_double(res / sqrt(var[i]), b[5], 32);
        if (s->id)
            fprintf(f, "%s", s->id[i]);
        else
            fprintf(f, "%ld", s->row[i]);
        fprintf(f, ",%s,%s,%s,%s,%s,%s\n", b[0], b[1], b[2], b[3], b[4], b[5]);
    }
    rc = lt_file_close_commit(f, path, err);
done:
    free(var);
    return rc;
}
