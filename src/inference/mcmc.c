/*
 * Adaptive Metropolis (Haario, Saksman & Tamminen 2001, Bernoulli 7, 223)
 * with delayed rejection (Tierney & Mira 1999, Stat. Med. 18, 2507; the
 * pairing is DRAM, Haario, Laine, Mira & Saksman 2006, Stat. Comput. 16,
 * 339), with parallel chains.
 *
 * Each chain starts from an over-dispersed point around the centre (three
 * standard deviations of the starting covariance, along its own axes),
 * proposes y = x + L z with z ~ N(0, I), and during
 * warm-up sets L L^T = s_d (C + eps I), C the covariance of its own warm-up
 * history (from a quarter of the warm-up on), s_d = 2.38^2 / d (Gelman,
 * Roberts & Gilks 1996). After warm-up the proposal is frozen, so the kept
 * draws come from a plain Metropolis chain.
 *
 * Delayed rejection: when a proposal is refused, a second one, DR_SHRINK
 * times smaller, is tried from the same point, with the two-stage
 * acceptance probability that keeps detailed balance. One global Gaussian
 * proposal is too wide where the posterior narrows (the tail of the
 * Omega_m-wa banana of the w0-wa models, where the wa width falls four-fold);
 * the second stage takes the small steps there, at the cost of one more
 * evaluation per refusal. Chains share nothing while they
 * run: each has its own stream from (seed, chain index), which is why the
 * draws are the same whatever the number of threads.
 */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <omp.h>

#include "lantern/rng.h"
#include "internal.h"
#include "lantern/inference.h"

#define DIM_MAX 64 /* parameters at most: proposals use fixed-size scratch */

/* Second-stage proposal scale, relative to the first. Our choice: a fifth
 * of the width tries steps well inside the narrowest part of the posteriors
 * we sample (wa narrows about four-fold in the w0-wa banana's tail). */
#define DR_SHRINK 0.2

typedef struct chain {
    lt_rng rng;
    double *x, *extra, logp;
    size_t steps;          /* steps taken, warm-up included */
    size_t acc_warm, acc;  /* accepted proposals in warm-up, after it */
    size_t acc_first;      /* of acc, those accepted at the first stage */
    size_t nw;             /* warm-up points in the running covariance */
    double *wmean, *wm2;   /* their mean (dim) and sum of outer products (dim^2) */
    double *chol;          /* proposal Cholesky factor, lower, row-major */
    double *draws;         /* kept rows: params, logp, extras */
    size_t ndraws, cap;
    double *y, *yextra, *z;   /* scratch: first-stage proposal */
    double *y2, *yextra2, *z2; /* second stage */
} chain;

struct lt_mcmc {
    lt_mcmc_opts o;
    double *center, *cov, *scale;
    lt_logdensity f;
    void **ctx;
    chain *ch;
    size_t next_check; /* kept steps per chain at the next check */
    int converged;
    lt_mcmc_diag diag;
};

size_t lt_mcmc_row_size(const lt_mcmc *m) { return m->o.dim + 1 + m->o.nextra; }
int lt_mcmc_converged(const lt_mcmc *m) { return m->converged; }
const lt_mcmc_diag *lt_mcmc_diagnostics(const lt_mcmc *m) { return &m->diag; }
const lt_mcmc_opts *lt_mcmc_options(const lt_mcmc *m) { return &m->o; }

const double *lt_mcmc_draws(const lt_mcmc *m, size_t c, size_t *n)
{
    *n = m->ch[c].ndraws;
    return m->ch[c].draws;
}

int lt_small_cholesky(const double *a, size_t d, double *l)
{
    memset(l, 0, d * d * sizeof *l);
    for (size_t i = 0; i < d; i++)
        for (size_t j = 0; j <= i; j++) {
            double s = a[i * d + j];
            for (size_t k = 0; k < j; k++)
                s -= l[i * d + k] * l[j * d + k];
            if (i == j) {
                if (!(s > 0.0))
                    return -1;
                l[i * d + i] = sqrt(s);
            } else {
                l[i * d + j] = s / l[j * d + j];
            }
        }
    return 0;
}

