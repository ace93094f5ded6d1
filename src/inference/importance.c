/*
 * Adaptive importance sampling with recycling: see include/lantern/inference.h.
 *
 * The proposal is a mixture of multivariate Student-t components (Wraith,
 * Kilbinger, Benabed, Cappe, Cardoso, Fort, Prunet & Robert 2009, PRD 80,
 * 023507, whose population Monte Carlo updates the mixture from weighted
 * draws, after Cappe, Douc, Guillin, Marin & Robert 2008, Stat. Comput. 18,
 * 447), plus a fixed defensive component, the first proposal widened
 * twofold, with a twentieth of the mass (Hesterberg 1995, Technometrics 37,
 * 185): wherever the posterior has more mass than the adapted mixture
 * covers, the weights stay below 20 p/q_0 instead of growing without bound.
 *
 * Every draw of every iteration is kept and weighted against the mixture of
 * all proposals so far, each in proportion to its draws: the deterministic
 * mixture weights of adaptive multiple importance sampling (Cornuet, Marin,
 * Mira & Robert 2012, Scand. J. Stat. 39, 798). Nothing evaluated during
 * the adaptation is thrown away, which is what makes the method cheap: the
 * first, poorer proposals' draws still count, with weights that say how
 * much. Each row keeps ln sum_s n_s q_s(x); a new proposal adds its term to
 * every row, an O(n K d^2) pass per iteration.
 *
 * The mixture is adapted by weighted EM steps on all draws (Gaussian
 * responsibilities; the t components take the means and covariances).
 * A component whose share of the weight amounts to fewer than d + 2
 * effective draws is dropped: its covariance would be noise.
 *
 * Determinism: draws come from one stream, in order, before any is
 * evaluated; evaluations and per-row work are shared out over threads, each
 * row written to its own slot; sums over rows are taken in fixed chunks and
 * the chunks added in order. The answer does not depend on the thread
 * count, and a run saved between iterations and resumed is the same run.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <omp.h>

#include "lantern/inference.h"
#include "lantern/rng.h"
#include "internal.h"

#define KMAX 10          /* adapted components at most (one more, the defensive) */
#define DOF 8            /* the t components' degrees of freedom (an integer: chi2 by normals) */
#define DEFENSIVE 0.05   /* the defensive component's share */
#define WIDEN 2.0        /* its width over the first proposal's */
#define EM_STEPS 3       /* EM steps per adaptation */
#define SEED_EM_STEPS 20 /* EM steps fitting the first proposal to seed draws */
#define CHUNK 2048       /* rows per partial sum */
#define ADAPT_ESS_FRACTION 0.1 /* adaptation weights keep at least this Kish ESS per draw */
#define DIM_MAX 64
/*
 * The work goes to the threads only when a batch is long enough to pay for
 * parallel regions: on two vCPUs that share a core, or a busy machine, a
 * thread spinning at a region's end takes cycles from the one with the
 * work. Measured on the 1048 supernovae (2 us likelihoods, batches of 500):
 * flat w0-wa took 77 ms or 168 ms with two threads, at random, and 85-120
 * ms with one. So the first batch runs on the calling thread and is
 * timed; at PAR_BATCH_SECONDS or more the rest (evaluations, the proposal
 * densities of every row, the EM steps) are shared out. The draws and
 * sums do not depend on where they are computed.
 */
#define PAR_BATCH_SECONDS 10e-3

/* A mixture proposal: k components, the last one the defensive one. */
typedef struct {
    size_t k, n;           /* components; draws taken from it */
    double alpha[KMAX + 1];
    double *mu;            /* (KMAX + 1) x d */
    double *cov;           /* (KMAX + 1) x d x d: each component's covariance */
    double *chol;          /* Cholesky factor of its t scale cov (DOF - 2) / DOF */
    double lognorm[KMAX + 1]; /* ln of the t density's constant, -ln det chol included */
} mixture;

struct lt_ais {
    lt_ais_opts o;
    lt_logdensity f;
    void **ctx;
    lt_rng rng;
    double *center, *cov0;
    mixture *q;
    size_t nq, capq;       /* proposals; q[nq - 1] draws next */
    double *rows;          /* n rows of (dim params, logp, nextra extras) */
    double *logq;          /* per row: ln sum_s n_s q_s(x) over the proposals drawn from */
    double *w;             /* per row: weight, mean 1 */
    size_t n, cap;
    size_t next;           /* draws the next iteration takes */
    int finished;          /* the ESS reached: no more iterations */
    int timed, parallel;   /* the first batch timed on one thread; the rest shared out */
    int converged;         /* and Pareto k at most max_k */
    lt_ais_diag diag;
};

size_t lt_ais_row_size(const lt_ais *s) { return s->o.dim + 1 + s->o.nextra; }
int lt_ais_converged(const lt_ais *s) { return s->converged; }
int lt_ais_finished(const lt_ais *s) { return s->finished; }
const lt_ais_diag *lt_ais_diagnostics(const lt_ais *s) { return &s->diag; }
const lt_ais_opts *lt_ais_options(const lt_ais *s) { return &s->o; }
const double *lt_ais_weights(const lt_ais *s) { return s->w; }
const double *lt_ais_draws(const lt_ais *s, size_t *n)
{
    *n = s->n;
    return s->rows;
}

static double logaddexp(double a, double b)
{
    if (a == -INFINITY)
        return b;
    if (b == -INFINITY)
        return a;
    return a > b ? a + log1p(exp(b - a)) : b + log1p(exp(a - b));
}

/* ---- mixtures ---- */

