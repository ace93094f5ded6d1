/*
 * lantern forecast: the Fisher matrix of a survey design, its marginal
 * errors and the dark-energy figure of merit, before any data exist.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "cli.h"

static void usage(FILE *f)
{
    fputs(cli_help_forecast, f);
}

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

static cJSON *forecast_json(const lt_scenario *sc, const lt_like_spec *spec, const lt_forecast *f)
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

static void print_table(FILE *out, const lt_scenario *sc, const lt_like_spec *spec,
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

int cli_forecast(int argc, char **argv)
{
    const char *file = NULL, *model = NULL, *fmt = "table", *out = NULL;
    int force = 0, exact = 0;
    cli_args a = cli_args_start(argc, argv, 1);
    while (cli_args_more(&a)) {
        const char *v;
        if (cli_flag(&a, "--help")) {
            usage(stdout);
            return CLI_OK;
        } else if (cli_take(&a, "--model", &v))
            model = v;
        else if (cli_take(&a, "--format", &v))
            fmt = v;
        else if (cli_take(&a, "--out", &v))
            out = v;
        else if (cli_flag(&a, "--force"))
            force = 1;
        else if (cli_flag(&a, "--exact"))
            exact = 1;
        else if (!file && (v = cli_positional(&a)))
            file = v;
        else
            return cli_args_unknown(&a, "forecast");
    }
    if (a.failed)
        return CLI_USAGE;
    if (!file) {
        usage(stderr);
        return CLI_USAGE;
    }
    cli_format format;
    if (cli_parse_format(fmt, 1u << CLI_TABLE | 1u << CLI_JSON, &format))
        return CLI_USAGE;
    lt_scenario sc;
    lt_like_spec spec;
    lt_error err;
    lt_error_clear(&err);
    if (lt_forecast_read(file, &sc, &spec, &err))
        return cli_report(&err);
    int status = CLI_OK;
    if (model) {
        const lt_cosmo_model *m = lt_cosmo_model_find(model);
        if (!m) {
            status = cli_usage_error("--model", "unknown model '%s' (lcdm-flat, lcdm, wcdm-flat, "
                                                "wcdm, w0wa-flat, w0wa)",
                                     model);
            goto done;
        }
        spec.model = m;
    }
    spec.exact = exact;
    lt_forecast f;
    if (lt_forecast_run(&sc, &spec, &f, &err)) {
        status = cli_report(&err);
        goto done;
    }
    cJSON *o = forecast_json(&sc, &spec, &f);
    if (out) {
        char path[4200];
        snprintf(path, sizeof path, "%s/summary.json", out);
        char what[128];
        snprintf(what, sizeof what, "lantern %s forecast", LT_VERSION);
        int rc = lt_outdir_prepare(out, force, &err) || lt_report_write_json(path, o, &err);
        /* the ellipse of w0-wa, else of the first two parameters */
        size_t ix = 0, iy = 1;
        for (size_t i = 0; i < f.dim; i++) {
            if (f.has_w0wa && !strcmp(f.names[i], "w0"))
                ix = i;
            if (f.has_w0wa && !strcmp(f.names[i], "wa"))
                iy = i;
        }
        if (!rc && f.dim >= 2) {
            size_t d = f.dim;
            double cov[4] = {f.cov[ix * d + ix], f.cov[ix * d + iy], f.cov[iy * d + ix],
                             f.cov[iy * d + iy]};
            char name[128], title[256];
            snprintf(name, sizeof name, "ellipse_%s_%s", f.names[ix], f.names[iy]);
            if (f.has_w0wa)
                snprintf(title, sizeof title, "%s, %s: FoM = %.3g", sc.name ? sc.name : "",
                         spec.model->name, f.fom);
            else
                snprintf(title, sizeof title, "%s, %s", sc.name ? sc.name : "", spec.model->name);
            rc = lt_report_write_ellipse(out, name, title, f.names[ix],
                                         f.names[iy], f.fiducial[ix], f.fiducial[iy],
                                         cov, &err);
        }
        if (!rc && *cli_catch_signals())
            rc = lt_error_set(&err, LT_EINTR, NULL, 0, "interrupted");
        if (!rc)
            rc = lt_outdir_finish(out, what, &err);
        if (rc) {
            cJSON_Delete(o);
            status = cli_report(&err);
            lt_outdir_abandon(out);
            goto done;
        }
    }
    if (format == CLI_JSON) {
        char *text = cJSON_Print(o);
        if (text)
            puts(text);
        free(text);
    } else
        print_table(stdout, &sc, &spec, &f);
    cJSON_Delete(o);
done:
    lt_scenario_free(&sc);
    return status;
}
