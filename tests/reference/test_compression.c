/*
 * The compressed likelihood against the exact one, on real and simulated
 * data, for all six models: |chi2_compressed - chi2_exact| < 1e-3 wherever
 * chi2 - chi2_min < 50 (200 points around the best fit, 0.3, one and
 * three Laplace widths), and posterior means and sds the same within 0.01 sigma (MCMC
 * draws of the compressed posterior reweighted by exp(-(chi2_exact -
 * chi2_compressed)/2): the importance weights give the exact posterior's
 * moments from the same draws, so the comparison has no Monte Carlo noise
 * of its own). Data: the Pantheon 2018 table of 1048 objects (statistical
 * errors; Scolnic et al. 2018), the demo survey with its dense covariance
 * and with the same covariance as modes.
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

#include "lantern/lantern.h"
#include "../testutil.h"

static lt_survey *read_data(const char *data, const char *columns, const char *cov, const char *modes)
{
    lt_survey_spec spec;
    lt_survey_spec_init(&spec);
    spec.data = data;
    spec.columns = columns;
    if (cov)
        spec.cov[spec.ncov++] = cov;
    spec.modes = modes;
    lt_error err;
    lt_survey *s = lt_survey_read(&spec, &err);
    if (!s)
        print_error("%s: %s\n", err.file, err.msg);
    assert_non_null(s);
    return s;
}

static void check_model(const lt_survey *s, const char *model, int posterior)
{
    lt_like_spec spec;
    lt_like_spec_init(&spec, lt_cosmo_model_find(model));
    lt_error err;
    lt_like *lc = lt_like_alloc(s, &spec, &err);
    spec.exact = 1;
    lt_like *lx = lt_like_alloc(s, &spec, &err);
    assert_non_null(lc);
    assert_non_null(lx);
    size_t K;
    double setdchi2;
    assert_true(lt_like_compression(lc, &K, &setdchi2));
    lt_fit_opts fo = {1, 4};
    lt_fit_result fr;
    assert_int_equal(lt_fit_run(lx, &fo, &fr, &err), LT_OK);
    size_t d = lt_like_dim(lc);
    lt_like_work *wc = lt_like_work_alloc(lc), *wx = lt_like_work_alloc(lx);
    lt_rng r;
    lt_rng_seed(&r, 11, 0);
    double worst = 0;
    int used = 0;
    for (int k = 0; k < 200; k++) {
        double x[LT_NPAR];
        for (size_t i = 0; i < d; i++) {
            double sd = fr.laplace_ok ? sqrt(fr.cov[i * d + i]) : 0.05;
            x[i] = fr.best[i] + (k % 3 == 0 ? 0.3 : k % 3 == 1 ? 1.0 : 3.0) * sd * lt_rng_normal(&r);
        }
        lt_like_point pc, px;
        lt_like_eval_exact(lx, wx, x, &px);
        if (!px.domain_ok || px.chi2 - fr.at_best.chi2 >= 50)
            continue;
        lt_like_eval(lc, wc, x, &pc);
        assert_true(pc.domain_ok);
        worst = fmax(worst, fabs(pc.chi2 - px.chi2));
        used++;
    }
    print_message("%-9s N %zu, K %zu: max |dchi2| %.2e over %d points", model, s->n, K, worst, used);
    assert_true(used >= 15);
    assert_true(worst < 1e-3);
    if (posterior) {
        lt_like_chain c[4];
        void *cp[4];
        for (int k = 0; k < 4; k++)
            c[k] = (lt_like_chain){lc, lt_like_work_alloc(lc)}, cp[k] = &c[k];
        double scale[LT_NPAR];
        for (size_t i = 0; i < d; i++)
            scale[i] = lt_like_prior(lc, i)->b - lt_like_prior(lc, i)->a;
        lt_mcmc_opts o = {d, 1, 4, 5, fr.best, fr.laplace_ok ? fr.cov : NULL, scale,
                          d * 1000 > 2000 ? d * 1000 : 2000, 1000, 30000, 1000, 0.01, 0};
        lt_mcmc *m = lt_mcmc_alloc(&o, lt_like_logdensity, cp, &err);
        assert_int_equal(lt_mcmc_run(m, NULL, NULL, NULL, &err), LT_OK);
        size_t row = lt_mcmc_row_size(m);
        double worst_shift = 0;
        for (size_t i = 0; i < d; i++) {
            double s0 = 0, s1 = 0, s2 = 0, w0 = 0, w1 = 0, w2 = 0;
            size_t tot = 0;
            for (int ch = 0; ch < 4; ch++) {
                size_t n;
                const double *dr = lt_mcmc_draws(m, ch, &n);
                for (size_t q = 0; q < n; q += 4) { /* every fourth draw suffices */
                    const double *xr = dr + q * row;
                    lt_like_point px;
                    lt_like_eval_exact(lx, wx, xr, &px);
                    double wt = exp(-0.5 * (px.chi2 - xr[d + 1])); /* extra[0] is chi2 */
                    double v = xr[i];
                    s0 += 1, s1 += v, s2 += v * v, w0 += wt, w1 += wt * v, w2 += wt * v * v;
                    tot++;
                }
            }
            double mc = s1 / s0, sc = sqrt(s2 / s0 - mc * mc), mx = w1 / w0, sx = sqrt(w2 / w0 - mx * mx);
            worst_shift = fmax(worst_shift, fmax(fabs(mx - mc), fabs(sx - sc)) / sc);
        }
        print_message("; posterior moments shift by at most %.2e sigma", worst_shift);
        assert_true(worst_shift < 0.01);
        lt_mcmc_free(m);
        for (int k = 0; k < 4; k++)
            lt_like_work_free(c[k].w);
    }
    print_message("\n");
    lt_like_work_free(wc);
    lt_like_work_free(wx);
    lt_like_free(lc);
    lt_like_free(lx);
}

static const char *models[] = {"lcdm-flat", "lcdm", "wcdm-flat", "wcdm", "w0wa-flat", "w0wa"};

static void run_all(const lt_survey *s, int posteriors)
{
    for (int k = 0; k < 6; k++)
        check_model(s, models[k], posteriors && (k == 0 || k == 4));
}

static void test_pantheon_1048(void **state)
{
    (void)state;
    const char *shared = getenv("LANTERN_SHARED");
    char data[512];
    snprintf(data, sizeof data, "%s/data/pantheon2018/lcparam_full_long_zhel.txt", shared ? shared : "../shared");
    lt_survey *s = read_data(data, "z=zcmb,zhel=zhel,mag=mb,err=dmb", NULL, NULL);
    run_all(s, 1);
    lt_survey_free(s);
}

static void test_demo_dense(void **state)
{
    (void)state;
    lt_survey *s = read_data("data/lamplighter/survey.csv", "z=z,zhel=zhel,mag=mag,err=err",
                             "data/lamplighter/covariance.txt", NULL);
    run_all(s, 1);
    lt_survey_free(s);
}

static void test_demo_modes(void **state)
{
    (void)state;
    lt_survey *s = read_data("data/lamplighter/survey.csv", "z=z,zhel=zhel,mag=mag,err=err", NULL,
                             "data/lamplighter/modes.csv");
    run_all(s, 0); /* the same matrix as above: the chi2 check suffices */
    lt_survey_free(s);
}

int main(void)
{
    gsl_set_error_handler_off();
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_pantheon_1048),
        cmocka_unit_test(test_demo_dense),
        cmocka_unit_test(test_demo_modes),
    };
    return cmocka_run_group_tests_name("compression", tests, NULL, NULL);
}