static void chain_free(chain *c)
{
    free(c->x);
    free(c->extra);
    free(c->wmean);
    free(c->wm2);
    free(c->chol);
    free(c->draws);
    free(c->y);
    free(c->yextra);
    free(c->z);
    free(c->y2);
    free(c->yextra2);
    free(c->z2);
}

static int chain_buffers(chain *c, size_t d, size_t ne)
{
    c->x = calloc(d + 1, sizeof *c->x);
    c->extra = calloc(ne + 1, sizeof *c->extra);
    c->wmean = calloc(d + 1, sizeof *c->wmean);
    c->wm2 = calloc(d * d + 1, sizeof *c->wm2);
    c->chol = calloc(d * d + 1, sizeof *c->chol);
    c->y = calloc(d + 1, sizeof *c->y);
    c->yextra = calloc(ne + 1, sizeof *c->yextra);
    c->z = calloc(d + 1, sizeof *c->z);
    c->y2 = calloc(d + 1, sizeof *c->y2);
    c->yextra2 = calloc(ne + 1, sizeof *c->yextra2);
    c->z2 = calloc(d + 1, sizeof *c->z2);
    return c->x && c->extra && c->wmean && c->wm2 && c->chol && c->y && c->yextra && c->z &&
                   c->y2 && c->yextra2 && c->z2
               ? 0
               : -1;
}

void lt_mcmc_free(lt_mcmc *m)
{
    if (!m)
        return;
    for (size_t c = 0; m->ch && c < m->o.nchains; c++)
        chain_free(&m->ch[c]);
    free(m->ch);
    free(m->center);
    free(m->cov);
    free(m->scale);
    free(m->diag.rhat);
    free(m->diag.ess_bulk);
    free(m->diag.ess_tail);
    free(m->diag.tau);
    free(m->diag.acceptance);
    free(m->diag.acceptance_first);
    free(m);
}

/* The struct and its arrays, before any chain is started. */
static lt_mcmc *mcmc_shell(const lt_mcmc_opts *o, lt_logdensity f, void **ctx, lt_error *err)
{
    size_t d = o->dim;
    if (d == 0 || d > DIM_MAX || o->nchains < 1 || o->check_every < 10 ||
        o->max_steps < o->check_every) {
        lt_error_set(err, LT_EINPUT, NULL, 0,
                     "sampler settings: need 1 to %d parameters, at least one chain, "
                     "check_every >= 10 and max_steps >= check_every",
                     DIM_MAX);
        return NULL;
    }
    lt_mcmc *m = calloc(1, sizeof *m);
    if (!m)
        goto nomem;
    m->o = *o;
    m->f = f;
    m->ctx = ctx;
    m->center = malloc(d * sizeof *m->center);
    m->scale = malloc(d * sizeof *m->scale);
    m->cov = malloc(d * d * sizeof *m->cov);
    m->ch = calloc(o->nchains, sizeof *m->ch);
    m->diag.rhat = calloc(d, sizeof(double));
    m->diag.ess_bulk = calloc(d, sizeof(double));
    m->diag.ess_tail = calloc(d, sizeof(double));
    m->diag.tau = calloc(d, sizeof(double));
    m->diag.acceptance = calloc(o->nchains, sizeof(double));
    m->diag.acceptance_first = calloc(o->nchains, sizeof(double));
    if (!m->center || !m->scale || !m->cov || !m->ch || !m->diag.rhat || !m->diag.ess_bulk ||
        !m->diag.ess_tail || !m->diag.tau || !m->diag.acceptance || !m->diag.acceptance_first)
        goto nomem;
    m->o.center = m->center, m->o.cov = m->cov, m->o.scale = m->scale;
    for (size_t c = 0; c < o->nchains; c++)
        if (chain_buffers(&m->ch[c], d, o->nextra))
            goto nomem;
    m->diag.rhat_max = m->diag.ess_min = NAN;
    return m;
nomem:
    lt_mcmc_free(m);
    lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory for the chains");
    return NULL;
}

