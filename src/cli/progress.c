/*
 * The progress display of long jobs on stderr: a line per convergence
 * check of the chains or iteration of importance sampling, per progress
 * report of a nested run and, for large chain files, while writing them
 * (rewritten in place on a terminal, one after another with --verbose),
 * and the pipeline's notes, which end a pending line first. compare runs
 * models side by side, so the hooks may be called from several threads:
 * each line is written, and `printed` set, in one critical section.
 */
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "cli.h"


static double elapsed(const struct timespec *t0)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)(t.tv_sec - t0->tv_sec) + 1e-9 * (double)(t.tv_nsec - t0->tv_nsec);
}

static void on_check(const lt_progress *d, void *p)
{
    cli_progress *pr = p;
    if (pr->quiet || (!pr->tty && !pr->verbose))
        return;
    char line[256];
    lt_pipeline_progress_text(d, elapsed(&pr->start), pr->target, line, sizeof line);
    int inplace = pr->tty && !pr->verbose;
#pragma omp critical(cli_progress)
    {
        if (inplace && pr->printed && pr->writing)
            fputc('\n', stderr);
        pr->writing = NULL;
        fprintf(stderr, "%s%s%s", inplace ? "\r" : "", line, inplace ? "   " : "\n");
        pr->printed = 1;
    }
}

/* Rows of a chain file written: worth a line only for large files (a
 * second or more on a slow disk); each file its own line. */
static void on_writing(const char *file, size_t rows, size_t total, void *p)
{
    cli_progress *pr = p;
    if (pr->quiet || (!pr->tty && !pr->verbose) || total <= CLI_WRITING_MIN_ROWS)
        return;
    int inplace = pr->tty && !pr->verbose;
#pragma omp critical(cli_progress)
    {
        if (inplace && pr->printed && (!pr->writing || strcmp(pr->writing, file)))
            fputc('\n', stderr);
        pr->writing = file;
        fprintf(stderr, "%swriting %s: %zu of %zu rows (%.0f%%)%s", inplace ? "\r" : "", file,
                rows, total, 100.0 * (double)rows / (double)total, inplace ? "   " : "\n");
        pr->printed = 1;
    }
}

static void on_nested(const lt_nested_progress *d, void *p)
{
    cli_progress *pr = p;
    if (pr->quiet || (!pr->tty && !pr->verbose))
        return;
    char line[320];
    lt_pipeline_nested_text(d, line, sizeof line);
    int inplace = pr->tty && !pr->verbose;
#pragma omp critical(cli_progress)
    {
        if (inplace && pr->printed && pr->writing)
            fputc('\n', stderr);
        pr->writing = NULL;
        fprintf(stderr, "%s%s%s", inplace ? "\r" : "", line, inplace ? "   " : "\n");
        pr->printed = 1;
    }
}

/* A line from the pipeline: a refinement of the compression restarts the
 * sampling, so the progress clock restarts too. */
static void on_note(lt_note_kind kind, const char *id, const char *text, void *p)
{
    cli_progress *pr = p;
    if ((kind == LT_NOTE_PROGRESS && pr->quiet) ||
        (kind == LT_NOTE_WARNING && !lt_job_warning_shown(pr->job, id)))
        return;
#pragma omp critical(cli_progress)
    {
        if (pr->printed && pr->tty && !pr->verbose)
            fputc('\n', stderr);
        pr->printed = 0, pr->writing = NULL;
        if (kind == LT_NOTE_WARNING)
            cli_warning(NULL, id, text); /* shown: checked above */
        else
            fprintf(stderr, "%s%s\n", kind == LT_NOTE_NEWS ? "lantern: " : "", text);
        clock_gettime(CLOCK_MONOTONIC, &pr->start);
    }
}

lt_pipeline_hooks cli_progress_start(cli_progress *pr, const lt_job *j)
{
    *pr = (cli_progress){{0, 0}, isatty(2), j->quiet, j->verbose, j->target_ess, 0, NULL, j};
    clock_gettime(CLOCK_MONOTONIC, &pr->start);
    return (lt_pipeline_hooks){on_check, on_note, pr, on_writing, on_nested};
}

void cli_progress_end(cli_progress *pr)
{
    if (pr->printed && pr->tty && !pr->verbose)
        fputc('\n', stderr);
    pr->printed = 0, pr->writing = NULL;
}
