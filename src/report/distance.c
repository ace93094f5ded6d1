/*
 * Distances as lantern distance prints them: a table, CSV (the columns and
 * their order are the contract's, DESIGN.md) or JSON.
 */
#include <stdio.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "lantern/json.h"
#include "lantern/report.h"
#include "lantern/text.h"

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

/* The columns of a table at redshifts z, in that order. */
#define COLUMNS(z, t)                                                                    \
    const double *const col[NCOL] = {z,              (t)->comoving, (t)->transverse,      \
                                     (t)->luminosity, (t)->angular, (t)->distmod,         \
                                     (t)->lookback,   (t)->age,     (t)->hubble}

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
        fprintf(f, "; radiation on: t_cmb = %g K, n_eff = %g, m_nu = %g eV, omega_r = %.6g",
                c->p.t_cmb, c->p.n_eff, c->p.m_nu, c->omega_r);
    else
        fputs("; radiation off", f);
}

static cJSON *params_json(const lt_cosmo *c)
{
    cJSON *o = cJSON_CreateObject();
    lt_cosmo_params p = c->p;
    /* the early-universe parameters where they act: with radiation on */
    for (int id = 0; id < LT_P_COUNT; id++)
        if (lt_cosmo_model_uses(c->model, id) || id == LT_P_OMEGA_DE ||
            (LT_P_EARLY(id) && p.t_cmb > 0.0))
            cJSON_AddItemToObject(o, lt_cosmo_param_name(id),
                                  lt_json_number(*lt_cosmo_params_slot(&p, id)));
    cJSON_AddItemToObject(o, "omega_k", lt_json_number(c->omega_k));
    cJSON_AddItemToObject(o, "omega_r", lt_json_number(c->omega_r));
    return o;
}

/* r_d and the CMB quantities (radiation on): one line of the table. */
static void describe_early(FILE *f, const lt_cosmo *c, const lt_cosmo_early *e)
{
    if (!lt_cosmo_early_standard(c)) {
        fputs("\nearly universe: not shown (r_d and the CMB quantities assume dark energy "
              "negligible early, w < 0 at high redshift)",
              f);
        return;
    }
    fprintf(f, "\nearly universe (omega_b_h2 = %g): r_d = %.4f Mpc (Aubourg et al. 2015), "
               "z_* = %.3f, r_s(z_*) = %.4f Mpc, R = %.6f, l_A = %.4f",
            c->p.omega_b_h2, e->rd, e->cmb.z_star, e->cmb.rs_star, e->cmb.shift_r,
            e->cmb.acoustic_l);
}

static cJSON *early_json(const lt_cosmo_early *e)
{
    cJSON *o = cJSON_CreateObject();
    cJSON_AddItemToObject(o, "rd_mpc", lt_json_number(e->rd));
    cJSON_AddItemToObject(o, "z_star", lt_json_number(e->cmb.z_star));
    cJSON_AddItemToObject(o, "rs_star_mpc", lt_json_number(e->cmb.rs_star));
    cJSON_AddItemToObject(o, "dm_star_mpc", lt_json_number(e->cmb.dm_star));
    cJSON_AddItemToObject(o, "shift_r", lt_json_number(e->cmb.shift_r));
    cJSON_AddItemToObject(o, "acoustic_l", lt_json_number(e->cmb.acoustic_l));
    return o;
}

void lt_report_distance_table(FILE *f, const lt_cosmo *c, const lt_cosmo_early *early,
                              size_t n, const double *z, const lt_cosmo_table *t)
{
    COLUMNS(z, t);
    fprintf(f, "model %s: %s\n", c->model->name, c->model->summary);
    describe_params(f, c);
    if (early)
        describe_early(f, c, early);
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

void lt_report_distance_csv(FILE *f, size_t n, const double *z, const lt_cosmo_table *t)
{
    COLUMNS(z, t);
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

cJSON *lt_report_distance_json(const lt_cosmo *c, const lt_cosmo_early *early, size_t n,
                               const double *z, const lt_cosmo_table *t)
{
    COLUMNS(z, t);
    cJSON *root = cJSON_CreateObject();
    cJSON_AddStringToObject(root, "model", c->model->name);
    cJSON_AddItemToObject(root, "params", params_json(c));
    if (early)
        cJSON_AddItemToObject(root, "early_universe", early_json(early));
    cJSON *rows = cJSON_AddArrayToObject(root, "rows");
    for (size_t i = 0; i < n; i++) {
        cJSON *row = cJSON_CreateObject();
        /* An infinite age or the distance modulus at z = 0 becomes null
         * (DESIGN.md). */
        for (int k = 0; k < NCOL; k++)
            cJSON_AddItemToObject(row, col_name[k], lt_json_number(col[k][i]));
        cJSON_AddItemToArray(rows, row);
    }
    return root;
}
