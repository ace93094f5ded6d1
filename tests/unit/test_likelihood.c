/*
 * Unit tests of the likelihood: priors, parameter bookkeeping, bounds,
 * the offset marginalisation against brute-force integration (GSL QAGI),
 * derived parameters against closed forms, and the spec's error cases.
 */
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

#include "lantern/lantern.h"
#include "../testutil.h"

static char dir[256];
static lt_survey *mag_survey, *mu_survey, *dl_survey;

/* A small simulated survey of each observable. */
static lt_survey *make_survey(const char *obs)
{
    char path[512], text[1024];
    snprintf(path, sizeof path, "%s/%s.ini", dir, obs);
    snprintf(text, sizeof text,
             "[survey]\nseed = 3\nobservable = %s\n[cosmology]\nmodel = lcdm-flat\n"
             "omega_m = 0.3\n[tier.a]\nz_min = 0.02\nz_max = 1.2\ncount = 60\nerror = 0.1\n"
             "calibration = 0.02\n",
             obs);
    FILE *f = fopen(path, "w");
    fputs(text, f);
    fclose(f);
    lt_scenario sc;
    lt_sim sim;
    lt_error err;
    assert_int_equal(lt_scenario_read(path, &sc, &err), LT_OK);
    assert_int_equal(lt_simulate(&sc, &sim, &err), LT_OK);
    lt_survey *s = sim.survey;
    sim.survey = NULL; /* keep it */
    lt_sim_free(&sim);
    lt_scenario_free(&sc);
    return s;
}

static int setup(void **state)
{
    (void)state;
    gsl_set_error_handler_off();
    if (lt_test_tmpdir(dir, sizeof dir, "like"))
        return -1;
    mag_survey = make_survey("mag");
    mu_survey = make_survey("mu");
    dl_survey = make_survey("dl");
    return 0;
}

static int teardown(void **state)
{
    (void)state;
    lt_survey_free(mag_survey);
    lt_survey_free(mu_survey);
    lt_survey_free(dl_survey);
    return lt_test_rmtree(dir);
}

static lt_like *like_for(const lt_survey *s, const char *model, lt_like_spec *spec)
{
    lt_like_spec local;
    if (!spec) {
        lt_like_spec_init(&local, lt_cosmo_model_find(model));
        spec = &local;
    }
    lt_error err;
    lt_like *l = lt_like_alloc(s, spec, &err);
    if (!l)
        print_error("%s\n", err.msg);
    assert_non_null(l);
    return l;
}

/* ---- priors ---- */
static void test_priors(void **state)
{
    (void)state;
    lt_prior p;
    lt_error err;
    assert_int_equal(lt_prior_parse("uniform:0:2", &p, &err), LT_OK);
    assert_true(p.kind == LT_PRIOR_UNIFORM && p.a == 0 && p.b == 2);
    assert_rel(lt_prior_logpdf(&p, 1.0), -log(2.0), 1e-15);
    assert_true(isinf(lt_prior_logpdf(&p, 2.0001)));
    assert_rel(lt_prior_logpdf(&p, 2.0), -log(2.0), 1e-15); /* edges belong to the prior */
    assert_int_equal(lt_prior_parse("gauss:-19.3:0.1", &p, &err), LT_OK);
    /* the normal density: ln(1/(sd sqrt(2 pi))) - u^2/2 */
    assert_rel(lt_prior_logpdf(&p, -19.1), -log(0.1 * sqrt(2 * M_PI)) - 2.0, 1e-12);
    static const char *bad[] = {"uniform:1:1", "uniform:2:1", "gauss:0:0", "gauss:0:-1",
                                "normal:0:1", "uniform:0", "uniform:a:1", "uniform:0:1:2",
                                "", "uniform:0:inf"};
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++)
        assert_int_equal(lt_prior_parse(bad[i], &p, &err), LT_EINPUT);
    char buf[64];
    lt_prior_parse("uniform:-2:0", &p, &err);
    lt_prior_format(&p, buf, sizeof buf);
    assert_string_equal(buf, "U(-2, 0)");
    /* the defaults of DESIGN.md */
    struct { const char *name; lt_obs k; double a, b; } d[] = {
        {"omega_m", LT_OBS_MAG, 0, 1},  {"omega_de", LT_OBS_MAG, 0, 1.6},
        {"w0", LT_OBS_MAG, -2, 0},      {"wa", LT_OBS_MAG, -3, 2},
        {"h0", LT_OBS_MU, 40, 100},     {"offset", LT_OBS_MAG, -21, -17},
        {"offset", LT_OBS_MU, -2, 2}};
    for (size_t i = 0; i < sizeof d / sizeof d[0]; i++) {
        lt_prior q = lt_param_default_prior(d[i].name, d[i].k);
        assert_true(q.kind == LT_PRIOR_UNIFORM && q.a == d[i].a && q.b == d[i].b);
    }
}

