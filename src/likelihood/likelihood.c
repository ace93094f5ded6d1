/*
 * The supernova likelihood: see include/lantern/likelihood.h.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "lantern/text.h"
#include "compress.h"
#include "lantern/rng.h"
#include "lantern/likelihood.h"

/* ---- parameter names ---- */
const char *lt_par_name(int id)
{
    return id == LT_PAR_OFFSET ? "offset" : lt_cosmo_param_name(id);
}

int lt_par_find(const char *name)
{
    if (name && !strcmp(name, "offset"))
        return LT_PAR_OFFSET;
    return lt_cosmo_param_find(name);
}

const char *lt_offset_name(lt_offset_mode m)
{
    switch (m) {
    case LT_OFFSET_NONE: return "none";
    case LT_OFFSET_MARGINAL: return "marginal";
    case LT_OFFSET_SAMPLED: return "sampled";
    default: return "default";
    }
}

int lt_offset_parse(const char *text)
{
    if (!strcmp(text, "none"))
        return LT_OFFSET_NONE;
    if (!strcmp(text, "marginal"))
        return LT_OFFSET_MARGINAL;
    if (!strcmp(text, "sampled"))
        return LT_OFFSET_SAMPLED;
    return -1;
}

/* ---- priors ---- */
int lt_prior_parse(const char *text, lt_prior *p, lt_error *err)
{
    char buf[256];
    if (strlen(text) >= sizeof buf)
        return lt_error_set(err, LT_EINPUT, NULL, 0, "prior '%.40s...' is too long", text);
    strcpy(buf, text);
    char *f[4] = {0};
    int n = 0;
    for (char *s = buf; n < 4;) {
        f[n++] = s;
        char *c = strchr(s, ':');
        if (!c)
            break;
        *c = '\0';
        s = c + 1;
    }
    double a, b;
    if (n != 3 || lt_parse_double(f[1], &a) || lt_parse_double(f[2], &b))
        return lt_error_set(err, LT_EINPUT, NULL, 0,
                            "prior '%s' is not uniform:LO:HI or gauss:MEAN:SD", text);
    if (!strcmp(f[0], "uniform")) {
        if (!(a < b))
            return lt_error_set(err, LT_EINPUT, NULL, 0,
                                "prior '%s': impossible bounds, need LO < HI", text);
        *p = (lt_prior){LT_PRIOR_UNIFORM, a, b};
    } else if (!strcmp(f[0], "gauss")) {
        if (!(b > 0))
            return lt_error_set(err, LT_EINPUT, NULL, 0,
                                "prior '%s': the standard deviation must be > 0", text);
        *p = (lt_prior){LT_PRIOR_GAUSS, a, b};
    } else {
        return lt_error_set(err, LT_EINPUT, NULL, 0,
                            "prior '%s': the kind must be uniform or gauss", text);
    }
    return LT_OK;
}

double lt_prior_logpdf(const lt_prior *p, double x)
{
    if (p->kind == LT_PRIOR_UNIFORM)
        return x >= p->a && x <= p->b ? -log(p->b - p->a) : -INFINITY;
    double u = (x - p->a) / p->b;
    return -0.5 * u * u - log(p->b) - 0.5 * log(2.0 * M_PI);
}

void lt_prior_format(const lt_prior *p, char *buf, size_t size)
{
    snprintf(buf, size, p->kind == LT_PRIOR_UNIFORM ? "U(%g, %g)" : "N(%g, %g)", p->a, p->b);
}

lt_prior lt_prior_default(int id, lt_obs kind)
{
    switch (id) {
    case LT_P_H0: return (lt_prior){LT_PRIOR_UNIFORM, 40, 100};
    case LT_P_OMEGA_M: return (lt_prior){LT_PRIOR_UNIFORM, 0, 1};
    case LT_P_OMEGA_DE: return (lt_prior){LT_PRIOR_UNIFORM, 0, 1.6};
    case LT_P_W0: return (lt_prior){LT_PRIOR_UNIFORM, -2, 0};
    case LT_P_WA: return (lt_prior){LT_PRIOR_UNIFORM, -3, 2};
    case LT_PAR_OFFSET:
        return kind == LT_OBS_MAG ? (lt_prior){LT_PRIOR_UNIFORM, -21, -17}
                                  : (lt_prior){LT_PRIOR_UNIFORM, -2, 2};
    default: return (lt_prior){LT_PRIOR_UNIFORM, 0, 0};
    }
}

