/*
 * Nested sampling with multi-ellipsoidal rejection: see include/lantern/inference.h.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <omp.h>

#include "lantern/rng.h"
#include "internal.h"
#include "lantern/inference.h"

#define BATCH 8     /* candidates per batch: fixed, for determinism */
#define DMAX LT_NESTED_DIM_MAX
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

/* The ellipsoid mu + scale L z, |z| <= 1; logvol is ln of its volume. */
typedef struct {
    double mu[DMAX], l[DMAX * DMAX];
    double scale, logvol;
} ellipsoid;

/*
 * The bound: a union of ellipsoids (Feroz & Hobson 2008, MNRAS 384, 449,
 * sec. 5; Feroz, Hobson & Bridges 2009, MNRAS 398, 1601, sec. 5). One
 * ellipsoid bounds a single compact mode well, but around two modes, or a
 * curved ridge, it holds mostly empty prior volume, and the rejection rate
 * grows with it. So the live points are split in two by 2-means, each half
 * bounded by its own ellipsoid, and the split is kept when the two together
 * have less than half the parent's volume, or less than the parent's when
 * the parent is over twice the prior volume its points are expected to
 * occupy (X m / n for m of n points); the halves are split in turn.
 */
#define EMAX 32
typedef struct {
    size_t k;            /* ellipsoids */
    size_t built;        /* the iteration it was built at */
    ellipsoid e[EMAX];
} mbound;

/* ln of the volume of the unit d-ball */
static double log_unit_ball(size_t d)
{
    return 0.5 * (double)d * log(M_PI) - lgamma(0.5 * (double)d + 1.0);
}

/* Squared radius of x in e's frame (1: on its surface). */
static double radius2(const ellipsoid *e, size_t d, const double *x)
{
    double dx[DMAX] = {0}, y[DMAX], r2 = 0;
    for (size_t k = 0; k < d; k++)
        dx[k] = x[k] - e->mu[k];
    lsolve(e->l, d, dx, y);
    for (size_t k = 0; k < d; k++)
        r2 += y[k] * y[k];
    return r2 / (e->scale * e->scale);
}

/* The smallest ellipsoid of the points' covariance shape holding the m
 * points u[idx[i]] (not enlarged). */
static int fit_ellipsoid(const double *u, const size_t *idx, size_t m, size_t d, ellipsoid *e)
{
    double cov[DMAX * DMAX] = {0};
    memset(e, 0, sizeof *e); /* all of it: a checkpoint writes it whole */
    for (size_t k = 0; k < d; k++) {
        for (size_t i = 0; i < m; i++)
            e->mu[k] += u[idx[i] * d + k] / (double)m;
    }
    for (size_t i = 0; i < m; i++)
        for (size_t a = 0; a < d; a++)
            for (size_t b = 0; b <= a; b++)
                cov[a * d + b] += (u[idx[i] * d + a] - e->mu[a]) *
                                  (u[idx[i] * d + b] - e->mu[b]) / (double)(m - 1);
    for (size_t a = 0; a < d; a++) {
        cov[a * d + a] += 1e-12;
        for (size_t b = 0; b < a; b++)
            cov[b * d + a] = cov[a * d + b];
    }
    if (lt_small_cholesky(cov, d, e->l))
        return -1;
    e->scale = 1.0;
    double r2max = 0;
    for (size_t i = 0; i < m; i++)
        r2max = fmax(r2max, radius2(e, d, u + idx[i] * d));
    e->scale = sqrt(r2max);
    if (!(e->scale > 0))
        return -1;
    e->logvol = log_unit_ball(d) + (double)d * log(e->scale);
    for (size_t k = 0; k < d; k++)
        e->logvol += log(e->l[k * d + k]);
    return 0;
}

