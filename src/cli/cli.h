/*
 * Internal to the command line: argument scanning, error printing, exit
 * codes. The command line holds no numerics; it parses, calls the library
 * and prints.
 */
#ifndef LANTERN_CLI_H
#define LANTERN_CLI_H

#include <signal.h>
#include <stdio.h>
#include <time.h>

#include "help.h"
#include "lantern/lantern.h"

/* Exit status (DESIGN.md). */
enum {
    CLI_OK = 0,
    CLI_FAILED = 1,     /* a run that failed or was interrupted */
    CLI_USAGE = 2,      /* bad input or bad usage */
    CLI_UNCONVERGED = 3 /* finished its budget without converging */
};

/* The exit status for a library status code. */
int cli_status(int code);

/* Print "lantern: FILE:LINE: message" for err to stderr; returns the exit
 * status for its code. */
int cli_report(const lt_error *err);

/* Print "lantern: WHERE: message" (where NULL: "lantern: message") to
 * stderr and return CLI_USAGE. */
int cli_usage_error(const char *where, const char *fmt, ...)
    __attribute__((format(printf, 2, 3)));

/*
 * A command's options, as a table ended by {NULL}:
 *     {"--out", .text = &out}       "--out DIR" or "--out=DIR" (the last given)
 *     {"--force", .flag = &force}   a switch: *flag = 1
 *     {"--set", .list = v, .n = &n, .max = 64}   every value in order (with
 *                                   .origin, the name each came with)
 *     {"", .text = &file}           the positional argument (.list: several)
 */
typedef struct cli_opt {
    const char *name;
    const char **text;
    int *flag;
    const char **list, **origin;
    size_t *n, max;
} cli_opt;
/* Scan argv[first..] by opts, then (j not NULL) the flags of the run
 * description (lantern/pipeline.h) in sections (LT_JOB_ bits; with
 * LT_JOB_OUTPUT also --quiet, --verbose and --force) into j, setting
 * *given (if not NULL). Returns the exit status, any usage error printed.
 * An argument that starts with '-' is never a positional one. (-h, --help
 * and --version never reach a command: cli_help_answer takes them first.) */
int cli_options(int argc, char **argv, int first, const char *command, const cli_opt *opts,
                lt_job *j, unsigned sections, int *given);
/* The same after RUN.ini, when argv[1] does not start with '-' (read into
 * j, and *given set, as by a run-description flag). */
int cli_job_args(int argc, char **argv, const char *command, unsigned sections,
                 const cli_opt *opts, lt_job *j, int *given);
/* lt_job_read, printing any error; returns the exit status. */
int cli_job_load(lt_job *j, const char *path, const char *const *overrides,
                 const char *const *origins, size_t n);
/* lt_job_model_spec, printing any error; returns the exit status. */
int cli_job_model(const lt_job *j, lt_like_spec *spec);
/* The model called name (lt_cosmo_model_lookup); NULL, the error printed. */
const lt_cosmo_model *cli_model(const char *name);

/* Output formats. */
typedef enum { CLI_TABLE, CLI_CSV, CLI_JSON } cli_format;
/* Parse "table", "csv" or "json" (those allowed by mask, bits 1 << format);
 * any other text is reported as a usage error naming the allowed ones. */
int cli_parse_format(const char *text, unsigned allowed, cli_format *out);

/* Print o as JSON on stdout (with a newline); take: delete it after. */
struct cJSON;
void cli_print_json(struct cJSON *o, int take);
/* The pipeline's notes (lt_pipeline_hooks.note; ctx a cli_notes) on
 * stderr: progress lines unless quiet, news always, warnings unless the
 * job silences their kind (job NULL: none silenced). */
typedef struct cli_notes {
    int quiet;
    const lt_job *job;
} cli_notes;
void cli_note(lt_note_kind kind, const char *id, const char *text, void *notes);
/* A warning of kind id (NULL: none) on stderr, "lantern: warning [ID]:
 * text", unless j silences the kind (--no-warn ID). */
void cli_warning(const lt_job *j, const char *id, const char *text);
/* The progress display of a sampling job (progress.c): hooks for the
 * pipeline that print a line per convergence check and, for chain files of
 * more than CLI_WRITING_MIN_ROWS rows, while writing them (in place on a
 * terminal; none with --quiet, every one with --verbose) and its notes;
 * cli_progress_end ends a pending line. */
#define CLI_WRITING_MIN_ROWS 100000
typedef struct cli_progress {
    struct timespec start;
    int tty, quiet, verbose;
    double target;
    int printed;
    const char *writing; /* the chain file whose line is pending, or NULL (a check's) */
    const lt_job *job;   /* its --no-warn */
} cli_progress;
lt_pipeline_hooks cli_progress_start(cli_progress *pr, const lt_job *j);
void cli_progress_end(cli_progress *pr);
/* Print the survey's warnings to stderr, but those j silences. */
void cli_print_warnings(const lt_survey *s, const lt_job *j);

/* The whole command line: set-up, then the command argv[1]; 'lantern help
 * [COMMAND]' (or -h, --help in its place) prints the help of COMMAND or
 * the list of commands. */
int cli_main(int argc, char **argv);
/* For the command argv[0]: if -h, --help or --version is among argv[1..]
 * (the first of them counts, wherever it stands), print (if speak) the
 * command's help or the version on stdout and return 1, the command not
 * to run (exit status 0); else 0. */
int cli_help_answer(int argc, char **argv, int speak);
/* lantern distance --help, with the list of models (cmd_distance.c). */
void cli_distance_help(FILE *f);
/* The set-up every entry does once: third-party global state (main.c). */
void cli_setup(void);

/* Commands. */
int cli_distance(int argc, char **argv);
int cli_inspect(int argc, char **argv);
int cli_simulate(int argc, char **argv);
int cli_fit(int argc, char **argv);
int cli_sample(int argc, char **argv);
int cli_reweight(int argc, char **argv);
int cli_run(int argc, char **argv);
int cli_compare(int argc, char **argv);
int cli_bench(int argc, char **argv);
int cli_campaign(int argc, char **argv);
int cli_forecast(int argc, char **argv);
int cli_plot(int argc, char **argv);
/* Ctrl-C, SIGTERM and SIGHUP set the flag returned, for the samplers to
 * stop at their next safe point (args.c). */
volatile sig_atomic_t *cli_catch_signals(void);

int cli_report_runs(int argc, char **argv);
#endif
