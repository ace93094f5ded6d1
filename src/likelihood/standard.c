/*
 * The standardisation term: a light-curve table (mb, x1, colour, host
 * mass) fitted with its standardisation, by the latent-variable likelihood
 * or the common-practice chi2 (see lt_std_method in
 * include/lantern/likelihood.h), and the chi2 method's tuning of the
 * intrinsic scatter.
 *
 * Both reduce to one shape: the magnitudes mb against a prediction, with a
 * covariance F + diag(d(theta)), F the survey's covariance (err_mb^2 and any
 * systematic matrices or modes: lt_dcov) and d each object's
 * parameter-dependent variance.
 *
 * chi2: r_i = mb_i - (mu_i + M_g + gamma P_i - alpha x1_i + beta c_i),
 *   d_i = alpha^2 s_x^2 + beta^2 s_c^2 + 2 alpha C_mx - 2 beta C_mc
 *         - 2 alpha beta C_xc + sigma_g^2 + sigma_z^2 + sigma_lens^2,
 *   chi2 = r^T C^-1 r and nothing else (no ln det: with it the fit pulls
 *   alpha and beta low, as the simulation showed).
 *
 * latent (March et al. 2011): the true x1, c of object i are drawn from
 *   N(xm_g, xs_g^2), N(cm_g, cs_g^2) and its true magnitude scatters by
 *   sigma_g. Integrating them out, o_i = (mb, x1, c)_i is Gaussian with
 *   mean (mu_i + M_g + gamma P_i - alpha xm_g + beta cm_g, xm_g, cm_g) and
 *   covariance C_i + A diag(sigma_g^2, xs_g^2, cs_g^2) A^T, A = [[1, -alpha,
 *   beta], [0, 1, 0], [0, 0, 1]], C_i the measurement covariance. Written
 *   as p(x1, c) p(mb | x1, c), the first factor is a 2 x 2 Gaussian per
 *   object and the second a Gaussian in mb with the conditional mean and
 *   variance, to which the systematic part F adds (it acts on mb alone,
 *   independently of x1 and c), so the same dcov solve serves; its ln det
 *   and the 2 x 2 ones enter chi2_eff, so the likelihood is normalised.
 *   As xs_g, cs_g grow the conditional of mb tends to the chi2 method's
 *   residual and variance (tests/unit/test_standard.c checks it).
 *
 * Calibrators (hosts with an external distance modulus calib_mu) take
 * calib_mu in place of mu_i(z) and its error in place of sigma_z and
 * lensing; everything else is shared, so they fix M and h0 is freed.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "internal.h"

typedef struct lt_std {
    const lt_survey *s;
    lt_std_method method;
    size_t n, ngroups;
    size_t *g;          /* each object's group */
    lt_zgrid *grid;
    lt_dcov *cov;
    double *p_high;     /* P(log10 mass >= split) */
    double *v_extra;    /* sigma_z^2 + sigma_lens^2; a calibrator's err_calib_mu^2 */
    const double *calib_mu; /* a calibrator's distance modulus, NaN for the others; or NULL */
    double *vx, *vc, *cmx, *cmc, *cxc; /* measurement (co)variances; 0 where unmapped */
    int alpha_at, beta_at, gamma_at, offset_at; /* table indices (gamma: -1 without mass) */
    int goff_at[LT_STD_GROUPS_MAX];   /* offset@GROUP, or -1 */
    int sig_at[LT_STD_GROUPS_MAX];    /* sigma_int of each group (shared: all the same) */
    int xm_at[LT_STD_GROUPS_MAX], xs_at[LT_STD_GROUPS_MAX]; /* latent only */
    int cm_at[LT_STD_GROUPS_MAX], cs_at[LT_STD_GROUPS_MAX];
    double lognorm;
} lt_std;

typedef struct lt_std_work {
    double *dm; /* the distance moduli */
    double *r, *d, *x, *cov_work;
} lt_std_work;

/* ---- groups and parameters ---- */

static int by_name(const void *a, const void *b)
{
    return strcmp(*(const char *const *)a, *(const char *const *)b);
}