/* 2-means of the m points idx (Euclidean, in the unit cube, centred on
 * their ellipsoid e); idx is reordered with the first cluster first, its
 * size returned. Not in e's whitened frame: whitening by the covariance of
 * all the points shrinks the direction that separates two clusters (their
 * separation dominates its variance), so that 2-means would cut each
 * cluster across instead. Starts: the point farthest from the centre, and
 * the point farthest from that one (no random draws, so the stream of
 * candidates does not depend on the splitting). */
static size_t two_means(const double *u, size_t *idx, size_t m, size_t d, const ellipsoid *e,
                        double *z, unsigned char *lab)
{
    for (size_t i = 0; i < m; i++)
        for (size_t k = 0; k < d; k++)
            z[i * d + k] = u[idx[i] * d + k] - e->mu[k];
    size_t a = 0, b = 0;
    double best = -1;
    for (size_t i = 0; i < m; i++) {
        double r = 0;
        for (size_t k = 0; k < d; k++)
            r += z[i * d + k] * z[i * d + k];
        if (r > best)
            best = r, a = i;
    }
    best = -1;
    for (size_t i = 0; i < m; i++) {
        double r = 0;
        for (size_t k = 0; k < d; k++)
            r += (z[i * d + k] - z[a * d + k]) * (z[i * d + k] - z[a * d + k]);
        if (r > best)
            best = r, b = i;
    }
    double c[2][DMAX];
    memcpy(c[0], z + a * d, d * sizeof **c);
    memcpy(c[1], z + b * d, d * sizeof **c);
    memset(lab, 2, m);
    for (int pass = 0; pass < 100; pass++) {
        int changed = 0;
        for (size_t i = 0; i < m; i++) {
            double r0 = 0, r1 = 0;
            for (size_t k = 0; k < d; k++) {
                r0 += (z[i * d + k] - c[0][k]) * (z[i * d + k] - c[0][k]);
                r1 += (z[i * d + k] - c[1][k]) * (z[i * d + k] - c[1][k]);
            }
            unsigned char l = r1 < r0;
            changed |= l != lab[i];
            lab[i] = l;
        }
        if (!changed)
            break;
        size_t cnt[2] = {0, 0};
        memset(c, 0, sizeof c);
        for (size_t i = 0; i < m; i++) {
            cnt[lab[i]]++;
            for (size_t k = 0; k < d; k++)
                c[lab[i]][k] += z[i * d + k];
        }
        if (!cnt[0] || !cnt[1])
            return 0;
        for (int j = 0; j < 2; j++)
            for (size_t k = 0; k < d; k++)
                c[j][k] /= (double)cnt[j];
    }
    /* stable partition: cluster 0 first, each in its old order */
    size_t m0 = 0;
    for (size_t i = 0; i < m; i++)
        m0 += lab[i] == 0;
    size_t *tmp = (size_t *)z; /* z is no longer needed; it holds m size_t */
    size_t p0 = 0, p1 = m0;
    for (size_t i = 0; i < m; i++)
        tmp[lab[i] ? p1++ : p0++] = idx[i];
    memcpy(idx, tmp, m * sizeof *idx);
    return m0;
}

/* An ellipsoid's volume raised to at least ln V = logv (its axes scaled). */
static void at_least(ellipsoid *e, size_t d, double logv)
{
    if (e->logvol < logv) {
        e->scale *= exp((logv - e->logvol) / (double)d);
        e->logvol = logv;
    }
}

/*
 * Bound the m points idx, whose ellipsoid is e, into b (recursively), with
 * room kept for `pending` ellipsoids still to come (the siblings of the
 * splits above). Each ellipsoid's volume is raised to at least the prior
 * volume its points are expected to fill, X m / n (Feroz & Hobson 2008,
 * sec. 5.1.2): the bounding ellipsoid of a few points underestimates their
 * region, which would both favour splitting and leave the union short of
 * the region (a biased ln Z).
 */
