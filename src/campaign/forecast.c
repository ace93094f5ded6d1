/* Fisher forecasts of survey designs: see lantern/campaign.h. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>
#include <gsl/gsl_linalg.h>

#include "lantern/ini.h"
#include "lantern/file.h"
#include "lantern/json.h"
#include "lantern/outdir.h"
#include "lantern/report.h"
#include "lantern/version.h"
#include "internal.h"

int lt_forecast_read(const char *path, lt_scenario *sc, lt_like_spec *spec, lt_error *err)
{
    memset(sc, 0, sizeof *sc);
    lt_ini *ini = lt_ini_read(path, err);
    if (!ini)
        return err->code;
    /* [priors], [fixed] and [measurements] by the run description's rules */
    lt_job job;
    lt_job_init(&job);
    const char *model = NULL;
    lt_ini_entry *e;
    int rc = lt_scenario_from_ini(ini, sc, err);
    if (rc)
        goto done;
    if ((rc = lt_ini_string(ini, "forecast", "model", 0, &model, err)))
        goto done;
    const lt_cosmo_model *m =
        model ? lt_cosmo_model_lookup(model, path, lt_ini_get(ini, "forecast", "model")->line, err)
              : sc->model;
    if (!m) {
        rc = err->code;
        goto done;
    }
    if ((e = lt_ini_get(ini, "forecast", "offset"))) {
        if (lt_offset_parse(e->value) < 0) {
            rc = lt_error_set(err, LT_EINPUT, path, e->line,
                              "offset = '%s': give none, marginal or sampled", e->value);
            goto done;
        }
        if ((rc = lt_job_set(&job, "model", "offset", e->value, path, e->line, 1, err)))
            goto done;
    }
    job.lenient = 1;
    if ((rc = lt_job_apply_ini(&job, ini, LT_JOB_PARAMS, err)) ||
        (rc = lt_ini_check_used(ini, err)) || (rc = lt_job_like_spec(&job, m, spec, err)))
        goto done;
    /* the spec outlives job, whose copy of the file name its entries point
     * to: point them to the caller's, the same file */
    for (size_t k = 0; k < spec->nsettings; k++)
        if (spec->settings[k].origin)
            spec->settings[k].origin = path;
    for (size_t k = 0; k < spec->nmeasurements; k++)
        if (spec->measurements[k].origin)
            spec->measurements[k].origin = path;
done:
    lt_job_free(&job);
    lt_ini_free(ini);
    if (rc)
        lt_scenario_free(sc);
    return rc;
}

typedef struct {
    const lt_like *l;
    lt_like_work *w;
    double x[LT_MAX_FREE];
    size_t dim;
    int bad; /* a step left the physical domain */
} fisher_ctx;

/* chi2_eff at x0 + a e_i + b e_j (the likelihood alone: no prior). */
static double chi2_at(fisher_ctx *c, size_t i, double a, size_t j, double b)
{
    double x[LT_MAX_FREE];
    memcpy(x, c->x, c->dim * sizeof *x);
    x[i] += a;
    x[j] += b;
    lt_like_point p;
    lt_like_eval(c->l, c->w, x, &p);
    if (!p.domain_ok || !isfinite(p.chi2_eff)) {
        c->bad = 1;
        return NAN;
    }
    return p.chi2_eff;
}

/* The Hessian of chi2_eff at c->x with steps h, by central differences. */
static void hessian(fisher_ctx *c, const double *h, double *H)
{
    size_t d = c->dim;
    double f0 = chi2_at(c, 0, 0, 0, 0);
    for (size_t i = 0; i < d; i++) {
        H[i * d + i] = (chi2_at(c, i, h[i], i, 0) - 2 * f0 + chi2_at(c, i, -h[i], i, 0)) /
                       (h[i] * h[i]);
        for (size_t j = 0; j < i; j++) {
            double v = (chi2_at(c, i, h[i], j, h[j]) - chi2_at(c, i, h[i], j, -h[j]) -
                        chi2_at(c, i, -h[i], j, h[j]) + chi2_at(c, i, -h[i], j, -h[j])) /
                       (4 * h[i] * h[j]);
            H[i * d + j] = H[j * d + i] = v;
        }
    }
}