lt_mcmc *lt_mcmc_alloc(const lt_mcmc_opts *o, lt_logdensity f, void **ctx, lt_error *err)
{
    lt_mcmc *m = mcmc_shell(o, f, ctx, err);
    if (!m)
        return NULL;
    size_t d = o->dim;
    memcpy(m->center, o->center, d * sizeof *m->center);
    for (size_t i = 0; i < d; i++)
        m->scale[i] = o->scale ? o->scale[i] : 1.0;
    if (o->cov) {
        memcpy(m->cov, o->cov, d * d * sizeof *m->cov);
    } else {
        memset(m->cov, 0, d * d * sizeof *m->cov);
        for (size_t i = 0; i < d; i++)
            m->cov[i * d + i] = 0.01 * m->scale[i] * m->scale[i];
    }
    m->o.cov = m->cov;
    double *prop = malloc(d * d * sizeof *prop);
    if (!prop) {
        lt_mcmc_free(m);
        lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        return NULL;
    }
    double sd_scale = 2.38 * 2.38 / (double)d;
    for (size_t i = 0; i < d * d; i++)
        prop[i] = sd_scale * m->cov[i];
    int bad_cov = lt_small_cholesky(prop, d, m->ch[0].chol) != 0;
    free(prop);
    if (bad_cov) {
        lt_mcmc_free(m);
        lt_error_set(err, LT_EINPUT, NULL, 0,
                     "the starting covariance is not positive definite");
        return NULL;
    }
    double ec[1];
    if (!isfinite(f(m->center, ctx[0], o->nextra ? m->ch[0].extra : ec))) {
        lt_mcmc_free(m);
        lt_error_set(err, LT_EINPUT, NULL, 0,
                     "the chains' centre (the best fit) has zero posterior density");
        return NULL;
    }
    /* Starts: centre + 3 L0 z, z ~ N(0, I) from each chain's own stream,
     * L0 L0^T the starting covariance: three standard deviations along the
     * covariance's own axes. Drawing each parameter alone (as lantern did
     * before the CMB term) put starts of a narrow correlated posterior far
     * off its ridge, where one chain of SN+BAO+CMB on w0-wa stayed stuck at
     * 0.2% acceptance. A start with zero density is redrawn, closer in after
     * each hundred failures. */
    for (size_t c = 0; c < o->nchains; c++) {
        chain *ch = &m->ch[c];
        lt_rng_seed(&ch->rng, o->seed, (uint64_t)c);
        if (c)
            memcpy(ch->chol, m->ch[0].chol, d * d * sizeof *ch->chol);
        double spread = 3.0 * sqrt((double)d) / 2.38; /* chol is 2.38/sqrt(d) L0 */
        for (int tries = 0;; tries++) {
            if (tries && tries % 100 == 0)
                spread *= 0.5;
            double zz[DIM_MAX];
            for (size_t i = 0; i < d; i++)
                zz[i] = lt_rng_normal(&ch->rng);
            for (size_t i = 0; i < d; i++) {
                double s = 0.0;
                for (size_t j = 0; j <= i; j++)
                    s += m->ch[0].chol[i * d + j] * zz[j];
                ch->x[i] = m->center[i] + spread * s;
            }
            ch->logp = f(ch->x, ctx[c], ch->extra);
            if (isfinite(ch->logp))
                break;
            if (tries > 2000) { /* give up dispersing: start at the centre */
                memcpy(ch->x, m->center, d * sizeof *ch->x);
                ch->logp = f(ch->x, ctx[c], ch->extra);
                break;
            }
        }
    }
    m->next_check = o->check_every;
    return m;
}

/* Recompute the proposal from the warm-up history. */
static void adapt(chain *c, size_t d)
{
    if (c->nw < 2 * d + 10)
        return;
    double cov[DIM_MAX * DIM_MAX], l[DIM_MAX * DIM_MAX];
    double sd = 2.38 * 2.38 / (double)d;
    for (size_t i = 0; i < d * d; i++)
        cov[i] = sd * c->wm2[i] / (double)(c->nw - 1);
    for (size_t i = 0; i < d; i++) /* eps I, relative to each variance */
        cov[i * d + i] *= 1.0 + 1e-10;
    if (lt_small_cholesky(cov, d, l) == 0)
        memcpy(c->chol, l, d * d * sizeof *l);
}

