/*
 * lantern: the command line. Dispatches to one subcommand; each lives in its
 * own cmd_*.c file and returns the process exit status. The process entry
 * is entry.c (bin/lantern) or mpi/main_mpi.c (bin/lantern-mpi).
 */
#include <string.h>

#include <cblas.h>
#include <gsl/gsl_errno.h>

#include "cli.h"

typedef struct {
    const char *name;
    const char *summary;
    int (*run)(int argc, char **argv);
    /* its help: the text, or (NULL) a printer, for a text with a list the
     * program makes */
    const char *help;
    void (*print_help)(FILE *f);
    /* stops in order on SIGINT, SIGTERM and SIGHUP: the signals are caught
     * before the command starts, so that no moment of a command that writes
     * files (the best fit before a sampler, say) is left to the default
     * action, which kills the process mid-write */
    int catches;
} cli_command;

static const cli_command commands[] = {
    {"distance", "distances, times and H(z) for one model at given redshifts",
     cli_distance, NULL, cli_distance_help, 0},
    {"inspect", "read a survey and describe it: size, redshifts, errors, covariance",
     cli_inspect, cli_help_inspect, NULL, 0},
    {"simulate", "simulate a survey from a scenario file", cli_simulate, cli_help_simulate, NULL,
     1},
    {"fit", "the best fit of a model to a survey, with Laplace errors", cli_fit, cli_help_fit,
     NULL, 1},
    {"sample", "the posterior by importance sampling or MCMC, with convergence checks and "
               "chain files", cli_sample, cli_help_sample, NULL, 1},
    {"reweight", "add a term (data, BAO, CMB, a measurement) to a finished posterior",
     cli_reweight, cli_help_reweight, NULL, 1},
    {"compare", "compare models: information criteria and Bayesian evidence", cli_compare,
     cli_help_compare, NULL, 1},
    {"run", "the whole job from a run file: fits, posteriors, comparison, report", cli_run,
     cli_help_run, NULL, 1},
    {"report", "rebuild tables and figures from saved runs", cli_report_runs, cli_help_report,
     NULL, 1},
    {"plot", "one figure of the posteriors of runs and tables of draws, overlaid", cli_plot,
     cli_help_plot, NULL, 0},
    {"bench", "time the likelihood on given data: rate, set-up, memory, accuracy", cli_bench,
     cli_help_bench, NULL, 0},
    {"campaign", "many tasks over data sets, models and methods: bias and coverage", cli_campaign,
     cli_help_campaign, NULL, 1},
    {"forecast", "Fisher forecast of a survey design: errors, figure of merit", cli_forecast,
     cli_help_forecast, NULL, 1},
};
#define NCOMMANDS (sizeof commands / sizeof commands[0])

static void usage(FILE *f)
{
    fputs(cli_help_main, f);
    for (size_t i = 0; i < NCOMMANDS; i++)
        fprintf(f, "  %-10s %s\n", commands[i].name, commands[i].summary);
    fputs(cli_help_main_tail, f);
}

void cli_setup(void)
{
    /* GSL's default error handler aborts the process; the library checks
     * GSL's return codes instead. Switched off once, here, before any
     * threads exist (DESIGN.md: third-party global state in one place). */
    gsl_set_error_handler_off();
    /* OpenBLAS may split a product over threads, and the split changes the
     * rounding; one thread keeps results identical on every machine
     * (DESIGN.md: a fixed thread count for threaded library routines). */
    openblas_set_num_threads(1);
}

static const cli_command *find(const char *name)
{
    for (size_t i = 0; i < NCOMMANDS; i++)
        if (strcmp(name, commands[i].name) == 0)
            return &commands[i];
    return NULL;
}

static void print_help(const cli_command *c)
{
    if (c->help)
        fputs(c->help, stdout);
    else
        c->print_help(stdout);
}

static int is_help_flag(const char *arg) { return !strcmp(arg, "-h") || !strcmp(arg, "--help"); }

static int print_version(void) { return printf("lantern %s\n", LT_VERSION), CLI_OK; }

int cli_help_answer(int argc, char **argv, int speak)
{
    const cli_command *c = find(argv[0]);
    /* the first of them counts ("fit --version --help" prints the version);
     * the word "help" is a command only in first place, not here, where it
     * may be a file's name */
    for (int i = 1; c && i < argc; i++) {
        int help = is_help_flag(argv[i]);
        if (!help && strcmp(argv[i], "--version") != 0)
            continue;
        if (speak && help)
            print_help(c);
        else if (speak)
            print_version();
        return 1;
    }
    return 0;
}

int cli_main(int argc, char **argv)
{
    cli_setup();

    if (argc < 2) {
        usage(stderr);
        return CLI_USAGE;
    }
    if (strcmp(argv[1], "--version") == 0)
        return print_version();
    /* lantern help [COMMAND], and -h or --help in its place */
    if (is_help_flag(argv[1]) || !strcmp(argv[1], "help")) {
        const cli_command *c = argc > 2 ? find(argv[2]) : NULL;
        if (argc > 3)
            return cli_usage_error(argv[1], "takes one command at most (see 'lantern --help')");
        if (argc > 2 && !c)
            return cli_usage_error(argv[1], "no command '%s' (see 'lantern --help')", argv[2]);
        if (c)
            print_help(c);
        else
            usage(stdout);
        return CLI_OK;
    }
    const cli_command *c = find(argv[1]);
    if (!c)
        return cli_usage_error(NULL, "unknown command '%s' (see 'lantern --help')", argv[1]);
    /* -h, --help and --version anywhere after the command, before any of
     * its work: a run file named before them is not read */
    if (cli_help_answer(argc - 1, argv + 1, 1))
        return CLI_OK;
    if (c->catches)
        cli_catch_signals();
    return c->run(argc - 1, argv + 1);
}
