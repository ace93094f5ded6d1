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
                          .ln_z = NAN, .ln_z_err = NAN, .converged = 1};
    m[1] = (lt_run_model){.name = "lcdm", .label = "lcdm", .nparams = 2, .nderived = 1,
                          .names = nb, .priors = pb, .best = bb, .nchains = 2, .ndraws = 200,
                          .draws = draws_b, .chi2_min = 39.1, .aic = 45.1, .bic = 50.2, .dof = 37,
                          .ln_z = NAN, .ln_z_err = NAN, .converged = 1};
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

/* ---- the density at a prior's edges against closed forms ---- */

/* n draws of a standard normal truncated to [lo, hi] (rejection), seeded. */
static double *truncated_normal(size_t n, double lo, double hi, uint64_t seed)
{
    double *x = malloc(n * sizeof *x);
    lt_rng r;
    lt_rng_seed(&r, seed, 0);
    for (size_t i = 0; x && i < n;) {
        double v = lt_rng_normal(&r);
        if (v >= lo && v <= hi)
            x[i++] = v;
    }
    return x;
}

static void test_edge_density(void **state)
{
    (void)state;
    enum { N = 100000 };
    double lo, hi;
    lt_rng r;
    lt_rng_seed(&r, 16, 0);
    /* uniform on its prior: the density is the same everywhere, ratio 1 at
     * both edges (closed form). The peak of a noisy estimate sits a few per
     * cent above the mean density; an estimate not reflected at the edges
     * would give 0.5. */
    double *x = malloc(N * sizeof *x);
    for (size_t i = 0; i < N; i++)
        x[i] = 40.0 + 60.0 * lt_rng_uniform(&r);
    assert_int_equal(lt_post_edge_density(x, NULL, N, 40.0, 100.0, &lo, &hi), LT_OK);
    print_message("uniform U(40, 100): edge ratios %.3f %.3f (closed form 1)\n", lo, hi);
    assert_true(lo > 0.9 && lo <= 1.0 && hi > 0.9 && hi <= 1.0);
    free(x);
    /* N(0, 1) truncated to [-1, 1.5]: the peak is at 0, so the ratios are
     * exp(-x^2/2) at the edges (closed form): 0.6065 and 0.3247. Reflection
     * leaves a bias of about |f'/f| h sqrt(2/pi) at an edge (Silverman 1986,
     * section 2.10; h = 0.054 here): +4% and +6.5% of those values, and
     * the estimate at an edge has a noise of about 2.5% (some 1800 draws
     * within a bandwidth of it); we allow 15%. */
    x = truncated_normal(N, -1.0, 1.5, 7);
    assert_int_equal(lt_post_edge_density(x, NULL, N, -1.0, 1.5, &lo, &hi), LT_OK);
    print_message("N(0,1) on [-1, 1.5]: %.4f %.4f (closed form %.4f %.4f)\n", lo, hi,
                  exp(-0.5), exp(-1.125));
    assert_rel(lo, exp(-0.5), 0.15);
    assert_rel(hi, exp(-1.125), 0.15);
    free(x);
    /* the same density from weighted draws: uniform draws on [-1, 1.5]
     * weighted by the normal density (as nested sampling weights them) */
    x = malloc(N * sizeof *x);
    double *w = malloc(N * sizeof *w);
    for (size_t i = 0; i < N; i++) {
        x[i] = -1.0 + 2.5 * lt_rng_uniform(&r);
        w[i] = exp(-0.5 * x[i] * x[i]);
    }
    assert_int_equal(lt_post_edge_density(x, w, N, -1.0, 1.5, &lo, &hi), LT_OK);
    print_message("weighted, the same: %.4f %.4f\n", lo, hi);
    assert_rel(lo, exp(-0.5), 0.15);
    assert_rel(hi, exp(-1.125), 0.15);
    free(w);
    free(x);
    /* a half-normal, |N(0, 1)| on [0, 4]: the peak is the lower edge (ratio
     * 1); at 4 the density is exp(-8) = 3e-4 of it (closed form) */
    x = truncated_normal(N, 0.0, 4.0, 9);
    assert_int_equal(lt_post_edge_density(x, NULL, N, 0.0, 4.0, &lo, &hi), LT_OK);
    print_message("half-normal on [0, 4]: %.4f %.2g\n", lo, hi);
    assert_rel(lo, 1.0, 0.02);
    assert_true(hi < 0.01);
    free(x);
    /* a normal far from both edges of U(-10, 10): ~0 at both */
    x = truncated_normal(N, -10.0, 10.0, 11);
    assert_int_equal(lt_post_edge_density(x, NULL, N, -10.0, 10.0, &lo, &hi), LT_OK);
    assert_true(lo < 1e-6 && hi < 1e-6);
    free(x);
    /* bad input */
    double two[2] = {0.1, 0.2};
    assert_int_equal(lt_post_edge_density(two, NULL, 1, 0.0, 1.0, &lo, &hi), LT_EINPUT);
    assert_int_equal(lt_post_edge_density(two, NULL, 2, 1.0, 1.0, &lo, &hi), LT_EINPUT);
}

