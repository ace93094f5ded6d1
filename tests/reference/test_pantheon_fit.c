/*
 * lantern fit on real data against a published result and an independent
 * grid: flat LCDM on the Pantheon 2018 binned table (Scolnic et al. 2018,
 * ApJ 859, 101; ../shared/data/pantheon2018/SOURCE.md), with diag(dmb^2) +
 * sys and with statistical errors only.
 *
 * Published (SOURCE.md, from the paper): Omega_m = 0.298 +- 0.022 with
 * systematics, 0.284 +- 0.012 statistical only. The grid is computed here
 * without lantern's likelihood or cosmology: distances by GSL's QAG
 * integration of 1/E(z), chi2 by GSL's Cholesky solve, the offset
 * marginalised by A - B^2/C written out.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_integration.h>
#include <gsl/gsl_linalg.h>

#include "lantern/lantern.h"
#include "../testutil.h"

static char binned[512], sys[512];

static int setup(void **state)
{
    (void)state;
    gsl_set_error_handler_off();
    const char *shared = getenv("LANTERN_SHARED");
    if (!shared)
        shared = "../shared";
    snprintf(binned, sizeof binned, "%s/data/pantheon2018/lcparam_DS17f.txt", shared);
    snprintf(sys, sizeof sys, "%s/data/pantheon2018/sys_DS17f.txt", shared);
    return 0;
}

static double inv_e(double z, void *p)
{
    double om = *(double *)p, y = 1 + z;
    return 1 / sqrt(om * y * y * y + 1 - om);
}

/* chi2 at the best offset, A - B^2/C, by GSL alone. */
static double grid_chi2(const lt_survey *s, gsl_matrix *chol, double om)
{
    size_t n = s->n;
    gsl_integration_workspace *ws = gsl_integration_workspace_alloc(200);
    gsl_vector *r = gsl_vector_alloc(n), *x = gsl_vector_alloc(n), *one = gsl_vector_alloc(n),
               *y = gsl_vector_alloc(n);
    gsl_function f = {inv_e, &om};
    for (size_t i = 0; i < n; i++) {
        double dc, e;
        gsl_integration_qag(&f, 0, s->z[i], 0, 1e-12, 200, GSL_INTEG_GAUSS31, ws, &dc, &e);
        double dl = (1 + s->zhel[i]) * dc * 299792.458 / 70.0;
        gsl_vector_set(r, i, s->obs[i] - (5 * log10(dl) + 25));
        gsl_vector_set(one, i, 1.0);
    }
    gsl_linalg_cholesky_solve(chol, r, x);
    gsl_linalg_cholesky_solve(chol, one, y);
    double a, b, c;
    gsl_blas_ddot(r, x, &a);
    gsl_blas_ddot(one, x, &b);
    gsl_blas_ddot(one, y, &c);
    gsl_integration_workspace_free(ws);
    gsl_vector_free(r);
    gsl_vector_free(x);
    gsl_vector_free(one);
    gsl_vector_free(y);
    return a - b * b / c;
}

static void check(int with_sys, double published, double published_sd)
{
    lt_survey_spec spec;
    lt_survey_spec_init(&spec);
    spec.data = binned;
    spec.columns = "z=zcmb,zhel=zhel,mag=mb,err=dmb";
    if (with_sys)
        spec.cov[spec.ncov++] = sys;
    lt_error err;
    lt_survey *s = lt_survey_read(&spec, &err);
    assert_non_null(s);
    size_t n = s->n;

    /* the grid: the total covariance as GSL sees it */
    gsl_matrix *c = gsl_matrix_alloc(n, n);
    double *dense = malloc(n * n * sizeof *dense);
    lt_cov_to_dense(s->cov, dense);
    for (size_t i = 0; i < n * n; i++)
        c->data[i] = dense[i];
    free(dense);
    assert_int_equal(gsl_linalg_cholesky_decomp1(c), GSL_SUCCESS);
    double best_om = 0, best = INFINITY, step = 0.0005;
    for (double om = 0.15; om <= 0.45; om += step) {
        double v = grid_chi2(s, c, om);
        if (v < best)
            best = v, best_om = om;
    }
    /* a parabola through the lowest grid point and its neighbours */
    double fm = grid_chi2(s, c, best_om - step), f0 = grid_chi2(s, c, best_om),
           fp = grid_chi2(s, c, best_om + step);
    double grid_om = best_om + 0.5 * step * (fm - fp) / (fm - 2 * f0 + fp);
    double curv = (fm - 2 * f0 + fp) / (step * step); /* d2 chi2 / d om2 */
    double grid_sd = sqrt(2.0 / curv);

    lt_like_spec ls;
    lt_like_spec_init(&ls, lt_cosmo_model_find("lcdm-flat"));
    lt_like *l = lt_like_alloc(s, &ls, &err);
    assert_non_null(l);
    lt_fit_opts fo = {.seed = 1, .starts = 8, .stop = NULL};
    lt_fit_result r;
    assert_int_equal(lt_fit_run(l, &fo, &r, &err), LT_OK);
    assert_true(r.info.converged && r.laplace_ok);
    double om = r.best[0], sd = r.sd[0];
    print_message("%s: lantern %.5f +- %.5f; grid %.5f +- %.5f; published %.3f +- %.3f; "
                  "chi2_min %.3f\n",
                  with_sys ? "stat+sys" : "stat only", om, sd, grid_om, grid_sd, published,
                  published_sd, r.at_best.chi2);
    assert_abs(om, grid_om, 0.05 * sd);                 /* the grid, within 0.05 sigma */
    assert_abs(sd, published_sd, 0.15 * published_sd);  /* the Laplace sigma, within 15% */
    assert_abs(om, published, 0.2 * published_sd);      /* the paper, within 0.2 sigma */
    assert_rel(sd, grid_sd, 0.02);                      /* and the grid's curvature */
    assert_rel(r.at_best.chi2, f0 - (fm - fp) * (fm - fp) / (8 * (fm - 2 * f0 + fp)), 1e-6);
    lt_like_free(l);
    lt_survey_free(s);
    gsl_matrix_free(c);
}

static void test_stat_and_sys(void **state)
{
    (void)state;
    check(1, 0.298, 0.022);
}

static void test_stat_only(void **state)
{
    (void)state;
    check(0, 0.284, 0.012);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_stat_and_sys),
        cmocka_unit_test(test_stat_only),
    };
    return cmocka_run_group_tests_name("pantheon 2018 fit", tests, setup, NULL);
}
