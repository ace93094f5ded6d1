/*
 * Evidence on cosmological likelihoods, against outside checks:
 *  - nested models: ln B between flat LCDM and flat wCDM on a simulated
 *    survey equals the Savage-Dickey density ratio (Dickey 1971, Ann. Math.
 *    Statist. 42, 204): B = p(w0 = -1 | data, wCDM) / p(w0 = -1 | wCDM), the
 *    posterior density at w0 = -1 from MCMC chains (a Gaussian kernel
 *    density estimate, Silverman's bandwidth) over the prior density 1/2 of
 *    U(-2, 0), within the combined errors;
 *  - Pantheon 2018 binned with systematics (Scolnic et al. 2018, ApJ 859,
 *    101, via ../shared/data/pantheon2018/SOURCE.md): flat wCDM gives w0 =
 *    -1.09 +- 0.22 and Omega_m = 0.316 +- 0.072, each within 0.2 sigma, from
 *    the nested sampler's weighted posterior draws; ln Z errors below 0.1.
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
#include "../pantheon.h"

static char dir[256];

static lt_nested_result nested(const lt_like *l, size_t nlive, uint64_t seed)
{
    lt_like_nested c[2];
    void *cp[2];
    for (int t = 0; t < 2; t++)
        c[t] = (lt_like_nested){{l, lt_like_work_alloc(l)}, lt_like_lognorm(l)}, cp[t] = &c[t];
    lt_nested_opts o = {.dim = lt_like_dim(l), .nlive = nlive, .seed = seed, .dlogz = 0.01,
                        .enlarge = 1.25, .max_iter = 10000000, .threads = 2};
    lt_nested_result r;
    lt_error err;
    assert_int_equal(lt_nested_run(&o, lt_like_prior_transform, (void *)l, lt_like_nested_loglike,
                                   cp, &r, &err),
                     LT_OK);
    assert_true(r.finished);
    for (int t = 0; t < 2; t++)
        lt_like_work_free(c[t].c.w);
    return r;
}

static lt_like *like_for(const lt_survey *s, const char *model)
{
    lt_like_spec spec;
    lt_like_spec_init(&spec, lt_cosmo_model_find(model));
    lt_error err;
    lt_like *l = lt_like_alloc(s, &spec, &err);
    assert_non_null(l);
    return l;
}

/* Kernel density of column p of the chains at x, and its standard error
 * from the spread over chains. */
static void kde(const lt_mcmc *m, size_t p, double x, double *dens, double *err)
{
    size_t nc = lt_mcmc_options(m)->nchains, row = lt_mcmc_row_size(m);
    double per[64], all = 0;
    size_t tot = 0;
    /* Silverman's rule of thumb: h = 1.06 sd n^-1/5 */
    double s = 0, s2 = 0;
    for (size_t c = 0; c < nc; c++) {
        size_t n;
        const double *d = lt_mcmc_draws(m, c, &n);
        for (size_t i = 0; i < n; i++)
            s += d[i * row + p], s2 += d[i * row + p] * d[i * row + p], tot++;
    }
    double sd = sqrt(s2 / tot - (s / tot) * (s / tot)), h = 1.06 * sd * pow((double)tot, -0.2);
    for (size_t c = 0; c < nc; c++) {
        size_t n;
        const double *d = lt_mcmc_draws(m, c, &n);
        double k = 0;
        for (size_t i = 0; i < n; i++) {
            double u = (d[i * row + p] - x) / h;
            k += exp(-0.5 * u * u);
        }
        per[c] = k / (n * h * sqrt(2 * M_PI));
        all += per[c] / nc;
    }
    double v = 0;
    for (size_t c = 0; c < nc; c++)
        v += (per[c] - all) * (per[c] - all) / (nc - 1);
    *dens = all;
    *err = sqrt(v / nc);
}

