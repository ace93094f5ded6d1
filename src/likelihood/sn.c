/*
 * The supernova term: a survey's distance moduli, magnitudes or distances
 * against the model, by the exact path (every object against the factored
 * covariance) or the compressed one (see compress.c), with the offset
 * marginalised, sampled or absent. Also the compression's set-up, its
 * check on posterior draws and its refinement: see
 * include/lantern/likelihood.h.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "internal.h"
#include "lantern/rng.h"

typedef struct lt_sn {
    const lt_survey *s;
    lt_offset_mode offset;
    int offset_at;    /* table index of a sampled offset, or -1 */
    lt_zgrid *grid;
    double *cinv1;    /* C^-1 1 (marginal offset) */
    double c_sum;     /* 1^T C^-1 1 */
    double ln_c_term; /* ln(C / 2 pi) */
    lt_compress *cmp; /* the compressed path, or NULL */
    double max_dchi2; /* the set-up's check of the compression */
} lt_sn;

typedef struct lt_sn_work {
    double *dm, *r, *cov_work;
    double *gk, *dmk, *dg, *fdg; /* compressed path: K each */
} lt_sn_work;

static void sn_free(void *state)
{
    lt_sn *sn = state;
    if (!sn)
        return;
    lt_zgrid_free(sn->grid);
    free(sn->cinv1);
    lt_compress_free(sn->cmp);
    free(sn);
}

/* h0 unless the offset is marginalised (then degenerate with it); a
 * sampled offset is the term's own parameter. */
static void sn_needs(const void *config, lt_term_needs *needs)
{
    const lt_sn_config *cf = config;
    if (cf->offset != LT_OFFSET_MARGINAL)
        needs->h0 = 1;
    if (cf->offset == LT_OFFSET_SAMPLED && needs->nown < LT_TERM_OWN_MAX)
        needs->own[needs->nown++] =
            (lt_term_param){"offset", lt_param_default_prior("offset", cf->kind), 0, 0.0};
}

static void *sn_setup(const void *config, const lt_like *l, lt_error *err)
{
    const lt_sn_config *cf = config;
    const lt_survey *s = cf->s;
    lt_sn *sn = calloc(1, sizeof *sn);
    if (!sn) {
        lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        return NULL;
    }
    sn->s = s;
    sn->offset = cf->offset;
    sn->offset_at = l->offset_at;
    if (!(sn->grid = lt_zgrid_alloc(s->n, s->z, err)))
        goto fail;
    if (sn->offset == LT_OFFSET_MARGINAL) {
        size_t n = s->n;
        double *ones = malloc(n * sizeof *ones);
        double *work = malloc(lt_cov_work_size(s->cov) * sizeof *work);
        sn->cinv1 = malloc(n * sizeof *sn->cinv1);
        if (!ones || !work || !sn->cinv1) {
            free(ones);
            free(work);
            lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
            goto fail;
        }
        for (size_t i = 0; i < n; i++)
            ones[i] = 1.0;
        lt_cov_solve(s->cov, ones, sn->cinv1, work);
        sn->c_sum = 0.0;
        for (size_t i = 0; i < n; i++)
            sn->c_sum += sn->cinv1[i];
        sn->ln_c_term = log(sn->c_sum / (2.0 * M_PI));
        free(ones);
        free(work);
    }
    return sn;
fail:
    sn_free(sn);
    return NULL;
}

static void sn_work_free(void *work)
{
    lt_sn_work *w = work;
    if (!w)
        return;
    free(w->dm);
    free(w->r);
    free(w->cov_work);
    free(w->gk);
    free(w->dmk);
    free(w->dg);
    free(w->fdg);
    free(w);
}

/* A work space for compressions of up to K knots. */
static lt_sn_work *work_alloc(const lt_sn *sn, size_t K)
{
    lt_sn_work *w = calloc(1, sizeof *w);
    if (!w)
        return NULL;
    size_t n = sn->s->n;
    w->dm = malloc(n * sizeof *w->dm);
    w->r = malloc(n * sizeof *w->r);
    w->cov_work = malloc(lt_cov_work_size(sn->s->cov) * sizeof *w->cov_work);
    w->gk = malloc(K * sizeof *w->gk);
    w->dmk = malloc(K * sizeof *w->dmk);
    w->dg = malloc(K * sizeof *w->dg);
    w->fdg = malloc(K * sizeof *w->fdg);
    if (!w->dm || !w->r || !w->cov_work || !w->gk || !w->dmk || !w->dg || !w->fdg) {
        sn_work_free(w);
        return NULL;
    }
    return w;
}

