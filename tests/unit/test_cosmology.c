/*
 * Unit tests of the cosmology module's API: the model table, parameters,
 * checks and error cases, input order, and the quadrature tables. Checks of
 * the numbers against outside sources are in tests/reference/.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <string.h>

#include <cmocka.h>
#include <gsl/gsl_integration.h>

#include "lantern/lantern.h"
#include "cosmology/internal.h"
#include "../testutil.h"

static lt_cosmo make(const char *model, double h0, double om, double ode, double w0,
                     double wa, double t_cmb)
{
    lt_cosmo_params p = {h0, om, ode, w0, wa, t_cmb, 3.046, 0.0, 0.02237};
    lt_cosmo c;
    lt_error err;
    const lt_cosmo_model *m = lt_cosmo_model_find(model);
    assert_non_null(m);
    assert_int_equal(lt_cosmo_init(&c, m, &p, &err), LT_OK);
    return c;
}

/* ---- the model table ---- */
static void test_model_table(void **state)
{
    (void)state;
    static const char *names[] = {"lcdm-flat", "lcdm", "wcdm-flat",
                                  "wcdm",      "w0wa", "w0wa-flat"};
    assert_int_equal(lt_cosmo_model_count(), 6);
    for (size_t i = 0; i < 6; i++) {
        const lt_cosmo_model *m = lt_cosmo_model_find(names[i]);
        assert_non_null(m);
        assert_string_equal(m->name, names[i]);
        assert_int_equal(m->flat, strstr(names[i], "-flat") != NULL);
        assert_true(lt_cosmo_model_uses(m, LT_P_H0));
        assert_true(lt_cosmo_model_uses(m, LT_P_OMEGA_M));
        assert_true(lt_cosmo_model_uses(m, LT_P_T_CMB));
        assert_int_equal(lt_cosmo_model_uses(m, LT_P_OMEGA_DE), !m->flat);
        assert_int_equal(lt_cosmo_model_uses(m, LT_P_W0), names[i][0] == 'w');
        assert_int_equal(lt_cosmo_model_uses(m, LT_P_WA), strncmp(names[i], "w0wa", 4) == 0);
    }
    assert_null(lt_cosmo_model_find("lcdm_flat"));
    assert_null(lt_cosmo_model_find(""));
    assert_null(lt_cosmo_model_find(NULL));
    assert_null(lt_cosmo_model_at(6));
    /* lookup: the model, or an error at file:line listing every model of
     * the table (the list is built from it, so a new model joins it) */
    lt_error err;
    lt_error_clear(&err);
    assert_ptr_equal(lt_cosmo_model_lookup("wcdm", "a.ini", 3, &err), lt_cosmo_model_find("wcdm"));
    assert_int_equal(err.code, LT_OK);
    assert_null(lt_cosmo_model_lookup("lcdm_flat", "a.ini", 7, &err));
    assert_int_equal(err.code, LT_EINPUT);
    assert_string_equal(err.file, "a.ini");
    assert_int_equal(err.line, 7);
    assert_string_equal(err.msg, "unknown model 'lcdm_flat' (models: lcdm-flat, lcdm, "
                                 "wcdm-flat, wcdm, w0wa-flat, w0wa)");
}

/* Lists of models (compare --models, [run] models, [campaign] models):
 * commas or blanks between, in order; every refusal at file:line. */
