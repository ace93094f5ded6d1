/*
 * lantern's one-pass integration against an independent integrator: GSL's
 * adaptive Gauss-Kronrod routines (gsl_integration_qag with the 61-point
 * rule for finite ranges, gsl_integration_qagiu for the age integral to
 * z = infinity), asked for 1e-13 relative. Both integrate the same E(z), so
 * this checks the quadrature, panels, cumulative sums and the age tail, for
 * random parameters of all six models with and without radiation (with a
 * 0.06 eV neutrino or none), z <= 10.
 *
 * lantern promises 1e-8 relative; the check asks for 1e-9.
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

#define TOL 1e-9
#define NZ 25
#define NDRAWS 400

static double inv_e(double z, void *c) { return 1.0 / lt_cosmo_efunc(c, z); }
static double inv_ey(double z, void *c) { return 1.0 / ((1 + z) * lt_cosmo_efunc(c, z)); }

/* Is E^2 <= 0 anywhere on a fine grid of [0, zmax]? */
static int scan_negative(const lt_cosmo *c, double zmax)
{
    for (int i = 0; i <= 100000; i++)
        if (!(lt_cosmo_e2(c, zmax * i / 100000.0) > 0))
            return 1;
    return 0;
}

static void test_against_gsl(void **state)
{
    (void)state;
    gsl_set_error_handler_off();
    gsl_integration_workspace *ws = gsl_integration_workspace_alloc(2000);
    unsigned long long seed = 20261202;
    int compared = 0, refused = 0, age_compared = 0;
    for (int draw = 0; draw < NDRAWS; draw++) {
        const lt_cosmo_model *m = lt_cosmo_model_at((size_t)draw % 6);
        lt_cosmo_params p = {
            lt_test_uniform(&seed, 50, 90),   lt_test_uniform(&seed, 0.01, 1.2),
            lt_test_uniform(&seed, -0.3, 1.6), lt_test_uniform(&seed, -2, -0.3),
            lt_test_uniform(&seed, -2, 1),    (draw / 6) % 2 ? 2.7255 : 0.0,
            3.046,
            /* a massive neutrino in half the draws with radiation */
            (draw / 12) % 2 ? 0.06 : 0.0, 0.02237};
        lt_cosmo c;
        lt_error err;
        assert_int_equal(lt_cosmo_init(&c, m, &p, &err), LT_OK);

        double z[NZ];
        for (int i = 0; i < NZ - 1; i++)
            z[i] = lt_test_uniform(&seed, 0, 10);
        z[NZ - 1] = 10.0;
        double dc[NZ], tl[NZ], age[NZ];
        lt_zgrid *g = lt_zgrid_alloc(NZ, z, &err);
        lt_cosmo_table t = {.comoving = dc, .lookback = tl};
        int rc = lt_cosmo_eval(&c, g, &t, &err);
        if (scan_negative(&c, 10.0)) {
            /* E^2 <= 0 on the way: lantern must refuse */
            assert_int_equal(rc, LT_EDOMAIN);
            refused++;
            lt_zgrid_free(g);
            continue;
        }
        if (rc == LT_EDOMAIN && strstr(err.msg, "antipode")) {
            refused++;
            lt_zgrid_free(g);
            continue;
        }
        if (rc)
            print_error("draw %d (%s): %s\n", draw, m->name, err.msg);
        assert_int_equal(rc, LT_OK);
        gsl_function f1 = {inv_e, &c}, f2 = {inv_ey, &c};
        for (int i = 0; i < NZ; i++) {
            double v, e;
            assert_int_equal(gsl_integration_qag(&f1, 0, z[i], 0, 1e-13, 2000,
                                                 GSL_INTEG_GAUSS61, ws, &v, &e),
                             GSL_SUCCESS);
            assert_rel(dc[i], v * c.dh_mpc, TOL);
            assert_int_equal(gsl_integration_qag(&f2, 0, z[i], 0, 1e-13, 2000,
                                                 GSL_INTEG_GAUSS61, ws, &v, &e),
                             GSL_SUCCESS);
            assert_rel(tl[i], v * c.th_gyr, TOL);
        }
        compared++;

        /* Ages need E^2 > 0 out to z = infinity: compare where lantern finds
         * a big bang, and where it does not, confirm E^2 <= 0 at the
         * redshift it names. */
        lt_cosmo_table ta = {.age = age};
        rc = lt_cosmo_eval(&c, g, &ta, &err);
        if (rc == LT_EDOMAIN) {
            double bad_z;
            assert_int_equal(sscanf(strstr(err.msg, "z = ") + 4, "%lf", &bad_z), 1);
            /* a^4 E^2 there is zero or below, to the precision %.4g prints */
            double y = 1 + bad_z;
            assert_true(lt_cosmo_e2(&c, bad_z) / (y * y * y * y) < 1e-3);
        } else {
            assert_int_equal(rc, LT_OK);
            for (int i = 0; i < NZ; i++) {
                double v, e;
                int st = gsl_integration_qagiu(&f2, z[i], 0, 1e-12, 2000, ws, &v, &e);
                if (st != GSL_SUCCESS)
                    continue; /* GSL could not reach its tolerance: no reference */
                assert_rel(age[i], v * c.th_gyr, TOL);
                age_compared++;
            }
        }
        lt_zgrid_free(g);
    }
    gsl_integration_workspace_free(ws);
    print_message("compared %d cosmologies (%d ages), %d refused as unphysical\n", compared,
                  age_compared, refused);
    /* the draws must mostly be physical, or the test checks little */
    assert_true(compared > NDRAWS / 2);
    assert_true(age_compared > NZ * NDRAWS / 4);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_against_gsl),
    };
    return cmocka_run_group_tests_name("gsl quadrature", tests, NULL, NULL);
}