static void *sn_work_alloc(const void *state)
{
    const lt_sn *sn = state;
    return work_alloc(sn, sn->cmp ? sn->cmp->K : 1);
}

/* Residuals observed - prediction (without any offset) into w->r; -1 if the
 * parameters are outside the physical domain. */
int lt_like_distmod(const lt_cosmo *c, const lt_zgrid *g, const double *zhel, double *mu)
{
    lt_cosmo_table t = {.transverse = mu};
    if (lt_cosmo_eval(c, g, &t, NULL) != LT_OK)
        return -1;
    for (size_t i = 0; i < lt_zgrid_size(g); i++) {
        double dl = (1.0 + zhel[i]) * mu[i];
        if (!(dl > 0.0))
            return -1; /* a negative distance: beyond the antipode's reach */
        mu[i] = 5.0 * log10(dl) + 25.0;
    }
    return 0;
}

static int residuals(const lt_sn *sn, lt_sn_work *w, const lt_cosmo *c)
{
    const lt_survey *s = sn->s;
    if (s->kind == LT_OBS_DL) {
        lt_cosmo_table t = {.transverse = w->dm};
        if (lt_cosmo_eval(c, sn->grid, &t, NULL) != LT_OK)
            return -1;
        for (size_t i = 0; i < s->n; i++)
            w->r[i] = s->obs[i] - (1.0 + s->zhel[i]) * w->dm[i];
        return 0;
    }
    if (lt_like_distmod(c, sn->grid, s->zhel, w->dm))
        return -1;
    /* a calibrator's distance modulus is its own (mag - M = calib_mu) */
    const double *cal = s->lc && s->lc->ncalibrators ? s->lc->calib_mu : NULL;
    for (size_t i = 0; i < s->n; i++)
        w->r[i] = s->obs[i] - (cal && !isnan(cal[i]) ? cal[i] : w->dm[i]);
    return 0;
}

/* The offset's treatment, common to both paths: A = r^T C^-1 r and
 * Bo = 1^T C^-1 r for the residual without any offset. */
static void finish_point(const lt_sn *sn, double a, double bo, double offset, double c11,
                         lt_term_out *out)
{
    if (sn->offset == LT_OFFSET_MARGINAL) {
        out->chi2 = a - bo * bo / c11;
        out->chi2_eff = out->chi2 + sn->ln_c_term;
        out->offset = bo / c11;
    } else if (sn->offset == LT_OFFSET_SAMPLED) {
        out->chi2 = out->chi2_eff = a - 2.0 * offset * bo + offset * offset * c11;
        out->offset = offset;
    } else {
        out->chi2 = out->chi2_eff = a;
        out->offset = 0.0;
    }
}

static int eval_exact(const lt_sn *sn, lt_sn_work *w, const lt_cosmo *c, double offset,
                      lt_term_out *out)
{
    if (residuals(sn, w, c) != 0)
        return -1;
    const lt_survey *s = sn->s;
    if (sn->offset == LT_OFFSET_SAMPLED)
        for (size_t i = 0; i < s->n; i++)
            w->r[i] -= offset;
    double a = lt_cov_chi2(s->cov, w->r, w->cov_work);
    if (sn->offset == LT_OFFSET_MARGINAL) {
        double b = 0.0;
        for (size_t i = 0; i < s->n; i++)
            b += sn->cinv1[i] * w->r[i];
        finish_point(sn, a, b, offset, sn->c_sum, out);
    } else {
        out->chi2 = out->chi2_eff = a;
        out->offset = offset;
    }
    return 0;
}

/* The compressed path of cm. */
static int eval_compressed(const lt_sn *sn, const lt_compress *cm, lt_sn_work *w,
                           const lt_cosmo *c, double offset, lt_term_out *out)
{
    /* E^2 > 0 over the whole data range: the last knot is the largest z */
    if (lt_compress_g(c, cm->kgrid, cm->zk, cm->K, w->dmk, w->gk))
        return -1;
    for (size_t k = 0; k < cm->K; k++)
        w->dg[k] = w->gk[k] - cm->gfid[k];
    double a, bo;
    lt_compress_quad(cm, w->dg, w->fdg, &a, &bo);
    finish_point(sn, a, bo, offset, cm->c11, out);
    return 0;
}