static void test_model_list(void **state)
{
    (void)state;
    const lt_cosmo_model *m[3];
    size_t n = 99;
    lt_error err;
    lt_error_clear(&err);
    assert_int_equal(lt_cosmo_model_list(" wcdm,lcdm-flat \tw0wa", "f", 1, "", 3, m, &n, &err),
                     LT_OK);
    assert_int_equal(n, 3);
    assert_string_equal(m[0]->name, "wcdm");
    assert_string_equal(m[1]->name, "lcdm-flat");
    assert_string_equal(m[2]->name, "w0wa");
    static const struct {
        const char *text, *msg;
    } bad[] = {
        {"lcdm, lcdmx", "[run] models: unknown model 'lcdmx' (models: lcdm-flat,"},
        {"lcdm, wcdm, lcdm", "[run] models: lcdm is listed twice"},
        {"lcdm wcdm w0wa lcdm-flat", "[run] models: at most 3 models"},
        {" , ,", "[run] models: no models given"},
        {"", "[run] models: no models given"},
    };
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        lt_error_clear(&err);
        assert_int_equal(lt_cosmo_model_list(bad[i].text, "run.ini", 4, "[run] models: ", 3, m,
                                             &n, &err),
                         LT_EINPUT);
        assert_string_equal(err.file, "run.ini");
        assert_int_equal(err.line, 4);
        if (strncmp(err.msg, bad[i].msg, strlen(bad[i].msg)) != 0)
            fail_msg("'%s': got '%s', want '%s...'", bad[i].text, err.msg, bad[i].msg);
    }
}

static void test_param_names(void **state)
{
    (void)state;
    for (int id = 0; id < LT_P_COUNT; id++)
        assert_int_equal(lt_cosmo_param_find(lt_cosmo_param_name(id)), id);
    assert_int_equal(lt_cosmo_param_find("omega_k"), -1);
    assert_int_equal(lt_cosmo_param_find("H0"), -1);
    assert_null(lt_cosmo_param_name(LT_P_COUNT));
    lt_cosmo_params p;
    lt_cosmo_params_default(&p);
    assert_true(p.h0 == 70.0 && p.omega_m == 0.3 && p.omega_de == 0.7);
    assert_true(p.w0 == -1.0 && p.wa == 0.0 && p.t_cmb == 0.0 && p.n_eff == 3.046);
    *lt_cosmo_params_slot(&p, LT_P_WA) = 0.25;
    assert_true(p.wa == 0.25);
}

static void test_params_set(void **state)
{
    (void)state;
    const lt_cosmo_model *flat = lt_cosmo_model_find("lcdm-flat");
    const lt_cosmo_model *w = lt_cosmo_model_find("wcdm");
    lt_cosmo_params p;
    lt_cosmo_params_default(&p);
    lt_error err;
    assert_int_equal(lt_cosmo_params_set(&p, flat, "omega_m", 0.25, &err), LT_OK);
    assert_true(p.omega_m == 0.25);
    assert_int_equal(lt_cosmo_params_set(&p, flat, "omega_de", 0.7, &err), LT_EINPUT);
    assert_non_null(strstr(err.msg, "derived"));
    assert_int_equal(lt_cosmo_params_set(&p, w, "omega_k", 0.1, &err), LT_EINPUT);
    assert_non_null(strstr(err.msg, "omega_de"));
    assert_int_equal(lt_cosmo_params_set(&p, w, "wa", 0.1, &err), LT_EINPUT);
    assert_non_null(strstr(err.msg, "no parameter wa"));
    assert_int_equal(lt_cosmo_params_set(&p, w, "Om0", 0.1, &err), LT_EINPUT);
    assert_non_null(strstr(err.msg, "unknown parameter 'Om0'"));
    assert_int_equal(lt_cosmo_params_set(&p, w, "w0", -0.8, &err), LT_OK);
    assert_true(p.w0 == -0.8);
}

/* ---- lt_cosmo_init ---- */
static void test_init_errors(void **state)
{
    (void)state;
    const lt_cosmo_model *m = lt_cosmo_model_find("lcdm");
    lt_cosmo c;
    lt_error err;
    lt_cosmo_params p;
    lt_cosmo_params_default(&p);
    p.h0 = 0.0;
    assert_int_equal(lt_cosmo_init(&c, m, &p, &err), LT_EINPUT);
    assert_non_null(strstr(err.msg, "h0"));
    lt_cosmo_params_default(&p);
    p.omega_m = NAN;
    assert_int_equal(lt_cosmo_init(&c, m, &p, &err), LT_EINPUT);
    assert_non_null(strstr(err.msg, "omega_m"));
    lt_cosmo_params_default(&p);
    p.t_cmb = -1.0;
    assert_int_equal(lt_cosmo_init(&c, m, &p, &err), LT_EINPUT);
    lt_cosmo_params_default(&p);
    p.n_eff = -0.5;
    assert_int_equal(lt_cosmo_init(&c, m, &p, &err), LT_EINPUT);
    assert_int_equal(lt_cosmo_init(&c, NULL, &p, &err), LT_EINPUT);
    /* a NULL error record is allowed */
    p.h0 = -3.0;
    assert_int_equal(lt_cosmo_init(&c, m, &p, NULL), LT_EINPUT);
}