static void split(const double *u, size_t *idx, size_t m, size_t d, ellipsoid *e,
                  double logx_share, size_t pending, mbound *b, double *z, unsigned char *lab)
{
    size_t least = 2 * d + 2; /* points for a covariance worth the name */
    ellipsoid c[2];
    at_least(e, d, logx_share);
    if (b->k + 2 + pending <= EMAX && m >= 2 * least) {
        size_t m0 = two_means(u, idx, m, d, e, z, lab);
        if (m0 >= least && m - m0 >= least && fit_ellipsoid(u, idx, m0, d, &c[0]) == 0 &&
            fit_ellipsoid(u, idx + m0, m - m0, d, &c[1]) == 0) {
            double frac = log((double)m0 / (double)m), share[2];
            share[0] = logx_share + frac, share[1] = logx_share + log1p(-exp(frac));
            at_least(&c[0], d, share[0]);
            at_least(&c[1], d, share[1]);
            double both = logaddexp(c[0].logvol, c[1].logvol);
            if (both < e->logvol - M_LN2 || (both < e->logvol && e->logvol > logx_share + M_LN2)) {
                split(u, idx, m0, d, &c[0], share[0], pending + 1, b, z, lab);
                split(u, idx + m0, m - m0, d, &c[1], share[1], pending, b, z, lab);
                return;
            }
        }
    }
    b->e[b->k++] = *e;
}

/* The bound of the n live points at ln X = logx, each ellipsoid's axes
 * enlarged by `enlarge` (the points' own extremes underestimate the
 * region's). */
static int bound_build(const double *u, size_t n, size_t d, double logx, double enlarge,
                       mbound *b)
{
    size_t *idx = malloc(n * sizeof *idx);
    double *z = malloc(n * (d > 1 ? d : 1) * sizeof *z + n * sizeof(size_t));
    unsigned char *lab = malloc(n);
    int rc = -1;
    ellipsoid e;
    if (idx && z && lab) {
        for (size_t i = 0; i < n; i++)
            idx[i] = i;
        if (fit_ellipsoid(u, idx, n, d, &e) == 0) {
            b->k = 0;
            split(u, idx, n, d, &e, logx, 0, b, z, lab);
            for (size_t k = 0; k < b->k; k++) {
                b->e[k].scale *= enlarge;
                b->e[k].logvol += (double)d * log(enlarge);
            }
            rc = 0;
        }
    }
    free(idx);
    free(z);
    free(lab);
    return rc;
}

/*
 * A uniform point of the union of the ellipsoids inside the unit cube:
 * an ellipsoid chosen with probability proportional to its volume, a
 * uniform point of it, kept with probability 1/q where q ellipsoids hold
 * it (so that overlaps are not drawn twice as often), and only inside the
 * cube (Feroz & Hobson 2008, sec. 5.2).
 */
