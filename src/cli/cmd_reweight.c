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
    int given, status = cli_options(argc, argv, 1, "reweight", opts, &add,
                                    LT_JOB_DATA | LT_JOB_PARAMS | LT_JOB_OUTPUT, &given);
    lt_reweight_result r;
    memset(&r, 0, sizeof r);
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
    lt_reweight_opts o = {run, me, add.out, (int)nt, &hooks};
    lt_error err;
    lt_error_clear(&err);
    int rc = lt_pipeline_reweight(&add, &o, &r, &err);
    cli_progress_end(&pr);
    if (rc == LT_ENUMERIC && r.summary) {
        /* too few effective samples left: refused, with what is left said */
        cli_report(&err);
        status = CLI_UNCONVERGED;
    } else if (rc) {
        status = cli_report(&err);
    } else {
        const lt_reweight_info *in = &r.info;
        if (format == CLI_JSON) {
            cli_print_json(r.summary, 0);
        } else {
            lt_report_sample_table(stdout, r.like, &r.post, r.data);
            printf("\nreweighted from %s: %zu draws; effective sample size %.0f before, %.0f "
                   "after (Kish %.0f -> %.0f); Pareto k of the added terms' ratios %.2f; their "
                   "chi2 at the best fit %.2f\n",
                   run, in->draws, in->ess_before, in->ess_after, in->kish_before,
                   in->kish_after, in->pareto_k, in->chi2_added_best);
        }
        status = r.post.converged ? CLI_OK : CLI_UNCONVERGED;
    }
done:
    lt_reweight_result_free(&r);
    lt_job_free(&add);
    return status;
}