static void test_init_derived(void **state)
{
    (void)state;
    lt_cosmo c = make("lcdm-flat", 70, 0.3, 0.123 /* ignored */, -0.5, 0.5, 0.0);
    assert_true(c.p.omega_de == 0.7 && c.omega_k == 0.0 && c.omega_r == 0.0);
    assert_true(c.p.w0 == -1.0 && c.p.wa == 0.0); /* not read by lcdm */
    c = make("wcdm", 70, 0.3, 0.6, -0.9, 0.5, 0.0);
    assert_rel(c.omega_k, 0.1, 1e-15);
    assert_true(c.p.wa == 0.0);
    c = make("w0wa-flat", 70, 0.3, 0.0, -0.9, 0.5, 2.7255);
    assert_rel(c.p.omega_de + c.p.omega_m + c.omega_r, 1.0, 1e-15);
    /* Massless neutrinos: 7/8 (4/11)^(4/3) = 0.2271 per species of photons. */
    assert_rel(c.omega_nu, c.omega_gamma * 0.22710731766 * 3.046, 1e-10);
    assert_rel(c.dh_mpc, 299792.458 / 70.0, 1e-15);
    /* 1/H0 for H0 = 100 km/s/Mpc is 9.778 Gyr (common practice, no source). */
    assert_rel(c.th_gyr * 0.7, 9.7779222, 1e-7);
}

/* ---- scalar functions ---- */
static void test_e_w_q(void **state)
{
    (void)state;
    lt_cosmo c = make("w0wa", 70, 0.3, 0.65, -0.9, 0.3, 0.0);
    assert_rel(lt_cosmo_e2(&c, 0.0), 1.0, 1e-15);
    assert_rel(lt_cosmo_w(&c, 0.0), -0.9, 1e-15);
    assert_rel(lt_cosmo_w(&c, 1.0), -0.9 + 0.3 * 0.5, 1e-15);
    assert_rel(lt_cosmo_hubble(&c, 0.0), 70.0, 1e-15);
    /* E^2 by hand at z = 1: 0.3*8 + 0.05*4 + 0.65 * 2^(3*0.4) exp(-0.45) */
    double e2 = 0.3 * 8 + 0.05 * 4 + 0.65 * pow(2.0, 1.2) * exp(-0.45);
    assert_rel(lt_cosmo_e2(&c, 1.0), e2, 1e-14);
    assert_rel(lt_cosmo_efunc(&c, 1.0), sqrt(e2), 1e-14);
    /* q = (1/2) d ln E^2 / d ln(1+z) - 1, against a centred difference. */
    for (double z = 0.0; z < 3.0; z += 0.37) {
        double h = 1e-5, x = log1p(z);
        double d = (log(lt_cosmo_e2(&c, expm1(x + h))) - log(lt_cosmo_e2(&c, expm1(x - h)))) /
                   (2 * h);
        assert_rel(lt_cosmo_q(&c, z), 0.5 * d - 1.0, 1e-8);
    }
    /* E^2 < 0 gives NaN for E and H, not a silent number */
    lt_cosmo b = make("lcdm", 70, 0.1, 2.0, -1, 0, 0);
    assert_true(isnan(lt_cosmo_efunc(&b, 1.0)));
}

