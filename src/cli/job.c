/*
 * The run description on the command line: the flags of lantern/pipeline.h's
 * settings, taken from argv and handed to lt_job_flag (which holds the
 * rules), and the catching of signals.
 */
#include <signal.h>
#include <string.h>

#include "cli.h"

int cli_take_job(cli_args *a, lt_job *j, unsigned sections)
{
    const char *arg = a->argv[a->i], *v = NULL;
    if ((sections & LT_JOB_OUTPUT) && cli_flag(a, "--quiet"))
        return j->quiet = 1, 1;
    if ((sections & LT_JOB_OUTPUT) && cli_flag(a, "--verbose"))
        return j->verbose = 1, 1;
    if ((sections & LT_JOB_OUTPUT) && cli_flag(a, "--force"))
        return j->force = 1, 1;
    char flag[32];
    size_t n = strcspn(arg, "=");
    unsigned section;
    int takes;
    if (n >= sizeof flag)
        return 0;
    memcpy(flag, arg, n);
    flag[n] = '\0';
    /* a setting of a section this command does not read is not its flag */
    if (!lt_job_flag_find(flag, &section, &takes) || !(section & sections))
        return 0;
    if (takes ? !cli_take(a, flag, &v) : !cli_flag(a, flag))
        return 1; /* cli_take printed the missing value and set a->failed */
    lt_error err;
    lt_error_clear(&err);
    if (lt_job_flag(j, flag, v, &err)) {
        cli_report(&err);
        a->failed = 1;
    }
    return 1;
}

int cli_job_args(int argc, char **argv, const char *command, const char *help,
                 unsigned sections, int (*own)(cli_args *a, void *ctx), void *ctx, lt_job *j,
                 int *options)
{
    int first = 1, status;
    *options = 0;
    if (argc > 1 && strncmp(argv[1], "--", 2) != 0) {
        if ((status = cli_job_load(j, argv[1], NULL, NULL, 0)))
            return status;
        first = 2, *options = 1;
    }
    cli_args a = cli_args_start(argc, argv, first);
    while (cli_args_more(&a)) {
        if (cli_flag(&a, "--help")) {
            fputs(help, stdout);
            return -1;
        }
        if (own && own(&a, ctx))
            continue;
        if (!a.failed && !cli_take_job(&a, j, sections))
            return cli_args_unknown(&a, command);
        *options = 1;
    }
    return a.failed ? CLI_USAGE : CLI_OK;
}

int cli_job_load(lt_job *j, const char *path, const char *const *overrides,
                 const char *const *origins, size_t n)
{
    lt_error err;
    lt_error_clear(&err);
    return lt_job_read(j, path, overrides, origins, n, &err) ? cli_report(&err) : CLI_OK;
}

int cli_job_model(const lt_job *j, lt_like_spec *spec)
{
    lt_error err;
    lt_error_clear(&err);
    return lt_job_model_spec(j, spec, &err) ? cli_report(&err) : CLI_OK;
}

/* ---- interruption ---- */

/* The one piece of global state in lantern: set by the signal handler,
 * read by the samplers between steps (the library gets a pointer to it). */
static volatile sig_atomic_t stop_requested;

static void on_signal(int sig)
{
    (void)sig;
    stop_requested = 1;
}

volatile sig_atomic_t *cli_catch_signals(void)
{
    struct sigaction sa;
    memset(&sa, 0, sizeof sa);
    sa.sa_handler = on_signal;
    sigaction(SIGINT, &sa, NULL);
    sigaction(SIGTERM, &sa, NULL);
    sigaction(SIGHUP, &sa, NULL);
    return &stop_requested;
}
