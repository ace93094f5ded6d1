/*
 * lantern distance: distances, times and H(z) for one model at a list of
 * redshifts, printed as a table, CSV or JSON, in the order given.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "lantern/report.h"

void cli_distance_help(FILE *f)
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
    size_t nsets = 0;
    const cli_opt opts[] = {{"--model", .text = &model_name},
                            {"--set", .list = sets, .n = &nsets, .max = 64},
                            {"--z", .text = &z_list},
                            {"--z-range", .text = &z_range},
                            {"--format", .text = &format_text},
                            {0}};
    cli_format format;
    int status = cli_options(argc, argv, 1, "distance", opts, NULL, 0, NULL);
    if (status || (status = cli_parse_format(format_text, 7u, &format)))
        return status;
    if (!model_name)
        return cli_usage_error("distance", "--model is required (see 'lantern distance "
                                           "--help' for the models)");
    const lt_cosmo_model *m = cli_model(model_name);
    if (!m)
        return CLI_USAGE;
    if (!z_list == !z_range)
        return cli_usage_error("distance", "give exactly one of --z and --z-range");

    lt_cosmo_params p;
    lt_cosmo_params_default(&p);
    unsigned seen = 0;
    lt_error err;
    for (size_t i = 0; i < nsets; i++)
        if (lt_cosmo_params_parse(&p, m, sets[i], &seen, "--set", &err))
            return cli_report(&err);

    if ((seen & (LT_PMASK(LT_P_M_NU) | LT_PMASK(LT_P_OMEGA_B_H2))) && p.t_cmb == 0.0)
        return cli_usage_error("--set", "m_nu and omega_b_h2 act only with radiation on: set "
                                        "t_cmb too (2.7255)");
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
    lt_cosmo_early early;
    lt_cosmo_early_eval(&c, &early);
    const lt_cosmo_early *e = c.p.t_cmb > 0.0 ? &early : NULL; /* radiation on */
    if (format == CLI_TABLE)
        lt_report_distance_table(stdout, &c, e, n, z, &t);
    else if (format == CLI_CSV)
        lt_report_distance_csv(stdout, n, z, &t);
    else
        cli_print_json(lt_report_distance_json(&c, e, n, z, &t), 1);
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