static int sn_eval(const void *state, void *work, const lt_term_in *in, lt_term_out *out)
{
    const lt_sn *sn = state;
    double offset = sn->offset_at >= 0 ? in->values[sn->offset_at] : 0.0;
    if (sn->cmp && !in->exact)
        return eval_compressed(sn, sn->cmp, work, in->cosmo, offset, out);
    return eval_exact(sn, work, in->cosmo, offset, out);
}

static size_t sn_ndata(const void *state) { return ((const lt_sn *)state)->s->n; }

static double sn_lognorm(const void *state)
{
    const lt_survey *s = ((const lt_sn *)state)->s;
    return -0.5 * ((double)s->n * log(2.0 * M_PI) + lt_cov_logdet(s->cov));
}

const lt_term_type lt_term_sn = {.name = "supernovae",
                                 .add_params = sn_needs,
                                 .setup = sn_setup,
                                 .work_alloc = sn_work_alloc,
                                 .work_free = sn_work_free,
                                 .eval = sn_eval,
                                 .ndata = sn_ndata,
                                 .lognorm = sn_lognorm,
                                 .free = sn_free};

/* ---- the compressed path: set-up, check and refinement ---- */

/*
 * The supernova chi2 at theta by compression cm, or by the exact path
 * (cm NULL), in work w (sized for cm); 0 outside the domain. The set-up
 * and the check compare this term alone: the other terms are the same by
 * either path, and evaluating the whole likelihood from here would make
 * the terms call the sum that calls them.
 */
static int chi2_by(const lt_like *l, const lt_compress *cm, lt_sn_work *w, const double *theta,
                   double *chi2)
{
    double values[LT_MAX_PARAMS];
    lt_cosmo_params p;
    lt_like_values(l, theta, values, &p);
    double offset = l->offset_at >= 0 ? values[l->offset_at] : 0.0;
    lt_cosmo c;
    lt_term_out o;
    if (lt_cosmo_init(&c, l->model, &p, NULL) != LT_OK ||
        (cm ? eval_compressed(l->sn, cm, w, &c, offset, &o) : eval_exact(l->sn, w, &c, offset, &o)))
        return 0;
    *chi2 = o.chi2;
    return 1;
}

/* A test point for the compression: inside the prior and the domain. */
static int test_point(const lt_like *l, lt_rng *r, double *x)
{
    for (int tries = 0; tries < 1000; tries++) {
        for (size_t i = 0; i < l->dim; i++) {
            const lt_prior *p = lt_like_prior(l, i);
            x[i] = p->kind == LT_PRIOR_UNIFORM ? p->a + (p->b - p->a) * lt_rng_uniform(r)
                                               : p->a + p->b * lt_rng_normal(r);
        }
        lt_cosmo c;
        if (lt_like_cosmo(l, x, &c, NULL) == LT_OK && lt_cosmo_e2(&c, 0) > 0)
            return 0;
    }
    return -1;
}

/* The cosmology the compression expands around: flat LCDM, omega_m 0.3. */
static int fiducial(const lt_like *l, lt_cosmo *fid, lt_error *err)
{
    lt_cosmo_params fp = l->base;
    fp.omega_m = 0.3;
    return lt_cosmo_init(fid, lt_cosmo_model_find("lcdm-flat"), &fp, err);
}

/*
 * Set up the compressed path and choose K: start from knots 0.04 apart in
 * ln(1+z) (at least 12), compare with the exact path at 24 random points of
 * the prior and 24 more pulled 95% of the way to the best of them, and
 * double K until every point within Delta chi2 < 50 of the best agrees to
 * 2e-4 (1e-3 is the aim), until K reaches 200, or until a doubling gains
 * less than a factor 4 (then interpolation is no longer the limit).
 */