int lt_std_configure(lt_std_config *cf, const lt_survey *s, const lt_like_spec *spec,
                     lt_error *err)
{
    memset(cf, 0, sizeof *cf);
    cf->s = s, cf->spec = spec, cf->std = spec->std;
    const lt_lightcurve *lc = s->lc;
    if (!lc->group) {
        cf->ngroups = 1;
        return LT_OK;
    }
    cf->has_groups = 1;
    const char **names = malloc((s->n ? s->n : 1) * sizeof *names);
    if (!names)
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    memcpy(names, lc->group, s->n * sizeof *names);
    qsort(names, s->n, sizeof *names, by_name);
    for (size_t i = 0; i < s->n; i++) {
        if (i && !strcmp(names[i], names[i - 1]))
            continue;
        if (cf->ngroups == LT_STD_GROUPS_MAX) {
            free(names);
            return lt_error_set(err, LT_EINPUT, "--columns", 0,
                                "the group column holds more than %d labels; the "
                                "standardisation takes at most %d groups",
                                LT_STD_GROUPS_MAX, LT_STD_GROUPS_MAX);
        }
        snprintf(cf->group[cf->ngroups++], sizeof cf->group[0], "%s", names[i]);
    }
    free(names);
    return LT_OK;
}

/* name or name@GROUP into out (LT_NAME_MAX). */
static void group_name(const lt_std_config *cf, const char *name, size_t g, char *out)
{
    if (cf->has_groups)
        snprintf(out, LT_NAME_MAX, "%s@%s", name, cf->group[g]);
    else
        snprintf(out, LT_NAME_MAX, "%s", name);
}

/* The chi2 method's starting scatter before tuning (common practice puts
 * sigma_int near 0.1 mag; the tuning moves it). */
#define SCATTER_START 0.1

static void push(lt_term_needs *needs, const char *name, int fixed, double value)
{
    if (needs->nown == LT_TERM_OWN_MAX) {
        needs->overflow = 1;
        return;
    }
    lt_term_param *p = &needs->own[needs->nown++];
    snprintf(p->name, sizeof p->name, "%s", name);
    p->prior = lt_param_default_prior(name, LT_OBS_MB);
    p->fixed = fixed, p->value = value;
}

/* alpha, beta, gamma (with masses), offset, offset@GROUP where a setting
 * asks for one, sigma_int (shared or per group; fixed for the chi2 method),
 * and the latent method's populations. h0 only with calibrators: without
 * them it is degenerate with M (offset is then M at h0 = 70). */
static void std_needs(const void *config, lt_term_needs *needs)
{
    const lt_std_config *cf = config;
    char name[LT_NAME_MAX];
    if (cf->s->lc->ncalibrators)
        needs->h0 = 1;
    push(needs, "alpha", 0, 0.0);
    push(needs, "beta", 0, 0.0);
    if (cf->s->lc->mass)
        push(needs, "gamma", 0, 0.0);
    push(needs, "offset", 0, 0.0);
    for (size_t g = 0; cf->has_groups && g < cf->ngroups; g++) {
        group_name(cf, "offset", g, name);
        if (lt_like_spec_setting(cf->spec, name))
            push(needs, name, 0, 0.0);
    }
    int chi2 = cf->std.method == LT_STD_CHI2;
    if (cf->std.shared_scatter || !cf->has_groups)
        push(needs, "sigma_int", chi2, SCATTER_START);
    else
        for (size_t g = 0; g < cf->ngroups; g++)
            group_name(cf, "sigma_int", g, name), push(needs, name, chi2, SCATTER_START);
    if (!chi2) {
        static const char *pop[] = {"x1_mean", "x1_sd", "color_mean", "color_sd"};
        for (size_t g = 0; g < cf->ngroups; g++)
            for (int k = 0; k < 4; k++)
                group_name(cf, pop[k], g, name), push(needs, name, 0, 0.0);
    }
}

/* ---- set-up ---- */

static void std_free(void *state)
{
    lt_std *t = state;
    if (!t)
        return;
    free(t->g);
    lt_zgrid_free(t->grid);
    lt_dcov_free(t->cov);
    free(t->p_high);
    free(t->v_extra);
    free(t->vx);
    free(t->vc);
    free(t->cmx);
    free(t->cmc);
    free(t->cxc);
    free(t);
}

/* Column a (or 0 where unmapped), squared if sq. */
static void column(double *out, const double *a, size_t n, int sq)
{
    for (size_t i = 0; i < n; i++)
        out[i] = a ? (sq ? a[i] * a[i] : a[i]) : 0.0;
}

