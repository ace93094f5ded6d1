/*
 * The model table: three kinds of dark energy, each flat or curved.
 *
 * Dark-energy density relative to today, with x = ln(1+z) and a = 1/(1+z):
 *   cosmological constant  f = 1
 *   constant w             f = (1+z)^(3(1+w0))
 *   w0-wa                  f = (1+z)^(3(1+w0+wa)) exp(-3 wa z/(1+z))
 * The last is the equation of state w(a) = w0 + wa (1 - a) of Chevallier &
 * Polarski 2001 (IJMPD 10, 213) and Linder 2003 (PRL 90, 091301); the
 * density follows from integrating d ln f / d ln(1+z) = 3 (1 + w).
 */
#include <math.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "lantern/text.h"
#include "internal.h"

/* ---- cosmological constant ---- */
static double lambda_density(const lt_cosmo *c, double x, double inv_y)
{
    (void)c, (void)x, (void)inv_y;
    return 1.0;
}
static double lambda_w(const lt_cosmo *c, double inv_y)
{
    (void)c, (void)inv_y;
    return -1.0;
}
static double lambda_w_early(const lt_cosmo *c)
{
    (void)c;
    return -1.0;
}

/* ---- constant w ---- */
static double wconst_density(const lt_cosmo *c, double x, double inv_y)
{
    (void)inv_y;
    return exp(3.0 * (1.0 + c->p.w0) * x);
}
static double wconst_w(const lt_cosmo *c, double inv_y)
{
    (void)inv_y;
    return c->p.w0;
}
static double wconst_w_early(const lt_cosmo *c) { return c->p.w0; }

/* ---- w0-wa ---- */
static double cpl_density(const lt_cosmo *c, double x, double inv_y)
{
    /* -3 wa z/(1+z) = -3 wa (1 - a) */
    return exp(3.0 * (1.0 + c->p.w0 + c->p.wa) * x - 3.0 * c->p.wa * (1.0 - inv_y));
}
static double cpl_w(const lt_cosmo *c, double inv_y)
{
    return c->p.w0 + c->p.wa * (1.0 - inv_y);
}
static double cpl_w_early(const lt_cosmo *c) { return c->p.w0 + c->p.wa; }

static const lt_dark_energy de_lambda = {"cosmological constant", lambda_density,
                                         lambda_w, lambda_w_early};
static const lt_dark_energy de_wconst = {"constant w", wconst_density, wconst_w,
                                         wconst_w_early};
static const lt_dark_energy de_cpl = {"w0-wa", cpl_density, cpl_w, cpl_w_early};

#define RAD (LT_PMASK(LT_P_T_CMB) | LT_PMASK(LT_P_N_EFF))
#define BASE (LT_PMASK(LT_P_H0) | LT_PMASK(LT_P_OMEGA_M) | RAD)
#define CURVED LT_PMASK(LT_P_OMEGA_DE)
#define W0 LT_PMASK(LT_P_W0)
#define WA LT_PMASK(LT_P_WA)

static const lt_cosmo_model models[] = {
    {"lcdm-flat", "flat universe, cosmological constant", 1, BASE, &de_lambda},
    {"lcdm", "curved universe, cosmological constant", 0, BASE | CURVED, &de_lambda},
    {"wcdm-flat", "flat universe, dark energy with constant w", 1, BASE | W0, &de_wconst},
    {"wcdm", "curved universe, dark energy with constant w", 0, BASE | CURVED | W0,
     &de_wconst},
    {"w0wa-flat", "flat universe, w(a) = w0 + wa (1 - a)", 1, BASE | W0 | WA, &de_cpl},
    {"w0wa", "curved universe, w(a) = w0 + wa (1 - a)", 0, BASE | CURVED | W0 | WA,
     &de_cpl},
};

size_t lt_cosmo_model_count(void) { return sizeof models / sizeof models[0]; }

const lt_cosmo_model *lt_cosmo_model_at(size_t i)
{
    return i < lt_cosmo_model_count() ? &models[i] : NULL;
}

const lt_cosmo_model *lt_cosmo_model_find(const char *name)
{
    for (size_t i = 0; name && i < lt_cosmo_model_count(); i++)
        if (strcmp(models[i].name, name) == 0)
            return &models[i];
    return NULL;
}

const lt_cosmo_model *lt_cosmo_model_lookup(const char *name, const char *file, long line,
                                            lt_error *err)
{
    const lt_cosmo_model *m = lt_cosmo_model_find(name);
    if (m)
        return m;
    /* the list from the table itself, so that no message goes stale */
    char list[256] = "";
    for (size_t i = 0, used = 0; i < lt_cosmo_model_count() && used < sizeof list; i++)
        used += (size_t)snprintf(list + used, sizeof list - used, "%s%s", i ? ", " : "",
                                 models[i].name);
    lt_error_set(err, LT_EINPUT, file, line, "unknown model '%s' (models: %s)", name, list);
    return NULL;
}

int lt_cosmo_model_list(const char *text, const char *file, long line, const char *what,
                        size_t max, const lt_cosmo_model **out, size_t *n, lt_error *err)
{
    *n = 0;
    for (const char *p = text; *p;) {
        size_t len = strcspn(p, ", \t");
        if (len) {
            char name[64];
            snprintf(name, sizeof name, "%.*s", (int)len, p);
            lt_error unknown;
            const lt_cosmo_model *m = lt_cosmo_model_lookup(name, file, line, &unknown);
            if (!m) /* the lookup's message (with the list of models), after what */
                return lt_error_set(err, LT_EINPUT, file, line, "%s%s", what, unknown.msg);
            for (size_t k = 0; k < *n; k++)
                if (out[k] == m)
                    return lt_error_set(err, LT_EINPUT, file, line, "%s%s is listed twice",
                                        what, name);
            if (*n == max)
                return lt_error_set(err, LT_EINPUT, file, line, "%sat most %zu models", what,
                                    max);
            out[(*n)++] = m;
        }
        p += len + (p[len] != '\0');
    }
    return *n ? LT_OK : lt_error_set(err, LT_EINPUT, file, line, "%sno models given", what);
}

