/*
 * bin/lantern-mpi: lantern with campaigns spread over Open MPI ranks.
 *
 *     mpirun -np P bin/lantern-mpi campaign CAMPAIGN.ini --out DIR
 *
 * Rank 0 schedules: it hands the next task of the queue to whichever
 * worker (ranks 1 .. P-1) is free, collects each record and writes the
 * summary. Workers run a task at a time (OpenMP threads inside it) and
 * write its record to DIR/tasks/ themselves, so DIR must be on a file
 * system every rank sees (as on any cluster with a shared home or scratch
 * space). Tasks are pure functions of the campaign and their index, so the
 * records, and the summary, are the same for any P and any order of
 * completion. With P = 1, or for any other command, this is bin/lantern.
 *
 * Waiting ranks poll with MPI_Iprobe and sleep between polls: Open MPI's
 * blocking receives spin on a core, which would take that core from the
 * tasks on a machine with few cores.
 *
 * Messages: rank 0 -> worker: TAG_TASK with {index, attempt} (two longs),
 * or TAG_STOP. Worker -> rank 0: TAG_RESULT with "index code\n" and the
 * record's JSON text (none for an interrupted task).
 */
#include <mpi.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "../campaign.h"

enum { TAG_TASK = 1, TAG_STOP = 2, TAG_RESULT = 3 };

static int world_rank, world_size;

/* Wait for a message with tag (or any tag) from source, without spinning. */
static void wait_message(int source, int tag, MPI_Status *st)
{
    const struct timespec nap = {0, 2000000}; /* 2 ms */
    for (;;) {
        int flag = 0;
        MPI_Iprobe(source, tag, MPI_COMM_WORLD, &flag, st);
        if (flag)
            return;
        nanosleep(&nap, NULL);
    }
}

static int mpi_agree(int ok)
{
    int all = 0;
    MPI_Allreduce(&ok, &all, 1, MPI_INT, MPI_MIN, MPI_COMM_WORLD);
    return all;
}

static void send_task(int worker, long index, long attempt)
{
    long msg[2] = {index, attempt};
    MPI_Send(msg, 2, MPI_LONG, worker, TAG_TASK, MPI_COMM_WORLD);
}

static int scheduler(cli_campaign_state *cc)
{
    int nworkers = world_size - 1, nidle = 0, interrupted = 0;
    int *idle = malloc((size_t)nworkers * sizeof *idle);
    if (!idle)
        MPI_Abort(MPI_COMM_WORLD, CLI_FAILED);
    for (int w = world_size - 1; w >= 1; w--)
        idle[nidle++] = w;
    for (;;) {
        while (nidle > 0 && !interrupted && !*cc->run.stop) {
            long i = lt_campaign_queue_take(&cc->run.q);
            if (i < 0)
                break;
            send_task(idle[--nidle], i, cc->run.q.attempts[i]);
        }
        if (cc->run.q.running == 0)
            break; /* nothing out: all done, or stopping */
        MPI_Status st;
        wait_message(MPI_ANY_SOURCE, TAG_RESULT, &st);
        int len = 0;
        MPI_Get_count(&st, MPI_CHAR, &len);
        char *buf = malloc((size_t)len + 1);
        if (!buf)
            MPI_Abort(MPI_COMM_WORLD, CLI_FAILED);
        MPI_Recv(buf, len, MPI_CHAR, st.MPI_SOURCE, TAG_RESULT, MPI_COMM_WORLD,
                 MPI_STATUS_IGNORE);
        buf[len] = '\0';
        long index = -1;
        int code = LT_EIO, used = 0;
        if (sscanf(buf, "%ld %d\n%n", &index, &code, &used) < 2 || index < 0 ||
            (size_t)index >= cc->c.ntasks) {
            fprintf(stderr, "lantern-mpi: a garbled message from rank %d\n", st.MPI_SOURCE);
            MPI_Abort(MPI_COMM_WORLD, CLI_FAILED);
        }
        if (code == LT_EINTR) {
            interrupted = 1;
            cc->run.q.running--;
        } else
            cli_campaign_finished(cc, (size_t)index, code, buf + used);
        free(buf);
        idle[nidle++] = st.MPI_SOURCE;
    }
    for (int w = 1; w < world_size; w++)
        MPI_Send(NULL, 0, MPI_LONG, w, TAG_STOP, MPI_COMM_WORLD);
    free(idle);
    return interrupted || *cc->run.stop ? LT_EINTR : LT_OK;
}

static int worker(cli_campaign_state *cc)
{
    for (;;) {
        MPI_Status st;
        wait_message(0, MPI_ANY_TAG, &st);
        long msg[2] = {0, 0};
        MPI_Recv(msg, st.MPI_TAG == TAG_TASK ? 2 : 0, MPI_LONG, 0, st.MPI_TAG, MPI_COMM_WORLD,
                 MPI_STATUS_IGNORE);
        if (st.MPI_TAG == TAG_STOP)
            return LT_OK;
        int code = LT_OK;
        char *text = cli_campaign_task(cc, (size_t)msg[0], (int)msg[1], world_rank, &code);
        size_t n = (text ? strlen(text) : 0) + 64;
        char *buf = malloc(n);
        if (!buf)
            MPI_Abort(MPI_COMM_WORLD, CLI_FAILED);
        int len = snprintf(buf, n, "%ld %d\n%s", msg[0], code, text ? text : "");
        MPI_Send(buf, len, MPI_CHAR, 0, TAG_RESULT, MPI_COMM_WORLD);
        free(buf);
        free(text);
    }
}

static int mpi_run(cli_campaign_state *cc)
{
    return world_rank == 0 ? scheduler(cc) : worker(cc);
}

static const cli_campaign_runner mpi_runner = {"Open MPI", mpi_run, mpi_agree};

int main(int argc, char **argv)
{
    int provided = 0;
    /* only the main thread calls MPI; OpenMP threads inside tasks do not */
    MPI_Init_thread(&argc, &argv, MPI_THREAD_FUNNELED, &provided);
    MPI_Comm_rank(MPI_COMM_WORLD, &world_rank);
    MPI_Comm_size(MPI_COMM_WORLD, &world_size);
    int status;
    if (world_size == 1)
        status = cli_main(argc, argv);
    else if (argc >= 2 && !strcmp(argv[1], "campaign")) {
        cli_setup();
        /* only rank 0 speaks: the others would print the same words again */
        status = cli_help_answer(argc - 1, argv + 1, world_rank == 0)
                     ? CLI_OK
                     : cli_campaign_main(argc - 1, argv + 1, &mpi_runner, world_rank == 0);
        /* the outcome is rank 0's: the others only ran tasks */
        MPI_Bcast(&status, 1, MPI_INT, 0, MPI_COMM_WORLD);
    } else {
        if (world_rank == 0)
            fprintf(stderr, "lantern: only 'campaign' spreads over MPI ranks; run '%s' with "
                            "bin/lantern (or with mpirun -np 1)\n",
                    argc >= 2 ? argv[1] : "a command");
        status = CLI_USAGE;
    }
    MPI_Finalize();
    return status;
}
