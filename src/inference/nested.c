/*
 * Nested sampling with ellipsoidal rejection: see include/lantern/inference.h.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <omp.h>

#include "internal.h"
#include "lantern/inference.h"

#define BATCH 8     /* candidates per parallel batch: fixed, for determinism */
#define DMAX 16

void lt_nested_result_free(lt_nested_result *r)
{
    free(r->theta);
    free(r->loglike);
    free(r->logw);
    memset(r, 0, sizeof *r);
}

static double logaddexp(double a, double b)
{
    if (a == -INFINITY)
        return b;
    if (b == -INFINITY)
        return a;
    return a > b ? a + log1p(exp(b - a)) : b + log1p(exp(a - b));
}

/* y = L^-1 x for lower-triangular L. */
static void lsolve(const double *l, size_t d, const double *x, double *y)
{
    for (size_t i = 0; i < d; i++) {
        double s = x[i];
        for (size_t j = 0; j < i; j++)
            s -= l[i * d + j] * y[j];
        y[i] = s / l[i * d + i];
    }
}

typedef struct {
    size_t d;
    double mu[DMAX], l[DMAX * DMAX]; /* centre and Cholesky factor of the shape */
    double scale;                    /* the ellipsoid is mu + scale L z, |z| <= 1 */
} ellipsoid;

/* The bounding ellipsoid of the n live points (rows of u), enlarged. */
static int bound(const double *u, size_t n, size_t d, double enlarge, ellipsoid *e)
{
    double cov[DMAX * DMAX] = {0};
    e->d = d;
    for (size_t k = 0; k < d; k++) {
        e->mu[k] = 0;
        for (size_t i = 0; i < n; i++)
            e->mu[k] += u[i * d + k] / (double)n;
    }
    for (size_t i = 0; i < n; i++)
        for (size_t a = 0; a < d; a++)
            for (size_t b = 0; b < d; b++)
                cov[a * d + b] += (u[i * d + a] - e->mu[a]) * (u[i * d + b] - e->mu[b]) / (double)(n - 1);
    for (size_t a = 0; a < d; a++)
        cov[a * d + a] += 1e-12;
    if (lt_small_cholesky(cov, d, e->l))
        return -1;
    double r2max = 0, y[DMAX];
    for (size_t i = 0; i < n; i++) {
        double x[DMAX];
        for (size_t k = 0; k < d; k++)
            x[k] = u[i * d + k] - e->mu[k];
        lsolve(e->l, d, x, y);
        double r2 = 0;
        for (size_t k = 0; k < d; k++)
            r2 += y[k] * y[k];
        r2max = fmax(r2max, r2);
    }
    e->scale = sqrt(r2max) * enlarge;
    return 0;
}

/* A uniform point of the ellipsoid inside the unit cube (rejection). */
static int ellipsoid_draw(const ellipsoid *e, lt_rng *r, double *u)
{
    size_t d = e->d;
    for (int tries = 0; tries < 10000; tries++) {
        double z[DMAX], n2 = 0;
        for (size_t k = 0; k < d; k++)
            z[k] = lt_rng_normal(r), n2 += z[k] * z[k];
        double rad = pow(lt_rng_uniform(r), 1.0 / (double)d) / sqrt(n2);
        int inside = 1;
        for (size_t i = 0; i < d; i++) {
            double s = e->mu[i];
            for (size_t j = 0; j <= i; j++)
                s += e->scale * e->l[i * d + j] * z[j] * rad;
            u[i] = s;
            inside &= s > 0.0 && s < 1.0;
        }
        if (inside)
            return 0;
    }
    return -1;
}

