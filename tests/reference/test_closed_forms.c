/*
 * The cosmology engine against closed-form results from the literature and
 * a published age. Each check names its source. Distances are the integrals
 * of Hogg 1999 (arXiv:astro-ph/9905116): D_C (eq. 15), D_M (eq. 16),
 * D_L (eq. 21), D_A (eq. 18), distance modulus (eq. 25), lookback time
 * (eq. 30); the closed forms below solve them for special E(z).
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <string.h>

#include <cmocka.h>

#include "lantern/lantern.h"
#include "../testutil.h"

/* The accuracy lantern promises for z <= 10 is 1e-8; the closed forms are
 * checked tighter, so a slip shows long before it matters. */
#define TOL 1e-10

static const double zs[] = {1e-4, 0.01, 0.1, 0.5, 1.0, 1.5, 2.0, 3.0, 5.0, 10.0};
#define NZ (sizeof zs / sizeof zs[0])

typedef struct {
    double dc[NZ], dm[NZ], dl[NZ], da[NZ], mu[NZ], tl[NZ], age[NZ], h[NZ];
} table;

static lt_cosmo make(const char *model, double h0, double om, double ode, double w0,
                     double t_cmb)
{
    lt_cosmo_params p = {h0, om, ode, w0, 0.0, t_cmb, 3.046, 0.0, 0.02237};
    lt_cosmo c;
    lt_error err;
    assert_int_equal(lt_cosmo_init(&c, lt_cosmo_model_find(model), &p, &err), LT_OK);
    return c;
}

static void eval(const lt_cosmo *c, table *t)
{
    lt_error err;
    lt_zgrid *g = lt_zgrid_alloc(NZ, zs, &err);
    assert_non_null(g);
    lt_cosmo_table out = {t->dc, t->dm, t->dl, t->da, t->mu, t->tl, t->age, t->h};
    int rc = lt_cosmo_eval(c, g, &out, &err);
    if (rc)
        print_error("%s\n", err.msg);
    assert_int_equal(rc, LT_OK);
    lt_zgrid_free(g);
}

/* Einstein-de Sitter (Omega_m = 1): D_C = 2 (c/H0) (1 - 1/sqrt(1+z)) and
 * age t(z) = (2/3) (1/H0) (1+z)^(-3/2) (Hogg 1999 eq. 15 and 30 integrated
 * for E = (1+z)^(3/2); the Einstein-de Sitter age 2/(3 H0) is in Carroll,
 * Press & Turner 1992, ARA&A 30, 499). Checked in both the flat model and
 * the curved one with Omega_de = 0. */
static void test_einstein_de_sitter(void **state)
{
    (void)state;
    const char *models[] = {"lcdm-flat", "lcdm", "wcdm", "w0wa-flat"};
    for (int k = 0; k < 4; k++) {
        lt_cosmo c = make(models[k], 70, 1.0, 0.0, -1, 0);
        table t;
        eval(&c, &t);
        for (size_t i = 0; i < NZ; i++) {
            double y = 1 + zs[i];
            assert_rel(t.dc[i], 2 * c.dh_mpc * (1 - 1 / sqrt(y)), TOL);
            assert_rel(t.dm[i], t.dc[i], 1e-15);
            assert_rel(t.age[i], 2.0 / 3.0 * c.th_gyr * pow(y, -1.5), TOL);
            assert_rel(t.tl[i], 2.0 / 3.0 * c.th_gyr * (1 - pow(y, -1.5)), TOL);
            assert_rel(t.h[i], 70 * pow(y, 1.5), 1e-14);
        }
    }
}

/* The empty (Milne) universe, Omega_k = 1: D_C = (c/H0) ln(1+z), so
 * D_M = (c/H0) sinh(ln(1+z)) and D_L = (c/H0) z (1 + z/2) (Hogg 1999,
 * eq. 16 and 21); the age is 1/(H0 (1+z)) since a grows linearly in t. */
static void test_milne(void **state)
{
    (void)state;
    lt_cosmo c = make("lcdm", 65, 0.0, 0.0, -1, 0);
    table t;
    eval(&c, &t);
    for (size_t i = 0; i < NZ; i++) {
        double z = zs[i];
        assert_rel(t.dc[i], c.dh_mpc * log1p(z), TOL);
        assert_rel(t.dl[i], c.dh_mpc * z * (1 + z / 2), TOL);
        assert_rel(t.da[i], c.dh_mpc * z * (1 + z / 2) / ((1 + z) * (1 + z)), TOL);
        assert_rel(t.mu[i], 5 * log10(c.dh_mpc * z * (1 + z / 2)) + 25, 1e-12);
        assert_rel(t.age[i], c.th_gyr / (1 + z), TOL);
        assert_rel(t.tl[i], c.th_gyr * z / (1 + z), TOL);
    }
}

