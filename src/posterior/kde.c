/*
 * Kernel density estimates of weighted draws on a grid, reflected at prior
 * edges, and the levels of their highest-density regions: see
 * lt_post_kde2d in include/lantern/posterior.h.
 *
 * One core serves both dimensions (d = 1 is a grid one cell tall with no
 * second axis). The draws are binned linearly onto a grid of the output's
 * spacing, extended by the kernel's reach on every side, and each nonempty
 * bin scatters a precomputed kernel table onto the output: no exp() per
 * pair, and the cost is bounded by bins x kernel cells whatever the
 * number of draws.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "lantern/posterior.h"

/* The kernel reaches this many of its standard deviations (the Gaussian
 * beyond 4 sd holds 6e-5 of its mass in 1-D, 3e-4 in 2-D). */
#define REACH_SD 4.0

typedef struct {
    int d;                 /* 1 or 2 */
    double lo[2], step[2]; /* the window's lower corner and cell size per axis */
    int n[2];              /* output cells per axis (n[1] = 1 for d = 1) */
    int r[2];              /* the kernel's reach in cells (r[1] = 0 for d = 1) */
    double edge[4];        /* support {xlo, xhi, ylo, yhi} */
} kde_grid;

/* Add weight w of a point at (x, y) to the extended bin grid b (linear
 * binning: the four nearest bin centres share it by area). */
static void bin_point(const kde_grid *k, double *b, double x, double y, double w)
{
    int ex = k->n[0] + 2 * k->r[0], ey = k->n[1] + 2 * k->r[1];
    double u = (x - k->lo[0]) / k->step[0] - 0.5 + k->r[0];
    double v = k->d == 2 ? (y - k->lo[1]) / k->step[1] - 0.5 + k->r[1] : 0.0;
    if (!(u > -1.0 && u < ex && v > -1.0 && v < ey))
        return; /* beyond the reach: no mass in the window */
    int i = (int)floor(u), j = (int)floor(v);
    double fu = u - i, fv = v - j;
    for (int a = 0; a < 2; a++)
        for (int c = 0; c < (k->d == 2 ? 2 : 1); c++) {
            int ii = i + a, jj = j + c;
            double share = (a ? fu : 1 - fu) * (k->d == 2 ? (c ? fv : 1 - fv) : 1.0);
            if (ii >= 0 && ii < ex && jj >= 0 && jj < ey)
                b[(size_t)ii * (size_t)ey + (size_t)jj] += w * share;
        }
}

/* A point and its mirror images in the edges that bound it. */
static void bin_reflected(const kde_grid *k, double *b, double x, double y, double w)
{
    double xs[3] = {x, 0, 0}, ys[3] = {y, 0, 0};
    int nxs = 1, nys = 1;
    if (isfinite(k->edge[0]))
        xs[nxs++] = 2 * k->edge[0] - x;
    if (isfinite(k->edge[1]))
        xs[nxs++] = 2 * k->edge[1] - x;
    if (k->d == 2 && isfinite(k->edge[2]))
        ys[nys++] = 2 * k->edge[2] - y;
    if (k->d == 2 && isfinite(k->edge[3]))
        ys[nys++] = 2 * k->edge[3] - y;
    for (int a = 0; a < nxs; a++)
        for (int c = 0; c < nys; c++)
            bin_point(k, b, xs[a], ys[c], w);
}

/* The core: the weighted mean and covariance cov (d x d, row-major) of the
 * usable draws have been found; bandwidth factor f. */