int lt_nested_run(const lt_nested_opts *o, lt_prior_transform transform, void *tctx,
                  lt_loglike f, void **ctx, lt_nested_result *r, lt_error *err)
{
    memset(r, 0, sizeof *r);
    size_t d = o->dim, n = o->nlive;
    int threads = o->threads > 0 ? o->threads : omp_get_max_threads();
    if (d == 0 || d > DMAX || n < 2 * d + 2)
        return lt_error_set(err, LT_EINPUT, NULL, 0,
                            "nested sampling needs 1 to %d parameters and at least 2 d + 2 live "
                            "points",
                            DMAX);
    double *u = malloc(n * d * sizeof *u), *th = malloc(n * d * sizeof *th);
    double *ll = malloc(n * sizeof *ll);
    size_t cap = n * 64;
    r->theta = malloc(cap * d * sizeof *r->theta);
    r->loglike = malloc(cap * sizeof *r->loglike);
    r->logw = malloc(cap * sizeof *r->logw);
    double bu[BATCH * DMAX], bt[BATCH * DMAX], bl[BATCH];
    int rc = LT_OK;
    if (!u || !th || !ll || !r->theta || !r->loglike || !r->logw) {
        rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory for the live points");
        goto done;
    }
    lt_rng rng;
    lt_rng_seed(&rng, o->seed, 0x4e5354ull);
    /* live points from the prior: drawn in order, evaluated in parallel */
    for (size_t i = 0; i < n * d; i++)
        u[i] = lt_rng_uniform(&rng);
    for (size_t i = 0; i < n; i++)
        transform(u + i * d, th + i * d, tctx);
#pragma omp parallel for schedule(dynamic, 4) num_threads(threads)
    for (size_t i = 0; i < n; i++)
        ll[i] = f(th + i * d, ctx[omp_get_thread_num()]);
    r->evals = n;
    double logz = -INFINITY, logx = 0.0; /* ln X, the prior volume left */
    size_t ns = 0, accepted = 0, proposed = 0;
    int walk = 0;
    for (size_t it = 0; it < o->max_iter; it++) {
        size_t worst = 0;
        double lmax = -INFINITY;
        for (size_t i = 0; i < n; i++) {
            if (ll[i] < ll[worst])
                worst = i;
            lmax = fmax(lmax, ll[i]);
        }
        double lstar = ll[worst];
        /* stop when the live points could add less than dlogz to ln Z */
        if (it > 0 && logaddexp(logz, lmax + logx) - logz < o->dlogz) {
            r->finished = 1;
            break;
        }
        double logx_new = -(double)(it + 1) / (double)n;
        double logw = logx + log1p(-exp(logx_new - logx)); /* ln(X_i-1 - X_i) */
        if (ns == cap) {
            cap *= 2;
            double *a = realloc(r->theta, cap * d * sizeof *a);
            if (a)
                r->theta = a;
            double *b = realloc(r->loglike, cap * sizeof *b);
            if (b)
                r->loglike = b;
            double *c = realloc(r->logw, cap * sizeof *c);
            if (c)
                r->logw = c;
            if (!a || !b || !c) {
                rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory for the samples");
                goto done;
            }
        }
        memcpy(r->theta + ns * d, th + worst * d, d * sizeof *th);
        r->loglike[ns] = lstar;
        r->logw[ns] = logw; /* prior weight for now */
        ns++;
        if (isfinite(lstar))
            logz = logaddexp(logz, lstar + logw);
        logx = logx_new;
        r->iterations = it + 1;

        /* a replacement with ln L > lstar */
        ellipsoid e;
        int have_e = !walk && bound(u, n, d, o->enlarge, &e) == 0;
        int found = 0;
        while (!found) {
            size_t nb = 0;
            if (have_e) {
                for (; nb < BATCH; nb++)
                    if (ellipsoid_draw(&e, &rng, bu + nb * d))
                        break;
            }
            if (!have_e || nb == 0) {
                /* the fallback: a random walk from a live point, in the
                 * cube, keeping ln L > lstar, 20 d steps scaled to the live
                 * points' spread */
                walk = 1;
                size_t start = (size_t)(lt_rng_uniform(&rng) * (double)n);
                if (start >= n)
                    start = n - 1;
                if (start == worst) /* start above the threshold */
                    start = (start + 1) % n;
                double cur[DMAX], sd[DMAX];
                memcpy(cur, u + start * d, d * sizeof *cur);
                for (size_t k = 0; k < d; k++) {
                    double m = 0, v = 0;
                    for (size_t i = 0; i < n; i++)
                        m += u[i * d + k] / (double)n;
                    for (size_t i = 0; i < n; i++)
                        v += (u[i * d + k] - m) * (u[i * d + k] - m) / (double)(n - 1);
                    sd[k] = 0.5 * sqrt(v) + 1e-9;
                }
                double cl = ll[start];
                for (size_t s = 0; s < 20 * d; s++) {
                    double cand[DMAX], ct[DMAX];
                    int inside = 1;
                    for (size_t k = 0; k < d; k++) {
                        cand[k] = cur[k] + sd[k] * lt_rng_normal(&rng);
                        inside &= cand[k] > 0 && cand[k] < 1;
                    }
                    if (!inside)
                        continue;
                    transform(cand, ct, tctx);
                    double lc = f(ct, ctx[0]);
                    r->evals++;
                    if (lc > lstar)
                        memcpy(cur, cand, d * sizeof *cur), cl = lc;
                }
                memcpy(u + worst * d, cur, d * sizeof *cur);
                transform(cur, th + worst * d, tctx);
                ll[worst] = cl;
                found = 1;
                break;
            }
            for (size_t b = 0; b < nb; b++)
                transform(bu + b * d, bt + b * d, tctx);
#pragma omp parallel for schedule(static, 1) num_threads(threads)
            for (size_t b = 0; b < nb; b++)
                bl[b] = f(bt + b * d, ctx[omp_get_thread_num()]);
            r->evals += nb;
            for (size_t b = 0; b < nb && !found; b++) {
                proposed++;
                if (bl[b] > lstar) {
                    memcpy(u + worst * d, bu + b * d, d * sizeof *u);
                    memcpy(th + worst * d, bt + b * d, d * sizeof *th);
                    ll[worst] = bl[b];
                    accepted++;
                    found = 1;
                }
            }
            /* after a fair trial, an ellipsoid that accepts under 5% gives way */
            if (proposed > 200 && (double)accepted / (double)proposed < 0.05)
                have_e = 0;
        }
        if (proposed > 1000) /* judge the efficiency on recent iterations */
            proposed /= 2, accepted /= 2;
    }
    /* the live points, each with an equal share of the volume left */
    for (size_t i = 0; i < n; i++) {
        if (ns == cap)
            break;
        memcpy(r->theta + ns * d, th + i * d, d * sizeof *th);
        r->loglike[ns] = ll[i];
        r->logw[ns] = logx - log((double)n);
        if (isfinite(ll[i]))
            logz = logaddexp(logz, ll[i] + r->logw[ns]);
        ns++;
    }
    r->nsamples = ns;
    r->logz = logz;
    /* posterior weights and the information H = sum p ln(L / Z) */
    double h = 0.0;
    for (size_t i = 0; i < ns; i++) {
        r->logw[i] = isfinite(r->loglike[i]) ? r->logw[i] + r->loglike[i] - logz : -INFINITY;
        double p = exp(r->logw[i]);
        if (p > 0)
            h += p * (r->loglike[i] - logz);
    }
    r->info = h;
    r->logz_err = sqrt(fmax(h, 0.0) / (double)n);
done:
    free(u);
    free(th);
    free(ll);
    if (rc)
        lt_nested_result_free(r);
    return rc;
}
