/*
 * Unit tests of the survey module: tables in their awkward-but-valid forms
 * (quoted CSV, pandas' index column, names in any case, header-less
 * tables), the header rule, covariance algebra (dense against structured,
 * against GSL's Cholesky as an outside reference), matrix files, cuts and
 * stats.
 * The malformed-file corpus is exercised end to end in
 * tests/e2e/test_survey_errors.sh.
 */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <cmocka.h>
#include <fitsio.h>
#include <gsl/gsl_eigen.h>
#include <gsl/gsl_linalg.h>

#include "lantern/lantern.h"
#include "../testutil.h"

static char dir[256];

#define TMP(name, text) lt_test_write(dir, name, text, sizeof(text) - 1)

static lt_survey *read_survey(const char *data, const char *columns, lt_error *err)
{
    lt_survey_spec spec;
    lt_survey_spec_init(&spec);
    spec.data = data;
    spec.columns = columns;
    return lt_survey_read(&spec, err);
}

/* ---- tables ---- */
static void test_awkward_text(void **state)
{
    (void)state;
    /* BOM, CRLF, a '#' header, tabs, blank lines, a comment line */
    const char *p = TMP("awkward.txt", "\xEF\xBB\xBF\r\n#name\tzcmb  zhel mb dmb\r\n\r\n"
                                       "sn1\t0.1 0.11 20.0 0.1\r\n# a comment\r\n"
                                       "sn2 0.2\t0.21 21.5 0.12\r\n\r\n");
    lt_error err;
    lt_survey *s = read_survey(p, "z=zcmb,zhel=zhel,mag=mb,err=dmb,id=name", &err);
    if (!s)
        print_error("%s\n", err.msg);
    assert_non_null(s);
    assert_int_equal(s->n, 2);
    assert_int_equal(s->kind, LT_OBS_MAG);
    assert_true(s->z[0] == 0.1 && s->zhel[0] == 0.11 && s->obs[0] == 20.0 && s->err[0] == 0.1);
    assert_true(s->z[1] == 0.2 && s->zhel[1] == 0.21 && s->obs[1] == 21.5 && s->err[1] == 0.12);
    assert_string_equal(s->id[0], "sn1");
    assert_string_equal(s->id[1], "sn2");
    assert_int_equal(s->nwarnings, 0);
    lt_survey_free(s);
}

static void test_csv_and_defaults(void **state)
{
    (void)state;
    const char *p = TMP("t.csv", "id, z ,mu,err\n a , 0.5 ,42.1,0.2\nb,1.0,44.0,0.25\n");
    lt_error err;
    lt_survey *s = read_survey(p, "z=z,mu=mu,err=err,id=id", &err);
    assert_non_null(s);
    assert_int_equal(s->kind, LT_OBS_MU);
    assert_string_equal(s->id[0], "a"); /* CSV fields are trimmed */
    assert_true(s->zhel[1] == 1.0);     /* zhel defaults to z ... */
    assert_int_equal(s->nwarnings, 1);  /* ... and says so */
    assert_non_null(strstr(s->warnings[0], "zhel"));
    assert_int_equal(lt_cov_kind_of(s->cov), LT_COV_DIAGONAL);
    /* the covariance is diag(err^2) */
    double r[2] = {0.2, 0.5}, work[8];
    assert_rel(lt_cov_chi2(s->cov, r, work), 1.0 + 4.0, 1e-14);
    lt_survey_free(s);
}

/* Trailing header names that no row fills are ignored with one warning,
 * unless a role maps one of them. */
static void test_trailing_header(void **state)
{
    (void)state;
    const char *p = TMP("trail.txt", "#z mb dmb extra1 extra2\n0.1 20 0.1\n0.2 21 0.1\n");
    lt_error err;
    lt_survey *s = read_survey(p, "z=z,mag=mb,err=dmb", &err);
    assert_non_null(s);
    assert_int_equal(s->nwarnings, 2); /* trailing names; no zhel */
    assert_non_null(strstr(s->warnings[0], "extra1, extra2"));
    assert_non_null(strstr(s->warnings[0], ":1:"));
    assert_string_equal(s->warning_ids[0], LT_WARN_HEADER_EXTRA); /* each with its kind */
    assert_string_equal(s->warning_ids[1], LT_WARN_NO_ZHEL);
    lt_survey_free(s);
    assert_null(read_survey(p, "z=z,mag=mb,err=extra2", &err));
    assert_int_equal(err.line, 2);
    assert_non_null(strstr(err.msg, "column 'extra2' (err) is field 5, but rows have 3"));
    /* more fields than names: columns would shift */
    p = TMP("wide.txt", "z mb dmb\n0.1 20 0.1 7\n");
    assert_null(read_survey(p, "z=z,mag=mb,err=dmb", &err));
    assert_int_equal(err.line, 2);
    assert_non_null(strstr(err.msg, "would shift"));
}

static void test_colmap_errors(void **state)
{
    (void)state;
    const char *p = TMP("ok.txt", "z mb dmb\n0.1 20 0.1\n");
    lt_error err;
    static const struct {
        const char *columns, *what;
    } cases[] = {
        {"z=z,mag=mb,err=dmb,foo=bar", "unknown role 'foo'"},
        {"z=z,mag=mb,mu=dmb", "more than one observable"},
        {"z=z,z=mb,err=dmb", "role 'z' mapped twice"},
        {"mag=mb,err=dmb", "map at least z"},
        {"z=z,err=dmb", "map at least z"},
        {"z=z,mag=mb", "map the error column"},
        {"z=z,mag=mb,err=mb", "mapped to both"},
        {"z,mag=mb", "not role=column"},
        {"", "no column mapping"},
        {"z=zcmb,mag=mb,err=dmb", "no column 'zcmb' for z (the header names: z, mb, dmb)"},
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        assert_null(read_survey(p, cases[i].columns, &err));
        if (!strstr(err.msg, cases[i].what))
            print_error("'%s': message '%s' lacks '%s'\n", cases[i].columns, err.msg,
                        cases[i].what);
        assert_non_null(strstr(err.msg, cases[i].what));
    }
}

/* ---- covariance algebra ---- */

/* chi2 = r^T C^-1 r by GSL's Cholesky (gsl_linalg_cholesky_decomp1 and
 * _solve): a reference independent of LAPACK and of lantern's code. */
static double gsl_chi2(const double *c, const double *r, size_t n)
{
    gsl_matrix *m = gsl_matrix_alloc(n, n);
    gsl_vector *b = gsl_vector_alloc(n), *x = gsl_vector_alloc(n);
    for (size_t i = 0; i < n; i++) {
        gsl_vector_set(b, i, r[i]);
        for (size_t j = 0; j < n; j++)
            gsl_matrix_set(m, i, j, c[i * n + j]);
    }
    assert_int_equal(gsl_linalg_cholesky_decomp1(m), 0);
    gsl_linalg_cholesky_solve(m, b, x);
    double chi2 = 0;
    for (size_t i = 0; i < n; i++)
        chi2 += r[i] * gsl_vector_get(x, i);
    gsl_matrix_free(m);
    gsl_vector_free(b);
    gsl_vector_free(x);
    return chi2;
}

