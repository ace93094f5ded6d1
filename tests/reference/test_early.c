/*
 * The early universe against outside sources:
 *   - r_d for the Planck 2018 means (TT,TE,EE+lowE+lensing: omega_b h^2 =
 *     0.02237, omega_c h^2 = 0.1200, one 0.06 eV neutrino) is 147.09 Mpc
 *     (Planck 2018 VI, A&A 641, A6, table 2); the fitting formula of
 *     Aubourg et al. 2015 must give it within 0.05%;
 *   - lantern's fixed-panel quadratures (the sound horizon, D_M at one
 *     redshift) against GSL's adaptive Gauss-Kronrod routines
 *     (gsl_integration_qagiu, gsl_integration_qag, asked for 1e-13): they
 *     must agree to 1e-10, for random parameters, massive neutrinos
 *     included;
 *   - the massive neutrino of Komatsu et al. 2011 (ApJS 192, 18, eq. 26):
 *     radiation at high redshift (E^2 / (1+z)^4 tends to omega_gamma (1 +
 *     7/8 (4/11)^(4/3) N_eff)), matter today, closure at z = 0, and q(z)
 *     the derivative of E^2 (q = (1/2) d ln E^2 / d ln(1+z) - 1).
 * The distances with massive neutrinos against astropy are
 * tests/reference/astropy_neutrinos.py; R and l_A against numpy are
 * tests/reference/cmb_numpy.py.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <string.h>

#include <cmocka.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_integration.h>

#include "lantern/lantern.h"
#include "../testutil.h"

static lt_cosmo planck18(double n_eff)
{
    double h = 0.6736, wnu = 0.06 / 93.14;
    lt_cosmo_params p;
    lt_cosmo_params_default(&p);
    p.h0 = 67.36;
    p.omega_m = (0.02237 + 0.1200 + wnu) / (h * h);
    p.t_cmb = 2.7255, p.n_eff = n_eff, p.m_nu = 0.06, p.omega_b_h2 = 0.02237;
    lt_cosmo c;
    assert_int_equal(lt_cosmo_init(&c, lt_cosmo_model_find("lcdm-flat"), &p, NULL), LT_OK);
    return c;
}

static void test_rd_planck(void **state)
{
    (void)state;
    lt_cosmo c = planck18(3.046);
    double rd;
    lt_error err;
    assert_int_equal(lt_cosmo_rd(&c, &rd, &err), LT_OK);
    print_message("r_d (Aubourg et al. 2015) = %.4f Mpc; Planck 2018 VI table 2: 147.09\n", rd);
    assert_rel(rd, 147.09, 5e-4);
    /* the formula was fitted for N_eff = 3.046: another is refused */
    c = planck18(3.3);
    assert_int_equal(lt_cosmo_rd(&c, &rd, &err), LT_EINPUT);
    assert_non_null(strstr(err.msg, "n_eff = 3.046"));
}

/* ---- the quadratures against GSL ---- */
typedef struct {
    const lt_cosmo *c;
    double rb; /* 3 omega_b / (4 omega_gamma) */
} sound;

/* c_s / H in units of c/H0, in z: 1 / (E sqrt(3 (1 + R_b))) */
static double cs_over_h(double z, void *p)
{
    const sound *s = p;
    return 1.0 / (lt_cosmo_efunc(s->c, z) * sqrt(3.0 * (1.0 + s->rb / (1.0 + z))));
}

static double inv_e(double z, void *c) { return 1.0 / lt_cosmo_efunc(c, z); }

