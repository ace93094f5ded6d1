/*
 * Writing a simulated survey: the table as CSV and FITS, the systematic
 * covariance as a dense matrix and as modes, and the truth. Every file goes
 * to a temporary name first; only when all are complete are they renamed.
 */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>
#include <fitsio.h>

#include "lantern/text.h"
#include "lantern/file.h"
#include "lantern/json.h"
#include "lantern/version.h"
#include "lantern/simulate.h"

enum { F_CSV, F_FITS, F_COV, F_MODES, F_TRUTH, NFILES };

static void put_double(FILE *f, double v)
{
    char buf[32];
    lt_format_double(v, buf, sizeof buf);
    fputs(buf, f);
}

static int close_checked(FILE *f, const char *path, lt_error *err)
{
    int bad = ferror(f);
    bad |= fclose(f) != 0;
    if (bad)
        return lt_error_set(err, LT_EIO, path, 0, "write failed (disk full?)");
    return LT_OK;
}

/* The numeric columns of the table after id and tier, in order: z, zhel,
 * the observable and its error, and for light curves x1, err_x1, color,
 * err_color, mass and, with calibrators, calibrator (0/1, from icol),
 * calib_mu and err_calib_mu (NaN for the other rows). */
typedef struct {
    const char *name, *unit;
    const double *v; /* NULL: the calibrator flags */
} column;

static size_t columns_of(const lt_sim *sim, column *c)
{
    const lt_survey *s = sim->survey;
    const char *u = s->kind == LT_OBS_DL ? "Mpc" : "mag";
    size_t k = 0;
    c[k++] = (column){"z", "", s->z};
    c[k++] = (column){"zhel", "", s->zhel};
    c[k++] = (column){lt_obs_name(s->kind), u, s->obs};
    c[k++] = (column){s->kind == LT_OBS_MB ? "err_mb" : "err", u, s->err};
    const lt_lightcurve *lc = s->lc;
    if (!lc)
        return k;
    c[k++] = (column){"x1", "", lc->x1};
    c[k++] = (column){"err_x1", "", lc->err_x1};
    c[k++] = (column){"color", "mag", lc->color};
    c[k++] = (column){"err_color", "mag", lc->err_color};
    c[k++] = (column){"mass", "log10(Msun)", lc->mass};
    if (lc->ncalibrators) {
        c[k++] = (column){"calibrator", "", NULL};
        c[k++] = (column){"calib_mu", "mag", lc->calib_mu};
        c[k++] = (column){"err_calib_mu", "mag", lc->err_calib_mu};
    }
    return k;
}

enum { MAX_COLUMNS = 16 };

static int write_csv(const lt_sim *sim, const lt_scenario *sc, const char *path,
                     lt_error *err)
{
    FILE *f = fopen(path, "w");
    if (!f)
        return lt_error_set(err, LT_EIO, path, 0, "cannot write: %s", strerror(errno));
    const lt_survey *s = sim->survey;
    column col[MAX_COLUMNS];
    size_t nc = columns_of(sim, col);
    fputs("id,tier", f);
    for (size_t k = 0; k < nc; k++)
        fprintf(f, ",%s", col[k].name);
    fputc('\n', f);
    for (size_t i = 0; i < s->n; i++) {
        fprintf(f, "%s,%s", s->id[i], sc->tiers[sim->tier[i]].name);
        for (size_t k = 0; k < nc; k++) {
            fputc(',', f);
            if (!col[k].v)
                fputc(s->lc->calibrator[i] ? '1' : '0', f);
            else if (isnan(col[k].v[i]))
                fputs("nan", f); /* a placeholder the reader accepts there */
            else
                put_double(f, col[k].v[i]);
        }
        fputc('\n', f);
    }
    return close_checked(f, path, err);
}

static int fits_error(const char *path, int status, lt_error *err)
{
    char text[FLEN_STATUS];
    fits_get_errstatus(status, text);
    fits_clear_errmsg();
    return lt_error_set(err, LT_EIO, path, 0, "writing FITS: %s (CFITSIO status %d)", text,
                        status);
}

/* Header keywords that say where a file came from. */
static void provenance(fitsfile *f, const lt_scenario *sc, int *status)
{
    char version[32] = "lantern " LT_VERSION;
    fits_update_key(f, TSTRING, "CREATOR", version, "program that wrote this file", status);
    fits_update_key(f, TSTRING, "SCENARIO", sc->name, "lantern simulation scenario", status);
    long seed = (long)sc->seed;
    fits_update_key(f, TLONG, "SEED", &seed, "random seed of the simulation", status);
    fits_update_key(f, TSTRING, "MODEL", (char *)sc->model->name, "cosmological model",
                    status);
}