static void test_dense_vs_structured(void **state)
{
    (void)state;
    enum { N = 60, K = 5 };
    unsigned long long seed = 7;
    static double d[N], u[N * K], amp[K], full[N * N], r[N], x1[N], x2[N], work[N + K + 1];
    for (size_t i = 0; i < N; i++)
        d[i] = lt_test_uniform(&seed, 0.01, 0.04);
    for (size_t i = 0; i < N * K; i++)
        u[i] = lt_test_uniform(&seed, -1, 1);
    for (size_t j = 0; j < K; j++)
        amp[j] = lt_test_uniform(&seed, 0.05, 0.2);
    for (size_t i = 0; i < N; i++)
        r[i] = lt_test_uniform(&seed, -0.3, 0.3);
    lt_error err;
    lt_cov *s = lt_cov_alloc(N, &err);
    assert_int_equal(lt_cov_add_diag(s, d, &err), LT_OK);
    assert_int_equal(lt_cov_add_modes(s, K, u, amp, &err), LT_OK);
    assert_int_equal(lt_cov_kind_of(s), LT_COV_STRUCTURED);
    lt_cov_to_dense(s, full);
    lt_cov *dn = lt_cov_alloc(N, &err);
    assert_int_equal(lt_cov_add_dense(dn, full, &err), LT_OK);
    /* dense base plus modes: half the modes in the dense part */
    lt_cov *dm = lt_cov_alloc(N, &err);
    static double part[N * N];
    static double u2[N * 2], u3[N * 3];
    for (size_t i = 0; i < N; i++) {
        u2[i * 2] = u[i * K], u2[i * 2 + 1] = u[i * K + 1];
        u3[i * 3] = u[i * K + 2], u3[i * 3 + 1] = u[i * K + 3], u3[i * 3 + 2] = u[i * K + 4];
    }
    lt_cov *base = lt_cov_alloc(N, &err);
    lt_cov_add_diag(base, d, &err);
    lt_cov_add_modes(base, 2, u2, amp, &err);
    lt_cov_to_dense(base, part);
    lt_cov_free(base);
    lt_cov_add_dense(dm, part, &err);
    lt_cov_add_modes(dm, 3, u3, amp + 2, &err);
    assert_int_equal(lt_cov_kind_of(dm), LT_COV_DENSE_MODES);
    assert_int_equal(lt_cov_factor(s, &err), LT_OK);
    assert_int_equal(lt_cov_factor(dn, &err), LT_OK);
    assert_int_equal(lt_cov_factor(dm, &err), LT_OK);
    double want = gsl_chi2(full, r, N);
    assert_rel(lt_cov_chi2(dn, r, work), want, 1e-10);
    assert_rel(lt_cov_chi2(s, r, work), want, 1e-10);
    assert_rel(lt_cov_chi2(dm, r, work), want, 1e-10);
    /* solves agree too, and C x = r holds */
    lt_cov_solve(s, r, x1, work);
    lt_cov_solve(dn, r, x2, work);
    for (size_t i = 0; i < N; i++) {
        assert_rel(x1[i], x2[i], 1e-9);
        double cx = 0;
        for (size_t j = 0; j < N; j++)
            cx += full[i * N + j] * x1[j];
        assert_abs(cx, r[i], 1e-12);
    }
    /* the matrix survives factoring */
    static double again[N * N];
    lt_cov_to_dense(dn, again);
    assert_memory_equal(again, full, sizeof full);
    /* eigenvalue report: the same matrix, three storages */
    lt_cov_info a, b, c;
    assert_int_equal(lt_cov_inspect(s, &a, &err), LT_OK);
    assert_int_equal(lt_cov_inspect(dn, &b, &err), LT_OK);
    assert_int_equal(lt_cov_inspect(dm, &c, &err), LT_OK);
    assert_rel(a.min_eigenvalue, b.min_eigenvalue, 1e-10);
    assert_rel(a.condition, b.condition, 1e-10);
    assert_rel(c.condition, b.condition, 1e-10);
    assert_string_equal(b.method, "exact");
    lt_cov_free(s);
    lt_cov_free(dn);
    lt_cov_free(dm);
}

static void test_select(void **state)
{
    (void)state;
    enum { N = 30, K = 2 };
    unsigned long long seed = 11;
    static double d[N], u[N * K], full[N * N];
    for (size_t i = 0; i < N; i++)
        d[i] = lt_test_uniform(&seed, 0.5, 1.5);
    for (size_t i = 0; i < N * K; i++)
        u[i] = lt_test_uniform(&seed, -1, 1);
    lt_error err;
    lt_cov *s = lt_cov_alloc(N, &err);
    lt_cov_add_diag(s, d, &err);
    lt_cov_add_modes(s, K, u, NULL, &err);
    lt_cov_to_dense(s, full);
    lt_cov *dn = lt_cov_alloc(N, &err);
    lt_cov_add_dense(dn, full, &err);
    size_t idx[] = {3, 17, 0, 29, 8};
    lt_cov *a = lt_cov_select(s, 5, idx, &err), *b = lt_cov_select(dn, 5, idx, &err);
    double sub[25], ga[25], gb[25];
    for (int i = 0; i < 5; i++)
        for (int j = 0; j < 5; j++)
            sub[i * 5 + j] = full[idx[i] * N + idx[j]];
    lt_cov_to_dense(a, ga);
    lt_cov_to_dense(b, gb);
    for (int i = 0; i < 25; i++) {
        assert_rel(ga[i], sub[i], 1e-15);
        assert_true(gb[i] == sub[i]);
    }
    lt_cov_free(s);
    lt_cov_free(dn);
    lt_cov_free(a);
    lt_cov_free(b);
}

/* lt_cov_join: the block-diagonal matrix of its parts, element by element
 * (written out here from the parts' own dense forms), keeping the cheap
 * form where it can: diagonal parts stay diagonal, modes stay modes in
 * columns of their own, a dense part makes the base dense. Parts already
 * factored join as well (their values, not their factors). */