static int mix_alloc(mixture *m, size_t d)
{
    memset(m, 0, sizeof *m);
    m->mu = calloc((KMAX + 1) * d, sizeof *m->mu);
    m->cov = calloc((KMAX + 1) * d * d, sizeof *m->cov);
    m->chol = calloc((KMAX + 1) * d * d, sizeof *m->chol);
    return m->mu && m->cov && m->chol ? 0 : -1;
}

static void mix_free(mixture *m)
{
    free(m->mu);
    free(m->cov);
    free(m->chol);
}

/* Component c of m from its mean and covariance; -1 if cov is not positive
 * definite. */
static int mix_set(mixture *m, size_t c, size_t d, const double *mu, const double *cov)
{
    double scaled[DIM_MAX * DIM_MAX];
    for (size_t i = 0; i < d * d; i++)
        scaled[i] = cov[i] * (DOF - 2.0) / DOF;
    if (lt_small_cholesky(scaled, d, m->chol + c * d * d))
        return -1;
    memcpy(m->mu + c * d, mu, d * sizeof *mu);
    memcpy(m->cov + c * d * d, cov, d * d * sizeof *cov);
    double logdet = 0.0;
    for (size_t i = 0; i < d; i++)
        logdet += log(m->chol[c * d * d + i * d + i]);
    double nu = DOF, dd = (double)d;
    m->lognorm[c] = lgamma(0.5 * (nu + dd)) - lgamma(0.5 * nu) - 0.5 * dd * log(nu * M_PI) - logdet;
    return 0;
}

/* |L^-1 (x - mu)|^2 of component c. */
static double mahal2(const mixture *m, size_t c, size_t d, const double *x)
{
    const double *l = m->chol + c * d * d, *mu = m->mu + c * d;
    double y[DIM_MAX], s2 = 0.0;
    for (size_t i = 0; i < d; i++) {
        double s = x[i] - mu[i];
        for (size_t j = 0; j < i; j++)
            s -= l[i * d + j] * y[j];
        y[i] = s / l[i * d + i];
        s2 += y[i] * y[i];
    }
    return s2;
}

static double mix_logpdf(const mixture *m, size_t d, const double *x)
{
    double acc = -INFINITY, nu = DOF;
    for (size_t c = 0; c < m->k; c++)
        if (m->alpha[c] > 0.0)
            acc = logaddexp(acc, log(m->alpha[c]) + m->lognorm[c] -
                                     0.5 * (nu + (double)d) * log1p(mahal2(m, c, d, x) / nu));
    return acc;
}

/* One draw: a component by its share, then mu + L z sqrt(nu / chi2_nu). */
static void mix_draw(const mixture *m, size_t d, lt_rng *r, double *x)
{
    double u = lt_rng_uniform(r), cum = 0.0;
    size_t c = 0;
    for (; c + 1 < m->k; c++) {
        cum += m->alpha[c];
        if (u < cum)
            break;
    }
    double z[DIM_MAX], chi2 = 0.0;
    for (size_t i = 0; i < d; i++)
        z[i] = lt_rng_normal(r);
    for (int i = 0; i < DOF; i++) {
        double g = lt_rng_normal(r);
        chi2 += g * g;
    }
    double f = sqrt(DOF / chi2);
    const double *l = m->chol + c * d * d, *mu = m->mu + c * d;
    for (size_t i = 0; i < d; i++) {
        double s = 0.0;
        for (size_t j = 0; j <= i; j++)
            s += l[i * d + j] * z[j];
        x[i] = mu[i] + f * s;
    }
}

static mixture *push_mixture(lt_ais *s)
{
    if (s->nq == s->capq) {
        size_t cap = s->capq ? 2 * s->capq : 8;
        mixture *q = realloc(s->q, cap * sizeof *q);
        if (!q)
            return NULL;
        s->q = q, s->capq = cap;
    }
    mixture *m = &s->q[s->nq];
    if (mix_alloc(m, s->o.dim)) {
        mix_free(m);
        return NULL;
    }
    s->nq++;
    return m;
}

/* The first k components of from into to (to->k = k). */
static void mix_copy(mixture *to, const mixture *from, size_t k, size_t d)
{
    if (to == from)
        return;
    to->k = k;
    memcpy(to->alpha, from->alpha, k * sizeof *to->alpha);
    memcpy(to->mu, from->mu, k * d * sizeof *to->mu);
    memcpy(to->cov, from->cov, k * d * d * sizeof *to->cov);
    memcpy(to->chol, from->chol, k * d * d * sizeof *to->chol);
    memcpy(to->lognorm, from->lognorm, k * sizeof *to->lognorm);
}

/* The defensive component into slot k of m (m->k becomes k + 1): a t
 * with the given mean and covariance widened WIDEN times, and the others'
 * shares scaled to 1 - DEFENSIVE. */
static void add_defensive(mixture *m, size_t k, size_t d, const double *mu, const double *cov)
{
    double wide[DIM_MAX * DIM_MAX];
    for (size_t i = 0; i < d * d; i++)
        wide[i] = cov[i] * WIDEN * WIDEN;
    double sum = 0.0;
    for (size_t c = 0; c < k; c++)
        sum += m->alpha[c];
    for (size_t c = 0; c < k; c++)
        m->alpha[c] *= (1.0 - DEFENSIVE) / sum;
    m->alpha[k] = DEFENSIVE;
    m->k = k + 1;
    if (mix_set(m, k, d, mu, wide)) /* cannot happen for a positive definite cov */
        m->alpha[k] = 0.0;
}

