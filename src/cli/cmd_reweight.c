/*
 * lantern reweight: a finished sample run's posterior with terms added (a
 * table, BAO, CMB, measurements), by importance reweighting of its draws.
 */
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "cli.h"
#include "lantern/report.h"

int cli_reweight(int argc, char **argv)
{
    lt_job add;
    lt_job_init(&add);
    const char *run = NULL, *min_ess = NULL, *threads = NULL;
    const cli_opt opts[] = {{"", .text = &run},
                            {"--min-ess", .text = &min_ess},
                            {"--threads", .text = &threads},
                            {0}};
    int given, status = cli_options(argc, argv, 1, "reweight", cli_help_reweight, opts, &add,
                                    LT_JOB_DATA | LT_JOB_PARAMS | LT_JOB_OUTPUT, &given);
    lt_posterior post;
    memset(&post, 0, sizeof post);
    cJSON *json = NULL;
    if (status)
        goto done;
    if (!run) {
        status = cli_usage_error("reweight", "give the folder of a finished sample run: "
                                             "lantern reweight RUNDIR TERMS");
        goto done;
    }
    if (add.npriors || add.nfixes) {
        status = cli_usage_error(add.npriors ? "--prior" : "--fix",
                                 "reweight adds terms to the likelihood; the run's priors and "
                                 "fixed values stay as they were sampled");
        goto done;
    }
    double me = 0.0;
    long nt = 0;
    if (min_ess && (lt_parse_double(min_ess, &me) || !(me > 0.0))) {
        status = cli_usage_error("--min-ess", "'%s' is not a positive number", min_ess);
        goto done;
    }
    if (threads && lt_parse_long(threads, 0, 256, &nt)) {
        status = cli_usage_error("--threads", "'%s' is not a whole number from 0 to 256", threads);
        goto done;
    }
    cli_format format;
    if ((status = cli_parse_format(add.format, (1u << CLI_TABLE) | (1u << CLI_JSON), &format)))
        goto done;
    cli_progress pr;
    lt_pipeline_hooks hooks = cli_progress_start(&pr, &add);
    lt_reweight_opts o = {run, me, add.out, (int)nt, format == CLI_TABLE ? stdout : NULL, &hooks};
    lt_reweight_info info;
    lt_error err;
    lt_error_clear(&err);
    int rc = lt_pipeline_reweight(&add, &o, &post, &json, &info, &err);
    cli_progress_end(&pr);
    if (rc == LT_ENUMERIC && json) {
        /* too few effective samples left: refused, with what is left said */
        cli_report(&err);
        status = CLI_UNCONVERGED;
    } else if (rc) {
        status = cli_report(&err);
    } else {
        if (format == CLI_JSON)
            cli_print_json(json, 0);
        status = post.converged ? CLI_OK : CLI_UNCONVERGED;
    }
done:
    cJSON_Delete(json);
    lt_posterior_free(&post);
    lt_job_free(&add);
    return status < 0 ? CLI_OK : status;
}