static void test_cov_join(void **state)
{
    (void)state;
    enum { NA = 7, NB = 5, NC = 4, N = NA + NB + NC };
    unsigned long long seed = 5;
    double da[NA], db[NB], dc[NC], ua[NA * 2], mc[NC * NC];
    for (int i = 0; i < NA; i++)
        da[i] = lt_test_uniform(&seed, 0.5, 1.5);
    for (int i = 0; i < NB; i++)
        db[i] = lt_test_uniform(&seed, 0.5, 1.5);
    for (int i = 0; i < NC; i++)
        dc[i] = lt_test_uniform(&seed, 0.5, 1.5);
    for (int i = 0; i < NA * 2; i++)
        ua[i] = lt_test_uniform(&seed, -1, 1);
    for (int i = 0; i < NC; i++)
        for (int j = 0; j < NC; j++)
            mc[i * NC + j] = (i == j ? 2.0 : 0.3) * (1 + 0.1 * (i + j));
    lt_error err;
    lt_cov *a = lt_cov_alloc(NA, &err), *b = lt_cov_alloc(NB, &err), *c = lt_cov_alloc(NC, &err);
    lt_cov_add_diag(a, da, &err);
    lt_cov_add_modes(a, 2, ua, NULL, &err);
    lt_cov_add_diag(b, db, &err);
    lt_cov_add_diag(c, dc, &err);
    lt_cov_add_dense(c, mc, &err);
    assert_int_equal(lt_cov_factor(a, &err), LT_OK); /* factored parts join too */
    static double fa[NA * NA], fb[NB * NB], fc[NC * NC], want[N * N], got[N * N];
    lt_cov_to_dense(a, fa);
    lt_cov_to_dense(b, fb);
    lt_cov_to_dense(c, fc);
    memset(want, 0, sizeof want);
    for (int i = 0; i < NA; i++)
        for (int j = 0; j < NA; j++)
            want[i * N + j] = fa[i * NA + j];
    for (int i = 0; i < NB; i++)
        for (int j = 0; j < NB; j++)
            want[(NA + i) * N + NA + j] = fb[i * NB + j];
    for (int i = 0; i < NC; i++)
        for (int j = 0; j < NC; j++)
            want[(NA + NB + i) * N + NA + NB + j] = fc[i * NC + j];
    lt_cov *ab[] = {a, b}, *abc[] = {a, b, c}, *bb[] = {b, b};
    lt_cov *j2 = lt_cov_join(ab, 2, &err), *j3 = lt_cov_join(abc, 3, &err);
    lt_cov *jd = lt_cov_join(bb, 2, &err);
    assert_int_equal(lt_cov_kind_of(j2), LT_COV_STRUCTURED);
    assert_int_equal(lt_cov_nmodes(j2), 2);
    assert_int_equal(lt_cov_kind_of(j3), LT_COV_DENSE_MODES);
    assert_int_equal(lt_cov_kind_of(jd), LT_COV_DIAGONAL);
    assert_int_equal(lt_cov_size(j3), N);
    lt_cov_to_dense(j3, got);
    for (int i = 0; i < N * N; i++)
        assert_rel(got[i], want[i], 1e-15);
    static double g2[(NA + NB) * (NA + NB)];
    lt_cov_to_dense(j2, g2);
    for (int i = 0; i < NA + NB; i++)
        for (int j = 0; j < NA + NB; j++)
            assert_rel(g2[i * (NA + NB) + j], want[i * N + j], 1e-15);
    /* and it factors and solves like the matrix it is */
    assert_int_equal(lt_cov_factor(j3, &err), LT_OK);
    lt_cov *ref = lt_cov_alloc(N, &err);
    lt_cov_add_dense(ref, want, &err);
    assert_int_equal(lt_cov_factor(ref, &err), LT_OK);
    double r[N], work[4 * N * N];
    for (int i = 0; i < N; i++)
        r[i] = lt_test_uniform(&seed, -1, 1);
    assert_rel(lt_cov_chi2(j3, r, work), lt_cov_chi2(ref, r, work), 1e-12);
    assert_rel(lt_cov_logdet(j3), lt_cov_logdet(ref), 1e-12);
    lt_cov *all[] = {a, b, c, j2, j3, jd, ref};
    for (size_t k = 0; k < sizeof all / sizeof all[0]; k++)
        lt_cov_free(all[k]);
}

/* Two tables read as one: rows in order, each with its own cuts; a light
 * curve's group from its column, else the table's name; errors for mixed
 * observables, masses in one table only, twin names and a cross-covariance
 * of the wrong size, each naming the file. */
static void test_join_tables(void **state)
{
    (void)state;
    const char *a = TMP("ja.csv", "name,z,mb,dmb,x1,c,m,set\n"
                                  "a1,0.01,14.0,0.1,0.5,0.01,10.5,s1\n"
                                  "a2,0.05,17.0,0.1,-0.5,0.02,9.5,s2\n"
                                  "a3,0.30,21.0,0.1,0.1,0.0,10.1,s1\n");
    const char *b = TMP("jb.csv", "name,z,mb,dmb,x1,c,m\n"
                                  "b1,0.02,15.0,0.2,0.3,0.05,11.0\n"
                                  "b2,0.40,22.0,0.2,0.2,-0.1,10.0\n");
    const char *cross = TMP("jx.txt", "5\n"
                                      "0.01 0 0 0.002 0.003\n"
                                      "0 0.01 0 0 0\n"
                                      "0 0 0.01 0 0\n"
                                      "0.002 0 0 0.01 0\n"
                                      "0.003 0 0 0 0.01\n");
    lt_survey_spec sa, more[1];
    lt_survey_spec_init(&sa);
    lt_survey_spec_init(&more[0]);
    sa.data = a;
    sa.columns = "z=z,mb=mb,err_mb=dmb,x1=x1,color=c,mass=m,group=set,id=name";
    sa.zmax = 0.2; /* a3 goes */
    more[0].data = b;
    more[0].columns = "z=z,mb=mb,err_mb=dmb,x1=x1,color=c,mass=m,id=name";
    sa.more = more, sa.nmore = 1;
    sa.cross_cov = cross;
    lt_error err;
    lt_survey *s = lt_survey_read(&sa, &err);
    if (!s)
        print_error("%s:%ld: %s\n", err.file, err.line, err.msg);
    assert_non_null(s);
    assert_int_equal(s->n, 4);
    assert_int_equal(s->n_read, 5);
    const char *ids[] = {"a1", "a2", "b1", "b2"}, *groups[] = {"s1", "s2", "jb", "jb"};
    const double obs[] = {14.0, 17.0, 15.0, 22.0};
    const long rows[] = {1, 2, 1, 2};
    for (int i = 0; i < 4; i++) {
        assert_string_equal(s->id[i], ids[i]);
        assert_string_equal(s->lc->group[i], groups[i]);
        assert_true(s->obs[i] == obs[i] && s->row[i] == rows[i]);
    }
    /* diag(err^2) of each table, plus the cross matrix at rows 1, 2, 4, 5 */
    double c[16];
    lt_cov_to_dense(s->cov, c);
    const double want[16] = {0.01 + 0.01, 0, 0.002, 0.003,
                             0, 0.01 + 0.01, 0, 0,
                             0.002, 0, 0.04 + 0.01, 0,
                             0.003, 0, 0, 0.04 + 0.01};
    for (int i = 0; i < 16; i++)
        assert_abs(c[i], want[i], 1e-15);
    lt_survey_free(s);

    /* refusals */
    sa.cross_cov = TMP("jx4.txt", "4\n1 0 0 0\n0 1 0 0\n0 0 1 0\n0 0 0 1\n");
    assert_null(lt_survey_read(&sa, &err));
    assert_string_equal(err.file, sa.cross_cov);
    assert_int_equal(err.line, 1);
    assert_non_null(strstr(err.msg, "4 x 4 but the 2 joined tables have 5 rows"));
    sa.cross_cov = NULL;
    more[0].columns = "z=z,mb=mb,err_mb=dmb,x1=x1,color=c,id=name";
    assert_null(lt_survey_read(&sa, &err));
    assert_string_equal(err.file, b);
    assert_non_null(strstr(err.msg, "host masses"));
    more[0].columns = "z=z,mag=mb,err=dmb,id=name";
    assert_null(lt_survey_read(&sa, &err));
    assert_non_null(strstr(err.msg, "its observable is mag"));
    more[0] = sa;
    more[0].more = NULL, more[0].nmore = 0;
    assert_null(lt_survey_read(&sa, &err));
    assert_non_null(strstr(err.msg, "two joined tables are named 'ja'"));
    more[0].name = "a b";
    more[0].columns = "z=z,mb=mb,err_mb=dmb,x1=x1,color=c,mass=m,id=name";
    assert_null(lt_survey_read(&sa, &err));
    assert_non_null(strstr(err.msg, "the table's name 'a b' (it names the table's section"));
    /* one table: a cross-covariance has nothing to join */
    sa.nmore = 0;
    sa.cross_cov = cross;
    assert_null(lt_survey_read(&sa, &err));
    assert_string_equal(err.file, cross);
    assert_non_null(strstr(err.msg, "a cross-covariance joins several tables"));
    sa.cross_cov = NULL;
    /* calib_mu without a calibrator column: no row is a calibrator */
    const char *jc = TMP("jc.csv", "z,mb,dmb,x1,c,mu\n0.01,14,0.1,0,0,33.1\n0.02,15,0.1,0,0,34.6\n");
    lt_survey *sc = read_survey(jc, "z=z,mb=mb,err_mb=dmb,x1=x1,color=c,calib_mu=mu", &err);
    assert_non_null(sc);
    assert_true(isnan(sc->lc->calib_mu[0]) && isnan(sc->lc->calib_mu[1]));
    assert_int_equal(sc->lc->ncalibrators, 0);
    lt_survey_free(sc);
    char name[64];
    lt_survey_spec_name(&sa, name, sizeof name);
    assert_string_equal(name, "ja");
}

