/*
 * Derived quantities (omega_k or omega_de, q0, z_t, the age, r_d and r_d h) from a
 * cosmology or a point of the likelihood, any quantity by name, and the
 * w0-wa pivot: see include/lantern/likelihood.h.
 */
#include <math.h>
#include <string.h>

#include "internal.h"

/* ---- derived parameters ---- */
const char *lt_derived_name(int d)
{
    static const char *names[LT_NDER] = {"omega_k", "omega_de", "q0", "z_t", "age_gyr",
                                         "rd", "rd_h"};
    return d >= 0 && d < LT_NDER ? names[d] : NULL;
}

int lt_derived_find(const char *name)
{
    for (int d = 0; d < LT_NDER; d++)
        if (!strcmp(lt_derived_name(d), name))
            return d;
    return -1;
}

int lt_like_has_derived(const lt_like *l, int d)
{
    switch (d) {
    case LT_DER_OMEGA_K: return !l->model->flat;
    case LT_DER_OMEGA_DE: return l->model->flat;
    case LT_DER_Q0:
    case LT_DER_Z_T: return 1;
    case LT_DER_AGE: return l->h0_known;
    case LT_DER_RD:
    case LT_DER_RD_H: return l->rd_known;
    default: return 0;
    }
}

double lt_cosmo_transition_z(const lt_cosmo *c)
{
    /* q(0) < 0 and q > 0 somewhere before: scan in x = ln(1+z) to z = 1000
     * for the first sign change, then bisect. */
    if (!(lt_cosmo_q(c, 0.0) < 0.0))
        return NAN;
    double x_lo = 0.0, x_hi = NAN;
    for (double x = 0.05; x <= log(1001.0); x += 0.05) {
        double z = expm1(x);
        if (!(lt_cosmo_e2(c, z) > 0.0))
            return NAN; /* the universe turns around first */
        if (lt_cosmo_q(c, z) >= 0.0) {
            x_hi = x;
            break;
        }
        x_lo = x;
    }
    if (isnan(x_hi))
        return NAN;
    for (int it = 0; it < 200 && x_hi - x_lo > 1e-15 * (1 + x_hi); it++) {
        double x = 0.5 * (x_lo + x_hi);
        if (lt_cosmo_q(c, expm1(x)) < 0.0)
            x_lo = x;
        else
            x_hi = x;
    }
    return expm1(0.5 * (x_lo + x_hi));
}

double lt_derived_of(const lt_cosmo *c, int d)
{
    switch (d) {
    case LT_DER_OMEGA_K: return c->omega_k;
    case LT_DER_OMEGA_DE: return c->p.omega_de;
    case LT_DER_Q0: return lt_cosmo_q(c, 0.0);
    case LT_DER_Z_T: return lt_cosmo_transition_z(c);
    case LT_DER_AGE: {
        double age;
        return lt_cosmo_age(c, 0.0, &age, NULL) == LT_OK ? age : NAN;
    }
    case LT_DER_RD:
    case LT_DER_RD_H: {
        double rd;
        if (!lt_cosmo_early_standard(c) || lt_cosmo_rd(c, &rd, NULL))
            return NAN;
        return d == LT_DER_RD ? rd : rd * c->p.h0 / 100.0;
    }
    default: return NAN;
    }
}

double lt_like_derived(const lt_like *l, const double *theta, int d)
{
    lt_cosmo c;
    if (lt_like_cosmo(l, theta, &c, NULL) != LT_OK)
        return NAN;
    return lt_derived_of(&c, d);
}

int lt_quantity_find(const lt_like *l, const char *name, lt_quantity *q)
{
    q->at = -1;
    for (size_t k = 0; k < l->npar; k++)
        if (!strcmp(l->par[k].name, name))
            q->at = (int)k;
    q->derived = q->at < 0 ? lt_derived_find(name) : -1;
    q->cosmo = q->at < 0 && q->derived < 0 ? lt_cosmo_param_find(name) : -1;
    return q->at >= 0 || q->derived >= 0 || q->cosmo >= 0;
}

double lt_quantity_value(const lt_quantity *q, const double *values, const lt_cosmo *c)
{
    if (q->at >= 0)
        return values[q->at];
    if (q->derived >= 0)
        return lt_derived_of(c, q->derived);
    lt_cosmo_params p = c->p;
    return *lt_cosmo_params_slot(&p, q->cosmo);
}

double lt_like_quantity(const lt_like *l, const double *theta, const char *name)
{
    double values[LT_MAX_PARAMS];
    lt_cosmo_params p;
    lt_quantity q;
    if (!lt_quantity_find(l, name, &q))
        return NAN;
    lt_like_values(l, theta, values, &p);
    lt_cosmo c;
    if (q.at < 0 && lt_cosmo_init(&c, l->model, &p, NULL) != LT_OK)
        return NAN;
    return lt_quantity_value(&q, values, &c);
}

double lt_pivot_redshift(double cov_w0_wa, double var_wa)
{
    if (!(var_wa > 0.0))
        return NAN;
    double a_p = 1.0 + cov_w0_wa / var_wa;
    return a_p > 0.0 ? 1.0 / a_p - 1.0 : NAN;
}
