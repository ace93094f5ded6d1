/*
 * Internal to the command line: argument scanning, error printing, exit
 * codes. The command line holds no numerics; it parses, calls the library
 * and prints.
 */
#ifndef LANTERN_CLI_H
#define LANTERN_CLI_H

#include <signal.h>
#include <stdio.h>

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

/* Print "lantern: WHERE: message" to stderr and return CLI_USAGE. */
int cli_usage_error(const char *where, const char *fmt, ...)
    __attribute__((format(printf, 2, 3)));

/*
 * Scanning options: "--name VALUE" and "--name=VALUE". Use as
 *
 *     cli_args a = cli_args_start(argc, argv, 1);
 *     while (cli_args_more(&a)) {
 *         if (cli_take(&a, "--model", &value)) ...;
 *         else if (cli_flag(&a, "--help")) ...;
 *         else return cli_args_unknown(&a, "distance");
 *     }
 *     if (a.failed) return CLI_USAGE;
 */
typedef struct cli_args {
    int argc;
    char **argv;
    int i;
    int failed; /* a value was missing; the message is already printed */
} cli_args;

cli_args cli_args_start(int argc, char **argv, int first);
int cli_args_more(const cli_args *a);
/* The current argument, if it does not start with "--" (a positional). */
const char *cli_positional(cli_args *a);
int cli_take(cli_args *a, const char *name, const char **value);
int cli_flag(cli_args *a, const char *name);
int cli_args_unknown(const cli_args *a, const char *command);

/* Output formats. */
typedef enum { CLI_TABLE, CLI_CSV, CLI_JSON } cli_format;
/* Parse "table", "csv" or "json" (those allowed by mask, bits 1 << format);
 * any other text is reported as a usage error naming the allowed ones. */
int cli_parse_format(const char *text, unsigned allowed, cli_format *out);

/* The DATA options (DESIGN.md): if the current argument is one, take it
 * into spec and return 1 (a->failed is set for a bad value). */
int cli_take_data(cli_args *a, lt_survey_spec *spec);
/* Print the survey's warnings to stderr. */
void cli_print_warnings(const lt_survey *s);

/* A fitting job: the run file, then the flags that override it (job.c). */
#define CLI_MAX_PAR 32
typedef struct cli_kv {
    const char *name, *value;
    const char *file; /* the run file it came from, NULL for a flag */
    long line;
} cli_kv;

typedef struct cli_job {
    lt_ini *ini;     /* the run file, or NULL */
    char *pool[128]; /* strings made while reading it */
    size_t npool;
    const char *name;
    lt_survey_spec data;
    int cov_from_flags;
    const char *model, *offset;
    cli_kv priors[CLI_MAX_PAR], fixes[CLI_MAX_PAR], measures[CLI_MAX_PAR];
    size_t npriors, nfixes, nmeasures;
    unsigned long seed;
    long starts;
    const char *out, *format;
    int force;
    /* sampler ([sampler] in the run file) */
    long chains, threads, warmup, check_every, max_steps;
    double target_ess;
    int quiet, verbose;
    const char *models; /* [run] models: a comma-separated list (lantern run) */
    int lenient;        /* priors and fixes apply to the models that have them */
} cli_job;

void cli_job_init(cli_job *j);
void cli_job_free(cli_job *j);
/* Read RUN.ini into j; prints any error and returns the exit status. */
int cli_job_load(cli_job *j, const char *path);
/* The same, with "section.key=value" overrides applied first (run's
 * --override; flags[i] names the flag each came from, for errors). */
int cli_job_load_sets(cli_job *j, const char *path, const char *const *sets,
                      const char *const *flags, size_t nsets);
/* Make the data paths absolute, so that summaries name them from anywhere. */
void cli_job_absolute(cli_job *j);
/* Sample one model into out (a folder: summary.json, chains, checkpoint);
 * resume continues from out's checkpoint; print writes the summary to
 * stdout in format. Returns the exit status. */
int cli_sample_model(cli_job *j, lt_like *l, const lt_like_spec *spec, const char *out,
                     int resume, int print, cli_format format);
