/*
 * Unit tests of the standardisation term (src/likelihood/standard.c) and
 * of the covariance with a changing diagonal (lt_dcov): against dense
 * linear algebra by GSL (gsl_linalg_cholesky_decomp1), the latent
 * likelihood's normalisation against brute-force integration (GSL QAGI),
 * its hierarchical form integrated over the true x1 and colour by nested
 * quadrature, the chi2 method's tuning against its definition, and the
 * settings it refuses.
 */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_integration.h>
#include <gsl/gsl_linalg.h>
#include <gsl/gsl_rng.h>
#include <gsl/gsl_randist.h>

#include "lantern/lantern.h"
#include "../testutil.h"

static char dir[256];

static int setup(void **state)
{
    (void)state;
    gsl_set_error_handler_off();
    return lt_test_tmpdir(dir, sizeof dir, "std") ? -1 : 0;
}

/* Write text to dir/name; its path into path. */
static void write_file(const char *name, const char *text, char *path, size_t size)
{
    snprintf(path, size, "%s/%s", dir, name);
    FILE *f = fopen(path, "w");
    assert_non_null(f);
    fputs(text, f);
    fclose(f);
}

#define LC_COLUMNS                                                                          \
    "z=z,mb=mb,err_mb=dmb,x1=x1,err_x1=dx1,color=c,err_color=dc,mass=mass,"                 \
    "cov_mb_x1=cmx,cov_mb_color=cmc,cov_x1_color=cxc,group=set"

/* A light-curve table of n objects in two groups, drawn with seed. */
static lt_survey *lc_survey(const char *name, size_t n, unsigned long seed, const char *columns)
{
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, seed);
    size_t cap = 200 + n * 200, at = 0;
    char *text = malloc(cap);
    at += (size_t)snprintf(text + at, cap - at, "z mb dmb x1 dx1 c dc mass cmx cmc cxc set\n");
    for (size_t i = 0; i < n; i++) {
        double z = 0.02 + 1.0 * gsl_rng_uniform(r);
        double x1 = gsl_ran_gaussian(r, 1.0), c = gsl_ran_gaussian(r, 0.08);
        double mb = 5.0 * log10(4283.0 * z * (1 + 0.8 * z)) + 25 - 19.3 - 0.14 * x1 + 3.1 * c +
                    gsl_ran_gaussian(r, 0.12);
        at += (size_t)snprintf(text + at, cap - at,
                               "%.6f %.6f 0.1 %.5f 0.2 %.5f 0.03 %.3f 0.002 0.0005 -0.001 %s\n",
                               z, mb, x1, c, 9.0 + 2.0 * gsl_rng_uniform(r), i % 3 ? "a" : "b");
    }
    char path[512];
    write_file(name, text, path, sizeof path);
    free(text);
    gsl_rng_free(r);
    lt_survey_spec spec;
    lt_survey_spec_init(&spec);
    spec.data = path;
    spec.columns = columns;
    lt_error err;
    lt_survey *s = lt_survey_read(&spec, &err);
    if (!s)
        fail_msg("%s", err.msg);
    return s;
}

/* ---- lt_dcov against a dense Cholesky by GSL ---- */

