/*
 * Unit tests of the figures' smoothed densities (lt_post_kde1d,
 * lt_post_kde2d, lt_post_hpd_levels) against closed forms:
 *  - many draws of N(0, 1): the expected kernel estimate is the normal
 *    density convolved with the kernel, N(0, 1 + f^2) with Scott's factor
 *    f = n^(-1/5) (1-D; D. W. Scott, Multivariate Density Estimation,
 *    1992, eq. 6.42) - a check of the bandwidth rule and the normalisation;
 *  - a correlated 2-D normal: N(0, (1 + f^2) Sigma) with f = n^(-1/6);
 *  - draws of U(0, 1) with their edges as prior bounds: reflection keeps
 *    the density near 1 up to the edges, where without it it falls to 1/2
 *    (Silverman 1986, section 2.10);
 *  - the highest-density region of a 2-D normal holding p is the ellipse
 *    Delta chi2 = -2 ln(1 - p), whose density is (1 - p) times the peak
 *    (the chi-square distribution with 2 degrees of freedom, closed form);
 *  - weights: draws of N(0, 1) weighted by N(1, 1)/N(0, 1) describe
 *    N(1, 1);
 *  - no islands from noise: the 95.45% region of 2000 draws of a 2-D normal
 *    is one connected piece for every seed tried, where a kernel five
 *    times narrower breaks it up (so the check can fail); so is the band
 *    of two columns tied exactly, y = 1 - x.
 * The draws come from lantern's own seeded generator (src/inference/rng.c,
 * itself tested against its published reference outputs).
 */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>

#include <cmocka.h>

#include "lantern/lantern.h"

enum { N = 200000 };

static double normal_pdf(double x, double var) { return exp(-0.5 * x * x / var) / sqrt(2 * M_PI * var); }

/* The largest difference of a grid of 80 cells of 0.1 from x0 from the
 * density of N(mean, var) at the cells' centres. */
static double worst_normal1d(const double *g, double x0, double mean, double var)
{
    double worst = 0;
    for (int i = 0; i < 80; i++)
        worst = fmax(worst, fabs(g[i] - normal_pdf(x0 + (i + 0.5) * 0.1 - mean, var)));
    return worst;
}

static void test_kde1d_normal(void **state)
{
    (void)state;
    lt_rng r;
    lt_rng_seed(&r, 7, 0);
    double *x = malloc(N * sizeof *x), g[80], out;
    for (size_t i = 0; i < N; i++)
        x[i] = lt_rng_normal(&r);
    lt_error err;
    assert_int_equal(lt_post_kde1d(x, NULL, N, NULL, -4, 4, 80, g, &out, &err), LT_OK);
    double f = pow((double)N, -0.2);
    /* sampling noise of 2e5 draws at the peak: sqrt(p / (n h 2 sqrt(pi))) ~ 3e-3 */
    assert_true(worst_normal1d(g, -4, 0, 1 + f * f) < 0.006);
    /* mass beyond +-4 sd of N(0, 1 + f^2): 2 Phi(-4 / 1.0...) ~ 6.6e-5 */
    assert_true(out < 1e-3);
    /* with the effective size set to 100, the bandwidth is 100^(-1/5) */
    lt_kde_opts o = {.ess = 100};
    assert_int_equal(lt_post_kde1d(x, NULL, N, &o, -4, 4, 80, g, &out, &err), LT_OK);
    f = pow(100.0, -0.2);
    assert_true(worst_normal1d(g, -4, 0, 1 + f * f) < 0.006);
    free(x);
}

