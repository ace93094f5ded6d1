/*
 * lantern/posterior.h - one result type from any method, and the summaries
 * of draws.
 *
 * A posterior holds its draws (rows of logpost, chi2, the parameters and
 * the derived quantities), their weights, the best fit, the diagnostics and
 * the summaries (quantiles, highest-density intervals, covariance, prior-
 * edge densities). Nothing here runs a likelihood: the pipeline fills a
 * posterior in; reports and campaigns read it.
 */
#ifndef LANTERN_POSTERIOR_H
#define LANTERN_POSTERIOR_H

#include <stddef.h>

#include "lantern/error.h"
#include "lantern/inference.h"
#include "lantern/likelihood.h"

/* ---- posterior summaries ---- */
typedef struct lt_post_stats {
    double mean, sd, median;
    double lo68, hi68, lo95, hi95; /* equal-tailed: Phi(-1), Phi(1); 2.5 and 97.5 % */
    double hpd68_lo, hpd68_hi, hpd95_lo, hpd95_hi; /* highest density (shortest) */
} lt_post_stats;

/* Summarise n draws (NaN draws are left out; all NaN gives NaN). Quantiles
 * interpolate linearly between order statistics (Hyndman & Fan 1996,
 * definition 7, numpy's default); the HPD interval is the shortest one
 * holding ceil(p n) of the sorted draws. */
void lt_post_summarise(const double *x, size_t n, lt_post_stats *s);

/* The probabilities of the intervals: Phi(-1), Phi(1) and their span. */
#define LT_POST_P_LO68 0.15865525393145707
#define LT_POST_P_HI68 0.84134474606854293
#define LT_POST_P68 0.6826894921370859
/* The 97.5% point of the standard normal, Phi^-1(0.975): a Gaussian's 95%
 * interval is the mean +- LT_Z95 sd. */
#define LT_Z95 1.959963984540054

/*
 * The same for draws with weights w (importance weights, or a nested
 * sampler's posterior weights; need not be normalised). NaN draws and
 * weights that are not positive and finite are left out; w NULL is
 * lt_post_summarise. The mean and sd are weighted (sd with the unbiased
 * divisor W - sum w^2 / W of reliability weights, k - 1 for equal ones).
 * Sorted, a draw sits at the cumulative weight up to its middle, rescaled
 * so that the smallest draw is at 0 and the largest at 1, and quantiles
 * interpolate between draws: with equal weights this is definition 7. The HPD
 * interval is the shortest run of sorted draws holding p of the weight.
 */
void lt_post_summarise_weighted(const double *x, const double *w, size_t n, lt_post_stats *s);

/* One q-quantile of draws x with weights w (NULL: equal) by those rules;
 * NaN if no draw counts. */
double lt_post_quantile(const double *x, const double *w, size_t n, double q);

/*
 * How much of a posterior lies at the edges of a uniform prior [a, b]: the
 * density at a and at b relative to the density's peak, from the n draws x
 * with weights w (NULL: equal; NaN draws and weights <= 0 are left out).
 * The density is a Gaussian kernel estimate reflected at both edges
 * (Silverman 1986, section 2.10), so it is not halved at a hard edge, with
 * Silverman's rule-of-thumb bandwidth 0.9 min(sd, IQR/1.34) n^(-1/5)
 * (eq. 3.31; n is Kish's effective size for weights). Its bias at an edge
 * is about f'(a) h sqrt(2/pi), a few per cent of f(a) for 10^4 draws.
 * A flat posterior gives ratios near 1, one far from both edges near 0.
 * Returns LT_EINPUT for fewer than two draws or a bad interval (ratios NaN).
 */
int lt_post_edge_density(const double *x, const double *w, size_t n, double a, double b,
                         double *lo_ratio, double *hi_ratio);

/* The ratio above which a posterior is said to reach a prior edge: its
 * density there above 10% of its peak (issue 16; a convention of ours). */
#define LT_EDGE_DENSITY_WARN 0.1

/* The warning for parameter name with prior p and the edge ratios lo, hi
 * of lt_post_edge_density, into buf: "the posterior of NAME reaches the
 * lower edge of its prior U(A, B) (density there L% and H% of its peak)".
 * Returns 1 if a ratio is above LT_EDGE_DENSITY_WARN (buf written), else 0. */
int lt_post_edge_note(const char *name, const lt_prior *p, double lo, double hi, char *buf,
                      size_t size);

/* ---- smoothed densities (the figures' contours and marginals) ---- */