static void check_dcov(lt_cov *c, size_t n, gsl_rng *r)
{
    lt_error err;
    assert_int_equal(lt_cov_factor(c, &err), LT_OK);
    lt_dcov *v = lt_dcov_alloc(c, &err);
    assert_non_null(v);
    double *d = malloc(n * sizeof *d), *res = malloc(n * sizeof *res), *x = malloc(n * sizeof *x);
    double *work = malloc(lt_dcov_work_size(v) * sizeof *work);
    gsl_matrix *m = gsl_matrix_alloc(n, n);
    gsl_vector *b = gsl_vector_alloc(n), *y = gsl_vector_alloc(n);
    for (int trial = 0; trial < 3; trial++) {
        for (size_t i = 0; i < n; i++)
            d[i] = 0.05 * gsl_rng_uniform(r), res[i] = gsl_ran_gaussian(r, 0.3);
        double chi2, logdet;
        assert_int_equal(lt_dcov_solve(v, d, res, x, work, &chi2, &logdet), 0);
        /* the reference: the whole matrix, its diagonal raised, by GSL */
        lt_cov_to_dense(c, m->data);
        for (size_t i = 0; i < n; i++)
            gsl_matrix_set(m, i, i, gsl_matrix_get(m, i, i) + d[i]);
        assert_int_equal(gsl_linalg_cholesky_decomp1(m), GSL_SUCCESS);
        for (size_t i = 0; i < n; i++)
            gsl_vector_set(b, i, res[i]);
        gsl_linalg_cholesky_solve(m, b, y);
        double q = 0.0, ld = 0.0;
        for (size_t i = 0; i < n; i++)
            q += res[i] * gsl_vector_get(y, i), ld += 2.0 * log(gsl_matrix_get(m, i, i));
        assert_abs(chi2, q, 1e-10 * q);
        assert_abs(logdet, ld, 1e-10 * fabs(ld));
        for (size_t i = 0; i < n; i++)
            assert_abs(x[i], gsl_vector_get(y, i), 1e-9 * fabs(gsl_vector_get(y, i)) + 1e-12);
    }
    /* a diagonal that makes the matrix indefinite is refused */
    for (size_t i = 0; i < n; i++)
        d[i] = -10.0;
    double chi2, logdet;
    assert_int_equal(lt_dcov_solve(v, d, res, NULL, work, &chi2, &logdet), -1);
    gsl_matrix_free(m);
    gsl_vector_free(b);
    gsl_vector_free(y);
    free(d), free(res), free(x), free(work);
    lt_dcov_free(v);
    lt_cov_free(c);
}

static void test_dcov(void **state)
{
    (void)state;
    const size_t n = 30, k = 3;
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, 11);
    double var[30], u[30 * 3], dense[30 * 30];
    for (size_t i = 0; i < n; i++)
        var[i] = 0.01 + 0.02 * gsl_rng_uniform(r);
    for (size_t i = 0; i < n * k; i++)
        u[i] = 0.05 * gsl_ran_gaussian(r, 1.0);
    for (size_t i = 0; i < n; i++) /* a dense part: 0.01 exp(-|i - j| / 3) */
        for (size_t j = 0; j < n; j++)
            dense[i * n + j] = 0.01 * exp(-fabs((double)i - (double)j) / 3.0);
    lt_error err;
    /* diagonal; diagonal + modes (Woodbury); dense + modes (dpotrf) */
    lt_cov *c = lt_cov_alloc(n, &err);
    lt_cov_add_diag(c, var, &err);
    check_dcov(c, n, r);
    c = lt_cov_alloc(n, &err);
    lt_cov_add_diag(c, var, &err);
    lt_cov_add_modes(c, k, u, NULL, &err);
    check_dcov(c, n, r);
    c = lt_cov_alloc(n, &err);
    lt_cov_add_diag(c, var, &err);
    lt_cov_add_dense(c, dense, &err);
    lt_cov_add_modes(c, k, u, NULL, &err);
    check_dcov(c, n, r);
    gsl_rng_free(r);
}

/* ---- the latent likelihood of one object ---- */

/* The latent likelihood of a one-object table at the given values (the
 * density of (mb, x1, c)), through lt_like_eval. */
typedef struct {
    double z, mb, dmb, x1, dx1, c, dc, cmx, cmc, cxc;
    double omega_m, alpha, beta, offset, sigma, xm, xs, cm, cs;
} one;

