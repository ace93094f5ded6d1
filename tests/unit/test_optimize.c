/*
 * Unit tests of the optimiser and the Laplace covariance on a problem with
 * closed-form answers: a straight line fitted to data with Gaussian errors
 * (weighted least squares; Press et al., Numerical Recipes, 3rd ed.,
 * sec. 15.2, eqs. 15.2.6 and 15.2.9).
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <string.h>

#include <cmocka.h>
#include <gsl/gsl_errno.h>

#include "lantern/lantern.h"
#include "../testutil.h"

enum { N = 25 };
static double xs[N], ys[N], sig[N];

static double line_chi2(const double *p, void *ctx)
{
    (void)ctx;
    double c = 0;
    for (int i = 0; i < N; i++) {
        double r = (ys[i] - p[0] - p[1] * xs[i]) / sig[i];
        c += r * r;
    }
    return c;
}

/* The same, but b must stay <= 0.5: the minimum (b ~ 0.7) lies beyond. */
static double bounded_chi2(const double *p, void *ctx)
{
    return p[1] > 0.5 ? INFINITY : line_chi2(p, ctx);
}

static double nowhere(const double *p, void *ctx)
{
    (void)p, (void)ctx;
    return INFINITY;
}

static int setup(void **state)
{
    (void)state;
    gsl_set_error_handler_off();
    unsigned long long seed = 42;
    for (int i = 0; i < N; i++) {
        xs[i] = i * 0.4;
        sig[i] = lt_test_uniform(&seed, 0.1, 0.3);
        ys[i] = 1.5 + 0.7 * xs[i] + sig[i] * lt_test_uniform(&seed, -1.7, 1.7);
    }
    return 0;
}

static void test_straight_line(void **state)
{
    (void)state;
    double S = 0, Sx = 0, Sxx = 0, Sy = 0, Sxy = 0;
    for (int i = 0; i < N; i++) {
        double w = 1 / (sig[i] * sig[i]);
        S += w, Sx += w * xs[i], Sxx += w * xs[i] * xs[i], Sy += w * ys[i], Sxy += w * xs[i] * ys[i];
    }
    double delta = S * Sxx - Sx * Sx;
    double a = (Sxx * Sy - Sx * Sxy) / delta, b = (S * Sxy - Sx * Sy) / delta;
    double va = Sxx / delta, vb = S / delta, cab = -Sx / delta;

    double starts[] = {0, 0, 5, -3, -2, 2}, scale[] = {1, 1}, best[2], f;
    lt_optim_opts o = {.dim = 2, .nstarts = 3, .starts = starts, .scale = scale, .tol = 1e-10,
                       .max_evals = 20000, .stop = NULL};
    lt_optim_info info;
    lt_error err;
    assert_int_equal(lt_optimize(line_chi2, NULL, &o, best, &f, &info, &err), LT_OK);
    assert_true(info.converged);
    assert_int_equal(info.agree, 3);
    assert_abs(best[0], a, 1e-6 * sqrt(va));
    assert_abs(best[1], b, 1e-6 * sqrt(vb));
    double want[2] = {a, b};
    assert_rel(f, line_chi2(want, NULL), 1e-12);
    double cov[4];
    size_t bad;
    assert_int_equal(lt_laplace(line_chi2, NULL, 2, best, scale, cov, &bad, &err), LT_OK);
    assert_rel(cov[0], va, 1e-6);
    assert_rel(cov[3], vb, 1e-6);
    assert_rel(cov[1], cab, 1e-6);
    assert_rel(cov[2], cab, 1e-6);
}

static void test_edges_and_failures(void **state)
{
    (void)state;
    double starts[] = {0, 0}, scale[] = {1, 1}, best[2], f;
    lt_optim_opts o = {.dim = 2, .nstarts = 1, .starts = starts, .scale = scale, .tol = 1e-10,
                       .max_evals = 20000, .stop = NULL};
    lt_optim_info info;
    lt_error err;
    /* the optimum on the boundary b = 0.5 */
    assert_int_equal(lt_optimize(bounded_chi2, NULL, &o, best, &f, &info, &err), LT_OK);
    assert_abs(best[1], 0.5, 1e-6);
    double cov[4];
    size_t bad;
    assert_int_equal(lt_laplace(bounded_chi2, NULL, 2, best, scale, cov, &bad, &err), LT_EDOMAIN);
    assert_int_equal(bad, 1);
    assert_true(isnan(cov[0]));
    /* nowhere possible */
    assert_int_equal(lt_optimize(nowhere, NULL, &o, best, &f, &info, &err), LT_ENUMERIC);
    assert_non_null(strstr(err.msg, "no start"));
}

/* A stop request (a signal caught by the caller) ends the search with
 * LT_EINTR instead of letting it run to the end: the counter objective sets
 * the flag on its 50th call, and the search must end within one simplex
 * iteration after it (a few calls), far short of a full search. */
typedef struct {
    volatile sig_atomic_t stop;
    size_t calls;
} stopper;

static double stop_after_50(const double *x, void *ctx)
{
    stopper *s = ctx;
    if (++s->calls == 50)
        s->stop = 1;
    return (x[0] - 1) * (x[0] - 1) + 100 * (x[1] - x[0] * x[0]) * (x[1] - x[0] * x[0]);
}

static void test_stop(void **state)
{
    (void)state;
    double starts[] = {-1.2, 1, 0, 0, 2, 2}, scale[] = {1, 1}, best[2], f;
    stopper s = {0, 0};
    lt_optim_opts o = {.dim = 2, .nstarts = 3, .starts = starts, .scale = scale, .tol = 1e-10,
                       .max_evals = 20000, .stop = &s.stop};
    lt_optim_info info;
    lt_error err;
    assert_int_equal(lt_optimize(stop_after_50, &s, &o, best, &f, &info, &err), LT_EINTR);
    assert_true(s.calls < 60);
    /* the same search without the flag runs to the Rosenbrock minimum (1, 1) */
    stopper t = {0, 0};
    o.stop = NULL;
    assert_int_equal(lt_optimize(stop_after_50, &t, &o, best, &f, &info, &err), LT_OK);
    assert_true(t.calls > 200);
    assert_abs(best[0], 1.0, 1e-4);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_straight_line),
        cmocka_unit_test(test_edges_and_failures),
        cmocka_unit_test(test_stop),
    };
    return cmocka_run_group_tests_name("optimize", tests, setup, NULL);
}