/* ---- which parameters are free ---- */
static void test_free_parameters(void **state)
{
    (void)state;
    /* mag data: offset marginalised, h0 not free; the model's parameters */
    lt_like *l = like_for(mag_survey, "w0wa", NULL);
    assert_int_equal(lt_like_offset_mode(l), LT_OFFSET_MARGINAL);
    assert_int_equal(lt_like_dim(l), 4);
    const char *want[] = {"omega_m", "omega_de", "w0", "wa"};
    for (int i = 0; i < 4; i++) {
        assert_string_equal(lt_like_param_name(l, i), want[i]);
        assert_int_equal(lt_like_param_index(l, want[i]), i);
    }
    assert_int_equal(lt_like_param_index(l, "h0"), -1);
    assert_false(lt_like_h0_known(l));
    assert_int_equal(lt_like_dof(l), 60 - 4 - 1);
    assert_int_equal(lt_like_nparams_counted(l), 5);
    assert_false(lt_like_has_derived(l, LT_DER_AGE));
    assert_true(lt_like_has_derived(l, LT_DER_OMEGA_K));
    lt_like_free(l);
    /* mu data: no offset, h0 free */
    l = like_for(mu_survey, "lcdm-flat", NULL);
    assert_int_equal(lt_like_offset_mode(l), LT_OFFSET_NONE);
    assert_int_equal(lt_like_dim(l), 2);
    assert_string_equal(lt_like_param_name(l, 0), "h0");
    assert_true(lt_like_has_derived(l, LT_DER_AGE));
    assert_true(lt_like_has_derived(l, LT_DER_OMEGA_DE));
    assert_int_equal(lt_like_dof(l), 58);
    lt_like_free(l);
    /* a prior on offset samples it and frees h0 */
    lt_like_spec spec;
    lt_like_spec_init(&spec, lt_cosmo_model_find("lcdm-flat"));
    lt_error err;
    lt_prior op;
    lt_prior_parse("gauss:-19.3:0.05", &op, &err);
    lt_like_spec_prior(&spec, "offset", op, &err);
    l = like_for(mag_survey, NULL, &spec);
    assert_int_equal(lt_like_offset_mode(l), LT_OFFSET_SAMPLED);
    assert_int_equal(lt_like_dim(l), 3);
    assert_string_equal(lt_like_param_name(l, 2), "offset");
    assert_int_equal(lt_like_dof(l), 57);
    lt_like_free(l);
    /* a fixed parameter leaves the list */
    lt_like_spec_init(&spec, lt_cosmo_model_find("wcdm-flat"));
    lt_like_spec_fix(&spec, "w0", -0.8, &err);
    l = like_for(mag_survey, NULL, &spec);
    assert_int_equal(lt_like_dim(l), 1);
    assert_true(lt_like_base(l)->w0 == -0.8);
    lt_like_free(l);
}

static void expect_spec_error(const lt_survey *s, lt_like_spec *spec, const char *what)
{
    lt_error err;
    lt_like *l = lt_like_alloc(s, spec, &err);
    if (l || !strstr(err.msg, what))
        print_error("want '%s', got '%s'\n", what, l ? "(no error)" : err.msg);
    assert_null(l);
    assert_int_equal(err.code, LT_EINPUT);
    assert_non_null(strstr(err.msg, what));
}