int lt_sn_compress(lt_like *l, lt_error *err)
{
    lt_sn *sn = l->sn;
    const lt_survey *s = sn->s;
    double xmin = INFINITY, xmax = -INFINITY;
    for (size_t i = 0; i < s->n; i++)
        xmin = fmin(xmin, log1p(s->z[i])), xmax = fmax(xmax, log1p(s->z[i]));
    size_t K = (size_t)ceil((xmax - xmin) / 0.04) + 1;
    if (K < 12)
        K = 12;
    if (2 * K > s->n)
        return LT_OK; /* a survey this small is cheaper to evaluate exactly */
    if (s->lc && s->lc->ncalibrators)
        return LT_OK; /* calibrators are not on the Hubble diagram the knots describe */
    lt_cosmo fid;
    if (fiducial(l, &fid, err))
        return err ? err->code : LT_EINPUT;
    enum { NT = 48 };
    double pts[NT][LT_MAX_FREE], exact[NT];
    lt_rng r;
    lt_rng_seed(&r, 20261202, 0);
    lt_sn_work *w = work_alloc(sn, 1);
    if (!w)
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    size_t best = 0;
    int have = 0;
    for (int k = 0; k < NT / 2; k++) {
        if (test_point(l, &r, pts[k]) != 0 || !chi2_by(l, NULL, w, pts[k], &exact[k]))
            exact[k] = INFINITY;
        if (exact[k] < exact[best] || !have)
            best = (size_t)k, have = isfinite(exact[k]);
    }
    for (int k = NT / 2; k < NT; k++) {
        for (size_t i = 0; i < l->dim; i++)
            pts[k][i] = pts[best][i] + 0.05 * (pts[k - NT / 2][i] - pts[best][i]);
        if (!chi2_by(l, NULL, w, pts[k], &exact[k]))
            exact[k] = INFINITY;
    }
    sn_work_free(w);
    double chi2_best = INFINITY;
    for (int k = 0; k < NT; k++)
        chi2_best = fmin(chi2_best, exact[k]);
    for (;;) {
        lt_compress_free(sn->cmp);
        if (!(sn->cmp = lt_compress_alloc(s, &fid, K, err)))
            return err ? err->code : LT_ENOMEM;
        lt_sn_work *wc = work_alloc(sn, K);
        if (!wc)
            return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        double worst = 0.0;
        for (int k = 0; k < NT; k++) {
            double chi2;
            if (!(exact[k] < chi2_best + 50.0))
                continue;
            worst = fmax(worst, chi2_by(l, sn->cmp, wc, pts[k], &chi2) ? fabs(chi2 - exact[k])
                                                                       : INFINITY);
        }
        sn_work_free(wc);
        /* Stop when accurate enough, when K is large, or when doubling K no
         * longer helps fourfold: then the interpolation no longer sets the
         * difference (seen at 10^6 objects; rounding in long sums is the
         * suspect, not yet proven). */
        int stalled = worst > 0.25 * sn->max_dchi2 && K > 12;
        double prev = sn->max_dchi2;
        sn->max_dchi2 = worst;
        if (worst < 2e-4 || K >= 200 || (stalled && prev > 0))
            break;
        K *= 2;
    }
    if (2 * K > s->n) { /* no gain over the exact path */
        lt_compress_free(sn->cmp);
        sn->cmp = NULL;
    }
    return LT_OK;
}

int lt_like_compression(const lt_like *l, size_t *K, double *max_dchi2)
{
    const lt_compress *cmp = l->sn ? l->sn->cmp : NULL;
    *K = cmp ? cmp->K : 0;
    *max_dchi2 = cmp ? l->sn->max_dchi2 : 0.0;
    return cmp != NULL;
}

int lt_like_compression_set(lt_like *l, size_t K, lt_error *err)
{
    lt_sn *sn = l->sn;
    lt_cosmo fid;
    if (!sn)
        return LT_OK;
    if (K == 0 || sn->s->kind == LT_OBS_DL) {
        lt_compress_free(sn->cmp);
        sn->cmp = NULL;
        return LT_OK;
    }
    if (fiducial(l, &fid, err))
        return err ? err->code : LT_EINPUT;
    lt_compress *c = lt_compress_alloc(sn->s, &fid, K, err);
    if (!c)
        return err ? err->code : LT_ENOMEM;
    lt_compress_free(sn->cmp);
    sn->cmp = c;
    return LT_OK;
}

/* The largest |chi2 - exact[k]| over n points by the current compression;
 * the points are few, so one thread. */
