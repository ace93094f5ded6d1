/*
 * A sampled posterior from the chains (see lantern/pipeline.h): the draws
 * gathered, weighted by the exact likelihood where the compression missed
 * its bound, their derived quantities, the best draw polished by the
 * optimiser, and the summaries (lantern/posterior.h). The likelihood runs
 * here, so that reports only read the result.
 */
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "lantern/inference.h"
#include "lantern/pipeline.h"
#include "lantern/posterior.h"

#define LOGPOST 0
#define CHI2 1

/* Each measured quantity at the best fit, for the reports' pulls. */
static void measured_at_best(const lt_like *l, lt_posterior *r)
{
    for (size_t k = 0; k < lt_like_nmeasurements(l); k++)
        r->measured[k] = lt_like_quantity(l, r->best, lt_like_measurement(l, k)->name);
}

/* A copy of the chains' diagnostics that the posterior owns. */
static int copy_diag(lt_mcmc_diag *to, const lt_mcmc_diag *from, size_t d, size_t nc)
{
    *to = *from;
    to->rhat = to->ess_bulk = to->ess_tail = to->tau = NULL;
    to->acceptance = to->acceptance_first = NULL;
    double **dst[] = {&to->rhat, &to->ess_bulk, &to->ess_tail, &to->tau, &to->acceptance,
                      &to->acceptance_first};
    const double *srcs[] = {from->rhat, from->ess_bulk, from->ess_tail, from->tau,
                            from->acceptance, from->acceptance_first};
    for (size_t k = 0; k < 6; k++) {
        size_t n = k < 4 ? d : nc;
        if (!(*dst[k] = malloc((n ? n : 1) * sizeof **dst[k])))
            return -1;
        memcpy(*dst[k], srcs[k], n * sizeof **dst[k]);
    }
    return 0;
}

/* The summaries of r's draws, with l's priors for the edge densities. */
static int summarise(const lt_like *l, lt_posterior *r, lt_error *err)
{
    lt_prior priors[LT_MAX_FREE];
    for (size_t i = 0; i < lt_like_dim(l); i++)
        priors[i] = *lt_like_prior(l, i);
    if (lt_posterior_summarise(r, priors, err)) {
        lt_posterior_free(r);
        return err ? err->code : LT_ENOMEM;
    }
    return LT_OK;
}

/*
 * The importance weights of the rows (see lt_pipeline_mcmc_posterior): each row's
 * exact logpost and chi2 replace the compressed ones, and its weight is
 * their ratio, normalised to mean 1 (the largest log-ratio taken out first
 * so that no exponential overflows).
 */
static int weigh_rows(const lt_like *l, lt_posterior *r, lt_error *err)
{
    size_t total = r->nchains * r->ndraws;
    lt_like_point *pt = malloc((total ? total : 1) * sizeof *pt);
    r->weights = malloc((total ? total : 1) * sizeof *r->weights);
    if (!pt || !r->weights) {
        free(pt);
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory weighting the draws");
    }
    int rc = lt_like_eval_exact_many(l, r->rows + r->first_param, total, r->ncols, pt, err);
    double top = -INFINITY, sum = 0.0;
    r->max_abs_dchi2 = 0.0;
    for (size_t j = 0; !rc && j < total; j++) {
        double *row = r->rows + j * r->ncols;
        int ok = pt[j].domain_ok && isfinite(pt[j].logpost) && isfinite(row[LOGPOST]);
        r->weights[j] = ok ? pt[j].logpost - row[LOGPOST] : -INFINITY;
        if (ok)
            r->max_abs_dchi2 = fmax(r->max_abs_dchi2, fabs(pt[j].chi2 - row[CHI2]));
        row[LOGPOST] = pt[j].domain_ok ? pt[j].logpost : -INFINITY;
        row[CHI2] = pt[j].domain_ok ? pt[j].chi2 : NAN;
        top = fmax(top, r->weights[j]);
    }
    free(pt);
    if (rc)
        return rc;
    if (!isfinite(top))
        return lt_error_set(err, LT_EDOMAIN, NULL, 0,
                            "no posterior draw lies inside the exact likelihood's domain");
    for (size_t j = 0; j < total; j++)
        sum += r->weights[j] = exp(r->weights[j] - top);
    double sum2 = 0.0;
    for (size_t j = 0; j < total; j++) {
        r->weights[j] *= (double)total / sum;
        sum2 += r->weights[j] * r->weights[j];
    }
    r->kish_ess = (double)total * (double)total / sum2;
    return LT_OK;
}

