/*
 * lantern forecast: the Fisher matrix of a survey design, its marginal
 * errors and the dark-energy figure of merit, before any data exist.
 */
#include <cjson/cJSON.h>

#include "cli.h"

int cli_forecast(int argc, char **argv)
{
    const char *file = NULL, *model = NULL, *fmt = "table", *out = NULL;
    int force = 0, exact = 0;
    const cli_opt opts[] = {{"--model", .text = &model}, {"--format", .text = &fmt},
                            {"--out", .text = &out},     {"--force", .flag = &force},
                            {"--exact", .flag = &exact}, {"", .text = &file},
                            {0}};
    int status = cli_options(argc, argv, 1, "forecast", opts, NULL, 0, NULL);
    if (status)
        return status;
    if (!file) {
        fputs(cli_help_forecast, stderr);
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
    lt_forecast f;
    spec.exact = exact;
    if (model && !(spec.model = cli_model(model)))
        status = CLI_USAGE;
    else if (lt_forecast_run(&sc, &spec, &f, &err))
        status = cli_report(&err);
    else {
        cJSON *o = lt_forecast_json(&sc, &spec, &f);
        if (out && lt_forecast_write(out, force, &sc, &spec, &f, o, cli_catch_signals(), &err))
            status = cli_report(&err);
        else if (format == CLI_JSON)
            cli_print_json(o, 0);
        else
            lt_forecast_print(stdout, &sc, &spec, &f);
        cJSON_Delete(o);
    }
    lt_scenario_free(&sc);
    return status;
}