static int bound_draw(const mbound *b, size_t d, lt_rng *r, double *u)
{
    double vmax = -INFINITY, cum[EMAX], tot = 0;
    for (size_t k = 0; k < b->k; k++)
        vmax = fmax(vmax, b->e[k].logvol);
    for (size_t k = 0; k < b->k; k++)
        cum[k] = tot += exp(b->e[k].logvol - vmax);
    for (int tries = 0; tries < 10000; tries++) {
        size_t k = 0;
        if (b->k > 1) {
            double c = lt_rng_uniform(r) * tot;
            while (k + 1 < b->k && cum[k] <= c)
                k++;
        }
        const ellipsoid *e = &b->e[k];
        double z[DMAX], n2 = 0;
        for (size_t i = 0; i < d; i++)
            z[i] = lt_rng_normal(r), n2 += z[i] * z[i];
        double rad = pow(lt_rng_uniform(r), 1.0 / (double)d) / sqrt(n2);
        int inside = 1;
        for (size_t i = 0; i < d; i++) {
            double s = e->mu[i];
            for (size_t j = 0; j <= i; j++)
                s += e->scale * e->l[i * d + j] * z[j] * rad;
            u[i] = s;
            inside &= s > 0.0 && s < 1.0;
        }
        if (!inside)
            continue;
        if (b->k > 1) {
            size_t q = 1;
            for (size_t j = 0; j < b->k; j++)
                q += j != k && radius2(&b->e[j], d, u) <= 1.0;
            if (q > 1 && lt_rng_uniform(r) * (double)q >= 1.0)
                continue;
        }
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
    int walk, finished;      /* walk: 0 the bound, 1 the walk until the next bound, 2 the walk */
    double *theta, *loglike, *logw; /* the dead points (cap) */
    mbound b;                /* the bound, and when it was built (b.k 0: none yet) */
    /* candidates evaluated but not used yet, oldest first (see take_queued) */
    size_t nq;
    double qu[BATCH * DMAX], qt[BATCH * DMAX], ql[BATCH];
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
    /* with no possible live point, no replacement would ever be found */
    size_t possible = 0;
    for (size_t i = 0; i < n; i++)
        possible += isfinite(s->ll[i]) != 0;
    if (possible == 0) {
        lt_nested_free(s);
        lt_error_set(err, LT_ENUMERIC, NULL, 0,
                     "none of %zu points drawn from the prior is possible (each lies outside "
                     "the physical domain): the priors hold too few possible points",
                     n);
        return NULL;
    }
    s->evals = n;
    s->logz = -INFINITY;
    s->logx = 0.0;
    return s;
}

size_t lt_nested_iterations(const lt_nested *s) { return s->it; }

/*
 * The oldest queued candidate above lstar, into live point `to`; those at
 * or below it are dropped (the threshold only rises, so they never will
 * be). Why a queued candidate is still a valid draw: it was drawn
 * uniformly from a bound B built at an earlier iteration k, to hold
 * {L > L*_k}, and evaluated; given L > L*_j, with L*_j >= L*_k the current
 * threshold, it is uniform on B n {L > L*_j} = {L > L*_j}, since B holds
 * {L > L*_k}, a superset (the same assumption that makes B's own draws
 * valid at k). Queued candidates are independent of each other and of
 * the live points chosen since (each was drawn independently from B), so
 * the replacement is, as nested sampling needs, an independent draw from
 * the prior above L*_j; only the rejection work was done earlier.
 */
static int take_queued(lt_nested *s, double lstar, size_t to)
{
    size_t d = s->o.dim, k = 0;
    while (k < s->nq && !(s->ql[k] > lstar))
        k++;
    int found = k < s->nq;
    if (found) {
        memcpy(s->u + to * d, s->qu + k * d, d * sizeof *s->u);
        memcpy(s->th + to * d, s->qt + k * d, d * sizeof *s->th);
        s->ll[to] = s->ql[k];
        k++;
    }
    s->nq -= k;
    memmove(s->qu, s->qu + k * d, s->nq * d * sizeof *s->qu);
    memmove(s->qt, s->qt + k * d, s->nq * d * sizeof *s->qt);
    memmove(s->ql, s->ql + k, s->nq * sizeof *s->ql);
    return found;
}

/* The fallback: a random walk from a live point, in the cube, keeping
 * ln L > lstar, 20 d steps scaled to the live points' spread; the walk's
 * end replaces live point `worst`. */
static void walk_replace(lt_nested *s, double lstar, size_t worst)
{
    size_t d = s->o.dim, n = s->o.nlive;
    double *u = s->u, *ll = s->ll;
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
        s->transform(cand, ct, s->tctx);
        double lc = s->f(ct, s->ctx[0]);
        s->evals++;
        if (lc > lstar)
            memcpy(cur, cand, d * sizeof *cur), cl = lc;
    }
    memcpy(u + worst * d, cur, d * sizeof *cur);
    s->transform(cur, s->th + worst * d, s->tctx);
    ll[worst] = cl;
}

/* Room for one more dead point. */
static int grow(lt_nested *s, lt_error *err)
{
    if (s->ns < s->cap)
        return LT_OK;
    size_t d = s->o.dim, cap = 2 * s->cap;
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
    return LT_OK;
}

