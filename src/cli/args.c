/* Argument scanning, the run description's flags, and error printing. */
#include <signal.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "cli.h"

int cli_status(int code)
{
    return code == LT_OK ? CLI_OK
           : code == LT_EINPUT || code == LT_EDOMAIN ? CLI_USAGE
                                                     : CLI_FAILED;
}

int cli_report(const lt_error *err)
{
    char buf[LT_ERROR_MSG_MAX + LT_ERROR_FILE_MAX + 32];
    lt_error_format(err, buf, sizeof buf);
    fprintf(stderr, "lantern: %s\n", buf);
    return cli_status(err->code);
}

int cli_usage_error(const char *where, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    fputs("lantern: ", stderr);
    if (where)
        fprintf(stderr, "%s: ", where);
    vfprintf(stderr, fmt, ap);
    fputc('\n', stderr);
    va_end(ap);
    return CLI_USAGE;
}

/* ---- scanning: "--name VALUE", "--name=VALUE", "--switch", positionals ---- */

typedef struct {
    int argc;
    char **argv;
    int i;
    int failed; /* a value was missing or refused; the message is printed */
} scan;

/* Take "--name VALUE" or "--name=VALUE" at the current argument. */
static int take(scan *a, const char *name, const char **value)
{
    const char *s = a->argv[a->i];
    size_t n = strlen(name);
    if (strncmp(s, name, n) != 0 || (s[n] != '=' && s[n] != '\0'))
        return 0;
    if (s[n] == '=') {
        *value = s + n + 1;
        a->i++;
    } else if (a->i + 1 >= a->argc) {
        /* i stays: the scan ends with CLI_USAGE for the failure */
        cli_usage_error(name, "needs a value");
        a->failed = 1;
        return 0;
    } else {
        *value = a->argv[a->i + 1];
        a->i += 2;
    }
    return 1;
}

static int flag(scan *a, const char *name)
{
    return !strcmp(a->argv[a->i], name) && ++a->i;
}

/* Take the current argument by opt: 1 if taken (a->failed set for a list
 * given too often). */
static int take_opt(scan *a, const cli_opt *o, const char *command)
{
    const char *v = a->argv[a->i];
    if (!o->name[0]) { /* a positional: not a flag, and a free slot */
        if (v[0] == '-' || (o->text && *o->text))
            return 0;
        a->i++;
    } else if (o->flag)
        return flag(a, o->name) && (*o->flag = 1);
    else if (!take(a, o->name, &v))
        return 0;
    if (o->text)
        *o->text = v;
    else if (*o->n == o->max) {
        if (o->name[0])
            cli_usage_error(o->name, "given more than %zu times", o->max);
        else
            cli_usage_error(command, "at most %zu arguments besides the options", o->max);
        a->failed = 1;
    } else {
        if (o->origin)
            o->origin[*o->n] = o->name;
        o->list[(*o->n)++] = v;
    }
    return 1;
}

/* A flag of the run description (lantern/pipeline.h) in one of sections,
 * or --quiet, --verbose or --force (with LT_JOB_OUTPUT): applied to j. */
static int take_job(scan *a, lt_job *j, unsigned sections)
{
    const char *arg = a->argv[a->i], *v = NULL;
    if ((sections & LT_JOB_OUTPUT) && flag(a, "--quiet"))
        return j->quiet = 1, 1;
    if ((sections & LT_JOB_OUTPUT) && flag(a, "--verbose"))
        return j->verbose = 1, 1;
    if ((sections & LT_JOB_OUTPUT) && flag(a, "--force"))
        return j->force = 1, 1;
    char name[32];
    size_t n = strcspn(arg, "=");
    unsigned section;
    int takes;
    if (n >= sizeof name)
        return 0;
    memcpy(name, arg, n);
    name[n] = '\0';
    /* a setting of a section this command does not read is not its flag */
    if (!lt_job_flag_find(name, &section, &takes) || !(section & sections))
        return 0;
    if (takes ? !take(a, name, &v) : !flag(a, name))
        return 1; /* take printed the missing value and set a->failed */
    lt_error err;
    lt_error_clear(&err);
    if (lt_job_flag(j, name, v, &err)) {
        cli_report(&err);
        a->failed = 1;
    }
    return 1;
}

int cli_options(int argc, char **argv, int first, const char *command, const cli_opt *opts,
                lt_job *j, unsigned sections, int *given)
{
    scan a = {argc, argv, first, 0};
    while (!a.failed && a.i < argc) {
        int taken = 0;
        for (const cli_opt *o = opts; o && o->name && !taken && !a.failed; o++)
            taken = take_opt(&a, o, command);
        if (taken || a.failed)
            continue;
        if (!j || !take_job(&a, j, sections))
            return cli_usage_error(command, "unknown argument '%s' (see 'lantern %s --help')",
                                   argv[a.i], command);
        if (given)
            *given = 1;
    }
    return a.failed ? CLI_USAGE : CLI_OK;
}

int cli_job_args(int argc, char **argv, const char *command, unsigned sections,
                 const cli_opt *opts, lt_job *j, int *given)
{
    /* "-x" is an unknown flag to report as such, not a run file to open */
    *given = argc > 1 && argv[1][0] != '-';
    int status = *given ? cli_job_load(j, argv[1], NULL, NULL, 0) : CLI_OK;
    return status ? status : cli_options(argc, argv, 1 + *given, command, opts, j, sections, given);
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

int cli_parse_format(const char *text, unsigned allowed, cli_format *out)
{
    static const char *names[] = {"table", "csv", "json"};
    char list[32] = "";
    for (int f = 0; f < 3; f++) {
        if (!(allowed & (1u << f)))
            continue;
        if (strcmp(text, names[f]) == 0) {
            *out = (cli_format)f;
            return 0;
        }
        if (list[0])
            strcat(list, ", ");
        strcat(list, names[f]);
    }
    return cli_usage_error("--format", "'%s' is not one of %s", text, list);
}

const lt_cosmo_model *cli_model(const char *name)
{
    lt_error err;
    const lt_cosmo_model *m = lt_cosmo_model_lookup(name, "--model", 0, &err);
    if (!m)
        cli_report(&err);
    return m;
}

/* ---- printing ---- */

void cli_warning(const lt_job *j, const char *id, const char *text)
{
    if (!lt_job_warning_shown(j, id))
        return;
    if (id)
        fprintf(stderr, "lantern: warning [%s]: %s\n", id, text);
    else
        fprintf(stderr, "lantern: warning: %s\n", text);
}

void cli_print_warnings(const lt_survey *s, const lt_job *j)
{
    for (size_t i = 0; s && i < s->nwarnings; i++)
        cli_warning(j, s->warning_ids[i], s->warnings[i]);
}

void cli_print_json(cJSON *o, int take)
{
    char *text = cJSON_Print(o);
    printf("%s\n", text ? text : "{}");
    free(text);
    if (take)
        cJSON_Delete(o);
}

void cli_note(lt_note_kind kind, const char *id, const char *text, void *notes)
{
    const cli_notes *n = notes;
    if (kind == LT_NOTE_WARNING)
        cli_warning(n->job, id, text);
    else if (kind == LT_NOTE_NEWS)
        fprintf(stderr, "lantern: %s\n", text);
    else if (!n->quiet)
        fprintf(stderr, "%s\n", text);
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