/*
 * A Gaussian kernel density estimate of weighted draws on a grid: what the
 * figures draw contours and marginal curves from.
 *
 * The kernel's covariance is f^2 times the draws' weighted covariance (the
 * unbiased divisor W - sum w^2 / W), with Scott's factor f = n^(-1/(d+4))
 * for d dimensions (D. W. Scott, Multivariate Density Estimation, 1992,
 * eq. 6.42; scipy.stats.gaussian_kde's default), n the effective sample
 * size: Kish's (sum w)^2 / sum w^2, or ess when that is smaller and
 * positive (the draws of a Markov chain are correlated: n draws hold about
 * ess draws' worth of information, and a bandwidth for n would draw noise
 * as islands). bw_scale (0: 1) multiplies f. The kernel adds its own
 * spread: the estimate's covariance is (1 + f^2) times the draws', so a
 * region drawn from it is sqrt(1 + f^2) wider than the draws' (in 2-D, 5%
 * at an ESS of 1000, 10% at 100), the price of smooth edges. (Moving the
 * draws towards their mean to undo it would open a gap at a prior edge
 * that a posterior presses on.)
 *
 * Where a uniform prior bounds a parameter, the density is reflected at
 * the bound (Silverman 1986, section 2.10): the kernel mass of each draw
 * beyond the edge is folded back, so the estimate is not halved at a hard
 * edge. edge[k] (NULL: none) gives the bounds: {xlo, xhi, ylo, yhi},
 * -INFINITY / INFINITY where there is none.
 *
 * The density is evaluated at the centres of an nx x ny grid of cells on
 * [x0, x1] x [y0, y1] (g[ix * ny + iy]), normalised so that it integrates
 * to the weight of all draws over the whole plane (1 if everything is in
 * view); mass outside the window is counted in *outside (may be NULL):
 * the fraction of the density's integral not on the grid. Draws are
 * binned linearly on a grid of the same spacing before the convolution
 * (Wand & Jones, Kernel Smoothing, 1995, appendix D): the estimate agrees
 * with the direct sum to O((cell/bandwidth)^2).
 *
 * A kernel narrower than a cell (sd) in some direction (two columns tied
 * to each other, as Omega_DE = 1 - Omega_m in a flat model; in 1-D, very
 * many draws on a wide window) is widened to a cell there, so that the
 * grid can draw it without islands: evaluate a density on a window about
 * its draws' own span (the figures do) so that this is rare.
 *
 * NaN draws and weights that are not positive and finite are left out
 * (w NULL: equal weights). Returns LT_EINPUT for fewer than two usable
 * draws, a column without spread (zero variance), a bad window or more than
 * LT_KDE_MAX_CELLS cells a side, LT_ENOMEM.
 */
/* The most cells a side of a density's grid (its sizes stay within int). */
#define LT_KDE_MAX_CELLS 4096
typedef struct lt_kde_opts {
    double bw_scale; /* 0: 1 */
    double ess;      /* effective sample size to use if smaller than Kish's; <= 0: none */
    const double *edge; /* {xlo, xhi, ylo, yhi} (1-D: {lo, hi}), or NULL */
} lt_kde_opts;
int lt_post_kde2d(const double *x, const double *y, const double *w, size_t n,
                  const lt_kde_opts *o, double x0, double x1, double y0, double y1, int nx,
                  int ny, double *g, double *outside, lt_error *err);
/* The same in one dimension: f = n^(-1/5), edge {lo, hi}; nx points. */
int lt_post_kde1d(const double *x, const double *w, size_t n, const lt_kde_opts *o, double x0,
                  double x1, int nx, double *g, double *outside, lt_error *err);
/*
 * The levels of a density grid g of n cells of area da (for 1-D, length)
 * above which the highest-density region holds each fraction p[k] of the
 * total mass, total = sum g da + outside (lt_post_kde2d's *outside: mass not
 * on the grid counts, so a region is never drawn larger than it should be
 * merely because the window clips the tails). levels[k] is 0 if the grid
 * cannot hold p[k]. The region {g >= level} is the HPD region on the grid.
 */
void lt_post_hpd_levels(const double *g, size_t n, double da, double outside, const double *p,
                        size_t np, double *levels);
/* The masses the figures' regions hold: those of the one- and two-sigma
 * intervals of a Gaussian, erf(1/sqrt 2) and erf(2/sqrt 2) (common
 * practice: such regions are called "68%" and "95%"). */
#define LT_POST_MASS_1SIGMA 0.682689492137086
#define LT_POST_MASS_2SIGMA 0.954499736103642

/* ---- posteriors ---- */

/*
 * A posterior from any method: the draws with their derived columns, their
 * weights, the best fit, the diagnostics and the summaries. Made by the
 * pipeline (lt_pipeline_mcmc_posterior), which runs the likelihood; the
 * summaries here are computed from the draws alone.
 */
