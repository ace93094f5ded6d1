/*
 * Unit tests of the chain files: the number formatter they are written
 * with (lt_format_shortest), and chains.csv and chains.fits as
 * lt_report_write_chains writes them (every draw or every N-th, weighted
 * or not, with progress) and lt_run_model_load reads them back: bit for
 * bit, from the FITS file and from the CSV alone.
 *
 * References: every formatted number is read back with the C library's
 * strtod (glibc: correctly rounded, as C17 7.22.1.3 and IEEE 754-2008
 * section 5.12.2 require), and its length is compared with the shortest
 * of glibc's printf "%.*e" at 1 to 17 significant digits that reads back.
 * The FITS columns are read back independently with CFITSIO's
 * fits_read_col and fits_read_key. With LANTERN_TEST_CHAINS_KEEP=DIR set,
 * the files of each case are also kept in DIR/CASE for test_chains.sh to
 * read with astropy.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include <cmocka.h>
#include <fitsio.h>

#include "lantern/lantern.h"
#include "../pantheon.h"
#include "../testutil.h"

/* ---- the formatter ---- */

static int same_bits(double a, double b) { return memcmp(&a, &b, sizeof a) == 0; }

/* The significant digits of a formatted number (no sign, point, leading
 * or trailing zeros, exponent). */
static int digits_of(const char *s)
{
    char d[40];
    int n = 0;
    for (; *s && *s != 'e'; s++)
        if (*s >= '0' && *s <= '9')
            d[n++] = *s;
    int a = 0;
    while (a < n - 1 && d[a] == '0')
        a++;
    while (n - 1 > a && d[n - 1] == '0')
        n--;
    return n - a;
}

/* The fewest significant digits printf needs to give back v (1 to 17). */
static int printf_shortest(double v)
{
    char b[40];
    for (int k = 1; k < 17; k++) {
        snprintf(b, sizeof b, "%.*e", k - 1, v);
        if (strtod(b, NULL) == v)
            return k;
    }
    return 17;
}

static void test_shortest_known(void **state)
{
    (void)state;
    /* as printf's %.17g would print them, without the trailing digits the
     * shortest form drops (the values from C17 5.2.4.2.2 and IEEE 754's
     * binary64: DBL_MAX, DBL_MIN, the smallest subnormal) */
    static const struct {
        double v;
        const char *text;
    } cases[] = {{0.1, "0.1"},
                 {0.3, "0.3"},
                 {-522.5488552147892, "-522.5488552147892"},
                 {1031.3566344045103, "1031.3566344045103"},
                 {100, "100"},
                 {1e16, "10000000000000000"},
                 {1e17, "1e+17"},
                 {1e-4, "0.0001"},
                 {1e-5, "1e-05"},
                 {1.5e-7, "1.5e-07"},
                 {2.5e100, "2.5e+100"},
                 {1.7976931348623157e308, "1.7976931348623157e+308"},
                 {2.2250738585072014e-308, "2.2250738585072014e-308"},
                 {4.9406564584124654e-324, "5e-324"},
                 {9007199254740993.0, "9007199254740992"},
                 {-0.0, "-0"},
                 {0.0, "0"},
                 {NAN, "nan"},
                 {INFINITY, "inf"},
                 {-INFINITY, "-inf"}};
    for (size_t i = 0; i < sizeof cases / sizeof *cases; i++) {
        char b[32];
        size_t n = lt_format_shortest(cases[i].v, b);
        assert_string_equal(b, cases[i].text);
        assert_int_equal(n, strlen(b));
    }
}

static void test_shortest_round_trip(void **state)
{
    (void)state;
    /* 3 x 400 000 doubles read back: any bit pattern (every exponent, subnormals),
     * values of a chain's size, and neighbours of 0.3 one ulp apart */
    unsigned long long seed = 20;
    long n = 0, longer = 0;
    for (long i = 0; i < 1200000; i++) {
        double v;
        if (i % 3 == 0) {
            uint64_t u = (uint64_t)(lt_test_uniform(&seed, 0, 1) * 0x1p32) << 32 |
                         (uint64_t)(lt_test_uniform(&seed, 0, 1) * 0x1p32);
            memcpy(&v, &u, sizeof v);
            if (!isfinite(v))
                continue;
        } else if (i % 3 == 1) {
            v = lt_test_uniform(&seed, -1, 1) * pow(10, floor(lt_test_uniform(&seed, -12, 12)));
        } else {
            v = nextafter(0.3, i % 2 ? 1 : -1) + (double)(i / 3) * 0x1p-54;
        }
        char b[32];
        lt_format_shortest(v, b);
        double back = strtod(b, NULL);
        if (!same_bits(back, v)) {
            print_error("%a formatted as '%s' reads back as %a\n", v, b, back);
            fail();
        }
        int d = digits_of(b);
        assert_true(d <= 17);
        if (i % 10 < 3) {
            /* against printf for one in ten (it takes 17 tries at worst):
             * never shorter than the shortest (that would not read back) */
            int p = printf_shortest(v);
            assert_true(d >= p);
            longer += d > p;
            n++;
        }
    }
    /* Grisu2 finds the shortest form for all but about 0.1% of doubles
     * (Loitsch 2010, section 7) */
    print_message("%ld of %ld one digit or more longer than the shortest\n", longer, n);
    assert_true(longer < n / 200);
}

