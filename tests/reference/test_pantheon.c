/*
 * The survey readers on real public data: the Pantheon 2018 release files
 * in ../shared/data/pantheon2018/ (Scolnic et al. 2018, ApJ 859, 101; see
 * SOURCE.md there). Their quirk: the header names 19 columns, the rows
 * have 18 fields, and the trailing name (biascor) has no data.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "lantern/lantern.h"
#include "../testutil.h"

static char binned[512], full[512], sys[512];

static int setup(void **state)
{
    (void)state;
    const char *shared = getenv("LANTERN_SHARED");
    if (!shared)
        shared = "../shared";
    snprintf(binned, sizeof binned, "%s/data/pantheon2018/lcparam_DS17f.txt", shared);
    snprintf(full, sizeof full, "%s/data/pantheon2018/lcparam_full_long_zhel.txt", shared);
    snprintf(sys, sizeof sys, "%s/data/pantheon2018/sys_DS17f.txt", shared);
    return 0;
}

static void test_binned_with_systematics(void **state)
{
    (void)state;
    lt_survey_spec spec;
    lt_survey_spec_init(&spec);
    spec.data = binned;
    spec.columns = "z=zcmb,zhel=zhel,mag=mb,err=dmb";
    spec.cov[spec.ncov++] = sys;
    lt_error err;
    lt_survey *s = lt_survey_read(&spec, &err);
    if (!s)
        print_error("%s: %s\n", err.file, err.msg);
    assert_non_null(s);
    assert_int_equal(s->n, 40);
    assert_int_equal(s->kind, LT_OBS_MAG);
    /* the one warning: the trailing header name */
    assert_int_equal(s->nwarnings, 1);
    assert_non_null(strstr(s->warnings[0], "biascor"));
    /* diag(dmb^2) + sys is positive definite: lt_survey_read factored it */
    assert_int_equal(lt_cov_kind_of(s->cov), LT_COV_DENSE);
    lt_cov_info ci;
    assert_int_equal(lt_cov_inspect(s->cov, &ci, &err), LT_OK);
    assert_true(ci.positive_definite && ci.min_eigenvalue > 0);
    /* first and last rows as printed in the file */
    assert_true(s->z[0] == 0.014 && s->obs[0] == 14.57001926 && s->err[0] == 0.0311);
    assert_true(s->z[39] == 1.6123);
    lt_survey_free(s);

    /* the systematic matrix alone: 40 x 40 from "40" and 1600 lines */
    double *m;
    size_t n;
    assert_int_equal(lt_matrix_read(sys, &m, &n, &err), LT_OK);
    assert_int_equal(n, 40);
    free(m);
}

static void test_full_table(void **state)
{
    (void)state;
    lt_survey_spec spec;
    lt_survey_spec_init(&spec);
    spec.data = full;
    spec.columns = "z=zcmb,zhel=zhel,mag=mb,err=dmb,id=name";
    lt_error err;
    lt_survey *s = lt_survey_read(&spec, &err);
    if (!s)
        print_error("%s: %s\n", err.file, err.msg);
    assert_non_null(s);
    assert_int_equal(s->n, 1048);
    assert_int_equal(lt_cov_kind_of(s->cov), LT_COV_DIAGONAL);
    assert_non_null(s->id);
    /* zhel differs from zcmb in the full table */
    int differ = 0;
    for (size_t i = 0; i < s->n; i++)
        differ += s->zhel[i] != s->z[i];
    assert_true(differ > 1000);
    /* a cut by redshift */
    spec.zmax = 0.1;
    lt_survey *low = lt_survey_read(&spec, &err);
    assert_non_null(low);
    size_t want = 0;
    for (size_t i = 0; i < s->n; i++)
        want += s->z[i] <= 0.1;
    assert_int_equal(low->n, want);
    lt_survey_free(low);
    lt_survey_free(s);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_binned_with_systematics),
        cmocka_unit_test(test_full_table),
    };
    return cmocka_run_group_tests_name("pantheon 2018", tests, setup, NULL);
}