typedef enum {
    LT_POST_MCMC = 0, /* chains: diag holds their diagnostics */
    LT_POST_NESTED,   /* one run of weighted samples, with the evidence */
    LT_POST_LAPLACE,  /* a best fit and its Gaussian (Laplace) approximation: no draws */
    LT_POST_IMPORTANCE /* independent weighted draws of adaptive importance sampling: one
                        * "chain"; no R-hat; ESS, Kish's ESS and Pareto k of the weights */
} lt_post_method;

typedef struct lt_posterior {
    lt_post_method method;
    size_t nchains, ndraws;  /* draws per chain (the same for all) */
    size_t ncols;            /* columns per row, below */
    char **cols;             /* names: logpost, chi2, params..., derived... */
    size_t first_param, nparams, first_derived, nderived;
    double *rows;            /* nchains * ndraws rows of ncols, chain after chain */
    double best[LT_MAX_FREE];    /* the best draw, polished by the optimiser */
    lt_like_point at_best;
    double best_derived[LT_NDER + 2];
    double measured[LT_MAX_MEASUREMENTS]; /* each measured quantity at best */
    double z_pivot;          /* NaN unless w0-wa */
    lt_post_stats *stats;    /* per column from first_param on */
    double *cov;             /* nparams x nparams posterior covariance */
    int converged;
    double edge_lo[LT_MAX_FREE], edge_hi[LT_MAX_FREE]; /* lt_post_edge_density of each
                                                * parameter with a uniform prior, else NaN */
    lt_mcmc_diag diag;        /* of the chains as sampled (every draw, no weights): a
                               * copy the posterior owns */
    size_t warmup, steps;
    lt_sample_compression compression; /* filled by the caller, who ran the check */
    /* importance weights (lt_pipeline_mcmc_posterior with reweight): NULL when the
     * draws are unweighted */
    double *weights;          /* nchains * ndraws, mean 1; 0 outside the exact domain */
    size_t thin;              /* rows are every thin-th draw of each chain (1: all) */
    double ess_weighted[LT_MAX_FREE]; /* lt_diag_ess_weighted, smallest of mean, 5% and 95% */
    double ess_min_weighted;  /* the smallest of those */
    double kish_ess;          /* (sum w)^2 / sum w^2 */
    double pareto_k;          /* LT_POST_IMPORTANCE: lt_diag_pareto_k of the weights */
    double max_abs_dchi2;     /* largest |chi2_compressed - chi2_exact| of the rows */
    /* DIC (lt_dic_compute on the chi2 column, with the weights): NaN for
     * a Laplace posterior */
    double dic, p_v;
    /* nested sampling: the evidence (NaN for other methods) */
    double ln_z, ln_z_err, information;
    size_t live_points, iterations;
    size_t evals;             /* likelihood evaluations of the whole method: best fit, warm-up
                               * or adaptation, sampling, checks, polish (lt_like_work_evals) */
    int finished;             /* stopped by its tolerance, not its iteration cap (nested);
                               * importance sampling: the ESS target reached */
    int reweighted;           /* an earlier run's draws with added terms' weights
                               * (lantern reweight): evals counts the reweighting's */
    double *loglike;          /* nested: each draw's ln L as the sampler kept it; else NULL */
    lt_fit_result fit;        /* LT_POST_LAPLACE: the best fit it is made from */
} lt_posterior;

void lt_posterior_free(lt_posterior *p);

/* One model of a comparison (lantern compare): its likelihood, best fit,
 * nested samples and their posterior (moments, DIC, prior edges, the
 * evidence). The pipeline fills it in; reports read it. */
typedef struct lt_model_result {
    const char *name;       /* the model, as given */
    lt_like_spec spec;      /* what l was made from */
    lt_like *l;             /* owned */
    lt_fit_result fit;
    lt_posterior post;      /* of the nested run: its draws with ln L, and the evidence */
    int rc;                 /* of the model's run; err says what failed */
    lt_error err;
} lt_model_result;
void lt_model_result_free(lt_model_result *m);

/*
 * The summaries of p's draws (rows from first_param on, with p->weights
 * where there are some): each column's lt_post_stats, the density at the edges of each
 * uniform prior of priors (lt_post_edge_density; NaN for others), DIC and
 * p_V from the chi2 column, and for weighted chains (LT_POST_MCMC) each
 * parameter's importance-sampling ESS (lt_diag_ess_weighted: the smallest
 * of those of its mean and of its 5% and 95% quantiles) and Kish's ESS.
 * LT_ENOMEM.
 */
int lt_posterior_summarise(lt_posterior *p, const lt_prior *priors, lt_error *err);
/* The parameters' covariance into p->cov (weighted: the unbiased divisor
 * W - sum w^2 / W of reliability weights; n - 1 unweighted). Apart from
 * the summaries, as derived quantities such as w at the pivot need it
 * before they exist. */
void lt_posterior_covariance(lt_posterior *p);

#endif