/* ---- the chain files ---- */

static char dir[256];

enum { NCHAIN = 3, NDRAW = 1001, NCOL = 7 };
static const char *cols[NCOL] = {"logpost", "chi2", "omega_m", "w0", "wa", "omega_de", "z_t"};

/* A posterior of NCHAIN chains x NDRAW draws of seeded values with all 53
 * bits, a NaN among the derived ones (an age without a big bang), and
 * weights with mean 1 when weighted; rows every thin-th draw (as the
 * importance weighting keeps them). */
static void make_posterior(lt_posterior *p, int weighted, size_t thin)
{
    memset(p, 0, sizeof *p);
    p->method = LT_POST_MCMC;
    p->nchains = NCHAIN, p->ndraws = NDRAW, p->ncols = NCOL, p->thin = thin;
    p->cols = (char **)cols;
    p->first_param = 2, p->nparams = 3, p->first_derived = 5, p->nderived = 2;
    p->rows = malloc(sizeof(double) * NCHAIN * NDRAW * NCOL);
    assert_non_null(p->rows);
    p->converged = 1;
    p->diag.rhat_max = 1.004, p->diag.ess_min = 1234;
    unsigned long long s = 7;
    for (size_t i = 0; i < (size_t)NCHAIN * NDRAW * NCOL; i++)
        p->rows[i] = lt_test_uniform(&s, -3, 3) * pow(10, floor(lt_test_uniform(&s, -6, 6)));
    p->rows[5 * NCOL + 6] = NAN;
    if (weighted) {
        p->weights = malloc(sizeof(double) * NCHAIN * NDRAW);
        assert_non_null(p->weights);
        for (size_t i = 0; i < (size_t)NCHAIN * NDRAW; i++)
            p->weights[i] = lt_test_uniform(&s, 0, 2);
        p->weights[4] = 0; /* outside the exact likelihood's domain */
        p->ess_min_weighted = 900;
    }
}

static void free_posterior(lt_posterior *p)
{
    free(p->rows);
    free(p->weights);
}

/* The summary the reader checks the files' columns against. */
static void write_summary(const char *folder, const char *w0_name)
{
    char text[1024];
    snprintf(text, sizeof text,
             "{\"model\": \"w0wa-flat\", \"params\": {\"omega_m\": {}, \"%s\": {}, \"wa\": {}}, "
             "\"derived\": {\"omega_de\": {}, \"z_t\": {}}, \"convergence\": {\"chains\": %d}}\n",
             w0_name, NCHAIN);
    lt_test_write(folder, "summary.json", text, strlen(text));
}

typedef struct {
    char files[2][16];
    size_t calls[2], last[2], total;
    int monotonic;
} progress_log;

static void on_progress(const char *file, size_t rows, size_t total, void *ctx)
{
    progress_log *pl = ctx;
    int k = strcmp(file, "chains.csv") == 0 ? 0 : 1;
    snprintf(pl->files[k], sizeof pl->files[k], "%s", file);
    /* the CSV comes first, whole */
    if (k == 1 && pl->last[0] != total)
        pl->monotonic = 0;
    if (rows <= pl->last[k] && pl->calls[k])
        pl->monotonic = 0;
    pl->calls[k]++, pl->last[k] = rows, pl->total = total;
}

/* Load folder and compare with p's rows kept by file_thin, bit for bit. */
static void check_load(const char *folder, const lt_posterior *p, size_t file_thin)
{
    lt_run_model m;
    lt_error err;
    lt_error_clear(&err);
    int rc = lt_run_model_load(folder, &m, &err);
    if (rc)
        print_error("%s:%ld: %s\n", err.file, err.line, err.msg);
    assert_int_equal(rc, LT_OK);
    size_t per = (NDRAW + file_thin - 1) / file_thin, nc = NCOL - 2;
    assert_int_equal(m.nchains, NCHAIN);
    assert_int_equal(m.ndraws, per);
    /* a row stands for file_thin x the posterior's own thinning steps (the
     * traces place it there) */
    assert_int_equal(m.step_every, file_thin * p->thin);
    assert_int_equal(m.weighted, p->weights != NULL);
    assert_int_equal(m.weights != NULL, p->weights != NULL);
    for (size_t c = 0; c < NCHAIN; c++)
        for (size_t i = 0; i < per; i++) {
            size_t src = c * NDRAW + i * file_thin, row = c * per + i;
            for (size_t k = 0; k < nc; k++)
                if (!same_bits(m.draws[row * nc + k], p->rows[src * NCOL + 2 + k])) {
                    print_error("chain %zu row %zu column %zu: %a, want %a\n", c, i, k,
                                m.draws[row * nc + k], p->rows[src * NCOL + 2 + k]);
                    fail();
                }
            if (p->weights)
                assert_true(same_bits(m.weights[row], p->weights[src]));
        }
    lt_run_model_free(&m);
}