/* r's columns: logpost, chi2, l's parameters, the derived quantities
 * (*der, *nder of them) and w at the pivot for w0-wa models; room for n
 * rows. */
static int alloc_columns(const lt_like *l, size_t n, lt_posterior *r, int *der, int *nder)
{
    size_t d = lt_like_dim(l);
    *nder = 0;
    for (int k = 0; k < LT_NDER; k++)
        if (lt_like_has_derived(l, k))
            der[(*nder)++] = k;
    int pivot = lt_like_param_index(l, "w0") >= 0 && lt_like_param_index(l, "wa") >= 0;
    r->first_param = 2, r->nparams = d;
    r->first_derived = 2 + d, r->nderived = (size_t)*nder + (pivot ? 1 : 0);
    r->ncols = 2 + d + r->nderived;
    r->cols = calloc(r->ncols, sizeof *r->cols);
    r->rows = malloc((n + 1) * r->ncols * sizeof *r->rows);
    r->stats = calloc(r->ncols, sizeof *r->stats);
    r->cov = calloc(d * d + 1, sizeof *r->cov);
    if (!r->cols || !r->rows || !r->stats || !r->cov)
        return -1;
    r->cols[0] = strdup("logpost");
    r->cols[1] = strdup("chi2");
    for (size_t i = 0; i < d; i++)
        r->cols[2 + i] = strdup(lt_like_param_name(l, i));
    for (int k = 0; k < *nder; k++)
        r->cols[2 + d + k] = strdup(lt_derived_name(der[k]));
    if (pivot)
        r->cols[2 + d + *nder] = strdup("w_pivot");
    for (size_t i = 0; i < r->ncols; i++)
        if (!r->cols[i])
            return -1;
    return 0;
}

/*
 * What every sampled posterior shares once its rows (and weights) are in:
 * the pivot redshift, the derived columns, the summaries, and the best draw
 * polished by the optimiser (simplex runs only when quick: the draws'
 * best is then close enough that a BFGS stage adds evaluations but not
 * digits of chi2_min). *evals receives the polish's evaluations.
 */
static int finish_draws(const lt_like *l, lt_posterior *r, const int *der, int nder, int quick,
                        size_t *evals, lt_error *err)
{
    size_t d = lt_like_dim(l), total = r->nchains * r->ndraws;
    int iw0 = lt_like_param_index(l, "w0"), iwa = lt_like_param_index(l, "wa");
    int pivot = iw0 >= 0 && iwa >= 0;
    const double *wt = r->weights;
    lt_posterior_covariance(r);
    r->z_pivot = NAN;
    double one_minus_ap = NAN;
    if (pivot) {
        r->z_pivot = lt_pivot_redshift(r->cov[iw0 * d + iwa], r->cov[iwa * d + iwa]);
        one_minus_ap = 1.0 - 1.0 / (1.0 + r->z_pivot);
    }
    /* derived columns, draw by draw (each a pure function of its draw) */
#pragma omp parallel for schedule(dynamic, 256)
    for (size_t j = 0; j < total; j++) {
        double *out = r->rows + j * r->ncols;
        for (int k = 0; k < nder; k++)
            out[2 + d + k] = lt_like_derived(l, out + 2, der[k]);
        if (pivot)
            out[2 + d + nder] = out[2 + iw0] + out[2 + iwa] * one_minus_ap;
    }
    int rc = summarise(l, r, err);
    if (rc)
        return rc;
    /* the best draw, polished: chi2_min */
    size_t jbest = 0;
    for (size_t j = 1; j < total; j++)
        if (r->rows[j * r->ncols] > r->rows[jbest * r->ncols])
            jbest = j;
    lt_like_chain pc = {l, lt_like_work_alloc(l)};
    if (!pc.w)
        goto nomem;
    double scale[LT_MAX_FREE], x0[LT_MAX_FREE];
    for (size_t i = 0; i < d; i++) {
        scale[i] = isfinite(r->stats[2 + i].sd) && r->stats[2 + i].sd > 0 ? r->stats[2 + i].sd : 1.0;
        x0[i] = total ? r->rows[jbest * r->ncols + 2 + i] : 0.0;
    }
    lt_optim_opts oo = {.dim = d, .nstarts = 1, .starts = x0, .scale = scale,
                        .tol = quick ? 1e-6 : 1e-10, .max_evals = (quick ? 100 : 4000) * (d + 1),
                        .quick = quick, .stop = NULL};
    lt_optim_info info;
    double f;
    if (lt_optimize(lt_like_neg2logpost, &pc, &oo, r->best, &f, &info, err)) {
        lt_like_work_free(pc.w);
        lt_posterior_free(r);
        return err ? err->code : LT_ENUMERIC;
    }
    /* weighted draws report the exact chi2 at the point the compressed
     * path found best (off by the square of a tiny shift) */
    (wt && r->method == LT_POST_MCMC ? lt_like_eval_exact : lt_like_eval)(l, pc.w, r->best,
                                                                         &r->at_best);
    *evals = lt_like_work_evals(pc.w);
    lt_like_work_free(pc.w);
    for (int k = 0; k < nder; k++)
        r->best_derived[k] = lt_like_derived(l, r->best, der[k]);
    measured_at_best(l, r);
    if (pivot)
        r->best_derived[nder] = r->best[iw0] + r->best[iwa] * one_minus_ap;
    return LT_OK;
nomem:
    lt_posterior_free(r);
    return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory summarising the draws");
}