int lt_forecast_run(const lt_scenario *sc, const lt_like_spec *spec, lt_forecast *f,
                    lt_error *err)
{
    memset(f, 0, sizeof *f);
    /* a forecast sets every observable at its truth; for light curves the
     * observed x1 and colour would keep their noise, so it would not be
     * the noiseless design a Fisher matrix needs */
    if (sc->kind == LT_OBS_MB)
        return lt_error_set(err, LT_EINPUT, sc->path, 0,
                            "observable = mb: forecasts take mu, mag or dl scenarios; simulate "
                            "light-curve surveys and fit them (lantern campaign) instead");
    lt_sim sim;
    int rc = lt_simulate(sc, &sim, err);
    if (rc)
        return rc;
    /* the design without its noise: every object at its true value */
    lt_survey *s = sim.survey;
    memcpy(s->obs, sim.truth, s->n * sizeof *s->obs);
    lt_like *l = lt_like_alloc(s, spec, err);
    lt_like_work *w = l ? lt_like_work_alloc(l) : NULL;
    if (!l) {
        rc = err->code;
        goto done;
    }
    if (!w) {
        rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        goto done;
    }
    size_t d = lt_like_dim(l);
    if (d == 0) {
        rc = lt_error_set(err, LT_EINPUT, sc->path, 0,
                          "every parameter is fixed: nothing to forecast");
        goto done;
    }
    f->dim = d;
    f->n_data = s->n;
    double dchi2;
    if (!lt_like_compression(l, &f->K, &dchi2))
        f->K = 0;
    fisher_ctx c = {l, w, {0}, d, 0};
    double h[LT_MAX_FREE], H[LT_MAX_FREE * LT_MAX_FREE];
    for (size_t i = 0; i < d; i++) {
        snprintf(f->names[i], sizeof f->names[i], "%s", lt_like_param_name(l, i));
        f->fiducial[i] = c.x[i] = lt_scenario_truth(sc, f->names[i], campaign_h0_fixed(l));
        const lt_prior *p = lt_like_prior(l, i);
        h[i] = 1e-4 * (p->kind == LT_PRIOR_UNIFORM ? p->b - p->a : 4 * p->b);
    }
    /* first pass: each parameter's conditional width sigma_i. Then the
     * Hessian with steps of 0.2 sigma_i and of 0.1 sigma_i, combined by
     * Richardson extrapolation, (4 H(h/2) - H(h)) / 3, which cancels the
     * O(h^2) error of central differences (the model bends on the scale of
     * sigma in nearly degenerate directions, and the inverse magnifies
     * what that does to F). Smaller steps would meet the rounding of the
     * distance integrals instead. */
    hessian(&c, h, H);
    for (size_t i = 0; i < d && !c.bad; i++) {
        if (!(H[i * d + i] > 0)) {
            rc = lt_error_set(err, LT_ENUMERIC, sc->path, 0,
                              "the data do not constrain %s at the fiducial (zero curvature): "
                              "fix it or give it a Gaussian prior",
                              f->names[i]);
            goto done;
        }
        h[i] = 0.2 * sqrt(2 / H[i * d + i]);
    }
    double H2[LT_MAX_FREE * LT_MAX_FREE];
    if (!c.bad) {
        hessian(&c, h, H);
        for (size_t i = 0; i < d; i++)
            h[i] *= 0.5;
        hessian(&c, h, H2);
        for (size_t k = 0; k < d * d; k++)
            H[k] = (4 * H2[k] - H[k]) / 3;
    }
    if (c.bad) {
        rc = lt_error_set(err, LT_EDOMAIN, sc->path, 0,
                          "a step around the fiducial leaves the physical domain (E^2 <= 0 or "
                          "no distance): the fiducial is too close to its edge for derivatives");
        goto done;
    }
    for (size_t i = 0; i < d; i++) {
        for (size_t j = 0; j < d; j++)
            f->fisher[i * d + j] = 0.5 * H[i * d + j];
        const lt_prior *p = lt_like_prior(l, i);
        if (p->kind == LT_PRIOR_GAUSS)
            f->fisher[i * d + i] += 1 / (p->b * p->b);
        f->sd_cond[i] = 1 / sqrt(f->fisher[i * d + i]);
    }
    memcpy(f->cov, f->fisher, d * d * sizeof *f->cov);
    gsl_matrix_view cv = gsl_matrix_view_array(f->cov, d, d);
    if (gsl_linalg_cholesky_decomp1(&cv.matrix) || gsl_linalg_cholesky_invert(&cv.matrix)) {
        rc = lt_error_set(err, LT_ENUMERIC, sc->path, 0,
                          "the Fisher matrix is singular: some parameters are degenerate for "
                          "this design; fix one or give it a Gaussian prior");
        goto done;
    }
    int iw0 = lt_like_param_index(l, "w0"), iwa = lt_like_param_index(l, "wa");
    for (size_t i = 0; i < d; i++)
        f->sd[i] = sqrt(f->cov[i * d + i]);
    f->fom = f->z_pivot = f->w_pivot_sd = NAN;
    if (iw0 >= 0 && iwa >= 0) {
        double a = f->cov[iw0 * d + iw0], b = f->cov[iw0 * d + iwa], cc = f->cov[iwa * d + iwa];
        f->has_w0wa = 1;
        f->fom = 1 / sqrt(a * cc - b * b);
        f->z_pivot = lt_pivot_redshift(b, cc);
        f->w_pivot_sd = sqrt(fmax(a - b * b / cc, 0));
    }
done:
    lt_like_work_free(w);
    lt_like_free(l);
    lt_sim_free(&sim);
    return rc;
}