static double worst_dchi2(const lt_like *l, const double *pts, size_t n, const double *exact,
                          lt_sn_work *w)
{
    double worst = 0.0;
    for (size_t k = 0; k < n; k++) {
        if (!isfinite(exact[k]))
            continue; /* outside the domain by the exact path: no chi2 to compare */
        double chi2;
        worst = fmax(worst, chi2_by(l, l->sn->cmp, w, pts + k * l->dim, &chi2)
                                ? fabs(chi2 - exact[k])
                                : INFINITY);
    }
    return worst;
}

static int cmp_rank(const void *a, const void *b)
{
    const double *x = a, *y = b; /* {estimate, index}: largest first, then by index */
    return x[0] != y[0] ? (x[0] < y[0]) - (x[0] > y[0]) : (x[1] > y[1]) - (x[1] < y[1]);
}

/*
 * Which m of n draws to check: half evenly spaced over all chains, half
 * where the compression is likely worst. The estimate of a draw's error is
 * its difference from a compression with twice the knots, whose own error
 * is some 2^6 times smaller (quintic interpolation); it costs K, not N, a
 * draw, so every draw gets one. A thin even spread alone misses the worst
 * draws: on the 82 objects above z = 0.8 (w0wa) 400 even draws of 24000 saw
 * 5e-5 where the worst was 1.6e-3.
 */
static int pick_draws(const lt_like *l, const double *draws, size_t n, size_t stride, size_t m,
                      size_t *pick, lt_error *err)
{
    const lt_sn *sn = l->sn;
    lt_cosmo fid;
    if (fiducial(l, &fid, err))
        return -1;
    size_t K2 = 2 * sn->cmp->K;
    lt_compress *c2 = lt_compress_alloc(sn->s, &fid, K2, err);
    double *rank = malloc(2 * n * sizeof *rank);
    unsigned char *taken = calloc(n, 1);
    int failed = !c2 || !rank || !taken;
#pragma omp parallel reduction(| : failed)
    {
        lt_sn_work *w = failed ? NULL : work_alloc(sn, K2);
        failed |= !w;
#pragma omp for schedule(dynamic, 256)
        for (size_t j = 0; j < n; j++) {
            if (!w)
                continue;
            double a = 0.0, b = 0.0;
            int oka = chi2_by(l, sn->cmp, w, draws + j * stride, &a);
            int okb = chi2_by(l, c2, w, draws + j * stride, &b);
            rank[2 * j] = oka && okb ? fabs(a - b) : oka != okb ? INFINITY : 0.0;
            rank[2 * j + 1] = (double)j;
        }
        sn_work_free(w);
    }
    if (!failed) {
        size_t k = 0;
        for (; k < (m + 1) / 2; k++)
            taken[pick[k] = k * n / ((m + 1) / 2)] = 1;
        qsort(rank, n, 2 * sizeof *rank, cmp_rank);
        for (size_t j = 0; k < m && j < n; j++) {
            size_t i = (size_t)rank[2 * j + 1];
            if (!taken[i])
                taken[i] = 1, pick[k++] = i;
        }
    }
    lt_compress_free(c2);
    free(rank);
    free(taken);
    if (failed && err && !err->code)
        lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory checking the compression");
    return failed ? -1 : 0;
}

size_t lt_like_reweight_draws(const lt_like *l)
{
    size_t N = l->sn ? l->sn->s->n : 0;
    return N <= 10000 ? 4000 : N <= 100000 ? 1000 : 250;
}

