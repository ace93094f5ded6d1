/*
 * The sampler on real data against the published posteriors and a grid
 * integration: Pantheon 2018 binned with systematics (Scolnic et al. 2018,
 * ApJ 859, 101; ../shared/data/pantheon2018/SOURCE.md, values from the
 * paper): flat LCDM Omega_m = 0.298 +- 0.022; curved LCDM Omega_m = 0.319
 * +- 0.070, Omega_Lambda = 0.733 +- 0.113. Each within 0.2 sigma; and with
 * a target ESS of 10^4, the posterior mean and sd agree with a grid
 * integration of the same posterior (computed here) within 0.05 sigma.
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

static lt_survey *survey;

static int setup(void **state)
{
    (void)state;
    gsl_set_error_handler_off();
    lt_error err;
    survey = lt_test_pantheon_binned(&err);
    return survey ? 0 : -1;
}

static int teardown(void **state)
{
    (void)state;
    lt_survey_free(survey);
    return 0;
}

/* Sample l and return the posterior mean and sd of each parameter. */
static void sample(const lt_like *l, double target_ess, double *mean, double *sd)
{
    size_t d = lt_like_dim(l);
    lt_fit_opts fo = {.seed = 1, .starts = 8, .stop = NULL};
    lt_fit_result fr;
    lt_error err;
    assert_int_equal(lt_fit_run(l, &fo, &fr, &err), LT_OK);
    lt_like_chain c[4];
    void *cp[4];
    for (int k = 0; k < 4; k++)
        c[k] = (lt_like_chain){l, lt_like_work_alloc(l)}, cp[k] = &c[k];
    double scale[LT_MAX_FREE];
    for (size_t i = 0; i < d; i++)
        scale[i] = lt_like_prior(l, i)->b - lt_like_prior(l, i)->a;
    lt_mcmc_opts o = {.dim = d, .nextra = 1, .nchains = 4, .seed = 2026, .center = fr.best,
                      .cov = fr.cov, .scale = scale, .warmup = 1000, .check_every = 1000,
                      .max_steps = 2000000, .target_ess = target_ess, .rhat_tol = 0.01,
                      .threads = 0, .memory_limit = 0};
    lt_mcmc *m = lt_mcmc_alloc(&o, lt_like_logdensity, cp, &err);
    assert_non_null(m);
    assert_int_equal(lt_mcmc_run(m, NULL, NULL, NULL, &err), LT_OK);
    assert_true(lt_mcmc_converged(m));
    assert_true(lt_mcmc_diagnostics(m)->rhat_max < 1.01);
    size_t row = lt_mcmc_row_size(m);
    for (size_t i = 0; i < d; i++) {
        double s = 0, s2 = 0;
        size_t tot = 0;
        for (int k = 0; k < 4; k++) {
            size_t n;
            const double *dr = lt_mcmc_draws(m, k, &n);
            for (size_t j = 0; j < n; j++)
                s += dr[j * row + i], s2 += dr[j * row + i] * dr[j * row + i], tot++;
        }
        mean[i] = s / tot;
        sd[i] = sqrt(s2 / tot - mean[i] * mean[i]);
    }
    lt_mcmc_free(m);
    for (int k = 0; k < 4; k++)
        lt_like_work_free(c[k].w);
}

/* Posterior moments on a grid (midpoint rule over the prior box). */
static void grid(const lt_like *l, size_t n, double *mean, double *sd)
{
    size_t d = lt_like_dim(l);
    lt_like_work *w = lt_like_work_alloc(l);
    double s0 = 0, s1[2] = {0, 0}, s2[2] = {0, 0}, x[2], ref = -INFINITY;
    const lt_prior *p0 = lt_like_prior(l, 0), *p1 = d > 1 ? lt_like_prior(l, 1) : NULL;
    size_t n1 = d > 1 ? n : 1;
    for (int pass = 0; pass < 2; pass++) /* pass 0 finds the peak, to avoid underflow */
        for (size_t i = 0; i < n; i++)
            for (size_t k = 0; k < n1; k++) {
                x[0] = p0->a + (p0->b - p0->a) * (i + 0.5) / n;
                if (d > 1)
                    x[1] = p1->a + (p1->b - p1->a) * (k + 0.5) / n1;
                lt_like_point pt;
                lt_like_eval(l, w, x, &pt);
                if (pass == 0) {
                    ref = fmax(ref, pt.logpost);
                    continue;
                }
                if (!isfinite(pt.logpost))
                    continue;
                double wgt = exp(pt.logpost - ref);
                s0 += wgt;
                for (size_t q = 0; q < d; q++)
                    s1[q] += wgt * x[q], s2[q] += wgt * x[q] * x[q];
            }
    for (size_t q = 0; q < d; q++) {
        mean[q] = s1[q] / s0;
        sd[q] = sqrt(s2[q] / s0 - mean[q] * mean[q]);
    }
    lt_like_work_free(w);
}

static void check(const char *model, const double *published, const double *published_sd,
                  size_t ngrid)
{
    lt_like_spec spec;
    lt_like_spec_init(&spec, lt_cosmo_model_find(model));
    lt_error err;
    lt_like *l = lt_like_alloc(survey, &spec, &err);
    assert_non_null(l);
    size_t d = lt_like_dim(l);
    double mean[2], sd[2], gm[2], gs[2], m4[2], s4[2];
    sample(l, 1000, mean, sd);  /* the default target */
    sample(l, 1e4, m4, s4);     /* the precise run */
    grid(l, ngrid, gm, gs);
    for (size_t i = 0; i < d; i++) {
        print_message("%s %s: mcmc %.4f +- %.4f (ESS 1e4: %.4f +- %.4f), grid %.4f +- %.4f, "
                      "published %.3f +- %.3f\n",
                      model, lt_like_param_name(l, i), mean[i], sd[i], m4[i], s4[i],
                      gm[i], gs[i], published[i], published_sd[i]);
        assert_abs(mean[i], published[i], 0.2 * published_sd[i]);
        assert_abs(m4[i], published[i], 0.2 * published_sd[i]);
        assert_abs(m4[i], gm[i], 0.05 * gs[i]);
        assert_abs(s4[i], gs[i], 0.05 * gs[i]);
    }
    lt_like_free(l);
}

static void test_flat_lcdm(void **state)
{
    (void)state;
    double pub[] = {0.298}, psd[] = {0.022};
    check("lcdm-flat", pub, psd, 20000);
}

static void test_curved_lcdm(void **state)
{
    (void)state;
    double pub[] = {0.319, 0.733}, psd[] = {0.070, 0.113};
    check("lcdm", pub, psd, 500);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_flat_lcdm),
        cmocka_unit_test(test_curved_lcdm),
    };
    return cmocka_run_group_tests_name("pantheon 2018 posterior", tests, setup, teardown);
}