static void *std_setup(const void *config, const lt_like *l, lt_error *err)
{
    const lt_std_config *cf = config;
    const lt_survey *s = cf->s;
    const lt_lightcurve *lc = s->lc;
    size_t n = s->n;
    lt_std *t = calloc(1, sizeof *t);
    if (!t)
        goto nomem;
    t->s = s, t->method = cf->std.method, t->n = n, t->ngroups = cf->ngroups;
    size_t m = n ? n : 1;
    t->g = calloc(m, sizeof *t->g);
    t->p_high = malloc(m * sizeof *t->p_high);
    t->v_extra = malloc(m * sizeof *t->v_extra);
    t->vx = malloc(m * sizeof *t->vx), t->vc = malloc(m * sizeof *t->vc);
    t->cmx = malloc(m * sizeof *t->cmx), t->cmc = malloc(m * sizeof *t->cmc);
    t->cxc = malloc(m * sizeof *t->cxc);
    if (!t->g || !t->p_high || !t->v_extra || !t->vx || !t->vc || !t->cmx || !t->cmc || !t->cxc)
        goto nomem;
    if (!(t->grid = lt_zgrid_alloc(n, s->z, err)) || !(t->cov = lt_dcov_alloc(s->cov, err)))
        goto fail;
    column(t->vx, lc->err_x1, n, 1);
    column(t->vc, lc->err_color, n, 1);
    column(t->cmx, lc->cov_mb_x1, n, 0);
    column(t->cmc, lc->cov_mb_color, n, 0);
    column(t->cxc, lc->cov_x1_color, n, 0);
    const double k5 = 5.0 / M_LN10, beta_v = cf->std.velocity_dispersion / LT_C_KM_S;
    t->calib_mu = lc->ncalibrators ? lc->calib_mu : NULL;
    for (size_t i = 0; i < n; i++) {
        double z = s->z[i], dz = lc->dz ? lc->dz[i] : 0.0;
        /* lantern simulate's sigma_pv, with the redshift error beside the
         * velocity, and lensing (Jonsson et al. 2010) */
        double sz = k5 * sqrt(dz * dz + beta_v * beta_v) * (1.0 + z) / (z * (1.0 + 0.5 * z));
        double sl = LT_STD_LENSING * z;
        t->v_extra[i] = sz * sz + sl * sl;
        /* a calibrator's distance is its own (Cepheids, TRGB): neither its
         * redshift nor lensing enters, only the distance's error */
        if (lc->calibrator && lc->calibrator[i]) {
            double e = lc->err_calib_mu && !isnan(lc->err_calib_mu[i]) ? lc->err_calib_mu[i]
                                                                      : 0.0; /* NaN: a joined
                                                                              * table without */
            t->v_extra[i] = e * e;
        }
        if (!lc->mass)
            t->p_high[i] = 0.0;
        else if (lc->err_mass)
            t->p_high[i] = 0.5 * erfc(-(lc->mass[i] - cf->std.mass_split) /
                                      (M_SQRT2 * lc->err_mass[i]));
        else
            t->p_high[i] = lc->mass[i] >= cf->std.mass_split;
        if (lc->group) {
            size_t g = 0;
            while (strcmp(cf->group[g], lc->group[i]))
                g++;
            t->g[i] = g;
        }
    }
    t->alpha_at = lt_like_entry(l, "alpha");
    t->beta_at = lt_like_entry(l, "beta");
    t->gamma_at = lt_like_entry(l, "gamma");
    t->offset_at = lt_like_entry(l, "offset");
    char name[LT_NAME_MAX];
    for (size_t g = 0; g < cf->ngroups; g++) {
        t->goff_at[g] = -1;
        if (cf->has_groups)
            group_name(cf, "offset", g, name), t->goff_at[g] = lt_like_entry(l, name);
        if (cf->std.shared_scatter || !cf->has_groups)
            t->sig_at[g] = lt_like_entry(l, "sigma_int");
        else
            group_name(cf, "sigma_int", g, name), t->sig_at[g] = lt_like_entry(l, name);
        if (t->method == LT_STD_LATENT) {
            group_name(cf, "x1_mean", g, name), t->xm_at[g] = lt_like_entry(l, name);
            group_name(cf, "x1_sd", g, name), t->xs_at[g] = lt_like_entry(l, name);
            group_name(cf, "color_mean", g, name), t->cm_at[g] = lt_like_entry(l, name);
            group_name(cf, "color_sd", g, name), t->cs_at[g] = lt_like_entry(l, name);
        }
    }
    /* the latent likelihood's theta-dependent ln dets are in chi2_eff; the
     * chi2 method's constant is that of the magnitudes' own covariance, a
     * number of the data (ln Z is then comparable only between runs of the
     * same method, data and scatter) */
    t->lognorm = t->method == LT_STD_LATENT
                     ? -1.5 * (double)n * log(2.0 * M_PI)
                     : -0.5 * ((double)n * log(2.0 * M_PI) + lt_cov_logdet(s->cov));
    return t;
nomem:
    lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
fail:
    std_free(t);
    return NULL;
}