/* y = x + scale L z, z ~ N(0, I) drawn from the chain's stream. */
static void propose(chain *c, size_t d, double scale, double *z, double *y)
{
    for (size_t i = 0; i < d; i++)
        z[i] = lt_rng_normal(&c->rng);
    for (size_t i = 0; i < d; i++) {
        double s = 0.0;
        for (size_t j = 0; j <= i; j++)
            s += c->chol[i * d + j] * z[j];
        y[i] = c->x[i] + scale * s;
    }
}

/* log(1 - e^a) for a < 0. */
static double log1mexp(double a) { return a > -0.693 ? log(-expm1(a)) : log1p(-exp(a)); }

/*
 * The second-stage acceptance, in logs (Tierney & Mira 1999, eq. 5, for
 * symmetric Gaussian stages): from x (lp0) the first proposal y1 = x + L z1
 * (lp1) was refused; y2 = x + s L z2 (lp2) is accepted with probability
 *   min(1, pi(y2) q1(y2 -> y1) [1 - a1(y2, y1)] / (pi(x) q1(x -> y1) [1 - a1(x, y1)])),
 * a1(u, v) = min(1, pi(v) / pi(u)), q1(u -> v) = N(L^-1 (v - u)); the
 * second-stage densities are equal both ways and cancel. L^-1 (y1 - y2) =
 * z1 - s z2, so no triangular solve is needed.
 */
static double dr_log_alpha(double lp0, double lp1, double lp2, const double *z1,
                           const double *z2, size_t d)
{
    if (!isfinite(lp2))
        return -INFINITY;
    double q = 0.0;
    for (size_t i = 0; i < d; i++) {
        double u = z1[i] - DR_SHRINK * z2[i];
        q += 0.5 * (z1[i] * z1[i] - u * u);
    }
    if (!isfinite(lp1)) /* y1 outside the prior: both refusal factors are 1 */
        return lp2 - lp0 + q;
    if (lp1 >= lp2) /* from y2, y1 would always be accepted */
        return -INFINITY;
    return lp2 - lp0 + q + log1mexp(lp1 - lp2) - log1mexp(lp1 - lp0);
}

static void accept(chain *c, size_t d, size_t ne, const double *y, const double *ye, double lp,
                   int warm)
{
    memcpy(c->x, y, d * sizeof *c->x);
    if (ne)
        memcpy(c->extra, ye, ne * sizeof *c->extra);
    c->logp = lp;
    if (warm)
        c->acc_warm++;
    else
        c->acc++;
}

/* One delayed-rejection Metropolis step of chain c. */
static void step(lt_mcmc *m, size_t ci)
{
    chain *c = &m->ch[ci];
    size_t d = m->o.dim, ne = m->o.nextra;
    int warm = c->steps < m->o.warmup;
    propose(c, d, 1.0, c->z, c->y);
    double lp = m->f(c->y, m->ctx[ci], c->yextra);
    double u = lt_rng_uniform(&c->rng);
    if (isfinite(lp) && log(u) < lp - c->logp) {
        accept(c, d, ne, c->y, c->yextra, lp, warm);
        c->acc_first += !warm;
    } else {
        propose(c, d, DR_SHRINK, c->z2, c->y2);
        double lp2 = m->f(c->y2, m->ctx[ci], c->yextra2);
        double u2 = lt_rng_uniform(&c->rng);
        if (log(u2) < dr_log_alpha(c->logp, lp, lp2, c->z, c->z2, d))
            accept(c, d, ne, c->y2, c->yextra2, lp2, warm);
    }
    c->steps++;
    if (warm) {
        if (c->steps > m->o.warmup / 4) { /* Welford's running covariance */
            c->nw++;
            double *delta = c->z; /* z is free again */
            for (size_t i = 0; i < d; i++) {
                delta[i] = c->x[i] - c->wmean[i];
                c->wmean[i] += delta[i] / (double)c->nw;
            }
            for (size_t i = 0; i < d; i++)
                for (size_t j = 0; j < d; j++)
                    c->wm2[i * d + j] += delta[i] * (c->x[j] - c->wmean[j]);
        }
        if (c->steps % 50 == 0 || c->steps == m->o.warmup)
            adapt(c, d);
        return;
    }
    /* keep the draw */
    size_t row = d + 1 + ne;
    double *r = c->draws + c->ndraws * row;
    memcpy(r, c->x, d * sizeof *r);
    r[d] = c->logp;
    if (ne)
        memcpy(r + d + 1, c->extra, ne * sizeof *r);
    c->ndraws++;
}

