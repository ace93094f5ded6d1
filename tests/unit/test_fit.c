/*
 * Unit tests of lt_fit_run: the w0-wa pivot, derived errors by the delta
 * method, reproducibility with the seed, and the truth of a simulated
 * survey recovered.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>

#include <cmocka.h>
#include <gsl/gsl_errno.h>

#include "lantern/lantern.h"
#include "../testutil.h"

static char dir[256];
static lt_survey *survey;

static int setup(void **state)
{
    (void)state;
    gsl_set_error_handler_off();
    if (lt_test_tmpdir(dir, sizeof dir, "fit"))
        return -1;
    char path[512];
    snprintf(path, sizeof path, "%s/s.ini", dir);
    FILE *f = fopen(path, "w");
    fputs("[survey]\nseed = 11\nobservable = mu\nintrinsic_scatter = 0.05\n"
          "[cosmology]\nmodel = w0wa-flat\nh0 = 70\nomega_m = 0.3\nw0 = -0.9\nwa = 0.2\n"
          "[tier.a]\nz_min = 0.02\nz_max = 1.5\ncount = 1500\nerror = 0.05\n",
          f);
    fclose(f);
    lt_scenario sc;
    lt_sim sim;
    lt_error err;
    if (lt_scenario_read(path, &sc, &err) || lt_simulate(&sc, &sim, &err))
        return -1;
    survey = sim.survey;
    sim.survey = NULL;
    lt_sim_free(&sim);
    lt_scenario_free(&sc);
    return 0;
}

static int teardown(void **state)
{
    (void)state;
    lt_survey_free(survey);
    return lt_test_rmtree(dir);
}

static void test_pivot_and_derived(void **state)
{
    (void)state;
    lt_like_spec spec;
    lt_like_spec_init(&spec, lt_cosmo_model_find("w0wa-flat"));
    lt_like_spec_fix(&spec, "omega_m", 0.3, NULL); /* keep it Gaussian */
    lt_error err;
    lt_like *l = lt_like_alloc(survey, &spec, &err);
    assert_non_null(l);
    lt_fit_opts o = {.seed = 7, .starts = 4, .stop = NULL};
    lt_fit_result r, r2;
    assert_int_equal(lt_fit_run(l, &o, &r, &err), LT_OK);
    assert_true(r.laplace_ok && r.info.converged);
    assert_int_equal(r.dim, 3); /* h0, w0, wa */
    /* the truth within 4 sigma */
    double truth[] = {70, -0.9, 0.2};
    for (int i = 0; i < 3; i++)
        assert_abs(r.best[i], truth[i], 4 * r.sd[i]);
    /* the pivot: w_p = w0 + wa (1 - a_p) is uncorrelated with wa */
    size_t d = r.dim;
    double v0 = r.cov[1 * d + 1], c01 = r.cov[1 * d + 2], v1 = r.cov[2 * d + 2];
    assert_true(r.has_pivot);
    double a_p = 1 / (1 + r.z_pivot);
    assert_abs(c01 + (1 - a_p) * v1, 0.0, 1e-12 * v1);
    assert_rel(r.w_pivot, r.best[1] + r.best[2] * (1 - a_p), 1e-12);
    assert_rel(r.w_pivot_sd * r.w_pivot_sd, v0 - c01 * c01 / v1, 1e-10);
    assert_true(r.w_pivot_sd < r.sd[1]); /* the point of the pivot */
    /* omega_de = 1 - omega_m is fixed here: no error; q0 has one */
    assert_rel(r.der_best[LT_DER_OMEGA_DE], 0.7, 1e-15);
    assert_true(r.der_sd[LT_DER_Q0] > 0);
    /* the age when h0 is free: 1/h0 scaling means sd/age = sd_h0/h0 in part */
    assert_true(r.has_der[LT_DER_AGE] && r.der_sd[LT_DER_AGE] > 0);
    /* the same seed, the same result */
    assert_int_equal(lt_fit_run(l, &o, &r2, &err), LT_OK);
    assert_memory_equal(r.best, r2.best, d * sizeof(double));
    lt_like_free(l);
}

/* q0 for flat w0-wa: q0 = (1 + 3 w0 (1 - Om)) / 2 (from q = (1/2) sum of
 * (1 + 3w) Omega_i); its delta-method sigma from the Laplace covariance. */
static void test_delta_method(void **state)
{
    (void)state;
    lt_like_spec spec;
    lt_like_spec_init(&spec, lt_cosmo_model_find("wcdm-flat"));
    lt_error err;
    lt_like *l = lt_like_alloc(survey, &spec, &err);
    lt_fit_opts o = {.seed = 3, .starts = 4, .stop = NULL};
    lt_fit_result r;
    assert_int_equal(lt_fit_run(l, &o, &r, &err), LT_OK);
    size_t d = r.dim; /* h0, omega_m, w0 */
    double om = r.best[1], w0 = r.best[2];
    assert_rel(r.der_best[LT_DER_Q0], 0.5 * (1 + 3 * w0 * (1 - om)), 1e-10);
    double g[3] = {0, -1.5 * w0, 1.5 * (1 - om)};
    double var = 0;
    for (size_t i = 0; i < d; i++)
        for (size_t j = 0; j < d; j++)
            var += g[i] * r.cov[i * d + j] * g[j];
    assert_rel(r.der_sd[LT_DER_Q0], sqrt(var), 1e-4);
    lt_like_free(l);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_pivot_and_derived),
        cmocka_unit_test(test_delta_method),
    };
    return cmocka_run_group_tests_name("fit", tests, setup, teardown);
}