static int write_fits_table(const lt_sim *sim, const lt_scenario *sc, const char *path,
                            lt_error *err)
{
    const lt_survey *s = sim->survey;
    size_t wid = 1, wtier = 1;
    for (size_t i = 0; i < s->n; i++)
        if (strlen(s->id[i]) > wid)
            wid = strlen(s->id[i]);
    for (size_t t = 0; t < sc->ntiers; t++)
        if (strlen(sc->tiers[t].name) > wtier)
            wtier = strlen(sc->tiers[t].name);
    char fid[24], ftier[24];
    snprintf(fid, sizeof fid, "%zuA", wid);
    snprintf(ftier, sizeof ftier, "%zuA", wtier);
    column col[MAX_COLUMNS];
    size_t nc = columns_of(sim, col);
    char *ttype[MAX_COLUMNS + 2] = {"id", "tier"}, *tform[MAX_COLUMNS + 2] = {fid, ftier},
         *tunit[MAX_COLUMNS + 2] = {"", ""};
    for (size_t k = 0; k < nc; k++) {
        ttype[k + 2] = (char *)col[k].name;
        tform[k + 2] = col[k].v ? "1D" : "1J";
        tunit[k + 2] = (char *)col[k].unit;
    }
    fitsfile *f = NULL;
    int status = 0;
    remove(path);
    if (fits_create_file(&f, path, &status))
        return fits_error(path, status, err);
    fits_create_tbl(f, BINARY_TBL, (LONGLONG)s->n, (int)nc + 2, ttype, tform, tunit, "SURVEY",
                    &status);
    provenance(f, sc, &status);
    char **tiers = malloc(s->n * sizeof *tiers);
    if (!tiers) {
        fits_close_file(f, &status);
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    }
    for (size_t i = 0; i < s->n; i++)
        tiers[i] = sc->tiers[sim->tier[i]].name;
    fits_write_col(f, TSTRING, 1, 1, 1, (LONGLONG)s->n, s->id, &status);
    fits_write_col(f, TSTRING, 2, 1, 1, (LONGLONG)s->n, tiers, &status);
    for (size_t k = 0; k < nc; k++) {
        if (col[k].v)
            fits_write_col(f, TDOUBLE, (int)k + 3, 1, 1, (LONGLONG)s->n, (double *)col[k].v,
                           &status);
        else
            fits_write_col(f, TINT, (int)k + 3, 1, 1, (LONGLONG)s->n, s->lc->calibrator,
                           &status);
    }
    free(tiers);
    int st2 = 0;
    fits_close_file(f, status ? &st2 : &status);
    return status ? fits_error(path, status, err) : LT_OK;
}

/* The systematic part as a dense matrix: sum_t a_t^2 u_t u_t^T. */
static double sys_element(const lt_sim *sim, size_t i, size_t j)
{
    size_t ti = sim->tier[i];
    if (ti != sim->tier[j])
        return 0.0;
    double a = sim->amplitude[ti];
    return a * a * sim->modes[i * sim->ntiers + ti] * sim->modes[j * sim->ntiers + ti];
}

static int write_cov_text(const lt_sim *sim, const char *path, lt_error *err)
{
    FILE *f = fopen(path, "w");
    if (!f)
        return lt_error_set(err, LT_EIO, path, 0, "cannot write: %s", strerror(errno));
    size_t n = sim->n;
    fprintf(f, "%zu\n", n);
    for (size_t i = 0; i < n; i++) {
        for (size_t j = 0; j < n; j++) {
            if (j)
                fputc(' ', f);
            put_double(f, sys_element(sim, i, j));
        }
        fputc('\n', f);
    }
    return close_checked(f, path, err);
}

static int write_cov_fits(const lt_sim *sim, const lt_scenario *sc, const char *path,
                          lt_error *err)
{
    size_t n = sim->n;
    double *row = malloc(n * sizeof *row);
    if (!row)
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    fitsfile *f = NULL;
    int status = 0;
    long naxes[2] = {(long)n, (long)n};
    remove(path);
    if (fits_create_file(&f, path, &status)) {
        free(row);
        return fits_error(path, status, err);
    }
    fits_create_img(f, DOUBLE_IMG, 2, naxes, &status);
    provenance(f, sc, &status);
    for (size_t i = 0; i < n && !status; i++) {
        for (size_t j = 0; j < n; j++)
            row[j] = sys_element(sim, i, j);
        fits_write_img(f, TDOUBLE, (LONGLONG)(i * n + 1), (LONGLONG)n, row, &status);
    }
    free(row);
    int st2 = 0;
    fits_close_file(f, status ? &st2 : &status);
    return status ? fits_error(path, status, err) : LT_OK;
}