static double one_density(const one *o)
{
    char text[512], path[512];
    snprintf(text, sizeof text,
             "z mb dmb x1 dx1 c dc cmx cmc cxc\n%.17g %.17g %.17g %.17g %.17g %.17g %.17g "
             "%.17g %.17g %.17g\n",
             o->z, o->mb, o->dmb, o->x1, o->dx1, o->c, o->dc, o->cmx, o->cmc, o->cxc);
    write_file("one.txt", text, path, sizeof path);
    lt_survey_spec ss;
    lt_survey_spec_init(&ss);
    ss.data = path;
    ss.columns = "z=z,mb=mb,err_mb=dmb,x1=x1,err_x1=dx1,color=c,err_color=dc,cov_mb_x1=cmx,"
                 "cov_mb_color=cmc,cov_x1_color=cxc";
    lt_error err;
    lt_survey *s = lt_survey_read(&ss, &err);
    if (!s)
        fail_msg("%s", err.msg);
    lt_like_spec spec;
    lt_like_spec_init(&spec, lt_cosmo_model_find("lcdm-flat"));
    spec.std.velocity_dispersion = 0.0; /* no redshift scatter: the test's own terms only */
    const struct {
        const char *name;
        double v;
    } fix[] = {{"omega_m", o->omega_m}, {"alpha", o->alpha}, {"beta", o->beta},
               {"offset", o->offset},   {"sigma_int", o->sigma}, {"x1_mean", o->xm},
               {"x1_sd", o->xs},        {"color_mean", o->cm}, {"color_sd", o->cs}};
    for (size_t k = 0; k < sizeof fix / sizeof fix[0]; k++)
        assert_int_equal(lt_like_spec_fix(&spec, fix[k].name, fix[k].v, &err), LT_OK);
    lt_like *l = lt_like_alloc(s, &spec, &err);
    if (!l)
        fail_msg("%s", err.msg);
    assert_int_equal(lt_like_dim(l), 0);
    lt_like_work *w = lt_like_work_alloc(l);
    lt_like_point p;
    lt_like_eval(l, w, NULL, &p);
    double dens = exp(-0.5 * p.chi2_eff + lt_like_lognorm(l));
    lt_like_work_free(w);
    lt_like_free(l);
    lt_survey_free(s);
    return dens;
}

/* The distance modulus at z (= zhel) by lantern's cosmology (checked
 * against astropy in tests/reference): the structure of the term is what
 * these tests check. */
static double mu_of(double z, double omega_m)
{
    lt_cosmo_params p;
    lt_cosmo_params_default(&p);
    p.omega_m = omega_m;
    lt_cosmo c;
    lt_error err;
    assert_int_equal(lt_cosmo_init(&c, lt_cosmo_model_find("lcdm-flat"), &p, &err), LT_OK);
    lt_zgrid *g = lt_zgrid_alloc(1, &z, &err);
    double mu;
    lt_cosmo_table t = {.distmod = &mu};
    assert_int_equal(lt_cosmo_eval(&c, g, &t, &err), LT_OK);
    lt_zgrid_free(g);
    return mu;
}

/* The density at mb = (the object's mb) + y: QAGI's map of the real line
 * resolves a peak near 0, not one at 21.7 mag. */
static double over_mb(double y, void *p)
{
    one o = *(const one *)p;
    o.mb += y;
    return one_density(&o);
}

static double gauss(double x, double m, double s)
{
    return exp(-0.5 * (x - m) * (x - m) / (s * s)) / (sqrt(2.0 * M_PI) * s);
}

/* The hierarchical model with the true colour ct and stretch xt fixed:
 * p(x1, c | xt, ct) p(xt) p(ct) times the magnitude's density given them,
 * mb ~ N(mu + M - alpha xt + beta ct, dmb^2 + sigma^2) (the true magnitude
 * scatter M_t ~ N(M, sigma) integrated in closed form, one Gaussian
 * convolved with another). Here the measurement errors are uncorrelated. */
typedef struct {
    const one *o;
    double mu, xt;
    gsl_integration_workspace *w;
} inner;

static double over_ct(double ct, void *p)
{
    const inner *in = p;
    const one *o = in->o;
    double m = in->mu + o->offset - o->alpha * in->xt + o->beta * ct;
    return gauss(o->mb, m, sqrt(o->dmb * o->dmb + o->sigma * o->sigma)) *
           gauss(o->x1, in->xt, o->dx1) * gauss(o->c, ct, o->dc) * gauss(in->xt, o->xm, o->xs) *
           gauss(ct, o->cm, o->cs);
}

