/*
 * Best fit: Nelder-Mead, restarted, then a BFGS polish; and the Laplace
 * covariance from a central-difference Hessian.
 *
 * The minimisers see scaled variables u = x / scale, so that every
 * parameter has a range of order one. Impossible points (+inf) become a
 * large finite penalty, which GSL's simplex treats as "much worse" rather
 * than as an error.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>
#include <gsl/gsl_multimin.h>

#include "lantern/inference.h"

#define PENALTY 1e100

typedef struct {
    lt_objective f;
    void *ctx;
    size_t dim;
    const double *scale;
    double *x;   /* scratch for unscaling */
    size_t evals;
} scaled;

static double scaled_f(const gsl_vector *u, void *p)
{
    scaled *s = p;
    for (size_t i = 0; i < s->dim; i++)
        s->x[i] = gsl_vector_get(u, i) * s->scale[i];
    s->evals++;
    double v = s->f(s->x, s->ctx);
    return isfinite(v) ? v : PENALTY;
}

/* Central differences with a step of 1e-6 in scaled units. */
static void scaled_df(const gsl_vector *u, void *p, gsl_vector *g)
{
    const double h = 1e-6;
    gsl_vector *v = gsl_vector_alloc(u->size);
    gsl_vector_memcpy(v, u);
    for (size_t i = 0; i < u->size; i++) {
        double ui = gsl_vector_get(u, i);
        gsl_vector_set(v, i, ui + h);
        double fp = scaled_f(v, p);
        gsl_vector_set(v, i, ui - h);
        double fm = scaled_f(v, p);
        gsl_vector_set(v, i, ui);
        gsl_vector_set(g, i, (fp - fm) / (2 * h));
    }
    gsl_vector_free(v);
}

static void scaled_fdf(const gsl_vector *u, void *p, double *f, gsl_vector *g)
{
    *f = scaled_f(u, p);
    scaled_df(u, p, g);
}

/* One Nelder-Mead run from u (in place); returns f at the end and whether
 * the simplex shrank below tol. */
static double simplex(scaled *s, gsl_vector *u, double tol, size_t max_evals, int *converged,
                      volatile sig_atomic_t *stop)
{
    gsl_multimin_fminimizer *m =
        gsl_multimin_fminimizer_alloc(gsl_multimin_fminimizer_nmsimplex2, s->dim);
    gsl_vector *step = gsl_vector_alloc(s->dim);
    gsl_vector_set_all(step, 0.1);
    gsl_multimin_function fn = {scaled_f, s->dim, s};
    gsl_multimin_fminimizer_set(m, &fn, u, step);
    size_t start = s->evals;
    *converged = 0;
    while (s->evals - start < max_evals && !(stop && *stop)) {
        if (gsl_multimin_fminimizer_iterate(m) != GSL_SUCCESS)
            break;
        if (gsl_multimin_test_size(gsl_multimin_fminimizer_size(m), tol) == GSL_SUCCESS) {
            *converged = 1;
            break;
        }
    }
    gsl_vector_memcpy(u, gsl_multimin_fminimizer_x(m));
    double fmin = gsl_multimin_fminimizer_minimum(m);
    gsl_vector_free(step);
    gsl_multimin_fminimizer_free(m);
    return fmin;
}

/* BFGS from u; replaces u only if it ends lower. */
static double polish(scaled *s, gsl_vector *u, double f0)
{
    gsl_multimin_fdfminimizer *m =
        gsl_multimin_fdfminimizer_alloc(gsl_multimin_fdfminimizer_vector_bfgs2, s->dim);
    gsl_multimin_function_fdf fn = {scaled_f, scaled_df, scaled_fdf, s->dim, s};
    gsl_multimin_fdfminimizer_set(m, &fn, u, 0.01, 0.1);
    for (int it = 0; it < 200; it++) {
        if (gsl_multimin_fdfminimizer_iterate(m) != GSL_SUCCESS)
            break;
        if (gsl_multimin_test_gradient(gsl_multimin_fdfminimizer_gradient(m), 1e-8) ==
            GSL_SUCCESS)
            break;
    }
    double f = gsl_multimin_fdfminimizer_minimum(m);
    if (isfinite(f) && f < f0) {
        gsl_vector_memcpy(u, gsl_multimin_fdfminimizer_x(m));
        f0 = f;
    }
    gsl_multimin_fdfminimizer_free(m);
    return f0;
}

