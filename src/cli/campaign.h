/*
 * Internal to the command line: how lantern campaign hands its tasks to a
 * runner. The plain binary runs them one after another in this process
 * (cmd_campaign.c); bin/lantern-mpi spreads them over Open MPI ranks
 * (mpi/main_mpi.c). Both take tasks from the same queue and finish each
 * through cli_campaign_task and cli_campaign_finished, so the records and
 * the summary are the same whichever ran them.
 */
#ifndef LANTERN_CLI_CAMPAIGN_H
#define LANTERN_CLI_CAMPAIGN_H

#include <cjson/cJSON.h>

#include "cli.h"

typedef struct cli_campaign {
    lt_campaign c;
    const char *out;
    lt_campaign_queue q;
    cJSON **results;         /* per task: its record once finished (ok or failed) */
    int threads, quiet;
    volatile sig_atomic_t *stop;
    int interrupted;
    size_t finished_now;     /* tasks finished in this run (not resumed ones) */
    size_t to_run;           /* tasks this run has to do */
} cli_campaign_state;

typedef struct cli_campaign_runner {
    const char *name;
    /* Run every task of the queue; LT_OK, or LT_EINTR if interrupted. */
    int (*run)(cli_campaign_state *cc);
    /* Whether every process says ok (a collective step under MPI, so that
     * one rank's bad start stops all of them instead of leaving them waiting). */
    int (*agree)(int ok);
} cli_campaign_runner;

/*
 * Run task index (attempt 1 or 2) where the caller is: returns its record
 * as JSON text (a new string), with "where" (rank, host, seconds, attempt),
 * and writes it to OUT/tasks/. *code is the task's status (LT_OK, LT_EINTR,
 * or the error of a failed task, whose record says what failed).
 */
char *cli_campaign_task(cli_campaign_state *cc, size_t index, int attempt, int rank, int *code);

/* On the scheduling process: task index ended with this record; prints a
 * progress line and returns 1 if the task goes back to the queue. */
int cli_campaign_finished(cli_campaign_state *cc, size_t index, int code, const char *text);

/* lantern campaign, with the given runner: is_root says whether this
 * process writes the summary (rank 0) or only runs tasks. */
int cli_campaign_main(int argc, char **argv, const cli_campaign_runner *runner, int is_root);

#endif