static double over_xt(double xt, void *p)
{
    inner *in = p;
    in->xt = xt;
    gsl_function f = {over_ct, in};
    double v, e;
    gsl_integration_qagi(&f, 1e-13, 1e-10, 1000, in->w, &v, &e);
    return v;
}

static void test_latent_normalisation(void **state)
{
    (void)state;
    one o = {.z = 0.3, .mb = 21.7, .dmb = 0.1, .x1 = 0.5, .dx1 = 0.3, .c = 0.02, .dc = 0.04,
             .cmx = 0.01, .cmc = 0.001, .cxc = -0.003, .omega_m = 0.3, .alpha = 0.14,
             .beta = 3.1, .offset = -19.3, .sigma = 0.1, .xm = 0.1, .xs = 0.9, .cm = -0.01,
             .cs = 0.08};
    /* 1. Over mb the density integrates to the (x1, c) marginal, a 2-D
     * Gaussian N((xm, cm), Sigma_meas + diag(xs^2, cs^2)) in closed form.
     * (Lensing adds 0.055 z to mb's variance, which the integral absorbs.) */
    gsl_integration_workspace *w = gsl_integration_workspace_alloc(1000),
                              *w2 = gsl_integration_workspace_alloc(1000);
    gsl_function f = {over_mb, &o};
    double v, e;
    assert_int_equal(gsl_integration_qagi(&f, 1e-12, 1e-9, 1000, w, &v, &e), GSL_SUCCESS);
    double sxx = o.dx1 * o.dx1 + o.xs * o.xs, scc = o.dc * o.dc + o.cs * o.cs, sxc = o.cxc;
    double det = sxx * scc - sxc * sxc, dx = o.x1 - o.xm, dc = o.c - o.cm;
    double pxc = exp(-0.5 * (scc * dx * dx - 2 * sxc * dx * dc + sxx * dc * dc) / det) /
                 (2.0 * M_PI * sqrt(det));
    assert_abs(v, pxc, 1e-8 * pxc);

    /* 2. The analytic integral over the true x1 and c against nested
     * quadrature of the hierarchical model (uncorrelated errors, no
     * lensing: z small enough that 0.055 z is folded into dmb below). */
    one u = o;
    u.cmx = u.cmc = u.cxc = 0.0;
    double lens = 0.055 * u.z, dmb_lantern = u.dmb;
    u.dmb = sqrt(dmb_lantern * dmb_lantern + lens * lens); /* what the quadrature sees */
    inner in = {&u, mu_of(u.z, u.omega_m), 0.0, w2};
    gsl_function g = {over_xt, &in};
    assert_int_equal(gsl_integration_qagi(&g, 1e-13, 1e-9, 1000, w, &v, &e), GSL_SUCCESS);
    one t = u;
    t.dmb = dmb_lantern; /* lantern adds the lensing itself */
    double dens = one_density(&t);
    assert_abs(dens, v, 1e-7 * v);
    gsl_integration_workspace_free(w);
    gsl_integration_workspace_free(w2);
}

/* ---- the chi2 method's tuning ---- */

