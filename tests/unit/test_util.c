/* Unit tests of lantern/util.h: error records, strict number parsing, and
 * output folders and their marker. */
#include <errno.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include <stdio.h>
#include <sys/stat.h>

#include "lantern/lantern.h"
#include "../testutil.h"

static void test_error_format(void **state)
{
    (void)state;
    lt_error e;
    char buf[256];
    assert_int_equal(lt_error_set(&e, LT_EINPUT, "survey.csv", 12, "bad %s", "z"), LT_EINPUT);
    lt_error_format(&e, buf, sizeof buf);
    assert_string_equal(buf, "survey.csv:12: bad z");
    lt_error_set(&e, LT_EIO, "cov.txt", 0, "cannot open");
    lt_error_format(&e, buf, sizeof buf);
    assert_string_equal(buf, "cov.txt: cannot open");
    lt_error_set(&e, LT_EDOMAIN, NULL, 0, "no big bang");
    lt_error_format(&e, buf, sizeof buf);
    assert_string_equal(buf, "no big bang");
    lt_error_clear(&e);
    assert_int_equal(e.code, LT_OK);
    assert_string_equal(e.msg, "");
    /* a NULL record is allowed and the code still comes back */
    assert_int_equal(lt_error_set(NULL, LT_ENOMEM, NULL, 0, "x"), LT_ENOMEM);
    assert_string_equal(lt_error_name(LT_ENOMEM), "out of memory");
}

static void test_parse_double(void **state)
{
    (void)state;
    double v = 42.0;
    assert_int_equal(lt_parse_double("0.3", &v), LT_OK);
    assert_true(v == 0.3);
    assert_int_equal(lt_parse_double("-1.5e-3", &v), LT_OK);
    assert_true(v == -1.5e-3);
    assert_int_equal(lt_parse_double("+2", &v), LT_OK);
    assert_true(v == 2.0);
    static const char *bad[] = {"", " 1", "1 ", "1,5", "0x10", "inf", "nan", "-inf",
                                "1e999", "abc", "1.2.3", "--1", "e5", NULL};
    for (int i = 0; bad[i]; i++) {
        v = 42.0;
        assert_int_equal(lt_parse_double(bad[i], &v), LT_EINPUT);
        assert_true(v == 42.0); /* untouched on failure */
    }
    assert_int_equal(lt_parse_double(NULL, &v), LT_EINPUT);
}

static void test_parse_long(void **state)
{
    (void)state;
    long v;
    assert_int_equal(lt_parse_long("16", 1, 100, &v), LT_OK);
    assert_int_equal(v, 16);
    assert_int_equal(lt_parse_long("0", 1, 100, &v), LT_EINPUT);
    assert_int_equal(lt_parse_long("101", 1, 100, &v), LT_EINPUT);
    assert_int_equal(lt_parse_long("1.5", 1, 100, &v), LT_EINPUT);
    assert_int_equal(lt_parse_long("", 1, 100, &v), LT_EINPUT);
    assert_int_equal(lt_parse_long("99999999999999999999999", 1, 100, &v), LT_EINPUT);
}

/* The marker names the command that made a folder; a folder without one,
 * or with a damaged one, is not lantern's. */
static void test_outdir_command(void **state)
{
    (void)state;
    char dir[256], cmd[64], path[512];
    lt_error err;
    assert_int_equal(lt_test_tmpdir(dir, sizeof dir, "outdir"), 0);
    assert_int_equal(lt_outdir_command(dir, cmd, sizeof cmd, &err), LT_EINPUT);
    assert_non_null(strstr(err.msg, "not made by lantern"));
    assert_int_equal(lt_outdir_prepare(dir, 0, &err), LT_OK); /* empty: usable */
    assert_int_equal(lt_outdir_mark(dir, "lantern 0.1.0 run configs/demo.ini", &err), LT_OK);
    assert_int_equal(lt_outdir_command(dir, cmd, sizeof cmd, &err), LT_OK);
    assert_string_equal(cmd, "run");
    assert_int_equal(lt_outdir_prepare(dir, 0, &err), LT_EINPUT); /* an earlier run */
    assert_int_equal(lt_outdir_prepare(dir, 1, &err), LT_OK);     /* --force */
    assert_int_equal(lt_outdir_mark(dir, "lantern 0.1.0 campaign (running)", &err), LT_OK);
    assert_int_equal(lt_outdir_command(dir, cmd, sizeof cmd, &err), LT_OK);
    assert_string_equal(cmd, "campaign");
    snprintf(path, sizeof path, "%s/%s", dir, LT_MARKER);
    FILE *f = fopen(path, "w");
    assert_non_null(f);
    fputs("made by hand\n", f);
    fclose(f);
    assert_int_equal(lt_outdir_command(dir, cmd, sizeof cmd, &err), LT_EINPUT);
    assert_int_equal(lt_test_rmtree(dir), 0);
}