static void test_quadrature_against_gsl(void **state)
{
    (void)state;
    gsl_set_error_handler_off();
    gsl_integration_workspace *ws = gsl_integration_workspace_alloc(4000);
    unsigned long long seed = 20261203;
    double worst_rs = 0, worst_dm = 0;
    for (int draw = 0; draw < 60; draw++) {
        const lt_cosmo_model *m = lt_cosmo_model_at((size_t)draw % 6);
        lt_cosmo_params p;
        lt_cosmo_params_default(&p);
        p.h0 = lt_test_uniform(&seed, 55, 80);
        p.omega_m = lt_test_uniform(&seed, 0.15, 0.5);
        p.omega_de = lt_test_uniform(&seed, 0.4, 0.9);
        p.w0 = lt_test_uniform(&seed, -1.4, -0.6);
        p.wa = lt_test_uniform(&seed, -1.0, 0.3);
        p.t_cmb = 2.7255;
        p.m_nu = draw % 3 == 0 ? 0.0 : lt_test_uniform(&seed, 0.02, 0.6);
        p.omega_b_h2 = lt_test_uniform(&seed, 0.018, 0.026);
        lt_cosmo c;
        assert_int_equal(lt_cosmo_init(&c, m, &p, NULL), LT_OK);
        double zs = lt_cosmo_z_star(&c), rs, dm, want, abserr;
        assert_true(zs > 1000 && zs < 1200);
        assert_int_equal(lt_cosmo_sound_horizon(&c, zs, &rs, NULL), LT_OK);
        double h = p.h0 / 100.0;
        sound s = {&c, 3.0 * p.omega_b_h2 / (4.0 * c.omega_gamma * h * h)};
        gsl_function f = {cs_over_h, &s};
        assert_int_equal(gsl_integration_qagiu(&f, zs, 0, 1e-13, 4000, ws, &want, &abserr), 0);
        worst_rs = fmax(worst_rs, fabs(rs / (c.dh_mpc * want) - 1));
        assert_rel(rs, c.dh_mpc * want, 1e-10);
        /* D_M at z_* and at a low redshift */
        double zz[2] = {zs, lt_test_uniform(&seed, 0.01, 3.0)};
        for (int k = 0; k < 2; k++) {
            if (lt_cosmo_transverse_at(&c, zz[k], &dm, NULL) != LT_OK)
                continue; /* a closed universe past its antipode, say */
            gsl_function g = {inv_e, &c};
            assert_int_equal(gsl_integration_qag(&g, 0, zz[k], 0, 1e-13, 4000, GSL_INTEG_GAUSS61,
                                                 ws, &want, &abserr),
                             0);
            double ok = c.omega_k, chi = want;
            double t = ok > 0 ? sinh(sqrt(ok) * chi) / sqrt(ok)
                       : ok < 0 ? sin(sqrt(-ok) * chi) / sqrt(-ok)
                                : chi; /* Hogg 1999, eq. 16 */
            worst_dm = fmax(worst_dm, fabs(dm / (c.dh_mpc * t) - 1));
            assert_rel(dm, c.dh_mpc * t, 1e-10);
        }
    }
    print_message("worst relative differences from GSL: r_s %.2g, D_M %.2g\n", worst_rs,
                  worst_dm);
    gsl_integration_workspace_free(ws);
}

/* ---- the massive neutrino ---- */
static void test_massive_neutrino(void **state)
{
    (void)state;
    const double per = 0.875 * pow(4.0 / 11.0, 4.0 / 3.0); /* 7/8 (4/11)^(4/3) */
    for (int flat = 0; flat < 2; flat++) {
        lt_cosmo_params p;
        lt_cosmo_params_default(&p);
        p.h0 = 68, p.omega_m = 0.31, p.omega_de = 0.66, p.t_cmb = 2.7255, p.m_nu = 0.3;
        lt_cosmo c;
        assert_int_equal(lt_cosmo_init(&c, lt_cosmo_model_find(flat ? "lcdm-flat" : "lcdm"), &p,
                                       NULL),
                         LT_OK);
        /* closure: E(0) = 1, flat or curved */
        assert_rel(lt_cosmo_e2(&c, 0.0), 1.0, 1e-14);
        /* today the massive state is matter, part of omega_m: 0.3 eV gives
         * omega_nu h^2 close to m_nu / 93.14 eV (the Komatsu function is a
         * fit: 1% agreement is what it promises) */
        assert_rel(c.omega_nu_mass * 0.68 * 0.68, 0.3 / 93.14, 0.01);
        assert_rel(c.omega_cb + c.omega_nu_mass, 0.31, 1e-15);
        /* early it is radiation: all three species count */
        double z = 1e13, y4 = pow(1 + z, 4); /* matter is 3e-10 of it there */
        assert_rel(lt_cosmo_e2(&c, z) / y4, c.omega_gamma * (1 + per * 3.046), 1e-8);
        /* q(z) = (1/2) d ln E^2 / d ln(1+z) - 1, by central differences */
        for (double zq = 0.0; zq < 3000.0; zq = 3 * zq + 0.5) {
            double x = log1p(zq), d = 1e-5;
            double dlne2 = (log(lt_cosmo_e2(&c, expm1(x + d))) -
                            log(lt_cosmo_e2(&c, expm1(x - d)))) / (2 * d);
            assert_abs(lt_cosmo_q(&c, zq), 0.5 * dlne2 - 1.0, 1e-8);
        }
    }
    /* with m_nu = 0 the three species are massless, as before m_nu existed */
    lt_cosmo_params p;
    lt_cosmo_params_default(&p);
    p.t_cmb = 2.7255, p.m_nu = 0.0;
    lt_cosmo c;
    assert_int_equal(lt_cosmo_init(&c, lt_cosmo_model_find("lcdm-flat"), &p, NULL), LT_OK);
    assert_rel(c.omega_nu, c.omega_gamma * per * 3.046, 1e-15);
    assert_true(c.nu_coef == 0.0 && c.omega_cb == p.omega_m);
    /* with radiation off m_nu is ignored */
    p.t_cmb = 0.0, p.m_nu = 1.0;
    assert_int_equal(lt_cosmo_init(&c, lt_cosmo_model_find("lcdm-flat"), &p, NULL), LT_OK);
    assert_true(c.omega_r == 0.0 && c.nu_coef == 0.0 && c.omega_cb == p.omega_m);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_rd_planck),
        cmocka_unit_test(test_quadrature_against_gsl),
        cmocka_unit_test(test_massive_neutrino),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