static void std_work_free(void *work)
{
    lt_std_work *w = work;
    if (!w)
        return;
    free(w->dm);
    free(w->r);
    free(w->d);
    free(w->x);
    free(w->cov_work);
    free(w);
}

static void *std_work_alloc(const void *state)
{
    const lt_std *t = state;
    lt_std_work *w = calloc(1, sizeof *w);
    if (!w)
        return NULL;
    size_t m = t->n ? t->n : 1;
    w->dm = malloc(m * sizeof *w->dm);
    w->r = malloc(m * sizeof *w->r);
    w->d = malloc(m * sizeof *w->d);
    w->x = malloc(m * sizeof *w->x);
    w->cov_work = malloc(lt_dcov_work_size(t->cov) * sizeof *w->cov_work);
    if (!w->dm || !w->r || !w->d || !w->x || !w->cov_work) {
        std_work_free(w);
        return NULL;
    }
    return w;
}

/* ---- evaluation ---- */

/* The residuals r and extra variances d of the magnitudes at values (and
 * the latent method's chi2 and ln dets of (x1, c) into *q_xc, *ld_xc);
 * -1 outside the domain. */
static int residuals(const lt_std *t, lt_std_work *w, const lt_cosmo *c, const double *values,
                     double *q_xc, double *ld_xc)
{
    const lt_survey *s = t->s;
    if (lt_like_distmod(c, t->grid, s->zhel, w->dm))
        return -1;
    const lt_lightcurve *lc = s->lc;
    double alpha = values[t->alpha_at], beta = values[t->beta_at];
    double gamma = t->gamma_at >= 0 ? values[t->gamma_at] : 0.0, m0 = values[t->offset_at];
    double q = 0.0, ld = 0.0;
    for (size_t i = 0; i < t->n; i++) {
        size_t g = t->g[i];
        double mu = t->calib_mu && !isnan(t->calib_mu[i]) ? t->calib_mu[i] : w->dm[i];
        double mg = m0 + (t->goff_at[g] >= 0 ? values[t->goff_at[g]] : 0.0) +
                    gamma * t->p_high[i];
        double sig = values[t->sig_at[g]];
        if (t->method == LT_STD_CHI2) {
            w->r[i] = s->obs[i] - (mu + mg - alpha * lc->x1[i] + beta * lc->color[i]);
            w->d[i] = alpha * alpha * t->vx[i] + beta * beta * t->vc[i] +
                      2.0 * alpha * t->cmx[i] - 2.0 * beta * t->cmc[i] -
                      2.0 * alpha * beta * t->cxc[i] + sig * sig + t->v_extra[i];
            continue;
        }
        double xm = values[t->xm_at[g]], xs = values[t->xs_at[g]];
        double cm = values[t->cm_at[g]], cs = values[t->cs_at[g]];
        double rx2 = xs * xs, rc2 = cs * cs;
        /* (x1, c): N((xm, cm), [[sxx, cxc], [cxc, scc]]) */
        double sxx = t->vx[i] + rx2, scc = t->vc[i] + rc2, sxc = t->cxc[i];
        double det = sxx * scc - sxc * sxc;
        if (!(det > 0.0))
            return -1;
        double dx = lc->x1[i] - xm, dc = lc->color[i] - cm;
        q += (scc * dx * dx - 2.0 * sxc * dx * dc + sxx * dc * dc) / det;
        ld += log(det);
        /* mb given (x1, c): b = Cov(mb, (x1, c)), k = Sigma_xc^-1 b */
        double b1 = t->cmx[i] - alpha * rx2, b2 = t->cmc[i] + beta * rc2;
        double k1 = (scc * b1 - sxc * b2) / det, k2 = (sxx * b2 - sxc * b1) / det;
        w->r[i] = s->obs[i] - (mu + mg - alpha * xm + beta * cm + k1 * dx + k2 * dc);
        w->d[i] = sig * sig + alpha * alpha * rx2 + beta * beta * rc2 + t->v_extra[i] -
                  (b1 * k1 + b2 * k2);
    }
    *q_xc = q, *ld_xc = ld;
    return 0;
}

