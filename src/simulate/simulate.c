/*
 * Simulated surveys: scenario files and the draws. The noise model is
 * documented in include/lantern/simulate.h.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>

#include "lantern/text.h"
#include "lantern/ini.h"
#include "lantern/simulate.h"

#define MAX_OBJECTS 10000000L
#define MAX_TIERS 1000

void lt_scenario_free(lt_scenario *sc)
{
    for (size_t t = 0; t < sc->ntiers; t++)
        free(sc->tiers[t].name);
    free(sc->tiers);
    free(sc->name);
    free(sc->path);
    memset(sc, 0, sizeof *sc);
}

/* The file name without folders and extension: the default scenario name. */
static char *file_stem(const char *path)
{
    const char *base = strrchr(path, '/');
    base = base ? base + 1 : path;
    size_t n = strcspn(base, ".");
    char *s = malloc(n + 1);
    if (s) {
        memcpy(s, base, n);
        s[n] = '\0';
    }
    return s;
}

static int read_survey_section(lt_ini *ini, lt_scenario *sc, lt_error *err)
{
    const char *name = NULL, *obs = "mag";
    long seed = 0;
    int rc;
    if (!lt_ini_has_section(ini, "survey"))
        return lt_error_set(err, LT_EINPUT, ini->path, 0, "needs a [survey] section");
    if ((rc = lt_ini_string(ini, "survey", "name", 0, &name, err)) ||
        (rc = lt_ini_long(ini, "survey", "seed", 1, 0, 4294967295L, &seed, err)) ||
        (rc = lt_ini_string(ini, "survey", "observable", 0, &obs, err)))
        return rc;
    sc->name = name ? strdup(name) : file_stem(ini->path);
    sc->seed = (unsigned long)seed;
    lt_ini_entry *oe = lt_ini_get(ini, "survey", "observable");
    if (!strcmp(obs, "mu"))
        sc->kind = LT_OBS_MU;
    else if (!strcmp(obs, "mag"))
        sc->kind = LT_OBS_MAG;
    else if (!strcmp(obs, "dl"))
        sc->kind = LT_OBS_DL;
    else if (!strcmp(obs, "mb"))
        sc->kind = LT_OBS_MB;
    else
        return lt_error_set(err, LT_EINPUT, ini->path, oe ? oe->line : 0,
                            "observable = '%s': use mu, mag, dl or mb (light curves)", obs);
    sc->offset = -19.3; /* a typical SN Ia absolute magnitude (common practice) */
    sc->intrinsic = 0.1;
    sc->velocity_dispersion = 300.0;
    sc->solar_motion = 369.0;
    lt_ini_entry *off = lt_ini_get(ini, "survey", "offset");
    if (off && sc->kind != LT_OBS_MAG && sc->kind != LT_OBS_MB)
        return lt_error_set(err, LT_EINPUT, ini->path, off->line,
                            "offset (the absolute magnitude) applies to observable = mag or "
                            "mb only");
    /* the standardisation of common practice (Betoule et al. 2014: alpha
     * 0.141, beta 3.101, a host-mass step of -0.07 at 10^10 M_sun) */
    sc->alpha = 0.14, sc->beta = 3.1, sc->gamma = -0.07, sc->mass_split = 10.0;
    if (sc->kind == LT_OBS_MB &&
        ((rc = lt_ini_double(ini, "survey", "alpha", 0, &sc->alpha, err)) ||
         (rc = lt_ini_double(ini, "survey", "beta", 0, &sc->beta, err)) ||
         (rc = lt_ini_double(ini, "survey", "gamma", 0, &sc->gamma, err)) ||
         (rc = lt_ini_double(ini, "survey", "mass_split", 0, &sc->mass_split, err))))
        return rc;
    if ((rc = lt_ini_double(ini, "survey", "offset", 0, &sc->offset, err)) ||
        (rc = lt_ini_double(ini, "survey", "intrinsic_scatter", 0, &sc->intrinsic, err)) ||
        (rc = lt_ini_double(ini, "survey", "velocity_dispersion", 0, &sc->velocity_dispersion,
                            err)) ||
        (rc = lt_ini_double(ini, "survey", "solar_motion", 0, &sc->solar_motion, err)))
        return rc;
    static const char *nonneg[] = {"intrinsic_scatter", "velocity_dispersion", "solar_motion"};
    double vals[] = {sc->intrinsic, sc->velocity_dispersion, sc->solar_motion};
    for (int i = 0; i < 3; i++)
        if (vals[i] < 0) {
            lt_ini_entry *e = lt_ini_get(ini, "survey", nonneg[i]);
            return lt_error_set(err, LT_EINPUT, ini->path, e ? e->line : 0,
                                "%s must be >= 0", nonneg[i]);
        }
    return sc->name ? LT_OK : lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
}

