/*
 * Unit tests of the constraint tables: the Particle Data Group's rounding
 * rule on the cases its own description names (Review of Particle Physics,
 * introduction: three leading digits 100-354 keep two significant digits,
 * 355-949 one, 950-999 round up to 1000 and keep two), the quote of a
 * posterior pressing on a prior edge, and the Markdown, LaTeX and CSV
 * output for a fixed pair of models against files checked into
 * tests/data/expected/ (LANTERN_WRITE_EXPECTED=1 rewrites them from the
 * current output, for a change meant to alter them; read them before
 * committing). Where pdflatex is installed, the LaTeX table is
 * compiled with booktabs; otherwise the test says it skipped.
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

static char dir[256];

static void rounded(double v, double e, const char *want_v, const char *want_e)
{
    char a[64], b[64], c[64];
    lt_pdg_round(v, e, e, a, b, c, sizeof a);
    if (strcmp(a, want_v) || strcmp(b, want_e))
        print_error("%g +- %g: got %s +- %s, want %s +- %s\n", v, e, a, b, want_v, want_e);
    assert_string_equal(a, want_v);
    assert_string_equal(b, want_e);
}

static void test_pdg_rule(void **state)
{
    (void)state;
    rounded(5.0, 0.100, "5.00", "0.10");   /* 100: two digits */
    rounded(5.0, 0.354, "5.00", "0.35");   /* 354: two digits */
    rounded(5.0, 0.355, "5.0", "0.4");     /* 355: one digit */
    rounded(5.0, 0.827, "5.0", "0.8");
    rounded(5.0, 0.949, "5.0", "0.9");     /* 949: one digit */
    rounded(5.0, 0.950, "5.0", "1.0");     /* 950: up to 1000, two digits */
    rounded(5.0, 0.987, "5.0", "1.0");
    rounded(1.23456, 0.0352, "1.235", "0.035");
    rounded(100.0, 12.3, "100", "12");
    rounded(0.298, 0.022, "0.298", "0.022");
    rounded(-0.0004, 0.12, "0.00", "0.12"); /* no "-0.00" */
    /* asymmetric: the smaller error decides */
    char v[64], m[64], p[64];
    lt_pdg_round(0.31, 0.08, 0.05, v, m, p, sizeof v); /* 500: one digit */
    assert_string_equal(v, "0.31");
    assert_string_equal(m, "0.08");
    assert_string_equal(p, "0.05");
}

/* Two made-up models with simple draws: x uniform-ish around 0.3, and a
 * parameter w pressed against its prior's lower edge at 0. */
static double draws_a[400 * 2], draws_b[400 * 3];

static void fake_models(lt_run_model *m)
{
    static char *na[] = {"omega_m", "q0"}, *nb[] = {"omega_m", "omega_de", "omega_k"};
    static lt_prior pa[1] = {{LT_PRIOR_UNIFORM, 0, 1}}, pb[2] = {{LT_PRIOR_UNIFORM, 0, 1},
                                                                  {LT_PRIOR_UNIFORM, 0, 1.6}};
    static double ba[2] = {0.3, -0.55}, bb[3] = {0.31, 0.02, 0.67};
    for (int i = 0; i < 400; i++) {
        double u = (i + 0.5) / 400.0;
        draws_a[i * 2] = 0.25 + 0.1 * u, draws_a[i * 2 + 1] = -0.6 + 0.1 * u;
        draws_b[i * 3] = 0.2 + 0.2 * u, draws_b[i * 3 + 1] = 0.3 * u * u; /* piles up at 0 */
        draws_b[i * 3 + 2] = 0.1 - 0.2 * u;
    }
    memset(m, 0, 2 * sizeof *m);
    m[0] = (lt_run_model){.name = "lcdm-flat", .label = "lcdm-flat", .nparams = 1, .nderived = 1,
                          .names = na, .priors = pa, .best = ba, .nchains = 2, .ndraws = 200,
                          .draws = draws_a, .chi2_min = 39.3, .aic = 43.3, .bic = 46.7, .dof = 38,
                          .ln_z = NAN, .ln_z_err = NAN};
    m[1] = (lt_run_model){.name = "lcdm", .label = "lcdm", .nparams = 2, .nderived = 1,
                          .names = nb, .priors = pb, .best = bb, .nchains = 2, .ndraws = 200,
                          .draws = draws_b, .chi2_min = 39.1, .aic = 45.1, .bic = 50.2, .dof = 37,
                          .ln_z = NAN, .ln_z_err = NAN};
    static lt_post_stats sa[2], sb[3];
    for (int c = 0; c < 2; c++) {
        double x[400];
        for (int i = 0; i < 400; i++)
            x[i] = draws_a[i * 2 + c];
        lt_post_summarise(x, 400, &sa[c]);
    }
    for (int c = 0; c < 3; c++) {
        double x[400];
        for (int i = 0; i < 400; i++)
            x[i] = draws_b[i * 3 + c];
        lt_post_summarise(x, 400, &sb[c]);
    }
    m[0].stats = sa, m[1].stats = sb;
}

