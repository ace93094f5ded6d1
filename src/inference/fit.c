/*
 * The best fit of a likelihood: seeded starts inside the prior, the
 * optimiser, the Laplace covariance, derived parameters and the summary
 * numbers (chi2 probability, AIC, BIC).
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>

#include "lantern/inference.h"
#include "lantern/likelihood.h"

double lt_like_neg2logpost(const double *x, void *p)
{
    lt_like_chain *c = p;
    lt_like_point pt;
    lt_like_eval(c->l, c->w, x, &pt);
    return -2.0 * pt.logpost;
}

double lt_like_logdensity(const double *x, void *ctx, double *extra)
{
    lt_like_chain *c = ctx;
    lt_like_point pt;
    lt_like_eval(c->l, c->w, x, &pt);
    extra[0] = pt.chi2;
    return pt.logpost;
}

int lt_mcmc_check_compression(lt_like *l, const lt_mcmc *m, struct lt_compression_check *out,
                              lt_error *err)
{
    const lt_mcmc_opts *o = lt_mcmc_options(m);
    size_t row = lt_mcmc_row_size(m), n = SIZE_MAX;
    for (size_t c = 0; c < o->nchains; c++) {
        size_t k;
        lt_mcmc_draws(m, c, &k);
        n = k < n ? k : n;
    }
    double *all = malloc((o->nchains * n * row + 1) * sizeof *all);
    if (!all)
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory checking the compression");
    for (size_t c = 0; c < o->nchains; c++) {
        size_t k;
        memcpy(all + c * n * row, lt_mcmc_draws(m, c, &k), n * row * sizeof *all);
    }
    int rc = lt_like_check_posterior(l, all, o->nchains * n, row, LT_CHECK_BOUND, out, err);
    free(all);
    return rc;
}

void lt_like_prior_transform(const double *u, double *theta, void *tctx)
{
    const lt_like *l = tctx;
    for (size_t i = 0; i < lt_like_dim(l); i++) {
        const lt_prior *p = lt_like_prior(l, i);
        theta[i] = p->kind == LT_PRIOR_UNIFORM ? p->a + (p->b - p->a) * u[i]
                                               : p->a + p->b * gsl_cdf_ugaussian_Pinv(u[i]);
    }
}

double lt_like_nested_loglike(const double *theta, void *ctx)
{
    lt_like_nested *c = ctx;
    lt_like_point pt;
    lt_like_eval(c->c.l, c->c.w, theta, &pt);
    return pt.domain_ok && isfinite(pt.logprior) ? pt.loglike + c->norm : -INFINITY;
}

/* A random point of the prior. */
static void prior_point(const lt_prior *p, gsl_rng *r, double *x)
{
    if (p->kind == LT_PRIOR_UNIFORM)
        *x = p->a + (p->b - p->a) * gsl_rng_uniform(r);
    else
        *x = p->a + p->b * gsl_ran_gaussian(r, 1.0);
}

static double prior_scale(const lt_prior *p)
{
    return p->kind == LT_PRIOR_UNIFORM ? p->b - p->a : 4.0 * p->b;
}

/* -2 ln P over the parameters not at an edge: the others held at it. */
typedef struct {
    lt_like_chain *ctx;
    size_t m;             /* parameters inside their priors */
    size_t inside[LT_MAX_FREE];
    double full[LT_MAX_FREE];
} held;

static double held_f(const double *x, void *p)
{
    held *h = p;
    for (size_t k = 0; k < h->m; k++)
        h->full[h->inside[k]] = x[k];
    return lt_like_neg2logpost(h->full, h->ctx);
}

/* Free standardisation parameters (a scatter or a population width, whose
 * 0 is a physical bound, not a choice of prior) whose best fit lies on an
 * edge of a uniform prior (within 1e-5 of its width, where the optimiser
 * stops short of it): moved onto the edge when that is no worse, and
 * marked. A cosmological parameter at its prior's edge keeps the Laplace
 * step's refusal, which says to widen the prior.
 * For each, the 95% one-sided limit at which -2 ln P has risen by 2.71
 * along it, the others held at their best fit (a conditional limit). */