/* ---- what a forecast reports ---- */

/* The prior the user gave name, or NULL. */
static const lt_prior *user_prior(const lt_like_spec *spec, const char *name)
{
    const lt_param_setting *st = lt_like_spec_setting(spec, name);
    return st && !st->fixed ? &st->prior : NULL;
}

static cJSON *num(double v) { return lt_json_number(v); }

static cJSON *matrix_json(const double *m, size_t d)
{
    cJSON *a = cJSON_CreateArray();
    for (size_t i = 0; i < d; i++) {
        cJSON *row = cJSON_CreateArray();
        for (size_t j = 0; j < d; j++)
            cJSON_AddItemToArray(row, num(m[i * d + j]));
        cJSON_AddItemToArray(a, row);
    }
    return a;
}

cJSON *lt_forecast_json(const lt_scenario *sc, const lt_like_spec *spec, const lt_forecast *f)
{
    size_t d = f->dim;
    cJSON *o = cJSON_CreateObject();
    cJSON_AddStringToObject(o, "command", "forecast");
    cJSON_AddStringToObject(o, "scenario", sc->name ? sc->name : "");
    cJSON_AddStringToObject(o, "model", spec->model->name);
    cJSON_AddItemToObject(o, "n_data", num((double)f->n_data));
    cJSON_AddStringToObject(o, "observable", lt_obs_name(sc->kind));
    cJSON_AddItemToObject(o, "compression_knots", num((double)f->K));
    cJSON *params = cJSON_AddObjectToObject(o, "params");
    cJSON *names = cJSON_CreateArray();
    for (size_t i = 0; i < d; i++) {
        cJSON *p = cJSON_AddObjectToObject(params, f->names[i]);
        cJSON_AddItemToObject(p, "fiducial", num(f->fiducial[i]));
        cJSON_AddItemToObject(p, "sd", num(f->sd[i]));
        cJSON_AddItemToObject(p, "sd_fixed_others", num(f->sd_cond[i]));
        if (user_prior(spec, f->names[i])) {
            char buf[64];
            lt_prior_format(user_prior(spec, f->names[i]), buf, sizeof buf);
            cJSON_AddStringToObject(p, "prior", buf);
        }
        cJSON_AddItemToArray(names, cJSON_CreateString(f->names[i]));
    }
    cJSON *fi = cJSON_AddObjectToObject(o, "fisher");
    cJSON_AddItemToObject(fi, "names", names);
    cJSON_AddItemToObject(fi, "matrix", matrix_json(f->fisher, d));
    /* say what the matrix holds: the data's information plus 1/sd^2 on the
     * diagonal of each Gaussian prior (a user adding the matrix to another
     * probe's would count the prior twice); and give the data's alone */
    cJSON *with = cJSON_AddArrayToObject(fi, "includes_gaussian_priors");
    double data_only[LT_MAX_FREE * LT_MAX_FREE];
    memcpy(data_only, f->fisher, d * d * sizeof *data_only);
    for (size_t i = 0; i < d; i++) {
        const lt_prior *p = user_prior(spec, f->names[i]);
        if (p && p->kind == LT_PRIOR_GAUSS) {
            cJSON_AddItemToArray(with, cJSON_CreateString(f->names[i]));
            data_only[i * d + i] -= 1 / (p->b * p->b);
        }
    }
    cJSON_AddStringToObject(fi, "note",
                            "matrix = the data's Fisher matrix + 1/sd^2 on the diagonal for each "
                            "parameter in includes_gaussian_priors (uniform priors add nothing); "
                            "matrix_data_only leaves the priors out");
    cJSON_AddItemToObject(fi, "matrix_data_only", matrix_json(data_only, d));
    cJSON *cov = cJSON_AddObjectToObject(o, "covariance");
    cJSON_AddItemToObject(cov, "names", cJSON_Duplicate(names, 1));
    cJSON_AddItemToObject(cov, "matrix", matrix_json(f->cov, d));
    double cor[LT_MAX_FREE * LT_MAX_FREE];
    for (size_t i = 0; i < d; i++)
        for (size_t j = 0; j < d; j++)
            cor[i * d + j] = f->cov[i * d + j] / (f->sd[i] * f->sd[j]);
    cJSON_AddItemToObject(cov, "correlation", matrix_json(cor, d));
    if (f->has_w0wa) {
        cJSON *fom = cJSON_AddObjectToObject(o, "figure_of_merit");
        cJSON_AddItemToObject(fom, "value", num(f->fom));
        cJSON_AddStringToObject(fom, "definition",
                                "1/sqrt(det Cov(w0, wa)): the Dark Energy Task Force figure of "
                                "merit (Albrecht et al. 2006) in the normalisation stated by "
                                "Albrecht et al. 2009, arXiv:0901.0721");
        cJSON_AddItemToObject(fom, "z_pivot", num(f->z_pivot));
        cJSON_AddItemToObject(fom, "w_pivot_sd", num(f->w_pivot_sd));
    }
    return o;
}