/* ---- set-up ---- */

void lt_ais_free(lt_ais *s)
{
    if (!s)
        return;
    for (size_t i = 0; i < s->nq; i++)
        mix_free(&s->q[i]);
    free(s->q);
    free(s->center);
    free(s->cov0);
    free(s->rows);
    free(s->logq);
    free(s->w);
    free(s->diag.ess);
    free(s);
}

static lt_ais *alloc_state(const lt_ais_opts *o, lt_logdensity f, void **ctx, lt_error *err)
{
    size_t d = o->dim;
    if (d == 0 || d > DIM_MAX) {
        lt_error_set(err, LT_EINPUT, NULL, 0, "importance sampling takes 1 to %d parameters",
                     DIM_MAX);
        return NULL;
    }
    lt_ais *s = calloc(1, sizeof *s);
    if (!s || !(s->center = malloc(d * sizeof *s->center)) ||
        !(s->cov0 = malloc(d * d * sizeof *s->cov0)) ||
        !(s->diag.ess = calloc(d, sizeof *s->diag.ess))) {
        lt_ais_free(s);
        lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        return NULL;
    }
    s->o = *o, s->f = f, s->ctx = ctx;
    if (!s->o.batch)
        s->o.batch = 100 * d > 500 ? 100 * d : 500;
    if (!s->o.max_draws)
        s->o.max_draws = 1000000;
    if (!(s->o.max_k > 0.0))
        s->o.max_k = 0.7;
    s->o.center = s->o.cov = s->o.scale = NULL; /* copied below, not kept */
    s->diag.pareto_k = s->diag.ln_z = s->diag.ln_z_err = NAN;
    return s;
}

static int em(const lt_ais *s, mixture *next, const mixture *from, const double *x0,
              size_t stride, const double *w, size_t n, int steps, int threads);
static int moments(const double *x, size_t stride, const double *w, size_t n, size_t d,
                   const double *cov0, double floor, double *mu, double *cov);

/*
 * The first proposal m fitted to a rough posterior's draws: center and cov0
 * become their weighted moments; KMAX components start at KMAX of the
 * draws picked by systematic resampling (evenly spaced in cumulative
 * weight), each with cov0, and SEED_EM_STEPS EM steps on the draws move
 * them; the defensive component is cov0 widened. -1 (nothing changed) when
 * the draws' covariance is not positive definite: the caller then starts
 * from center and cov; -2 when out of memory.
 */
static int seed_start(lt_ais *s, const lt_ais_opts *o, mixture *m)
{
    size_t d = o->dim, n = o->nseed;
    double mu[DIM_MAX], cov[DIM_MAX * DIM_MAX];
    if (moments(o->seed_draws, d, o->seed_weights, n, d, NULL, 0.0, mu, cov))
        return -1;
    double sw = 0.0;
    for (size_t j = 0; j < n; j++)
        sw += o->seed_weights[j] > 0.0 ? o->seed_weights[j] : 0.0;
    mixture start;
    if (mix_alloc(&start, d)) {
        mix_free(&start);
        return -2;
    }
    size_t k = 0, j = 0;
    double cum = 0.0;
    for (size_t c = 0; c < KMAX && j < n; c++) {
        double at = ((double)c + 0.5) * sw / KMAX;
        while (j < n && cum + fmax(o->seed_weights[j], 0.0) < at)
            cum += fmax(o->seed_weights[j++], 0.0);
        if (j < n && !mix_set(&start, k, d, o->seed_draws + j * d, cov))
            start.alpha[k++] = 1.0 / KMAX;
    }
    start.k = k;
    int rc = -1;
    if (k > 0) {
        memcpy(s->center, mu, d * sizeof mu[0]);
        memcpy(s->cov0, cov, d * d * sizeof cov[0]);
        mix_copy(m, &start, k, d);
        /* a few thousand rows: one thread (see PAR_BATCH_SECONDS) */
        rc = em(s, m, &start, o->seed_draws, d, o->seed_weights, n, SEED_EM_STEPS, 1);
    }
    mix_free(&start);
    if (rc)
        return -2;
    add_defensive(m, m->k, d, s->center, s->cov0);
    return 0;
}

lt_ais *lt_ais_alloc(const lt_ais_opts *o, lt_logdensity f, void **ctx, lt_error *err)
{
    lt_ais *s = alloc_state(o, f, ctx, err);
    if (!s)
        return NULL;
    size_t d = o->dim;
    memcpy(s->center, o->center, d * sizeof *s->center);
    double l0[DIM_MAX * DIM_MAX];
    int ok = 0;
    if (o->cov) {
        memcpy(s->cov0, o->cov, d * d * sizeof *s->cov0);
        ok = lt_small_cholesky(s->cov0, d, l0) == 0;
    }
    if (!ok) { /* no usable covariance: the widths given */
        memset(s->cov0, 0, d * d * sizeof *s->cov0);
        for (size_t i = 0; i < d; i++)
            s->cov0[i * d + i] = o->scale[i] * o->scale[i];
        if (lt_small_cholesky(s->cov0, d, l0)) {
            lt_ais_free(s);
            lt_error_set(err, LT_EINPUT, NULL, 0,
                         "importance sampling needs positive widths to start from");
            return NULL;
        }
    }
    lt_rng_seed(&s->rng, o->seed, 0);
    mixture *m = push_mixture(s);
    if (!m) {
        lt_ais_free(s);
        lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        return NULL;
    }
    size_t k0 = KMAX;
    int seeded = o->nseed > 0 ? seed_start(s, o, m) : -1;
    if (seeded == -2) {
        lt_ais_free(s);
        lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        return NULL;
    }
    if (seeded == 0) {
        s->next = s->o.batch;
        return s;
    }
    /* the first proposal: KMAX components, one at the centre and the
     * others one standard deviation away along random directions, each with
     * the starting covariance; together about sqrt(2) wider than it */
    for (size_t c = 0; c < k0; c++) {
        double mu[DIM_MAX], z[DIM_MAX];
        for (size_t i = 0; i < d; i++)
            z[i] = c ? lt_rng_normal(&s->rng) : 0.0;
        for (size_t i = 0; i < d; i++) {
            mu[i] = s->center[i];
            for (size_t j = 0; j <= i; j++)
                mu[i] += l0[i * d + j] * z[j];
        }
        mix_set(m, c, d, mu, s->cov0);
        m->alpha[c] = 1.0 / (double)k0;
    }
    add_defensive(m, k0, d, s->center, s->cov0);
    s->next = s->o.batch;
    return s;
}