static int read_cosmology_section(lt_ini *ini, lt_scenario *sc, lt_error *err)
{
    const char *model = NULL;
    int rc = lt_ini_string(ini, "cosmology", "model", 1, &model, err);
    if (rc)
        return rc;
    lt_ini_entry *me = lt_ini_get(ini, "cosmology", "model");
    if (!(sc->model = lt_cosmo_model_lookup(model, ini->path, me->line, err)))
        return err->code;
    lt_cosmo_params_default(&sc->params);
    for (size_t i = 0; i < ini->n; i++) {
        lt_ini_entry *e = &ini->entries[i];
        if (strcmp(e->section, "cosmology") != 0 || !strcmp(e->key, "model"))
            continue;
        e->used = 1;
        double v;
        if (lt_parse_double(e->value, &v))
            return lt_error_set(err, LT_EINPUT, ini->path, e->line,
                                "%s = '%s' is not a finite number", e->key, e->value);
        if ((rc = lt_cosmo_params_set(&sc->params, sc->model, e->key, v, err)))
            return lt_error_locate(err, rc, ini->path, e->line);
    }
    lt_cosmo c;
    if ((rc = lt_cosmo_init(&c, sc->model, &sc->params, err)))
        return lt_error_locate(err, rc, ini->path, me->line);
    return LT_OK;
}

/* A light-curve tier's keys (observable = mb); other scenarios leave them
 * unread, so lt_ini_check_used refuses them. */
static int read_lightcurve_tier(lt_ini *ini, const char *section, const lt_scenario *sc,
                                lt_sim_tier *t, long line, lt_error *err)
{
    int rc;
    const char *cal = "no";
    /* populations like those of the JLA samples (x1 spread about 1, colour
     * about 0.1, host masses about 10 +- 0.6; from memory) */
    t->intrinsic = sc->intrinsic;
    t->x1_mean = 0.0, t->x1_sd = 1.0, t->color_mean = 0.0, t->color_sd = 0.1;
    t->err_x1 = 0.1, t->err_color = 0.03, t->mass_mean = 10.0, t->mass_sd = 0.6;
    t->calib_error = 0.05;
    struct {
        const char *key;
        double *v;
        int positive; /* > 0; else >= 0 */
    } k[] = {{"intrinsic_scatter", &t->intrinsic, 0}, {"x1_mean", &t->x1_mean, -1},
             {"x1_sd", &t->x1_sd, 0},                 {"color_mean", &t->color_mean, -1},
             {"color_sd", &t->color_sd, 0},           {"err_x1", &t->err_x1, 1},
             {"err_color", &t->err_color, 1},         {"mass_mean", &t->mass_mean, -1},
             {"mass_sd", &t->mass_sd, 0},             {"calib_error", &t->calib_error, 1}};
    for (size_t i = 0; i < sizeof k / sizeof k[0]; i++) {
        if ((rc = lt_ini_double(ini, section, k[i].key, 0, k[i].v, err)))
            return rc;
        if ((k[i].positive > 0 && !(*k[i].v > 0.0)) || (k[i].positive == 0 && !(*k[i].v >= 0.0))) {
            lt_ini_entry *e = lt_ini_get(ini, section, k[i].key);
            return lt_error_set(err, LT_EINPUT, ini->path, e ? e->line : line,
                                "[%s]: %s must be %s 0", section, k[i].key,
                                k[i].positive > 0 ? ">" : ">=");
        }
    }
    if ((rc = lt_ini_string(ini, section, "calibrators", 0, &cal, err)))
        return rc;
    if (strcmp(cal, "yes") && strcmp(cal, "no"))
        return lt_error_set(err, LT_EINPUT, ini->path,
                            lt_ini_get(ini, section, "calibrators")->line,
                            "calibrators = '%s': use yes or no", cal);
    t->calibrators = !strcmp(cal, "yes");
    /* the tier names the group column, whose labels become parameter
     * names (sigma_int@TIER) */
    const char *name = section + 5;
    if (strlen(name) > LT_GROUP_NAME_MAX || strpbrk(name, "=:,.@ \t"))
        return lt_error_set(err, LT_EINPUT, ini->path, line,
                            "[%s]: a light-curve tier's name is its group label (sigma_int@%s): "
                            "1 to %d characters, none of = : , . @ or blanks",
                            section, name, LT_GROUP_NAME_MAX);
    return LT_OK;
}

