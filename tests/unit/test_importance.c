/*
 * Unit tests of adaptive importance sampling (lt_ais) and its diagnostics:
 * the importance-sampling ESS on hand-computable cases, the Pareto k
 * estimate on weights with a known tail, the sampler's moments and
 * evidence on targets with closed forms (a correlated Gaussian started far
 * off, a Gaussian truncated by a hard edge, the banana of Haario, Saksman &
 * Tamminen 1999), thread-count independence, and checkpoints (interrupt,
 * save, load, go on: the same draws as an uninterrupted run).
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <cmocka.h>

#include "lantern/lantern.h"
#include "../testutil.h"

static char dir[256];

/* ---- diagnostics ---- */

static void test_ess_is_by_hand(void **state)
{
    (void)state;
    /* equal weights: the ESS of the mean is the number of draws */
    double f[] = {1, 2, 3, 4, 5, 6}, w1[] = {1, 1, 1, 1, 1, 1};
    assert_rel(lt_diag_ess_is(f, 1, w1, 6), 6.0, 1e-14);
    /* weights on draws with the same |f - mu|: Kish's (sum w)^2 / sum w^2
     * (f = +-1 with mu = 0 by symmetry of the weights) */
    double g[] = {-1, 1, -1, 1}, w2[] = {1, 1, 3, 3};
    assert_rel(lt_diag_ess_is(g, 1, w2, 4), 64.0 / 20.0, 1e-14);
    /* zero weights add nothing; a stride reads one column */
    double rows[] = {-1, 9, 1, 9, -1, 9, 1, 9, 5, 9}, w3[] = {1, 1, 3, 3, 0};
    assert_rel(lt_diag_ess_is(rows, 2, w3, 5), 64.0 / 20.0, 1e-14);
    double none[] = {0, 0};
    assert_abs(lt_diag_ess_is(f, 1, none, 2), 0.0, 0.0);
}

/* Weights u^-xi, u uniform: a Pareto tail of shape xi (the excess over a
 * threshold of a Pareto variable is generalized Pareto with shape xi). */
static void test_pareto_k_known_tail(void **state)
{
    (void)state;
    enum { N = 20000 };
    static double lw[N];
    const double xis[] = {0.2, 0.5, 0.9};
    for (size_t t = 0; t < 3; t++) {
        lt_rng r;
        lt_rng_seed(&r, 11, t);
        for (size_t i = 0; i < N; i++)
            lw[i] = -xis[t] * log(1.0 - lt_rng_uniform(&r));
        /* the tail has M = 3 sqrt(N) = 424 draws: the shape's standard
         * error is about (1 + xi) / sqrt(M) = 0.06 to 0.09 (the maximum
         * likelihood asymptotics of the GPD; Smith 1987, Ann. Stat. 15,
         * 1174, from memory) */
        assert_abs(lt_diag_pareto_k(lw, N), xis[t], 0.2);
    }
    /* importance weights of N(0, 1) under a N(0, s^2) proposal: ln w =
     * x^2 (1/s^2 - 1)/2, and P(w > t) ~ t^(-1/(1 - s^2)), a tail of shape
     * 1 - s^2 (our derivation from the chi2_1 tail): s^2 = 0.5 gives 0.5 */
    lt_rng r;
    lt_rng_seed(&r, 12, 0);
    for (size_t i = 0; i < N; i++) {
        double x = sqrt(0.5) * lt_rng_normal(&r);
        lw[i] = 0.5 * x * x * (1.0 / 0.5 - 1.0);
    }
    assert_abs(lt_diag_pareto_k(lw, N), 0.5, 0.2);
    /* a proposal wider than the target: bounded weights, k well below 0.5 */
    for (size_t i = 0; i < N; i++) {
        double x = 2.0 * lt_rng_normal(&r);
        lw[i] = 0.5 * x * x * (1.0 / 4.0 - 1.0);
    }
    assert_true(lt_diag_pareto_k(lw, N) < 0.3);
    assert_true(isnan(lt_diag_pareto_k(lw, 20)));
}

/* ---- targets ---- */

/* A normalised 3-D Gaussian with mean m and covariance S (by its Cholesky
 * factor), and optionally a hard edge x0 >= edge (density 0 below). */