/* ---- weights and diagnostics ---- */

/* Weighted q-quantile of column x (stride) over rows with weight > 0. */
typedef struct {
    double x, w;
} xw;
static int cmp_xw(const void *a, const void *b)
{
    double u = ((const xw *)a)->x, v = ((const xw *)b)->x;
    return u < v ? -1 : u > v;
}

/*
 * The importance-sampling ESS of the weighted mean of f over independent
 * draws: var_w(f) / var(estimate), the variance of the self-normalised
 * estimate taken to first order (the delta method), which gives
 * sum w (f - mu)^2 sum w / sum w^2 (f - mu)^2: Kish's (sum w)^2 / sum w^2
 * with each draw's weight counted in proportion to its (f - mu)^2.
 */
double lt_diag_ess_is(const double *f, size_t stride, const double *w, size_t n)
{
    double sw = 0.0, swf = 0.0;
    for (size_t i = 0; i < n; i++)
        if (w[i] > 0.0 && isfinite(f[i * stride]))
            sw += w[i], swf += w[i] * f[i * stride];
    if (!(sw > 0.0))
        return 0.0;
    double mu = swf / sw, a = 0.0, b = 0.0;
    for (size_t i = 0; i < n; i++)
        if (w[i] > 0.0 && isfinite(f[i * stride])) {
            double e = (f[i * stride] - mu) * (f[i * stride] - mu);
            a += w[i] * e, b += w[i] * w[i] * e;
        }
    return b > 0.0 ? a * sw / b : 0.0;
}

/* Per parameter, the smallest IS ESS of its mean and of the indicators of
 * its 5% and 95% quantiles; their minimum; Kish's ESS. */
static int diagnose(lt_ais *s)
{
    size_t d = s->o.dim, rs = lt_ais_row_size(s), n = s->n;
    xw *pairs = malloc((n ? n : 1) * sizeof *pairs);
    double *ind = malloc((n ? n : 1) * sizeof *ind);
    if (!pairs || !ind) {
        free(pairs);
        free(ind);
        return -1;
    }
    double sw = 0.0, sw2 = 0.0;
    for (size_t j = 0; j < n; j++)
        sw += s->w[j], sw2 += s->w[j] * s->w[j];
    s->diag.kish = sw2 > 0.0 ? sw * sw / sw2 : 0.0;
    s->diag.ess_min = INFINITY;
    for (size_t i = 0; i < d; i++) {
        size_t m = 0;
        for (size_t j = 0; j < n; j++)
            if (s->w[j] > 0.0)
                pairs[m++] = (xw){s->rows[j * rs + i], s->w[j]};
        qsort(pairs, m, sizeof *pairs, cmp_xw);
        double e = lt_diag_ess_is(s->rows + i, rs, s->w, n);
        for (int t = 0; t < 2; t++) {
            double p = t ? 0.95 : 0.05, cum = 0.0, qx = m ? pairs[m - 1].x : NAN;
            for (size_t k = 0; k < m; k++)
                if ((cum += pairs[k].w) >= p * sw) {
                    qx = pairs[k].x;
                    break;
                }
            for (size_t j = 0; j < n; j++)
                ind[j] = s->rows[j * rs + i] <= qx ? 1.0 : 0.0;
            e = fmin(e, lt_diag_ess_is(ind, 1, s->w, n));
        }
        s->diag.ess[i] = e;
        s->diag.ess_min = fmin(s->diag.ess_min, e);
    }
    free(pairs);
    free(ind);
    /* Pareto k of the weights' upper tail, and the evidence: mean of the
     * raw weights p / q (s->w holds them over their mean; diag.ln_z keeps
     * the log of that mean) */
    double *lw = malloc((n ? n : 1) * sizeof *lw);
    if (!lw)
        return -1;
    for (size_t j = 0; j < n; j++)
        lw[j] = s->w[j] > 0.0 ? log(s->w[j]) : -INFINITY;
    s->diag.pareto_k = lt_diag_pareto_k(lw, n);
    free(lw);
    double mean = sw / (double)n, var = sw2 / (double)n - mean * mean;
    s->diag.ln_z_err = n > 1 && mean > 0.0 ? sqrt(fmax(var, 0.0) / (double)(n - 1)) / mean : NAN;
    s->diag.draws = n;
    return 0;
}

/* s->w from logp and logq: w = p / (sum_s n_s q_s / n), normalised to mean
 * 1; diag.ln_z = ln of the mean of p / q before normalising. */
