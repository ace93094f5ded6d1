/*
 * lantern distance: distances, times and H(z) for one model at a list of
 * redshifts, printed as a table, CSV or JSON, in the order given.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "cli.h"

/* Columns, in the order the contract (DESIGN.md) fixes for --format csv. */
enum { COL_Z, COL_DC, COL_DM, COL_DL, COL_DA, COL_MU, COL_TL, COL_AGE, COL_H, NCOL };
static const char *col_name[NCOL] = {
    "z",       "comoving_mpc", "transverse_mpc", "luminosity_mpc", "angular_mpc",
    "distmod", "lookback_gyr", "age_gyr",        "hubble_km_s_mpc"};
/* For --format table: a short heading, its unit and the decimals shown. */
static const char *col_head[NCOL] = {"z",       "comoving", "transverse", "luminosity", "angular",
                                     "distmod", "lookback", "age",        "H(z)"};
static const char *col_unit[NCOL] = {"",    "Mpc", "Mpc", "Mpc",     "Mpc",
                                     "mag", "Gyr", "Gyr", "km/s/Mpc"};
static const int col_decimals[NCOL] = {4, 3, 3, 3, 3, 4, 4, 4, 3};

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

/* The parameters the model reads, then what is derived, as "k = v" text. */
static void describe_params(FILE *f, const lt_cosmo *c)
{
    const lt_cosmo_model *m = c->model;
    lt_cosmo_params p = c->p;
    const char *sep = "";
    for (int id = 0; id < LT_P_T_CMB; id++) {
        if (!lt_cosmo_model_uses(m, id))
            continue;
        fprintf(f, "%s%s = %g", sep, lt_cosmo_param_name(id), *lt_cosmo_params_slot(&p, id));
        sep = ", ";
    }
    if (m->flat)
        fprintf(f, "; derived omega_de = %.6g", c->p.omega_de);
    else
        fprintf(f, "; derived omega_k = %.6g", c->omega_k);
    if (c->p.t_cmb > 0.0)
        fprintf(f, "; radiation on: t_cmb = %g K, n_eff = %g, omega_r = %.6g", c->p.t_cmb,
                c->p.n_eff, c->omega_r);
    else
        fputs("; radiation off", f);
}

static cJSON *params_json(const lt_cosmo *c)
{
    cJSON *o = cJSON_CreateObject();
    lt_cosmo_params p = c->p;
    for (int id = 0; id < LT_P_COUNT; id++)
        if (lt_cosmo_model_uses(c->model, id) || id == LT_P_OMEGA_DE)
            cJSON_AddItemToObject(o, lt_cosmo_param_name(id),
                                  lt_json_number(*lt_cosmo_params_slot(&p, id)));
    cJSON_AddItemToObject(o, "omega_k", lt_json_number(c->omega_k));
    cJSON_AddItemToObject(o, "omega_r", lt_json_number(c->omega_r));
    return o;
}

static void print_table(FILE *f, const lt_cosmo *c, size_t n, double *const col[NCOL])
{
    fprintf(f, "model %s: %s\n", c->model->name, c->model->summary);
    describe_params(f, c);
    fputs("\n\n", f);
    int width[NCOL];
    for (int k = 0; k < NCOL; k++) {
        width[k] = (int)strlen(col_head[k]) > 10 ? (int)strlen(col_head[k]) : 10;
        if (k == COL_Z)
            width[k] = 9;
    }
    for (int k = 0; k < NCOL; k++)
        fprintf(f, "%s%*s", k ? "  " : "", width[k], col_head[k]);
    fputc('\n', f);
    for (int k = 0; k < NCOL; k++)
        fprintf(f, "%s%*s", k ? "  " : "", width[k], col_unit[k]);
    fputc('\n', f);
    for (size_t i = 0; i < n; i++) {
        for (int k = 0; k < NCOL; k++) {
            double v = col[k][i];
            if (k == COL_Z)
                fprintf(f, "%*.6g", width[k], v);
            else
                fprintf(f, "  %*.*f", width[k], col_decimals[k], v);
        }
        fputc('\n', f);
    }
}

static void print_csv(FILE *f, size_t n, double *const col[NCOL])
{
    for (int k = 0; k < NCOL; k++)
        fprintf(f, "%s%s", k ? "," : "", col_name[k]);
    fputc('\n', f);
    char buf[32];
    for (size_t i = 0; i < n; i++) {
        for (int k = 0; k < NCOL; k++) {
            lt_format_double(col[k][i], buf, sizeof buf);
            fprintf(f, "%s%s", k ? "," : "", buf);
        }
        fputc('\n', f);
    }
}

static int print_json(FILE *f, const lt_cosmo *c, size_t n, double *const col[NCOL])
{
    cJSON *root = cJSON_CreateObject();
    cJSON_AddStringToObject(root, "model", c->model->name);
    cJSON_AddItemToObject(root, "params", params_json(c));
    cJSON *rows = cJSON_AddArrayToObject(root, "rows");
    for (size_t i = 0; i < n; i++) {
        cJSON *row = cJSON_CreateObject();
        /* An infinite age or the distance modulus at z = 0 becomes null
         * (DESIGN.md). */
        for (int k = 0; k < NCOL; k++)
            cJSON_AddItemToObject(row, col_name[k], lt_json_number(col[k][i]));
        cJSON_AddItemToArray(rows, row);
    }
    char *text = cJSON_Print(root);
    cJSON_Delete(root);
    if (!text)
        return cli_usage_error("distance", "out of memory printing JSON");
    fprintf(f, "%s\n", text);
    free(text);
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

    double *col[NCOL] = {0};
    double *block = malloc(n * NCOL * sizeof *block);
    lt_zgrid *g = NULL;
    if (!block) {
        status = cli_usage_error("distance", "out of memory for %zu redshifts", n);
        goto done;
    }
    for (int k = 0; k < NCOL; k++)
        col[k] = block + (size_t)k * n;
    memcpy(col[COL_Z], z, n * sizeof *z);
    g = lt_zgrid_alloc(n, z, &err);
    if (!g) {
        status = cli_report(&err);
        goto done;
    }
    lt_cosmo_table t = {col[COL_DC], col[COL_DM], col[COL_DL], col[COL_DA],
                        col[COL_MU], col[COL_TL], col[COL_AGE], col[COL_H]};
    if (lt_cosmo_eval(&c, g, &t, &err)) {
        status = cli_report(&err);
        goto done;
    }
    if (format == CLI_TABLE)
        print_table(stdout, &c, n, col);
    else if (format == CLI_CSV)
        print_csv(stdout, n, col);
    else
        status = print_json(stdout, &c, n, col);
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