typedef struct {
    double m[3], l[9], edge;
    int evals;
} gauss3;

static double gauss3_logd(const double *x, void *ctx, double *extra)
{
    gauss3 *g = ctx;
    if (x[0] < g->edge)
        return -INFINITY;
    g->evals++;
    double y[3], q = 0.0, ld = 0.0;
    for (int i = 0; i < 3; i++) {
        double s = x[i] - g->m[i];
        for (int j = 0; j < i; j++)
            s -= g->l[i * 3 + j] * y[j];
        y[i] = s / g->l[i * 3 + i];
        q += y[i] * y[i];
        ld += log(g->l[i * 3 + i]);
    }
    if (extra)
        extra[0] = q;
    return -0.5 * q - ld - 1.5 * log(2.0 * M_PI);
}

/* The twisted Gaussian (Haario, Saksman & Tamminen 1999, Comput. Stat.
 * 14, 375): x1 ~ N(0, 100), x2 + b x1^2 - 100 b ~ N(0, 1), normalised
 * (the map has Jacobian 1). Means: 0 and 100 b - b E[x1^2] = 0; var(x2) =
 * 1 + b^2 var(x1^2) = 1 + 2 b^2 100^2. ctx points to b (NULL: 0.01). */
static double banana_logd(const double *x, void *ctx, double *extra)
{
    (void)extra;
    double b = ctx ? *(const double *)ctx : 0.01, y2 = x[1] + b * x[0] * x[0] - 100.0 * b;
    return -0.5 * (x[0] * x[0] / 100.0 + y2 * y2) - log(2.0 * M_PI * 10.0);
}

static lt_ais *run(const lt_ais_opts *o, lt_logdensity f, void **ctx)
{
    lt_error err = {0};
    lt_ais *s = lt_ais_alloc(o, f, ctx, &err);
    assert_non_null(s);
    assert_int_equal(lt_ais_run(s, NULL, NULL, NULL, &err), LT_OK);
    return s;
}

/* The weighted mean of column i. */
static double wmean(const lt_ais *s, size_t i)
{
    size_t n, rs = lt_ais_row_size(s);
    const double *x = lt_ais_draws(s, &n), *w = lt_ais_weights(s);
    double a = 0.0, b = 0.0;
    for (size_t j = 0; j < n; j++)
        a += w[j] * x[j * rs + i], b += w[j];
    return a / b;
}

/* Started 3 sigma off with a covariance 10 times too narrow and the wrong
 * correlation, the sampler finds the Gaussian: means within 4/sqrt(ESS)
 * sigma, ln Z (the density is normalised) within 4 of its own errors of 0,
 * Pareto k under 0.7. */
static void test_gaussian_from_bad_start(void **state)
{
    (void)state;
    /* S = L L^T with L = [[1,0,0],[0.8,0.6,0],[0.3,0.5,2]] */
    gauss3 g = {{1.0, -2.0, 0.5}, {1, 0, 0, 0.8, 0.6, 0, 0.3, 0.5, 2}, -INFINITY, 0};
    void *ctx[8] = {&g, &g, &g, &g, &g, &g, &g, &g};
    double c[3] = {4.0, 0.0, 3.0}, cov[9] = {0.1, 0, 0, 0, 0.1, 0, 0, 0, 0.1}, sc[3] = {1, 1, 1};
    lt_ais_opts o = {.dim = 3, .nextra = 1, .seed = 3, .center = c, .cov = cov, .scale = sc,
                     .target_ess = 2000, .threads = 1};
    lt_ais *s = run(&o, gauss3_logd, ctx);
    const lt_ais_diag *d = lt_ais_diagnostics(s);
    assert_true(lt_ais_converged(s));
    assert_true(d->ess_min >= 2000);
    assert_true(d->pareto_k <= 0.7);
    double sd[3] = {1.0, 1.0, sqrt(0.09 + 0.25 + 4.0)};
    for (int i = 0; i < 3; i++)
        assert_abs(wmean(s, (size_t)i), g.m[i], 4.0 * sd[i] / sqrt(d->ess[i]));
    assert_abs(d->ln_z, 0.0, 4.0 * d->ln_z_err + 1e-3);
    /* the draws per evaluation: well above what one Gaussian MCMC gets */
    assert_true(d->ess_min / (double)g.evals > 0.2);
    lt_ais_free(s);
}