static void weigh(lt_ais *s)
{
    size_t rs = lt_ais_row_size(s), d = s->o.dim, n = s->n;
    double ln_n = log((double)n), top = -INFINITY;
    for (size_t j = 0; j < n; j++) {
        double lp = s->rows[j * rs + d];
        s->w[j] = isfinite(lp) ? lp - (s->logq[j] - ln_n) : -INFINITY;
        top = fmax(top, s->w[j]);
    }
    double sum = 0.0;
    for (size_t j = 0; j < n; j++)
        sum += s->w[j] = isfinite(top) ? exp(s->w[j] - top) : 0.0;
    for (size_t j = 0; j < n; j++)
        s->w[j] *= sum > 0.0 ? (double)n / sum : 0.0;
    s->diag.ln_z = isfinite(top) && sum > 0.0 ? top + log(sum / (double)n) : -INFINITY;
}

/* ---- adaptation ---- */

/* Kish's ESS of w^beta (w >= 0) into out. */
static double kish_pow(const double *w, size_t n, double beta, double *out)
{
    double top = 0.0, a = 0.0, b = 0.0;
    for (size_t j = 0; j < n; j++)
        top = fmax(top, w[j]);
    for (size_t j = 0; j < n; j++) {
        out[j] = w[j] > 0.0 ? pow(w[j] / top, beta) : 0.0;
        a += out[j], b += out[j] * out[j];
    }
    return b > 0.0 ? a * a / b : 0.0;
}

/* The weights to adapt to, w^beta into out, with beta the largest in
 * (0, 1] (by bisection, to 1e-3) whose Kish ESS is at least want. */
static double temper(const double *w, size_t n, double want, double *out)
{
    if (kish_pow(w, n, 1.0, out) >= want)
        return 1.0;
    double lo = 0.0, hi = 1.0;
    while (hi - lo > 1e-3) {
        double mid = 0.5 * (lo + hi);
        if (kish_pow(w, n, mid, out) >= want)
            lo = mid;
        else
            hi = mid;
    }
    kish_pow(w, n, lo, out);
    return lo;
}

/*
 * steps weighted EM steps that move next's k adapted components (next->k
 * on entry) towards the n rows x (stride apart) weighted by w (>= 0, any
 * scale). Gaussian responsibilities under next's components (their
 * covariances, not the t scales); per-row terms in parallel, sums in fixed
 * chunks added in order. A component with fewer than d + 2 effective draws
 * is dropped; if none is left, next takes back from's first k (its
 * components on entry). -1 when out of memory.
 */
static int em(const lt_ais *s, mixture *next, const mixture *from, const double *x0,
              size_t stride, const double *w, size_t n, int steps, int threads)
{
    size_t d = s->o.dim, k = next->k, k0 = next->k;
    size_t width = 2 + d + d * d; /* per component: sum w r, sum (w r)^2, sum w r x, sum w r x x^T */
    size_t nchunk = (n + CHUNK - 1) / CHUNK;
    double *part = calloc((nchunk ? nchunk : 1) * KMAX * width, sizeof *part);
    if (!part)
        return -1;
    double sw = 0.0;
    for (size_t j = 0; j < n; j++)
        sw += w[j] > 0.0 ? w[j] : 0.0;
    for (int step = 0; step < steps && k > 0 && sw > 0.0; step++) {
        double lnorm[KMAX];
        double lg[KMAX * DIM_MAX * DIM_MAX];
        for (size_t c = 0; c < k; c++) {
            if (lt_small_cholesky(next->cov + c * d * d, d, lg + c * d * d)) {
                free(part); /* cannot happen: kept positive definite below */
                return -1;
            }
            double ld = 0.0;
            for (size_t i = 0; i < d; i++)
                ld += log(lg[c * d * d + i * d + i]);
            lnorm[c] = log(next->alpha[c]) - ld;
        }
        memset(part, 0, nchunk * KMAX * width * sizeof *part);
#pragma omp parallel for schedule(dynamic, 1) num_threads(threads)
        for (size_t ch = 0; ch < nchunk; ch++) {
            double *acc = part + ch * KMAX * width;
            for (size_t j = ch * CHUNK; j < n && j < (ch + 1) * CHUNK; j++) {
                double wj = w[j] / sw;
                if (!(wj > 0.0))
                    continue;
                const double *x = x0 + j * stride;
                double lr[KMAX], top = -INFINITY;
                for (size_t c = 0; c < k; c++) {
                    const double *l = lg + c * d * d, *mu = next->mu + c * d;
                    double y[DIM_MAX], m2 = 0.0;
                    for (size_t i = 0; i < d; i++) {
                        double v = x[i] - mu[i];
                        for (size_t t = 0; t < i; t++)
                            v -= l[i * d + t] * y[t];
                        y[i] = v / l[i * d + i];
                        m2 += y[i] * y[i];
                    }
                    lr[c] = lnorm[c] - 0.5 * m2;
                    top = fmax(top, lr[c]);
                }
                double z = 0.0;
                for (size_t c = 0; c < k; c++)
                    z += lr[c] = exp(lr[c] - top);
                for (size_t c = 0; c < k; c++) {
                    double a = wj * lr[c] / z, *o = acc + c * width;
                    if (a == 0.0)
                        continue;
                    o[0] += a, o[1] += a * a;
                    for (size_t i = 0; i < d; i++) {
                        o[2 + i] += a * x[i];
                        for (size_t t = 0; t <= i; t++)
                            o[2 + d + i * d + t] += a * x[i] * x[t];
                    }
                }
            }
        }
        double tot[KMAX * (2 + DIM_MAX + DIM_MAX * DIM_MAX)];
        memset(tot, 0, k * width * sizeof *tot);
        for (size_t ch = 0; ch < nchunk; ch++)
            for (size_t c = 0; c < k * width; c++)
                tot[c] += part[ch * KMAX * width + c];
        size_t kept = 0;
        for (size_t c = 0; c < k; c++) {
            const double *o = tot + c * width;
            double mu[DIM_MAX], cov[DIM_MAX * DIM_MAX];
            /* fewer than d + 2 effective draws: the covariance would be noise */
            if (!(o[0] > 0.0) || o[0] * o[0] / o[1] < (double)(d + 2))
                continue;
            for (size_t i = 0; i < d; i++)
                mu[i] = o[2 + i] / o[0];
            for (size_t i = 0; i < d; i++)
                for (size_t t = 0; t <= i; t++)
                    cov[i * d + t] = cov[t * d + i] =
                        o[2 + d + i * d + t] / o[0] - mu[i] * mu[t];
            /* a floor of 1e-10 of the starting variances keeps it
             * positive definite where draws collapse onto a line */
            for (size_t i = 0; i < d; i++)
                cov[i * d + i] += 1e-10 * s->cov0[i * d + i];
            if (mix_set(next, kept, d, mu, cov))
                continue;
            next->alpha[kept++] = o[0];
        }
        if (kept == 0) { /* nothing usable: the k0 components we started from (from's
                          * defensive one, past them, is not adapted) */
            mix_copy(next, from, k0, d);
            break;
        }
        k = next->k = kept;
        double sa = 0.0;
        for (size_t c = 0; c < k; c++)
            sa += next->alpha[c];
        for (size_t c = 0; c < k; c++)
            next->alpha[c] /= sa;
    }
    free(part);
    return 0;
}

