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
    /* stops in order on SIGINT, SIGTERM and SIGHUP: the signals are caught
     * before the command starts, so that no moment of a command that writes
     * files (the best fit before a sampler, say) is left to the default
     * action, which kills the process mid-write */
    int catches;
} cli_command;

static const cli_command commands[] = {
    {"distance", "distances, times and H(z) for one model at given redshifts",
     cli_distance, 0},
    {"inspect", "read a survey and describe it: size, redshifts, errors, covariance",
     cli_inspect, 0},
    {"simulate", "simulate a survey from a scenario file", cli_simulate, 1},
    {"fit", "the best fit of a model to a survey, with Laplace errors", cli_fit, 1},
    {"sample", "the posterior by importance sampling or MCMC, with convergence checks and "
               "chain files", cli_sample, 1},
    {"reweight", "add a term (data, BAO, CMB, a measurement) to a finished posterior",
     cli_reweight, 1},
    {"compare", "compare models: information criteria and Bayesian evidence", cli_compare, 1},
    {"run", "the whole job from a run file: fits, posteriors, comparison, report", cli_run, 1},
    {"report", "rebuild tables and figures from saved runs", cli_report_runs, 1},
    {"plot", "one figure of the posteriors of runs and tables of draws, overlaid", cli_plot, 0},
    {"bench", "time the likelihood on given data: rate, set-up, memory, accuracy", cli_bench, 0},
    {"campaign", "many tasks over data sets, models and methods: bias and coverage", cli_campaign,
     1},
    {"forecast", "Fisher forecast of a survey design: errors, figure of merit", cli_forecast, 1},
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

int cli_main(int argc, char **argv)
{
    cli_setup();

    if (argc < 2) {
        usage(stderr);
        return CLI_USAGE;
    }
    if (strcmp(argv[1], "--version") == 0) {
        printf("lantern %s\n", LT_VERSION);
        return CLI_OK;
    }
    if (strcmp(argv[1], "--help") == 0 || strcmp(argv[1], "-h") == 0 ||
        strcmp(argv[1], "help") == 0) {
        usage(stdout);
        return CLI_OK;
    }
    for (size_t i = 0; i < NCOMMANDS; i++)
        if (strcmp(argv[1], commands[i].name) == 0) {
            if (commands[i].catches)
                cli_catch_signals();
            return commands[i].run(argc - 1, argv + 1);
        }
    return cli_usage_error("lantern", "unknown command '%s' (see 'lantern --help')",
                           argv[1]);
}