/* One model whose only parameter has draws x (n, one chain) under prior
 * U(a, b). */
static lt_run_model one_model(const char *name, char **names, lt_prior *prior, double *x,
                              size_t n, lt_post_stats *st, double *best)
{
    lt_post_summarise(x, n, st);
    *best = st->median;
    return (lt_run_model){.name = (char *)name, .label = (char *)name, .nparams = 1,
                          .names = names, .priors = prior, .best = best, .stats = st,
                          .nchains = 1, .ndraws = n, .draws = x, .chi2_min = 30.0, .aic = 34.0,
                          .bic = 37.0, .dof = 38, .ln_z = NAN, .ln_z_err = NAN, .converged = 1,
                          .n_data = 40};
}

static char *read_out(const char *name)
{
    char path[512], *text = NULL;
    size_t len;
    snprintf(path, sizeof path, "%s/%s", dir, name);
    assert_int_equal(lt_file_read(path, 1 << 20, &text, &len, NULL), LT_OK);
    return text;
}

/* Issue 16 item 3: a posterior that fills its prior (h0 free beside a
 * marginalised offset) has its 2.5% and 97.5% quantiles 1.5 from the edges
 * of U(40, 100), more than 2% of the width, and once went unmarked. */
static void test_weighted_summaries(void **state)
{
    (void)state;
    enum { N = 200000 };
    lt_rng r;
    lt_rng_seed(&r, 16, 5);
    double *x = malloc(N * sizeof *x), *w = malloc(N * sizeof *w);
    /* equal weights: the weighted rules reduce to the unweighted ones
     * (Hyndman & Fan definition 7, HPD of ceil(p n) draws) */
    for (size_t i = 0; i < 999; i++)
        x[i] = lt_rng_normal(&r), w[i] = 2.5;
    lt_post_stats a, b;
    lt_post_summarise(x, 999, &a);
    lt_post_summarise_weighted(x, w, 999, &b);
    const double *pa = &a.mean, *pb = &b.mean;
    for (size_t k = 0; k < sizeof a / sizeof a.mean; k++)
        assert_true(fabs(pa[k] - pb[k]) < 1e-12);
    assert_true(fabs(lt_post_quantile(x, w, 999, 0.3) - lt_post_quantile(x, NULL, 999, 0.3)) < 1e-12);
    /* importance weights: draws of N(0, 1) weighted by the ratio of the
     * N(0.5, 0.6^2) density to N(0, 1)'s describe N(0.5, 0.6^2), whose mean,
     * sd and quantiles are closed forms: 0.5 + 0.6 z_p (z from GSL's
     * gsl_cdf_ugaussian_Pinv). Kish's effective size of these weights is
     * about 0.8 N; the quantiles' Monte Carlo error is below 0.005. The
     * 68% HPD of a symmetric density is its equal-tailed interval; its
     * width is stationary in the interval's position, so the width is
     * sharp (0.01) while the position wanders more (0.05). */
    for (size_t i = 0; i < N; i++) {
        x[i] = lt_rng_normal(&r);
        double u = (x[i] - 0.5) / 0.6;
        w[i] = exp(-0.5 * u * u + 0.5 * x[i] * x[i]) / 0.6;
    }
    x[7] = NAN, w[8] = 0.0, w[9] = -1.0; /* left out */
    lt_post_summarise_weighted(x, w, N, &b);
    print_message("weighted N(0.5, 0.6): mean %.4f sd %.4f 68%% [%.4f, %.4f] 95%% [%.4f, %.4f] "
                  "HPD68 [%.4f, %.4f]\n", b.mean, b.sd, b.lo68, b.hi68, b.lo95, b.hi95,
                  b.hpd68_lo, b.hpd68_hi);
    assert_true(fabs(b.mean - 0.5) < 0.005 && fabs(b.sd - 0.6) < 0.005);
    assert_true(fabs(b.median - 0.5) < 0.006);
    assert_true(fabs(b.lo68 - (0.5 - 0.6)) < 0.006 && fabs(b.hi68 - (0.5 + 0.6)) < 0.006);
    assert_true(fabs(b.lo95 - (0.5 - 0.6 * 1.959964)) < 0.01);
    assert_true(fabs(b.hi95 - (0.5 + 0.6 * 1.959964)) < 0.01);
    assert_true(fabs(b.hpd68_hi - b.hpd68_lo - 1.2) < 0.01);
    assert_true(fabs(b.hpd68_lo - (0.5 - 0.6)) < 0.05 && fabs(b.hpd68_hi - (0.5 + 0.6)) < 0.05);
    assert_true(fabs(lt_post_quantile(x, w, N, 0.5) - b.median) < 1e-15);
    /* a single heavy draw holds the 68% interval alone */
    double y[3] = {1.0, 2.0, 3.0}, v[3] = {0.1, 10.0, 0.1};
    lt_post_summarise_weighted(y, v, 3, &b);
    assert_true(b.hpd68_lo == 2.0 && b.hpd68_hi == 2.0);
    free(x);
    free(w);
}

