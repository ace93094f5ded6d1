/*
 * The early universe: the sound horizon at the baryon drag epoch by a
 * fitting formula, the redshift of photon decoupling, the comoving sound
 * horizon, and the CMB's shift parameter and acoustic scale (see
 * lantern/cosmology.h). Each evaluation allocates nothing: the CMB term
 * calls these once per likelihood evaluation.
 */
#include <math.h>

#include "internal.h"

/* The N_eff the r_d formula was fitted for (Aubourg et al. 2015). */
#define RD_FORMULA_NEFF 3.046

/* a^4 E^2 as the watch reads it, at t = a */
static double a4e2_of_t(const lt_cosmo *c, double t) { return lt_cosmo_a4e2(c, t); }

int lt_cosmo_rd(const lt_cosmo *c, double *rd, lt_error *err)
{
    if (fabs(c->p.n_eff - RD_FORMULA_NEFF) > 1e-12)
        return lt_error_set(err, LT_EINPUT, NULL, 0,
                            "the r_d formula (Aubourg et al. 2015) holds for n_eff = 3.046 "
                            "only, not %g; sample r_d h instead (--rd free)",
                            c->p.n_eff);
    double h = c->p.h0 / 100.0;
    /* omega_nu h^2 = m_nu / 93.14 eV: the formula's own neutrino density */
    double wnu = (c->p.t_cmb > 0.0 ? c->p.m_nu : 0.0) / 93.14;
    double wcb = c->p.omega_m * h * h - wnu, wb = c->p.omega_b_h2;
    if (!(wcb > 0.0) || !(wb > 0.0))
        return lt_error_set(err, LT_EDOMAIN, NULL, 0,
                            "r_d needs omega_b h^2 > 0 and omega_cb h^2 > 0, got %g and %g", wb,
                            wcb);
    /* Aubourg et al. 2015, PRD 92, 123516, eq. 16 */
    double t = wnu + 0.0006;
    *rd = 55.154 * exp(-72.3 * t * t) / (pow(wcb, 0.25351) * pow(wb, 0.12807));
    return LT_OK;
}

double lt_cosmo_z_star(const lt_cosmo *c)
{
    /* Hu & Sugiyama 1996, ApJ 471, 542, eqs. E1-E3, with omega_m h^2 as
     * lantern's omega_m (massive neutrinos included) */
    double h = c->p.h0 / 100.0, wb = c->p.omega_b_h2, wm = c->p.omega_m * h * h;
    double g1 = 0.0783 * pow(wb, -0.238) / (1.0 + 39.5 * pow(wb, 0.763));
    double g2 = 0.560 / (1.0 + 21.1 * pow(wb, 1.81));
    return 1048.0 * (1.0 + 0.00124 * pow(wb, -0.738)) * (1.0 + g1 * pow(wm, g2));
}

int lt_cosmo_sound_horizon(const lt_cosmo *c, double z, double *rs, lt_error *err)
{
    if (!(c->omega_gamma > 0.0))
        return lt_error_set(err, LT_EINPUT, NULL, 0,
                            "the sound horizon needs radiation (t_cmb > 0)");
    if (!(z >= 0.0) || !isfinite(z))
        return lt_error_set(err, LT_EINPUT, NULL, 0, "redshift must be finite and >= 0");
    /*
     * r_s(z) = integral from z to infinity of c_s / H dz, with the sound
     * speed of the baryon-photon fluid c_s = c / sqrt(3 (1 + R_b)),
     * R_b = 3 rho_b / (4 rho_gamma) = (3 omega_b / (4 omega_gamma)) a. In
     * the scale factor, r_s = (c/H0) integral_0^a(z) da / sqrt(3 (1 + R_b)
     * a^4 E^2): smooth from a = 0, where radiation keeps a^4 E^2 positive,
     * and varying on the scale of matter-radiation equality. 32 panels of
     * 8-point Gauss-Legendre reach 1e-12 there (tests/reference/test_early.c
     * checks against GSL's adaptive quadrature). The positivity watch sees
     * a dip of E^2 below zero between the nodes, as every integrator here.
     */
    double h = c->p.h0 / 100.0;
    double rb = 3.0 * c->p.omega_b_h2 / (4.0 * c->omega_gamma * h * h);
    double a1 = 1.0 / (1.0 + z), width = a1 / 32.0, sum = 0.0;
    const lt_gl_rule *r = lt_gl_rule_get(8);
    lt_watch w;
    lt_watch_start(&w, a4e2_of_t);
    for (int k = 0; k < 32; k++) {
        double mid = (k + 0.5) * width;
        for (int i = 0; i < r->n; i++) {
            double a = mid + 0.5 * width * r->x[i], p = lt_cosmo_a4e2(c, a);
            if (lt_watch_push(&w, c, a, p))
                return lt_error_set(err, LT_EDOMAIN, NULL, 0,
                                    "E^2 is not positive at z = %.4g: no sound horizon",
                                    1.0 / w.bad_t - 1.0);
            sum += r->w[i] / sqrt(3.0 * (1.0 + rb * a) * p);
        }
    }
    *rs = c->dh_mpc * 0.5 * width * sum;
    return LT_OK;
}