/* The weighted mean and covariance of the n rows x (stride apart) with
 * weights w (>= 0, any scale) into mu and cov, plus floor times diag(cov0)
 * on the diagonal when cov0 is given; -1 if cov is then not positive
 * definite (or no weight is positive). */
static int moments(const double *x, size_t stride, const double *w, size_t n, size_t d,
                   const double *cov0, double floor, double *mu, double *cov)
{
    double sw = 0.0;
    memset(mu, 0, d * sizeof *mu);
    memset(cov, 0, d * d * sizeof *cov);
    for (size_t j = 0; j < n; j++)
        if (w[j] > 0.0) {
            sw += w[j];
            for (size_t i = 0; i < d; i++)
                mu[i] += w[j] * x[j * stride + i];
        }
    if (!(sw > 0.0))
        return -1;
    for (size_t i = 0; i < d; i++)
        mu[i] /= sw;
    for (size_t j = 0; j < n; j++) {
        if (!(w[j] > 0.0))
            continue;
        const double *r = x + j * stride;
        for (size_t i = 0; i < d; i++)
            for (size_t t = 0; t <= i; t++)
                cov[i * d + t] += w[j] / sw * (r[i] - mu[i]) * (r[t] - mu[t]);
    }
    for (size_t i = 0; i < d; i++) {
        for (size_t t = 0; t < i; t++)
            cov[t * d + i] = cov[i * d + t];
        if (cov0)
            cov[i * d + i] += floor * cov0[i * d + i];
    }
    double l[DIM_MAX * DIM_MAX];
    return lt_small_cholesky(cov, d, l) ? -1 : 0;
}

/*
 * The next mixture from the current one by EM_STEPS weighted EM steps on
 * every draw, and a defensive component spanning the draws.
 */
static int adapt(lt_ais *s, int threads)
{
    size_t d = s->o.dim, rs = lt_ais_row_size(s), n = s->n;
    const mixture *cur = &s->q[s->nq - 1];
    size_t k = cur->k - 1; /* the adapted components; the defensive one is not adapted */
    mixture *next = push_mixture(s);
    if (!next)
        return -1;
    cur = &s->q[s->nq - 2]; /* push may move the array */
    mix_copy(next, cur, k, d);
    /* the weights EM sees: w^beta, beta the largest in (0, 1] that leaves
     * them a Kish ESS of at least ADAPT_ESS_FRACTION of the draws (or all
     * of 1 when they have it). Early on, when a few draws carry nearly all
     * the weight, full weights would give every component fewer than d + 2
     * effective draws and collapse the mixture; tempered ones move it part
     * of the way, as the intermediate targets of an annealing schedule do,
     * and the next proposal's draws sharpen it further. */
    double *aw = malloc((n ? n : 1) * sizeof *aw);
    if (!aw)
        return -1;
    temper(s->w, n, ADAPT_ESS_FRACTION * (double)n, aw);
    int rc = em(s, next, cur, s->rows, rs, aw, n, EM_STEPS, threads);
    free(aw);
    if (rc)
        return -1;
    /* the defensive component follows the draws' own mean and covariance
     * (full weights, not the tempered ones), so that it spans the whole
     * posterior as found so far, arms included */
    double gm[DIM_MAX], gc[DIM_MAX * DIM_MAX];
    if (moments(s->rows, rs, s->w, n, d, s->cov0, 1e-10, gm, gc))
        add_defensive(next, next->k, d, s->center, s->cov0);
    else
        add_defensive(next, next->k, d, gm, gc);
    return 0;
}

/* ---- the run ---- */