/* A 95% limit above 100 in fixed notation with two significant digits:
 * rd_h with prior U(50, 200) and a posterior piled on the upper edge (the
 * density of draws 200 - |N(0, 20)|: its 5% quantile is 200 - 20 z(0.975)
 * = 160.8, z from the normal table), quoted "> 160" and never "1.6e+02";
 * and ln Z for one column only: the other's cells stay blank, no "nan". */
static void test_limit_notation(void **state)
{
    (void)state;
    enum { N = 4000 };
    static double x[N];
    lt_rng r;
    lt_rng_seed(&r, 5, 0);
    for (size_t i = 0; i < N; i++)
        x[i] = 200.0 - fabs(20.0 * lt_rng_normal(&r));
    static char *names[] = {"rd_h"};
    lt_prior prior = {LT_PRIOR_UNIFORM, 50, 200};
    lt_post_stats st[2];
    double best[2];
    lt_run_model m[2];
    m[0] = one_model("lcdm-flat", names, &prior, x, N, &st[0], &best[0]);
    m[1] = one_model("lcdm", names, &prior, x, N, &st[1], &best[1]);
    m[0].ln_z = 10.0, m[0].ln_z_err = 0.1; /* m[1] has none: NaN */
    m[1].ln_z = NAN, m[1].ln_z_err = NAN;
    lt_error err;
    assert_int_equal(lt_report_write_tables(dir, m, 2, &err), LT_OK);
    char *md = read_out("constraints.md"), *tex = read_out("constraints.tex");
    /* (no print of the whole table: cmocka cuts a long message, and a cut
     * line would run into its "OK" line, which tests/run.sh counts) */
    assert_non_null(strstr(md, "| rd_h | > 160 (95%) | > 160 (95%) |"));
    assert_non_null(strstr(tex, "$> 160^{\\S}$"));
    assert_null(strstr(md, "e+0"));
    assert_null(strstr(md, "nan"));
    assert_null(strstr(tex, "nan"));
    assert_non_null(strstr(md, "| ln Z (nested sampling) | 10.00 ± 0.10 | |"));
    assert_non_null(strstr(tex, "$\\ln B$ & $+0.00$ & \\\\"));
    free(md), free(tex);
}

