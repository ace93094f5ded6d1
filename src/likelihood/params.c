/*
 * Priors, the parameters lantern knows by name, and the likelihood's
 * specification (settings and measurements by name): see
 * include/lantern/likelihood.h.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "lantern/likelihood.h"
#include "lantern/text.h"

/* ---- priors ---- */
int lt_prior_parse(const char *text, lt_prior *p, lt_error *err)
{
    char buf[256];
    if (strlen(text) >= sizeof buf)
        return lt_error_set(err, LT_EINPUT, NULL, 0, "prior '%.40s...' is too long", text);
    strcpy(buf, text);
    char *f[4] = {0};
    int n = 0;
    for (char *s = buf; n < 4;) {
        f[n++] = s;
        char *c = strchr(s, ':');
        if (!c)
            break;
        *c = '\0';
        s = c + 1;
    }
    double a, b;
    if (n != 3 || lt_parse_double(f[1], &a) || lt_parse_double(f[2], &b))
        return lt_error_set(err, LT_EINPUT, NULL, 0,
                            "prior '%s' is not uniform:LO:HI or gauss:MEAN:SD", text);
    if (!strcmp(f[0], "uniform")) {
        if (!(a < b))
            return lt_error_set(err, LT_EINPUT, NULL, 0,
                                "prior '%s': impossible bounds, need LO < HI", text);
        *p = (lt_prior){LT_PRIOR_UNIFORM, a, b};
    } else if (!strcmp(f[0], "gauss")) {
        if (!(b > 0))
            return lt_error_set(err, LT_EINPUT, NULL, 0,
                                "prior '%s': the standard deviation must be > 0", text);
        *p = (lt_prior){LT_PRIOR_GAUSS, a, b};
    } else {
        return lt_error_set(err, LT_EINPUT, NULL, 0,
                            "prior '%s': the kind must be uniform or gauss", text);
    }
    return LT_OK;
}

double lt_prior_logpdf(const lt_prior *p, double x)
{
    if (p->kind == LT_PRIOR_UNIFORM)
        return x >= p->a && x <= p->b ? -log(p->b - p->a) : -INFINITY;
    double u = (x - p->a) / p->b;
    return -0.5 * u * u - log(p->b) - 0.5 * log(2.0 * M_PI);
}

void lt_prior_format(const lt_prior *p, char *buf, size_t size)
{
    snprintf(buf, size, p->kind == LT_PRIOR_UNIFORM ? "U(%g, %g)" : "N(%g, %g)", p->a, p->b);
}

/* ---- the parameters lantern knows ---- */

/* The standardisation's parameters; group: may also be NAME@GROUP. */
static const struct {
    const char *name;
    int group;
    lt_prior prior;
} std_params[] = {{"alpha", 0, {LT_PRIOR_UNIFORM, 0, 1}},
                  {"beta", 0, {LT_PRIOR_UNIFORM, 0, 10}},
                  {"gamma", 0, {LT_PRIOR_UNIFORM, -0.5, 0.5}},
                  {"sigma_int", 1, {LT_PRIOR_UNIFORM, 0, 1}},
                  {"x1_mean", 1, {LT_PRIOR_UNIFORM, -5, 5}},
                  {"x1_sd", 1, {LT_PRIOR_UNIFORM, 0, 5}},
                  {"color_mean", 1, {LT_PRIOR_UNIFORM, -1, 1}},
                  {"color_sd", 1, {LT_PRIOR_UNIFORM, 0, 1}}};
#define NSTD (sizeof std_params / sizeof std_params[0])

const char *lt_param_split(const char *name, char *base)
{
    const char *at = strchr(name, '@');
    size_t n = at ? (size_t)(at - name) : strlen(name);
    if (n >= LT_NAME_MAX)
        n = LT_NAME_MAX - 1;
    memcpy(base, name, n);
    base[n] = '\0';
    return at ? at + 1 : NULL;
}

/* The std_params index of name (per group or not), or -1; offset@GROUP
 * is NSTD. */
static int std_find(const char *name)
{
    char base[LT_NAME_MAX];
    const char *group = lt_param_split(name, base);
    if (group && (!*group || strlen(group) > LT_GROUP_NAME_MAX || strpbrk(group, "=:,.@ \t")))
        return -1;
    if (group && !strcmp(base, "offset"))
        return (int)NSTD;
    for (size_t i = 0; i < NSTD; i++)
        if (!strcmp(std_params[i].name, base) && (!group || std_params[i].group))
            return (int)i;
    return -1;
}

int lt_param_is_standardisation(const char *name) { return name && std_find(name) >= 0; }

int lt_param_known(const char *name)
{
    return name && (!strcmp(name, "offset") || !strcmp(name, "rd_h") ||
                    lt_cosmo_param_find(name) >= 0 || std_find(name) >= 0);
}

int lt_param_of_model(const lt_cosmo_model *m, const char *name)
{
    if (!strcmp(name, "offset") || !strcmp(name, "rd_h") || std_find(name) >= 0)
        return 1;
    int id = lt_cosmo_param_find(name);
    if (id < 0 || (id == LT_P_OMEGA_DE && m->flat))
        return 0;
    return lt_cosmo_model_uses(m, id) || LT_P_EARLY(id);
}

const char *lt_param_known_list(void)
{
    return "h0, omega_m, omega_de, w0, wa, t_cmb, n_eff, m_nu, omega_b_h2, offset, rd_h, and "
           "for light-curve tables alpha, beta, gamma, sigma_int, x1_mean, x1_sd, color_mean, "
           "color_sd (per group: NAME@GROUP)";
}