static int read_tier(lt_ini *ini, const char *section, const lt_scenario *sc, lt_sim_tier *t,
                     lt_error *err)
{
    int rc;
    const char *spread = "volume";
    t->calibration = 0.0;
    if ((rc = lt_ini_double(ini, section, "z_min", 1, &t->z_min, err)) ||
        (rc = lt_ini_double(ini, section, "z_max", 1, &t->z_max, err)) ||
        (rc = lt_ini_long(ini, section, "count", 1, 1, MAX_OBJECTS, &t->count, err)) ||
        (rc = lt_ini_double(ini, section, "error", 1, &t->error, err)) ||
        (rc = lt_ini_double(ini, section, "calibration", 0, &t->calibration, err)) ||
        (rc = lt_ini_string(ini, section, "spread", 0, &spread, err)))
        return rc;
    long line = 0;
    for (size_t i = 0; i < ini->nsections; i++)
        if (!strcmp(ini->sections[i], section))
            line = ini->section_lines[i];
    if (!(t->z_min > 0.0) || !(t->z_max >= t->z_min))
        return lt_error_set(err, LT_EINPUT, ini->path, line,
                            "[%s]: need 0 < z_min <= z_max, got %g and %g", section, t->z_min,
                            t->z_max);
    if (t->error < 0 || t->calibration < 0)
        return lt_error_set(err, LT_EINPUT, ini->path, line,
                            "[%s]: error and calibration must be >= 0", section);
    if (sc->kind == LT_OBS_MB && (rc = read_lightcurve_tier(ini, section, sc, t, line, err)))
        return rc;
    /* a light-curve table's err_mb is the tier's error alone: 0 would make
     * its covariance singular */
    if (sc->kind == LT_OBS_MB && !(t->error > 0))
        return lt_error_set(err, LT_EINPUT, ini->path, lt_ini_get(ini, section, "error")->line,
                            "[%s]: error (err_mb) must be > 0 for light curves", section);
    if (!strcmp(spread, "volume"))
        t->volume = 1;
    else if (!strcmp(spread, "uniform"))
        t->volume = 0;
    else
        return lt_error_set(err, LT_EINPUT, ini->path, lt_ini_get(ini, section, "spread")->line,
                            "spread = '%s': use volume or uniform", spread);
    t->name = strdup(section + 5); /* after "tier." */
    if (!t->name)
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    if (!*t->name)
        return lt_error_set(err, LT_EINPUT, ini->path, line, "a tier needs a name: [tier.NAME]");
    return LT_OK;
}

int lt_scenario_read(const char *path, lt_scenario *sc, lt_error *err)
{
    memset(sc, 0, sizeof *sc);
    lt_ini *ini = lt_ini_read(path, err);
    if (!ini)
        return err ? err->code : LT_EINPUT;
    int rc = lt_scenario_from_ini(ini, sc, err);
    /* a forecast's own sections are lantern forecast's to check
     * (lt_forecast_read), so that one file serves both commands */
    for (size_t i = 0; i < ini->n; i++) {
        const char *s = ini->entries[i].section;
        if (!strcmp(s, "forecast") || !strcmp(s, "priors") || !strcmp(s, "fixed"))
            ini->entries[i].used = 1;
    }
    for (size_t i = 0; i < ini->nsections; i++) {
        const char *s = ini->sections[i];
        if (!strcmp(s, "forecast") || !strcmp(s, "priors") || !strcmp(s, "fixed"))
            ini->section_used[i] = 1;
    }
    if (rc == LT_OK && (rc = lt_ini_check_used(ini, err)))
        lt_scenario_free(sc);
    lt_ini_free(ini);
    return rc;
}