int lt_nested_iterate(lt_nested *s, volatile sig_atomic_t *stop, lt_error *err)
{
    size_t d = s->o.dim, n = s->o.nlive;
    int threads = s->o.threads > 0 ? s->o.threads : omp_get_max_threads();
    double bu[BATCH * DMAX], bt[BATCH * DMAX], bl[BATCH];
    double *u = s->u, *th = s->th, *ll = s->ll;
    /* the bound is rebuilt every n/20 iterations (the volume shrinks by
     * about 5% in between, so a bound a little too large costs that much
     * efficiency, and its splitting costs little per iteration) */
    size_t rebuild = n / 20 > 1 ? n / 20 : 1;
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
        double left = it > 0 ? logaddexp(s->logz, lmax + s->logx) - s->logz : INFINITY;
        if (s->o.progress && it > 0 && it % LT_NESTED_PROGRESS_EVERY == 0) {
            lt_nested_status st = {it, s->evals, s->logz, left};
            s->o.progress(&st, s->o.progress_ctx);
        }
        if (left < s->o.dlogz) {
            s->finished = 1;
            if (s->o.progress) {
                lt_nested_status st = {it, s->evals, s->logz, left};
                s->o.progress(&st, s->o.progress_ctx);
            }
            break;
        }
        double logx_new = -(double)(it + 1) / (double)n;
        double logw = s->logx + log1p(-exp(logx_new - s->logx)); /* ln(X_i-1 - X_i) */
        if (grow(s, err))
            return err->code;
        memcpy(s->theta + s->ns * d, th + worst * d, d * sizeof *th);
        s->loglike[s->ns] = lstar;
        s->logw[s->ns] = logw; /* prior weight for now */
        s->ns++;
        if (isfinite(lstar))
            s->logz = logaddexp(s->logz, lstar + logw);
        s->logx = logx_new;

        /* a replacement with ln L > lstar: a queued candidate, else the
         * first acceptable one of new batches from the bound, the other
         * acceptable ones of that batch queued */
        if (take_queued(s, lstar, worst))
            continue;
        if (s->walk != 2 && (s->b.k == 0 || it >= s->b.built + rebuild)) {
            /* a new bound gets a fresh trial, even after the walk took over
             * from the last one: the region's shape changes as it shrinks */
            if (bound_build(u, n, d, s->logx, s->o.enlarge, &s->b) == 0) {
                s->b.built = it;
                if (s->walk)
                    s->walk = 0, s->proposed = s->accepted = 0;
            } else
                s->walk = 2; /* for good: the live points span no volume */
        }
        int found = 0;
        while (!found) {
            size_t nb = 0;
            if (!s->walk)
                for (; nb < BATCH; nb++)
                    if (bound_draw(&s->b, d, &s->rng, bu + nb * d))
                        break;
            if (nb == 0) {
                s->walk = 1;
                walk_replace(s, lstar, worst);
                break;
            }
            for (size_t b = 0; b < nb; b++)
                s->transform(bu + b * d, bt + b * d, s->tctx);
            if (s->parallel) {
#pragma omp parallel for schedule(static, 1) num_threads(threads)
                for (size_t b = 0; b < nb; b++)
                    bl[b] = s->f(bt + b * d, s->ctx[omp_get_thread_num()]);
            } else {
                double t0 = omp_get_wtime();
                for (size_t b = 0; b < nb; b++)
                    bl[b] = s->f(bt + b * d, s->ctx[0]);
                if (threads > 1 && nb == BATCH && s->timed < TIMED_BATCHES) {
                    double t = omp_get_wtime() - t0;
                    s->fastest = s->timed++ ? fmin(s->fastest, t) : t;
                    s->parallel = s->timed == TIMED_BATCHES && s->fastest >= PAR_BATCH_SECONDS;
                }
            }
            s->evals += nb;
            for (size_t b = 0; b < nb; b++) {
                if (!found)
                    s->proposed++;
                if (!(bl[b] > lstar))
                    continue;
                if (!found) {
                    memcpy(u + worst * d, bu + b * d, d * sizeof *u);
                    memcpy(th + worst * d, bt + b * d, d * sizeof *th);
                    ll[worst] = bl[b];
                    s->accepted++;
                    found = 1;
                } else { /* the queue is empty here, so it has room */
                    memcpy(s->qu + s->nq * d, bu + b * d, d * sizeof *u);
                    memcpy(s->qt + s->nq * d, bt + b * d, d * sizeof *th);
                    s->ql[s->nq++] = bl[b];
                }
            }
            /* after a fair trial, a bound gives way when a replacement from
             * it costs more evaluations (1 / its acceptance) than the walk's
             * 20 d */
            if (s->proposed > 200 && (double)s->accepted * 20.0 * (double)d < (double)s->proposed)
                s->walk = 1;
        }
        if (s->proposed > 1000) /* judge the efficiency on recent iterations */
            s->proposed /= 2, s->accepted /= 2;
    }
    return LT_OK;
}

