/*
 * lantern/inference.h - best fits and their errors (and, as they land,
 * samplers). Nothing here knows about files or cosmology: it works on an
 * objective function of a parameter vector.
 */
#ifndef LANTERN_INFERENCE_H
#define LANTERN_INFERENCE_H

#include <stddef.h>

#include "lantern/util.h"

/* The function to minimise: -2 ln(posterior) up to a constant, or +inf
 * where the parameters are impossible. */
typedef double (*lt_objective)(const double *x, void *ctx);

typedef struct lt_optim_opts {
    size_t dim;
    size_t nstarts;
    const double *starts; /* nstarts x dim starting points */
    const double *scale;  /* dim: a typical size of each parameter's range */
    double tol;           /* simplex size at which to stop, in units of scale */
    size_t max_evals;     /* per start and stage */
} lt_optim_opts;

typedef struct lt_optim_info {
    size_t evals;        /* objective calls in all */
    size_t best_start;   /* which start led to the optimum */
    int converged;       /* the best start met the tolerance, or 2+ starts agree */
    size_t agree;        /* starts that ended within 1e-6 of the best f */
} lt_optim_info;

/*
 * Minimise f from each start: GSL's Nelder-Mead simplex (nmsimplex2),
 * restarted at its own result until it stops improving, then a BFGS
 * polish (vector_bfgs2) on central-difference gradients, kept only if it
 * improves f. x_best (dim) and *f_best receive the best of all starts.
 * Fails with LT_ENUMERIC if no start reaches a finite value.
 */
int lt_optimize(lt_objective f, void *ctx, const lt_optim_opts *o, double *x_best,
                double *f_best, lt_optim_info *info, lt_error *err);

/*
 * The Laplace approximation at a minimum x of f = -2 ln P: the Hessian H
 * of f by central differences, and cov = 2 H^-1. Steps are a tenth of each
 * parameter's width, found in a first pass with steps of 1e-3 scale.
 * Returns LT_ENUMERIC (cov filled with NaN) where H is not positive
 * definite, and LT_EDOMAIN where a step leaves the prior or the physical
 * domain (a best fit at a prior edge), naming the parameter in *bad.
 */
int lt_laplace(lt_objective f, void *ctx, size_t dim, const double *x, const double *scale,
               double *cov, size_t *bad, lt_error *err);

/* ---------------------------------------------------------------------- */
/* Best fit of a likelihood                                                */
/* ---------------------------------------------------------------------- */

#include "lantern/likelihood.h"

typedef struct lt_fit_opts {
    unsigned long seed; /* for the random starts */
    size_t starts;      /* how many (the first is the centre of the prior) */
} lt_fit_opts;

typedef struct lt_fit_result {
    size_t dim;
    int id[LT_NPAR];
    double best[LT_NPAR];
    double sd[LT_NPAR];               /* Laplace sigma; NaN without one */
    double cov[LT_NPAR * LT_NPAR];    /* Laplace covariance */
    int laplace_ok;
    char laplace_note[LT_ERROR_MSG_MAX]; /* why not, if not */
    lt_like_point at_best;
    double f_best;                    /* -2 ln posterior at the best fit */
    long dof;
    double p_value;                   /* P(chi2 >= chi2_min) for dof */
    double aic, bic;                  /* chi2_min + 2k, chi2_min + k ln N */
    size_t k_counted;
    int has_der[LT_NDER];
    double der_best[LT_NDER], der_sd[LT_NDER];
    int has_pivot;                    /* w0-wa models */
    double z_pivot, w_pivot, w_pivot_sd;
    lt_optim_info info;
} lt_fit_result;

/* Fit l: starts drawn from the prior (seeded), lt_optimize, then
 * lt_laplace; derived parameters with errors by the delta method. */
int lt_fit_run(const lt_like *l, const lt_fit_opts *o, lt_fit_result *r, lt_error *err);

#endif
