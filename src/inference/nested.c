/*
 * Nested sampling with ellipsoidal rejection: see include/lantern/inference.h.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <omp.h>

#include "lantern/rng.h"
#include "internal.h"
#include "lantern/inference.h"

#define BATCH 8     /* candidates per batch: fixed, for determinism */
#define DMAX 16
/*
 * A batch goes to the threads only when it is long enough to pay for a
 * parallel region. A region costs little on an idle machine, but on a busy
 * one its threads wait at the barrier for one of them to get a core (a
 * scheduler time slice, milliseconds) and then spin, taking a core from the
 * thread with the work: around a batch of eight 2-us likelihoods, every
 * iteration, that made the default thread count 20-40 times slower than
 * one thread (issue 16). So the first TIMED_BATCHES batches are evaluated
 * on the calling thread and timed; if the fastest of them took at least
 * PAR_BATCH_SECONDS (several time slices, so a stall costs a fraction of
 * the batch), the rest are shared out. Where a batch is evaluated does not
 * change the candidates or their order, so results do not depend on it.
 */
#define TIMED_BATCHES 8
#define PAR_BATCH_SECONDS 10e-3

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

/* The whole state of a run between iterations: what a checkpoint holds. */
struct lt_nested {
    lt_nested_opts o;
    lt_prior_transform transform;
    void *tctx;
    lt_loglike f;
    void **ctx;
    double *u, *th, *ll;     /* live points: unit cube, parameters, ln L */
    lt_rng rng;
    double logz, logx;       /* ln Z so far, ln X (the prior volume left) */
    size_t it, ns, cap;      /* iterations done, dead points kept, their room */
    size_t accepted, proposed, evals;
    int walk, finished;
    double *theta, *loglike, *logw; /* the dead points (cap) */
    /* where batches run (not part of the state: results do not depend on it) */
    size_t timed;            /* batches timed on the calling thread so far */
    double fastest;          /* the shortest of them, seconds */
    int parallel;            /* 1: batches go to the threads */
};

void lt_nested_free(lt_nested *s)
{
    if (!s)
        return;
    free(s->u);
    free(s->th);
    free(s->ll);
    free(s->theta);
    free(s->loglike);
    free(s->logw);
    free(s);
}

/* The struct and its arrays, for n live points and room for cap dead ones. */
static lt_nested *nested_shell(const lt_nested_opts *o, size_t cap, lt_prior_transform transform,
                               void *tctx, lt_loglike f, void **ctx, lt_error *err)
{
    size_t d = o->dim, n = o->nlive;
    if (d == 0 || d > DMAX || n < 2 * d + 2 || n > 10000000) {
        lt_error_set(err, LT_EINPUT, NULL, 0,
                     "nested sampling needs 1 to %d parameters and at least 2 d + 2 live points",
                     DMAX);
        return NULL;
    }
    lt_nested *s = calloc(1, sizeof *s);
    if (!s)
        goto nomem;
    s->o = *o, s->transform = transform, s->tctx = tctx, s->f = f, s->ctx = ctx;
    s->cap = cap;
    s->u = malloc(n * d * sizeof *s->u);
    s->th = malloc(n * d * sizeof *s->th);
    s->ll = malloc(n * sizeof *s->ll);
    s->theta = malloc(cap * d * sizeof *s->theta);
    s->loglike = malloc(cap * sizeof *s->loglike);
    s->logw = malloc(cap * sizeof *s->logw);
    if (!s->u || !s->th || !s->ll || !s->theta || !s->loglike || !s->logw)
        goto nomem;
    return s;
nomem:
    lt_nested_free(s);
    lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory for the live points");
    return NULL;
}