int lt_pipeline_mcmc_posterior(const lt_like *l, const lt_mcmc *m, size_t reweight,
                               lt_posterior *r, lt_error *err)
{
    memset(r, 0, sizeof *r);
    const lt_mcmc_opts *o = lt_mcmc_options(m);
    size_t d = lt_like_dim(l), nc = o->nchains, row = lt_mcmc_row_size(m);
    size_t n = SIZE_MAX;
    for (size_t c = 0; c < nc; c++) {
        size_t k;
        lt_mcmc_draws(m, c, &k);
        n = k < n ? k : n;
    }
    /* to weigh the draws, keep every thin-th of each chain: at most reweight */
    size_t thin = reweight ? (nc * n + reweight - 1) / reweight : 1, steps = n;
    thin = thin ? thin : 1;
    n = (n + thin - 1) / thin;
    r->nchains = nc, r->ndraws = n, r->thin = thin;
    int der[LT_NDER + 1], nder;
    if (alloc_columns(l, nc * n, r, der, &nder))
        goto nomem;
    for (size_t c = 0; c < nc; c++) {
        size_t k;
        const double *dr = lt_mcmc_draws(m, c, &k);
        for (size_t i = 0; i < n; i++) {
            double *out = r->rows + (c * n + i) * r->ncols;
            const double *in = dr + i * thin * row;
            out[LOGPOST] = in[d];
            out[CHI2] = o->nextra ? in[d + 1] : NAN;
            memcpy(out + 2, in, d * sizeof *out);
        }
    }
    if (reweight) {
        int rc = weigh_rows(l, r, err);
        if (rc) {
            lt_posterior_free(r);
            return rc;
        }
    }
    size_t polish = 0;
    int rc = finish_draws(l, r, der, nder, 0, &polish, err);
    if (rc)
        return rc;
    r->evals += polish + (reweight ? nc * n : 0);
    r->converged = lt_mcmc_converged(m);
    r->ln_z = r->ln_z_err = r->information = NAN; /* no evidence from chains */
    if (copy_diag(&r->diag, lt_mcmc_diagnostics(m), d, nc))
        goto nomem;
    r->warmup = o->warmup;
    r->steps = steps;
    return LT_OK;
nomem:
    lt_posterior_free(r);
    return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory summarising the draws");
}

int lt_pipeline_ais_posterior(const lt_like *l, const lt_ais *s, lt_posterior *r, lt_error *err)
{
    size_t n;
    const double *dr = lt_ais_draws(s, &n);
    const lt_ais_diag *dg = lt_ais_diagnostics(s);
    int rc = lt_pipeline_rows_posterior(l, LT_POST_IMPORTANCE, 1, n, dr, lt_ais_row_size(s),
                                        lt_ais_weights(s), r, err);
    if (rc)
        return rc;
    r->converged = lt_ais_converged(s);
    r->finished = lt_ais_finished(s);
    r->pareto_k = dg->pareto_k;
    r->iterations = dg->iterations;
    /* the weights' own estimate of the evidence (the mean of p / q) is
     * not reported: nested sampling gives ln Z where a summary shows one */
    return LT_OK;
}


/* The chains' own diagnostics of r's rows, unweighted (rank-normalised
 * R-hat, bulk and tail ESS); the acceptance rates and tau are not known
 * from the rows alone (NaN). */