static int reserve(chain *c, size_t rows, size_t row)
{
    if (rows <= c->cap)
        return 0;
    double *nd = realloc(c->draws, rows * row * sizeof *nd);
    if (!nd)
        return -1;
    c->draws = nd;
    c->cap = rows;
    return 0;
}

/* Diagnostics over the kept draws of every chain. Parameters are
 * independent, so they are spread over the threads; each result lands in
 * its own slot, so the outcome does not depend on the thread count. */
static int check(lt_mcmc *m)
{
    size_t d = m->o.dim, nc = m->o.nchains, row = lt_mcmc_row_size(m);
    size_t n = m->ch[0].ndraws;
    for (size_t c = 1; c < nc; c++)
        if (m->ch[c].ndraws < n)
            n = m->ch[c].ndraws;
    int threads = m->o.threads > 0 ? m->o.threads : omp_get_max_threads();
    int nomem = 0;
#pragma omp parallel for schedule(dynamic, 1) num_threads(threads) reduction(| : nomem)
    for (size_t p = 0; p < d; p++) {
        double *x = malloc((n ? nc * n : 1) * sizeof *x);
        if (!x) {
            nomem = 1;
            continue;
        }
        for (size_t c = 0; c < nc; c++)
            for (size_t i = 0; i < n; i++)
                x[c * n + i] = m->ch[c].draws[i * row + p];
        double r, eb, et, tau = 0.0;
        lt_diag_all(x, nc, n, &r, &eb, &et);
        for (size_t c = 0; c < nc; c++)
            tau += lt_diag_tau(x + c * n, n) / (double)nc;
        m->diag.rhat[p] = r, m->diag.ess_bulk[p] = eb, m->diag.ess_tail[p] = et;
        m->diag.tau[p] = tau;
        free(x);
    }
    if (nomem)
        return -1;
    m->diag.draws_per_chain = n;
    m->diag.rhat_max = 0.0;
    m->diag.ess_min = INFINITY;
    int ok = 1;
    for (size_t p = 0; p < d; p++) {
        double r = m->diag.rhat[p], eb = m->diag.ess_bulk[p], et = m->diag.ess_tail[p];
        if (!isfinite(r) || !isfinite(eb) || !isfinite(et)) {
            ok = 0;
            m->diag.rhat_max = NAN;
            continue;
        }
        if (!isnan(m->diag.rhat_max))
            m->diag.rhat_max = fmax(m->diag.rhat_max, r);
        m->diag.ess_min = fmin(m->diag.ess_min, fmin(eb, et));
        if (!(r - 1.0 < m->o.rhat_tol) || eb < m->o.target_ess || et < m->o.target_ess)
            ok = 0;
    }
    for (size_t c = 0; c < nc; c++) {
        size_t kept = m->ch[c].steps > m->o.warmup ? m->ch[c].steps - m->o.warmup : 0;
        m->diag.acceptance[c] = kept ? (double)m->ch[c].acc / (double)kept : NAN;
        m->diag.acceptance_first[c] = kept ? (double)m->ch[c].acc_first / (double)kept : NAN;
    }
    m->converged = ok;
    return 0;
}