static int write_modes(const lt_sim *sim, const lt_scenario *sc, const char *path,
                       lt_error *err)
{
    FILE *f = fopen(path, "w");
    if (!f)
        return lt_error_set(err, LT_EIO, path, 0, "cannot write: %s", strerror(errno));
    fputs("id", f);
    for (size_t t = 0; t < sim->ntiers; t++)
        fprintf(f, ",calibration_%s", sc->tiers[t].name);
    fputs("\namplitude", f);
    for (size_t t = 0; t < sim->ntiers; t++) {
        fputc(',', f);
        put_double(f, sim->amplitude[t]);
    }
    fputc('\n', f);
    for (size_t i = 0; i < sim->n; i++) {
        fputs(sim->survey->id[i], f);
        for (size_t t = 0; t < sim->ntiers; t++) {
            fputc(',', f);
            put_double(f, sim->modes[i * sim->ntiers + t]);
        }
        fputc('\n', f);
    }
    return close_checked(f, path, err);
}

void lt_sim_columns(const lt_sim *sim, char *buf, size_t size)
{
    const lt_survey *s = sim->survey;
    if (s->kind == LT_OBS_MB)
        snprintf(buf, size,
                 "z=z,zhel=zhel,mb=mb,err_mb=err_mb,x1=x1,err_x1=err_x1,color=color,"
                 "err_color=err_color,mass=mass,group=tier,id=id%s",
                 s->lc->ncalibrators
                     ? ",calibrator=calibrator,calib_mu=calib_mu,err_calib_mu=err_calib_mu"
                     : "");
    else
        snprintf(buf, size, "z=z,zhel=zhel,%s=%s,err=err,id=id", lt_obs_name(s->kind),
                 lt_obs_name(s->kind));
}

const char *lt_sim_cov_name(size_t n)
{
    if (n > LT_SIM_DENSE_MAX)
        return NULL;
    return n > LT_SIM_TEXT_COV_MAX ? "covariance.fits" : "covariance.txt";
}

static int write_truth(const lt_sim *sim, const lt_scenario *sc, const char *cov_name,
                       const char *path, lt_error *err)
{
    cJSON *o = cJSON_CreateObject();
    cJSON_AddStringToObject(o, "scenario", sc->name);
    cJSON_AddItemToObject(o, "seed", lt_json_number((double)sc->seed));
    cJSON_AddStringToObject(o, "model", sc->model->name);
    lt_cosmo c;
    lt_cosmo_init(&c, sc->model, &sc->params, NULL);
    cJSON *p = cJSON_AddObjectToObject(o, "params");
    lt_cosmo_params q = c.p;
    for (int id = 0; id < LT_P_COUNT; id++)
        if (lt_cosmo_model_uses(sc->model, id) || id == LT_P_OMEGA_DE)
            cJSON_AddItemToObject(p, lt_cosmo_param_name(id), lt_json_number(*lt_cosmo_params_slot(&q, id)));
    cJSON_AddItemToObject(p, "omega_k", lt_json_number(c.omega_k));
    if (sc->kind == LT_OBS_MAG || sc->kind == LT_OBS_MB)
        cJSON_AddItemToObject(p, "offset", lt_json_number(sc->offset));
    if (sc->kind == LT_OBS_MB) {
        cJSON_AddItemToObject(p, "alpha", lt_json_number(sc->alpha));
        cJSON_AddItemToObject(p, "beta", lt_json_number(sc->beta));
        cJSON_AddItemToObject(p, "gamma", lt_json_number(sc->gamma));
        cJSON_AddItemToObject(p, "mass_split", lt_json_number(sc->mass_split));
    }
    cJSON_AddStringToObject(o, "observable", lt_obs_name(sc->kind));
    cJSON_AddItemToObject(o, "n_data", lt_json_number((double)sim->n));
    cJSON_AddItemToObject(o, "intrinsic_scatter", lt_json_number(sc->intrinsic));
    cJSON_AddItemToObject(o, "velocity_dispersion_km_s", lt_json_number(sc->velocity_dispersion));
    cJSON_AddItemToObject(o, "solar_motion_km_s", lt_json_number(sc->solar_motion));
    cJSON *tiers = cJSON_AddArrayToObject(o, "tiers");
    for (size_t t = 0; t < sc->ntiers; t++) {
        const lt_sim_tier *tr = &sc->tiers[t];
        cJSON *x = cJSON_CreateObject();
        cJSON_AddStringToObject(x, "name", tr->name);
        cJSON_AddItemToObject(x, "z_min", lt_json_number(tr->z_min));
        cJSON_AddItemToObject(x, "z_max", lt_json_number(tr->z_max));
        cJSON_AddItemToObject(x, "count", lt_json_number((double)tr->count));
        cJSON_AddItemToObject(x, "error", lt_json_number(tr->error));
        cJSON_AddItemToObject(x, "calibration", lt_json_number(tr->calibration));
        cJSON_AddItemToObject(x, "calibration_offset_drawn", lt_json_number(sim->calib[t]));
        cJSON_AddStringToObject(x, "spread", tr->volume ? "volume" : "uniform");
        if (sc->kind == LT_OBS_MB) {
            struct {
                const char *key;
                double v;
            } k[] = {{"intrinsic_scatter", tr->intrinsic}, {"x1_mean", tr->x1_mean},
                     {"x1_sd", tr->x1_sd},                 {"color_mean", tr->color_mean},
                     {"color_sd", tr->color_sd},           {"err_x1", tr->err_x1},
                     {"err_color", tr->err_color},         {"mass_mean", tr->mass_mean},
                     {"mass_sd", tr->mass_sd}};
            for (size_t m = 0; m < sizeof k / sizeof k[0]; m++)
                cJSON_AddItemToObject(x, k[m].key, lt_json_number(k[m].v));
            cJSON_AddBoolToObject(x, "calibrators", tr->calibrators);
            if (tr->calibrators)
                cJSON_AddItemToObject(x, "calib_error", lt_json_number(tr->calib_error));
        }
        cJSON_AddItemToArray(tiers, x);
    }
    cJSON *files = cJSON_AddObjectToObject(o, "files");
    cJSON_AddStringToObject(files, "table", "survey.csv");
    cJSON_AddStringToObject(files, "fits", "survey.fits");
    if (cov_name)
        cJSON_AddStringToObject(files, "covariance", cov_name);
    else
        cJSON_AddNullToObject(files, "covariance");
    cJSON_AddStringToObject(files, "modes", "modes.csv");
    char columns[LT_SIM_COLUMNS_MAX];
    lt_sim_columns(sim, columns, sizeof columns);
    cJSON_AddStringToObject(files, "columns", columns);
    char *text = cJSON_Print(o);
    cJSON_Delete(o);
    if (!text)
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    FILE *f = fopen(path, "w");
    if (!f) {
        free(text);
        return lt_error_set(err, LT_EIO, path, 0, "cannot write: %s", strerror(errno));
    }
    fputs(text, f);
    fputc('\n', f);
    free(text);
    return close_checked(f, path, err);
}