lt_prior lt_param_default_prior(const char *name, lt_obs kind)
{
    static const struct {
        const char *name;
        lt_prior p;
    } t[] = {{"h0", {LT_PRIOR_UNIFORM, 40, 100}}, {"omega_m", {LT_PRIOR_UNIFORM, 0, 1}},
             {"omega_de", {LT_PRIOR_UNIFORM, 0, 1.6}}, {"w0", {LT_PRIOR_UNIFORM, -2, 0}},
             {"wa", {LT_PRIOR_UNIFORM, -3, 2}},
             {"omega_b_h2", {LT_PRIOR_UNIFORM, 0.005, 0.1}},
             {"rd_h", {LT_PRIOR_UNIFORM, 50, 150}}};
    if (!strcmp(name, "offset"))
        return kind == LT_OBS_MAG || kind == LT_OBS_MB ? (lt_prior){LT_PRIOR_UNIFORM, -21, -17}
                                                       : (lt_prior){LT_PRIOR_UNIFORM, -2, 2};
    int k = std_find(name);
    if (k == (int)NSTD) /* offset@GROUP: a group's shift from M */
        return (lt_prior){LT_PRIOR_UNIFORM, -1, 1};
    if (k >= 0)
        return std_params[k].prior;
    for (size_t i = 0; i < sizeof t / sizeof t[0]; i++)
        if (!strcmp(t[i].name, name))
            return t[i].p;
    return (lt_prior){LT_PRIOR_UNIFORM, 0, 0};
}

const char *lt_std_method_name(lt_std_method m) { return m == LT_STD_CHI2 ? "chi2" : "latent"; }

int lt_std_method_parse(const char *text)
{
    if (!strcmp(text, "latent"))
        return LT_STD_LATENT;
    if (!strcmp(text, "chi2"))
        return LT_STD_CHI2;
    return -1;
}

const char *lt_offset_name(lt_offset_mode m)
{
    switch (m) {
    case LT_OFFSET_NONE: return "none";
    case LT_OFFSET_MARGINAL: return "marginal";
    case LT_OFFSET_SAMPLED: return "sampled";
    default: return "default";
    }
}

int lt_offset_parse(const char *text)
{
    if (!strcmp(text, "none"))
        return LT_OFFSET_NONE;
    if (!strcmp(text, "marginal"))
        return LT_OFFSET_MARGINAL;
    if (!strcmp(text, "sampled"))
        return LT_OFFSET_SAMPLED;
    return -1;
}

/* ---- the specification ---- */
void lt_like_spec_init(lt_like_spec *s, const lt_cosmo_model *m)
{
    memset(s, 0, sizeof *s);
    s->model = m;
    s->offset = LT_OFFSET_DEFAULT;
    s->std = (lt_std_spec){LT_STD_LATENT, 0, 150.0, LT_MASS_SPLIT};
}

const lt_param_setting *lt_like_spec_setting(const lt_like_spec *s, const char *name)
{
    for (size_t i = 0; i < s->nsettings; i++)
        if (!strcmp(s->settings[i].name, name))
            return &s->settings[i];
    return NULL;
}

/* The slot for name's setting: its earlier one, or a new one. */
static lt_param_setting *setting_slot(lt_like_spec *s, const char *name, lt_error *err)
{
    if (strlen(name) >= LT_NAME_MAX) {
        lt_error_set(err, LT_EINPUT, NULL, 0, "parameter name '%.40s' is too long", name);
        return NULL;
    }
    lt_param_setting *p = (lt_param_setting *)lt_like_spec_setting(s, name);
    if (p)
        return p;
    if (s->nsettings == LT_MAX_PARAMS) {
        lt_error_set(err, LT_EINPUT, NULL, 0, "more than %d parameter settings", LT_MAX_PARAMS);
        return NULL;
    }
    p = &s->settings[s->nsettings++];
    memset(p, 0, sizeof *p);
    strcpy(p->name, name);
    return p;
}

int lt_like_spec_prior(lt_like_spec *s, const char *name, lt_prior prior, lt_error *err)
{
    lt_param_setting *p = setting_slot(s, name, err);
    if (!p)
        return LT_EINPUT;
    p->fixed = 0, p->prior = prior, p->value = 0.0;
    return LT_OK;
}

int lt_like_spec_fix(lt_like_spec *s, const char *name, double value, lt_error *err)
{
    lt_param_setting *p = setting_slot(s, name, err);
    if (!p)
        return LT_EINPUT;
    p->fixed = 1, p->prior = (lt_prior){LT_PRIOR_UNIFORM, 0, 0}, p->value = value;
    return LT_OK;
}

int lt_like_spec_measure(lt_like_spec *s, const char *name, double mean, double sd,
                         lt_error *err)
{
    if (strlen(name) >= LT_NAME_MAX)
        return lt_error_set(err, LT_EINPUT, NULL, 0, "quantity name '%.40s' is too long", name);
    if (!(sd > 0.0) || !isfinite(sd) || !isfinite(mean))
        return lt_error_set(err, LT_EINPUT, NULL, 0,
                            "the measurement of %s needs a finite mean and an sd > 0", name);
    if (s->nmeasurements == LT_MAX_MEASUREMENTS)
        return lt_error_set(err, LT_EINPUT, NULL, 0, "more than %d measurements",
                            LT_MAX_MEASUREMENTS);
    lt_measurement *m = &s->measurements[s->nmeasurements++];
    memset(m, 0, sizeof *m);
    strcpy(m->name, name);
    m->mean = mean, m->sd = sd;
    return LT_OK;
}
