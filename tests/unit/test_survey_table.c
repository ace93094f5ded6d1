/*
 * Unit tests of the survey table reader on the tables people have (issue
 * 22, item 8): RFC 4180 CSV (quoted fields with commas and doubled quotes,
 * CRLF, quoted header names), the unnamed index column pandas writes,
 * column names matched without regard to case (text and FITS, with the
 * ambiguity refused) and header-less tables mapped by column number. The
 * rules are documented at lt_survey_read (include/lantern/survey.h); every
 * refusal must name the file and line. End-to-end checks against Python's
 * csv module and astropy.io.fits are in tests/e2e/test_survey_tables.sh.
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
    return lt_test_tmpdir(dir, sizeof dir, "survey-table");
}

static int teardown(void **state)
{
    (void)state;
    return lt_test_rmtree(dir);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_rfc4180_quotes), cmocka_unit_test(test_rfc4180_refusals),
        cmocka_unit_test(test_pandas_index),   cmocka_unit_test(test_text_case),
        cmocka_unit_test(test_fits_case),      cmocka_unit_test(test_positions),
        cmocka_unit_test(test_header_rule),
    };
    return cmocka_run_group_tests_name("survey tables", tests, setup, teardown);
}