/* A hard edge: N(0, 1) in x0 cut at 0, so x0's mean is sqrt(2/pi) (the
 * half-normal) and Z = 1/2; draws beyond the edge are not evaluated. */
static void test_truncated_gaussian(void **state)
{
    (void)state;
    gauss3 g = {{0, 0, 0}, {1, 0, 0, 0, 1, 0, 0, 0, 1}, 0.0, 0};
    void *ctx[1] = {&g};
    double c[3] = {0.01, 0, 0}, sc[3] = {1, 1, 1};
    lt_ais_opts o = {.dim = 3, .nextra = 1, .seed = 5, .center = c, .cov = NULL, .scale = sc,
                     .target_ess = 2000, .threads = 1};
    lt_ais *s = run(&o, gauss3_logd, ctx);
    const lt_ais_diag *d = lt_ais_diagnostics(s);
    assert_true(lt_ais_converged(s));
    double sd0 = sqrt(1.0 - 2.0 / M_PI);
    assert_abs(wmean(s, 0), sqrt(2.0 / M_PI), 4.0 * sd0 / sqrt(d->ess[0]));
    assert_abs(d->ln_z, log(0.5), 4.0 * d->ln_z_err + 1e-3);
    assert_true((size_t)g.evals < d->draws); /* the cut draws cost nothing */
    lt_ais_free(s);
}

/* The banana with b = 0.01: curved; means 0 and 0, ln Z = 0. */
static void test_banana(void **state)
{
    (void)state;
    void *ctx[1] = {NULL};
    double c[2] = {0.0, 1.0}, cov[4] = {100, 0, 0, 1}, sc[2] = {10, 1};
    lt_ais_opts o = {.dim = 2, .nextra = 0, .seed = 7, .center = c, .cov = cov, .scale = sc,
                     .target_ess = 2000, .threads = 1};
    lt_ais *s = run(&o, banana_logd, ctx);
    const lt_ais_diag *d = lt_ais_diagnostics(s);
    assert_true(lt_ais_converged(s));
    assert_abs(wmean(s, 0), 0.0, 4.0 * 10.0 / sqrt(d->ess[0]));
    assert_abs(wmean(s, 1), 0.0, 4.0 * sqrt(3.0) / sqrt(d->ess[1]));
    assert_abs(d->ln_z, 0.0, 4.0 * d->ln_z_err + 1e-3);
    assert_true(d->ess_min / (double)d->draws > 0.1);
    lt_ais_free(s);
}

/* Twisted three times harder (b = 0.03, the banana's thin arms reach 25
 * below its centre): the mixture must follow the arms. Means 0 and 0,
 * var(x2) = 1 + 2 b^2 100^2 = 19, ln Z = 0 (closed forms above). */
static void test_banana_twisted(void **state)
{
    (void)state;
    double b = 0.03;
    void *ctx[1] = {&b};
    double c[2] = {0.0, 3.0}, cov[4] = {100, 0, 0, 1}, sc[2] = {10, 1};
    lt_ais_opts o = {.dim = 2, .nextra = 0, .seed = 7, .center = c, .cov = cov, .scale = sc,
                     .target_ess = 2000, .threads = 1};
    lt_ais *s = run(&o, banana_logd, ctx);
    const lt_ais_diag *d = lt_ais_diagnostics(s);
    assert_true(lt_ais_converged(s));
    assert_true(d->pareto_k <= 0.7);
    assert_abs(wmean(s, 0), 0.0, 4.0 * 10.0 / sqrt(d->ess[0]));
    assert_abs(wmean(s, 1), 0.0, 4.0 * sqrt(19.0) / sqrt(d->ess[1]));
    assert_abs(d->ln_z, 0.0, 4.0 * d->ln_z_err + 1e-3);
    lt_ais_free(s);
}