static void test_scatter_tune(void **state)
{
    (void)state;
    lt_survey *s = lc_survey("tune.txt", 90, 5, LC_COLUMNS);
    lt_like_spec spec;
    lt_like_spec_init(&spec, lt_cosmo_model_find("lcdm-flat"));
    spec.std.method = LT_STD_CHI2;
    lt_error err;
    lt_like *l = lt_like_alloc(s, &spec, &err);
    if (!l)
        fail_msg("%s", err.msg);
    assert_true(lt_like_scatter_untuned(l));
    /* at a fixed point: omega_m, alpha, beta, gamma, offset */
    size_t d = lt_like_dim(l);
    assert_int_equal(d, 5);
    double theta[5] = {0.3, 0.14, 3.1, 0.0, -19.3};
    lt_scatter_tune tune;
    assert_int_equal(lt_like_scatter_tune(l, theta, &tune, &err), LT_OK);
    assert_false(lt_like_scatter_untuned(l));
    assert_int_equal(tune.n, 2);
    /* each group's chi2 by the definition, sum r^2 / v over its objects
     * (a diagonal covariance), at the scatter found */
    const lt_lightcurve *lc = s->lc;
    double mu[90];
    for (size_t i = 0; i < s->n; i++)
        mu[i] = mu_of(s->z[i], 0.3);
    for (size_t e = 0; e < tune.n; e++) {
        const char *g = strchr(tune.name[e], '@') + 1;
        double chi2 = 0.0;
        size_t ng = 0;
        for (size_t i = 0; i < s->n; i++) {
            if (strcmp(lc->group[i], g))
                continue;
            ng++;
            double a = 0.14, b = 3.1, sig = tune.sigma[e], z = s->z[i];
            double r = s->obs[i] - (mu[i] - 19.3 - a * lc->x1[i] + b * lc->color[i]);
            double sz = 5.0 / M_LN10 * (150.0 / 299792.458) * (1 + z) / (z * (1 + z / 2));
            double v = s->err[i] * s->err[i] + a * a * lc->err_x1[i] * lc->err_x1[i] +
                       b * b * lc->err_color[i] * lc->err_color[i] + 2 * a * lc->cov_mb_x1[i] -
                       2 * b * lc->cov_mb_color[i] - 2 * a * b * lc->cov_x1_color[i] + sig * sig +
                       sz * sz + 0.055 * z * 0.055 * z;
            chi2 += r * r / v;
        }
        assert_int_equal(tune.nobj[e], ng);
        double dof = (double)ng * (1.0 - 5.0 / 90.0);
        assert_abs(tune.dof[e], dof, 1e-12);
        assert_true(tune.sigma[e] > 0.05); /* drawn with 0.12 of scatter */
        assert_abs(chi2, dof, 1e-6);
    }
    /* the whole likelihood now uses them: its chi2 is the sum of the dofs */
    lt_like_work *w = lt_like_work_alloc(l);
    lt_like_point p;
    lt_like_eval(l, w, theta, &p);
    assert_abs(p.chi2, tune.dof[0] + tune.dof[1], 1e-6);
    lt_like_work_free(w);
    lt_like_free(l);
    lt_survey_free(s);
}

/* ---- parameters and refusals ---- */

static void expect_error(const lt_survey *s, lt_like_spec *spec, const char *what)
{
    lt_error err;
    lt_like *l = lt_like_alloc(s, spec, &err);
    if (l)
        fail_msg("expected an error saying '%s'", what);
    if (!strstr(err.msg, what))
        fail_msg("'%s' does not say '%s'", err.msg, what);
}