static void test_not_positive_definite(void **state)
{
    (void)state;
    lt_error err;
    lt_cov *c = lt_cov_alloc(2, &err);
    double m[4] = {1, 2, 2, 1}; /* eigenvalues 3 and -1 */
    lt_cov_add_dense(c, m, &err);
    assert_int_equal(lt_cov_factor(c, &err), LT_EINPUT);
    assert_non_null(strstr(err.msg, "not positive definite"));
    double back[4];
    lt_cov_to_dense(c, back); /* restored after the failed factorisation */
    assert_memory_equal(back, m, sizeof m);
    lt_cov_free(c);
    c = lt_cov_alloc(2, &err);
    double v[2] = {1.0, 0.0};
    lt_cov_add_diag(c, v, &err);
    assert_int_equal(lt_cov_factor(c, &err), LT_EINPUT);
    assert_non_null(strstr(err.msg, "object 2"));
    lt_cov_free(c);
}

/* ---- matrix files ---- */
static void test_matrix_forms(void **state)
{
    (void)state;
    const char *a = TMP("a.txt", "3\n1\n0.1\n0\n0.1\n2\n0\n0\n0\n3\n");
    const char *b = TMP("b.txt", "# rows form\n1 0.1 0\n0.1 2 0\n\n0 0 3\n");
    const char *c = TMP("c.txt", "3 1 0.1 0 0.1 2 0 0 0 3");
    double *ma, *mb, *mc;
    size_t na, nb, nc;
    lt_error err;
    assert_int_equal(lt_matrix_read(a, &ma, &na, &err), LT_OK);
    assert_int_equal(lt_matrix_read(b, &mb, &nb, &err), LT_OK);
    /* "3 1 0.1 ..." on one line is 10 values on one line: neither form */
    assert_int_equal(lt_matrix_read(c, &mc, &nc, &err), LT_EINPUT);
    assert_int_equal(na, 3);
    assert_int_equal(nb, 3);
    assert_memory_equal(ma, mb, 9 * sizeof *ma);
    assert_true(ma[1] == 0.1 && ma[4] == 2.0 && ma[8] == 3.0);

    /* the same matrix as a FITS image, written with CFITSIO directly */
    char fpath[600];
    snprintf(fpath, sizeof fpath, "!%s/m.fits", dir);
    fitsfile *f;
    int status = 0;
    long naxes[2] = {3, 3};
    fits_create_file(&f, fpath, &status);
    fits_create_img(f, DOUBLE_IMG, 2, naxes, &status);
    fits_write_img(f, TDOUBLE, 1, 9, ma, &status);
    fits_close_file(f, &status);
    assert_int_equal(status, 0);
    double *mf;
    size_t nf;
    assert_int_equal(lt_matrix_read(fpath + 1, &mf, &nf, &err), LT_OK);
    assert_int_equal(nf, 3);
    assert_memory_equal(mf, ma, 9 * sizeof *ma);
    free(ma);
    free(mb);
    free(mf);

    /* slightly asymmetric within 1e-6: accepted and symmetrised */
    const char *s = TMP("s.txt", "2\n1 0.5\n0.5000000001 1\n");
    double *ms;
    size_t ns;
    assert_int_equal(lt_matrix_read(s, &ms, &ns, &err), LT_OK);
    assert_true(ms[1] == ms[2]);
    free(ms);
}

static void test_stats(void **state)
{
    (void)state;
    const char *p = TMP("st.csv", "z,mu,err\n0.1,38,0.1\n0.2,40,0.3\n0.3,41,0.2\n1.0,44,0.4\n");
    lt_error err;
    lt_survey *s = read_survey(p, "z=z,mu=mu,err=err", &err);
    lt_survey_stats st;
    assert_int_equal(lt_survey_stats_compute(s, 3, &st, &err), LT_OK);
    assert_true(st.z_min == 0.1 && st.z_max == 1.0);
    assert_rel(st.err_median, 0.25, 1e-15);
    assert_rel(st.err_mean, 0.25, 1e-15);
    assert_true(st.err_min == 0.1 && st.err_max == 0.4);
    /* bins of width 0.3 from 0.1: [0.1,0.4) holds three, [0.7,1.0] one */
    assert_int_equal(st.counts[0], 3);
    assert_int_equal(st.counts[1], 0);
    assert_int_equal(st.counts[2], 1);
    assert_int_equal(lt_survey_stats_compute(s, 0, &st, &err), LT_EINPUT);
    lt_survey_free(s);
}

/* Cuts act on the table and the covariance together. */
static void test_cuts(void **state)
{
    (void)state;
    const char *p = TMP("cut.txt", "id z mu err\na 0.1 38 0.1\nb 0.2 40 0.2\nc 0.3 41 0.3\n"
                                   "d 0.4 42 0.4\n");
    const char *cov = TMP("cut.cov", "4\n1 0.1 0.2 0.3\n0.1 2 0.4 0.5\n0.2 0.4 3 0.6\n"
                                     "0.3 0.5 0.6 4\n");
    const char *drop = TMP("drop.txt", "# ids to drop\nb\n\nzz\n");
    lt_survey_spec spec;
    lt_survey_spec_init(&spec);
    spec.data = p;
    spec.columns = "z=z,mu=mu,err=err,id=id";
    spec.cov[spec.ncov++] = cov;
    spec.zmax = 0.35;
    spec.drop_ids = drop;
    lt_error err;
    lt_survey *s = lt_survey_read(&spec, &err);
    assert_non_null(s);
    assert_int_equal(s->n, 2); /* a and c */
    assert_string_equal(s->id[0], "a");
    assert_string_equal(s->id[1], "c");
    assert_int_equal(s->row[1], 3);
    double m[4];
    lt_cov_to_dense(s->cov, m);
    assert_rel(m[0], 1 + 0.01, 1e-15);
    assert_rel(m[1], 0.2, 1e-15);
    assert_rel(m[3], 3 + 0.09, 1e-15);
    lt_survey_free(s);
    /* nothing left */
    spec.zmax = 0.05;
    assert_null(lt_survey_read(&spec, &err));
    assert_non_null(strstr(err.msg, "no objects are left"));
    /* id lists need ids */
    spec.zmax = NAN;
    spec.columns = "z=z,mu=mu,err=err";
    assert_null(lt_survey_read(&spec, &err));
    assert_non_null(strstr(err.msg, "id lists need an id column"));
}

