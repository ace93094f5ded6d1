/*
 * lantern simulate: a synthetic survey from a scenario file, written as the
 * files a real release would ship.
 */
#include <string.h>

#include "cli.h"
#include "lantern/simulate.h"

static void usage(FILE *f)
{
    fputs("usage: lantern simulate SCENARIO.ini --out DIR [--force]\n"
          "\n"
          "Simulate a survey and write it to DIR: survey.csv and survey.fits (columns\n"
          "id, tier, z, zhel, the observable, err), covariance.txt (the systematic\n"
          "covariance as 'N then N*N values'; covariance.fits above 2000 objects and\n"
          "none above 10000, where the modes alone carry it),\n"
          "modes.csv (the same systematics as one mode per tier) and truth.json.\n"
          "Fit it with --cov covariance.txt or with --modes modes.csv, not both: they\n"
          "describe the same matrix. The same scenario and seed give the same files.\n"
          "\n"
          "options:\n"
          "  --out DIR   the output folder: new or empty, or an earlier lantern output\n"
          "              with --force\n"
          "  --force     replace an earlier lantern output in DIR\n"
          "  --help      this text\n"
          "\n"
          "scenario file (INI; '#' or ';' start comments):\n"
          "  [survey]\n"
          "  name = NAME                  default: the file name\n"
          "  seed = S                     required, 0 to 4294967295\n"
          "  observable = mag             mu, mag (mu + offset) or dl (Mpc)\n"
          "  offset = -19.3               absolute magnitude M, for mag only\n"
          "  intrinsic_scatter = 0.1      mag\n"
          "  velocity_dispersion = 300    km/s: peculiar-velocity scatter\n"
          "                               (5/ln10)(sigma_v/c)(1+z)/(z(1+z/2)) in mag\n"
          "  solar_motion = 369           km/s: 1+zhel = (1+z)(1 + v cos(theta)/c)\n"
          "  [cosmology]\n"
          "  model = lcdm-flat            and any parameter of the model:\n"
          "  h0 = 70                      h0, omega_m, omega_de, w0, wa, t_cmb, n_eff\n"
          "  omega_m = 0.3\n"
          "  [tier.NAME]                  one section per tier, in any number\n"
          "  z_min = 0.01                 > 0\n"
          "  z_max = 0.1\n"
          "  count = 200\n"
          "  error = 0.1                  measurement error, mag\n"
          "  calibration = 0.01           amplitude of the tier's shared offset, mag [0]\n"
          "  spread = volume              redshifts follow the comoving volume, or uniform\n",
          f);
}

int cli_simulate(int argc, char **argv)
{
    const char *scenario = NULL, *out = NULL;
    int force = 0;
    cli_args a = cli_args_start(argc, argv, 1);
    while (cli_args_more(&a)) {
        const char *v;
        if (cli_flag(&a, "--help")) {
            usage(stdout);
            return CLI_OK;
        } else if (cli_take(&a, "--out", &v)) {
            out = v;
        } else if (cli_flag(&a, "--force")) {
            force = 1;
        } else if (!scenario && (v = cli_positional(&a))) {
            scenario = v;
        } else {
            return cli_args_unknown(&a, "simulate");
        }
    }
    if (a.failed)
        return CLI_USAGE;
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
    int status = CLI_OK;
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
        printf("read it with: --data %s/survey.csv --columns z=z,zhel=zhel,%s=%s,err=err,id=id "
               "%s %s/%s\n",
               out, lt_obs_name(sc.kind), lt_obs_name(sc.kind), cov ? "--cov" : "--modes", out,
               cov ? cov : "modes.csv");
    }
    lt_sim_free(&sim);
    lt_scenario_free(&sc);
    return status;
}