static void test_flat_posterior_marked(void **state)
{
    (void)state;
    enum { N = 4000 };
    static double x[N];
    lt_rng r;
    lt_rng_seed(&r, 3, 0);
    for (size_t i = 0; i < N; i++)
        x[i] = 40.0 + 60.0 * lt_rng_uniform(&r);
    static char *names[] = {"h0"};
    lt_prior prior = {LT_PRIOR_UNIFORM, 40, 100};
    lt_post_stats st;
    double best;
    lt_run_model m = one_model("lcdm-flat", names, &prior, x, N, &st, &best);
    lt_error err;
    assert_int_equal(lt_report_write_tables(dir, &m, 1, &err), LT_OK);
    char *md = read_out("constraints.md"), *tex = read_out("constraints.tex"),
         *csv = read_out("constraints.csv");
    print_message("%s", md);
    /* the interval, marked, and the mark explained */
    assert_non_null(strstr(md, "| h0 | 69 +21/-20 † |")); /* U(40, 100): 70 +- 20.2 */
    assert_non_null(strstr(md, "† The posterior reaches an edge of its uniform prior"));
    assert_non_null(strstr(tex, "{}^\\dagger$"));
    assert_non_null(strstr(tex, "$^\\dagger$ the posterior reaches"));
    assert_non_null(strstr(csv, "model,parameter,value,minus,plus,kind,prior_edge,converged\n"));
    assert_non_null(strstr(csv, ",two-sided,both,true\n"));
    free(md), free(tex), free(csv);
    /* a posterior well inside the prior: no mark, no footnote */
    for (size_t i = 0; i < N; i++)
        x[i] = 70.0 + 2.0 * lt_rng_normal(&r);
    m = one_model("lcdm-flat", names, &prior, x, N, &st, &best);
    assert_int_equal(lt_report_write_tables(dir, &m, 1, &err), LT_OK);
    md = read_out("constraints.md"), csv = read_out("constraints.csv");
    assert_null(strstr(md, "†"));
    assert_non_null(strstr(csv, ",two-sided,none,true\n"));
    free(md), free(csv);
}

/* Issue 16 item 6: a model that stopped at its step cap looked like any other. */
static void test_unconverged_marked(void **state)
{
    (void)state;
    lt_run_model m[2];
    fake_models(m);
    m[1].converged = 0, m[1].rhat_max = 1.31, m[1].ess_min = 16;
    lt_error err;
    assert_int_equal(lt_report_write_tables(dir, m, 2, &err), LT_OK);
    char *md = read_out("constraints.md"), *tex = read_out("constraints.tex"),
         *csv = read_out("constraints.csv");
    assert_non_null(strstr(md, "| parameter | lcdm-flat | lcdm ‡ |"));
    assert_non_null(strstr(md, "‡ lcdm did not converge: its sampler stopped at the step cap with "
                               "worst R-hat 1.31 and smallest ESS 16"));
    assert_non_null(strstr(tex, "$\\Lambda$CDM$^\\ddagger$"));
    assert_non_null(strstr(tex, "$^\\ddagger$ $\\Lambda$CDM: not converged"));
    assert_non_null(strstr(csv, "lcdm-flat,omega_m,0.3,"));
    assert_non_null(strstr(csv, ",two-sided,none,true\nlcdm,omega_m,"));
    assert_non_null(strstr(csv, "lcdm,omega_de,0.2701092187499999,,,upper,lower,false\n"));
    free(md), free(tex), free(csv);
}

/* Issue 16 item 7: report RUN1 RUN2 on 40 bins and 1048 objects gave
 * "ln B vs first +505.74". */
static void test_other_data_blank(void **state)
{
    (void)state;
    lt_run_model m[2];
    fake_models(m);
    m[0].ln_z = 10.0, m[0].ln_z_err = 0.05, m[1].ln_z = 9.0, m[1].ln_z_err = 0.06;
    m[0].n_data = 40, m[1].n_data = 1048;
    m[0].label = "bins: lcdm-flat", m[1].label = "full: lcdm";
    lt_error err;
    assert_int_equal(lt_report_write_tables(dir, m, 2, &err), LT_OK);
    char *md = read_out("constraints.md"), *tex = read_out("constraints.tex");
    print_message("%s", md);
    assert_non_null(strstr(md, "| AIC - AIC(first) | +0.00 | |\n"));
    assert_non_null(strstr(md, "| BIC - BIC(first) | +0.00 | |\n"));
    assert_non_null(strstr(md, "| ln B vs first | +0.00 | |\n"));
    assert_non_null(strstr(md, "| ln Z (nested sampling) | 10.00 ± 0.05 | 9.00 ± 0.06 |"));
    assert_non_null(strstr(md, "left blank for full: lcdm (1048 objects"));
    assert_non_null(strstr(tex, "$\\Delta$AIC & $+0.00$ & \\\\"));
    assert_non_null(strstr(tex, "blank $\\Delta$: fitted to other data"));
    free(md), free(tex);
    /* summaries with digests: the digest decides, even at equal n_data */
    m[1].n_data = 40;
    m[0].data_digest = "fnv1a64:0000000000000001", m[1].data_digest = "fnv1a64:0000000000000002";
    assert_int_equal(lt_report_write_tables(dir, m, 2, &err), LT_OK);
    md = read_out("constraints.md");
    assert_non_null(strstr(md, "| ln B vs first | +0.00 | |\n"));
    free(md);
    m[1].data_digest = "fnv1a64:0000000000000001";
    assert_int_equal(lt_report_write_tables(dir, m, 2, &err), LT_OK);
    md = read_out("constraints.md");
    assert_non_null(strstr(md, "| ln B vs first | +0.00 | -1.00 |\n"));
    assert_null(strstr(md, "left blank"));
    free(md);
}