static int grow(lt_ais *s, size_t n)
{
    if (n <= s->cap)
        return 0;
    size_t cap = s->cap ? s->cap : 1024;
    while (cap < n)
        cap *= 2;
    size_t rs = lt_ais_row_size(s);
    double *rows = realloc(s->rows, cap * rs * sizeof *rows);
    if (!rows)
        return -1;
    s->rows = rows;
    double *logq = realloc(s->logq, cap * sizeof *logq);
    if (!logq)
        return -1;
    s->logq = logq;
    double *w = realloc(s->w, cap * sizeof *w);
    if (!w)
        return -1;
    s->w = w;
    s->cap = cap;
    return 0;
}

/* One iteration: draw s->next from the newest proposal, evaluate, update
 * every row's ln sum n_s q_s. */
static int draw_batch(lt_ais *s, int threads, lt_error *err)
{
    size_t d = s->o.dim, rs = lt_ais_row_size(s), n0 = s->n, nb = s->next;
    if (nb > s->o.max_draws - n0)
        nb = s->o.max_draws - n0;
    if (grow(s, n0 + nb))
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory for the draws");
    mixture *m = &s->q[s->nq - 1];
    for (size_t j = n0; j < n0 + nb; j++)
        mix_draw(m, d, &s->rng, s->rows + j * rs);
    m->n = nb;
    double ln_nb = log((double)nb), t0 = omp_get_wtime();
    int team = s->parallel ? threads : 1;
#pragma omp parallel num_threads(team)
    {
        void *ctx = s->ctx[omp_get_thread_num()];
#pragma omp for schedule(dynamic, 64)
        for (size_t j = n0; j < n0 + nb; j++) {
            double *row = s->rows + j * rs;
            row[d] = s->f(row, ctx, row + d + 1);
            double lq = -INFINITY;
            for (size_t t = 0; t < s->nq; t++)
                lq = logaddexp(lq, log((double)s->q[t].n) + mix_logpdf(&s->q[t], d, row));
            s->logq[j] = lq;
        }
#pragma omp for schedule(dynamic, 256)
        for (size_t j = 0; j < n0; j++)
            s->logq[j] = logaddexp(s->logq[j], ln_nb + mix_logpdf(m, d, s->rows + j * rs));
    }
    if (!s->timed && threads > 1) { /* the first batch, on one thread */
        s->timed = 1;
        s->parallel = omp_get_wtime() - t0 >= PAR_BATCH_SECONDS;
    }
    s->n = n0 + nb;
    return LT_OK;
}

int lt_ais_run(lt_ais *s, volatile sig_atomic_t *stop, lt_ais_progress progress, void *pctx,
               lt_error *err)
{
    int threads = s->o.threads > 0 ? s->o.threads : omp_get_max_threads();
    while (!s->finished && s->n < s->o.max_draws) {
        if (stop && *stop)
            return lt_error_set(err, LT_EINTR, NULL, 0, "interrupted");
        int rc = draw_batch(s, threads, err);
        if (rc)
            return rc;
        weigh(s);
        if (diagnose(s))
            return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        s->diag.iterations = s->nq;
        /* done once an adapted proposal has drawn and the ESS is reached;
         * converged if the weights' tail is tame too. A truly heavy tail
         * is not tamed by more draws (k measures the weights'
         * distribution, which only a better proposal changes), but a k
         * above max_k when the ESS is first reached is estimated again
         * on about twice the draws (the run goes on to twice the target
         * ESS) before it is believed: on a thousand or two draws the
         * estimate is noisy, and weights that are bounded but clumped
         * (a few local maxima of p/q, each piling its draws up just
         * below its height) can fit a heavy generalized Pareto tail;
         * seen on flat LCDM at 1500 draws, k = 1.05 with a largest weight
         * 1.17 times the mean, and k = -1.5 at 3500 draws. */
        double goal = s->o.target_ess;
        if (s->diag.ess_min >= goal && !(s->diag.pareto_k <= s->o.max_k))
            goal *= 2.0;
        if (s->nq >= 2 && s->diag.ess_min >= goal) {
            s->finished = 1;
            s->converged = s->diag.pareto_k <= s->o.max_k;
        }
        /* the hook (where the pipeline saves its checkpoint) runs only
         * where the state is whole: finished, or with the next proposal
         * made. Called before adapt, a checkpoint held a proposal that had
         * drawn already, and a run resumed from it drew from it again with
         * wrong weights (test_checkpoint_from_hook). */
        if (s->finished || s->n >= s->o.max_draws) {
            if (progress)
                progress(s, pctx);
            break;
        }
        /* the next batch: while adapting, the first batch's size; then what
         * the ESS per draw of the newest proposal says the target needs,
         * with a tenth more, but never more than doubling the draws */
        const mixture *m = &s->q[s->nq - 1];
        size_t nb = m->n, n0 = s->n - nb, rs = lt_ais_row_size(s), d = s->o.dim;
        double a = 0.0, b = 0.0, top = -INFINITY;
        for (size_t j = n0; j < s->n; j++)
            top = fmax(top, s->rows[j * rs + d] - mix_logpdf(m, d, s->rows + j * rs));
        for (size_t j = n0; isfinite(top) && j < s->n; j++) {
            double v = exp(s->rows[j * rs + d] - mix_logpdf(m, d, s->rows + j * rs) - top);
            if (isfinite(v))
                a += v, b += v * v;
        }
        double eff = b > 0.0 ? a * a / b / (double)nb : 0.0; /* Kish's, per draw */
        double ratio = s->diag.kish > 0.0 ? fmin(1.0, s->diag.ess_min / s->diag.kish) : 0.0;
        /* while the proposal is poor, batches grow by half the draws so far,
         * so that the iterations (each costing a pass over every draw) stay
         * few however long the run */
        size_t want = s->n / 2 > s->o.batch ? s->n / 2 : s->o.batch;
        if (s->nq >= 2 && eff > 0.2 && ratio > 0.0) {
            double need = 1.1 * (goal - s->diag.ess_min) / (eff * ratio);
            want = need > (double)s->n ? s->n : need > (double)s->o.batch ? (size_t)need : s->o.batch;
        }
        s->next = want;
        if (adapt(s, s->parallel ? threads : 1))
            return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory adapting the proposal");
        if (progress)
            progress(s, pctx);
    }
    return LT_OK;
}