/* The FITS file's own account, read with CFITSIO: rows, FILETHIN, the
 * weight column, and the steps of chain 2. */
static void check_fits(const char *folder, const lt_posterior *p, size_t file_thin)
{
    char path[500];
    snprintf(path, sizeof path, "%s/chains.fits", folder);
    fitsfile *f;
    int status = 0, ncols = 0, col = 0;
    long nrows = 0, thin = 0;
    fits_open_file(&f, path, READONLY, &status);
    fits_movnam_hdu(f, BINARY_TBL, "CHAINS", 0, &status);
    fits_get_num_rows(f, &nrows, &status);
    fits_get_num_cols(f, &ncols, &status);
    fits_read_key(f, TLONG, "FILETHIN", &thin, NULL, &status);
    assert_int_equal(status, 0);
    size_t per = (NDRAW + file_thin - 1) / file_thin;
    assert_int_equal(nrows, (long)(NCHAIN * per));
    assert_int_equal(thin, (long)file_thin);
    assert_int_equal(ncols, NCOL + 2 + (p->weights != NULL));
    int found = fits_get_colnum(f, CASESEN, "weight", &col, &status) == 0;
    status = 0;
    assert_int_equal(found, p->weights != NULL);
    if (found)
        assert_int_equal(col, 3);
    /* chain 2's second kept row is its draw file_thin + 1 (1-based) of
     * the rows, which is step file_thin * thin + 1 as sampled */
    long step = 0, chain = 0;
    fits_read_col(f, TLONG, 1, (LONGLONG)per + 2, 1, 1, NULL, &chain, NULL, &status);
    fits_read_col(f, TLONG, 2, (LONGLONG)per + 2, 1, 1, NULL, &step, NULL, &status);
    fits_close_file(f, &status);
    assert_int_equal(status, 0);
    assert_int_equal(chain, 2);
    assert_int_equal(step, (long)(file_thin * p->thin + 1));
}

static void round_trip(int weighted, size_t post_thin, size_t file_thin, const char *sub)
{
    lt_error err;
    lt_error_clear(&err);
    lt_survey *s = lt_test_pantheon_binned(&err);
    assert_non_null(s);
    lt_like_spec ls;
    lt_like_spec_init(&ls, lt_cosmo_model_find("w0wa-flat"));
    lt_like *l = lt_like_alloc(s, &ls, &err);
    assert_non_null(l);
    lt_survey_spec spec;
    lt_survey_spec_init(&spec);
    spec.data = "lcparam_DS17f.txt";
    char folder[400];
    snprintf(folder, sizeof folder, "%s/%s", dir, sub);
    assert_int_equal(mkdir(folder, 0700), 0);
    write_summary(folder, "w0");
    lt_posterior p;
    make_posterior(&p, weighted, post_thin);
    progress_log pl = {.monotonic = 1};
    lt_chains_opts o = {file_thin, on_progress, &pl};
    assert_int_equal(lt_report_write_chains(folder, l, &p, &spec, 3, &o, &err), LT_OK);
    size_t rows = NCHAIN * ((NDRAW + file_thin - 1) / file_thin);
    /* each file told in order, up to its last row, in about ten calls (the
     * FITS file by blocks of rows) */
    assert_true(pl.monotonic);
    assert_int_equal(pl.total, rows);
    assert_int_equal(pl.last[0], rows);
    assert_int_equal(pl.last[1], rows);
    assert_true(pl.calls[0] >= 2 && pl.calls[0] <= 12);
    assert_true(pl.calls[1] >= 1 && pl.calls[1] <= 12); /* by blocks of 1365 rows */
    check_fits(folder, &p, file_thin);
    check_load(folder, &p, file_thin); /* from chains.fits */
    /* for tests/e2e/test_chains.sh, which reads these files with astropy:
     * the same files in $LANTERN_TEST_CHAINS_KEEP/SUB, kept */
    const char *keep = getenv("LANTERN_TEST_CHAINS_KEEP");
    if (keep) {
        char kept[400];
        snprintf(kept, sizeof kept, "%s/%s", keep, sub);
        assert_int_equal(mkdir(kept, 0700), 0);
        write_summary(kept, "w0");
        assert_int_equal(lt_report_write_chains(kept, l, &p, &spec, 3, &o, &err), LT_OK);
    }
    /* the CSV's steps: chain 1's second kept row */
    char path[500], *text;
    size_t len;
    snprintf(path, sizeof path, "%s/chains.csv", folder);
    assert_int_equal(lt_file_read(path, (size_t)1 << 30, &text, &len, NULL), LT_OK);
    char *second = strchr(strchr(text, '\n') + 1, '\n') + 1, want[32];
    snprintf(want, sizeof want, "1,%zu,", file_thin * post_thin + 1);
    assert_memory_equal(second, want, strlen(want));
    free(text);
    /* a summary naming another column: refused from either file, naming it */
    write_summary(folder, "w1");
    lt_run_model m;
    assert_int_equal(lt_run_model_load(folder, &m, &err), LT_EINPUT);
    assert_non_null(strstr(err.file, "chains.fits"));
    assert_int_equal(err.line, 0); /* a FITS file has no lines: the message names the column */
    char want_col[64];
    snprintf(want_col, sizeof want_col, "column %d is 'w0' where 'w1' was expected",
             weighted ? 7 : 6);
    assert_non_null(strstr(err.msg, want_col));
    snprintf(path, sizeof path, "%s/chains.fits", folder);
    assert_int_equal(remove(path), 0);
    assert_int_equal(lt_run_model_load(folder, &m, &err), LT_EINPUT);
    assert_non_null(strstr(err.file, "chains.csv"));
    assert_int_equal(err.line, 1);
    /* without the FITS file, the CSV alone gives the same draws */
    write_summary(folder, "w0");
    check_load(folder, &p, file_thin);
    free_posterior(&p);
    lt_like_free(l);
    lt_survey_free(s);
}

