/*
 * The compressed likelihood: a cost per evaluation that does not grow with
 * the survey.
 *
 * For mu or mag data the prediction is
 *     mu_i = 5 log10(z_i (1 + zhel_i)) + g(z_i),   g(z) = 5 log10(D_M(z) / z) + 25,
 * g smooth. Around a fiducial cosmology, g = g_fid + dg, and dg is
 * represented by its values on K knots uniform in x = ln(1+z) over the
 * data's range, with local six-point Lagrange interpolation (quintic, error
 * ~ h^6), so that dg(z_i) = sum_k B_ik dg_k with B linear and six non-zeros
 * a row.
 * With d'_i = obs_i - 5 log10(z_i (1 + zhel_i)) - g_fid(z_i) (exact, at
 * each object) the residual is r = d' - B dg and
 *     chi2 = a - 2 b^T dg + dg^T F dg,  a = d'^T C^-1 d', b = B^T C^-1 d',
 *                                      F = B^T C^-1 B,
 * and the offset terms are 1^T C^-1 r = c1d - u^T dg (u = B^T C^-1 1) and
 * 1^T C^-1 1. All of these are computed once; an evaluation needs g at the
 * K knots (one cumulative integration) and a K x K quadratic form. Only
 * dg, the difference from the fiducial, is interpolated, which is what
 * makes a modest K accurate.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "compress.h"

void lt_compress_free(lt_compress *c)
{
    if (!c)
        return;
    lt_zgrid_free(c->kgrid);
    free(c->zk);
    free(c->gfid);
    free(c->F);
    free(c->b);
    free(c->u);
    free(c);
}

#define NW 6 /* interpolation points a row */

/* The interpolation row of x: first knot j0 and NW weights. */
static void row_of(double x, double x0, double h, size_t K, size_t *j0, double w[NW])
{
    double t = (x - x0) / h;
    long j = (long)floor(t) - (NW / 2 - 1); /* knots j .. j+NW-1 around the interval */
    if (j < 0)
        j = 0;
    if (j > (long)K - NW)
        j = (long)K - NW;
    *j0 = (size_t)j;
    for (int a = 0; a < NW; a++) {
        double p = 1.0;
        for (int b = 0; b < NW; b++)
            if (b != a)
                p *= (t - (double)(j + b)) / (double)(a - b);
        w[a] = p;
    }
}

/* g(z) = 5 log10(D_M/z) + 25 at n redshifts of grid for cosmology cm; -1 if
 * the cosmology is outside its domain there. */
int lt_compress_g(const lt_cosmo *cm, const lt_zgrid *g, const double *z, size_t n, double *dm,
                  double *out)
{
    lt_cosmo_table t = {.transverse = dm};
    if (lt_cosmo_eval(cm, g, &t, NULL) != LT_OK)
        return -1;
    for (size_t i = 0; i < n; i++) {
        if (!(dm[i] > 0.0))
            return -1;
        out[i] = 5.0 * log10(dm[i] / z[i]) + 25.0;
    }
    return 0;
}

