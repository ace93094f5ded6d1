/*
 * Posteriors: freeing one, and the summaries computed from its draws alone
 * (see lantern/posterior.h). The pipeline fills the draws in.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "lantern/posterior.h"

void lt_posterior_free(lt_posterior *p)
{
    for (size_t i = 0; p->cols && i < p->ncols; i++)
        free(p->cols[i]);
    free(p->cols);
    free(p->rows);
    free(p->stats);
    free(p->cov);
    free(p->weights);
    free(p->loglike);
    free(p->diag.rhat);
    free(p->diag.ess_bulk);
    free(p->diag.ess_tail);
    free(p->diag.tau);
    free(p->diag.acceptance);
    free(p->diag.acceptance_first);
    memset(p, 0, sizeof *p);
}

void lt_model_result_free(lt_model_result *m)
{
    lt_posterior_free(&m->post);
    lt_like_free(m->l);
    m->l = NULL;
}

void lt_posterior_covariance(lt_posterior *p)
{
    size_t total = p->nchains * p->ndraws, d = p->nparams, c0 = p->first_param;
    const double *wt = p->weights;
    double mean[LT_MAX_FREE] = {0}, W = 0.0, W2 = 0.0;
    for (size_t j = 0; j < total; j++)
        W += wt ? wt[j] : 1.0, W2 += wt ? wt[j] * wt[j] : 1.0;
    double denom = wt ? W - W2 / W : (double)(total > 1 ? total - 1 : 1);
    for (size_t j = 0; j < total; j++)
        for (size_t i = 0; i < d; i++)
            mean[i] += (wt ? wt[j] : 1.0) * p->rows[j * p->ncols + c0 + i] / W;
    memset(p->cov, 0, d * d * sizeof *p->cov);
    for (size_t j = 0; j < total; j++)
        for (size_t a = 0; a < d; a++)
            for (size_t b = 0; b < d; b++)
                p->cov[a * d + b] += (wt ? wt[j] : 1.0) * (p->rows[j * p->ncols + c0 + a] - mean[a]) *
                                     (p->rows[j * p->ncols + c0 + b] - mean[b]) / denom;
}

/* The weighted ESS of each parameter: the smallest of those of its mean
 * and of the indicators of its weighted 5% and 95% quantiles (DESIGN.md's
 * ess_min for weighted draws). x, f: room for the draws. */
static void weighted_ess(lt_posterior *p, double *x, double *f)
{
    size_t total = p->nchains * p->ndraws;
    p->ess_min_weighted = INFINITY;
    for (size_t i = 0; i < p->nparams; i++) {
        for (size_t j = 0; j < total; j++)
            x[j] = p->rows[j * p->ncols + p->first_param + i];
        /* independent draws (importance sampling): the plain IS estimator;
         * chains: the one that sees their autocorrelation */
        int iid = p->method == LT_POST_IMPORTANCE;
        double e = iid ? lt_diag_ess_is(x, 1, p->weights, total)
                       : lt_diag_ess_weighted(x, p->weights, p->nchains, p->ndraws);
        for (int t = 0; t < 2; t++) {
            double q = lt_post_quantile(x, p->weights, total, t ? 0.95 : 0.05);
            for (size_t j = 0; j < total; j++)
                f[j] = isnan(x[j]) ? NAN : x[j] <= q;
            e = fmin(e, iid ? lt_diag_ess_is(f, 1, p->weights, total)
                            : lt_diag_ess_weighted(f, p->weights, p->nchains, p->ndraws));
        }
        p->ess_weighted[i] = e;
        p->ess_min_weighted = fmin(p->ess_min_weighted, e);
    }
}

int lt_posterior_summarise(lt_posterior *p, const lt_prior *priors, lt_error *err)
{
    size_t total = p->nchains * p->ndraws;
    double *x = malloc((total ? total : 1) * sizeof *x), *f = malloc((total ? total : 1) * sizeof *f);
    if (!x || !f) {
        free(x);
        free(f);
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory summarising the draws");
    }
    for (size_t col = p->first_param; col < p->ncols; col++) {
        for (size_t j = 0; j < total; j++)
            x[j] = p->rows[j * p->ncols + col];
        lt_post_summarise_weighted(x, p->weights, total, &p->stats[col]);
    }
    /* how much of each posterior lies at the edges of a uniform prior */
    for (size_t i = 0; i < p->nparams; i++) {
        p->edge_lo[i] = p->edge_hi[i] = NAN;
        if (priors[i].kind != LT_PRIOR_UNIFORM)
            continue;
        for (size_t j = 0; j < total; j++)
            x[j] = p->rows[j * p->ncols + p->first_param + i];
        lt_post_edge_density(x, p->weights, total, priors[i].a, priors[i].b, &p->edge_lo[i],
                             &p->edge_hi[i]);
    }
    if (p->weights && (p->method == LT_POST_MCMC || p->method == LT_POST_IMPORTANCE))
        weighted_ess(p, x, f);
    /* the deviance on the chi2 scale of AIC and BIC: the chi2 that enters
     * the likelihood, -2 ln L less its normalisation */
    lt_dic dic = {NAN, NAN, NAN};
    for (size_t j = 0; j < total; j++)
        x[j] = p->rows[j * p->ncols + 1];
    if (total)
        lt_dic_compute(x, p->weights, total, &dic);
    p->dic = dic.dic, p->p_v = dic.p_v;
    free(x);
    free(f);
    return LT_OK;
}