void lt_forecast_print(FILE *out, const lt_scenario *sc, const lt_like_spec *spec,
                       const lt_forecast *f)
{
    size_t d = f->dim;
    fprintf(out, "forecast: %s design, %s, %zu objects (%s)\n", sc->name ? sc->name : "the",
            spec->model->name, f->n_data, lt_obs_name(sc->kind));
    if (f->K)
        fprintf(out, "Fisher matrix from the compressed likelihood (%zu knots)", f->K);
    else
        fprintf(out, "Fisher matrix from the exact likelihood");
    lt_offset_mode om = spec->offset == LT_OFFSET_DEFAULT
                            ? (sc->kind == LT_OBS_MAG ? LT_OFFSET_MARGINAL : LT_OFFSET_NONE)
                            : spec->offset;
    fprintf(out, ", offset %s\n\n", lt_offset_name(om));
    fprintf(out, "  %-10s %12s %12s %14s  %s\n", "parameter", "fiducial", "sigma",
            "sigma (fixed)", "prior");
    for (size_t i = 0; i < d; i++) {
        char pr[64] = "-";
        const lt_prior *p = user_prior(spec, f->names[i]);
        if (p && p->kind == LT_PRIOR_GAUSS)
            lt_prior_format(p, pr, sizeof pr);
        fprintf(out, "  %-10s %12.6g %12.4g %14.4g  %s\n", f->names[i], f->fiducial[i],
                f->sd[i], f->sd_cond[i], pr);
    }
    fputs("  (only Gaussian priors enter a Fisher matrix; uniform ones add nothing)\n", out);
    if (d > 1) {
        fprintf(out, "\ncorrelations:\n  %-10s", "");
        for (size_t j = 0; j < d; j++)
            fprintf(out, " %8s", f->names[j]);
        fputc('\n', out);
        for (size_t i = 0; i < d; i++) {
            fprintf(out, "  %-10s", f->names[i]);
            for (size_t j = 0; j < d; j++)
                fprintf(out, " %8.3f", f->cov[i * d + j] / (f->sd[i] * f->sd[j]));
            fputc('\n', out);
        }
    }
    if (f->has_w0wa)
        fprintf(out,
                "\nfigure of merit 1/sqrt(det Cov(w0, wa)) = %.4g\n"
                "  (the Dark Energy Task Force's, Albrecht et al. 2006, normalised as stated by\n"
                "  Albrecht et al. 2009, arXiv:0901.0721)\n"
                "pivot: z_p = %.3f, sigma(w_p) = %.4g\n",
                f->fom, f->z_pivot, f->w_pivot_sd);
}