/*
 * The error of ln Z from simulated shrinkage (Skilling 2006, sec. 5.2):
 * the volumes' ratios t_i = X_i / X_i-1 are Beta(N, 1), ln t = ln(U) / N,
 * and the run's ln Z uses their mean -1/N. SHRINK realisations of the t_i
 * give SHRINK values of ln Z on the same likelihoods; their standard
 * deviation is the error. Its own stream, from the seed: the same run
 * gives the same error.
 */
#define SHRINK 48
static double shrinkage_error(const lt_nested *s, size_t ns, size_t n)
{
    lt_rng r;
    lt_rng_seed(&r, s->o.seed, 0x4e534b52ull);
    double sum = 0, sum2 = 0;
    for (int k = 0; k < SHRINK; k++) {
        double logx = 0, lz = -INFINITY;
        for (size_t i = 0; i < ns; i++) {
            double logt = log1p(-lt_rng_uniform(&r)) / (double)n; /* U in (0, 1] */
            if (isfinite(s->loglike[i]))
                lz = logaddexp(lz, s->loglike[i] + logx + log1p(-exp(logt)));
            logx += logt;
        }
        for (size_t i = 0; i < n; i++)
            if (isfinite(s->ll[i]))
                lz = logaddexp(lz, s->ll[i] + logx - log((double)n));
        sum += lz, sum2 += lz * lz;
    }
    double var = (sum2 - sum * sum / SHRINK) / (SHRINK - 1);
    return sqrt(fmax(var, 0.0));
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
    r->logz_err = shrinkage_error(s, s->ns, n);
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

static const char NMAGIC[16] = "lantern-nest-v2";

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
    /* the bound in use and the queue: the next iterations depend on them */
    PUT(s->b.k), PUT(s->b.built), PUTA(s->b.e, s->b.k);
    PUT(s->nq), PUTA(s->qu, s->nq * d), PUTA(s->qt, s->nq * d), PUTA(s->ql, s->nq);
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
        /* v1 held no bound or queue: it cannot continue this sampler's run */
        int old = memcmp(magic, "lantern-nest-v1", 16) == 0;
        lt_error_set(err, LT_EINPUT, path, 0,
                     old ? "a checkpoint of an older lantern's nested sampler, which this one "
                           "cannot continue: start the run afresh"
                         : "not a lantern nested-sampling checkpoint");
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
        GETA(s->theta, ns * d) || GETA(s->loglike, ns) || GETA(s->logw, ns) || GET(s->b.k) ||
        s->b.k > EMAX || GET(s->b.built) || GETA(s->b.e, s->b.k) || GET(s->nq) ||
        s->nq > BATCH || GETA(s->qu, s->nq * d) || GETA(s->qt, s->nq * d) ||
        GETA(s->ql, s->nq))
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
