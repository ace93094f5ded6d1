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
    cJSON *o = lt_forecast_json(&sc, &spec, &f);
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
        cli_print_json(o, 0);
    } else
        lt_forecast_print(stdout, &sc, &spec, &f);
    cJSON_Delete(o);
done:
    lt_scenario_free(&sc);
    return status;
}