/* A standard Cauchy target: every proposal component is a t with 8
 * degrees of freedom, whose tails are lighter, so far enough out the
 * weights grow as |x|^7 where draws fall as |x|^-8, a Pareto k of 7/8 (our
 * derivation). The wide defensive component keeps a run of some thousands
 * of draws short of that regime (k about 0.3), so the test holds the
 * contract instead: converged exactly when the reported k is at most
 * max_k; and a k above max_k is estimated again on twice the target ESS
 * before the run stops, not converged. */
static double cauchy_logd(const double *x, void *ctx, double *extra)
{
    (void)ctx, (void)extra;
    return -log(M_PI * (1.0 + x[0] * x[0]));
}

static void test_pareto_k_decides(void **state)
{
    (void)state;
    void *ctx[1] = {NULL};
    double c[1] = {0.0}, cov[1] = {1.0}, sc[1] = {1.0};
    lt_ais_opts o = {.dim = 1, .nextra = 0, .seed = 7, .center = c, .cov = cov, .scale = sc,
                     .target_ess = 2000, .threads = 1};
    lt_ais *s = run(&o, cauchy_logd, ctx);
    double k = lt_ais_diagnostics(s)->pareto_k;
    assert_true(isfinite(k) && k > 0.0);
    assert_int_equal(lt_ais_converged(s), k <= 0.7);
    lt_ais_free(s);
    o.max_k = 1e-9; /* the Cauchy's tail is heavy: its k is positive */
    s = run(&o, cauchy_logd, ctx);
    assert_true(lt_ais_diagnostics(s)->ess_min >= 4000);
    assert_true(lt_ais_diagnostics(s)->pareto_k > 1e-9);
    assert_false(lt_ais_converged(s));
    lt_ais_free(s);
}

/* ---- determinism and checkpoints ---- */

static int same_run(const lt_ais *a, const lt_ais *b)
{
    size_t na, nb;
    const double *x = lt_ais_draws(a, &na), *y = lt_ais_draws(b, &nb);
    return na == nb && memcmp(x, y, na * lt_ais_row_size(a) * sizeof *x) == 0 &&
           memcmp(lt_ais_weights(a), lt_ais_weights(b), na * sizeof *x) == 0;
}

/* The same draws and weights with one thread and with `threads`. */
static void check_threads_same(lt_logdensity f, int threads)
{
    double c[2] = {0.0, 1.0}, cov[4] = {100, 0, 0, 1}, sc[2] = {10, 1};
    void *ctx[4] = {NULL, NULL, NULL, NULL};
    lt_ais_opts o = {.dim = 2, .seed = 9, .center = c, .cov = cov, .scale = sc,
                     .target_ess = 1000, .threads = 1};
    lt_ais *a = run(&o, f, ctx);
    o.threads = threads;
    lt_ais *b = run(&o, f, ctx);
    assert_true(same_run(a, b));
    lt_ais_free(a);
    lt_ais_free(b);
}

static void test_threads_same(void **state)
{
    (void)state;
    check_threads_same(banana_logd, 4);
}

/* The banana made slow (tens of microseconds an evaluation), so that the
 * first batch takes over 10 ms and the rest are shared out over the
 * threads (PAR_BATCH_SECONDS in importance.c): the parallel path must give
 * the same draws as one thread. */
static double banana_slow_logd(const double *x, void *ctx, double *extra)
{
    volatile double busy = 0.0;
    for (int i = 0; i < 20000; i++)
        busy = busy + sqrt((double)i);
    return banana_logd(x, ctx, extra) + 0.0 * busy;
}

static void test_threads_same_parallel(void **state)
{
    (void)state;
    check_threads_same(banana_slow_logd, 2);
}

static void stop_after_two(const lt_ais *s, void *ctx)
{
    if (lt_ais_diagnostics(s)->iterations >= 2)
        *(volatile sig_atomic_t *)ctx = 1;
}