/* Lines, fields and trimming (lantern/text.h). The expected values follow
 * from the header's contracts: a byte-order mark is skipped, "\r\n" ends a
 * line like "\n", CSV fields are trimmed, blank-separated fields are runs
 * of non-blanks. */
static void test_text(void **state)
{
    (void)state;
    char buf[] = "\xEF\xBB\xBFz, mu ,err\r\n\n  0.1\t35.2  0.1\nlast";
    lt_lines it;
    size_t len;
    lt_lines_start(&it, buf);
    char *s = lt_lines_next(&it, &len), *f[4];
    assert_string_equal(s, "z, mu ,err");
    assert_int_equal(len, 10);
    assert_int_equal(it.line, 1);
    assert_int_equal(lt_line_split(s, 1, f, 4), 3);
    assert_string_equal(f[1], "mu");
    assert_string_equal(f[2], "err");
    s = lt_lines_next(&it, &len);
    assert_true(lt_line_blank(s));
    s = lt_lines_next(&it, &len);
    assert_int_equal(it.line, 3);
    assert_false(lt_line_blank(s));
    assert_int_equal(lt_line_split(s, 0, f, 2), -1); /* three fields, room for two */
    s = lt_lines_next(&it, &len);
    assert_string_equal(s, "last");
    assert_null(lt_lines_next(&it, &len));
    assert_int_equal(it.line, 4);

    char t[] = " \t a b\t \t";
    assert_string_equal(lt_text_trim(t), "a b");
    char e[] = " \t";
    assert_string_equal(lt_text_trim(e), "");
}

/* CSV records by RFC 4180 (Shafranovich 2005, sect. 2, rules 5-7): quoted
 * fields keep commas, "" is one quote; our own additions: blanks around a
 * field are trimmed, a quote inside a bare field is a character, and a
 * record must end on its line. */
static void test_csv_split(void **state)
{
    (void)state;
    char *f[8];
    char a[] = "\"a, b\", \"say \"\"hi\"\"\" ,x\"y, \"\",,\" k \"";
    assert_int_equal(lt_line_split(a, 1, f, 8), 6);
    assert_string_equal(f[0], "a, b");
    assert_string_equal(f[1], "say \"hi\"");
    assert_string_equal(f[2], "x\"y");
    assert_string_equal(f[3], "");
    assert_string_equal(f[4], "");
    assert_string_equal(f[5], " k ");
    char b[] = "1,\"open, 2";
    assert_int_equal(lt_line_split(b, 1, f, 8), LT_SPLIT_OPEN_QUOTE);
    char c[] = "1,\"a\"b,2";
    assert_int_equal(lt_line_split(c, 1, f, 8), LT_SPLIT_AFTER_QUOTE);
    char d[] = "1,\"a,b\",3";
    assert_int_equal(lt_line_split(d, 1, f, 2), LT_SPLIT_TOO_MANY);
    assert_non_null(strstr(lt_split_error(LT_SPLIT_OPEN_QUOTE), "not closed on its line"));
    /* blank and comment lines */
    assert_true(lt_line_skipped(" \t") && lt_line_skipped("  # x") && !lt_line_skipped(" x#"));
}

/* Random streams keep their numbers: a change here changes every seeded
 * result. The values come from an independent Python transcription of the
 * published generators (splitmix64: Steele, Lea & Flood 2014; xoshiro256**:
 * Blackman & Vigna 2021, their reference C code) with lantern's way of
 * mixing the stream into the seed (src/util/rng.c), and equal the output of
 * lt_rng_* before it moved from src/inference to src/util. */
static void test_rng_streams(void **state)
{
    (void)state;
    lt_rng r;
    lt_rng_seed(&r, 20261202, 3);
    assert_true(lt_rng_next(&r) == 0x9771074e6e2d4cfdull);
    assert_true(lt_rng_next(&r) == 0xfe9983568f07def1ull);
    assert_true(lt_rng_next(&r) == 0xdb2b36700a22041dull);
    assert_true(lt_rng_uniform(&r) == 0.86691466548592111);
    assert_abs(lt_rng_normal(&r), 0.46717900687813418, 1e-15); /* libm's log and cos */
}

/* FNV-1a 64-bit test vectors of its authors' reference test suite (Noll,
 * "FNV hash" test vectors: "", "a", "foobar"; values quoted from memory and
 * checked against a Python transcription of the definition). Adding bytes
 * in two calls equals adding them in one. */
static void test_digest(void **state)
{
    (void)state;
    uint64_t h = LT_DIGEST_START;
    lt_digest_add(&h, "", 0);
    assert_true(h == 0xcbf29ce484222325ull);
    lt_digest_add(&h, "a", 1);
    assert_true(h == 0xaf63dc4c8601ec8cull);
    h = LT_DIGEST_START;
    lt_digest_add(&h, "foo", 3);
    lt_digest_add(&h, "bar", 3);
    assert_true(h == 0x85944171f73967e8ull);
}

/* Paths of any length: a folder name longer than the 4200-byte buffers
 * the campaign command once used is joined whole. */