lt_nested *lt_nested_alloc(const lt_nested_opts *o, lt_prior_transform transform, void *tctx,
                           lt_loglike f, void **ctx, lt_error *err)
{
    lt_nested *s = nested_shell(o, o->nlive * 64, transform, tctx, f, ctx, err);
    if (!s)
        return NULL;
    size_t d = o->dim, n = o->nlive;
    int threads = o->threads > 0 ? o->threads : omp_get_max_threads();
    lt_rng_seed(&s->rng, o->seed, 0x4e5354ull);
    /* live points from the prior: drawn in order, evaluated in parallel */
    for (size_t i = 0; i < n * d; i++)
        s->u[i] = lt_rng_uniform(&s->rng);
    for (size_t i = 0; i < n; i++)
        transform(s->u + i * d, s->th + i * d, tctx);
#pragma omp parallel for schedule(dynamic, 4) num_threads(threads)
    for (size_t i = 0; i < n; i++)
        s->ll[i] = f(s->th + i * d, ctx[omp_get_thread_num()]);
    s->evals = n;
    s->logz = -INFINITY;
    s->logx = 0.0;
    return s;
}

size_t lt_nested_iterations(const lt_nested *s) { return s->it; }

int lt_nested_iterate(lt_nested *s, volatile sig_atomic_t *stop, lt_error *err)
{
    size_t d = s->o.dim, n = s->o.nlive;
    int threads = s->o.threads > 0 ? s->o.threads : omp_get_max_threads();
    double bu[BATCH * DMAX], bt[BATCH * DMAX], bl[BATCH];
    double *u = s->u, *th = s->th, *ll = s->ll;
    lt_prior_transform transform = s->transform;
    void *tctx = s->tctx;
    lt_loglike f = s->f;
    void **ctx = s->ctx;
    for (; !s->finished && s->it < s->o.max_iter; s->it++) {
        if (stop && *stop) /* between iterations: the state is whole */
            return lt_error_set(err, LT_EINTR, NULL, 0, "interrupted");
        size_t it = s->it;
        size_t worst = 0;
        double lmax = -INFINITY;
        for (size_t i = 0; i < n; i++) {
            if (ll[i] < ll[worst])
                worst = i;
            lmax = fmax(lmax, ll[i]);
        }
        double lstar = ll[worst];
        /* stop when the live points could add less than dlogz to ln Z */
        if (it > 0 && logaddexp(s->logz, lmax + s->logx) - s->logz < s->o.dlogz) {
            s->finished = 1;
            break;
        }
        double logx_new = -(double)(it + 1) / (double)n;
        double logw = s->logx + log1p(-exp(logx_new - s->logx)); /* ln(X_i-1 - X_i) */
        if (s->ns == s->cap) {
            size_t cap = 2 * s->cap;
            double *a = realloc(s->theta, cap * d * sizeof *a);
            if (a)
                s->theta = a;
            double *b = realloc(s->loglike, cap * sizeof *b);
            if (b)
                s->loglike = b;
            double *c = realloc(s->logw, cap * sizeof *c);
            if (c)
                s->logw = c;
            if (!a || !b || !c)
                return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory for the samples");
            s->cap = cap;
        }
        memcpy(s->theta + s->ns * d, th + worst * d, d * sizeof *th);
        s->loglike[s->ns] = lstar;
        s->logw[s->ns] = logw; /* prior weight for now */
        s->ns++;
        if (isfinite(lstar))
            s->logz = logaddexp(s->logz, lstar + logw);
        s->logx = logx_new;

        /* a replacement with ln L > lstar */
        ellipsoid e;
        int have_e = !s->walk && bound(u, n, d, s->o.enlarge, &e) == 0;
        int found = 0;
        while (!found) {
            size_t nb = 0;
            if (have_e) {
                for (; nb < BATCH; nb++)
                    if (ellipsoid_draw(&e, &s->rng, bu + nb * d))
                        break;
            }
            if (!have_e || nb == 0) {
                /* the fallback: a random walk from a live point, in the
                 * cube, keeping ln L > lstar, 20 d steps scaled to the live
                 * points' spread */
                s->walk = 1;
                size_t start = (size_t)(lt_rng_uniform(&s->rng) * (double)n);
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
                for (size_t st = 0; st < 20 * d; st++) {
                    double cand[DMAX], ct[DMAX];
                    int inside = 1;
                    for (size_t k = 0; k < d; k++) {
                        cand[k] = cur[k] + sd[k] * lt_rng_normal(&s->rng);
                        inside &= cand[k] > 0 && cand[k] < 1;
                    }
                    if (!inside)
                        continue;
                    transform(cand, ct, tctx);
                    double lc = f(ct, ctx[0]);
                    s->evals++;
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
            if (s->parallel) {
#pragma omp parallel for schedule(static, 1) num_threads(threads)
                for (size_t b = 0; b < nb; b++)
                    bl[b] = f(bt + b * d, ctx[omp_get_thread_num()]);
            } else {
                double t0 = omp_get_wtime();
                for (size_t b = 0; b < nb; b++)
                    bl[b] = f(bt + b * d, ctx[0]);
                if (threads > 1 && nb == BATCH && s->timed < TIMED_BATCHES) {
                    double t = omp_get_wtime() - t0;
                    s->fastest = s->timed++ ? fmin(s->fastest, t) : t;
                    s->parallel = s->timed == TIMED_BATCHES && s->fastest >= PAR_BATCH_SECONDS;
                }
            }
            s->evals += nb;
            for (size_t b = 0; b < nb && !found; b++) {
                s->proposed++;
                if (bl[b] > lstar) {
                    memcpy(u + worst * d, bu + b * d, d * sizeof *u);
                    memcpy(th + worst * d, bt + b * d, d * sizeof *th);
                    ll[worst] = bl[b];
                    s->accepted++;
                    found = 1;
                }
            }
            /* after a fair trial, an ellipsoid that accepts under 5% gives way */
            if (s->proposed > 200 && (double)s->accepted / (double)s->proposed < 0.05)
                have_e = 0;
        }
        if (s->proposed > 1000) /* judge the efficiency on recent iterations */
            s->proposed /= 2, s->accepted /= 2;
    }
    return LT_OK;
}

int lt_nested_result_get(const lt_nested *s, lt_nested_result *r, lt_error *err)
{
    memset(r, 0, sizeof *r);
    size_t d = s->o.dim, n = s->o.nlive, ns = s->ns, total = ns + n;
    r->theta = malloc(total * d * sizeof *r->theta);
    r->loglike = malloc(total * sizeof *r->loglike);
    r->logw = malloc(total * sizeof *r->logw);
    if (!r->theta || !r->loglike || !r->logw) {
        lt_nested_result_free(r);
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory for the samples");
    }
    memcpy(r->theta, s->theta, ns * d * sizeof *r->theta);
    memcpy(r->loglike, s->loglike, ns * sizeof *r->loglike);
    memcpy(r->logw, s->logw, ns * sizeof *r->logw);
    double logz = s->logz;
    /* the live points, each with an equal share of the volume left */
    for (size_t i = 0; i < n; i++) {
        memcpy(r->theta + ns * d, s->th + i * d, d * sizeof *r->theta);
        r->loglike[ns] = s->ll[i];
        r->logw[ns] = s->logx - log((double)n);
        if (isfinite(s->ll[i]))
            logz = logaddexp(logz, s->ll[i] + r->logw[ns]);
        ns++;
    }
    r->nsamples = ns;
    r->logz = logz;
    r->iterations = s->it;
    r->evals = s->evals;
    r->finished = s->finished;
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
    return LT_OK;
}

int lt_nested_run(const lt_nested_opts *o, lt_prior_transform transform, void *tctx,
                  lt_loglike f, void **ctx, lt_nested_result *r, lt_error *err)
{
    memset(r, 0, sizeof *r);
    lt_nested *s = lt_nested_alloc(o, transform, tctx, f, ctx, err);
    if (!s)
        return err->code;
    int rc = lt_nested_iterate(s, NULL, err);
    if (rc == LT_OK)
        rc = lt_nested_result_get(s, r, err);
    lt_nested_free(s);
    return rc;
}

/* ---- checkpoints ---- */

static const char NMAGIC[16] = "lantern-nest-v1";

#define PUT(x) lt_ckpt_put(&c, &(x), sizeof(x))
#define PUTA(p, k) lt_ckpt_put(&c, (p), (k) * sizeof *(p))

int lt_nested_save(const lt_nested *s, const char *path, uint64_t fingerprint, lt_error *err)
{
    lt_ckpt c;
    if (lt_ckpt_create(&c, path, err))
        return err->code;
    size_t d = s->o.dim, n = s->o.nlive;
    lt_ckpt_put(&c, NMAGIC, sizeof NMAGIC);
    PUT(fingerprint);
    PUT(s->o.dim), PUT(s->o.nlive), PUT(s->o.seed), PUT(s->o.dlogz), PUT(s->o.enlarge);
    PUT(s->o.max_iter);
    PUT(s->rng), PUT(s->logz), PUT(s->logx), PUT(s->it), PUT(s->ns), PUT(s->accepted);
    PUT(s->proposed), PUT(s->evals), PUT(s->walk), PUT(s->finished);
    PUTA(s->u, n * d), PUTA(s->th, n * d), PUTA(s->ll, n);
    PUTA(s->theta, s->ns * d), PUTA(s->loglike, s->ns), PUTA(s->logw, s->ns);
    return lt_ckpt_commit(&c, err);
}

#define GET(x) lt_ckpt_get(&c, &(x), sizeof(x))
#define GETA(p, k) lt_ckpt_get(&c, (p), (k) * sizeof *(p))

lt_nested *lt_nested_load(const char *path, uint64_t fingerprint, const lt_nested_opts *o,
                          lt_prior_transform transform, void *tctx, lt_loglike f, void **ctx,
                          lt_error *err)
{
    lt_ckpt c;
    if (lt_ckpt_open(&c, path, err))
        return NULL;
    char magic[16];
    uint64_t fp;
    lt_nested_opts so = *o; /* threads are not part of the state */
    lt_nested *s = NULL;
    if (lt_ckpt_get(&c, magic, sizeof magic) || memcmp(magic, NMAGIC, sizeof NMAGIC) != 0) {
        lt_error_set(err, LT_EINPUT, path, 0, "not a lantern nested-sampling checkpoint");
        goto fail;
    }
    if (GET(fp) || GET(so.dim) || GET(so.nlive) || GET(so.seed) || GET(so.dlogz) ||
        GET(so.enlarge) || GET(so.max_iter))
        goto damaged;
    if (fp != fingerprint || so.dim != o->dim || so.nlive != o->nlive || so.seed != o->seed ||
        so.dlogz != o->dlogz || so.enlarge != o->enlarge || so.max_iter != o->max_iter) {
        lt_error_set(err, LT_EINPUT, path, 0,
                     "the checkpoint belongs to another run: its data, model, priors, seed or "
                     "live points differ from these");
        goto fail;
    }
    size_t it, ns;
    lt_rng rng;
    double logz, logx;
    if (GET(rng) || GET(logz) || GET(logx) || GET(it) || GET(ns))
        goto damaged;
    if (ns > it || it > so.max_iter)
        goto damaged;
    s = nested_shell(&so, ns > so.nlive * 64 ? ns : so.nlive * 64, transform, tctx, f, ctx, err);
    if (!s)
        goto fail;
    size_t d = so.dim, n = so.nlive;
    s->rng = rng, s->logz = logz, s->logx = logx, s->it = it, s->ns = ns;
    if (GET(s->accepted) || GET(s->proposed) || GET(s->evals) || GET(s->walk) ||
        GET(s->finished) || GETA(s->u, n * d) || GETA(s->th, n * d) || GETA(s->ll, n) ||
        GETA(s->theta, ns * d) || GETA(s->loglike, ns) || GETA(s->logw, ns))
        goto damaged;
    if (lt_ckpt_close_read(&c)) {
        lt_error_set(err, LT_EINPUT, path, 0, "the checkpoint is damaged or truncated");
        lt_nested_free(s);
        return NULL;
    }
    return s;
damaged:
    lt_error_set(err, LT_EINPUT, path, 0, "the checkpoint is damaged or truncated");
fail:
    fclose(c.f);
    lt_nested_free(s);
    return NULL;
}