/* ---- grids ---- */
static void test_zgrid_errors(void **state)
{
    (void)state;
    lt_error err;
    double z[] = {0.1, -0.2, 0.3};
    assert_null(lt_zgrid_alloc(0, z, &err));
    assert_int_equal(err.code, LT_EINPUT);
    assert_null(lt_zgrid_alloc(3, z, &err));
    assert_non_null(strstr(err.msg, "number 2"));
    z[1] = INFINITY;
    assert_null(lt_zgrid_alloc(3, z, &err));
    z[1] = NAN;
    assert_null(lt_zgrid_alloc(3, z, &err));
    lt_zgrid_free(NULL); /* allowed, as free(NULL) */
}

/* Any order in, the same order out; duplicates and z = 0 are fine. */
static void test_input_order(void **state)
{
    (void)state;
    double z[] = {2.0, 0.1, 0.0, 1.0, 0.1, 5.0, 0.5};
    double zs[] = {0.0, 0.1, 0.1, 0.5, 1.0, 2.0, 5.0};
    int where[] = {5, 1, 0, 4, 1, 6, 3}; /* z[i] == zs[where[i]] */
    lt_error err;
    lt_zgrid *g = lt_zgrid_alloc(7, z, &err), *gs = lt_zgrid_alloc(7, zs, &err);
    assert_non_null(g);
    assert_non_null(gs);
    assert_int_equal(lt_zgrid_size(g), 7);
    lt_cosmo c = make("w0wa", 68, 0.31, 0.7, -0.95, -0.2, 2.7255);
    double a[8][7], b[8][7];
    lt_cosmo_table ta = {a[0], a[1], a[2], a[3], a[4], a[5], a[6], a[7]};
    lt_cosmo_table tb = {b[0], b[1], b[2], b[3], b[4], b[5], b[6], b[7]};
    assert_int_equal(lt_cosmo_eval(&c, g, &ta, &err), LT_OK);
    assert_int_equal(lt_cosmo_eval(&c, gs, &tb, &err), LT_OK);
    for (int k = 0; k < 8; k++)
        for (int i = 0; i < 7; i++)
            assert_true(memcmp(&a[k][i], &b[k][where[i]], sizeof(double)) == 0);
    /* z = 0: zero distances, -inf distance modulus, H = H0 */
    assert_true(a[0][2] == 0.0 && a[1][2] == 0.0 && a[5][2] == 0.0);
    assert_true(isinf(a[4][2]) && a[4][2] < 0);
    assert_rel(a[7][2], 68.0, 1e-15);
    /* the definitions that tie the columns together */
    for (int i = 0; i < 7; i++) {
        assert_rel(a[2][i], (1 + z[i]) * a[1][i], 1e-15);
        assert_rel(a[3][i], a[1][i] / (1 + z[i]), 1e-15);
        if (z[i] > 0)
            assert_rel(a[4][i], 5 * log10(a[2][i]) + 25, 1e-15);
    }
    lt_zgrid_free(g);
    lt_zgrid_free(gs);
}

/* A table with only some columns asked for gives the same numbers. */
static void test_partial_table(void **state)
{
    (void)state;
    double z[] = {0.3, 0.9, 1.7};
    lt_error err;
    lt_zgrid *g = lt_zgrid_alloc(3, z, &err);
    lt_cosmo c = make("wcdm", 70, 0.3, 0.8, -1.1, 0, 0);
    double full[8][3], dm[3], age[3];
    lt_cosmo_table t = {full[0], full[1], full[2], full[3], full[4], full[5], full[6], full[7]};
    lt_cosmo_table p = {.transverse = dm, .age = age};
    assert_int_equal(lt_cosmo_eval(&c, g, &t, &err), LT_OK);
    assert_int_equal(lt_cosmo_eval(&c, g, &p, &err), LT_OK);
    for (int i = 0; i < 3; i++) {
        assert_true(dm[i] == full[1][i]);
        assert_true(age[i] == full[6][i]);
    }
    lt_zgrid_free(g);
}

/* ---- the physical domain ---- */

/* E^2 = Om y^3 + Ok y^2 + OL with Ok = -3 Om, OL = 1 + 2 Om has its minimum
 * 1 - 2 Om at z = 1 (y = 2). Om = 0.5 + 1e-7 dips below zero only within
 * |z - 1| < 4e-4, far narrower than the quadrature nodes: the watch must
 * find the dip by minimising between nodes. */