static void find_edges(const lt_like *l, lt_like_chain *ctx, lt_fit_result *r)
{
    size_t d = r->dim;
    double y[LT_MAX_FREE];
    for (size_t i = 0; i < d; i++) {
        const lt_prior *p = lt_like_prior(l, i);
        r->edge[i] = 0, r->limit[i] = NAN;
        if (p->kind != LT_PRIOR_UNIFORM || !lt_param_is_standardisation(lt_like_param_name(l, i)))
            continue;
        double w = p->b - p->a, x = r->best[i];
        int side = x - p->a < 1e-5 * w ? -1 : p->b - x < 1e-5 * w ? 1 : 0;
        if (!side)
            continue;
        memcpy(y, r->best, d * sizeof *y);
        y[i] = side < 0 ? p->a : p->b;
        double f = lt_like_neg2logpost(y, ctx);
        if (!(f <= r->f_best + 1e-6))
            continue;
        r->best[i] = y[i], r->f_best = fmin(f, r->f_best);
        r->edge[i] = side;
        /* the limit: bisection between the edge and the far side */
        double lo = y[i], hi = side < 0 ? p->b : p->a, target = r->f_best + 2.71;
        y[i] = hi;
        double fh = lt_like_neg2logpost(y, ctx);
        if (!(fh > target)) /* no limit inside the prior */
            continue;
        for (int it = 0; it < 60; it++) {
            y[i] = 0.5 * (lo + hi);
            if (lt_like_neg2logpost(y, ctx) > target)
                hi = y[i];
            else
                lo = y[i];
        }
        r->limit[i] = 0.5 * (lo + hi);
    }
}

/* The Laplace covariance of the parameters inside their priors, with those
 * at an edge held there (their rows and columns 0, their sd NaN). */
static int laplace_inside(lt_like_chain *ctx, lt_fit_result *r,
                          const double *scale, size_t *bad, lt_error *err)
{
    size_t d = r->dim;
    held h = {.ctx = ctx};
    double x[LT_MAX_FREE], sc[LT_MAX_FREE];
    memcpy(h.full, r->best, d * sizeof *h.full);
    for (size_t i = 0; i < d; i++)
        if (!r->edge[i])
            x[h.m] = r->best[i], sc[h.m] = scale[i], h.inside[h.m++] = i;
    if (h.m == d)
        return lt_laplace(lt_like_neg2logpost, ctx, d, r->best, scale, r->cov, bad, err);
    for (size_t a = 0; a < d * d; a++)
        r->cov[a] = 0.0;
    if (h.m == 0)
        return LT_OK;
    double *cov = malloc(h.m * h.m * sizeof *cov);
    if (!cov)
        return *bad = d, lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    size_t b;
    int rc = lt_laplace(held_f, &h, h.m, x, sc, cov, &b, err);
    *bad = b < h.m ? h.inside[b] : d;
    for (size_t a = 0; a < h.m; a++)
        for (size_t c = 0; c < h.m; c++)
            r->cov[h.inside[a] * d + h.inside[c]] = cov[a * h.m + c];
    free(cov);
    return rc;
}