/* ---- the tables people have (issue 22, item 8) ----
 * RFC 4180 CSV (quoted fields with commas and doubled quotes, CRLF, quoted
 * header names), the unnamed index column pandas writes, column names
 * matched without regard to case (text and FITS, with the ambiguity
 * refused) and header-less tables mapped by column number. End-to-end
 * checks against Python's csv module and astropy.io.fits are in
 * tests/e2e/test_survey_tables.sh. */

/* The read must fail at path:line with a message holding what. */
static void refused(const char *path, const char *columns, long line, const char *what)
{
    lt_error err;
    lt_survey *s = read_survey(path, columns, &err);
    if (s || strcmp(err.file, path) != 0 || err.line != line || !strstr(err.msg, what))
        print_error("%s with %s: want a refusal at line %ld saying '%s'; got %s:%ld: %s\n",
                    path, columns, line, what, s ? "(read)" : err.file, s ? 0 : err.line,
                    s ? "" : err.msg);
    lt_survey_free(s);
    assert_null(s);
    assert_string_equal(err.file, path);
    assert_int_equal(err.line, line);
    assert_non_null(strstr(err.msg, what));
}

/* The two rows every table below holds, in some layout: ids, z, mu, err. */
static void expect_two_rows(const lt_survey *s, const char *id0, const char *id1)
{
    assert_non_null(s);
    assert_int_equal(s->n, 2);
    assert_true(s->z[0] == 0.1 && s->obs[0] == 38.3 && s->err[0] == 0.2);
    assert_true(s->z[1] == 0.5 && s->obs[1] == 42.3 && s->err[1] == 0.25);
    if (id0) {
        assert_string_equal(s->id[0], id0);
        assert_string_equal(s->id[1], id1);
    }
}

/* ---- RFC 4180 (Shafranovich 2005, sect. 2) ---- */

/* Rule 6: fields holding commas are enclosed in double quotes; rule 7: a
 * quote inside a quoted field is written twice; rule 2: records end in
 * CRLF; rule 3: the header's names may be quoted too. The values are the
 * text between the quotes, blanks kept. */
static void test_rfc4180_quotes(void **state)
{
    (void)state;
    const char *p = TMP("quoted.csv", "\"id\",\"z\",\"mu\",\"err\"\r\n"
                                      "\"sn, 1\",0.1,\"38.3\",0.2\r\n"
                                      "\"say \"\"hi\"\"\" , 0.5,42.3,0.25\r\n");
    lt_error err;
    lt_survey *s = read_survey(p, "z=z,mu=mu,err=err,id=id", &err);
    if (!s)
        print_error("%s:%ld: %s\n", err.file, err.line, err.msg);
    expect_two_rows(s, "sn, 1", "say \"hi\"");
    assert_int_equal(s->row[1], 2);
    lt_survey_free(s);

    /* an empty quoted field is an empty value; a quote inside an unquoted
     * field is an ordinary character (what Python's csv reader does) */
    p = TMP("inner.csv", "id,z,mu,err,note\nab\"c,0.1,38.3,0.2,\"\"\nx,0.5,42.3,0.25,\"a,b\"\n");
    s = read_survey(p, "z=z,mu=mu,err=err,id=id", &err);
    expect_two_rows(s, "ab\"c", "x");
    lt_survey_free(s);

    /* a header name that holds a comma is one name: the columns after it
     * stay in place */
    p = TMP("comma_name.csv", "id,\"note, free\",z,mu,err\n"
                              "a,\"1,2\",0.1,38.3,0.2\nb,,0.5,42.3,0.25\n");
    s = read_survey(p, "z=z,mu=mu,err=err,id=id", &err);
    expect_two_rows(s, "a", "b");
    lt_survey_free(s);
    refused(p, "z=zcmb,mu=mu,err=err", 1, "(the header names: id, note, free, z, mu, err)");
}

/* A quoted field that holds a line break (RFC 4180 allows it) is refused
 * at the line where its quote opened; a quote not doubled is refused at
 * its line. */
static void test_rfc4180_refusals(void **state)
{
    (void)state;
    const char *cols = "z=z,mu=mu,err=err,id=id";
    const char *p = TMP("newline.csv", "id,z,mu,err\n\"sn\n1\",0.1,38.3,0.2\n");
    refused(p, cols, 2, "a quoted field is not closed on its line");
    p = TMP("newline_hdr.csv", "id,\"note\nx\",z,mu,err\n0.1,38.3,0.2\n");
    refused(p, cols, 1, "a quoted field is not closed on its line");
    p = TMP("after_quote.csv", "id,z,mu,err\n\r\nsn1,0.1,38.3,0.2\r\n\"sn\"2,0.5,42.3,0.25\r\n");
    refused(p, cols, 4, "text after a quoted field's closing quote");
    /* a bad number in a quoted field names its line */
    p = TMP("quoted_nan.csv", "z,mu,err\n0.1,38.3,0.2\n\"0.5\",\"x,y\",0.25\n");
    refused(p, "z=z,mu=mu,err=err", 3, "column 'mu' (mu): 'x,y' is not a finite number");
    /* quoted numbers are taken verbatim: blanks inside the quotes stay */
    p = TMP("quoted_blank.csv", "z,mu,err\n\" 0.1\",38.3,0.2\n");
    refused(p, "z=z,mu=mu,err=err", 2, "' 0.1' is not a finite number");
}

/* ---- the unnamed index column of pandas' DataFrame.to_csv ---- */

/* pandas writes its row index as a first column with an empty name (the
 * layout written by hand here: ",z,mu,err" then "0,..."). It is read to
 * keep the other columns in place, and cannot be mapped. */
static void test_pandas_index(void **state)
{
    (void)state;
    const char *p = TMP("pandas.csv", ",id,z,mu,err\n0,a,0.1,38.3,0.2\n1,b,0.5,42.3,0.25\n");
    lt_error err;
    lt_survey *s = read_survey(p, "z=z,mu=mu,err=err,id=id", &err);
    expect_two_rows(s, "a", "b"); /* no shift: z is not the index's 0 and 1 */
    assert_int_equal(s->nwarnings, 1); /* only: no zhel */
    lt_survey_free(s);
    /* the list of names shows the unnamed one */
    refused(p, "z=zcmb,mu=mu,err=err", 1, "(the header names: '', id, z, mu, err)");
    /* rows without the index field would shift every column: refused, also
     * when the mapped columns would fit */
    p = TMP("pandas_short.csv", ",z,mu,err\n0.1,38.3,0.2\n");
    refused(p, "z=z,mu=mu,err=err", 2, "1 of them unnamed: columns would shift");
    /* two unnamed columns are no duplicate names */
    p = TMP("pandas_two.csv", ",,z,mu,err\n0,x,0.1,38.3,0.2\n1,y,0.5,42.3,0.25\n");
    s = read_survey(p, "z=z,mu=mu,err=err", &err);
    expect_two_rows(s, NULL, NULL);
    lt_survey_free(s);
}

/* ---- names without regard to case ---- */