/* De Sitter (flat, Omega_Lambda = 1): E = 1, so D_C = (c/H0) z,
 * D_L = (c/H0) z (1+z), lookback time ln(1+z)/H0, and no big bang in the
 * finite past: the age is infinite (reported as +inf). */
static void test_de_sitter(void **state)
{
    (void)state;
    const char *models[] = {"lcdm-flat", "lcdm"};
    for (int k = 0; k < 2; k++) {
        lt_cosmo c = make(models[k], 70, 0.0, 1.0, -1, 0);
        table t;
        eval(&c, &t);
        for (size_t i = 0; i < NZ; i++) {
            double z = zs[i];
            assert_rel(t.dc[i], c.dh_mpc * z, TOL);
            assert_rel(t.dl[i], c.dh_mpc * z * (1 + z), TOL);
            assert_rel(t.tl[i], c.th_gyr * log1p(z), TOL);
            assert_true(isinf(t.age[i]) && t.age[i] > 0);
        }
    }
}

/* Matter only, any curvature (Omega_Lambda = 0): Mattig 1958 (Astron.
 * Nachr. 284, 109), in the form
 *   D_L = 2 (c/H0) [Om z + (Om - 2)(sqrt(1 + Om z) - 1)] / Om^2.
 * Open (Om = 0.3, 0.05: the sinh branch) and closed (Om = 2: the sin
 * branch). At small z that form loses digits to cancellation (1e-9 at
 * z = 1e-4, Om = 0.05, checked in 40-digit decimal arithmetic), so it is
 * evaluated as the identical 2 (c/H0) z (s + Om - 1) / (Om (s + 1)) with
 * s = sqrt(1 + Om z). */
static void test_mattig(void **state)
{
    (void)state;
    const double oms[] = {0.3, 2.0, 0.05};
    for (int k = 0; k < 3; k++) {
        double om = oms[k];
        lt_cosmo c = make("lcdm", 70, om, 0.0, -1, 0);
        table t;
        eval(&c, &t);
        for (size_t i = 0; i < NZ; i++) {
            double z = zs[i];
            double s = sqrt(1 + om * z);
            double want = 2 * c.dh_mpc * z * (s + om - 1) / (om * (s + 1));
            assert_rel(t.dl[i], want, TOL);
        }
    }
}

/* Flat LCDM without radiation: age
 *   t(z) = 2 / (3 H0 sqrt(OL)) asinh( sqrt(OL/Om) (1+z)^(-3/2) )
 * (Carroll, Press & Turner 1992, ARA&A 30, 499; the z = 0 value is their
 * age formula, the z dependence follows from the same integral). Also the
 * deceleration q0 = Om/2 - OL and the redshift where q changes sign,
 * (2 OL / Om)^(1/3) - 1 (both from q = (1/2) sum of (1 + 3w) Omega_i). */
static void test_flat_lcdm_age(void **state)
{
    (void)state;
    const double oms[] = {0.05, 0.3, 0.7, 0.99};
    for (int k = 0; k < 4; k++) {
        double om = oms[k], ol = 1 - om;
        lt_cosmo c = make("lcdm-flat", 67.4, om, 0, -1, 0);
        table t;
        eval(&c, &t);
        for (size_t i = 0; i < NZ; i++) {
            double want = 2 / (3 * sqrt(ol)) * asinh(sqrt(ol / om) * pow(1 + zs[i], -1.5));
            assert_rel(t.age[i], want * c.th_gyr, TOL);
        }
        double age0;
        lt_error err;
        assert_int_equal(lt_cosmo_age(&c, 0.0, &age0, &err), LT_OK);
        assert_rel(age0, 2 / (3 * sqrt(ol)) * asinh(sqrt(ol / om)) * c.th_gyr, TOL);
        assert_rel(lt_cosmo_q(&c, 0.0), om / 2 - ol, 1e-14);
        double zt = cbrt(2 * ol / om) - 1;
        if (zt > 0)
            assert_abs(lt_cosmo_q(&c, zt), 0.0, 1e-13);
    }
}

