/*
 * Benchmark: MCMC to convergence (R-hat - 1 < 0.01, ESS >= 1000 bulk and
 * tail) for flat LCDM and flat w0-wa on the Pantheon 2018 binned data with
 * systematics: wall time on all cores (4 chains), and ESS per second. The
 * best fit that centres the chains is timed apart. Run by 'make bench'.
 */
#include <omp.h>
#include <stdio.h>
#include <stdlib.h>
#include <time.h>

#include <gsl/gsl_errno.h>

#include "lantern/lantern.h"
#include "../pantheon.h"

static double now(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

int main(void)
{
    gsl_set_error_handler_off();
    lt_error err;
    lt_survey *s = lt_test_pantheon_binned(&err);
    if (!s) {
        fprintf(stderr, "bench: %s\n", err.msg);
        return 1;
    }
    printf("MCMC to convergence on Pantheon 2018 binned + sys, 4 chains, %d threads\n",
           omp_get_max_threads());
    printf("%-10s %10s %10s %10s %12s %10s\n", "model", "fit (s)", "MCMC (s)", "draws", "ESS min",
           "ESS/s");
    const char *models[] = {"lcdm-flat", "w0wa-flat"};
    for (int k = 0; k < 2; k++) {
        lt_like_spec ls;
        lt_like_spec_init(&ls, lt_cosmo_model_find(models[k]));
        lt_like *l = lt_like_alloc(s, &ls, &err);
        size_t d = lt_like_dim(l);
        double t0 = now();
        lt_fit_opts fo = {.seed = 1, .starts = 8, .stop = NULL};
        lt_fit_result fr;
        lt_fit_run(l, &fo, &fr, &err);
        double t1 = now();
        lt_like_chain c[4];
        void *cp[4];
        for (int i = 0; i < 4; i++)
            c[i] = (lt_like_chain){l, lt_like_work_alloc(l)}, cp[i] = &c[i];
        double scale[LT_MAX_FREE];
        for (size_t i = 0; i < d; i++)
            scale[i] = lt_like_prior(l, i)->b - lt_like_prior(l, i)->a;
        lt_mcmc_opts o = {.dim = d, .nextra = 1, .nchains = 4, .seed = 1, .center = fr.best,
                          .cov = fr.laplace_ok ? fr.cov : NULL, .scale = scale,
                          .warmup = d * 1000 > 2000 ? d * 1000 : 2000, .check_every = 1000,
                          .max_steps = 200000, .target_ess = 1000, .rhat_tol = 0.01, .threads = 0,
                          .memory_limit = 0};
        lt_mcmc *m = lt_mcmc_alloc(&o, lt_like_logdensity, cp, &err);
        lt_mcmc_run(m, NULL, NULL, NULL, &err);
        double t2 = now();
        const lt_mcmc_diag *dg = lt_mcmc_diagnostics(m);
        printf("%-10s %10.3f %10.3f %10zu %12.0f %10.0f%s\n", models[k], t1 - t0, t2 - t1,
               4 * dg->draws_per_chain, dg->ess_min, dg->ess_min / (t2 - t1),
               lt_mcmc_converged(m) ? "" : "  (not converged)");
        lt_mcmc_free(m);
        for (int i = 0; i < 4; i++)
            lt_like_work_free(c[i].w);
        lt_like_free(l);
    }
    lt_survey_free(s);
    return 0;
}