int lt_scenario_from_ini(lt_ini *ini, lt_scenario *sc, lt_error *err)
{
    memset(sc, 0, sizeof *sc);
    const char *path = ini->path;
    int rc = LT_OK;
    sc->path = strdup(path);
    if (!sc->path) {
        rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        goto done;
    }
    if ((rc = read_survey_section(ini, sc, err)) || (rc = read_cosmology_section(ini, sc, err)))
        goto done;
    for (size_t i = 0; i < ini->nsections; i++) {
        if (strncmp(ini->sections[i], "tier.", 5) != 0)
            continue;
        if (sc->ntiers == MAX_TIERS) {
            rc = lt_error_set(err, LT_EINPUT, path, ini->section_lines[i],
                              "more than %d tiers", MAX_TIERS);
            goto done;
        }
        lt_sim_tier *nt = realloc(sc->tiers, (sc->ntiers + 1) * sizeof *nt);
        if (!nt) {
            rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
            goto done;
        }
        sc->tiers = nt;
        memset(&sc->tiers[sc->ntiers], 0, sizeof *nt);
        sc->ntiers++;
        ini->section_used[i] = 1;
        if ((rc = read_tier(ini, ini->sections[i], sc, &sc->tiers[sc->ntiers - 1], err)))
            goto done;
    }
    if (sc->ntiers == 0) {
        rc = lt_error_set(err, LT_EINPUT, path, 0,
                          "no tiers: add at least one [tier.NAME] section with z_min, z_max, "
                          "count and error");
        goto done;
    }
    long total = 0;
    for (size_t t = 0; t < sc->ntiers; t++)
        total += sc->tiers[t].count;
    if (total > MAX_OBJECTS) {
        rc = lt_error_set(err, LT_EINPUT, path, 0, "%ld objects in all, over the limit of %ld",
                          total, MAX_OBJECTS);
        goto done;
    }
done:
    if (rc)
        lt_scenario_free(sc);
    return rc;
}

double lt_scenario_truth(const lt_scenario *sc, const char *name, double h0_fixed)
{
    lt_cosmo_params p = sc->params;
    if (!strcmp(name, "offset")) {
        if (sc->kind != LT_OBS_MAG && sc->kind != LT_OBS_MB)
            return 0.0;
        /* with h0 held at h0_fixed the offset absorbs 5 log10(h0_fixed / h0) */
        return isnan(h0_fixed) ? sc->offset : sc->offset + 5.0 * log10(h0_fixed / p.h0);
    }
    int id = lt_cosmo_param_find(name);
    if (id >= 0)
        return *lt_cosmo_params_slot(&p, id);
    if (sc->kind != LT_OBS_MB)
        return NAN;
    if (!strcmp(name, "alpha"))
        return sc->alpha;
    if (!strcmp(name, "beta"))
        return sc->beta;
    if (!strcmp(name, "gamma"))
        return sc->gamma;
    /* a tier's own: NAME@TIER, or NAME where all tiers agree */
    char base[64];
    snprintf(base, sizeof base, "%s", name);
    char *at = strchr(base, '@');
    if (at)
        *at++ = '\0';
    double v = NAN;
    for (size_t t = 0; t < sc->ntiers; t++) {
        const lt_sim_tier *tr = &sc->tiers[t];
        if (at && strcmp(at, tr->name))
            continue;
        double x = !strcmp(base, "sigma_int")    ? tr->intrinsic
                   : !strcmp(base, "x1_mean")    ? tr->x1_mean
                   : !strcmp(base, "x1_sd")      ? tr->x1_sd
                   : !strcmp(base, "color_mean") ? tr->color_mean
                   : !strcmp(base, "color_sd")   ? tr->color_sd
                                                 : NAN;
        if (isnan(x) || (!isnan(v) && x != v))
            return NAN;
        v = x;
    }
    return v;
}

