/*
 * lantern bench: how fast one likelihood evaluation is on given data, how
 * long the set-up takes, how much memory it needs, and how closely the
 * compressed path follows the exact one.
 */
#include "cli.h"
#include "lantern/report.h"

int cli_bench(int argc, char **argv)
{
    lt_job j;
    lt_job_init(&j);
    const char *evals_text = NULL, *fmt = NULL, *seed = NULL;
    int exact = 0, given;
    long evals = 20000;
    /* of the fit's and the output's flags only those that act here: bench
     * fits from 4 starts, writes no files and shows no progress, so
     * --starts, --out, --force, --quiet and --verbose are refused */
    const cli_opt opts[] = {{"--evals", .text = &evals_text},
                            {"--exact", .flag = &exact},
                            {"--format", .text = &fmt},
                            {"--seed", .text = &seed},
                            {0}};
    int status = cli_job_args(argc, argv, "bench", LT_JOB_DATA | LT_JOB_MODEL | LT_JOB_PARAMS,
                              opts, &j, &given);
    lt_error err;
    lt_error_clear(&err);
    if (fmt)
        j.format = fmt;
    /* --seed by the run description's rule, which names the flag */
    if (!status && seed && lt_job_flag(&j, "--seed", seed, &err))
        status = cli_report(&err);
    cli_format format;
    lt_like_spec spec;
    if (!status && evals_text && lt_parse_long(evals_text, 1, 1000000000, &evals))
        status = cli_usage_error("--evals", "'%s' is not a whole number >= 1", evals_text);
    if (status ||
        (status = cli_parse_format(j.format, (1u << CLI_TABLE) | (1u << CLI_JSON), &format)) ||
        (status = cli_job_model(&j, &spec)))
        goto done;
    spec.exact = exact;
    lt_bench b;
    if (lt_pipeline_bench(&j, &spec, evals, &b, &err))
        status = cli_report(&err);
    else if (format == CLI_JSON)
        cli_print_json(lt_report_bench_json(&b), 1);
    else
        lt_report_bench_table(stdout, &b);
done:
    lt_job_free(&j);
    return status;
}