static int std_eval(const void *state, void *work, const lt_term_in *in, lt_term_out *out)
{
    const lt_std *t = state;
    lt_std_work *w = work;
    double q_xc = 0.0, ld_xc = 0.0, q, ld;
    if (residuals(t, w, in->cosmo, in->values, &q_xc, &ld_xc) ||
        lt_dcov_solve(t->cov, w->d, w->r, NULL, w->cov_work, &q, &ld))
        return -1;
    out->chi2 = q + q_xc;
    out->chi2_eff = t->method == LT_STD_LATENT ? out->chi2 + ld + ld_xc : out->chi2;
    out->offset = in->values[t->offset_at];
    return 0;
}

/* A start for a fit: alpha and beta near the values of common practice
 * (0.14 and 3.1, Betoule et al. 2014), sigma_int 0.1, and each group's
 * populations from its objects' mean and spread of x1 and colour (the
 * spread less the mean measurement variance, at least a tenth of it). */
static void std_guess(const void *state, double *values)
{
    const lt_std *t = state;
    const lt_lightcurve *lc = t->s->lc;
    values[t->alpha_at] = 0.14, values[t->beta_at] = 3.1;
    for (size_t g = 0; g < t->ngroups; g++) {
        values[t->sig_at[g]] = SCATTER_START;
        if (t->method != LT_STD_LATENT)
            continue;
        double n = 0, sx = 0, sxx = 0, ex = 0, sc = 0, scc = 0, ec = 0;
        for (size_t i = 0; i < t->n; i++)
            if (t->g[i] == g) {
                double x = lc->x1[i], c = lc->color[i];
                n += 1, sx += x, sxx += x * x, sc += c, scc += c * c;
                ex += t->vx[i], ec += t->vc[i];
            }
        if (n < 2)
            continue;
        double mx = sx / n, mc = sc / n;
        double vx = sxx / n - mx * mx, vc = scc / n - mc * mc;
        values[t->xm_at[g]] = mx, values[t->cm_at[g]] = mc;
        values[t->xs_at[g]] = sqrt(fmax(vx - ex / n, 0.1 * vx));
        values[t->cs_at[g]] = sqrt(fmax(vc - ec / n, 0.1 * vc));
    }
}

/* latent: (mb, x1, c) of every object; chi2: the magnitudes */
static size_t std_ndata(const void *state)
{
    const lt_std *t = state;
    return t->method == LT_STD_LATENT ? 3 * t->n : t->n;
}

static double std_lognorm(const void *state) { return ((const lt_std *)state)->lognorm; }

const lt_term_type lt_term_std = {.name = "standardisation",
                                  .add_params = std_needs,
                                  .setup = std_setup,
                                  .work_alloc = std_work_alloc,
                                  .work_free = std_work_free,
                                  .eval = std_eval,
                                  .ndata = std_ndata,
                                  .lognorm = std_lognorm,
                                  .free = std_free,
                                  .guess = std_guess};

/* ---- the chi2 method's scatter ---- */

/* The chi2 of each group, r_g^T (C^-1 r)_g (they sum to the whole chi2),
 * at theta with the table's current scatter; -1 outside the domain. */
static int group_chi2(const lt_std *t, lt_std_work *w, const double *values,
                      const lt_cosmo *c, double *chi2_g)
{
    double q_xc, ld_xc, q, ld;
    if (residuals(t, w, c, values, &q_xc, &ld_xc) ||
        lt_dcov_solve(t->cov, w->d, w->r, w->x, w->cov_work, &q, &ld))
        return -1;
    for (size_t g = 0; g < t->ngroups; g++)
        chi2_g[g] = 0.0;
    for (size_t i = 0; i < t->n; i++)
        chi2_g[t->g[i]] += w->r[i] * w->x[i];
    return 0;
}

/* The chi2 of the objects whose scatter is table entry at, with that entry
 * set to x (left there), into *res; LT_EDOMAIN if C is not positive
 * definite. */