/* ---- checkpoints ---- */

static const char MAGIC[16] = "lantern-ais-1";
#define PUT(x) lt_ckpt_put(&s, &(x), sizeof(x))
#define PUTA(p, n) lt_ckpt_put(&s, (p), (n) * sizeof *(p))
#define GET(x) lt_ckpt_get(&s, &(x), sizeof(x))
#define GETA(p, n) lt_ckpt_get(&s, (p), (n) * sizeof *(p))

int lt_ais_save(const lt_ais *a, const char *path, uint64_t fingerprint, lt_error *err)
{
    lt_ckpt s;
    if (lt_ckpt_create(&s, path, err))
        return err->code;
    size_t d = a->o.dim, rs = lt_ais_row_size(a);
    lt_ckpt_put(&s, MAGIC, sizeof MAGIC);
    PUT(fingerprint);
    PUT(a->o.dim), PUT(a->o.nextra), PUT(a->o.seed), PUT(a->o.batch), PUT(a->o.max_draws);
    PUT(a->o.target_ess), PUT(a->o.max_k);
    PUT(a->rng), PUTA(a->center, d), PUTA(a->cov0, d * d);
    PUT(a->n), PUT(a->next), PUT(a->finished), PUT(a->converged), PUT(a->nq);
    for (size_t t = 0; t < a->nq; t++) {
        const mixture *m = &a->q[t];
        PUT(m->k), PUT(m->n), PUTA(m->alpha, m->k), PUTA(m->mu, m->k * d);
        PUTA(m->cov, m->k * d * d);
    }
    PUTA(a->rows, a->n * rs), PUTA(a->logq, a->n);
    return lt_ckpt_commit(&s, err);
}

lt_ais *lt_ais_load(const char *path, uint64_t fingerprint, const lt_ais_opts *o,
                    lt_logdensity f, void **ctx, lt_error *err)
{
    lt_ckpt s;
    if (lt_ckpt_open(&s, path, err))
        return NULL;
    char magic[16];
    uint64_t fp;
    lt_ais_opts so;
    memset(&so, 0, sizeof so);
    lt_ais *a = NULL;
    if (lt_ckpt_get(&s, magic, sizeof magic) || memcmp(magic, MAGIC, sizeof MAGIC) != 0) {
        lt_error_set(err, LT_EINPUT, path, 0, "not a lantern checkpoint (or another version)");
        goto fail;
    }
    if (GET(fp) || GET(so.dim) || GET(so.nextra) || GET(so.seed) || GET(so.batch) ||
        GET(so.max_draws) || GET(so.target_ess) || GET(so.max_k))
        goto damaged;
    if (fp != fingerprint || so.dim != o->dim || so.nextra != o->nextra) {
        lt_error_set(err, LT_EINPUT, path, 0,
                     "the checkpoint belongs to another run: its data, model, priors, seed or "
                     "sampler settings differ from these");
        goto fail;
    }
    so.threads = o->threads;
    if (!(a = alloc_state(&so, f, ctx, err)))
        goto fail;
    size_t d = so.dim, n, nq;
    if (GET(a->rng) || GETA(a->center, d) || GETA(a->cov0, d * d) || GET(n) || GET(a->next) ||
        GET(a->finished) || GET(a->converged) || GET(nq) || nq == 0 || nq > 100000)
        goto damaged;
    for (size_t t = 0; t < nq; t++) {
        mixture *m = push_mixture(a);
        if (!m)
            goto nomem;
        if (GET(m->k) || GET(m->n) || m->k == 0 || m->k > KMAX + 1 || GETA(m->alpha, m->k) ||
            GETA(m->mu, m->k * d) || GETA(m->cov, m->k * d * d))
            goto damaged;
        for (size_t c = 0; c < m->k; c++)
            if (mix_set(m, c, d, m->mu + c * d, m->cov + c * d * d))
                goto damaged;
    }
    if (n > so.max_draws || grow(a, n))
        goto nomem;
    a->n = n;
    if (GETA(a->rows, n * lt_ais_row_size(a)) || GETA(a->logq, n) || lt_ckpt_close_read(&s))
        goto damaged_closed;
    if (n) {
        weigh(a);
        if (diagnose(a))
            goto nomem_closed;
        /* the proposals that have drawn (a newest one, made but not yet
         * drawn from, does not count) */
        a->diag.iterations = 0;
        for (size_t t = 0; t < a->nq; t++)
            a->diag.iterations += a->q[t].n > 0;
    }
    return a;
damaged:
    lt_ckpt_close_read(&s);
damaged_closed:
    lt_error_set(err, LT_EINPUT, path, 0, "the checkpoint is damaged");
    lt_ais_free(a);
    return NULL;
nomem:
    lt_ckpt_close_read(&s);
nomem_closed:
    lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    lt_ais_free(a);
    return NULL;
fail:
    lt_ckpt_close_read(&s);
    lt_ais_free(a);
    return NULL;
}