/* The cases: weighted, the posterior's own thinning (the importance
 * weighting's), the files' thinning (--thin), the folder. */
typedef struct {
    int weighted;
    size_t post_thin, file_thin;
    const char *sub;
} round_trip_case;
static round_trip_case cases[] = {
    {0, 1, 1, "plain"}, {0, 1, 7, "thin7"}, {1, 3, 1, "weighted"}, {1, 3, 10, "weighted10"}};

static void test_round_trip(void **state)
{
    const round_trip_case *c = *state;
    round_trip(c->weighted, c->post_thin, c->file_thin, c->sub);
}

/* A negative weight in chains.fits (written so by hand) is refused, naming
 * the file and the row. */
static void test_fits_bad_weight(void **state)
{
    (void)state;
    lt_error err;
    lt_error_clear(&err);
    lt_survey *s = lt_test_pantheon_binned(&err);
    lt_like_spec ls;
    lt_like_spec_init(&ls, lt_cosmo_model_find("w0wa-flat"));
    lt_like *l = lt_like_alloc(s, &ls, &err);
    assert_non_null(l);
    lt_survey_spec spec;
    lt_survey_spec_init(&spec);
    char folder[400];
    snprintf(folder, sizeof folder, "%s/badweight", dir);
    assert_int_equal(mkdir(folder, 0700), 0);
    write_summary(folder, "w0");
    lt_posterior p;
    make_posterior(&p, 1, 1);
    p.weights[NDRAW + 9] = -0.5;
    assert_int_equal(lt_report_write_chains(folder, l, &p, &spec, 3, NULL, &err), LT_OK);
    lt_run_model m;
    assert_int_equal(lt_run_model_load(folder, &m, &err), LT_EINPUT);
    print_message("%s: %s\n", err.file, err.msg);
    assert_non_null(strstr(err.file, "chains.fits"));
    char want[64];
    snprintf(want, sizeof want, "row %d: weight -0.5", NDRAW + 10);
    assert_non_null(strstr(err.msg, want));
    free_posterior(&p);
    lt_like_free(l);
    lt_survey_free(s);
}

static int setup(void **state)
{
    (void)state;
    return lt_test_tmpdir(dir, sizeof dir, "chains");
}

static int teardown(void **state)
{
    (void)state;
    return lt_test_rmtree(dir);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_shortest_known),     cmocka_unit_test(test_shortest_round_trip),
        cmocka_unit_test_prestate(test_round_trip, &cases[0]),
        cmocka_unit_test_prestate(test_round_trip, &cases[1]),
        cmocka_unit_test_prestate(test_round_trip, &cases[2]),
        cmocka_unit_test_prestate(test_round_trip, &cases[3]),
        cmocka_unit_test(test_fits_bad_weight),
    };
    return cmocka_run_group_tests(tests, setup, teardown);
}