int lt_cosmo_model_uses(const lt_cosmo_model *m, int id)
{
    return id >= 0 && id < LT_P_COUNT && (m->params & LT_PMASK(id)) != 0;
}

/* ---- parameters ---- */
static const struct {
    const char *name;
    size_t offset;
} param_table[LT_P_COUNT] = {
    [LT_P_H0] = {"h0", offsetof(lt_cosmo_params, h0)},
    [LT_P_OMEGA_M] = {"omega_m", offsetof(lt_cosmo_params, omega_m)},
    [LT_P_OMEGA_DE] = {"omega_de", offsetof(lt_cosmo_params, omega_de)},
    [LT_P_W0] = {"w0", offsetof(lt_cosmo_params, w0)},
    [LT_P_WA] = {"wa", offsetof(lt_cosmo_params, wa)},
    [LT_P_T_CMB] = {"t_cmb", offsetof(lt_cosmo_params, t_cmb)},
    [LT_P_N_EFF] = {"n_eff", offsetof(lt_cosmo_params, n_eff)},
    [LT_P_M_NU] = {"m_nu", offsetof(lt_cosmo_params, m_nu)},
    [LT_P_OMEGA_B_H2] = {"omega_b_h2", offsetof(lt_cosmo_params, omega_b_h2)},
};

const char *lt_cosmo_param_name(int id)
{
    return id >= 0 && id < LT_P_COUNT ? param_table[id].name : NULL;
}

int lt_cosmo_param_find(const char *name)
{
    for (int id = 0; name && id < LT_P_COUNT; id++)
        if (strcmp(param_table[id].name, name) == 0)
            return id;
    return -1;
}

double *lt_cosmo_params_slot(lt_cosmo_params *p, int id)
{
    if (id < 0 || id >= LT_P_COUNT)
        return NULL;
    return (double *)((char *)p + param_table[id].offset);
}

void lt_cosmo_params_default(lt_cosmo_params *p)
{
    p->h0 = 70.0;
    p->omega_m = 0.3;
    p->omega_de = 0.7;
    p->w0 = -1.0;
    p->wa = 0.0;
    p->t_cmb = 0.0;
    /* 3.046: the standard-model value with non-instantaneous neutrino
     * decoupling, Mangano et al. 2005 (Nucl. Phys. B 729, 221). */
    p->n_eff = 3.046;
    /* one 0.06 eV state, the minimal mass of the normal ordering and the
     * baseline of Planck 2018 VI (sec. 2.1, from memory); omega_b h^2 of
     * Planck 2018 VI, table 2 (TT,TE,EE+lowE+lensing), used only where a
     * probe needs it */
    p->m_nu = 0.06;
    p->omega_b_h2 = 0.02237;
}

int lt_cosmo_params_set(lt_cosmo_params *p, const lt_cosmo_model *m,
                        const char *name, double value, lt_error *err)
{
    int id = lt_cosmo_param_find(name);
    if (strcmp(name, "omega_k") == 0)
        return lt_error_set(err, LT_EINPUT, NULL, 0,
                            "omega_k is derived (1 - omega_m - omega_de - omega_r); "
                            "set omega_de instead, with a curved model");
    if (id < 0)
        return lt_error_set(err, LT_EINPUT, NULL, 0,
                            "unknown parameter '%s' (parameters: h0, omega_m, "
                            "omega_de, w0, wa, t_cmb, n_eff, m_nu, omega_b_h2)",
                            name);
    if (id == LT_P_OMEGA_DE && m->flat)
        return lt_error_set(err, LT_EINPUT, NULL, 0,
                            "omega_de is derived in the flat model %s (1 - omega_m - "
                            "omega_r); use a curved model to set it",
                            m->name);
    if (!lt_cosmo_model_uses(m, id) && !LT_P_EARLY(id))
        return lt_error_set(err, LT_EINPUT, NULL, 0,
                            "model %s has no parameter %s", m->name, name);
    *lt_cosmo_params_slot(p, id) = value;
    return LT_OK;
}

int lt_cosmo_params_parse(lt_cosmo_params *p, const lt_cosmo_model *m, const char *text,
                          unsigned *seen, const char *where, lt_error *err)
{
    char *copy = strdup(text);
    if (!copy)
        return lt_error_set(err, LT_ENOMEM, where, 0, "out of memory");
    int rc = LT_OK;
    char *save = NULL;
    for (char *item = strtok_r(copy, ",", &save); item && !rc; item = strtok_r(NULL, ",", &save)) {
        char *eq = strchr(item, '=');
        double v;
        if (!eq) {
            rc = lt_error_set(err, LT_EINPUT, where, 0, "'%s' is not of the form name=value", item);
            break;
        }
        *eq = '\0';
        if (lt_parse_double(eq + 1, &v)) {
            rc = lt_error_set(err, LT_EINPUT, where, 0, "value of %s is not a finite number: '%s'",
                              item, eq + 1);
            break;
        }
        if ((rc = lt_cosmo_params_set(p, m, item, v, err))) {
            lt_error_locate(err, LT_EINPUT, where, 0);
            break;
        }
        unsigned bit = LT_PMASK(lt_cosmo_param_find(item));
        if (*seen & bit)
            rc = lt_error_set(err, LT_EINPUT, where, 0, "%s is given twice", item);
        *seen |= bit;
    }
    free(copy);
    return rc;
}