static void test_kde1d_weights(void **state)
{
    (void)state;
    lt_rng r;
    lt_rng_seed(&r, 8, 0);
    double *x = malloc(N * sizeof *x), *w = malloc(N * sizeof *w), g[80];
    double sw = 0, sw2 = 0;
    for (size_t i = 0; i < N; i++) {
        x[i] = lt_rng_normal(&r);
        w[i] = exp(x[i] - 0.5); /* N(1, 1) / N(0, 1) */
        sw += w[i], sw2 += w[i] * w[i];
    }
    lt_error err;
    assert_int_equal(lt_post_kde1d(x, w, N, NULL, -3, 5, 80, g, NULL, &err), LT_OK);
    double f = pow(sw * sw / sw2, -0.2); /* Kish's effective size */
    assert_true(worst_normal1d(g, -3, 1, 1 + f * f) < 0.01);
    free(x);
    free(w);
}

/* A kernel far narrower than a cell (many draws of a tight normal on a wide
 * window) is widened to one cell, so the estimate still integrates to 1. */
static void test_kde1d_narrow(void **state)
{
    (void)state;
    lt_rng r;
    lt_rng_seed(&r, 12, 0);
    double *x = malloc(N * sizeof *x), g[80], out, mass = 0;
    for (size_t i = 0; i < N; i++)
        x[i] = 1e-3 * lt_rng_normal(&r);
    lt_error err;
    assert_int_equal(lt_post_kde1d(x, NULL, N, NULL, -1, 1, 80, g, &out, &err), LT_OK);
    for (int i = 0; i < 80; i++)
        mass += g[i] * 0.025;
    print_message("mass on the grid %.4f, outside %.4f\n", mass, out);
    assert_true(fabs(mass - 1) < 0.01);
    free(x);
}

static void test_kde1d_reflection(void **state)
{
    (void)state;
    lt_rng r;
    lt_rng_seed(&r, 9, 0);
    double *x = malloc(N * sizeof *x), g[50], out;
    for (size_t i = 0; i < N; i++)
        x[i] = lt_rng_uniform(&r);
    double edge[2] = {0, 1};
    lt_kde_opts o = {.edge = edge};
    lt_error err;
    assert_int_equal(lt_post_kde1d(x, NULL, N, &o, 0, 1, 50, g, &out, &err), LT_OK);
    for (int i = 0; i < 50; i++)
        assert_true(fabs(g[i] - 1) < 0.03);
    assert_true(out < 0.01); /* all of it on the grid */
    /* without the edges the first cell holds about half */
    assert_int_equal(lt_post_kde1d(x, NULL, N, NULL, 0, 1, 50, g, &out, &err), LT_OK);
    assert_true(g[0] < 0.75 && g[0] > 0.45);
    assert_true(out > 0.005); /* the spill past the edges */
    free(x);
}

/* The largest difference of a grid on [-4, 4] x [-8, 8] from the density
 * of N(0, [[vx, cxy], [cxy, vy]]) at the cells' centres. */
static double worst_normal2d(const double *g, int nx, int ny, double vx, double vy, double cxy)
{
    double det = vx * vy - cxy * cxy, peak = 1 / (2 * M_PI * sqrt(det)), worst = 0;
    for (int i = 0; i < nx; i++)
        for (int j = 0; j < ny; j++) {
            double cx = -4 + (i + 0.5) * 8.0 / nx, cy = -8 + (j + 0.5) * 16.0 / ny;
            double q = (vy * cx * cx - 2 * cxy * cx * cy + vx * cy * cy) / det;
            worst = fmax(worst, fabs(g[i * ny + j] - peak * exp(-0.5 * q)));
        }
    return worst;
}