int lt_like_check_posterior(lt_like *l, const double *draws, size_t n, size_t stride, double bound,
                            lt_compression_check *out, lt_error *err)
{
    size_t N = l->sn ? l->sn->s->n : 0, d = l->dim;
    const lt_compress *cmp = l->sn ? l->sn->cmp : NULL;
    size_t m = N <= 10000 ? LT_CHECK_DRAWS : N <= 100000 ? 100 : 25;
    if (m > n)
        m = n;
    memset(out, 0, sizeof *out);
    out->knots_before = out->knots = cmp ? cmp->K : 0;
    if (!cmp || m == 0)
        return LT_OK; /* the exact path: nothing to check */
    double *pts = malloc(m * d * sizeof *pts), *exact = malloc(m * sizeof *exact);
    size_t *pick = malloc(m * sizeof *pick);
    /* every draw checked: no need to screen them for the worst */
    int all = m == n;
    for (size_t k = 0; all && pick && k < m; k++)
        pick[k] = k;
    int failed = !pts || !exact || !pick || (!all && pick_draws(l, draws, n, stride, m, pick, err));
    for (size_t k = 0; !failed && k < m; k++)
        memcpy(pts + k * d, draws + pick[k] * stride, d * sizeof *pts);
    free(pick);
    /* the exact path at each point, shared out over the threads (an exact
     * evaluation costs N, N^2 for a dense covariance): each writes its own
     * slot, so the answer does not depend on their number */
#pragma omp parallel reduction(| : failed)
    {
        lt_sn_work *we = failed ? NULL : work_alloc(l->sn, 1);
        failed |= !we;
#pragma omp for schedule(dynamic, 1)
        for (size_t k = 0; k < m; k++)
            if (we && !chi2_by(l, NULL, we, pts + k * d, &exact[k]))
                exact[k] = INFINITY;
        sn_work_free(we);
    }
    lt_sn_work *w = failed ? NULL : work_alloc(l->sn, cmp->K);
    if (!w) {
        free(pts);
        free(exact);
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory checking the compression");
    }
    out->checked = m;
    /* every draw screened by two compressions (unless all are checked), m
     * exact, m per comparison */
    out->evals = (all ? 0 : 2 * n) + 2 * m;
    out->max_before = out->max_after = worst_dchi2(l, pts, m, exact, w);
    sn_work_free(w);
    int rc = LT_OK;
    size_t K0 = cmp->K, K = K0;
    double prev = out->max_before;
    while (prev > bound && rc == LT_OK) {
        K *= 2;
        if (K > 1024) /* F grows as K^2 and its set-up as K N: stop */
            break;
        if (2 * K > N) { /* the exact path is as cheap: use it */
            K = 0;
            rc = lt_like_compression_set(l, 0, err);
            out->max_after = 0.0, out->knots = 0, out->refined = 1;
            break;
        }
        if ((rc = lt_like_compression_set(l, K, err)))
            break;
        if (!(w = work_alloc(l->sn, K))) {
            rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory checking the compression");
            break;
        }
        double now = worst_dchi2(l, pts, m, exact, w);
        out->evals += m;
        sn_work_free(w);
        if (now <= bound) {
            out->max_after = now, out->knots = K, out->refined = 1;
            break;
        }
        if (!(now < 0.25 * prev)) /* more knots no longer help: keep the first */
            break;
        prev = now;
    }
    if (rc == LT_OK && !out->refined && K != K0)
        rc = lt_like_compression_set(l, K0, err);
    free(pts);
    free(exact);
    return rc;
}

int lt_like_predict(const lt_like *l, lt_like_work *w, const double *theta, double *model,
                    lt_error *err)
{
    if (!l->sn)
        return lt_error_set(err, LT_EINPUT, NULL, 0, "no survey to predict");
    double logprior = 0.0, values[LT_MAX_PARAMS];
    for (size_t i = 0; i < l->dim; i++)
        logprior += lt_prior_logpdf(lt_like_prior(l, i), theta[i]);
    lt_cosmo_params p;
    lt_like_values(l, theta, values, &p);
    lt_cosmo c;
    lt_term_out o;
    lt_sn_work *sw = w->term[l->sn_term];
    if (!isfinite(logprior) || lt_cosmo_init(&c, l->model, &p, NULL) != LT_OK ||
        eval_exact(l->sn, sw, &c, l->offset_at >= 0 ? values[l->offset_at] : 0.0, &o))
        return lt_error_set(err, LT_EDOMAIN, NULL, 0,
                            "the parameters are outside the prior or the physical domain");
    /* the exact path left observed - prediction (with a sampled offset) in r */
    double shift = l->offset == LT_OFFSET_MARGINAL ? o.offset : 0.0;
    for (size_t i = 0; i < l->sn->s->n; i++)
        model[i] = l->sn->s->obs[i] - sw->r[i] + shift;
    return LT_OK;
}

int lt_sample_compression_missed(const lt_sample_compression *c)
{
    return c->checked_ok && c->posterior_dchi2 > LT_CHECK_BOUND;
}
