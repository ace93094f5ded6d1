/*
 * lantern sample: the posterior by adaptive importance sampling or adaptive
 * Metropolis with parallel chains, convergence checks, chain files and
 * checkpoints; --resume continues a stopped run.
 */
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "cli.h"
#include "lantern/report.h"

/* Sample l into j's --out folder (continuing it with resume), print the
 * summary in format, and return the exit status. */
static int sample_model(lt_job *j, lt_like *l, const lt_like_spec *spec, int resume,
                        cli_format format)
{
    const char *out = j->out;
    lt_error err;
    lt_error_clear(&err);
    /* threads may be set differently on resume: the draws do not depend on it */
    cli_progress pr;
    lt_pipeline_hooks hooks = cli_progress_start(&pr, j);
    lt_sample_opts o = {out, resume, NULL, cli_catch_signals(), &hooks};
    lt_posterior post;
    cJSON *json = NULL;
    int stage, status = CLI_OK;
    int rc = lt_pipeline_sample(l, j, spec, &o, &post, &json, &stage, &err);
    cli_progress_end(&pr);
    if (rc == LT_EINTR) {
        if (stage == 0 && !strcmp(j->sampler, "mcmc"))
            fputs("lantern: interrupted during the best fit, before sampling began\n", stderr);
        else if (stage == 0)
            fputs("lantern: interrupted during the nested run that starts the importance "
                  "sampling, before sampling began\n",
                  stderr);
        else if (stage == 2)
            fputs("lantern: interrupted during the evidence; the checkpoints are kept\n", stderr);
        else if (out)
            fprintf(stderr, "lantern: interrupted; the checkpoint in %s/checkpoint holds every "
                            "draw so far: continue with 'lantern sample --resume %s'\n",
                    out, out);
        else
            fputs("lantern: interrupted (no --out folder, so nothing was saved)\n", stderr);
        status = CLI_FAILED;
    } else if (rc) {
        status = cli_report(&err);
    } else {
        if (format == CLI_JSON)
            cli_print_json(json, 0);
        else
            lt_report_sample_table(stdout, l, &post, &j->data);
        status = post.converged ? CLI_OK : CLI_UNCONVERGED;
    }
    cJSON_Delete(json);
    lt_posterior_free(&post);
    return status;
}

int cli_sample(int argc, char **argv)
{
    lt_job j;
    lt_job_init(&j);
    const char *resume = NULL, *fmt = NULL;
    int quiet = 0, verbose = 0, options, status;
    /* besides the run description's: these also go with --resume */
    const cli_opt opts[] = {{"--resume", .text = &resume}, {"--format", .text = &fmt},
                            {"--quiet", .flag = &quiet}, {"--verbose", .flag = &verbose}, {0}};
    lt_survey *s = NULL;
    lt_like *l = NULL;
    lt_error err;
    lt_error_clear(&err);
    status = cli_job_args(argc, argv, "sample",
                          LT_JOB_DATA | LT_JOB_MODEL | LT_JOB_PARAMS | LT_JOB_FIT |
                              LT_JOB_SAMPLER | LT_JOB_OUTPUT,
                          opts, &j, &options);
    if (status)
        goto done;
    if (resume && options) {
        status = cli_usage_error("--resume", "takes no other options than --format, --quiet and "
                                             "--verbose: the run's settings are in its "
                                             "checkpoint");
        goto done;
    }
    if (resume && lt_job_resume(&j, resume, "not a stopped lantern sample run", &err)) {
        status = cli_report(&err);
        goto done;
    }
    if (fmt)
        j.format = fmt;
    j.quiet |= quiet, j.verbose |= verbose;
    cli_format format;
    if ((status = cli_parse_format(j.format, (1u << CLI_TABLE) | (1u << CLI_JSON), &format)))
        goto done;
    lt_like_spec spec;
    if ((status = cli_job_model(&j, &spec)))
        goto done;
    if (lt_job_survey(&j, &s, &err) || !(l = lt_like_alloc(s, &spec, &err))) {
        status = cli_report(&err);
        goto done;
    }
    cli_print_warnings(s, &j);
    status = sample_model(&j, l, &spec, resume != NULL, format);
done:
    lt_like_free(l);
    lt_survey_free(s);
    lt_job_free(&j);
    return status;
}