static void test_text_case(void **state)
{
    (void)state;
    const char *p = TMP("upper.txt", "#ID ZCMB MU ERR\na 0.1 38.3 0.2\nb 0.5 42.3 0.25\n");
    lt_error err;
    lt_survey *s = read_survey(p, "z=zcmb,mu=Mu,err=err,id=id", &err);
    expect_two_rows(s, "a", "b");
    lt_survey_free(s);
    /* two names that differ only in case: an exact match wins ... */
    p = TMP("both.txt", "id z Z mu err\na 0.1 9 38.3 0.2\nb 0.5 9 42.3 0.25\n");
    s = read_survey(p, "z=z,mu=mu,err=err,id=id", &err);
    expect_two_rows(s, "a", "b");
    lt_survey_free(s);
    s = read_survey(p, "z=Z,mu=mu,err=err", &err);
    assert_non_null(s);
    assert_true(s->z[0] == 9.0); /* the column named Z */
    lt_survey_free(s);
    /* ... and without one the name is ambiguous */
    p = TMP("both2.txt", "id zcmb ZCMB mu err\na 0.1 9 38.3 0.2\n");
    refused(p, "z=Zcmb,mu=mu,err=err", 1,
            "'Zcmb' (z) matches columns 2 'zcmb' and 3 'ZCMB', which differ only in case");
    /* two roles that reach one column through case */
    p = TMP("one.txt", "z mu err\n0.1 38.3 0.2\n");
    refused(p, "z=z,zhel=Z,mu=mu,err=ERR,id=err", 1,
            "column 'err' is mapped to both err (as 'ERR') and id (as 'err')");
}

/* A FITS binary table written with CFITSIO: upper-case names (as most
 * survey releases write them), and a second one with two names that
 * differ only in case. */
static void write_fits(const char *path, int twins)
{
    char bang[600];
    snprintf(bang, sizeof bang, "!%s", path);
    char *ttype[4] = {"ZCMB", "MU", "ERR", "zcmb"}, *tform[4] = {"D", "D", "D", "D"};
    double z[2] = {0.1, 0.5}, mu[2] = {38.3, 42.3}, e[2] = {0.2, 0.25}, other[2] = {7, 8};
    fitsfile *f;
    int status = 0;
    fits_create_file(&f, bang, &status);
    fits_create_tbl(f, BINARY_TBL, 2, twins ? 4 : 3, ttype, tform, NULL, "SN", &status);
    fits_write_col(f, TDOUBLE, 1, 1, 1, 2, z, &status);
    fits_write_col(f, TDOUBLE, 2, 1, 1, 2, mu, &status);
    fits_write_col(f, TDOUBLE, 3, 1, 1, 2, e, &status);
    if (twins)
        fits_write_col(f, TDOUBLE, 4, 1, 1, 2, other, &status);
    fits_close_file(f, &status);
    assert_int_equal(status, 0);
}

static void test_fits_case(void **state)
{
    (void)state;
    char p[600], q[600];
    snprintf(p, sizeof p, "%s/upper.fits", dir);
    snprintf(q, sizeof q, "%s/twins.fits", dir);
    write_fits(p, 0);
    write_fits(q, 1);
    lt_error err;
    static const char *const spellings[] = {"z=ZCMB,mu=MU,err=ERR", "z=zcmb,mu=mu,err=err",
                                            "z=Zcmb,mu=Mu,err=eRR"};
    for (size_t k = 0; k < 3; k++) {
        lt_survey *s = read_survey(p, spellings[k], &err);
        if (!s)
            print_error("%s: %s\n", spellings[k], err.msg);
        expect_two_rows(s, NULL, NULL);
        lt_survey_free(s);
    }
    /* ZCMB and zcmb: each exact spelling reads its own column ... */
    lt_survey *s = read_survey(q, "z=ZCMB,mu=mu,err=err", &err);
    expect_two_rows(s, NULL, NULL);
    lt_survey_free(s);
    s = read_survey(q, "z=zcmb,mu=mu,err=err", &err);
    assert_non_null(s);
    assert_true(s->z[0] == 7.0 && s->z[1] == 8.0);
    lt_survey_free(s);
    /* ... and any other is refused (FITS errors name the file, line 0) */
    refused(q, "z=Zcmb,mu=mu,err=err", 0,
            "'Zcmb' (z) matches columns 1 'ZCMB' and 4 'zcmb', which differ only in case");
    refused(p, "z=1,mu=mu,err=err", 0,
            "no column '1' for z (columns: ZCMB, MU, ERR); a number names a column by its "
            "position only in a text table without a header");
}

/* ---- header-less tables by column number ---- */

static void test_positions(void **state)
{
    (void)state;
    lt_error err;
    /* whitespace and CSV, a comment line after the first row */
    const char *p = TMP("nohead.txt", "\n0.1 38.3 0.2 101\n# a comment\n0.5\t42.3 0.25 102\n");
    lt_survey *s = read_survey(p, "z=1,mu=2,err=3,id=4", &err);
    if (!s)
        print_error("%s\n", err.msg);
    expect_two_rows(s, "101", "102"); /* the first line is a data row */
    lt_survey_free(s);
    p = TMP("nohead.csv", "38.3,0.1,0.2\r\n42.3,0.5,0.25\r\n");
    s = read_survey(p, "z=2,zhel=02,mu=1,err=3", &err);
    expect_two_rows(s, NULL, NULL);
    assert_true(s->zhel[1] == 0.5);
    lt_survey_free(s);
    /* errors: a name, 0, a number past the row, one column twice, a short
     * row, a bad value */
    p = TMP("nohead2.txt", "0.1 38.3 0.2\n0.5 42.3\n0.7 x 0.3\n");
    refused(p, "z=1,mu=mu,err=3", 1, "the table has no header (its first line holds only "
                                     "numbers), so its columns go by number from 1: map mu");
    refused(p, "z=0,mu=2,err=3", 1, "z=0: column numbers count from 1");
    refused(p, "z=1,mu=2,err=4", 1, "err=4: the first row has only 3 fields");
    refused(p, "z=1,mu=2,err=002", 1, "column 2 is mapped to both mu (as '2') and err (as "
                                      "'002')");
    refused(p, "z=1,mu=2,err=3", 2, "a short row");
    p = TMP("nohead3.txt", "0.1 38.3 0.2\n0.7 x 0.3\n");
    refused(p, "z=1,mu=2,err=3", 2, "column '2' (mu): 'x' is not a finite number");
}

/* The header rule: a first line with any field that is not a number is a
 * header, and a first line starting with '#' is always one; there an
 * all-digit name is a name (pandas names unnamed columns 0, 1, ...). */
static void test_header_rule(void **state)
{
    (void)state;
    lt_error err;
    const char *p = TMP("digits.csv", ",0,1,2\n0,0.1,38.3,0.2\n1,0.5,42.3,0.25\n");
    lt_survey *s = read_survey(p, "z=0,mu=1,err=2", &err); /* names, not positions */
    if (!s)
        print_error("%s\n", err.msg);
    expect_two_rows(s, NULL, NULL);
    lt_survey_free(s);
    p = TMP("digits_hash.txt", "#1 2 3\n0.1 38.3 0.2\n0.5 42.3 0.25\n");
    s = read_survey(p, "z=1,mu=2,err=3", &err);
    expect_two_rows(s, NULL, NULL); /* line 1 was the header */
    lt_survey_free(s);
    /* a header that names a column "2" beside others */
    p = TMP("named2.txt", "z 2 mu err\n0.1 7 38.3 0.2\n0.5 7 42.3 0.25\n");
    s = read_survey(p, "z=z,mu=mu,err=err,zhel=2", &err);
    assert_non_null(s);
    assert_true(s->zhel[0] == 7.0 && s->obs[0] == 38.3);
    lt_survey_free(s);
    /* the Pantheon layout, a '#' header over numeric rows, is unchanged */
    p = TMP("hash.txt", "#name zcmb mb dmb extra\n0 0.1 38.3 0.2\n1 0.5 42.3 0.25\n");
    s = read_survey(p, "z=zcmb,mu=mb,err=dmb,id=name", &err);
    expect_two_rows(s, "0", "1");
    assert_int_equal(s->nwarnings, 2); /* the trailing name, and no zhel */
    lt_survey_free(s);
}