static void test_kde2d_correlated(void **state)
{
    (void)state;
    lt_rng r;
    lt_rng_seed(&r, 10, 0);
    double *x = malloc(N * sizeof *x), *y = malloc(N * sizeof *y);
    const double rho = 0.8, sy = 2.0;
    for (size_t i = 0; i < N; i++) {
        double a = lt_rng_normal(&r), b = lt_rng_normal(&r);
        x[i] = a;
        y[i] = sy * (rho * a + sqrt(1 - rho * rho) * b);
    }
    enum { NX = 60, NY = 60 };
    double *g = malloc(NX * NY * sizeof *g), out;
    lt_error err;
    assert_int_equal(lt_post_kde2d(x, y, NULL, N, NULL, -4, 4, -8, 8, NX, NY, g, &out, &err), LT_OK);
    double f2 = pow((double)N, -1.0 / 3), s = 1 + f2; /* (1 + f^2) Sigma */
    double vx = s, vy = s * sy * sy, cxy = s * rho * sy, det = vx * vy - cxy * cxy;
    double peak = 1 / (2 * M_PI * sqrt(det));
    assert_true(worst_normal2d(g, NX, NY, vx, vy, cxy) < 0.05 * peak);
    /* the HPD levels of this estimate: (1 - p) of its peak */
    double p[2] = {LT_POST_MASS_1SIGMA, LT_POST_MASS_2SIGMA}, lev[2];
    lt_post_hpd_levels(g, NX * NY, (8.0 / NX) * (16.0 / NY), out, p, 2, lev);
    assert_true(fabs(lev[0] / peak - (1 - p[0])) < 0.02);
    assert_true(fabs(lev[1] / peak - (1 - p[1])) < 0.01);
    /* with an effective size of 100 the kernel is (100^(-1/3)) Sigma: a
     * peak 1 / (1 + f^2) = 0.82 of the unsmoothed one, which tells the rule */
    lt_kde_opts o = {.ess = 100};
    assert_int_equal(lt_post_kde2d(x, y, NULL, N, &o, -4, 4, -8, 8, NX, NY, g, &out, &err), LT_OK);
    s = 1 + pow(100.0, -1.0 / 3);
    vx = s, vy = s * sy * sy, cxy = s * rho * sy, det = vx * vy - cxy * cxy;
    peak = 1 / (2 * M_PI * sqrt(det));
    assert_true(worst_normal2d(g, NX, NY, vx, vy, cxy) < 0.03 * peak);
    free(x);
    free(y);
    free(g);
}

/* The levels alone, on the closed-form density of N(0, I) on a fine grid. */
static void test_hpd_levels_closed_form(void **state)
{
    (void)state;
    enum { M = 400 };
    double *g = malloc(M * M * sizeof *g), h = 12.0 / M;
    for (int i = 0; i < M; i++)
        for (int j = 0; j < M; j++) {
            double cx = -6 + (i + 0.5) * h, cy = -6 + (j + 0.5) * h;
            g[i * M + j] = exp(-0.5 * (cx * cx + cy * cy)) / (2 * M_PI);
        }
    double p[3] = {LT_POST_MASS_1SIGMA, LT_POST_MASS_2SIGMA, 0.5}, lev[3];
    lt_post_hpd_levels(g, M * M, h * h, 0, p, 3, lev);
    for (int k = 0; k < 3; k++)
        assert_true(fabs(lev[k] * 2 * M_PI - (1 - p[k])) < 2e-3);
    /* with half the mass said to lie off the grid, the grid cannot hold 95.45% */
    lt_post_hpd_levels(g, M * M, h * h, 1.0, p, 2, lev);
    assert_true(lev[1] == 0);
    free(g);
}

/* The connected pieces of the cells with g >= level (4-neighbours). */
static int pieces(const double *g, int nx, int ny, double level)
{
    int *seen = calloc((size_t)(nx * ny), sizeof *seen), *stack = malloc((size_t)(nx * ny) * sizeof *stack);
    int count = 0;
    for (int s = 0; s < nx * ny; s++) {
        if (seen[s] || g[s] < level)
            continue;
        count++;
        int top = 0;
        stack[top++] = s, seen[s] = 1;
        while (top) {
            int c = stack[--top], i = c / ny, j = c % ny;
            const int nb[4][2] = {{i - 1, j}, {i + 1, j}, {i, j - 1}, {i, j + 1}};
            for (int k = 0; k < 4; k++) {
                int a = nb[k][0], b = nb[k][1];
                if (a < 0 || a >= nx || b < 0 || b >= ny)
                    continue;
                int t = a * ny + b;
                if (!seen[t] && g[t] >= level)
                    seen[t] = 1, stack[top++] = t;
            }
        }
    }
    free(seen);
    free(stack);
    return count;
}