int lt_forecast_write(const char *out, int force, const lt_scenario *sc,
                      const lt_like_spec *spec, const lt_forecast *f, const cJSON *json,
                      volatile sig_atomic_t *stop, lt_error *err)
{
    char what[128];
    snprintf(what, sizeof what, "lantern %s forecast", LT_VERSION);
    if (lt_outdir_prepare(out, force, err))
        return err->code;
    char *path = lt_path_join(out, "summary.json", err);
    int rc = path ? lt_report_write_json(path, json, err) : LT_ENOMEM;
    free(path);
    /* the ellipse of w0-wa, else of the first two parameters */
    size_t ix = 0, iy = 1, d = f->dim;
    for (size_t i = 0; f->has_w0wa && i < d; i++) {
        if (!strcmp(f->names[i], "w0"))
            ix = i;
        if (!strcmp(f->names[i], "wa"))
            iy = i;
    }
    if (!rc && d >= 2) {
        double cov[4] = {f->cov[ix * d + ix], f->cov[ix * d + iy], f->cov[iy * d + ix],
                         f->cov[iy * d + iy]};
        char name[128], title[256], model[96];
        snprintf(name, sizeof name, "ellipse_%s_%s", f->names[ix], f->names[iy]);
        lt_report_model_label(spec->model->name, LT_LABEL_PLOT, model, sizeof model);
        if (f->has_w0wa)
            snprintf(title, sizeof title, "%s, %s: FoM = %.3g", sc->name ? sc->name : "", model,
                     f->fom);
        else
            snprintf(title, sizeof title, "%s, %s", sc->name ? sc->name : "", model);
        rc = lt_report_write_ellipse(out, name, title, f->names[ix], f->names[iy],
                                     f->fiducial[ix], f->fiducial[iy], cov, err);
    }
    if (!rc && stop && *stop)
        rc = lt_error_set(err, LT_EINTR, NULL, 0, "interrupted");
    if (!rc)
        rc = lt_outdir_finish(out, what, err);
    if (rc)
        lt_outdir_abandon(out);
    return rc;
}
