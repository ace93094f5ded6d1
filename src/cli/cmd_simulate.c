/*
 * lantern simulate: a synthetic survey from a scenario file, written as the
 * files a real release would ship.
 */
#include <string.h>

#include "cli.h"
#include "lantern/simulate.h"

int cli_simulate(int argc, char **argv)
{
    const char *scenario = NULL, *out = NULL;
    int force = 0;
    const cli_opt opts[] = {
        {"--out", .text = &out}, {"--force", .flag = &force}, {"", .text = &scenario}, {0}};
    int status = cli_options(argc, argv, 1, "simulate", opts, NULL, 0, NULL);
    if (status)
        return status;
    if (!scenario)
        return cli_usage_error("simulate", "give a scenario file (see 'lantern simulate --help')");
    if (!out)
        return cli_usage_error("simulate", "--out DIR is required");
    lt_error err;
    lt_error_clear(&err);
    lt_scenario sc;
    if (lt_scenario_read(scenario, &sc, &err))
        return cli_report(&err);
    lt_sim sim;
    /* the folder first: refuse before the work, not after it */
    if (lt_outdir_prepare(out, force, &err)) {
        lt_scenario_free(&sc);
        return cli_report(&err);
    }
    if (lt_simulate(&sc, &sim, &err)) {
        lt_scenario_free(&sc);
        lt_outdir_abandon(out);
        return cli_report(&err);
    }
    char what[256];
    snprintf(what, sizeof what, "lantern %s simulate %s", LT_VERSION, scenario);
    if (*cli_catch_signals()) {
        fputs("lantern: interrupted: nothing written\n", stderr);
        status = CLI_FAILED;
        lt_outdir_abandon(out);
    } else if (lt_sim_write(&sc, &sim, out, &err) || lt_outdir_finish(out, what, &err)) {
        status = cli_report(&err);
        lt_outdir_abandon(out);
    } else {
        printf("simulated %zu objects of scenario %s (model %s, seed %lu) into %s/\n", sim.n,
               sc.name, sc.model->name, sc.seed, out);
        const char *cov = lt_sim_cov_name(sim.n);
        char columns[LT_SIM_COLUMNS_MAX];
        lt_sim_columns(&sim, columns, sizeof columns);
        /* without calibration offsets the systematic part is zero: a zero
         * --cov would only make the fit factor a dense matrix for nothing */
        int sys = 0;
        for (size_t t = 0; t < sc.ntiers; t++)
            sys |= sc.tiers[t].calibration > 0.0;
        printf("read it with: --data %s/survey.csv --columns %s", out, columns);
        if (sys)
            printf(" %s %s/%s", cov ? "--cov" : "--modes", out, cov ? cov : "modes.csv");
        printf("\n");
    }
    lt_sim_free(&sim);
    lt_scenario_free(&sc);
    return status;
}
