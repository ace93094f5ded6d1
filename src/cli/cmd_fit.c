/*
 * lantern fit: the best fit of a model to a survey, with Laplace errors.
 */
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "cli.h"
#include "lantern/report.h"

const char *cli_model_help =
    "model:\n"
    "  --model NAME        lcdm-flat, lcdm, wcdm-flat, wcdm, w0wa-flat or w0wa\n"
    "  --prior NAME=uniform:LO:HI | NAME=gauss:MEAN:SD   (repeatable)\n"
    "                      defaults: omega_m U(0,1), omega_de U(0,1.6), w0 U(-2,0),\n"
    "                      wa U(-3,2), h0 U(40,100), offset U(-21,-17) for mag data\n"
    "                      and U(-2,2) for mu data\n"
    "  --fix NAME=VALUE    hold a parameter (repeatable); t_cmb (radiation, off by\n"
    "                      default) and n_eff can only be fixed\n"
    "  --offset MODE       marginal (the default for mag data: the absolute magnitude\n"
    "                      is integrated out with a flat prior and h0 is held at 70),\n"
    "                      sampled (a fitted parameter; a --prior on offset implies it,\n"
    "                      and frees h0), or none (the default for mu and dl data)\n"
    "  --measure NAME=MEAN:SD  a Gaussian measurement of a parameter or derived\n"
    "                      quantity (omega_k, omega_de, q0, z_t, age_gyr), added to\n"
    "                      chi2 (repeatable; run file: [measurements] NAME = MEAN:SD),\n"
    "                      e.g. h0=73.04:1.04 or omega_k=0.001:0.002. --data may then be\n"
    "                      left out. h0 is free whenever a measurement depends on it;\n"
    "                      a model without the quantity shows it its fixed value\n"
    "                      (omega_k = 0 when flat, w0 = -1 in LCDM)\n"
    "omega_* are density fractions today (Omega_m, not Omega_m h^2).\n";

static void usage(FILE *f)
{
    fputs("usage: lantern fit [RUN.ini] DATA MODEL [--seed S] [--starts N]\n"
          "                   [--format table|json] [--out DIR] [--force]\n"
          "\n"
          "The best fit (maximum posterior) of a model to a survey: GSL's Nelder-Mead\n"
          "simplex from several seeded starts inside the prior, then a BFGS polish;\n"
          "errors from the Hessian (Laplace approximation); chi2, degrees of freedom,\n"
          "the chi2 probability, AIC and BIC; derived omega_k or omega_de, q0, z_t\n"
          "(deceleration to acceleration), w at the pivot for w0-wa models, and the\n"
          "age when h0 is known.\n"
          "\n",
          f);
    fputs(cli_data_help, f);
    fputs("\n", f);
    fputs(cli_model_help, f);
    fputs("\nfit:\n"
          "  --seed S            seed of the random starts [1]\n"
          "  --starts N          number of starts [8]\n"
          "  --format F          table (default) or json\n"
          "  --out DIR           also write DIR/summary.json and DIR/residuals.csv\n"
          "                      (id,z,zhel,observed,model,residual,pull)\n"
          "  --force             replace an earlier lantern output in DIR\n"
          "  --help              this text\n"
          "\n"
          "RUN.ini, if given first, supplies any of these; flags override it. Sections:\n"
          "  [run] name; [data] file, columns, cov (comma-separated), modes,\n"
          "  no_err_diag, zmin, zmax, keep_ids, drop_ids; [model] name, offset;\n"
          "  [priors] NAME = uniform:LO:HI; [fixed] NAME = VALUE; [measurements]\n"
          "  NAME = MEAN:SD; [fit] starts, seed;\n"
          "  [output] dir, format. Paths are relative to the run file's folder.\n"
          "\n"
          "exit status: 0 done, 2 bad input, 3 the optimiser did not converge\n",
          f);
}

int cli_fit(int argc, char **argv)
{
    lt_job j;
    lt_job_init(&j);
    int status = CLI_OK, first = 1, prepared = 0;
    lt_survey *s = NULL;
    lt_like *l = NULL;
    cJSON *json = NULL;
    if (argc > 1 && strncmp(argv[1], "--", 2) != 0) {
        if ((status = cli_job_load(&j, argv[1], NULL, NULL, 0)))
            goto done;
        first = 2;
    }
    cli_args a = cli_args_start(argc, argv, first);
    while (cli_args_more(&a)) {
        if (cli_flag(&a, "--help")) {
            usage(stdout);
            goto done;
        }
        if (!cli_take_job(&a, &j, LT_JOB_DATA | LT_JOB_MODEL | LT_JOB_PARAMS | LT_JOB_FIT | LT_JOB_OUTPUT)) {
            status = cli_args_unknown(&a, "fit");
            goto done;
        }
    }
    if (a.failed) {
        status = CLI_USAGE;
        goto done;
    }
    cli_format format;
    if ((status = cli_parse_format(j.format, (1u << CLI_TABLE) | (1u << CLI_JSON), &format)))
        goto done;
    lt_like_spec spec;
    if ((status = cli_job_model(&j, &spec)))
        goto done;
    lt_error err;
    lt_error_clear(&err);
    if (lt_job_survey(&j, &s, &err) || !(l = lt_like_alloc(s, &spec, &err)) ||
        (j.out && lt_outdir_prepare(j.out, j.force, &err))) {
        status = cli_report(&err);
        goto done;
    }
    prepared = j.out != NULL;
    cli_print_warnings(s);
    volatile sig_atomic_t *stop = cli_catch_signals();
    lt_fit_opts fo = {.seed = j.seed, .starts = (size_t)j.starts, .stop = stop};
    lt_fit_result r;
    if (lt_fit_run(l, &fo, &r, &err) || (*stop && lt_error_set(&err, LT_EINTR, NULL, 0, "interrupted"))) {
        if (err.code == LT_EINTR) {
            fprintf(stderr, "lantern: interrupted during the best fit: nothing written\n");
            status = CLI_FAILED;
        } else
            status = cli_report(&err);
        goto done;
    }
    if (!r.laplace_ok)
        fprintf(stderr, "lantern: warning: %s\n", r.laplace_note);
    json = lt_report_fit_json(l, &r, &j.data, j.seed);
    if (format == CLI_JSON) {
        char *text = cJSON_Print(json);
        printf("%s\n", text ? text : "{}");
        free(text);
    } else {
        lt_report_fit_table(stdout, l, &r, &j.data);
    }
    if (j.out) {
        char path[4096], what[128];
        snprintf(what, sizeof what, "lantern %s fit", LT_VERSION);
        snprintf(path, sizeof path, "%s/summary.json", j.out);
        int rc = lt_report_write_json(path, json, &err);
        snprintf(path, sizeof path, "%s/residuals.csv", j.out);
        if (!rc && s) /* residuals of the survey, where there is one */
            rc = lt_report_write_residuals(path, l, r.best, &err);
        if (!rc)
            rc = lt_outdir_finish(j.out, what, &err);
        if (rc) {
            status = cli_report(&err);
            goto done;
        }
    }
    if (!r.info.converged) {
        fputs("lantern: warning: the optimiser did not converge; the result is marked "
              "\"converged\": false\n",
              stderr);
        status = CLI_UNCONVERGED;
    }
done:
    if (prepared && status != CLI_OK && status != CLI_UNCONVERGED)
        lt_outdir_abandon(j.out);
    cJSON_Delete(json);
    lt_like_free(l);
    lt_survey_free(s);
    lt_job_free(&j);
    return status;
}