static void test_spec_errors(void **state)
{
    (void)state;
    lt_like_spec spec;
    lt_error err;
#define SPEC(model) lt_like_spec_init(&spec, lt_cosmo_model_find(model))
    lt_prior pr;
#define PRIOR(name, text) (lt_prior_parse(text, &pr, &err), lt_like_spec_prior(&spec, name, pr, &err))
    SPEC("lcdm-flat");
    PRIOR("w0", "uniform:-2:0");
    expect_spec_error(mag_survey, &spec, "model lcdm-flat has no parameter w0");
    SPEC("lcdm-flat");
    PRIOR("omega_de", "uniform:0:1");
    expect_spec_error(mag_survey, &spec, "omega_de is derived");
    /* a parameter has one setting: a fix after a prior replaces it (the
     * command line refuses both from one place, tests/e2e) */
    SPEC("lcdm");
    PRIOR("omega_m", "uniform:0:1");
    lt_like_spec_fix(&spec, "omega_m", 0.3, &err);
    assert_int_equal(spec.nsettings, 1);
    assert_true(lt_like_spec_setting(&spec, "omega_m")->fixed);
    SPEC("lcdm");
    PRIOR("omega_mm", "uniform:0:1");
    expect_spec_error(mag_survey, &spec, "unknown parameter 'omega_mm'");
    SPEC("lcdm");
    PRIOR("t_cmb", "uniform:2:3");
    expect_spec_error(mag_survey, &spec, "t_cmb can be fixed");
    SPEC("lcdm");
    PRIOR("h0", "uniform:60:80");
    expect_spec_error(mag_survey, &spec, "h0 is degenerate");
    SPEC("lcdm");
    PRIOR("offset", "uniform:-1:1");
    expect_spec_error(dl_survey, &spec, "dl data have no offset");
    SPEC("lcdm");
    spec.offset = LT_OFFSET_NONE;
    expect_spec_error(mag_survey, &spec, "mag data need an offset");
    SPEC("lcdm");
    spec.offset = LT_OFFSET_MARGINAL;
    expect_spec_error(dl_survey, &spec, "dl data have no offset");
    SPEC("lcdm");
    spec.offset = LT_OFFSET_MARGINAL;
    PRIOR("offset", "uniform:-20:-18");
    expect_spec_error(mag_survey, &spec, "cannot also be marginalised");
    lt_like_spec_init(&spec, NULL);
    expect_spec_error(mag_survey, &spec, "no model");
#undef SPEC
#undef PRIOR
}

/* ---- bounds ---- */
static void test_bounds(void **state)
{
    (void)state;
    lt_like *l = like_for(mag_survey, "lcdm", NULL);
    lt_like_work *w = lt_like_work_alloc(l);
    lt_like_point pt;
    double inside[] = {0.3, 0.7}, outside[] = {1.2, 0.7}, bounce[] = {0.1, 1.5};
    lt_like_eval(l, w, inside, &pt);
    assert_true(pt.domain_ok && isfinite(pt.logpost));
    /* uniform priors: ln(1/1) + ln(1/1.6) */
    assert_rel(pt.logprior, -log(1.6), 1e-14);
    assert_rel(pt.logpost, pt.loglike + pt.logprior, 1e-15);
    lt_like_eval(l, w, outside, &pt);
    assert_true(isinf(pt.logpost) && pt.logpost < 0 && !pt.domain_ok);
    /* inside the prior, but E^2 <= 0 before z = 1.2: no distances */
    lt_like_eval(l, w, bounce, &pt);
    assert_true(isinf(pt.logprior) == 0 && !pt.domain_ok && isinf(pt.logpost));
    lt_like_work_free(w);
    lt_like_free(l);
}

/* ---- the offset ---- */
typedef struct {
    const lt_like *l;
    lt_like_work *w;
    double om, shift;
} offset_ctx;

static double like_of_offset(double m, void *p)
{
    offset_ctx *c = p;
    double theta[2] = {c->om, m};
    lt_like_point pt;
    lt_like_eval(c->l, c->w, theta, &pt);
    return exp(-0.5 * (pt.chi2 - c->shift));
}

/* chi2_marg = A - B^2/C + ln(C/2pi) is -2 ln of the integral of
 * exp(-chi2(M)/2) dM over the offset with a flat prior of unit density;
 * GSL's QAG integrates it by brute force (to 1e-12) over +-1 mag around the
 * best offset, where the integrand spans ~100 of its widths. */