static void test_checkpoint_resume(void **state)
{
    (void)state;
    double c[2] = {0.0, 3.0}, cov[4] = {100, 0, 0, 1}, sc[2] = {10, 1};
    void *ctx[2] = {NULL, NULL};
    lt_ais_opts o = {.dim = 2, .seed = 13, .center = c, .cov = cov, .scale = sc,
                     .target_ess = 1500, .threads = 1};
    lt_ais *whole = run(&o, banana_logd, ctx);
    lt_error err = {0};
    lt_ais *part = lt_ais_alloc(&o, banana_logd, ctx, &err);
    volatile sig_atomic_t stop = 0;
    assert_int_equal(lt_ais_run(part, &stop, stop_after_two, (void *)&stop, &err), LT_EINTR);
    assert_false(lt_ais_converged(part));
    char path[300];
    snprintf(path, sizeof path, "%s/ais.bin", dir);
    assert_int_equal(lt_ais_save(part, path, 42, &err), LT_OK);
    lt_ais_free(part);
    /* another fingerprint is refused */
    assert_null(lt_ais_load(path, 43, &o, banana_logd, ctx, &err));
    assert_int_equal(err.code, LT_EINPUT);
    o.threads = 2;
    lt_ais *back = lt_ais_load(path, 42, &o, banana_logd, ctx, &err);
    assert_non_null(back);
    assert_int_equal(lt_ais_run(back, NULL, NULL, NULL, &err), LT_OK);
    assert_true(same_run(whole, back));
    /* a damaged file is refused */
    FILE *f = fopen(path, "r+b");
    assert_non_null(f);
    fseek(f, 100, SEEK_SET);
    fputc(0x5a, f);
    fclose(f);
    assert_null(lt_ais_load(path, 42, &o, banana_logd, ctx, &err));
    lt_ais_free(whole);
    lt_ais_free(back);
    remove(path);
}

/* The pipeline saves its checkpoint from the progress hook, and a run
 * killed after it (SIGKILL, a power cut) resumes from that file: saved at
 * the second iteration, loaded and run on, it must give the same draws and
 * weights as the run never stopped. */
typedef struct {
    const char *path;
    int saved;
} save_at;

static void save_at_second(const lt_ais *s, void *ctx)
{
    save_at *a = ctx;
    lt_error err;
    if (lt_ais_diagnostics(s)->iterations == 2 && !a->saved)
        a->saved = lt_ais_save(s, a->path, 7, &err) == LT_OK;
}

static void test_checkpoint_from_hook(void **state)
{
    (void)state;
    double c[2] = {0.0, 3.0}, cov[4] = {100, 0, 0, 1}, sc[2] = {10, 1};
    void *ctx[1] = {NULL};
    lt_ais_opts o = {.dim = 2, .seed = 17, .center = c, .cov = cov, .scale = sc,
                     .target_ess = 1500, .threads = 1};
    char path[300];
    snprintf(path, sizeof path, "%s/hook.bin", dir);
    save_at a = {path, 0};
    lt_error err = {0};
    lt_ais *whole = lt_ais_alloc(&o, banana_logd, ctx, &err);
    assert_int_equal(lt_ais_run(whole, NULL, save_at_second, &a, &err), LT_OK);
    assert_true(a.saved);
    lt_ais *back = lt_ais_load(path, 7, &o, banana_logd, ctx, &err);
    assert_non_null(back);
    assert_int_equal(lt_ais_run(back, NULL, NULL, NULL, &err), LT_OK);
    assert_true(same_run(whole, back));
    lt_ais_free(whole);
    lt_ais_free(back);
    remove(path);
}

static int setup(void **state)
{
    (void)state;
    return lt_test_tmpdir(dir, sizeof dir, "ais");
}

static int teardown(void **state)
{
    (void)state;
    return lt_test_rmtree(dir);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_ess_is_by_hand),
        cmocka_unit_test(test_pareto_k_known_tail),
        cmocka_unit_test(test_gaussian_from_bad_start),
        cmocka_unit_test(test_truncated_gaussian),
        cmocka_unit_test(test_banana),
        cmocka_unit_test(test_banana_twisted),
        cmocka_unit_test(test_pareto_k_decides),
        cmocka_unit_test(test_threads_same),
        cmocka_unit_test(test_threads_same_parallel),
        cmocka_unit_test(test_checkpoint_resume),
        cmocka_unit_test(test_checkpoint_from_hook),
    };
    return cmocka_run_group_tests(tests, setup, teardown);
}