void lt_like_spec_init(lt_like_spec *s, const lt_cosmo_model *m)
{
    memset(s, 0, sizeof *s);
    s->model = m;
    s->offset = LT_OFFSET_DEFAULT;
}

/* ---- the likelihood ---- */
struct lt_like {
    const lt_survey *s;
    const lt_cosmo_model *model;
    lt_offset_mode offset;
    size_t dim;
    int id[LT_NPAR];
    lt_prior prior[LT_NPAR];
    lt_cosmo_params base;
    int h0_known;
    lt_zgrid *grid;
    double *cinv1;    /* C^-1 1 (marginal offset) */
    double c_sum;     /* 1^T C^-1 1 */
    double ln_c_term; /* ln(C / 2 pi) */
    lt_compress *cmp; /* the compressed path, or NULL */
    double max_dchi2;
};

struct lt_like_work {
    double *dm, *r, *cov_work;
    double *gk, *dmk, *dg, *fdg; /* compressed path: K each */
};

size_t lt_like_dim(const lt_like *l) { return l->dim; }
int lt_like_param_id(const lt_like *l, size_t i) { return l->id[i]; }
const lt_prior *lt_like_prior(const lt_like *l, size_t i) { return &l->prior[i]; }
lt_offset_mode lt_like_offset_mode(const lt_like *l) { return l->offset; }
const lt_survey *lt_like_survey(const lt_like *l) { return l->s; }
const lt_cosmo_model *lt_like_model(const lt_like *l) { return l->model; }
const lt_cosmo_params *lt_like_base(const lt_like *l) { return &l->base; }
int lt_like_h0_known(const lt_like *l) { return l->h0_known; }

long lt_like_dof(const lt_like *l)
{
    return (long)l->s->n - (long)l->dim - (l->offset == LT_OFFSET_MARGINAL);
}

size_t lt_like_nparams_counted(const lt_like *l)
{
    return l->dim + (l->offset == LT_OFFSET_MARGINAL);
}

void lt_like_free(lt_like *l)
{
    if (!l)
        return;
    lt_zgrid_free(l->grid);
    free(l->cinv1);
    lt_compress_free(l->cmp);
    free(l);
}

static int check_spec(const lt_survey *s, const lt_like_spec *spec, lt_offset_mode offset,
                      lt_error *err)
{
    const lt_cosmo_model *m = spec->model;
    for (int id = 0; id < LT_NPAR; id++) {
        if (!spec->has_prior[id] && !spec->has_fix[id])
            continue;
        const char *name = lt_par_name(id), *what = spec->has_prior[id] ? "--prior" : "--fix";
        if (spec->has_prior[id] && spec->has_fix[id])
            return lt_error_set(err, LT_EINPUT, "--prior", 0,
                                "%s has both a prior and a fixed value; give one", name);
        if (id == LT_PAR_OFFSET) {
            if (s->kind == LT_OBS_DL)
                return lt_error_set(err, LT_EINPUT, what, 0,
                                    "dl data have no offset; drop the %s on offset", what);
            continue;
        }
        if (id == LT_P_OMEGA_DE && m->flat)
            return lt_error_set(err, LT_EINPUT, what, 0,
                                "omega_de is derived in the flat model %s (1 - omega_m - "
                                "omega_r); use a curved model to constrain it",
                                m->name);
        if (!lt_cosmo_model_uses(m, id))
            return lt_error_set(err, LT_EINPUT, what, 0, "model %s has no parameter %s",
                                m->name, name);
        if ((id == LT_P_T_CMB || id == LT_P_N_EFF) && spec->has_prior[id])
            return lt_error_set(err, LT_EINPUT, "--prior", 0,
                                "%s can be fixed (--fix %s=...) but not fitted", name, name);
        if (id == LT_P_H0 && spec->has_prior[id] && offset == LT_OFFSET_MARGINAL)
            return lt_error_set(err, LT_EINPUT, "--prior", 0,
                                "h0 is degenerate with the marginalised offset of mag data; "
                                "give a prior on offset (an absolute-magnitude calibration) to "
                                "fit both");
    }
    return LT_OK;
}