/*
 * Where to check next. A check costs sorts and FFTs of all draws, as much
 * as taking a few steps per draw with a fast likelihood, so checks must be
 * few: every check_every steps at first, every 10% of the run once that is
 * longer, and, when the smallest ESS grows linearly towards the target,
 * straight to where it should be reached (5% beyond, at most twice the
 * draws so far), skipping checks that could only fail.
 */
static size_t next_check(const lt_mcmc *m)
{
    size_t n = m->next_check, every = m->o.check_every;
    size_t step = every;
    if (n / 10 > step)
        step = n / 10 / every * every;
    double e = m->diag.ess_min;
    if (isfinite(e) && e > 0.0 && n >= 10 * every && e < m->o.target_ess) {
        double want = 1.05 * (double)n * m->o.target_ess / e - (double)n;
        if (want > (double)n)
            want = (double)n;
        if (want > (double)step)
            step = (size_t)want / every * every;
    }
    return n + step;
}

int lt_mcmc_run(lt_mcmc *m, volatile sig_atomic_t *stop, lt_mcmc_progress progress,
                void *progress_ctx, lt_error *err)
{
    size_t nc = m->o.nchains, row = lt_mcmc_row_size(m);
    int threads = m->o.threads > 0 ? m->o.threads : omp_get_max_threads();
    if (m->converged)
        return LT_OK;
    for (;;) {
        size_t target = m->o.warmup + m->next_check;
        /* Refuse before the machine runs out: with overcommit, malloc
         * rarely fails, and a process past physical memory is killed
         * without a word. */
        double need = (double)nc * (double)m->next_check * (double)row * sizeof(double);
        double have = m->o.memory_limit > 0
                          ? m->o.memory_limit
                          : 0.8 * (double)sysconf(_SC_PHYS_PAGES) * (double)sysconf(_SC_PAGESIZE);
        if (have > 0 && need > have)
            return lt_error_set(err, LT_ENOMEM, NULL, 0,
                                "the draws would need %.2f GB (%zu chains x %zu steps), more than "
                                "the %.2f GB allowed (80%% of this machine's memory): lower "
                                "--max-steps or --chains",
                                need / 1e9, nc, m->next_check, have / 1e9);
        for (size_t c = 0; c < nc; c++)
            if (reserve(&m->ch[c], m->next_check, row))
                return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory for the draws");
        int interrupted = 0;
#pragma omp parallel for schedule(dynamic, 1) num_threads(threads) reduction(| : interrupted)
        for (size_t c = 0; c < nc; c++) {
            while (m->ch[c].steps < target) {
                if (stop && *stop) {
                    interrupted = 1;
                    break;
                }
                step(m, c);
            }
        }
        if (interrupted)
            return lt_error_set(err, LT_EINTR, NULL, 0, "interrupted");
        if (check(m))
            return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory for the diagnostics");
        if (progress)
            progress(m, progress_ctx);
        if (m->converged || m->next_check >= m->o.max_steps)
            return LT_OK;
        m->next_check = next_check(m);
        if (m->next_check > m->o.max_steps)
            m->next_check = m->o.max_steps;
    }
}

/* ---- checkpoints ---- */

static const char MAGIC[16] = "lantern-mcmc-v2"; /* v2: delayed rejection */

#define PUT(x) lt_ckpt_put(&s, &(x), sizeof(x))
#define PUTA(p, n) lt_ckpt_put(&s, (p), (n) * sizeof *(p))