static lt_cosmo near_bounce(double eps)
{
    double om = 0.5 + eps;
    return make("lcdm", 70, om, 1 + 2 * om, -1, 0, 0);
}

static void test_dip_between_nodes(void **state)
{
    (void)state;
    double z[] = {0.5, 1.5};
    lt_error err;
    lt_zgrid *g = lt_zgrid_alloc(2, z, &err);
    double dc[2];
    lt_cosmo_table t = {.comoving = dc};
    lt_cosmo bad = near_bounce(1e-7), good = near_bounce(-1e-7);
    /* the dip is real: E^2 at z = 1 is negative */
    assert_true(lt_cosmo_e2(&bad, 1.0) < 0.0);
    assert_int_equal(lt_cosmo_eval(&bad, g, &t, &err), LT_EDOMAIN);
    assert_non_null(strstr(err.msg, "not positive at z = 1 "));
    /* Without the dip the universe loiters near z = 1 and light reaches the
     * antipode (Ok = -1.5) instead; what matters here is that E^2 > 0 is
     * not reported falsely. */
    assert_int_equal(lt_cosmo_eval(&good, g, &t, &err), LT_EDOMAIN);
    assert_non_null(strstr(err.msg, "antipode"));
    /* The age integral, on its own nodes in s = (1+z)^-1/2, sees the dip too. */
    double age;
    assert_int_equal(lt_cosmo_age(&bad, 0.0, &age, &err), LT_EDOMAIN);
    assert_non_null(strstr(err.msg, "no big bang"));
    assert_int_equal(lt_cosmo_age(&good, 0.0, &age, &err), LT_OK);
    assert_true(isfinite(age) && age > 0.0);
    lt_zgrid_free(g);
}

static void test_bounce_and_antipode(void **state)
{
    (void)state;
    lt_error err;
    double zlo[] = {0.05, 0.1}, zhi[] = {0.1, 2.0};
    lt_zgrid *glo = lt_zgrid_alloc(2, zlo, &err), *ghi = lt_zgrid_alloc(2, zhi, &err);
    double dc[2], age[2];
    lt_cosmo_table t = {.comoving = dc}, ta = {.comoving = dc, .age = age};
    /* Om 0.1, OL 2: E^2(z=1) = 0.8 - 4.4 + 2 < 0, but E^2 > 0 up to z = 0.1 */
    lt_cosmo b = make("lcdm", 70, 0.1, 2.0, -1, 0, 0);
    assert_int_equal(lt_cosmo_eval(&b, glo, &t, &err), LT_OK);
    assert_int_equal(lt_cosmo_eval(&b, ghi, &t, &err), LT_EDOMAIN);
    assert_non_null(strstr(err.msg, "not positive"));
    /* distances to z = 0.1 exist, but there was no big bang: no ages */
    assert_int_equal(lt_cosmo_eval(&b, glo, &ta, &err), LT_EDOMAIN);
    assert_non_null(strstr(err.msg, "no big bang"));
    double age1;
    assert_int_equal(lt_cosmo_age(&b, 0.0, &age1, &err), LT_EDOMAIN);
    /* Om 0.5, OL 1.5 (Ok = -1): light reaches the antipode before z = 100 */
    lt_cosmo a = make("lcdm", 70, 0.5, 1.5, -1, 0, 0);
    double zfar[] = {100.0};
    lt_zgrid *gfar = lt_zgrid_alloc(1, zfar, &err);
    assert_int_equal(lt_cosmo_eval(&a, ghi, &t, &err), LT_OK);
    assert_int_equal(lt_cosmo_eval(&a, gfar, &t, &err), LT_EDOMAIN);
    assert_non_null(strstr(err.msg, "antipode"));
    lt_zgrid_free(glo);
    lt_zgrid_free(ghi);
    lt_zgrid_free(gfar);
}