static int setup(void **state)
{
    (void)state;
    return lt_test_tmpdir(dir, sizeof dir, "survey");
}

static int teardown(void **state)
{
    (void)state;
    return lt_test_rmtree(dir);
}

/* lt_cov_digest sees every element: two 3 x 3 covariances that differ only
 * in one off-diagonal pair digest differently; factoring (which overwrites
 * the lower triangle with the Cholesky factor) leaves the digest alone; a
 * diagonal base digests apart from the same matrix given dense. */
static uint64_t cov_digest_of(const double *m, int factor)
{
    lt_error err;
    lt_cov *c = lt_cov_alloc(3, &err);
    assert_non_null(c);
    assert_int_equal(lt_cov_add_dense(c, m, &err), LT_OK);
    if (factor)
        assert_int_equal(lt_cov_factor(c, &err), LT_OK);
    uint64_t h = LT_DIGEST_START;
    lt_cov_digest(c, &h);
    lt_cov_free(c);
    return h;
}

static void test_cov_digest(void **state)
{
    (void)state;
    double a[9] = {4, 1, 0.5, 1, 3, 0.2, 0.5, 0.2, 2};
    double b[9] = {4, 1, 0.5, 1, 3, 0.25, 0.5, 0.25, 2};
    assert_true(cov_digest_of(a, 0) == cov_digest_of(a, 1));
    assert_true(cov_digest_of(a, 1) != cov_digest_of(b, 1));
    double d[9] = {4, 0, 0, 0, 3, 0, 0, 0, 2}, var[3] = {4, 3, 2};
    lt_error err;
    lt_cov *c = lt_cov_alloc(3, &err);
    assert_int_equal(lt_cov_add_diag(c, var, &err), LT_OK);
    uint64_t h = LT_DIGEST_START;
    lt_cov_digest(c, &h);
    lt_cov_free(c);
    assert_true(h != cov_digest_of(d, 0));
}


/* lt_cov_diagnose on a matrix whose negative direction is known in closed
 * form: the identity with a 2x2 block [[1, 1.5], [1.5, 1]] on objects 3 and
 * 4 has eigenvalues 1 +- 1.5, so -0.5 along (e3 - e4)/sqrt(2), 2.5 along
 * (e3 + e4)/sqrt(2), and 1 (four times) elsewhere. */
static void test_diagnose_closed_form(void **state)
{
    (void)state;
    lt_error err;
    double m[36] = {0};
    for (int i = 0; i < 6; i++)
        m[i * 6 + i] = 1.0;
    m[2 * 6 + 3] = m[3 * 6 + 2] = 1.5;
    lt_cov *c = lt_cov_alloc(6, &err);
    lt_cov_add_dense(c, m, &err);
    assert_int_equal(lt_cov_factor(c, &err), LT_EINPUT); /* refused, restored */
    lt_cov_diagnosis d;
    assert_int_equal(lt_cov_diagnose(c, &d, &err), LT_OK);
    assert_int_equal(d.n, 6);
    assert_int_equal(d.n_negative, 1);
    assert_int_equal(d.n_zero, 0);
    assert_int_equal(d.neigen, LT_DIAG_EIGEN);
    assert_abs(d.eigen[0], -0.5, 1e-14);
    for (int k = 1; k < LT_DIAG_EIGEN; k++)
        assert_abs(d.eigen[k], 1.0, 1e-14);
    assert_abs(d.max_eigenvalue, 2.5, 1e-14);
    assert_int_equal(d.ntop, LT_DIAG_TOP);
    /* objects 3 and 4 (indices 2, 3), +- 1/sqrt(2), the first positive */
    assert_int_equal(d.top[0] + d.top[1], 5);
    assert_true(d.top[0] == 2 || d.top[0] == 3);
    assert_abs(d.weight[0], 1.0 / sqrt(2.0), 1e-12);
    assert_abs(d.weight[1], -1.0 / sqrt(2.0), 1e-12);
    for (int t = 2; t < LT_DIAG_TOP; t++)
        assert_abs(d.weight[t], 0.0, 1e-12);
    assert_abs(d.pair_correlation, 1.5, 1e-14);
    assert_rel(d.tolerance, 6 * 2.220446049250313e-16 * 2.5, 1e-14); /* n eps |lambda|max */
    lt_cov_free(c);
}

/* lt_cov_diagnose against GSL's symmetric eigensolver (gsl_eigen_symmv, an
 * outside reference) on a random symmetric matrix with several negative
 * eigenvalues, and with modes on a diagonal base. */
static void test_diagnose_vs_gsl(void **state)
{
    (void)state;
    enum { N = 30, K = 2 };
    unsigned long long seed = 20261204;
    double a[N * N], diag[N], u[N * K], full[N * N];
    for (int i = 0; i < N; i++)
        for (int j = 0; j <= i; j++)
            a[i * N + j] = a[j * N + i] = lt_test_uniform(&seed, -1.0, 1.0);
    for (int i = 0; i < N; i++)
        diag[i] = lt_test_uniform(&seed, 0.5, 1.5);
    for (int i = 0; i < N * K; i++)
        u[i] = lt_test_uniform(&seed, -1.0, 1.0);
    lt_error err;
    lt_cov *c = lt_cov_alloc(N, &err);
    assert_int_equal(lt_cov_add_diag(c, diag, &err), LT_OK);
    assert_int_equal(lt_cov_add_dense(c, a, &err), LT_OK);
    assert_int_equal(lt_cov_add_modes(c, K, u, NULL, &err), LT_OK);
    lt_cov_to_dense(c, full);
    lt_cov_diagnosis d;
    assert_int_equal(lt_cov_diagnose(c, &d, &err), LT_OK);
    gsl_matrix *m = gsl_matrix_alloc(N, N), *v = gsl_matrix_alloc(N, N);
    gsl_vector *ev = gsl_vector_alloc(N);
    gsl_eigen_symmv_workspace *w = gsl_eigen_symmv_alloc(N);
    memcpy(m->data, full, sizeof full);
    assert_int_equal(gsl_eigen_symmv(m, ev, v, w), 0);
    gsl_eigen_symmv_sort(ev, v, GSL_EIGEN_SORT_VAL_ASC);
    size_t neg = 0;
    for (int i = 0; i < N; i++)
        neg += gsl_vector_get(ev, i) < 0;
    assert_true(neg >= 2); /* the case is the one meant */
    assert_int_equal(d.n_negative, neg);
    for (size_t k = 0; k < d.neigen; k++)
        assert_abs(d.eigen[k], gsl_vector_get(ev, k), 1e-12);
    assert_abs(d.max_eigenvalue, gsl_vector_get(ev, N - 1), 1e-12);
    /* the eigenvector of the smallest, up to its sign, at the heaviest */
    double sign = gsl_matrix_get(v, d.top[0], 0) < 0 ? -1.0 : 1.0;
    double prev = INFINITY;
    for (size_t t = 0; t < d.ntop; t++) {
        assert_abs(d.weight[t], sign * gsl_matrix_get(v, d.top[t], 0), 1e-10);
        assert_true(fabs(d.weight[t]) <= prev);
        prev = fabs(d.weight[t]);
    }
    for (int i = 0; i < N; i++) /* none heavier was left out */
        assert_true(fabs(gsl_matrix_get(v, i, 0)) <= fabs(d.weight[0]) + 1e-12);
    gsl_eigen_symmv_free(w);
    gsl_vector_free(ev);
    gsl_matrix_free(m);
    gsl_matrix_free(v);
    lt_cov_free(c);
}

