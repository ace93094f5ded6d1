/*
 * lantern distance: distances, times and H(z) for one model at a list of
 * redshifts, printed as a table, CSV or JSON, in the order given.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "lantern/report.h"

static void usage(FILE *f)
{
    fputs(cli_help_distance, f);
    for (size_t i = 0; i < lt_cosmo_model_count(); i++) {
        const lt_cosmo_model *m = lt_cosmo_model_at(i);
        fprintf(f, "                     %-10s %s\n", m->name, m->summary);
    }
    fputs(cli_help_distance_tail, f);
}

int cli_distance(int argc, char **argv)
{
    const char *model_name = NULL, *z_list = NULL, *z_range = NULL, *format_text = "table";
    const char *sets[64];
    int nsets = 0;
    cli_args a = cli_args_start(argc, argv, 1);
    while (cli_args_more(&a)) {
        const char *v;
        if (cli_flag(&a, "--help")) {
            usage(stdout);
            return CLI_OK;
        } else if (cli_take(&a, "--model", &v)) {
            model_name = v;
        } else if (cli_take(&a, "--set", &v)) {
            if (nsets == 64)
                return cli_usage_error("--set", "given more than 64 times");
            sets[nsets++] = v;
        } else if (cli_take(&a, "--z", &v)) {
            z_list = v;
        } else if (cli_take(&a, "--z-range", &v)) {
            z_range = v;
        } else if (cli_take(&a, "--format", &v)) {
            format_text = v;
        } else {
            return cli_args_unknown(&a, "distance");
        }
    }
    if (a.failed)
        return CLI_USAGE;
    cli_format format;
    int status = cli_parse_format(format_text, 7u, &format);
    if (status)
        return status;
    if (!model_name)
        return cli_usage_error("distance", "--model is required (see 'lantern distance "
                                           "--help' for the models)");
    const lt_cosmo_model *m = lt_cosmo_model_find(model_name);
    if (!m)
        return cli_usage_error("--model",
                               "unknown model '%s' (models: lcdm-flat, lcdm, wcdm-flat, "
                               "wcdm, w0wa-flat, w0wa)",
                               model_name);
    if (!z_list == !z_range)
        return cli_usage_error("distance", "give exactly one of --z and --z-range");

    lt_cosmo_params p;
    lt_cosmo_params_default(&p);
    unsigned seen = 0;
    lt_error err;
    for (int i = 0; i < nsets; i++)
        if (lt_cosmo_params_parse(&p, m, sets[i], &seen, "--set", &err))
            return cli_report(&err);

    lt_cosmo c;
    if (lt_cosmo_init(&c, m, &p, &err))
        return cli_report(&err);

    double *z = NULL;
    size_t n = 0;
    if (z_list ? lt_z_parse_list(z_list, "--z", &z, &n, &err)
               : lt_z_parse_range(z_range, "--z-range", &z, &n, &err))
        return cli_report(&err);

    double *block = malloc((8 * n + 1) * sizeof *block);
    lt_zgrid *g = NULL;
    if (!block) {
        status = cli_usage_error("distance", "out of memory for %zu redshifts", n);
        goto done;
    }
    lt_cosmo_table t = {block, block + n, block + 2 * n, block + 3 * n,
                        block + 4 * n, block + 5 * n, block + 6 * n, block + 7 * n};
    g = lt_zgrid_alloc(n, z, &err);
    if (!g) {
        status = cli_report(&err);
        goto done;
    }
    if (lt_cosmo_eval(&c, g, &t, &err)) {
        status = cli_report(&err);
        goto done;
    }
    if (format == CLI_TABLE)
        lt_report_distance_table(stdout, &c, n, z, &t);
    else if (format == CLI_CSV)
        lt_report_distance_csv(stdout, n, z, &t);
    else
        cli_print_json(lt_report_distance_json(&c, n, z, &t), 1);
    if (fflush(stdout) != 0 || ferror(stdout)) {
        fputs("lantern: distance: could not write the output\n", stderr);
        status = CLI_FAILED;
    }
done:
    lt_zgrid_free(g);
    free(block);
    free(z);
    return status;
}
