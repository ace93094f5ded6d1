/*
 * lantern distance: distances, times and H(z) for one model at a list of
 * redshifts, printed as a table, CSV or JSON, in the order given.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "lantern/report.h"

static void usage(FILE *f)
{
    fputs(cli_help_distance, f);
    for (size_t i = 0; i < lt_cosmo_model_count(); i++) {
        const lt_cosmo_model *m = lt_cosmo_model_at(i);
        fprintf(f, "                     %-10s %s\n", m->name, m->summary);
    }
    fputs(cli_help_distance_tail, f);
}

/* Redshifts from "--z 0.1,0.5,1". */
static int parse_z_list(const char *text, double **z, size_t *n)
{
    size_t cap = 1;
    for (const char *p = text; *p; p++)
        cap += *p == ',';
    char *copy = strdup(text);
    double *v = malloc(cap * sizeof *v);
    if (!copy || !v) {
        free(copy);
        free(v);
        return cli_usage_error("--z", "out of memory");
    }
    size_t k = 0;
    int status = CLI_OK;
    /* Split by hand: strtok would silently skip empty items ("0.1,,2"). */
    char *item = copy;
    for (;;) {
        char *comma = strchr(item, ',');
        if (comma)
            *comma = '\0';
        if (lt_parse_double(item, &v[k]) || v[k] < 0.0) {
            status = cli_usage_error("--z", "'%s' is not a redshift (a finite number >= 0)",
                                     item);
            break;
        }
        k++;
        if (!comma)
            break;
        item = comma + 1;
    }
    free(copy);
    if (status) {
        free(v);
        return status;
    }
    *z = v;
    *n = k;
    return CLI_OK;
}

/* Redshifts from "--z-range LO:HI:N[:log]". */
static int parse_z_range(const char *text, double **z, size_t *n)
{
    char buf[256];
    if (strlen(text) >= sizeof buf)
        return cli_usage_error("--z-range", "value too long");
    strcpy(buf, text);
    char *field[5] = {0};
    int nf = 0;
    char *p = buf;
    while (nf < 5) {
        field[nf++] = p;
        char *colon = strchr(p, ':');
        if (!colon)
            break;
        *colon = '\0';
        p = colon + 1;
    }
    double lo, hi;
    long count;
    int logscale = nf == 4 && strcmp(field[3], "log") == 0;
    if ((nf != 3 && !logscale) || lt_parse_double(field[0], &lo) ||
        lt_parse_double(field[1], &hi) || lt_parse_long(field[2], 1, 10000000, &count))
        return cli_usage_error("--z-range",
                               "'%s' is not LO:HI:N or LO:HI:N:log (N from 1 to 10^7)",
                               text);
    if (lo < 0.0 || hi < lo)
        return cli_usage_error("--z-range", "need 0 <= LO <= HI, got %g:%g", lo, hi);
    if (logscale && lo <= 0.0)
        return cli_usage_error("--z-range", "log spacing needs LO > 0, got %g", lo);
    double *v = malloc((size_t)count * sizeof *v);
    if (!v)
        return cli_usage_error("--z-range", "out of memory for %ld redshifts", count);
    for (long i = 0; i < count; i++) {
        double t = count > 1 ? (double)i / (double)(count - 1) : 0.0;
        v[i] = logscale ? lo * pow(hi / lo, t) : lo + (hi - lo) * t;
    }
    if (count > 1)
        v[count - 1] = hi; /* exactly, whatever the rounding above */
    *z = v;
    *n = (size_t)count;
    return CLI_OK;
}

int cli_distance(int argc, char **argv)
{
    const char *model_name = NULL, *z_list = NULL, *z_range = NULL, *format_text = "table";
    const char *sets[64];
    int nsets = 0;
    cli_args a = cli_args_start(argc, argv, 1);
    while (cli_args_more(&a)) {
        const char *v;
        if (cli_flag(&a, "--help")) {
            usage(stdout);
            return CLI_OK;
        } else if (cli_take(&a, "--model", &v)) {
            model_name = v;
        } else if (cli_take(&a, "--set", &v)) {
            if (nsets == 64)
                return cli_usage_error("--set", "given more than 64 times");
            sets[nsets++] = v;
        } else if (cli_take(&a, "--z", &v)) {
            z_list = v;
        } else if (cli_take(&a, "--z-range", &v)) {
            z_range = v;
        } else if (cli_take(&a, "--format", &v)) {
            format_text = v;
        } else {
            return cli_args_unknown(&a, "distance");
        }
    }
    if (a.failed)
        return CLI_USAGE;
    cli_format format;
    int status = cli_parse_format(format_text, 7u, &format);
    if (status)
        return status;
    if (!model_name)
        return cli_usage_error("distance", "--model is required (see 'lantern distance "
                                           "--help' for the models)");
    const lt_cosmo_model *m = lt_cosmo_model_find(model_name);
    if (!m)
        return cli_usage_error("--model",
                               "unknown model '%s' (models: lcdm-flat, lcdm, wcdm-flat, "
                               "wcdm, w0wa-flat, w0wa)",
                               model_name);
    if (!z_list == !z_range)
        return cli_usage_error("distance", "give exactly one of --z and --z-range");

    lt_cosmo_params p;
    lt_cosmo_params_default(&p);
    unsigned seen = 0;
    lt_error err;
    for (int i = 0; i < nsets; i++)
        if (lt_cosmo_params_parse(&p, m, sets[i], &seen, "--set", &err))
            return cli_report(&err);

    lt_cosmo c;
    if (lt_cosmo_init(&c, m, &p, &err))
        return cli_report(&err);

    double *z = NULL;
    size_t n = 0;
    status = z_list ? parse_z_list(z_list, &z, &n) : parse_z_range(z_range, &z, &n);
    if (status)
        return status;

    double *block = malloc((8 * n + 1) * sizeof *block);
    lt_zgrid *g = NULL;
    if (!block) {
        status = cli_usage_error("distance", "out of memory for %zu redshifts", n);
        goto done;
    }
    lt_cosmo_table t = {block, block + n, block + 2 * n, block + 3 * n,
                        block + 4 * n, block + 5 * n, block + 6 * n, block + 7 * n};
    g = lt_zgrid_alloc(n, z, &err);
    if (!g) {
        status = cli_report(&err);
        goto done;
    }
    if (lt_cosmo_eval(&c, g, &t, &err)) {
        status = cli_report(&err);
        goto done;
    }
    if (format == CLI_TABLE)
        lt_report_distance_table(stdout, &c, n, z, &t);
    else if (format == CLI_CSV)
        lt_report_distance_csv(stdout, n, z, &t);
    else
        cli_print_json(lt_report_distance_json(&c, n, z, &t), 1);
    if (fflush(stdout) != 0 || ferror(stdout)) {
        fputs("lantern: distance: could not write the output\n", stderr);
        status = CLI_FAILED;
    }
done:
    lt_zgrid_free(g);
    free(block);
    free(z);
    return status;
}