/* The double-diagonal rule (lantern/survey.h): a --cov whose diagonal
 * reaches err^2 on at least 90% of the rows warns; one below it does not,
 * nor anything with --no-err-diag. */
static void test_double_diagonal(void **state)
{
    (void)state;
    const char *t = TMP("dd.txt", "z mu err\n0.1 38 0.1\n0.2 40 0.2\n0.3 41 0.1\n0.4 42 0.2\n"
                                  "0.5 42.5 0.1\n0.6 43 0.2\n0.7 43.5 0.1\n0.8 44 0.2\n"
                                  "0.9 44.3 0.1\n1.0 44.6 0.2\n");
    /* C_ii = scale err_i^2: reaching err^2, above it (err^2 + systematics),
     * within and beyond the 2% slack, 9 rows of 10 (the share), and a
     * systematics-only matrix below err^2 */
    struct {
        double scale, last; /* every C_ii = scale err_i^2, the last row's last */
        int warns;
    } cases[] = {{1.0, 1.0, 1}, {1.3, 1.3, 1}, {0.99, 0.99, 1}, {0.97, 0.97, 0},
                 {1.0, 0.5, 1}, {0.3, 0.3, 0}};
    for (size_t k = 0; k < sizeof cases / sizeof cases[0]; k++) {
        char text[1024] = "10\n";
        for (int i = 0; i < 10; i++) {
            for (int j = 0; j < 10; j++) {
                double e = i % 2 ? 0.2 : 0.1, f = i == 9 ? cases[k].last : cases[k].scale;
                snprintf(text + strlen(text), sizeof text - strlen(text), "%.10g ",
                         i == j ? f * e * e : 0.0);
            }
            strcat(text, "\n");
        }
        const char *cov = lt_test_write(dir, "dd_cov.txt", text, strlen(text));
        lt_survey_spec spec;
        lt_survey_spec_init(&spec);
        spec.data = t, spec.columns = "z=z,mu=mu,err=err";
        spec.cov[0] = cov, spec.ncov = 1;
        lt_error err;
        lt_survey *s = lt_survey_read(&spec, &err);
        assert_non_null(s);
        int found = 0;
        for (size_t w = 0; w < s->nwarnings; w++)
            if (!strcmp(s->warning_ids[w], LT_WARN_COV_DOUBLE_DIAG)) {
                found = 1;
                assert_non_null(strstr(s->warnings[w], cov));
                assert_non_null(strstr(s->warnings[w], "--no-err-diag"));
            }
        if (found != cases[k].warns)
            print_error("case %zu: scale %g, last %g\n", k, cases[k].scale, cases[k].last);
        assert_int_equal(found, cases[k].warns);
        lt_survey_free(s);
        spec.no_err_diag = 1; /* the matrix alone: nothing counted twice */
        s = lt_survey_read(&spec, &err);
        assert_non_null(s);
        for (size_t w = 0; w < s->nwarnings; w++)
            assert_string_not_equal(s->warning_ids[w], LT_WARN_COV_DOUBLE_DIAG);
        lt_survey_free(s);
    }
}


/* The hint's rule (lt_report_cov_hint), branch by branch, on diagnoses made
 * by hand: a pair beyond 1 first, then --no-err-diag, then an eigenvalue
 * within rounding of the largest, else the general words. */
static void test_cov_hint(void **state)
{
    (void)state;
    const char *p = TMP("hint.txt", "id z mu err\na 0.1 38 0.1\nb 0.2 40 0.1\nc 0.3 41 0.1\n");
    lt_error err;
    lt_survey *s = read_survey(p, "z=z,mu=mu,err=err,id=id", &err);
    assert_non_null(s);
    lt_survey_spec spec;
    lt_survey_spec_init(&spec);
    lt_cov_diagnosis d = {.n = 3, .n_negative = 1, .max_eigenvalue = 2.0, .neigen = 3,
                          .eigen = {-0.5, 1, 2}, .ntop = 3, .top = {2, 0, 1},
                          .weight = {0.8, -0.6, 0}, .pair_correlation = 1.25};
    char hint[1024];
    lt_report_cov_hint(&spec, s, &d, hint, sizeof hint);
    assert_non_null(strstr(hint, "objects 'c' and 'a' are correlated beyond 1"));
    assert_non_null(strstr(hint, "= 1.25"));
    d.pair_correlation = 0.9;
    spec.no_err_diag = 1;
    lt_report_cov_hint(&spec, s, &d, hint, sizeof hint);
    assert_non_null(strstr(hint, "drop --no-err-diag"));
    spec.no_err_diag = 0;
    d.eigen[0] = -2e-6; /* 1e-6 of the largest: within rounding */
    lt_report_cov_hint(&spec, s, &d, hint, sizeof hint);
    assert_non_null(strstr(hint, "the smallest eigenvalue is 1e-06 of the largest"));
    assert_non_null(strstr(hint, "too few digits"));
    d.eigen[0] = -3e-6;
    lt_report_cov_hint(&spec, s, &d, hint, sizeof hint);
    assert_non_null(strstr(hint, "not a covariance as given"));
    lt_survey_free(s);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_awkward_text),      cmocka_unit_test(test_csv_and_defaults),
        cmocka_unit_test(test_trailing_header),   cmocka_unit_test(test_colmap_errors),
        cmocka_unit_test(test_dense_vs_structured), cmocka_unit_test(test_select),
        cmocka_unit_test(test_not_positive_definite), cmocka_unit_test(test_matrix_forms),
        cmocka_unit_test(test_stats),             cmocka_unit_test(test_cuts),
        cmocka_unit_test(test_cov_digest),        cmocka_unit_test(test_cov_join),
        cmocka_unit_test(test_join_tables),       cmocka_unit_test(test_rfc4180_quotes),
        cmocka_unit_test(test_rfc4180_refusals),  cmocka_unit_test(test_pandas_index),
        cmocka_unit_test(test_text_case),         cmocka_unit_test(test_fits_case),
        cmocka_unit_test(test_positions),         cmocka_unit_test(test_header_rule),
        cmocka_unit_test(test_diagnose_closed_form),
        cmocka_unit_test(test_diagnose_vs_gsl),   cmocka_unit_test(test_double_diagonal),
        cmocka_unit_test(test_cov_hint),
    };
    return cmocka_run_group_tests_name("survey", tests, setup, teardown);
}