/* Issue 19 item 8: a run of combinations of probes compares models within
 * each combination, each against its first model, and names the probes of
 * every column. Two data sets of two models each, then a fifth model alone
 * on a third. */
static void test_reference_per_data(void **state)
{
    (void)state;
    lt_run_model m[5];
    fake_models(m);
    fake_models(m + 2);
    m[4] = m[0];
    const char *dg[5] = {"fnv1a64:01", "fnv1a64:01", "fnv1a64:02", "fnv1a64:02", "fnv1a64:03"};
    char *pr[5] = {"sn", "sn", "sn+bao", "sn+bao", "bao"};
    char *lab[5] = {"lcdm-flat (sn)", "lcdm (sn)", "lcdm-flat (sn+bao)", "lcdm (sn+bao)",
                    "lcdm-flat (bao)"};
    double aic[5] = {43.3, 45.1, 60.0, 58.5, 20.0}, lnz[5] = {10, 9, 30, 31.5, 4};
    for (int i = 0; i < 5; i++) {
        m[i].data_digest = (char *)dg[i], m[i].probes = pr[i], m[i].label = lab[i];
        m[i].aic = aic[i], m[i].ln_z = lnz[i], m[i].ln_z_err = 0.1;
    }
    long want[5] = {0, 0, 2, 2, -1};
    for (size_t i = 0; i < 5; i++)
        assert_int_equal(lt_run_model_reference(m, 5, i), want[i]);
    /* alone on other data but the first: the first is its own reference */
    assert_int_equal(lt_run_model_reference(m + 4, 1, 0), 0);
    lt_error err;
    assert_int_equal(lt_report_write_tables(dir, m, 5, &err), LT_OK);
    char *md = read_out("constraints.md"), *tex = read_out("constraints.tex");
    assert_non_null(strstr(md, "| AIC - AIC(reference) | +0.00 | +1.80 | +0.00 | -1.50 | |\n"));
    assert_non_null(strstr(md, "| BIC - BIC(reference) | +0.00 | +3.50 | +0.00 | +3.50 | |\n"));
    assert_non_null(strstr(md, "| ln B vs reference | +0.00 | -1.00 | +0.00 | +1.50 | |\n"));
    assert_non_null(strstr(md, "the first model of its data (the reference), lcdm-flat (sn); "
                               "lcdm-flat (sn+bao).\n"));
    assert_non_null(strstr(md, "left blank for lcdm-flat (bao)"));
    /* five columns: a tabular of four, then one of the fifth (TEX_COLS) */
    assert_non_null(strstr(tex, "\\\\\n & SN & SN & SN+BAO & SN+BAO \\\\\n\\midrule"));
    assert_non_null(strstr(tex, "\\\\\n & BAO \\\\\n\\midrule"));
    assert_non_null(strstr(tex, "$\\Delta$AIC & $+0.00$ & $+1.80$ & $+0.00$ & $-1.50$ \\\\"));
    assert_non_null(strstr(tex, "$\\Delta$AIC & \\\\"));
    assert_non_null(strstr(tex, "$\\Delta$: to the first column of the same data"));
    free(md), free(tex);
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
        cmocka_unit_test(test_edge_density),
        cmocka_unit_test(test_weighted_summaries),
        cmocka_unit_test(test_limit_notation),
        cmocka_unit_test(test_flat_posterior_marked),
        cmocka_unit_test(test_unconverged_marked),
        cmocka_unit_test(test_other_data_blank),
        cmocka_unit_test(test_reference_per_data),
    };
    return cmocka_run_group_tests_name("tables", tests, setup, teardown);
}