int lt_fit_run(const lt_like *l, const lt_fit_opts *o, lt_fit_result *r, lt_error *err)
{
    memset(r, 0, sizeof *r);
    size_t d = lt_like_dim(l);
    r->dim = d;
    lt_like_chain ctx = {l, lt_like_work_alloc(l)};
    size_t nstarts = o->starts ? o->starts : 1;
    double *starts = malloc((nstarts * d + 1) * sizeof *starts);
    double scale[LT_MAX_FREE];
    gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);
    int rc = LT_OK;
    if (!ctx.w || !starts || !rng) {
        rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        goto done;
    }
    gsl_rng_set(rng, o->seed);
    for (size_t i = 0; i < d; i++)
        scale[i] = prior_scale(lt_like_prior(l, i));
    /* Starts must be possible points: redraw (up to a limit) those that
     * are not, such as a curved universe without a big bang. */
    for (size_t k = 0; k < nstarts; k++) {
        double *x = starts + k * d;
        int tries = 0;
        do {
            if (k == 0 && tries == 0)
                lt_like_guess(l, x); /* the prior's centre, or the terms' guess */
            else
                for (size_t i = 0; i < d; i++)
                    prior_point(lt_like_prior(l, i), rng, &x[i]);
        } while (!isfinite(lt_like_neg2logpost(x, &ctx)) && ++tries < 10000);
    }
    lt_optim_opts oo = {.dim = d, .nstarts = nstarts, .starts = starts, .scale = scale,
                        .tol = o->quick ? 1e-4 : 1e-8, .max_evals = 2000 * (d + 1),
                        .quick = o->quick, .stop = o->stop};
    if ((rc = lt_optimize(lt_like_neg2logpost, &ctx, &oo, r->best, &r->f_best, &r->info, err)))
        goto done;
    lt_like_eval(l, ctx.w, r->best, &r->at_best);
    for (size_t k = 0; k < lt_like_nmeasurements(l); k++)
        r->measured[k] = lt_like_quantity(l, r->best, lt_like_measurement(l, k)->name);

    size_t bad;
    lt_error lerr;
    find_edges(l, &ctx, r);
    r->laplace_ok = laplace_inside(&ctx, r, scale, &bad, &lerr) == LT_OK;
    if (!r->laplace_ok) {
        snprintf(r->laplace_note, sizeof r->laplace_note, "%s", lerr.msg);
        if (bad < d)
            snprintf(r->laplace_note, sizeof r->laplace_note,
                     "the best fit of %s lies at the edge of its prior or of the physical "
                     "domain: no Laplace errors",
                     lt_like_param_name(l, bad));
    }
    for (size_t i = 0; i < d; i++)
        r->sd[i] = r->laplace_ok && !r->edge[i] ? sqrt(r->cov[i * d + i]) : NAN;

    r->dof = lt_like_dof(l);
    r->k_counted = lt_like_nparams_counted(l);
    double chi2 = r->at_best.chi2, n = (double)lt_like_ndata(l);
    r->p_value = r->dof > 0 ? gsl_cdf_chisq_Q(chi2, (double)r->dof) : NAN;
    r->aic = chi2 + 2.0 * (double)r->k_counted;
    r->bic = chi2 + (double)r->k_counted * log(n);

    /* Derived parameters: value at the best fit, sigma by the delta method
     * (gradient by central differences with steps of sigma/100). */
    double y[LT_MAX_FREE];
    for (int k = 0; k < LT_NDER; k++) {
        if (!(r->has_der[k] = lt_like_has_derived(l, k)))
            continue;
        r->der_best[k] = lt_like_derived(l, r->best, k);
        r->der_sd[k] = NAN;
        if (!r->laplace_ok || !isfinite(r->der_best[k]))
            continue;
        double g[LT_MAX_FREE];
        int ok = 1;
        for (size_t i = 0; i < d && ok; i++) {
            double h = 0.01 * r->sd[i];
            memcpy(y, r->best, d * sizeof *y);
            y[i] += h;
            double gp = lt_like_derived(l, y, k);
            y[i] -= 2 * h;
            double gm = lt_like_derived(l, y, k);
            g[i] = (gp - gm) / (2 * h);
            ok = isfinite(g[i]);
        }
        if (!ok)
            continue;
        double var = 0.0;
        for (size_t i = 0; i < d; i++)
            for (size_t j = 0; j < d; j++)
                var += g[i] * r->cov[i * d + j] * g[j];
        r->der_sd[k] = sqrt(fmax(var, 0.0));
    }
    /* The w0-wa pivot. */
    int iw0 = lt_like_param_index(l, "w0"), iwa = lt_like_param_index(l, "wa");
    if (iw0 >= 0 && iwa >= 0 && r->laplace_ok) {
        double c01 = r->cov[iw0 * d + iwa], v1 = r->cov[iwa * d + iwa], v0 = r->cov[iw0 * d + iw0];
        r->z_pivot = lt_pivot_redshift(c01, v1);
        if (isfinite(r->z_pivot)) {
            double a_p = 1.0 / (1.0 + r->z_pivot);
            r->has_pivot = 1;
            r->w_pivot = r->best[iw0] + r->best[iwa] * (1.0 - a_p);
            r->w_pivot_sd = sqrt(fmax(v0 - c01 * c01 / v1, 0.0));
        }
    }
done:
    gsl_rng_free(rng);
    free(starts);
    r->evals = lt_like_work_evals(ctx.w);
    lt_like_work_free(ctx.w);
    return rc;
}

int lt_fit_scatter(lt_like *l, const lt_fit_opts *o, lt_fit_result *r, lt_scatter_tune *tune,
                   int *iterations, lt_error *err)
{
    int rc = LT_OK;
    *iterations = 0;
    memset(tune, 0, sizeof *tune);
    /* fit, tune at the best fit, refit: the scatter moves the residuals'
     * weights and alpha, beta move the residuals, so they settle together;
     * the last fit is at the scatter reported */
    for (int it = 0; it < LT_SCATTER_ITERATIONS; it++) {
        if ((rc = lt_fit_run(l, o, r, err)) || (rc = lt_like_scatter_tune(l, r->best, tune, err)))
            return rc;
        *iterations = it + 1;
        if (tune->max_change < 1e-6)
            return LT_OK;
    }
    return lt_error_set(err, LT_ENUMERIC, NULL, 0,
                        "the chi2 method's sigma_int did not settle in %d rounds of fit and "
                        "tune (the last moved by %.2g)",
                        LT_SCATTER_ITERATIONS, tune->max_change);
}

void lt_fit_start_cov(const lt_like *l, const lt_fit_result *r, double *cov)
{
    size_t d = r->dim;
    memcpy(cov, r->cov, d * d * sizeof *cov);
    for (size_t i = 0; i < d; i++) {
        if (!r->edge[i])
            continue;
        const lt_prior *p = lt_like_prior(l, i);
        double s = isfinite(r->limit[i]) ? 0.5 * fabs(r->limit[i] - r->best[i])
                                         : 0.1 * (p->b - p->a);
        cov[i * d + i] = s * s;
    }
}