int lt_mcmc_save(const lt_mcmc *m, const char *path, uint64_t fingerprint, lt_error *err)
{
    lt_ckpt s;
    if (lt_ckpt_create(&s, path, err))
        return err->code;
    size_t d = m->o.dim, ne = m->o.nextra;
    lt_ckpt_put(&s, MAGIC, sizeof MAGIC);
    PUT(fingerprint);
    PUT(m->o.dim), PUT(m->o.nextra), PUT(m->o.nchains), PUT(m->o.seed), PUT(m->o.warmup);
    PUT(m->o.check_every), PUT(m->o.max_steps), PUT(m->o.target_ess), PUT(m->o.rhat_tol);
    PUTA(m->center, d), PUTA(m->cov, d * d), PUTA(m->scale, d);
    PUT(m->next_check), PUT(m->converged);
    for (size_t c = 0; c < m->o.nchains; c++) {
        const chain *ch = &m->ch[c];
        PUT(ch->rng), PUTA(ch->x, d), PUTA(ch->extra, ne), PUT(ch->logp), PUT(ch->steps);
        PUT(ch->acc_warm), PUT(ch->acc), PUT(ch->acc_first), PUT(ch->nw), PUTA(ch->wmean, d);
        PUTA(ch->wm2, d * d), PUTA(ch->chol, d * d), PUT(ch->ndraws);
        PUTA(ch->draws, ch->ndraws * (d + 1 + ne));
    }
    return lt_ckpt_commit(&s, err);
}

#define GET(x) lt_ckpt_get(&s, &(x), sizeof(x))
#define GETA(p, n) lt_ckpt_get(&s, (p), (n) * sizeof *(p))

lt_mcmc *lt_mcmc_load(const char *path, uint64_t fingerprint, lt_logdensity f, void **ctx,
                      lt_error *err)
{
    lt_ckpt s;
    if (lt_ckpt_open(&s, path, err))
        return NULL;
    char magic[16];
    uint64_t fp_saved;
    lt_mcmc_opts o;
    memset(&o, 0, sizeof o);
    lt_mcmc *m = NULL;
    if (lt_ckpt_get(&s, magic, sizeof magic) || memcmp(magic, MAGIC, sizeof MAGIC) != 0) {
        lt_error_set(err, LT_EINPUT, path, 0, "not a lantern checkpoint (or another version)");
        goto fail;
    }
    if (GET(fp_saved) || GET(o.dim) || GET(o.nextra) || GET(o.nchains) || GET(o.seed) ||
        GET(o.warmup) || GET(o.check_every) || GET(o.max_steps) || GET(o.target_ess) ||
        GET(o.rhat_tol))
        goto damaged;
    if (fp_saved != fingerprint) {
        lt_error_set(err, LT_EINPUT, path, 0,
                     "the checkpoint belongs to another run: its data, model, priors, seed or "
                     "sampler settings differ from these");
        goto fail;
    }
    if (o.dim == 0 || o.dim > DIM_MAX || o.nchains == 0 || o.nchains > 4096 || o.nextra > 64)
        goto damaged;
    m = mcmc_shell(&o, f, ctx, err);
    if (!m)
        goto fail;
    size_t d = o.dim, ne = o.nextra;
    if (GETA(m->center, d) || GETA(m->cov, d * d) || GETA(m->scale, d) || GET(m->next_check) ||
        GET(m->converged))
        goto damaged;
    for (size_t c = 0; c < o.nchains; c++) {
        chain *ch = &m->ch[c];
        size_t nd;
        if (GET(ch->rng) || GETA(ch->x, d) || GETA(ch->extra, ne) || GET(ch->logp) ||
            GET(ch->steps) || GET(ch->acc_warm) || GET(ch->acc) || GET(ch->acc_first) || GET(ch->nw) ||
            GETA(ch->wmean, d) || GETA(ch->wm2, d * d) || GETA(ch->chol, d * d) || GET(nd))
            goto damaged;
        if (nd > o.max_steps || reserve(ch, nd > m->next_check ? nd : m->next_check, d + 1 + ne))
            goto damaged;
        ch->ndraws = nd;
        if (GETA(ch->draws, nd * (d + 1 + ne)))
            goto damaged;
    }
    if (lt_ckpt_close_read(&s)) {
        lt_error_set(err, LT_EINPUT, path, 0, "the checkpoint is damaged or truncated");
        lt_mcmc_free(m);
        return NULL;
    }
    if (m->converged) /* the diagnostics for the report */
        check(m);
    return m;
damaged:
    lt_error_set(err, LT_EINPUT, path, 0, "the checkpoint is damaged or truncated");
fail:
    fclose(s.f);
    lt_mcmc_free(m);
    return NULL;
}