static int chains_diag(lt_posterior *r, size_t d)
{
    lt_mcmc_diag *g = &r->diag;
    size_t nc = r->nchains, n = r->ndraws;
    g->draws_per_chain = n;
    g->rhat = malloc((d ? d : 1) * sizeof *g->rhat);
    g->ess_bulk = malloc((d ? d : 1) * sizeof *g->ess_bulk);
    g->ess_tail = malloc((d ? d : 1) * sizeof *g->ess_tail);
    g->tau = malloc((d ? d : 1) * sizeof *g->tau);
    g->acceptance = malloc((nc ? nc : 1) * sizeof *g->acceptance);
    g->acceptance_first = malloc((nc ? nc : 1) * sizeof *g->acceptance_first);
    double *x = malloc((nc * n > 0 ? nc * n : 1) * sizeof *x);
    if (!g->rhat || !g->ess_bulk || !g->ess_tail || !g->tau || !g->acceptance ||
        !g->acceptance_first || !x) {
        free(x);
        return -1;
    }
    g->rhat_max = -INFINITY, g->ess_min = INFINITY;
    for (size_t i = 0; i < d; i++) {
        for (size_t j = 0; j < nc * n; j++)
            x[j] = r->rows[j * r->ncols + r->first_param + i];
        lt_diag_all(x, nc, n, &g->rhat[i], &g->ess_bulk[i], &g->ess_tail[i]);
        g->tau[i] = NAN;
        g->rhat_max = fmax(g->rhat_max, g->rhat[i]);
        g->ess_min = fmin(g->ess_min, fmin(g->ess_bulk[i], g->ess_tail[i]));
    }
    for (size_t c = 0; c < nc; c++)
        g->acceptance[c] = g->acceptance_first[c] = NAN;
    free(x);
    return 0;
}

int lt_pipeline_rows_posterior(const lt_like *l, lt_post_method method, size_t nchains,
                               size_t ndraws, const double *rows, size_t stride,
                               const double *w, lt_posterior *r, lt_error *err)
{
    memset(r, 0, sizeof *r);
    r->method = method;
    size_t d = lt_like_dim(l), n = nchains * ndraws;
    r->nchains = nchains, r->ndraws = ndraws, r->thin = 1, r->steps = ndraws;
    int der[LT_NDER + 1], nder;
    if (alloc_columns(l, n, r, der, &nder) ||
        (w && !(r->weights = malloc((n ? n : 1) * sizeof *r->weights))))
        goto nomem;
    double sw = 0.0, sw2 = 0.0;
    for (size_t j = 0; j < n; j++) {
        double *out = r->rows + j * r->ncols;
        const double *in = rows + j * stride;
        out[LOGPOST] = in[d];
        out[CHI2] = stride > d + 1 ? in[d + 1] : NAN;
        memcpy(out + 2, in, d * sizeof *out);
        if (w) {
            r->weights[j] = w[j];
            sw += w[j], sw2 += w[j] * w[j];
        }
    }
    r->kish_ess = w ? (sw2 > 0.0 ? sw * sw / sw2 : 0.0) : (double)n;
    size_t polish = 0;
    int rc = finish_draws(l, r, der, nder, 1, &polish, err);
    if (rc)
        return rc;
    r->evals += polish;
    r->pareto_k = NAN;
    r->ln_z = r->ln_z_err = r->information = NAN;
    if (method == LT_POST_MCMC && chains_diag(r, d))
        goto nomem;
    return LT_OK;
nomem:
    lt_posterior_free(r);
    return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory summarising the draws");
}

/* Room for a posterior of n rows: logpost, chi2 and l's parameters (no
 * derived columns). */
static int alloc_rows(const lt_like *l, size_t n, lt_posterior *r)
{
    size_t d = lt_like_dim(l);
    r->first_param = 2, r->nparams = d, r->first_derived = 2 + d, r->nderived = 0;
    r->ncols = 2 + d;
    r->cols = calloc(r->ncols, sizeof *r->cols);
    r->rows = malloc((n + 1) * r->ncols * sizeof *r->rows);
    r->stats = calloc(r->ncols, sizeof *r->stats);
    r->cov = calloc(d * d + 1, sizeof *r->cov);
    if (!r->cols || !r->rows || !r->stats || !r->cov)
        return -1;
    r->cols[0] = strdup("logpost");
    r->cols[1] = strdup("chi2");
    for (size_t i = 0; i < d; i++)
        r->cols[2 + i] = strdup(lt_like_param_name(l, i));
    for (size_t i = 0; i < r->ncols; i++)
        if (!r->cols[i])
            return -1;
    return 0;
}

