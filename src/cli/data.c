/* The DATA options of the command-line contract, shared by every command
 * that reads a survey. */
#include <math.h>
#include <string.h>

#include "cli.h"

static void take_z(cli_args *a, const char *name, const char *v, double *out)
{
    if (lt_parse_double(v, out) || *out < 0) {
        cli_usage_error(name, "'%s' is not a redshift >= 0", v);
        a->failed = 1;
    }
}

int cli_take_data(cli_args *a, lt_survey_spec *spec)
{
    const char *v;
    if (cli_take(a, "--data", &v)) {
        spec->data = v;
    } else if (cli_take(a, "--columns", &v)) {
        spec->columns = v;
    } else if (cli_take(a, "--cov", &v)) {
        if (spec->ncov == LT_SURVEY_MAX_COV) {
            cli_usage_error("--cov", "given more than %d times", LT_SURVEY_MAX_COV);
            a->failed = 1;
            return 1;
        }
        spec->cov[spec->ncov++] = v;
    } else if (cli_take(a, "--modes", &v)) {
        spec->modes = v;
    } else if (cli_flag(a, "--no-err-diag")) {
        spec->no_err_diag = 1;
    } else if (cli_take(a, "--keep-ids", &v)) {
        spec->keep_ids = v;
    } else if (cli_take(a, "--drop-ids", &v)) {
        spec->drop_ids = v;
    } else if (cli_take(a, "--zmin", &v)) {
        take_z(a, "--zmin", v, &spec->zmin);
    } else if (cli_take(a, "--zmax", &v)) {
        take_z(a, "--zmax", v, &spec->zmax);
    } else {
        return 0;
    }
    return 1;
}

void cli_print_warnings(const lt_survey *s)
{
    for (size_t i = 0; s && i < s->nwarnings; i++)
        fprintf(stderr, "lantern: warning: %s\n", s->warnings[i]);
}