static void test_offset_marginalisation(void **state)
{
    (void)state;
    const lt_cosmo_model *m = lt_cosmo_model_find("lcdm-flat");
    lt_like_spec spec;
    lt_like_spec_init(&spec, m);
    spec.exact = 1; /* the algebra of the offset, on the exact path */
    lt_like *marg = like_for(mag_survey, NULL, &spec);
    spec.offset = LT_OFFSET_SAMPLED;
    lt_like_spec_prior(&spec, "offset", (lt_prior){LT_PRIOR_UNIFORM, -1e6, 1e6}, NULL);
    spec.offset = LT_OFFSET_DEFAULT;
    lt_like_spec_fix(&spec, "h0", 70, NULL);
    lt_like *samp = like_for(mag_survey, NULL, &spec);
    assert_int_equal(lt_like_dim(samp), 2);
    lt_like_work *w = lt_like_work_alloc(marg), *w2 = lt_like_work_alloc(samp);
    gsl_integration_workspace *ws = gsl_integration_workspace_alloc(1000);
    for (double om = 0.15; om < 0.6; om += 0.1) {
        lt_like_point pm;
        lt_like_eval(marg, w, &om, &pm);
        /* chi2 shifted by chi2_min keeps the integrand near 1 */
        offset_ctx c = {samp, w2, om, pm.chi2};
        gsl_function f = {like_of_offset, &c};
        double val, e;
        assert_int_equal(gsl_integration_qag(&f, pm.offset - 1, pm.offset + 1, 0, 1e-12, 1000,
                                             GSL_INTEG_GAUSS61, ws, &val, &e),
                         GSL_SUCCESS);
        double brute = pm.chi2 - 2.0 * log(val);
        assert_rel(pm.chi2_eff, brute, 1e-8);
        /* and the best offset B/C is the minimum of chi2(M) */
        double at[2] = {om, pm.offset}, off[2] = {om, pm.offset + 1e-3};
        lt_like_point p1, p2;
        lt_like_eval(samp, w2, at, &p1);
        lt_like_eval(samp, w2, off, &p2);
        assert_rel(p1.chi2, pm.chi2, 1e-10);
        assert_true(p2.chi2 > p1.chi2);
        /* a fixed offset (--fix offset=X) enters the likelihood as that value:
         * chi2 at om equals the sampled chi2 at (om, X); before issue 17 it was
         * taken as 0 (chi2 of order 10^7 on this survey) */
        lt_like_spec fs;
        lt_like_spec_init(&fs, m);
        fs.exact = 1;
        lt_like_spec_fix(&fs, "offset", pm.offset, NULL);
        lt_like_spec_fix(&fs, "h0", 70, NULL);
        lt_like *fixed = like_for(mag_survey, NULL, &fs);
        assert_int_equal(lt_like_dim(fixed), 1);
        assert_int_equal(lt_like_offset_mode(fixed), LT_OFFSET_SAMPLED);
        lt_like_work *w3 = lt_like_work_alloc(fixed);
        lt_like_point p3;
        lt_like_eval(fixed, w3, &om, &p3);
        assert_rel(p3.chi2, p1.chi2, 1e-12);
        lt_like_work_free(w3);
        lt_like_free(fixed);
    }
    gsl_integration_workspace_free(ws);
    lt_like_work_free(w);
    lt_like_work_free(w2);
    lt_like_free(marg);
    lt_like_free(samp);
}

/* ---- measurements ---- */

/* A measurement term adds ((x - mean)/sd)^2 to chi2 and -ln(2 pi sd^2)/2
 * to the normalisation (the Gaussian density, closed form); x is a
 * parameter, a derived quantity from the cosmology (omega_k = 1 - omega_m
 * - omega_de with radiation off), or a parameter the model holds fixed. */