static int bad_e2_at(lt_error *err, double x)
{
    return lt_error_set(err, LT_EDOMAIN, NULL, 0,
                        "E^2 is not positive at z = %.4g: distances there are undefined",
                        expm1(x));
}

int lt_cosmo_transverse_at(const lt_cosmo *c, double z, double *dm, lt_error *err)
{
    if (!(z >= 0.0) || !isfinite(z))
        return lt_error_set(err, LT_EINPUT, NULL, 0, "redshift must be finite and >= 0");
    /* D_C H0/c = integral_0^x e^x' / E dx' in x = ln(1+z), panels of at
     * most 1/8 with 8-point Gauss-Legendre (1e-12 to z = 1100 against GSL,
     * tests/reference/test_early.c), under the positivity watch */
    const lt_gl_rule *r = lt_gl_rule_get(8);
    double x1 = log1p(z), chi = 0.0;
    int panels = (int)ceil(x1 * 8.0);
    double width = panels ? x1 / panels : 0.0;
    lt_watch w;
    lt_watch_start(&w, lt_watch_e2_of_x);
    for (int k = 0; k < panels; k++) {
        double mid = (k + 0.5) * width, part = 0.0;
        for (int i = 0; i < r->n; i++) {
            double x = mid + 0.5 * width * r->x[i], y = exp(x);
            double e2 = lt_cosmo_e2_xy(c, x, y);
            if (lt_watch_push(&w, c, x, e2))
                return bad_e2_at(err, w.bad_t);
            part += r->w[i] * y / sqrt(e2);
        }
        chi += 0.5 * width * part;
    }
    /* and at z itself, which closes the watch's last interval */
    if (lt_watch_push(&w, c, x1, lt_cosmo_e2_xy(c, x1, 1.0 + z)))
        return bad_e2_at(err, w.bad_t);
    double ok = c->omega_k;
    if (ok < 0.0 && chi * sqrt(-ok) >= M_PI)
        return lt_error_set(err, LT_EDOMAIN, NULL, 0,
                            "light from z = %.4g would cross the antipode of this closed "
                            "universe",
                            z);
    *dm = c->dh_mpc * lt_transverse_of(chi, ok);
    return LT_OK;
}

int lt_cosmo_cmb(const lt_cosmo *c, double z_star, lt_cmb_point *out, lt_error *err)
{
    out->z_star = isnan(z_star) ? lt_cosmo_z_star(c) : z_star;
    int rc = lt_cosmo_sound_horizon(c, out->z_star, &out->rs_star, err);
    if (!rc)
        rc = lt_cosmo_transverse_at(c, out->z_star, &out->dm_star, err);
    if (rc)
        return rc;
    /* R = sqrt(omega_m H0^2) D_M(z_*) / c (Bond, Efstathiou & Tegmark 1997,
     * MNRAS 291, L33); l_A = pi D_M(z_*) / r_s(z_*) */
    out->shift_r = sqrt(c->p.omega_m) * out->dm_star / c->dh_mpc;
    out->acoustic_l = M_PI * out->dm_star / out->rs_star;
    return LT_OK;
}

int lt_cosmo_early_standard(const lt_cosmo *c)
{
    return c->omega_gamma > 0.0 && c->model->de->w_early(c) < 0.0;
}

void lt_cosmo_early_eval(const lt_cosmo *c, lt_cosmo_early *e)
{
    int ok = lt_cosmo_early_standard(c);
    if (!ok || lt_cosmo_rd(c, &e->rd, NULL))
        e->rd = NAN;
    if (!ok || lt_cosmo_cmb(c, NAN, &e->cmb, NULL))
        e->cmb = (lt_cmb_point){NAN, NAN, NAN, NAN, NAN};
}