/* Matter plus radiation with no curvature or dark energy (Om + Or = 1):
 * with a = 1/(1+z) the integrals are elementary:
 *   D_C H0/c = (2/Om) [ sqrt(Om + Or) - sqrt(Om a + Or) ]
 *   t H0     = (2 / (3 Om^2)) [ (Om a - 2 Or) sqrt(Om a + Or) + 2 Or^(3/2) ]
 * (Hogg 1999 eq. 15 and 30 for E^2 = Om a^-3 + Or a^-4, integrated by hand;
 * the age is the standard matter-radiation result of textbooks, here
 * derived rather than quoted). Radiation comes from t_cmb; a large t_cmb
 * makes Or large enough to matter at every redshift. */
static void test_matter_radiation(void **state)
{
    (void)state;
    /* omega_r = 8.5e-5, 0.011 and 0.25 at h0 = 70 */
    const double temps[] = {2.7255, 9.0, 20.0};
    for (int k = 0; k < 3; k++) {
        lt_cosmo probe = make("lcdm", 70, 0.5, 0.0, -1, temps[k]);
        double orad = probe.omega_r, om = 1.0 - orad;
        lt_cosmo c = make("lcdm", 70, om, 0.0, -1, temps[k]);
        assert_abs(c.omega_k, 0.0, 1e-15);
        table t;
        eval(&c, &t);
        for (size_t i = 0; i < NZ; i++) {
            double a = 1 / (1 + zs[i]);
            double dc = 2 / om * (sqrt(om + orad) - sqrt(om * a + orad));
            double age = 2 / (3 * om * om) *
                         ((om * a - 2 * orad) * sqrt(om * a + orad) + 2 * pow(orad, 1.5));
            assert_rel(t.dc[i], dc * c.dh_mpc, TOL);
            assert_rel(t.age[i], age * c.th_gyr, 1e-9);
        }
        /* q = (2 Or y^4 + Om y^3 / 2) / E^2; radiation alone would give 1 */
        assert_rel(lt_cosmo_q(&c, 0.0), orad + om / 2, 1e-14);
    }
}

/* The photon density from T_CMB: Omega_gamma h^2 = 2.47e-5 for
 * T = 2.7255 K (Fixsen 2009, ApJ 707, 916 for the temperature; the density
 * 2.473e-5 is the usual value, e.g. Planck 2018 VI; quoted from memory to
 * the digits given here). */
static void test_photon_density(void **state)
{
    (void)state;
    lt_cosmo c = make("lcdm-flat", 100, 0.3, 0, -1, 2.7255);
    assert_rel(c.omega_gamma, 2.473e-5, 2e-3);
    /* and it scales as T^4 / h^2 */
    lt_cosmo d = make("lcdm-flat", 50, 0.3, 0, -1, 2 * 2.7255);
    assert_rel(d.omega_gamma, c.omega_gamma * 16 * 4, 1e-13);
}

/* Planck 2018 (Planck Collaboration 2020, A&A 641, A6, Table 2, column
 * TT,TE,EE+lowE+lensing): H0 = 67.36, Omega_m = 0.3153, and the age it
 * quotes, 13.797 +- 0.023 Gyr (the age value recalled from memory of that
 * table). Flat LCDM with radiation on (T_CMB = 2.7255 K, N_eff = 3.046)
 * must land within the quoted precision. Planck's model also has a 0.06 eV
 * neutrino mass that lantern treats as matter; the difference is far
 * below the quoted error. */
static void test_planck2018_age(void **state)
{
    (void)state;
    lt_cosmo c = make("lcdm-flat", 67.36, 0.3153, 0, -1, 2.7255);
    double age;
    lt_error err;
    assert_int_equal(lt_cosmo_age(&c, 0.0, &age, &err), LT_OK);
    assert_abs(age, 13.797, 0.023);
    /* "13.8 Gyr", as the paper's abstract rounds it */
    assert_abs(age, 13.8, 0.05);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_einstein_de_sitter), cmocka_unit_test(test_milne),
        cmocka_unit_test(test_de_sitter),          cmocka_unit_test(test_mattig),
        cmocka_unit_test(test_flat_lcdm_age),      cmocka_unit_test(test_matter_radiation),
        cmocka_unit_test(test_photon_density),     cmocka_unit_test(test_planck2018_age),
    };
    return cmocka_run_group_tests_name("closed forms", tests, NULL, NULL);
}