int lt_pipeline_nested_posterior(const lt_like *l, const lt_nested_result *nr, size_t live,
                                 lt_posterior *r, lt_error *err)
{
    memset(r, 0, sizeof *r);
    r->live_points = live;
    size_t d = lt_like_dim(l), n = nr->nsamples;
    r->method = LT_POST_NESTED;
    r->nchains = 1, r->ndraws = n, r->thin = 1, r->steps = n;
    r->z_pivot = NAN;
    if (alloc_rows(l, n, r) || !(r->weights = malloc((n ? n : 1) * sizeof *r->weights)) ||
        !(r->loglike = malloc((n ? n : 1) * sizeof *r->loglike)))
        goto nomem;
    double norm = lt_like_lognorm(l);
    size_t best = 0;
    for (size_t j = 0; j < n; j++) {
        double *row = r->rows + j * r->ncols;
        /* the sampler keeps ln L, not the prior's density: logpost unknown */
        row[0] = NAN;
        row[1] = -2.0 * (nr->loglike[j] - norm);
        memcpy(row + 2, nr->theta + j * d, d * sizeof *row);
        r->weights[j] = exp(nr->logw[j]);
        r->loglike[j] = nr->loglike[j];
        if (nr->loglike[j] > nr->loglike[best])
            best = j;
    }
    lt_posterior_covariance(r);
    int rc = summarise(l, r, err);
    if (rc)
        return rc;
    double sw = 0.0, sw2 = 0.0;
    for (size_t j = 0; j < n; j++)
        sw += r->weights[j], sw2 += r->weights[j] * r->weights[j];
    r->kish_ess = sw * sw / sw2;
    /* the best sample, the largest ln L, evaluated for its chi2 */
    lt_like_work *w = lt_like_work_alloc(l);
    if (!w)
        goto nomem;
    if (n) {
        memcpy(r->best, nr->theta + best * d, d * sizeof *r->best);
        lt_like_eval(l, w, r->best, &r->at_best);
    }
    measured_at_best(l, r);
    lt_like_work_free(w);
    r->converged = r->finished = nr->finished;
    r->ln_z = nr->logz, r->ln_z_err = nr->logz_err, r->information = nr->info;
    r->iterations = nr->iterations, r->evals = nr->evals;
    return LT_OK;
nomem:
    lt_posterior_free(r);
    return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory summarising the samples");
}

int lt_pipeline_fit_posterior(const lt_like *l, const lt_fit_result *fr, lt_posterior *r,
                              lt_error *err)
{
    memset(r, 0, sizeof *r);
    size_t d = fr->dim;
    r->method = LT_POST_LAPLACE;
    r->z_pivot = NAN;
    r->dic = r->p_v = NAN;
    r->ln_z = r->ln_z_err = r->information = NAN;
    if (alloc_rows(l, 0, r)) {
        lt_posterior_free(r);
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    }
    for (size_t i = 0; i < d; i++) {
        double b = fr->best[i], s = fr->sd[i];
        /* intervals of probability LT_NOMINAL68 and LT_NOMINAL95 under the
         * Laplace (Gaussian) approximation; for a Gaussian the highest
         * density intervals are the same */
        r->stats[2 + i] = (lt_post_stats){b, s, b, b - s, b + s, b - LT_Z95 * s, b + LT_Z95 * s,
                                          b - s, b + s, b - LT_Z95 * s, b + LT_Z95 * s};
        r->best[i] = b;
        r->edge_lo[i] = r->edge_hi[i] = NAN;
        for (size_t k = 0; k < d; k++)
            r->cov[i * d + k] = fr->cov[i * d + k];
    }
    r->at_best = fr->at_best;
    r->fit = *fr;
    memcpy(r->measured, fr->measured, sizeof r->measured);
    r->converged = fr->info.converged && fr->laplace_ok;
    return LT_OK;
}

int lt_pipeline_predict(const lt_like *l, const double *theta, double *model, lt_error *err)
{
    lt_like_work *w = lt_like_work_alloc(l);
    if (!w)
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    int rc = lt_like_predict(l, w, theta, model, err);
    lt_like_work_free(w);
    return rc;
}