static void test_savage_dickey(void **state)
{
    (void)state;
    char path[512];
    snprintf(path, sizeof path, "%s/s.ini", dir);
    FILE *f = fopen(path, "w");
    fputs("[survey]\nseed = 77\nobservable = mag\n[cosmology]\nmodel = lcdm-flat\nomega_m = 0.3\n"
          "[tier.a]\nz_min = 0.02\nz_max = 1.2\ncount = 300\nerror = 0.12\n",
          f);
    fclose(f);
    lt_scenario sc;
    lt_sim sim;
    lt_error err;
    assert_int_equal(lt_scenario_read(path, &sc, &err), LT_OK);
    assert_int_equal(lt_simulate(&sc, &sim, &err), LT_OK);
    lt_like *l0 = like_for(sim.survey, "lcdm-flat"), *l1 = like_for(sim.survey, "wcdm-flat");
    lt_nested_result r0 = nested(l0, 1500, 1), r1 = nested(l1, 1500, 2);
    double lnb = r0.logz - r1.logz, lnb_err = hypot(r0.logz_err, r1.logz_err);
    /* the MCMC of wCDM and the density at w0 = -1 */
    lt_fit_opts fo = {.seed = 3, .starts = 6, .stop = NULL};
    lt_fit_result fr;
    assert_int_equal(lt_fit_run(l1, &fo, &fr, &err), LT_OK);
    lt_like_chain c[8];
    void *cp[8];
    for (int k = 0; k < 8; k++)
        c[k] = (lt_like_chain){l1, lt_like_work_alloc(l1)}, cp[k] = &c[k];
    double scale[2] = {1, 2};
    lt_mcmc_opts o = {.dim = 2, .nextra = 1, .nchains = 8, .seed = 99, .center = fr.best,
                      .cov = fr.cov, .scale = scale, .warmup = 2000, .check_every = 1000,
                      .max_steps = 400000, .target_ess = 8000, .rhat_tol = 0.01, .threads = 0,
                      .memory_limit = 0};
    lt_mcmc *m = lt_mcmc_alloc(&o, lt_like_logdensity, cp, &err);
    assert_non_null(m);
    assert_int_equal(lt_mcmc_run(m, NULL, NULL, NULL, &err), LT_OK);
    double dens, derr;
    kde(m, 1, -1.0, &dens, &derr); /* column 1: w0 (omega_m, w0) */
    assert_string_equal(lt_like_param_name(l1, 1), "w0");
    double sd = log(dens / 0.5), sd_err = derr / dens;
    print_message("ln B(lcdm-flat : wcdm-flat): nested %.3f +- %.3f, Savage-Dickey %.3f +- %.3f\n",
                  lnb, lnb_err, sd, sd_err);
    /* a kernel estimate is biased at a peak by about h^2 f''/2: allow 0.05 */
    assert_abs(lnb, sd, 3 * hypot(lnb_err, sd_err) + 0.05);
    lt_mcmc_free(m);
    for (int k = 0; k < 8; k++)
        lt_like_work_free(c[k].w);
    lt_nested_result_free(&r0);
    lt_nested_result_free(&r1);
    lt_like_free(l0);
    lt_like_free(l1);
    lt_sim_free(&sim);
    lt_scenario_free(&sc);
}

static void test_pantheon_wcdm(void **state)
{
    (void)state;
    lt_error err;
    lt_survey *s = lt_test_pantheon_binned(&err);
    assert_non_null(s);
    lt_like *l = like_for(s, "wcdm-flat");
    lt_nested_result r = nested(l, 1000, 5);
    double mean[2] = {0, 0}, m2[2] = {0, 0};
    for (size_t j = 0; j < r.nsamples; j++)
        for (int i = 0; i < 2; i++) {
            double w = exp(r.logw[j]), x = r.theta[j * 2 + i];
            mean[i] += w * x, m2[i] += w * x * x;
        }
    double sd[2] = {sqrt(m2[0] - mean[0] * mean[0]), sqrt(m2[1] - mean[1] * mean[1])};
    print_message("wcdm-flat: omega_m %.4f +- %.4f, w0 %.4f +- %.4f; ln Z %.3f +- %.3f\n", mean[0],
                  sd[0], mean[1], sd[1], r.logz, r.logz_err);
    assert_abs(mean[0], 0.316, 0.2 * 0.072);
    assert_abs(mean[1], -1.09, 0.2 * 0.22);
    assert_true(r.logz_err < 0.1);
    lt_nested_result_free(&r);
    lt_like_free(l);
    lt_survey_free(s);
}

static int setup(void **state)
{
    (void)state;
    gsl_set_error_handler_off();
    return lt_test_tmpdir(dir, sizeof dir, "evidence");
}

static int teardown(void **state)
{
    (void)state;
    return lt_test_rmtree(dir);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_savage_dickey),
        cmocka_unit_test(test_pantheon_wcdm),
    };
    return cmocka_run_group_tests_name("evidence", tests, setup, teardown);
}