void lt_sim_free(lt_sim *sim)
{
    lt_survey_free(sim->survey);
    free(sim->tier);
    free(sim->truth);
    free(sim->calib);
    free(sim->modes);
    free(sim->amplitude);
    free(sim->x1_true);
    free(sim->color_true);
    memset(sim, 0, sizeof *sim);
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* Redshifts of one tier: uniform in z, or following the comoving volume
 * element dV/dz ~ D_M^2 / E(z) by inverting its cumulative integral
 * (trapezoids on 2001 points; the distribution, not the distances, is
 * what this approximates). */
static int draw_redshifts(const lt_cosmo *c, const lt_sim_tier *t, gsl_rng *r, double *z,
                          lt_error *err)
{
    if (!t->volume || t->z_max == t->z_min) {
        for (long i = 0; i < t->count; i++)
            z[i] = t->z_min + (t->z_max - t->z_min) * gsl_rng_uniform(r);
    } else {
        enum { M = 2001 };
        double *grid = malloc(3 * M * sizeof *grid);
        if (!grid)
            return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        double *dm = grid + M, *cdf = grid + 2 * M;
        for (int k = 0; k < M; k++)
            grid[k] = t->z_min + (t->z_max - t->z_min) * k / (M - 1.0);
        lt_zgrid *g = lt_zgrid_alloc(M, grid, err);
        if (!g) {
            free(grid);
            return err ? err->code : LT_ENOMEM;
        }
        lt_cosmo_table tab = {.transverse = dm};
        int rc = lt_cosmo_eval(c, g, &tab, err);
        lt_zgrid_free(g);
        if (rc) {
            free(grid);
            return rc;
        }
        cdf[0] = 0.0;
        double prev = dm[0] * dm[0] / lt_cosmo_efunc(c, grid[0]);
        for (int k = 1; k < M; k++) {
            double cur = dm[k] * dm[k] / lt_cosmo_efunc(c, grid[k]);
            cdf[k] = cdf[k - 1] + 0.5 * (prev + cur);
            prev = cur;
        }
        for (long i = 0; i < t->count; i++) {
            double u = gsl_rng_uniform(r) * cdf[M - 1];
            int lo = 0, hi = M - 1;
            while (hi - lo > 1) {
                int mid = (lo + hi) / 2;
                if (cdf[mid] <= u)
                    lo = mid;
                else
                    hi = mid;
            }
            double f = cdf[hi] > cdf[lo] ? (u - cdf[lo]) / (cdf[hi] - cdf[lo]) : 0.0;
            z[i] = grid[lo] + f * (grid[hi] - grid[lo]);
        }
        free(grid);
    }
    qsort(z, (size_t)t->count, sizeof *z, cmp_double);
    return LT_OK;
}

/* The light-curve columns of survey s (n objects) and sim's true x1 and
 * colour; -1 when out of memory (lt_sim_free frees what was made). */
static int lightcurve_alloc(lt_survey *s, lt_sim *sim)
{
    size_t n = s->n ? s->n : 1;
    lt_lightcurve *lc = s->lc = calloc(1, sizeof *lc);
    if (!lc)
        return -1;
    double **arr[] = {&lc->x1,       &lc->color,      &lc->mass,         &lc->err_x1,
                      &lc->err_color, &lc->calib_mu, &lc->err_calib_mu, &sim->x1_true,
                      &sim->color_true};
    for (size_t k = 0; k < sizeof arr / sizeof arr[0]; k++)
        if (!(*arr[k] = malloc(n * sizeof **arr[k])))
            return -1;
    lc->calibrator = calloc(n, sizeof *lc->calibrator);
    lc->group = calloc(n, sizeof *lc->group);
    return lc->calibrator && lc->group ? 0 : -1;
}

/* One light-curve object i of tier t: its true x1, colour and host mass,
 * its noise in mb (all but the measurement error's scale, which is
 * sigma[i] = error_t, the file's err_mb) and its observed x1 and colour.
 * A calibrator's distance error is drawn here and added to mu later. */
static int draw_lightcurve(const lt_sim_tier *tier, size_t t, size_t i, double pv, gsl_rng *r,
                           lt_sim *out, double *noise, double *sigma)
{
    lt_lightcurve *lc = out->survey->lc;
    double z = out->survey->z[i];
    double xt = tier->x1_mean + tier->x1_sd * gsl_ran_gaussian(r, 1.0);
    double ct = tier->color_mean + tier->color_sd * gsl_ran_gaussian(r, 1.0);
    lc->mass[i] = tier->mass_mean + tier->mass_sd * gsl_ran_gaussian(r, 1.0);
    double g_int = gsl_ran_gaussian(r, 1.0), g_pv = gsl_ran_gaussian(r, 1.0),
           g_lens = gsl_ran_gaussian(r, 1.0), g_mb = gsl_ran_gaussian(r, 1.0),
           g_x1 = gsl_ran_gaussian(r, 1.0), g_c = gsl_ran_gaussian(r, 1.0),
           g_cal = gsl_ran_gaussian(r, 1.0);
    int cal = tier->calibrators;
    noise[i] = g_int * tier->intrinsic + g_mb * tier->error + out->calib[t] +
               (cal ? 0.0 : g_pv * pv + g_lens * 0.055 * z); /* lensing: Jonsson et al. 2010 */
    sigma[i] = tier->error;
    out->x1_true[i] = xt, out->color_true[i] = ct;
    lc->x1[i] = xt + tier->err_x1 * g_x1, lc->err_x1[i] = tier->err_x1;
    lc->color[i] = ct + tier->err_color * g_c, lc->err_color[i] = tier->err_color;
    lc->calibrator[i] = cal;
    lc->ncalibrators += (size_t)cal;
    lc->calib_mu[i] = cal ? g_cal * tier->calib_error : NAN; /* mu added with the truth */
    lc->err_calib_mu[i] = cal ? tier->calib_error : NAN;
    return (lc->group[i] = strdup(tier->name)) ? 0 : -1;
}

int lt_simulate(const lt_scenario *sc, lt_sim *out, lt_error *err)
{
    memset(out, 0, sizeof *out);
    lt_cosmo c;
    int rc = lt_cosmo_init(&c, sc->model, &sc->params, err);
    if (rc)
        return rc;
    size_t n = 0, nt = sc->ntiers;
    for (size_t t = 0; t < nt; t++)
        n += (size_t)sc->tiers[t].count;
    lt_survey *s = calloc(1, sizeof *s);
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    double *dm = malloc(n * sizeof *dm), *sigma = malloc(n * sizeof *sigma);
    double *noise = malloc(n * sizeof *noise);
    lt_zgrid *g = NULL;
    out->survey = s;
    out->n = n, out->ntiers = nt;
    if (s) {
        s->n = s->n_read = n;
        s->kind = sc->kind;
        s->z = malloc(n * sizeof *s->z);
        s->zhel = malloc(n * sizeof *s->zhel);
        s->obs = malloc(n * sizeof *s->obs);
        s->err = malloc(n * sizeof *s->err);
        s->id = calloc(n, sizeof *s->id);
        s->row = malloc(n * sizeof *s->row);
    }
    out->tier = malloc(n * sizeof *out->tier);
    out->truth = malloc(n * sizeof *out->truth);
    out->calib = malloc(nt * sizeof *out->calib);
    out->modes = calloc(n * nt, sizeof *out->modes);
    out->amplitude = malloc(nt * sizeof *out->amplitude);
    if (!s || !r || !dm || !sigma || !noise || !s->z || !s->zhel || !s->obs || !s->err ||
        !s->id || !s->row || !out->tier || !out->truth || !out->calib || !out->modes ||
        !out->amplitude || (sc->kind == LT_OBS_MB && lightcurve_alloc(s, out))) {
        rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory for %zu objects", n);
        goto done;
    }
    gsl_rng_set(r, sc->seed);

    /* The draws, tier by tier, always in the same order. */
    const double c_km_s = LT_C_KM_S, k5 = 5.0 / M_LN10;
    size_t i0 = 0;
    for (size_t t = 0; t < nt; t++) {
        const lt_sim_tier *tier = &sc->tiers[t];
        out->calib[t] = gsl_ran_gaussian(r, 1.0) * tier->calibration;
        out->amplitude[t] = tier->calibration;
        if ((rc = draw_redshifts(&c, tier, r, s->z + i0, err))) {
            lt_error_locate(err, rc, sc->path, 0);
            goto done;
        }
        for (long j = 0; j < tier->count; j++) {
            size_t i = i0 + (size_t)j;
            double z = s->z[i];
            double cos_theta = 2.0 * gsl_rng_uniform(r) - 1.0;
            s->zhel[i] = (1.0 + z) * (1.0 + sc->solar_motion * cos_theta / c_km_s) - 1.0;
            double pv = k5 * (sc->velocity_dispersion / c_km_s) * (1.0 + z) /
                        (z * (1.0 + 0.5 * z));
            if (sc->kind == LT_OBS_MB) {
                if (draw_lightcurve(tier, t, i, pv, r, out, noise, sigma)) {
                    rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
                    goto done;
                }
            } else {
                double g1 = gsl_ran_gaussian(r, 1.0), g2 = gsl_ran_gaussian(r, 1.0),
                       g3 = gsl_ran_gaussian(r, 1.0);
                noise[i] = g1 * tier->error + g2 * sc->intrinsic + g3 * pv + out->calib[t];
                sigma[i] =
                    sqrt(tier->error * tier->error + sc->intrinsic * sc->intrinsic + pv * pv);
            }
            out->tier[i] = t;
            s->row[i] = (long)i + 1;
            char id[96];
            snprintf(id, sizeof id, "%s-%04ld", tier->name, j + 1);
            if (!(s->id[i] = strdup(id))) {
                rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
                goto done;
            }
        }
        i0 += (size_t)tier->count;
    }

    /* The truth, all objects in one pass of the cosmology engine. */
    g = lt_zgrid_alloc(n, s->z, err);
    if (!g) {
        rc = err ? err->code : LT_ENOMEM;
        goto done;
    }
    lt_cosmo_table tab = {.transverse = dm};
    if ((rc = lt_cosmo_eval(&c, g, &tab, err))) {
        rc = lt_error_locate(err, rc, sc->path, 0);
        goto done;
    }
    for (size_t i = 0; i < n; i++) {
        double dl = (1.0 + s->zhel[i]) * dm[i]; /* d_L = (1 + zhel) D_M(z) */
        size_t t = out->tier[i];
        if (sc->kind == LT_OBS_DL) {
            double lin = dl / k5; /* d(dl)/d(mu) = dl ln10 / 5 */
            out->truth[i] = dl;
            s->obs[i] = dl * pow(10.0, noise[i] / 5.0);
            s->err[i] = lin * sigma[i];
            out->modes[i * nt + t] = lin;
        } else if (sc->kind == LT_OBS_MB) {
            /* the noiseless mb of the true x1 and colour */
            lt_lightcurve *lc = s->lc;
            double mu = 5.0 * log10(dl) + 25.0;
            out->truth[i] = mu + sc->offset + sc->gamma * (lc->mass[i] >= sc->mass_split) -
                            sc->alpha * out->x1_true[i] + sc->beta * out->color_true[i];
            s->obs[i] = out->truth[i] + noise[i];
            s->err[i] = sigma[i];
            if (lc->calibrator[i])
                lc->calib_mu[i] += mu;
            out->modes[i * nt + t] = 1.0;
        } else {
            double mu = 5.0 * log10(dl) + 25.0;
            out->truth[i] = mu + (sc->kind == LT_OBS_MAG ? sc->offset : 0.0);
            s->obs[i] = out->truth[i] + noise[i];
            s->err[i] = sigma[i];
            out->modes[i * nt + t] = 1.0;
        }
    }
    /* The covariance a fit would build from the files: diag(err^2) + modes. */
    s->cov = lt_cov_alloc(n, err);
    if (!s->cov) {
        rc = LT_ENOMEM;
        goto done;
    }
    for (size_t i = 0; i < n; i++)
        sigma[i] = s->err[i] * s->err[i];
    if ((rc = lt_cov_add_diag(s->cov, sigma, err)) ||
        (rc = lt_cov_add_modes(s->cov, nt, out->modes, out->amplitude, err)) ||
        (rc = lt_cov_factor(s->cov, err)))
        goto done;
done:
    lt_zgrid_free(g);
    gsl_rng_free(r);
    free(dm);
    free(sigma);
    free(noise);
    if (rc)
        lt_sim_free(out);
    return rc;
}