static int kde_core(const double *x, const double *y, const double *w, size_t n,
                    const double *cov, double f, kde_grid *k, double *g, double *outside,
                    lt_error *err)
{
    double h[4] = {0, 0, 0, 0}, inv[4] = {0, 0, 0, 0}, det;
    for (int i = 0; i < k->d * k->d; i++)
        h[i] = f * f * cov[i];
    if (k->d == 1 && h[0] > 0 && h[0] < k->step[0] * k->step[0])
        h[0] = k->step[0] * k->step[0]; /* as below: no kernel narrower than a cell */
    if (k->d == 2 && cov[0] > 0 && cov[3] > 0) {
        /* a kernel narrower than a cell across (two columns nearly
         * or exactly tied, as Omega_DE = 1 - Omega_m of a flat model) would
         * fall between the grid's points and break the band into islands:
         * widen it to a cell (its sd) in its narrowest direction, in cell units */
        double hx = h[0] / (k->step[0] * k->step[0]), hy = h[3] / (k->step[1] * k->step[1]);
        double hxy = h[1] / (k->step[0] * k->step[1]);
        double lmin = 0.5 * (hx + hy) - sqrt(0.25 * (hx - hy) * (hx - hy) + hxy * hxy);
        if (lmin < 1.0) {
            h[0] += (1.0 - lmin) * k->step[0] * k->step[0];
            h[3] += (1.0 - lmin) * k->step[1] * k->step[1];
        }
    }
    if (k->d == 1) {
        det = h[0];
        inv[0] = 1 / h[0];
    } else {
        det = h[0] * h[3] - h[1] * h[2];
        inv[0] = h[3] / det, inv[1] = inv[2] = -h[1] / det, inv[3] = h[0] / det;
    }
    if (!(det > 0) || !isfinite(det))
        return lt_error_set(err, LT_EINPUT, NULL, 0,
                            "the draws have no spread to smooth (a column of one value)");
    for (int a = 0; a < k->d; a++) {
        double reach = REACH_SD * sqrt(h[a * k->d + a]) / k->step[a];
        /* wider than three windows: the rest of the kernel is nearly flat
         * across the window and adds nothing that the capped table misses
         * beyond its 4-sd cut; keeps the table bounded */
        k->r[a] = (int)fmin(ceil(reach), 3.0 * k->n[a] + 1);
    }
    int ex = k->n[0] + 2 * k->r[0], ey = k->n[1] + 2 * k->r[1];
    int kx = 2 * k->r[0] + 1, ky = 2 * k->r[1] + 1;
    double *b = calloc((size_t)ex * (size_t)ey, sizeof *b);
    double *kern = malloc((size_t)kx * (size_t)ky * sizeof *kern);
    if (!b || !kern) {
        free(b);
        free(kern);
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory for a density grid");
    }
    double norm = k->d == 1 ? 1 / sqrt(2 * M_PI * det) : 1 / (2 * M_PI * sqrt(det));
    for (int a = -k->r[0]; a <= k->r[0]; a++)
        for (int c = -k->r[1]; c <= k->r[1]; c++) {
            double du = a * k->step[0], dv = c * (k->d == 2 ? k->step[1] : 0);
            double q = inv[0] * du * du + (k->d == 2 ? 2 * inv[1] * du * dv + inv[3] * dv * dv : 0);
            kern[(a + k->r[0]) * ky + (c + k->r[1])] = norm * exp(-0.5 * q);
        }
    double total = 0;
    for (size_t i = 0; i < n; i++) {
        double wi = w ? w[i] : 1.0;
        if (!isfinite(x[i]) || (y && !isfinite(y[i])) || !(wi > 0) || !isfinite(wi))
            continue;
        total += wi;
        bin_reflected(k, b, x[i], y ? y[i] : 0, wi);
    }
    size_t cells = (size_t)k->n[0] * (size_t)k->n[1];
    memset(g, 0, cells * sizeof *g);
    /* scatter: each nonempty bin adds its kernel to the cells in reach */
    for (int bi = 0; bi < ex; bi++)
        for (int bj = 0; bj < ey; bj++) {
            double m = b[(size_t)bi * (size_t)ey + (size_t)bj] / total;
            if (m == 0)
                continue;
            int ci = bi - k->r[0], cj = bj - k->r[1]; /* the bin's cell index in the window */
            int i0 = ci - k->r[0] < 0 ? 0 : ci - k->r[0];
            int i1 = ci + k->r[0] >= k->n[0] ? k->n[0] - 1 : ci + k->r[0];
            int j0 = cj - k->r[1] < 0 ? 0 : cj - k->r[1];
            int j1 = cj + k->r[1] >= k->n[1] ? k->n[1] - 1 : cj + k->r[1];
            for (int i = i0; i <= i1; i++) {
                const double *kr = kern + (size_t)(i - ci + k->r[0]) * (size_t)ky + k->r[1] - cj;
                double *gr = g + (size_t)i * (size_t)k->n[1];
                for (int j = j0; j <= j1; j++)
                    gr[j] += m * kr[j];
            }
        }
    /* outside the support the density is 0 (the mirror images stand in
     * for the mass that would have spilled there) */
    double mass = 0, da = k->step[0] * (k->d == 2 ? k->step[1] : 1.0);
    for (int i = 0; i < k->n[0]; i++)
        for (int j = 0; j < k->n[1]; j++) {
            double cx = k->lo[0] + (i + 0.5) * k->step[0];
            double cy = k->d == 2 ? k->lo[1] + (j + 0.5) * k->step[1] : 0;
            double *gi = &g[(size_t)i * (size_t)k->n[1] + (size_t)j];
            if (cx < k->edge[0] || cx > k->edge[1] ||
                (k->d == 2 && (cy < k->edge[2] || cy > k->edge[3])))
                *gi = 0;
            mass += *gi * da;
        }
    if (outside)
        *outside = fmax(0.0, 1.0 - mass);
    free(b);
    free(kern);
    return LT_OK;
}

/* The weighted mean-free covariance of the usable draws (d columns), their
 * count and the effective size; LT_EINPUT for fewer than two. */