static void test_measurements(void **state)
{
    (void)state;
    lt_error err;
    lt_like_spec spec;
    /* h0 measured on mag data with a marginalised offset: h0 becomes free */
    lt_like_spec_init(&spec, lt_cosmo_model_find("lcdm"));
    spec.exact = 1;
    lt_like *plain = like_for(mag_survey, NULL, &spec);
    assert_int_equal(lt_like_spec_measure(&spec, "h0", 73.0, 1.0, &err), LT_OK);
    assert_int_equal(lt_like_spec_measure(&spec, "omega_k", 0.01, 0.02, &err), LT_OK);
    lt_like *l = like_for(mag_survey, NULL, &spec);
    assert_int_equal(lt_like_dim(l), 3);
    assert_string_equal(lt_like_param_name(l, 0), "h0");
    assert_true(lt_like_h0_known(l));
    assert_int_equal(lt_like_ndata(l), 62);
    assert_int_equal(lt_like_dof(l), 62 - 3 - 1);
    lt_like_work *w = lt_like_work_alloc(l), *wp = lt_like_work_alloc(plain);
    double th[3] = {71.5, 0.28, 0.75}, th_plain[2] = {0.28, 0.75};
    lt_like_point a, b;
    lt_like_eval(l, w, th, &a);
    lt_like_eval(plain, wp, th_plain, &b);
    double ok = 1.0 - 0.28 - 0.75;
    double want = b.chi2 + pow((71.5 - 73.0) / 1.0, 2) + pow((ok - 0.01) / 0.02, 2);
    assert_true(fabs(a.chi2 - want) < 1e-9);
    assert_true(fabs(a.chi2_eff - (b.chi2_eff + want - b.chi2)) < 1e-9);
    double norm = lt_like_lognorm(plain) - 0.5 * log(2 * M_PI * 1.0) - 0.5 * log(2 * M_PI * 4e-4);
    assert_true(fabs(lt_like_lognorm(l) - norm) < 1e-12);
    assert_true(fabs(lt_like_quantity(l, th, "omega_k") - ok) < 1e-15);
    lt_like_work_free(w);
    lt_like_work_free(wp);
    lt_like_free(l);
    lt_like_free(plain);
    /* no survey: measurements alone; omega_k on a flat model is 0 and w0 in
     * LCDM is -1 */
    lt_like_spec_init(&spec, lt_cosmo_model_find("lcdm-flat"));
    lt_like_spec_measure(&spec, "omega_k", 0.002, 0.001, &err);
    lt_like_spec_measure(&spec, "w0", -0.9, 0.05, &err);
    lt_like_spec_measure(&spec, "omega_m", 0.31, 0.01, &err);
    l = like_for(NULL, NULL, &spec);
    assert_null(lt_like_survey(l));
    assert_int_equal(lt_like_dim(l), 1);
    assert_false(lt_like_h0_known(l));
    w = lt_like_work_alloc(l);
    double om = 0.3;
    lt_like_eval(l, w, &om, &a);
    want = 4.0 + 4.0 + 1.0; /* (0 - 0.002)/0.001, (-1 + 0.9)/0.05, (0.3 - 0.31)/0.01 */
    assert_true(fabs(a.chi2 - want) < 1e-9);
    lt_like_work_free(w);
    lt_like_free(l);
    /* errors: an unknown quantity, a bad sd, an age without h0, nothing at all */
    lt_like_spec_init(&spec, lt_cosmo_model_find("lcdm"));
    assert_int_equal(lt_like_spec_measure(&spec, "h0", 70, 0, &err), LT_EINPUT);
    lt_like_spec_measure(&spec, "nope", 1, 1, &err);
    expect_spec_error(mag_survey, &spec, "nothing called 'nope'");
    lt_like_spec_init(&spec, lt_cosmo_model_find("lcdm"));
    expect_spec_error(NULL, &spec, "nothing to fit");
    lt_like_spec_init(&spec, lt_cosmo_model_find("lcdm"));
    lt_prior pr = {LT_PRIOR_UNIFORM, 60, 80};
    lt_like_spec_prior(&spec, "h0", pr, &err);
    lt_like_spec_measure(&spec, "omega_k", 0, 0.1, &err);
    expect_spec_error(mag_survey, &spec, "h0 is degenerate");
}

