/*
 * Internal to the cosmology module: quadrature rules, E^2 as a function of
 * x = ln(1+z), and the positivity watch shared by the integrators.
 */
#ifndef LANTERN_COSMOLOGY_INTERNAL_H
#define LANTERN_COSMOLOGY_INTERNAL_H

#include <math.h>

#include "lantern/cosmology.h"

/* Gauss-Legendre rules on [-1, 1]. Nodes and weights as printed by GSL's
 * gsl_integration_glfixed_point (17 digits); tests/unit/test_cosmology.c
 * checks them against GSL at run time. */
typedef struct lt_gl_rule {
    int n;
    const double *x, *w;
} lt_gl_rule;

/* The rule with n points, n in {2, 3, 4, 6, 8}; NULL otherwise. */
const lt_gl_rule *lt_gl_rule_get(int n);

/* The massive neutrino's f(u) = (1 + (0.3173 u)^1.83)^(1/1.83) (Komatsu et
 * al. 2011, eq. 26): 1 while relativistic, 0.3173 u once not. */
static inline double lt_nu_f(double u)
{
    return pow(1.0 + pow(0.3173 * u, 1.83), 1.0 / 1.83);
}

/*
 * E^2 at x = ln(1+z), given y = e^x = 1+z. Written in x because the
 * integrands are smoothest there: every term is an exponential in x.
 */
static inline double lt_cosmo_e2_xy(const lt_cosmo *c, double x, double y)
{
    double y2 = y * y;
    double poly = ((c->omega_r * y + c->omega_cb) * y + c->omega_k) * y2;
    if (c->nu_coef != 0.0)
        poly += c->nu_coef * y2 * y2 * lt_nu_f(c->nu_y / y);
    if (c->p.omega_de == 0.0)
        return poly;
    return poly + c->p.omega_de * c->model->de->density(c, x, 1.0 / y);
}

/*
 * The positivity watch. E^2 (or a^4 E^2) is sampled at increasing or
 * decreasing positions t; a negative sample fails at once. Where the samples
 * show a local minimum (a sample lower than both neighbours), the function is
 * minimised between the neighbours by golden-section search, so a dip below
 * zero between two nodes is not missed. What it cannot see is a dip narrower
 * than the node spacing that leaves no trace in the samples; for the sums of
 * a few exponentials that E^2 is made of, that needs a near-tangent zero.
 */
typedef double (*lt_watch_fn)(const lt_cosmo *c, double t);

typedef struct lt_watch {
    lt_watch_fn f;
    int count;      /* samples seen so far */
    double t0, v0;  /* second to last sample */
    double t1, v1;  /* last sample */
    double bad_t;   /* where the function was found <= 0 */
} lt_watch;

void lt_watch_start(lt_watch *w, lt_watch_fn f);
/* Returns 0 if all is well so far, -1 if the function is <= 0 somewhere
 * (w->bad_t says where). */
int lt_watch_push(lt_watch *w, const lt_cosmo *c, double t, double v);

/* D_M H0/c from D_C H0/c: sinh for open, sin for closed (Hogg 1999, eq. 16). */
static inline double lt_transverse_of(double chi, double ok)
{
    if (ok > 0.0) {
        double s = sqrt(ok);
        return sinh(s * chi) / s;
    }
    if (ok < 0.0) {
        double s = sqrt(-ok);
        return sin(s * chi) / s;
    }
    return chi;
}

/* a^4 E^2 at scale factor a = 1/(1+z): finite as a -> 0 (radiation). */
double lt_cosmo_a4e2(const lt_cosmo *c, double a);

/* E^2 as a function of x, for the watch. */
double lt_watch_e2_of_x(const lt_cosmo *c, double x);

/*
 * The integral of dx / E(x) from x0 to infinity, in units of 1/H0: the age
 * at redshift e^x0 - 1. Fails with -1 (and *bad_z set) where E^2 <= 0 for
 * some z > e^x0 - 1; *out is +INFINITY for a de Sitter-like universe.
 */
int lt_cosmo_age_tail(const lt_cosmo *c, double x0, double *out, double *bad_z);

/* Fill err for "no big bang: E^2 <= 0 at z" and return LT_EDOMAIN. */
int lt_cosmo_err_no_big_bang(lt_error *err, double z);

#endif