static void fill_params(const lt_like *l, const double *theta, lt_cosmo_params *p,
                        double *offset);

/* A test point for the compression: inside the prior and the domain. */
static int test_point(const lt_like *l, lt_rng *r, double *x)
{
    for (int tries = 0; tries < 1000; tries++) {
        for (size_t i = 0; i < l->dim; i++) {
            const lt_prior *p = &l->prior[i];
            x[i] = p->kind == LT_PRIOR_UNIFORM ? p->a + (p->b - p->a) * lt_rng_uniform(r)
                                               : p->a + p->b * lt_rng_normal(r);
        }
        lt_cosmo c;
        double off;
        lt_cosmo_params q;
        fill_params(l, x, &q, &off);
        if (lt_cosmo_init(&c, l->model, &q, NULL) == LT_OK && lt_cosmo_e2(&c, 0) > 0)
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
static int compress(lt_like *l, lt_error *err)
{
    const lt_survey *s = l->s;
    double xmin = INFINITY, xmax = -INFINITY;
    for (size_t i = 0; i < s->n; i++)
        xmin = fmin(xmin, log1p(s->z[i])), xmax = fmax(xmax, log1p(s->z[i]));
    size_t K = (size_t)ceil((xmax - xmin) / 0.04) + 1;
    if (K < 12)
        K = 12;
    if (2 * K > s->n)
        return LT_OK; /* a survey this small is cheaper to evaluate exactly */
    lt_cosmo fid;
    if (fiducial(l, &fid, err))
        return err ? err->code : LT_EINPUT;
    enum { NT = 48 };
    double pts[NT][LT_NPAR], exact[NT];
    lt_rng r;
    lt_rng_seed(&r, 20261202, 0);
    lt_like_work *w = lt_like_work_alloc(l);
    if (!w)
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    size_t best = 0;
    int have = 0;
    lt_like_point pt;
    for (int k = 0; k < NT / 2; k++) {
        if (test_point(l, &r, pts[k]) == 0) {
            lt_like_eval_exact(l, w, pts[k], &pt);
            exact[k] = pt.domain_ok ? pt.chi2 : INFINITY;
        } else {
            exact[k] = INFINITY;
        }
        if (exact[k] < exact[best] || !have)
            best = (size_t)k, have = isfinite(exact[k]);
    }
    for (int k = NT / 2; k < NT; k++) {
        for (size_t i = 0; i < l->dim; i++)
            pts[k][i] = pts[best][i] + 0.05 * (pts[k - NT / 2][i] - pts[best][i]);
        lt_like_eval_exact(l, w, pts[k], &pt);
        exact[k] = pt.domain_ok ? pt.chi2 : INFINITY;
    }
    lt_like_work_free(w);
    double chi2_best = INFINITY;
    for (int k = 0; k < NT; k++)
        chi2_best = fmin(chi2_best, exact[k]);
    for (;;) {
        lt_compress_free(l->cmp);
        if (!(l->cmp = lt_compress_alloc(s, &fid, K, err)))
            return err ? err->code : LT_ENOMEM;
        lt_like_work *wc = lt_like_work_alloc(l);
        if (!wc)
            return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        double worst = 0.0;
        for (int k = 0; k < NT; k++) {
            if (!(exact[k] < chi2_best + 50.0))
                continue;
            lt_like_eval(l, wc, pts[k], &pt);
            worst = fmax(worst, pt.domain_ok ? fabs(pt.chi2 - exact[k]) : INFINITY);
        }
        lt_like_work_free(wc);
        /* Stop when accurate enough, when K is large, or when doubling K no
         * longer helps fourfold: then the interpolation no longer sets the
         * difference (seen at 10^6 objects; rounding in long sums is the
         * suspect, not yet proven). */
        int stalled = worst > 0.25 * l->max_dchi2 && K > 12;
        double prev = l->max_dchi2;
        l->max_dchi2 = worst;
        if (worst < 2e-4 || K >= 200 || (stalled && prev > 0))
            break;
        K *= 2;
    }
    if (2 * K > s->n) { /* no gain over the exact path */
        lt_compress_free(l->cmp);
        l->cmp = NULL;
    }
    return LT_OK;
}

lt_like *lt_like_alloc(const lt_survey *s, const lt_like_spec *spec, lt_error *err)
{
    if (!spec->model) {
        lt_error_set(err, LT_EINPUT, "--model", 0, "no model given");
        return NULL;
    }
    lt_offset_mode offset = spec->offset;
    if (offset == LT_OFFSET_DEFAULT)
        offset = spec->has_prior[LT_PAR_OFFSET] ? LT_OFFSET_SAMPLED
                 : s->kind == LT_OBS_MAG        ? LT_OFFSET_MARGINAL
                                                : LT_OFFSET_NONE;
    if (offset != LT_OFFSET_NONE && s->kind == LT_OBS_DL) {
        lt_error_set(err, LT_EINPUT, "--offset", 0, "dl data have no offset");
        return NULL;
    }
    if (offset == LT_OFFSET_NONE && s->kind == LT_OBS_MAG) {
        lt_error_set(err, LT_EINPUT, "--offset", 0,
                     "mag data need an offset (the absolute magnitude): marginal or sampled");
        return NULL;
    }
    if (spec->has_prior[LT_PAR_OFFSET] && offset == LT_OFFSET_MARGINAL) {
        lt_error_set(err, LT_EINPUT, "--prior", 0,
                     "a prior on offset makes it sampled; it cannot also be marginalised");
        return NULL;
    }
    if (spec->has_fix[LT_PAR_OFFSET] && offset != LT_OFFSET_SAMPLED &&
        spec->offset != LT_OFFSET_DEFAULT) {
        lt_error_set(err, LT_EINPUT, "--fix", 0,
                     "a fixed offset needs the offset mode 'sampled' (or no --offset)");
        return NULL;
    }
    if (spec->has_fix[LT_PAR_OFFSET])
        offset = LT_OFFSET_SAMPLED; /* a fixed offset is a sampled one that does not move */
    if (check_spec(s, spec, offset, err))
        return NULL;

    lt_like *l = calloc(1, sizeof *l);
    if (!l) {
        lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        return NULL;
    }
    l->s = s;
    l->model = spec->model;
    l->offset = offset;
    lt_cosmo_params_default(&l->base);
    for (int id = 0; id < LT_P_COUNT; id++)
        if (spec->has_fix[id])
            *lt_cosmo_params_slot(&l->base, id) = spec->fix[id];
    /* The free parameters, in id order. */
    for (int id = 0; id < LT_NPAR; id++) {
        if (spec->has_fix[id])
            continue;
        int free_par;
        if (id == LT_PAR_OFFSET)
            free_par = offset == LT_OFFSET_SAMPLED;
        else if (id == LT_P_T_CMB || id == LT_P_N_EFF || !lt_cosmo_model_uses(l->model, id))
            free_par = 0;
        else if (id == LT_P_H0)
            free_par = offset != LT_OFFSET_MARGINAL;
        else
            free_par = 1;
        if (!free_par)
            continue;
        l->id[l->dim] = id;
        l->prior[l->dim] = spec->has_prior[id] ? spec->prior[id] : lt_prior_default(id, s->kind);
        l->dim++;
    }
    l->h0_known = spec->has_fix[LT_P_H0] || offset != LT_OFFSET_MARGINAL;
    lt_cosmo c;
    if (lt_cosmo_init(&c, l->model, &l->base, err))
        goto fail;
    l->grid = lt_zgrid_alloc(s->n, s->z, err);
    if (!l->grid)
        goto fail;
    if (offset == LT_OFFSET_MARGINAL) {
        size_t n = s->n;
        double *ones = malloc(n * sizeof *ones);
        double *work = malloc(lt_cov_work_size(s->cov) * sizeof *work);
        l->cinv1 = malloc(n * sizeof *l->cinv1);
        if (!ones || !work || !l->cinv1) {
            free(ones);
            free(work);
            lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
            goto fail;
        }
        for (size_t i = 0; i < n; i++)
            ones[i] = 1.0;
        lt_cov_solve(s->cov, ones, l->cinv1, work);
        l->c_sum = 0.0;
        for (size_t i = 0; i < n; i++)
            l->c_sum += l->cinv1[i];
        l->ln_c_term = log(l->c_sum / (2.0 * M_PI));
        free(ones);
        free(work);
    }
    if (!spec->exact && s->kind != LT_OBS_DL && compress(l, err))
        goto fail;
    return l;
fail:
    lt_like_free(l);
    return NULL;
}

/* A work space for compressions of up to K knots. */
static lt_like_work *work_alloc(const lt_like *l, size_t K)
{
    lt_like_work *w = calloc(1, sizeof *w);
    if (!w)
        return NULL;
    size_t n = l->s->n;
    w->dm = malloc(n * sizeof *w->dm);
    w->r = malloc(n * sizeof *w->r);
    w->cov_work = malloc(lt_cov_work_size(l->s->cov) * sizeof *w->cov_work);
    w->gk = malloc(K * sizeof *w->gk);
    w->dmk = malloc(K * sizeof *w->dmk);
    w->dg = malloc(K * sizeof *w->dg);
    w->fdg = malloc(K * sizeof *w->fdg);
    if (!w->dm || !w->r || !w->cov_work || !w->gk || !w->dmk || !w->dg || !w->fdg) {
        lt_like_work_free(w);
        return NULL;
    }
    return w;
}

lt_like_work *lt_like_work_alloc(const lt_like *l)
{
    return work_alloc(l, l->cmp ? l->cmp->K : 1);
}

void lt_like_work_free(lt_like_work *w)
{
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

/* The full parameter set at theta; the sampled offset goes to *offset. */
static void fill_params(const lt_like *l, const double *theta, lt_cosmo_params *p,
                        double *offset)
{
    *p = l->base;
    *offset = 0.0;
    for (size_t i = 0; i < l->dim; i++) {
        if (l->id[i] == LT_PAR_OFFSET)
            *offset = theta[i];
        else
            *lt_cosmo_params_slot(p, l->id[i]) = theta[i];
    }
}

int lt_like_cosmo(const lt_like *l, const double *theta, lt_cosmo *c, lt_error *err)
{
    lt_cosmo_params p;
    double offset;
    fill_params(l, theta, &p, &offset);
    return lt_cosmo_init(c, l->model, &p, err);
}

static void finish_point(const lt_like *l, double a, double bo, double offset, double c11,
                         lt_like_point *out);

/* Residuals observed - prediction (without any offset) into w->r; -1 if the
 * parameters are outside the physical domain. */
static int residuals(const lt_like *l, lt_like_work *w, const lt_cosmo *c)
{
    lt_cosmo_table t = {.transverse = w->dm};
    if (lt_cosmo_eval(c, l->grid, &t, NULL) != LT_OK)
        return -1;
    const lt_survey *s = l->s;
    if (s->kind == LT_OBS_DL) {
        for (size_t i = 0; i < s->n; i++)
            w->r[i] = s->obs[i] - (1.0 + s->zhel[i]) * w->dm[i];
    } else {
        for (size_t i = 0; i < s->n; i++) {
            double dl = (1.0 + s->zhel[i]) * w->dm[i];
            if (!(dl > 0.0))
                return -1; /* a negative distance: beyond the antipode's reach */
            w->r[i] = s->obs[i] - (5.0 * log10(dl) + 25.0);
        }
    }
    return 0;
}

void lt_like_eval_exact(const lt_like *l, lt_like_work *w, const double *theta, lt_like_point *out)
{
    out->logprior = 0.0;
    for (size_t i = 0; i < l->dim; i++)
        out->logprior += lt_prior_logpdf(&l->prior[i], theta[i]);
    out->chi2 = out->chi2_eff = INFINITY;
    out->loglike = out->logpost = -INFINITY;
    out->offset = 0.0;
    out->domain_ok = 0;
    if (!isfinite(out->logprior))
        return; /* outside the prior: no need to integrate anything */
    lt_cosmo_params p;
    double offset;
    fill_params(l, theta, &p, &offset);
    lt_cosmo c;
    if (lt_cosmo_init(&c, l->model, &p, NULL) != LT_OK || residuals(l, w, &c) != 0)
        return;
    const lt_survey *s = l->s;
    if (l->offset == LT_OFFSET_SAMPLED)
        for (size_t i = 0; i < s->n; i++)
            w->r[i] -= offset;
    double a = lt_cov_chi2(s->cov, w->r, w->cov_work);
    if (l->offset == LT_OFFSET_MARGINAL) {
        double b = 0.0;
        for (size_t i = 0; i < s->n; i++)
            b += l->cinv1[i] * w->r[i];
        finish_point(l, a, b, offset, l->c_sum, out);
    } else {
        out->chi2 = out->chi2_eff = a;
        out->offset = offset;
        out->domain_ok = 1;
        out->loglike = -0.5 * out->chi2_eff;
        out->logpost = out->loglike + out->logprior;
    }
}

/* The offset's treatment, common to both paths: A = r^T C^-1 r and
 * Bo = 1^T C^-1 r for the residual without any offset. */
static void finish_point(const lt_like *l, double a, double bo, double offset, double c11,
                         lt_like_point *out)
{
    if (l->offset == LT_OFFSET_MARGINAL) {
        out->chi2 = a - bo * bo / c11;
        out->chi2_eff = out->chi2 + l->ln_c_term;
        out->offset = bo / c11;
    } else if (l->offset == LT_OFFSET_SAMPLED) {
        out->chi2 = out->chi2_eff = a - 2.0 * offset * bo + offset * offset * c11;
        out->offset = offset;
    } else {
        out->chi2 = out->chi2_eff = a;
        out->offset = 0.0;
    }
    out->domain_ok = 1;
    out->loglike = -0.5 * out->chi2_eff;
    out->logpost = out->loglike + out->logprior;
}

static void eval_compressed(const lt_like *l, const lt_compress *cm, lt_like_work *w,
                            const double *theta, lt_like_point *out);

void lt_like_eval(const lt_like *l, lt_like_work *w, const double *theta, lt_like_point *out)
{
    if (!l->cmp) {
        lt_like_eval_exact(l, w, theta, out);
        return;
    }
    out->logprior = 0.0;
    for (size_t i = 0; i < l->dim; i++)
        out->logprior += lt_prior_logpdf(&l->prior[i], theta[i]);
    out->chi2 = out->chi2_eff = INFINITY;
    out->loglike = out->logpost = -INFINITY;
    out->offset = 0.0;
    out->domain_ok = 0;
    if (!isfinite(out->logprior))
        return;
    eval_compressed(l, l->cmp, w, theta, out);
}

/* The compressed path of cm at theta, within the prior. */
static void eval_compressed(const lt_like *l, const lt_compress *cm, lt_like_work *w,
                            const double *theta, lt_like_point *out)
{
    lt_cosmo_params p;
    double offset;
    fill_params(l, theta, &p, &offset);
    lt_cosmo c;
    /* E^2 > 0 over the whole data range: the last knot is the largest z */
    if (lt_cosmo_init(&c, l->model, &p, NULL) != LT_OK ||
        lt_compress_g(&c, cm->kgrid, cm->zk, cm->K, w->dmk, w->gk))
        return;
    for (size_t k = 0; k < cm->K; k++)
        w->dg[k] = w->gk[k] - cm->gfid[k];
    double a, bo;
    lt_compress_quad(cm, w->dg, w->fdg, &a, &bo);
    finish_point(l, a, bo, offset, cm->c11, out);
}

int lt_like_compression(const lt_like *l, size_t *K, double *max_dchi2)
{
    *K = l->cmp ? l->cmp->K : 0;
    *max_dchi2 = l->cmp ? l->max_dchi2 : 0.0;
    return l->cmp != NULL;
}

int lt_like_compression_set(lt_like *l, size_t K, lt_error *err)
{
    lt_cosmo fid;
    if (K == 0 || l->s->kind == LT_OBS_DL) {
        lt_compress_free(l->cmp);
        l->cmp = NULL;
        return LT_OK;
    }
    if (fiducial(l, &fid, err))
        return err ? err->code : LT_EINPUT;
    lt_compress *c = lt_compress_alloc(l->s, &fid, K, err);
    if (!c)
        return err ? err->code : LT_ENOMEM;
    lt_compress_free(l->cmp);
    l->cmp = c;
    return LT_OK;
}

/* The largest |chi2 - exact[k]| over n points by l's current path; the
 * points are few, so one thread. */
static double worst_dchi2(const lt_like *l, const double *pts, size_t n, const double *exact,
                          lt_like_work *w)
{
    double worst = 0.0;
    for (size_t k = 0; k < n; k++) {
        if (!isfinite(exact[k]))
            continue; /* outside the domain by the exact path: no chi2 to compare */
        lt_like_point pt;
        lt_like_eval(l, w, pts + k * l->dim, &pt);
        worst = fmax(worst, pt.domain_ok ? fabs(pt.chi2 - exact[k]) : INFINITY);
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
    lt_cosmo fid;
    if (fiducial(l, &fid, err))
        return -1;
    size_t K2 = 2 * l->cmp->K;
    lt_compress *c2 = lt_compress_alloc(l->s, &fid, K2, err);
    double *rank = malloc(2 * n * sizeof *rank);
    unsigned char *taken = calloc(n, 1);
    int failed = !c2 || !rank || !taken;
#pragma omp parallel reduction(| : failed)
    {
        lt_like_work *w = failed ? NULL : work_alloc(l, K2);
        failed |= !w;
#pragma omp for schedule(dynamic, 256)
        for (size_t j = 0; j < n; j++) {
            if (!w)
                continue;
            lt_like_point a = {0}, b = {0};
            eval_compressed(l, l->cmp, w, draws + j * stride, &a);
            eval_compressed(l, c2, w, draws + j * stride, &b);
            rank[2 * j] = a.domain_ok && b.domain_ok ? fabs(a.chi2 - b.chi2)
                          : a.domain_ok != b.domain_ok ? INFINITY : 0.0;
            rank[2 * j + 1] = (double)j;
        }
        lt_like_work_free(w);
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

int lt_like_eval_exact_many(const lt_like *l, const double *pts, size_t n, size_t stride,
                            lt_like_point *out, lt_error *err)
{
    int failed = 0;
    /* shared out over the threads, one point at a time (an exact evaluation
     * costs N to N^2): each writes its own slot, so the answer does not
     * depend on their number */
#pragma omp parallel reduction(| : failed)
    {
        lt_like_work *w = lt_like_work_alloc(l);
        failed |= !w;
#pragma omp for schedule(dynamic, 1)
        for (size_t k = 0; k < n; k++)
            if (w)
                lt_like_eval_exact(l, w, pts + k * stride, &out[k]);
        lt_like_work_free(w);
    }
    return failed ? lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory evaluating the exact likelihood")
                  : LT_OK;
}

size_t lt_like_reweight_draws(const lt_like *l)
{
    size_t N = l->s->n;
    return N <= 10000 ? 4000 : N <= 100000 ? 1000 : 250;
}

int lt_like_check_posterior(lt_like *l, const double *draws, size_t n, size_t stride, double bound,
                            lt_compression_check *out, lt_error *err)
{
    size_t N = l->s->n, d = l->dim;
    size_t m = N <= 10000 ? LT_CHECK_DRAWS : N <= 100000 ? 100 : 25;
    if (m > n)
        m = n;
    memset(out, 0, sizeof *out);
    out->knots_before = out->knots = l->cmp ? l->cmp->K : 0;
    if (!l->cmp || m == 0)
        return LT_OK; /* the exact path: nothing to check */
    double *pts = malloc(m * d * sizeof *pts), *exact = malloc(m * sizeof *exact);
    size_t *pick = malloc(m * sizeof *pick);
    int failed = !pts || !exact || !pick || pick_draws(l, draws, n, stride, m, pick, err);
    for (size_t k = 0; !failed && k < m; k++)
        memcpy(pts + k * d, draws + pick[k] * stride, d * sizeof *pts);
    free(pick);
    lt_like_point *pt = failed ? NULL : malloc(m * sizeof *pt);
    failed = failed || !pt || lt_like_eval_exact_many(l, pts, m, d, pt, err);
    for (size_t k = 0; !failed && k < m; k++)
        exact[k] = pt[k].domain_ok ? pt[k].chi2 : INFINITY;
    free(pt);
    lt_like_work *w = failed ? NULL : lt_like_work_alloc(l);
    if (!w) {
        free(pts);
        free(exact);
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory checking the compression");
    }
    out->checked = m;
    out->max_before = out->max_after = worst_dchi2(l, pts, m, exact, w);
    lt_like_work_free(w);
    int rc = LT_OK;
    size_t K0 = l->cmp->K, K = K0;
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
        if (!(w = lt_like_work_alloc(l))) {
            rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory checking the compression");
            break;
        }
        double now = worst_dchi2(l, pts, m, exact, w);
        lt_like_work_free(w);
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
    lt_like_point pt;
    lt_like_eval_exact(l, w, theta, &pt);
    if (!pt.domain_ok)
        return lt_error_set(err, LT_EDOMAIN, NULL, 0,
                            "the parameters are outside the prior or the physical domain");
    /* lt_like_eval left observed - prediction (with a sampled offset) in r */
    double shift = l->offset == LT_OFFSET_MARGINAL ? pt.offset : 0.0;
    for (size_t i = 0; i < l->s->n; i++)
        model[i] = l->s->obs[i] - w->r[i] + shift;
    return LT_OK;
}

/* ---- derived parameters ---- */
const char *lt_derived_name(int d)
{
    static const char *names[LT_NDER] = {"omega_k", "omega_de", "q0", "z_t", "age_gyr"};
    return d >= 0 && d < LT_NDER ? names[d] : NULL;
}

int lt_like_has_derived(const lt_like *l, int d)
{
    switch (d) {
    case LT_DER_OMEGA_K: return !l->model->flat;
    case LT_DER_OMEGA_DE: return l->model->flat;
    case LT_DER_Q0:
    case LT_DER_Z_T: return 1;
    case LT_DER_AGE: return l->h0_known;
    default: return 0;
    }
}

double lt_cosmo_transition_z(const lt_cosmo *c)
{
    /* q(0) < 0 and q > 0 somewhere before: scan in x = ln(1+z) to z = 1000
     * for the first sign change, then bisect. */
    if (!(lt_cosmo_q(c, 0.0) < 0.0))
        return NAN;
    double x_lo = 0.0, x_hi = NAN;
    for (double x = 0.05; x <= log(1001.0); x += 0.05) {
        double z = expm1(x);
        if (!(lt_cosmo_e2(c, z) > 0.0))
            return NAN; /* the universe turns around first */
        if (lt_cosmo_q(c, z) >= 0.0) {
            x_hi = x;
            break;
        }
        x_lo = x;
    }
    if (isnan(x_hi))
        return NAN;
    for (int it = 0; it < 200 && x_hi - x_lo > 1e-15 * (1 + x_hi); it++) {
        double x = 0.5 * (x_lo + x_hi);
        if (lt_cosmo_q(c, expm1(x)) < 0.0)
            x_lo = x;
        else
            x_hi = x;
    }
    return expm1(0.5 * (x_lo + x_hi));
}

double lt_like_derived(const lt_like *l, const double *theta, int d)
{
    lt_cosmo c;
    if (lt_like_cosmo(l, theta, &c, NULL) != LT_OK)
        return NAN;
    switch (d) {
    case LT_DER_OMEGA_K: return c.omega_k;
    case LT_DER_OMEGA_DE: return c.p.omega_de;
    case LT_DER_Q0: return lt_cosmo_q(&c, 0.0);
    case LT_DER_Z_T: return lt_cosmo_transition_z(&c);
    case LT_DER_AGE: {
        double age;
        return lt_cosmo_age(&c, 0.0, &age, NULL) == LT_OK ? age : NAN;
    }
    default: return NAN;
    }
}

double lt_pivot_redshift(double cov_w0_wa, double var_wa)
{
    if (!(var_wa > 0.0))
        return NAN;
    double a_p = 1.0 + cov_w0_wa / var_wa;
    return a_p > 0.0 ? 1.0 / a_p - 1.0 : NAN;
}