static void test_path_join(void **state)
{
    (void)state;
    lt_error err;
    char *p = lt_path_join("out/run", "tasks", &err);
    assert_string_equal(p, "out/run/tasks");
    free(p);
    size_t n = 5000;
    char *dir = malloc(n + 1);
    assert_non_null(dir);
    memset(dir, 'd', n);
    dir[n] = '\0';
    p = lt_path_join(dir, "000007.json", &err);
    assert_int_equal(strlen(p), n + 12);
    assert_string_equal(p + n, "/000007.json");
    free(p);
    /* paths of other shapes, past the 4096 to 4400 bytes of the buffers
     * they once went through: built whole, to the last byte */
    p = lt_path_format(&err, "%s/%s_%s.png", dir, "triangle", "w0wa");
    assert_int_equal(strlen(p), n + 18);
    assert_memory_equal(p, dir, n);
    assert_string_equal(p + n, "/triangle_w0wa.png");
    char *tmp = lt_tmp_name(p, &err);
    assert_int_equal(strlen(tmp), n + 22);
    assert_string_equal(tmp + n, "/triangle_w0wa.png.tmp");
    free(tmp);
    free(p);
    free(dir);
}

/* A folder of dirs 200-byte names deep under a temporary folder (whose
 * path goes in top); returns the deep folder's path (free it). */
static char *deep_folder(char *top, size_t size, size_t min_len)
{
    assert_int_equal(lt_test_tmpdir(top, size, "deep"), 0);
    char name[201];
    memset(name, 'n', 200);
    name[200] = '\0';
    char *dir = strdup(top);
    while (strlen(dir) < min_len) {
        char *next = lt_path_join(dir, name, NULL);
        assert_non_null(next);
        assert_int_equal(mkdir(next, 0777), 0);
        free(dir);
        dir = next;
    }
    return dir;
}

/* Atomic writes near the operating system's limit on a path (PATH_MAX,
 * 4096 bytes with the closing NUL on Linux, <linux/limits.h>): a final
 * name whose temporary name FINAL.tmp fits is written; one whose temporary
 * name does not fit is refused by the system, and the final file is not
 * touched. The fixed 4096-byte buffer of the temporary name cut it short
 * instead: "FINAL.t", or for a final name of 4095 bytes the final name
 * itself, so that the "atomic" write went straight into the final file. */
static void test_tmp_name_at_path_max(void **state)
{
    (void)state;
    char top[256];
    char *dir = deep_folder(top, sizeof top, 3900);
    size_t lens[] = {4091, 4092, 4094, 4095};
    for (size_t k = 0; k < sizeof lens / sizeof lens[0]; k++) {
        size_t stem = lens[k] - strlen(dir) - 1;
        char name[256];
        assert_true(stem < sizeof name);
        memset(name, 'a' + (char)k, stem);
        name[stem] = '\0';
        char *final = lt_path_join(dir, name, NULL);
        assert_int_equal(strlen(final), lens[k]);
        lt_error err;
        lt_error_clear(&err);
        int rc = lt_file_write_text(final, "x\n", &err);
        if (lens[k] + 4 < 4096) { /* FINAL.tmp fits */
            assert_int_equal(rc, LT_OK);
            char *text = NULL;
            size_t len = 0;
            assert_int_equal(lt_file_read(final, 64, &text, &len, NULL), LT_OK);
            assert_string_equal(text, "x\n");
            free(text);
        } else {
            assert_int_equal(rc, LT_EIO);
            assert_non_null(strstr(err.msg, strerror(ENAMETOOLONG)));
            assert_true(strncmp(err.file, top, strlen(top)) == 0); /* names the path */
            assert_false(lt_path_exists(final));
        }
        free(final);
    }
    /* an output folder's life, marker and all, just under the limit */
    char *out = lt_path_join(dir, "out", NULL), *file = lt_path_join(out, "a.txt", NULL);
    lt_error err;
    assert_int_equal(lt_outdir_prepare(out, 0, &err), LT_OK);
    assert_int_equal(lt_file_write_text(file, "a\n", &err), LT_OK);
    assert_int_equal(lt_outdir_finish(out, "lantern 0.1.0 test", &err), LT_OK);
    char cmd[64];
    assert_int_equal(lt_outdir_command(out, cmd, sizeof cmd, &err), LT_OK);
    assert_string_equal(cmd, "test");
    assert_true(lt_outdir_done(out));
    free(file);
    free(out);
    free(dir);
    assert_int_equal(lt_test_rmtree(top), 0);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_error_format),
        cmocka_unit_test(test_parse_double),
        cmocka_unit_test(test_parse_long),
        cmocka_unit_test(test_outdir_command),
        cmocka_unit_test(test_text),
        cmocka_unit_test(test_csv_split),
        cmocka_unit_test(test_rng_streams),
        cmocka_unit_test(test_digest),
        cmocka_unit_test(test_path_join),
        cmocka_unit_test(test_tmp_name_at_path_max),
    };
    return cmocka_run_group_tests_name("util", tests, NULL, NULL);
}