/* ---- derived parameters ---- */
static void test_derived(void **state)
{
    (void)state;
    /* flat LCDM: omega_de = 1 - Om, q0 = Om/2 - OL, z_t = (2 OL/Om)^(1/3) - 1
     * (from q = (1/2) sum (1 + 3w) Omega_i), age by Carroll, Press & Turner
     * 1992 (ARA&A 30, 499) */
    lt_like *l = like_for(mu_survey, "lcdm-flat", NULL);
    double theta[] = {68.0, 0.3};
    double ol = 0.7;
    assert_rel(lt_like_derived(l, theta, LT_DER_OMEGA_DE), ol, 1e-15);
    assert_rel(lt_like_derived(l, theta, LT_DER_Q0), 0.15 - 0.7, 1e-14);
    assert_rel(lt_like_derived(l, theta, LT_DER_Z_T), cbrt(2 * ol / 0.3) - 1, 1e-12);
    lt_cosmo c;
    lt_like_cosmo(l, theta, &c, NULL);
    double age = 2 / (3 * sqrt(ol)) * asinh(sqrt(ol / 0.3)) * c.th_gyr;
    assert_rel(lt_like_derived(l, theta, LT_DER_AGE), age, 1e-10);
    lt_like_free(l);
    /* curved: omega_k = 1 - Om - Ode; no acceleration today: no z_t */
    l = like_for(mag_survey, "lcdm", NULL);
    double t2[] = {0.3, 0.6}, t3[] = {0.9, 0.2};
    assert_rel(lt_like_derived(l, t2, LT_DER_OMEGA_K), 0.1, 1e-14);
    assert_true(isnan(lt_like_derived(l, t3, LT_DER_Z_T)));
    assert_true(isnan(lt_like_derived(l, t3, LT_DER_AGE)) == 0 ||
                !lt_like_has_derived(l, LT_DER_AGE));
    lt_like_free(l);
    /* the w0-wa pivot: for Cov(w0, wa) = -0.2 and Var(wa) = 0.8,
     * 1 - a_p = 0.25, a_p = 0.75, z_p = 1/3 (Huterer & Turner 2001) */
    assert_rel(lt_pivot_redshift(-0.2, 0.8), 1.0 / 3.0, 1e-15);
    assert_true(isnan(lt_pivot_redshift(-0.2, 0.0)));
    assert_true(isnan(lt_pivot_redshift(-1.0, 0.8))); /* a_p <= 0 */
}

/* dl data: chi2 is the Gaussian in d_L itself. */
static void test_distance_data(void **state)
{
    (void)state;
    lt_like *l = like_for(dl_survey, "lcdm-flat", NULL);
    assert_int_equal(lt_like_dim(l), 2);
    lt_like_work *w = lt_like_work_alloc(l);
    double theta[] = {70.0, 0.3};
    lt_like_point pt;
    lt_like_eval(l, w, theta, &pt);
    /* by hand: r = dl_obs - (1 + zhel) D_M, chi2 = r^T C^-1 r */
    size_t n = dl_survey->n;
    double *dm = malloc(n * sizeof *dm), *r = malloc(n * sizeof *r);
    double *work = malloc(lt_cov_work_size(dl_survey->cov) * sizeof *work);
    lt_cosmo c;
    lt_like_cosmo(l, theta, &c, NULL);
    lt_zgrid *g = lt_zgrid_alloc(n, dl_survey->z, NULL);
    lt_cosmo_table t = {.transverse = dm};
    lt_cosmo_eval(&c, g, &t, NULL);
    for (size_t i = 0; i < n; i++)
        r[i] = dl_survey->obs[i] - (1 + dl_survey->zhel[i]) * dm[i];
    assert_rel(pt.chi2, lt_cov_chi2(dl_survey->cov, r, work), 1e-12);
    lt_zgrid_free(g);
    free(dm);
    free(r);
    free(work);
    lt_like_work_free(w);
    lt_like_free(l);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_priors),           cmocka_unit_test(test_free_parameters),
        cmocka_unit_test(test_spec_errors),      cmocka_unit_test(test_bounds),
        cmocka_unit_test(test_offset_marginalisation),
        cmocka_unit_test(test_measurements), cmocka_unit_test(test_derived),
        cmocka_unit_test(test_distance_data),
    };
    return cmocka_run_group_tests_name("likelihood", tests, setup, teardown);
}