static int entry_chi2(const lt_std *t, lt_std_work *w, double *values, const lt_cosmo *c, int at,
                      double x, double *res, lt_error *err)
{
    double chi2_g[LT_STD_GROUPS_MAX];
    values[at] = x;
    if (group_chi2(t, w, values, c, chi2_g))
        return lt_error_set(err, LT_EDOMAIN, NULL, 0,
                            "the covariance is not positive definite while tuning sigma_int");
    *res = 0.0;
    for (size_t g = 0; g < t->ngroups; g++)
        if (t->sig_at[g] == at)
            *res += chi2_g[g];
    return LT_OK;
}

int lt_like_scatter_tune(lt_like *l, const double *theta, lt_scatter_tune *out, lt_error *err)
{
    memset(out, 0, sizeof *out);
    if (!l->std || !l->ntune)
        return LT_OK;
    const lt_std *t = l->std;
    lt_std_work *w = std_work_alloc(t);
    if (!w)
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    double values[LT_MAX_PARAMS];
    lt_cosmo_params p;
    lt_like_values(l, theta, values, &p);
    lt_cosmo c;
    int rc = LT_OK;
    if (lt_cosmo_init(&c, l->model, &p, NULL) != LT_OK) {
        rc = lt_error_set(err, LT_EDOMAIN, NULL, 0, "the best fit is outside the physical domain");
        goto done;
    }
    /* each scatter entry and the objects it serves */
    size_t nobj[LT_STD_GROUPS_MAX] = {0};
    for (size_t i = 0; i < t->n; i++)
        nobj[t->g[i]]++;
    out->n = l->ntune;
    double frac = 1.0 - (double)l->dim / (double)t->n;
    /* Gauss-Seidel over the entries: each solved by bisection in sigma with
     * the others held (with a diagonal covariance one sweep is exact; a
     * systematic part couples the groups a little) */
    for (int sweep = 0; sweep < 50; sweep++) {
        double moved = 0.0;
        for (size_t e = 0; e < l->ntune; e++) {
            int at = l->tune_at[e];
            size_t ne = 0;
            for (size_t g = 0; g < t->ngroups; g++)
                if (t->sig_at[g] == at)
                    ne += nobj[g];
            double target = (double)ne * frac, old = values[at];
            double f0, lo = 0.0, hi = 0.5, fhi, sigma = 0.0;
            if ((rc = entry_chi2(t, w, values, &c, at, 0.0, &f0, err)))
                goto done;
            if (f0 > target) {
                if ((rc = entry_chi2(t, w, values, &c, at, hi, &fhi, err)))
                    goto done;
                while (fhi > target && hi < 100.0) {
                    lo = hi, hi *= 2.0;
                    if ((rc = entry_chi2(t, w, values, &c, at, hi, &fhi, err)))
                        goto done;
                }
                for (int it = 0; it < 100 && hi - lo > 1e-10; it++) {
                    double mid = 0.5 * (lo + hi), fm;
                    if ((rc = entry_chi2(t, w, values, &c, at, mid, &fm, err)))
                        goto done;
                    if (fm > target)
                        lo = mid;
                    else
                        hi = mid;
                }
                sigma = 0.5 * (lo + hi);
            }
            values[at] = sigma;
            moved = fmax(moved, fabs(sigma - old));
            out->name[e] = l->par[at].name;
            out->sigma[e] = sigma;
            out->dof[e] = target;
            out->nobj[e] = ne;
            out->at_zero[e] = sigma == 0.0;
        }
        if (moved < 1e-9)
            break;
    }
    for (size_t e = 0; e < l->ntune; e++) {
        double change = fabs(l->par[l->tune_at[e]].value - out->sigma[e]);
        out->max_change = fmax(out->max_change, change);
        l->par[l->tune_at[e]].value = out->sigma[e];
    }
    l->tuned = 1;
done:
    std_work_free(w);
    return rc;
}

int lt_like_scatter_untuned(const lt_like *l) { return l->std && l->ntune && !l->tuned; }

size_t lt_like_scatter_tuned(const lt_like *l, const char **names, double *sigma)
{
    if (!l->std)
        return 0;
    for (size_t e = 0; e < l->ntune; e++) {
        if (names)
            names[e] = l->par[l->tune_at[e]].name;
        if (sigma)
            sigma[e] = l->par[l->tune_at[e]].value;
    }
    return l->ntune;
}
