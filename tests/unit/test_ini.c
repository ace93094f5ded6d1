/* Unit tests of the INI reader (lantern/util.h): the rules and every error,
 * each with its line number. */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <cmocka.h>

#include "lantern/lantern.h"

static char path[256];

static void write_file(const char *text, size_t len)
{
    snprintf(path, sizeof path, "/tmp/lantern-test-ini-%d.ini", (int)getpid());
    FILE *f = fopen(path, "wb");
    assert_non_null(f);
    assert_int_equal(fwrite(text, 1, len, f), len);
    fclose(f);
}

static lt_ini *read_text(const char *text, lt_error *err)
{
    write_file(text, strlen(text));
    return lt_ini_read(path, err);
}

/* Expect lt_ini_read to fail at line `line` with `what` in the message. */
static void expect_fail(const char *text, long line, const char *what)
{
    lt_error err;
    lt_ini *ini = read_text(text, &err);
    if (ini)
        print_error("read without error: %s\n", text);
    assert_null(ini);
    assert_int_equal(err.code, LT_EINPUT);
    assert_string_equal(err.file, path);
    assert_int_equal(err.line, line);
    if (!strstr(err.msg, what))
        print_error("message '%s' lacks '%s'\n", err.msg, what);
    assert_non_null(strstr(err.msg, what));
}

static void test_valid(void **state)
{
    (void)state;
    lt_error err;
    /* BOM, CRLF, comments of both kinds, blanks, inline comments, tabs */
    lt_ini *ini = read_text("\xEF\xBB\xBF# run file\r\n\r\n[survey]\r\nname = demo one  # x\r\n"
                            "\tseed=42\r\n; note\r\n[tier.a]\r\nz_min = 0.01;not a comment\r\n",
                            &err);
    assert_non_null(ini);
    const char *name = NULL;
    long seed = 0;
    assert_int_equal(lt_ini_string(ini, "survey", "name", 1, &name, &err), LT_OK);
    assert_string_equal(name, "demo one");
    assert_int_equal(lt_ini_long(ini, "survey", "seed", 1, 0, 100, &seed, &err), LT_OK);
    assert_int_equal(seed, 42);
    lt_ini_entry *e = lt_ini_get(ini, "tier.a", "z_min");
    assert_non_null(e);
    assert_string_equal(e->value, "0.01;not a comment"); /* ';' without a blank before */
    assert_int_equal(e->line, 8);
    assert_int_equal(lt_ini_check_used(ini, &err), LT_OK);
    /* absent and optional: untouched */
    double v = 7.0;
    assert_int_equal(lt_ini_double(ini, "survey", "offset", 0, &v, &err), LT_OK);
    assert_true(v == 7.0);
    /* absent and required: names the section's line */
    assert_int_equal(lt_ini_double(ini, "survey", "offset", 1, &v, &err), LT_EINPUT);
    assert_int_equal(err.line, 3);
    lt_ini_free(ini);
}

static void test_unused_keys(void **state)
{
    (void)state;
    lt_error err;
    lt_ini *ini = read_text("[survey]\nseed = 1\nseeed = 2\n[other]\n", &err);
    assert_non_null(ini);
    long seed;
    assert_int_equal(lt_ini_long(ini, "survey", "seed", 1, 0, 9, &seed, &err), LT_OK);
    assert_int_equal(lt_ini_check_used(ini, &err), LT_EINPUT);
    assert_int_equal(err.line, 4); /* sections first: [other] is unknown */
    assert_non_null(strstr(err.msg, "unknown section [other]"));
    lt_ini_has_section(ini, "other");
    assert_int_equal(lt_ini_check_used(ini, &err), LT_EINPUT);
    assert_int_equal(err.line, 3);
    assert_non_null(strstr(err.msg, "unknown key 'seeed' in [survey]"));
    lt_ini_free(ini);
}

static void test_bad_values(void **state)
{
    (void)state;
    lt_error err;
    lt_ini *ini = read_text("[s]\nx = 1.5.2\nn = 3.5\ny =\n", &err);
    assert_non_null(ini);
    double x;
    long n;
    const char *y;
    assert_int_equal(lt_ini_double(ini, "s", "x", 1, &x, &err), LT_EINPUT);
    assert_int_equal(err.line, 2);
    assert_int_equal(lt_ini_long(ini, "s", "n", 1, 0, 9, &n, &err), LT_EINPUT);
    assert_int_equal(err.line, 3);
    assert_int_equal(lt_ini_string(ini, "s", "y", 1, &y, &err), LT_EINPUT);
    assert_int_equal(err.line, 4);
    lt_ini_free(ini);
}

static void test_errors(void **state)
{
    (void)state;
    expect_fail("a = 1\n", 1, "before any [section]");
    expect_fail("[s]\na = 1\na = 2\n", 3, "appears twice in [s] (first at line 2)");
    expect_fail("[s]\n[t]\n[s]\n", 3, "section [s] appears twice");
    expect_fail("[s]\njust words\n", 2, "expected 'key = value'");
    expect_fail("[s\n", 1, "without ']'");
    expect_fail("[s] x\n", 1, "unexpected text");
    expect_fail("[s s]\n", 1, "section name");
    expect_fail("[s]\nbad key = 1\n", 2, "key 'bad key'");
    /* NAME@GROUP keys: a name, then a group label (no blanks, = : , . @) */
    expect_fail("[s]\nsigma_int@ = 1\n", 2, "'@GROUP' after a parameter's name");
    expect_fail("[s]\n@SNLS = 1\n", 2, "key '@SNLS'");
    expect_fail("[s]\nsigma_int@a.b = 1\n", 2, "key 'sigma_int@a.b'");
    expect_fail("[s]\nsigma_int@a@b = 1\n", 2, "key 'sigma_int@a@b'");
    expect_fail("[s]\nsig ma@a = 1\n", 2, "key 'sig ma@a'");
    lt_error e2;
    lt_ini *ok = read_text("[priors]\nsigma_int@SNLS = uniform:0:1\noffset@low-z_2 = 0\n", &e2);
    assert_non_null(ok);
    assert_non_null(lt_ini_get(ok, "priors", "sigma_int@SNLS"));
    assert_non_null(lt_ini_get(ok, "priors", "offset@low-z_2"));
    lt_ini_free(ok);
    /* over-long lines are refused, never cut */
    size_t n = LT_INI_LINE_MAX + 100;
    char *text = malloc(n + 32);
    strcpy(text, "[s]\nk = ");
    memset(text + 8, 'x', n);
    strcpy(text + 8 + n, "\n");
    expect_fail(text, 2, "over the limit");
    free(text);
    /* a NUL byte: not a text file */
    lt_error err;
    write_file("[s]\0\n", 5);
    assert_null(lt_ini_read(path, &err));
    assert_non_null(strstr(err.msg, "NUL"));
    /* missing files and directories */
    assert_null(lt_ini_read("/nonexistent/run.ini", &err));
    assert_non_null(strstr(err.msg, "cannot open"));
    assert_null(lt_ini_read("/tmp", &err));
    assert_non_null(strstr(err.msg, "is a directory"));
}

static int teardown(void **state)
{
    (void)state;
    unlink(path);
    return 0;
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_valid),
        cmocka_unit_test(test_unused_keys),
        cmocka_unit_test(test_bad_values),
        cmocka_unit_test(test_errors),
    };
    return cmocka_run_group_tests_name("ini", tests, NULL, teardown);
}