static void test_age_api(void **state)
{
    (void)state;
    lt_error err;
    double age;
    lt_cosmo c = make("lcdm-flat", 70, 0.3, 0, -1, 0, 0);
    assert_int_equal(lt_cosmo_age(&c, -0.5, &age, &err), LT_EINPUT);
    assert_int_equal(lt_cosmo_age(&c, NAN, &age, &err), LT_EINPUT);
    /* lt_cosmo_age and the grid agree */
    double z[] = {0.0, 0.7, 3.0}, ages[3];
    lt_zgrid *g = lt_zgrid_alloc(3, z, &err);
    lt_cosmo_table t = {.age = ages};
    assert_int_equal(lt_cosmo_eval(&c, g, &t, &err), LT_OK);
    for (int i = 0; i < 3; i++) {
        assert_int_equal(lt_cosmo_age(&c, z[i], &age, &err), LT_OK);
        assert_rel(age, ages[i], 1e-12);
    }
    lt_zgrid_free(g);
    /* de Sitter: infinite age, reported as +inf, not an error; phantom too */
    lt_cosmo ds = make("lcdm-flat", 70, 0.0, 0, -1, 0, 0);
    assert_int_equal(lt_cosmo_age(&ds, 0.0, &age, &err), LT_OK);
    assert_true(isinf(age) && age > 0);
    lt_cosmo ph = make("wcdm-flat", 70, 0.0, 0, -1.2, 0, 0);
    assert_int_equal(lt_cosmo_age(&ph, 1.0, &age, &err), LT_OK);
    assert_true(isinf(age));
    /* a matter-free flat universe with w > -1 is finite: for constant w the
     * age is 2 / (3 (1 + w) H0) (the power law a ~ t^(2/(3(1+w)))) */
    lt_cosmo wq = make("wcdm-flat", 70, 0.0, 0, -0.5, 0, 0);
    assert_int_equal(lt_cosmo_age(&wq, 0.0, &age, &err), LT_OK);
    assert_rel(age, 2.0 / (3.0 * 0.5) * wq.th_gyr, 1e-9);
}

/* ---- the quadrature tables against GSL ---- */
static void test_gl_rules(void **state)
{
    (void)state;
    static const int ns[] = {2, 3, 4, 6, 8};
    for (size_t k = 0; k < 5; k++) {
        const lt_gl_rule *r = lt_gl_rule_get(ns[k]);
        assert_non_null(r);
        gsl_integration_glfixed_table *t = gsl_integration_glfixed_table_alloc(ns[k]);
        for (int i = 0; i < ns[k]; i++) {
            double x, w;
            gsl_integration_glfixed_point(-1, 1, i, &x, &w, t);
            assert_abs(r->x[i], x, 1e-16);
            assert_abs(r->w[i], w, 1e-16);
        }
        gsl_integration_glfixed_table_free(t);
    }
    assert_null(lt_gl_rule_get(5));
}

/* Dense redshifts use few nodes: the cost of many redshifts is about one
 * pass, not one integration each. */
static void test_node_budget(void **state)
{
    (void)state;
    enum { N = 2000 };
    static double z[N];
    for (int i = 0; i < N; i++)
        z[i] = 0.01 + 1.49 * i / (N - 1.0);
    lt_error err;
    lt_zgrid *g = lt_zgrid_alloc(N, z, &err);
    assert_true(lt_zgrid_nodes(g) <= 3 * N);
    lt_zgrid_free(g);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_model_table),     cmocka_unit_test(test_param_names),
        cmocka_unit_test(test_params_set),      cmocka_unit_test(test_init_errors),
        cmocka_unit_test(test_init_derived),    cmocka_unit_test(test_e_w_q),
        cmocka_unit_test(test_zgrid_errors),    cmocka_unit_test(test_input_order),
        cmocka_unit_test(test_partial_table),   cmocka_unit_test(test_dip_between_nodes),
        cmocka_unit_test(test_bounce_and_antipode), cmocka_unit_test(test_age_api),
        cmocka_unit_test(test_model_list), cmocka_unit_test(test_gl_rules),        cmocka_unit_test(test_node_budget),
    };
    return cmocka_run_group_tests_name("cosmology", tests, NULL, NULL);
}