int lt_sim_write(const lt_scenario *sc, const lt_sim *sim, const char *dir, lt_error *err)
{
    const char *cov_name = lt_sim_cov_name(sim->n);
    const char *names[NFILES] = {"survey.csv", "survey.fits", cov_name, "modes.csv",
                                 "truth.json"};
    char *final[NFILES] = {NULL}, *tmp[NFILES] = {NULL};
    int rc = LT_OK;
    for (int k = 0; k < NFILES && !rc; k++)
        if (names[k] && (!(final[k] = lt_path_join(dir, names[k], err)) ||
                         !(tmp[k] = lt_tmp_name(final[k], err))))
            rc = LT_ENOMEM;
    if (!rc)
        rc = write_csv(sim, sc, tmp[F_CSV], err);
    if (!rc)
        rc = write_fits_table(sim, sc, tmp[F_FITS], err);
    if (!rc && cov_name)
        rc = sim->n > LT_SIM_TEXT_COV_MAX ? write_cov_fits(sim, sc, tmp[F_COV], err)
                                          : write_cov_text(sim, tmp[F_COV], err);
    if (!rc)
        rc = write_modes(sim, sc, tmp[F_MODES], err);
    if (!rc)
        rc = write_truth(sim, sc, cov_name, tmp[F_TRUTH], err);
    for (int k = 0; k < NFILES; k++) {
        if (!tmp[k])
            continue;
        if (rc)
            remove(tmp[k]);
        else if ((rc = lt_file_commit(final[k], err)))
            for (int m = k + 1; m < NFILES; m++)
                if (tmp[m])
                    remove(tmp[m]);
    }
    for (int k = 0; k < NFILES; k++)
        free(final[k]), free(tmp[k]);
    /* a covariance of another form, left by an earlier run, would mislead */
    static const char *forms[] = {"covariance.txt", "covariance.fits"};
    for (int f = 0; !rc && f < 2; f++) {
        if (cov_name && !strcmp(cov_name, forms[f]))
            continue;
        char *other = lt_path_join(dir, forms[f], err);
        if (!other)
            rc = LT_ENOMEM;
        else
            remove(other);
        free(other);
    }
    return rc;
}