static void same_file(const char *got, const char *expected)
{
    char *a, *b;
    size_t na, nb;
    assert_int_equal(lt_file_read(got, 1 << 20, &a, &na, NULL), LT_OK);
    if (lt_file_read(expected, 1 << 20, &b, &nb, NULL) != LT_OK) {
        print_error("missing %s; the output was:\n%s\n", expected, a);
        fail();
    }
    if (na != nb || memcmp(a, b, na))
        print_error("%s differs from %s:\n%s\n", got, expected, a);
    assert_true(na == nb && memcmp(a, b, na) == 0);
    free(a);
    free(b);
}

static void test_quotes_and_files(void **state)
{
    (void)state;
    lt_run_model m[2];
    fake_models(m);
    /* omega_de of the second model presses on its prior's edge at 0 */
    lt_quote q = lt_quote_of(&m[1], 1);
    assert_int_equal(q.kind, LT_QUOTE_UPPER);
    lt_quote q0 = lt_quote_of(&m[0], 0);
    assert_int_equal(q0.kind, LT_QUOTE_TWO_SIDED);
    assert_rel(q0.value, 0.3, 1e-12); /* the median */
    lt_error err;
    assert_int_equal(lt_report_write_tables(dir, m, 2, &err), LT_OK);
    char got[512];
    const char *names[] = {"constraints.md", "constraints.tex", "constraints.csv"};
    for (int k = 0; k < 3; k++) {
        char want[512];
        snprintf(got, sizeof got, "%s/%s", dir, names[k]);
        snprintf(want, sizeof want, "tests/data/expected/%s", names[k]);
        if (getenv("LANTERN_WRITE_EXPECTED")) { /* regenerate, after reading them by eye */
            char cmd[1200];
            snprintf(cmd, sizeof cmd, "cp '%s' '%s'", got, want);
            assert_int_equal(system(cmd), 0);
        }
        same_file(got, want);
    }
    /* with evidences, the tables carry ln Z and ln B against the first model */
    m[0].ln_z = 10.0, m[0].ln_z_err = 0.05, m[1].ln_z = 9.0, m[1].ln_z_err = 0.06;
    assert_int_equal(lt_report_write_tables(dir, m, 2, &err), LT_OK);
    char *md;
    size_t len;
    snprintf(got, sizeof got, "%s/constraints.md", dir);
    assert_int_equal(lt_file_read(got, 1 << 20, &md, &len, NULL), LT_OK);
    assert_non_null(strstr(md, "| ln Z (nested sampling) | 10.00 ± 0.05 | 9.00 ± 0.06 |"));
    assert_non_null(strstr(md, "| ln B vs first | +0.00 | -1.00 |"));
    free(md);
    /* compile the LaTeX where a LaTeX is installed */
    if (system("command -v pdflatex >/dev/null 2>&1") != 0) {
        print_message("skipped: pdflatex is not installed (texlive-latex-recommended has "
                      "booktabs), so constraints.tex was not compiled\n");
        return;
    }
    char cmd[1024];
    snprintf(cmd, sizeof cmd,
             "cd %s && printf '\\\\documentclass{article}\\\\usepackage{booktabs}\\\\begin{document}"
             "\\\\input{constraints.tex}\\\\end{document}\\n' > t.tex && "
             "pdflatex -interaction=nonstopmode -halt-on-error t.tex >/dev/null 2>&1",
             dir);
    assert_int_equal(system(cmd), 0);
}

static int setup(void **state)
{
    (void)state;
    return lt_test_tmpdir(dir, sizeof dir, "tables");
}

static int teardown(void **state)
{
    (void)state;
    return lt_test_rmtree(dir);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_pdg_rule),
        cmocka_unit_test(test_quotes_and_files),
    };
    return cmocka_run_group_tests_name("tables", tests, setup, teardown);
}