lt_compress *lt_compress_alloc(const lt_survey *s, const lt_cosmo *fid, size_t K, lt_error *err)
{
    size_t n = s->n;
    lt_compress *c = calloc(1, sizeof *c);
    double *dprime = malloc(n * sizeof *dprime), *col = malloc(n * sizeof *col);
    double *y = malloc(n * sizeof *y), *work = malloc(lt_cov_work_size(s->cov) * sizeof *work);
    double *xs = malloc(n * sizeof *xs), *dm = malloc(n * sizeof *dm), *gf = malloc(n * sizeof *gf);
    size_t *j0 = malloc(n * sizeof *j0);
    double *w = malloc(NW * n * sizeof *w);
    lt_zgrid *dg = NULL;
    if (!c || !dprime || !col || !y || !work || !xs || !dm || !gf || !j0 || !w)
        goto nomem;
    if (K < NW)
        K = NW;
    c->K = K;
    double xmin = INFINITY, xmax = -INFINITY;
    for (size_t i = 0; i < n; i++) {
        xs[i] = log1p(s->z[i]);
        xmin = fmin(xmin, xs[i]), xmax = fmax(xmax, xs[i]);
    }
    if (xmax - xmin < 1e-9)
        xmax = xmin + 1e-3; /* a single redshift: any small span */
    c->x0 = xmin;
    c->h = (xmax - xmin) / (double)(K - 1);
    c->zk = malloc(K * sizeof *c->zk);
    c->gfid = malloc(K * sizeof *c->gfid);
    c->F = calloc(K * K, sizeof *c->F);
    c->b = calloc(K, sizeof *c->b);
    c->u = calloc(K, sizeof *c->u);
    if (!c->zk || !c->gfid || !c->F || !c->b || !c->u)
        goto nomem;
    for (size_t k = 0; k < K; k++)
        c->zk[k] = expm1(c->x0 + c->h * (double)k);
    c->zk[0] = fmax(c->zk[0], 1e-12);
    if (!(c->kgrid = lt_zgrid_alloc(K, c->zk, err)) || !(dg = lt_zgrid_alloc(n, s->z, err)))
        goto fail;
    double *dmk = malloc(K * sizeof *dmk);
    int bad = !dmk || lt_compress_g(fid, c->kgrid, c->zk, K, dmk, c->gfid) ||
              lt_compress_g(fid, dg, s->z, n, dm, gf);
    free(dmk);
    if (bad) {
        lt_error_set(err, LT_ENUMERIC, NULL, 0, "the fiducial cosmology of the compression failed");
        goto fail;
    }
    for (size_t i = 0; i < n; i++) {
        dprime[i] = s->obs[i] - 5.0 * log10(s->z[i] * (1.0 + s->zhel[i])) - gf[i];
        row_of(xs[i], c->x0, c->h, K, &j0[i], w + NW * i);
    }
    /* C^-1 d', C^-1 1: a, b, u, c1d, c11 */
    lt_cov_solve(s->cov, dprime, y, work);
    c->a = 0.0, c->c1d = 0.0;
    for (size_t i = 0; i < n; i++) {
        c->a += dprime[i] * y[i];
        c->c1d += y[i];
        for (int q = 0; q < NW; q++)
            c->b[j0[i] + q] += w[NW * i + q] * y[i];
    }
    for (size_t i = 0; i < n; i++)
        col[i] = 1.0;
    lt_cov_solve(s->cov, col, y, work);
    c->c11 = 0.0;
    for (size_t i = 0; i < n; i++) {
        c->c11 += y[i];
        for (int q = 0; q < NW; q++)
            c->u[j0[i] + q] += w[NW * i + q] * y[i];
    }
    /* F = B^T C^-1 B, one column of B at a time: K independent solves,
     * shared out over the threads (each writes only its own columns of F,
     * so the result does not depend on the thread count) */
    int failed = 0;
#pragma omp parallel reduction(| : failed)
    {
        double *tc = malloc(n * sizeof *tc), *ty = malloc(n * sizeof *ty);
        double *tw = malloc(lt_cov_work_size(s->cov) * sizeof *tw);
        failed = !tc || !ty || !tw;
#pragma omp for schedule(dynamic, 1)
        for (size_t k = 0; k < K; k++) {
            if (failed)
                continue;
            for (size_t i = 0; i < n; i++) {
                double v = 0.0;
                for (int q = 0; q < NW; q++)
                    if (j0[i] + (size_t)q == k)
                        v = w[NW * i + q];
                tc[i] = v;
            }
            lt_cov_solve(s->cov, tc, ty, tw);
            for (size_t i = 0; i < n; i++)
                for (int q = 0; q < NW; q++)
                    c->F[(j0[i] + (size_t)q) * K + k] += w[NW * i + q] * ty[i];
        }
        free(tc);
        free(ty);
        free(tw);
    }
    if (failed)
        goto nomem;
    /* symmetrise: the two halves differ by rounding only */
    for (size_t p = 0; p < K; p++)
        for (size_t q = 0; q < p; q++)
            c->F[p * K + q] = c->F[q * K + p] = 0.5 * (c->F[p * K + q] + c->F[q * K + p]);
    goto done;
nomem:
    lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory for the compressed likelihood");
fail:
    lt_compress_free(c);
    c = NULL;
done:
    lt_zgrid_free(dg);
    free(dprime);
    free(col);
    free(y);
    free(work);
    free(xs);
    free(dm);
    free(gf);
    free(j0);
    free(w);
    return c;
}

void lt_compress_quad(const lt_compress *c, const double *dg, double *fdg, double *A, double *Bo)
{
    size_t K = c->K;
    double lin = 0.0, quad = 0.0, ud = 0.0;
    for (size_t p = 0; p < K; p++) {
        const double *row = c->F + p * K;
        double s = 0.0;
        for (size_t q = 0; q < K; q++)
            s += row[q] * dg[q];
        fdg[p] = s;
        quad += dg[p] * s;
        lin += c->b[p] * dg[p];
        ud += c->u[p] * dg[p];
    }
    *A = c->a - 2.0 * lin + quad;
    *Bo = c->c1d - ud;
}