/* If the current argument is a DATA, MODEL or output option, take it. */
int cli_take_job(cli_args *a, cli_job *j);
/* j's survey into *s; none (NULL) when no --data is given but j has a
 * measurement (the likelihood then has other terms; other survey options
 * are then an error). LT_OK or err's code. */
int cli_job_survey(const cli_job *j, lt_survey **s, lt_error *err);
/* The likelihood spec for model m from j's priors, fixes, measurements and offset;
 * prints any error and returns the exit status. */
int cli_job_like_spec(const cli_job *j, const lt_cosmo_model *m, lt_like_spec *spec);
/* The model of j (required) and its likelihood spec; prints any error and
 * returns the exit status. */
int cli_job_model(const cli_job *j, const char *command, lt_like_spec *spec);

/* The whole command line: set-up, then the command argv[1]. */
int cli_main(int argc, char **argv);
/* The set-up every entry does once: third-party global state (main.c). */
void cli_setup(void);

/* Commands. */
int cli_distance(int argc, char **argv);
int cli_inspect(int argc, char **argv);
int cli_simulate(int argc, char **argv);
int cli_fit(int argc, char **argv);
int cli_sample(int argc, char **argv);
int cli_run(int argc, char **argv);
int cli_compare(int argc, char **argv);
int cli_bench(int argc, char **argv);
int cli_campaign(int argc, char **argv);
int cli_forecast(int argc, char **argv);
/* Nested sampling of l's posterior (spec: what l was made from) with live
 * points (compare.c). With a checkpoint path: a checkpoint there is
 * continued if its fingerprint (data, model, priors, seed, live points)
 * matches and refused if not, an interruption (*stop set) saves the state
 * there and returns LT_EINTR, and a finished run saves its final state there
 * too, so that a resumed comparison does not redo it. */
int cli_nested_model(const lt_like *l, long live, uint64_t seed,
                     int threads, const char *checkpoint, volatile sig_atomic_t *stop,
                     lt_nested_result *r, lt_error *err);

/* Ctrl-C, SIGTERM and SIGHUP set the flag returned, for the samplers to
 * stop at their next safe point (job.c). */
volatile sig_atomic_t *cli_catch_signals(void);

/* Checkpoint fingerprints (fingerprint.c): FNV-1a digests, in parts, of
 * the data as read (n, z, zhel, observations), the whole covariance
 * (lt_cov_digest), the model with its priors, fixed values and offset
 * mode, and the caller's settings (seed, sampler options). */
enum { CLI_FP_DATA, CLI_FP_COV, CLI_FP_MODEL, CLI_FP_SETTINGS, CLI_FP_NPARTS };
typedef struct cli_fingerprint {
    uint64_t part[CLI_FP_NPARTS];
} cli_fingerprint;
/* The data, covariance and model parts; settings left at the empty digest
 * for the caller to add to. */
void cli_fingerprint_like(const lt_like *l, cli_fingerprint *fp);
/* The one number the samplers store: the digest of the parts. */
uint64_t cli_fingerprint_value(const cli_fingerprint *fp);
/* cli_fingerprint_value of cli_fingerprint_like, for callers with no parts file. */
uint64_t cli_like_fingerprint(const lt_like *l);
/* Append the parts to a checkpoint's settings.ini (cli_job_write's file) as
 * a comment line, rewriting it atomically; and check them on --resume:
 * LT_OK if the file has no such line (an older checkpoint) or every part
 * matches, else LT_EINPUT naming the parts that differ ("the checkpoint
 * belongs to another run: the covariance differs ..."). */
int cli_fingerprint_write(const char *settings, const cli_fingerprint *fp, lt_error *err);
int cli_fingerprint_check(const char *settings, const cli_fingerprint *fp, lt_error *err);
/* Kass & Raftery 1995's words for |2 ln B|: bare mention, positive, strong, very strong. */
const char *cli_kass_raftery(double two_ln_b);
int cli_report_runs(int argc, char **argv);
/* Write j, with its final likelihood spec, as a run file (absolute paths),
 * for --resume. */
int cli_job_write(const cli_job *j, const lt_like_spec *spec, const char *path, lt_error *err);

#endif