static void test_parameters(void **state)
{
    (void)state;
    lt_survey *s = lc_survey("params.txt", 30, 7, LC_COLUMNS);
    lt_like_spec spec;
    lt_error err;
    const lt_cosmo_model *m = lt_cosmo_model_find("lcdm-flat");
    /* latent, per group: cosmology, alpha, beta, gamma, offset, two
     * scatters, four population parameters for each of two groups */
    lt_like_spec_init(&spec, m);
    lt_like *l = lt_like_alloc(s, &spec, &err);
    assert_non_null(l);
    assert_int_equal(lt_like_dim(l), 1 + 4 + 2 + 8);
    assert_int_equal(lt_like_param_index(l, "sigma_int@b"), 6);
    assert_string_equal(lt_like_param(l, 6)->label, "\\sigma_\\mathrm{int}^{(b)}");
    assert_true(lt_like_param_index(l, "color_sd@a") >= 0);
    assert_int_equal(lt_like_ndata(l), 90); /* mb, x1, c of 30 objects */
    lt_like_free(l);
    /* shared scatter, chi2: cosmology, alpha, beta, gamma, offset; the
     * scatter fixed until tuned */
    spec.std.method = LT_STD_CHI2, spec.std.shared_scatter = 1;
    l = lt_like_alloc(s, &spec, &err);
    assert_non_null(l);
    assert_int_equal(lt_like_dim(l), 5);
    assert_int_equal(lt_like_ndata(l), 30);
    assert_int_equal(lt_like_scatter_tuned(l, NULL, NULL), 1);
    lt_like_free(l);
    /* a group offset is there when asked for */
    lt_like_spec_init(&spec, m);
    lt_like_spec_prior(&spec, "offset@b", (lt_prior){LT_PRIOR_UNIFORM, -0.3, 0.3}, &err);
    l = lt_like_alloc(s, &spec, &err);
    assert_non_null(l);
    assert_true(lt_like_param_index(l, "offset@b") >= 0);
    assert_int_equal(lt_like_param_index(l, "offset@a"), -1);
    lt_like_free(l);
    /* refusals */
    lt_like_spec_init(&spec, m);
    lt_like_spec_fix(&spec, "sigma_int@c", 0.1, &err);
    expect_error(s, &spec, "has no parameter 'sigma_int@c'");
    lt_like_spec_init(&spec, m);
    spec.std.method = LT_STD_CHI2;
    lt_like_spec_prior(&spec, "sigma_int@a", (lt_prior){LT_PRIOR_UNIFORM, 0, 1}, &err);
    expect_error(s, &spec, "chi2/dof = 1");
    lt_like_spec_init(&spec, m);
    spec.std.method = LT_STD_CHI2;
    lt_like_spec_fix(&spec, "x1_mean@a", 0.0, &err);
    expect_error(s, &spec, "has no parameter 'x1_mean@a'");
    lt_like_spec_init(&spec, m);
    spec.offset = LT_OFFSET_MARGINAL;
    expect_error(s, &spec, "always sampled");
    lt_survey_free(s);
    /* gamma needs masses */
    s = lc_survey("nomass.txt", 20, 8,
                  "z=z,mb=mb,err_mb=dmb,x1=x1,err_x1=dx1,color=c,err_color=dc");
    lt_like_spec_init(&spec, m);
    lt_like_spec_fix(&spec, "gamma", 0.0, &err);
    expect_error(s, &spec, "has no parameter 'gamma'");
    lt_survey_free(s);
    /* a standardisation parameter without a light-curve table */
    char path[512];
    write_file("mu.txt", "z mu err\n0.1 38.3 0.1\n0.2 40.0 0.1\n0.5 42.3 0.1\n", path,
               sizeof path);
    lt_survey_spec ss;
    lt_survey_spec_init(&ss);
    ss.data = path, ss.columns = "z=z,mu=mu,err=err";
    s = lt_survey_read(&ss, &err);
    assert_non_null(s);
    lt_like_spec_init(&spec, m);
    lt_like_spec_prior(&spec, "alpha", (lt_prior){LT_PRIOR_UNIFORM, 0, 1}, &err);
    expect_error(s, &spec, "belongs to the standardisation");
    lt_survey_free(s);
}

/* A group label that cannot be part of a parameter name is refused at its
 * file and line. */
static void test_group_labels(void **state)
{
    (void)state;
    char path[512];
    write_file("badgroup.txt",
               "z mb dmb x1 c set\n0.1 19.0 0.1 0.1 0.01 a\n0.2 20.0 0.1 0.2 0.02 b.2\n", path,
               sizeof path);
    lt_survey_spec ss;
    lt_survey_spec_init(&ss);
    ss.data = path, ss.columns = "z=z,mb=mb,err_mb=dmb,x1=x1,color=c,group=set";
    lt_error err;
    assert_null(lt_survey_read(&ss, &err));
    assert_non_null(strstr(err.msg, "group label 'b.2'"));
    assert_int_equal(err.line, 3);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_dcov),         cmocka_unit_test(test_latent_normalisation),
        cmocka_unit_test(test_scatter_tune), cmocka_unit_test(test_parameters),
        cmocka_unit_test(test_group_labels),
    };
    return cmocka_run_group_tests(tests, setup, NULL);
}