int lt_optimize(lt_objective f, void *ctx, const lt_optim_opts *o, double *x_best,
                double *f_best, lt_optim_info *info, lt_error *err)
{
    size_t d = o->dim;
    memset(info, 0, sizeof *info);
    if (d == 0) { /* nothing free: the value at no parameters */
        *f_best = f(x_best, ctx);
        info->evals = 1;
        info->converged = isfinite(*f_best);
        return isfinite(*f_best) ? LT_OK
                                 : lt_error_set(err, LT_ENUMERIC, NULL, 0,
                                                "the fixed parameters are impossible");
    }
    scaled s = {f, ctx, d, o->scale, malloc(d * sizeof(double)), 0};
    gsl_vector *u = gsl_vector_alloc(d);
    double *ends = malloc(o->nstarts * sizeof *ends);
    if (!s.x || !u || !ends) {
        free(s.x);
        free(ends);
        if (u)
            gsl_vector_free(u);
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    }
    *f_best = INFINITY;
    for (size_t k = 0; k < o->nstarts; k++) {
        for (size_t i = 0; i < d; i++)
            gsl_vector_set(u, i, o->starts[k * d + i] / o->scale[i]);
        int conv = 0;
        double fk = simplex(&s, u, o->tol, o->max_evals, &conv, o->stop);
        /* restart from the result until the restart no longer helps */
        for (int r = 0; r < 5 && !(o->stop && *o->stop); r++) {
            double again = simplex(&s, u, o->tol, o->max_evals, &conv, o->stop);
            int better = again < fk - 1e-12 * (1 + fabs(fk));
            fk = fmin(fk, again);
            if (!better)
                break;
        }
        if (fk < PENALTY && !o->quick && !(o->stop && *o->stop))
            fk = polish(&s, u, fk);
        ends[k] = fk;
        if (fk < *f_best) {
            *f_best = fk;
            info->best_start = k;
            info->converged = conv;
            for (size_t i = 0; i < d; i++)
                x_best[i] = gsl_vector_get(u, i) * o->scale[i];
        }
    }
    for (size_t k = 0; k < o->nstarts; k++)
        info->agree += fabs(ends[k] - *f_best) < 1e-6 * (1 + fabs(*f_best));
    /* Converged: the best start's simplex met the tolerance, or two or more
     * starts found the same minimum (a flat or degenerate direction can keep
     * a simplex from shrinking while the value no longer changes). */
    info->converged = info->converged || info->agree >= 2;
    info->evals = s.evals;
    free(ends);
    free(s.x);
    gsl_vector_free(u);
    if (o->stop && *o->stop)
        return lt_error_set(err, LT_EINTR, NULL, 0, "interrupted during the best fit");
    if (!(*f_best < PENALTY))
        return lt_error_set(err, LT_ENUMERIC, NULL, 0,
                            "no start reached a possible point: every start lies outside the "
                            "prior or the physical domain");
    return LT_OK;
}

/* f at x + a e_i + b e_j (i == j allowed). */
static double probe(lt_objective f, void *ctx, size_t d, const double *x, double *y, size_t i,
                    double a, size_t j, double b)
{
    memcpy(y, x, d * sizeof *y);
    y[i] += a;
    y[j] += b;
    return f(y, ctx);
}

/* Central-difference Hessian with steps h; returns the index of a
 * parameter whose stencil met an impossible point, or d if none. */
static size_t hessian(lt_objective f, void *ctx, size_t d, const double *x, const double *h,
                      double *H, double *y)
{
    double f0 = f(x, ctx);
    for (size_t i = 0; i < d; i++) {
        double fp = probe(f, ctx, d, x, y, i, h[i], i, 0), fm = probe(f, ctx, d, x, y, i, -h[i], i, 0);
        if (!isfinite(fp) || !isfinite(fm) || !isfinite(f0))
            return i;
        H[i * d + i] = (fp - 2 * f0 + fm) / (h[i] * h[i]);
        for (size_t j = 0; j < i; j++) {
            double pp = probe(f, ctx, d, x, y, i, h[i], j, h[j]);
            double pm = probe(f, ctx, d, x, y, i, h[i], j, -h[j]);
            double mp = probe(f, ctx, d, x, y, i, -h[i], j, h[j]);
            double mm = probe(f, ctx, d, x, y, i, -h[i], j, -h[j]);
            if (!isfinite(pp) || !isfinite(pm) || !isfinite(mp) || !isfinite(mm))
                return i;
            H[i * d + j] = H[j * d + i] = (pp - pm - mp + mm) / (4 * h[i] * h[j]);
        }
    }
    return d;
}

int lt_laplace(lt_objective f, void *ctx, size_t dim, const double *x, const double *scale,
               double *cov, size_t *bad, lt_error *err)
{
    size_t d = dim;
    for (size_t i = 0; i < d * d; i++)
        cov[i] = NAN;
    *bad = d;
    if (d == 0)
        return LT_OK;
    double *h = malloc(d * sizeof *h), *H = malloc(d * d * sizeof *H);
    double *y = malloc(d * sizeof *y);
    int rc = LT_OK;
    if (!h || !H || !y) {
        rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        goto done;
    }
    /* Pass 1 finds each parameter's width; pass 2 steps a tenth of it, far
     * enough that rounding in f does not swamp the curvature. */
    for (size_t i = 0; i < d; i++)
        h[i] = 1e-3 * scale[i];
    for (int pass = 0; pass < 2; pass++) {
        size_t b = hessian(f, ctx, d, x, h, H, y);
        if (b < d) {
            *bad = b;
            rc = lt_error_set(err, LT_EDOMAIN, NULL, 0,
                              "the best fit is at the edge of the prior or the physical "
                              "domain: no Laplace error for parameter %zu",
                              b + 1);
            goto done;
        }
        if (pass == 0)
            for (size_t i = 0; i < d; i++) {
                double width = H[i * d + i] > 0 ? sqrt(2.0 / H[i * d + i]) : scale[i];
                h[i] = 0.1 * fmin(width, scale[i]);
            }
    }
    /* GSL's error handler must be off (the command line switches it off
     * once at start): a Hessian that is not positive definite is an answer
     * here, not a reason to abort. */
    gsl_matrix_view hv = gsl_matrix_view_array(H, d, d);
    int st = gsl_linalg_cholesky_decomp1(&hv.matrix);
    if (st == GSL_SUCCESS) {
        gsl_linalg_cholesky_invert(&hv.matrix);
        for (size_t i = 0; i < d * d; i++)
            cov[i] = 2.0 * H[i];
    } else {
        rc = lt_error_set(err, LT_ENUMERIC, NULL, 0,
                          "the Hessian at the best fit is not positive definite: the "
                          "posterior is not Gaussian there (no Laplace errors)");
    }
done:
    free(h);
    free(H);
    free(y);
    return rc;
}