static int moments(const double *x, const double *y, const double *w, size_t n, int d,
                   double *cov, double *neff, lt_error *err)
{
    double sw = 0, sw2 = 0, mx = 0, my = 0;
    size_t used = 0;
    for (size_t i = 0; i < n; i++) {
        double wi = w ? w[i] : 1.0;
        if (!isfinite(x[i]) || (d == 2 && !isfinite(y[i])) || !(wi > 0) || !isfinite(wi))
            continue;
        sw += wi, sw2 += wi * wi, used++;
        mx += wi * x[i];
        my += d == 2 ? wi * y[i] : 0;
    }
    if (used < 2)
        return lt_error_set(err, LT_EINPUT, NULL, 0,
                            "a density needs at least two draws with weight (%zu given)", used);
    mx /= sw, my /= sw;
    double sxx = 0, sxy = 0, syy = 0;
    for (size_t i = 0; i < n; i++) {
        double wi = w ? w[i] : 1.0;
        if (!isfinite(x[i]) || (d == 2 && !isfinite(y[i])) || !(wi > 0) || !isfinite(wi))
            continue;
        double dx = x[i] - mx, dy = d == 2 ? y[i] - my : 0;
        sxx += wi * dx * dx, sxy += wi * dx * dy, syy += wi * dy * dy;
    }
    double div = sw - sw2 / sw; /* reliability weights' unbiased divisor */
    if (d == 1)
        cov[0] = sxx / div;
    else
        cov[0] = sxx / div, cov[1] = cov[2] = sxy / div, cov[3] = syy / div;
    *neff = sw * sw / sw2;
    return LT_OK;
}

static double scott(const lt_kde_opts *o, double neff, int d)
{
    if (o && o->ess > 0 && o->ess < neff)
        neff = o->ess;
    return (o && o->bw_scale > 0 ? o->bw_scale : 1.0) * pow(neff, -1.0 / (d + 4));
}

int lt_post_kde2d(const double *x, const double *y, const double *w, size_t n,
                  const lt_kde_opts *o, double x0, double x1, double y0, double y1, int nx,
                  int ny, double *g, double *outside, lt_error *err)
{
    if (!(x1 > x0) || !(y1 > y0) || nx < 1 || ny < 1 || nx > LT_KDE_MAX_CELLS ||
        ny > LT_KDE_MAX_CELLS || !isfinite(x1 - x0) || !isfinite(y1 - y0))
        return lt_error_set(err, LT_EINPUT, NULL, 0,
                            "a density needs a window of positive size and 1 to %d cells a side",
                            LT_KDE_MAX_CELLS);
    double cov[4], neff;
    int rc = moments(x, y, w, n, 2, cov, &neff, err);
    if (rc)
        return rc;
    kde_grid k = {2, {x0, y0}, {(x1 - x0) / nx, (y1 - y0) / ny}, {nx, ny}, {0, 0},
                  {-INFINITY, INFINITY, -INFINITY, INFINITY}};
    if (o && o->edge)
        memcpy(k.edge, o->edge, sizeof k.edge);
    return kde_core(x, y, w, n, cov, scott(o, neff, 2), &k, g, outside, err);
}

int lt_post_kde1d(const double *x, const double *w, size_t n, const lt_kde_opts *o, double x0,
                  double x1, int nx, double *g, double *outside, lt_error *err)
{
    if (!(x1 > x0) || nx < 1 || nx > LT_KDE_MAX_CELLS || !isfinite(x1 - x0))
        return lt_error_set(err, LT_EINPUT, NULL, 0,
                            "a density needs a window of positive size and 1 to %d cells",
                            LT_KDE_MAX_CELLS);
    double cov[1], neff;
    int rc = moments(x, NULL, w, n, 1, cov, &neff, err);
    if (rc)
        return rc;
    kde_grid k = {1, {x0, 0}, {(x1 - x0) / nx, 1}, {nx, 1}, {0, 0},
                  {-INFINITY, INFINITY, -INFINITY, INFINITY}};
    if (o && o->edge)
        k.edge[0] = o->edge[0], k.edge[1] = o->edge[1];
    return kde_core(x, NULL, w, n, cov, scott(o, neff, 1), &k, g, outside, err);
}

static int cmp_desc(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x < y) - (x > y);
}

void lt_post_hpd_levels(const double *g, size_t n, double da, double outside, const double *p,
                        size_t np, double *levels)
{
    double *s = malloc((n ? n : 1) * sizeof *s), sum = 0;
    for (size_t k = 0; k < np; k++)
        levels[k] = 0;
    if (!s)
        return;
    memcpy(s, g, n * sizeof *s);
    qsort(s, n, sizeof *s, cmp_desc);
    for (size_t i = 0; i < n; i++)
        sum += s[i] * da;
    double total = sum + (outside > 0 ? outside : 0);
    for (size_t k = 0; k < np; k++) {
        double cum = 0, want = p[k] * total;
        for (size_t i = 0; i < n; i++) {
            cum += s[i] * da;
            if (cum >= want) {
                levels[k] = s[i];
                break;
            }
        }
    }
    free(s);
}
