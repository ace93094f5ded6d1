/* Argument scanning and error printing for the command line. */
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "cli.h"

int cli_status(int code)
{
    switch (code) {
    case LT_OK: return CLI_OK;
    case LT_EINPUT:
    case LT_EDOMAIN: return CLI_USAGE;
    default: return CLI_FAILED;
    }
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
    fprintf(stderr, "lantern: %s: ", where);
    vfprintf(stderr, fmt, ap);
    fputc('\n', stderr);
    va_end(ap);
    return CLI_USAGE;
}

cli_args cli_args_start(int argc, char **argv, int first)
{
    return (cli_args){argc, argv, first, 0};
}

int cli_args_more(const cli_args *a) { return !a->failed && a->i < a->argc; }

const char *cli_positional(cli_args *a)
{
    const char *s = a->argv[a->i];
    if (strncmp(s, "--", 2) == 0)
        return NULL;
    a->i++;
    return s;
}

int cli_take(cli_args *a, const char *name, const char **value)
{
    const char *s = a->argv[a->i];
    size_t n = strlen(name);
    if (strncmp(s, name, n) != 0)
        return 0;
    if (s[n] == '=') {
        *value = s + n + 1;
        a->i++;
        return 1;
    }
    if (s[n] != '\0')
        return 0;
    if (a->i + 1 >= a->argc) {
        /* Leave i where it is: the caller's remaining tests see no match
         * and cli_args_unknown returns CLI_USAGE for the failure. */
        cli_usage_error(name, "needs a value");
        a->failed = 1;
        return 0;
    }
    *value = a->argv[a->i + 1];
    a->i += 2;
    return 1;
}

int cli_flag(cli_args *a, const char *name)
{
    if (strcmp(a->argv[a->i], name) != 0)
        return 0;
    a->i++;
    return 1;
}

int cli_args_unknown(const cli_args *a, const char *command)
{
    if (a->failed)
        return CLI_USAGE;
    return cli_usage_error(command, "unknown argument '%s' (see 'lantern %s --help')",
                           a->argv[a->i], command);
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


void cli_print_warnings(const lt_survey *s)
{
    for (size_t i = 0; s && i < s->nwarnings; i++)
        fprintf(stderr, "lantern: warning: %s\n", s->warnings[i]);
}

void cli_print_json(cJSON *o, int take)
{
    char *text = cJSON_Print(o);
    printf("%s\n", text ? text : "{}");
    free(text);
    if (take)
        cJSON_Delete(o);
}

void cli_note(lt_note_kind kind, const char *text, void *quiet)
{
    if (kind != LT_NOTE_PROGRESS)
        fprintf(stderr, "lantern: %s%s\n", kind == LT_NOTE_WARNING ? "warning: " : "", text);
    else if (!*(const int *)quiet)
        fprintf(stderr, "%s\n", text);
}