static void test_no_islands(void **state)
{
    (void)state;
    enum { M = 2000, G = 100 };
    static double x[M], y[M], g[G * G];
    const double p[1] = {LT_POST_MASS_2SIGMA};
    int narrow_islands = 0;
    for (unsigned seed = 1; seed <= 10; seed++) {
        lt_rng r;
        lt_rng_seed(&r, seed, 4);
        for (size_t i = 0; i < M; i++)
            x[i] = lt_rng_normal(&r), y[i] = 0.6 * x[i] + 0.8 * lt_rng_normal(&r);
        double out, lev;
        lt_error err;
        assert_int_equal(lt_post_kde2d(x, y, NULL, M, NULL, -4.5, 4.5, -4.5, 4.5, G, G, g, &out,
                                       &err),
                         LT_OK);
        lt_post_hpd_levels(g, G * G, 0.09 * 0.09, out, p, 1, &lev);
        assert_int_equal(pieces(g, G, G, lev), 1);
        lt_kde_opts o = {.bw_scale = 0.2};
        assert_int_equal(lt_post_kde2d(x, y, NULL, M, &o, -4.5, 4.5, -4.5, 4.5, G, G, g, &out,
                                       &err),
                         LT_OK);
        lt_post_hpd_levels(g, G * G, 0.09 * 0.09, out, p, 1, &lev);
        narrow_islands += pieces(g, G, G, lev) > 1;
    }
    print_message("a kernel 5x narrower than Scott's left islands for %d of 10 seeds\n",
                  narrow_islands);
    assert_true(narrow_islands >= 5);
    /* two columns tied exactly (Omega_DE = 1 - Omega_m of a flat model):
     * a band along the line, in one piece */
    lt_rng r;
    lt_rng_seed(&r, 11, 4);
    for (size_t i = 0; i < M; i++)
        x[i] = 0.3 + 0.02 * lt_rng_normal(&r), y[i] = 1 - x[i];
    double out, lev;
    lt_error err;
    assert_int_equal(lt_post_kde2d(x, y, NULL, M, NULL, 0.2, 0.4, 0.6, 0.8, G, G, g, &out, &err),
                     LT_OK);
    lt_post_hpd_levels(g, G * G, 0.002 * 0.002, out, p, 1, &lev);
    assert_true(lev > 0);
    assert_int_equal(pieces(g, G, G, lev), 1);
}

static void test_kde_errors(void **state)
{
    (void)state;
    double x[3] = {1, 1, 1}, y[3] = {1, 2, 3}, g[4];
    lt_error err;
    assert_int_equal(lt_post_kde1d(x, NULL, 3, NULL, 0, 2, 4, g, NULL, &err), LT_EINPUT);
    assert_int_equal(lt_post_kde1d(y, NULL, 1, NULL, 0, 2, 4, g, NULL, &err), LT_EINPUT);
    assert_int_equal(lt_post_kde1d(y, NULL, 3, NULL, 2, 0, 4, g, NULL, &err), LT_EINPUT);
    /* a column of one value has no spread in 2-D either */
    assert_int_equal(lt_post_kde2d(x, y, NULL, 3, NULL, 0, 4, 0, 4, 2, 2, g, NULL, &err), LT_EINPUT);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_kde1d_normal),
        cmocka_unit_test(test_kde1d_weights),
        cmocka_unit_test(test_kde1d_narrow),
        cmocka_unit_test(test_kde1d_reflection),
        cmocka_unit_test(test_kde2d_correlated),
        cmocka_unit_test(test_hpd_levels_closed_form),
        cmocka_unit_test(test_no_islands),
        cmocka_unit_test(test_kde_errors),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
