/*
 * Internal to the command line: how lantern campaign hands its tasks to a
 * runner. The plain binary runs them one after another in this process
 * (cmd_campaign.c); bin/lantern-mpi spreads them over Open MPI ranks
 * (mpi/main_mpi.c). Both take tasks from the same queue and finish each
 * through cli_campaign_task and cli_campaign_finished (lt_campaign_run_task
 * and lt_campaign_run_finished), so the records and the summary are the
 * same whichever ran them.
 */
#ifndef LANTERN_CLI_CAMPAIGN_H
#define LANTERN_CLI_CAMPAIGN_H

#include "cli.h"

/* The campaign and its run (lt_campaign_run: queue, records, folder), and
 * what only the command line needs. */
typedef struct cli_campaign {
    lt_campaign c;
    lt_campaign_run run;
    int quiet;
} cli_campaign_state;

typedef struct cli_campaign_runner {
    const char *name;
    /* Run every task of the queue; LT_OK, or LT_EINTR if interrupted. */
    int (*run)(cli_campaign_state *cc);
    /* Whether every process says ok (a collective step under MPI, so that
     * one rank's bad start stops all of them instead of leaving them waiting). */
    int (*agree)(int ok);
} cli_campaign_runner;

/* lt_campaign_run_task with the test hook of the retry
 * (LANTERN_TEST_FAIL_ONCE) and a failed write reported on stderr. */
char *cli_campaign_task(cli_campaign_state *cc, size_t index, int attempt, int rank, int *code);

/* On the scheduling process: task index ended with this record
 * (lt_campaign_run_finished); prints a progress line and returns 1 if the
 * task goes back to the queue. */
int cli_campaign_finished(cli_campaign_state *cc, size_t index, int code, const char *text);

/* lantern campaign, with the given runner: is_root says whether this
 * process writes the summary (rank 0) or only runs tasks. */
int cli_campaign_main(int argc, char **argv, const cli_campaign_runner *runner, int is_root);

#endif
