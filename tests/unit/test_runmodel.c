/*
 * Unit tests of reading a sampled model back (lt_run_model_load) with and
 * without importance weights, and of what the tables and figures take from
 * the weighted draws (lt_quote_of, the densities of lt_post_kde1d and lt_post_kde2d).
 *
 * The folder is written here by hand: draws of N(0, 1) (truncated below at
 * -0.1) for omega_m and of |N(0, 1)| for omega_de, each weighted by the
 * ratio of the target density to the sampled one, so that the weighted
 * draws describe N(0.5, 0.6^2) truncated at -0.1 and |N(0, 0.6^2)|, whose
 * quantiles, means and densities are closed forms of the normal
 * distribution (quantiles from GSL's gsl_cdf_ugaussian_Pinv, probabilities
 * from gsl_cdf_ugaussian_P). Unweighted, the same draws give the closed
 * forms of the sampled densities instead, which the tests tell apart.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>
#include <gsl/gsl_cdf.h>

#include "lantern/lantern.h"
#include "../testutil.h"

static char dir[256];

enum { NCHAIN = 2, NDRAW = 20000, N = NCHAIN * NDRAW };
static double xa[N], xb[N], wt[N];

/* The draws and their importance weights, seeded. */
static void make_draws(void)
{
    lt_rng r;
    lt_rng_seed(&r, 16, 9);
    for (size_t i = 0; i < N; i++) {
        do
            xa[i] = lt_rng_normal(&r);
        while (xa[i] < -0.1);
        xb[i] = fabs(lt_rng_normal(&r));
        /* the product of the two density ratios: the posterior is the
         * product of the two targets (independent parameters) */
        double u = (xa[i] - 0.5) / 0.6, v = xb[i] / 0.6;
        wt[i] = exp(-0.5 * u * u + 0.5 * xa[i] * xa[i]) * exp(-0.5 * v * v + 0.5 * xb[i] * xb[i]);
    }
    double mean = 0;
    for (size_t i = 0; i < N; i++)
        mean += wt[i] / N;
    for (size_t i = 0; i < N; i++)
        wt[i] /= mean; /* mean 1, as sample writes them */
}

/* What a file holds: the header, and per row a weight when weighted. */
typedef struct {
    const char *header;  /* NULL: the right one */
    int weighted;        /* a weight column, and "weighted": true in the summary */
    int summary_says;    /* "weighted": true in the summary (with weighted or alone) */
    long bad_row;        /* 0, or the data row (1-based) whose weight is bad_weight */
    const char *bad_weight;
} layout;

/* summary.json and chains.csv of one model into sub (under dir); returns
 * the folder. The summary's stats are those of the weighted targets where
 * lt_quote_of reads them (the 2.5% quantile of omega_de decides whether it
 * is quoted as a limit). */
static const char *write_folder(const char *sub, const layout *L)
{
    static char folder[400];
    snprintf(folder, sizeof folder, "%s/%s", dir, sub);
    char cmd[700];
    snprintf(cmd, sizeof cmd, "mkdir -p '%s'", folder);
    assert_int_equal(system(cmd), 0);
    double z975 = gsl_cdf_ugaussian_Pinv(0.975), z5125 = gsl_cdf_ugaussian_Pinv(0.5125);
    double lo95_a = 0.5 + 0.6 * gsl_cdf_ugaussian_Pinv(gsl_cdf_ugaussian_P(-1.0) +
                                                       0.025 * gsl_cdf_ugaussian_Q(-1.0));
    char sum[4096];
    snprintf(sum, sizeof sum,
             "{\"model\": \"lcdm\", \"n_data\": 40, \"chi2_min\": 30, \"dof\": 37, \"aic\": 36, "
             "\"bic\": 41, "
             "\"converged\": true,%s\n"
             " \"params\": {\"omega_m\": {\"best\": 0.5, \"median\": 0.6, \"lo68\": 0.0, "
             "\"hi68\": 1.2, \"lo95\": %.6f, \"hi95\": 1.5, \"prior\": \"U(-0.1, 6)\"},\n"
             "  \"omega_de\": {\"best\": 0, \"median\": 0.4, \"lo68\": 0.1, \"hi68\": 0.9, "
             "\"lo95\": %.6f, \"hi95\": %.6f, \"prior\": \"U(0, 10)\"}},\n"
             " \"derived\": {\"omega_k\": {\"best\": 0.5, \"median\": 0, \"lo68\": -0.8, "
             "\"hi68\": 0.8}},\n"
             " \"convergence\": {\"rhat_max\": %s, \"ess_min\": 30000, \"chains\": %d, "
             "\"draws\": %d}}\n",
             L->summary_says ? " \"weighted\": true," : "", lo95_a, 0.6 * z5125, 0.6 * z975,
             L->summary_says ? "null" : "1.001", NCHAIN, N);
    lt_test_write(folder, "summary.json", sum, strlen(sum));
    size_t cap = (size_t)N * 160 + 512, len = 0;
    char *csv = malloc(cap);
    assert_non_null(csv);
    const char *header = L->header ? L->header
                         : L->weighted ? "chain,step,weight,logpost,chi2,omega_m,omega_de,omega_k"
                                       : "chain,step,logpost,chi2,omega_m,omega_de,omega_k";
    len += (size_t)snprintf(csv + len, cap - len, "%s\n", header);
    for (size_t i = 0; i < N; i++) {
        char w[64] = "";
        if ((long)i + 1 == L->bad_row)
            snprintf(w, sizeof w, "%s,", L->bad_weight);
        else if (L->weighted)
            snprintf(w, sizeof w, "%.17g,", wt[i]);
        /* thinned draws: the steps jump */
        len += (size_t)snprintf(csv + len, cap - len, "%zu,%zu,%s-20.5,41,%.17g,%.17g,%.17g\n",
                                i / NDRAW + 1, 6 * (i % NDRAW) + 1, w, xa[i], xb[i],
                                1 - xa[i] - xb[i]);
    }
    lt_test_write(folder, "chains.csv", csv, len);
    free(csv);
    return folder;
}

/* The mean of a density on the centres of nb cells on [x0, x1). */
static double hist_mean(const double *h, int nb, double x0, double x1)
{
    double s = 0, sw = 0;
    for (int i = 0; i < nb; i++) {
        double c = x0 + (x1 - x0) * (i + 0.5) / nb;
        s += h[i] * c, sw += h[i];
    }
    return s / sw;
}

static void test_weighted_folder(void **state)
{
    (void)state;
    const char *folder = write_folder("weighted", &(layout){.weighted = 1, .summary_says = 1});
    lt_run_model m;
    lt_error err;
    lt_error_clear(&err);
    int rc = lt_run_model_load(folder, &m, &err);
    if (rc)
        print_error("%s:%ld: %s\n", err.file, err.line, err.msg);
    assert_int_equal(rc, LT_OK);
    assert_true(m.weighted);
    assert_non_null(m.weights);
    assert_int_equal(m.nchains, NCHAIN);
    assert_int_equal(m.ndraws, NDRAW);
    assert_true(m.weights[0] == wt[0] && m.weights[N - 1] == wt[N - 1]); /* %.17g reads back */
    assert_true(m.draws[3 * (N - 1) + 1] == xb[N - 1]);
    assert_true(isnan(m.rhat_max));
    char rhat[64];
    assert_string_equal(lt_run_model_rhat_text(&m, rhat, sizeof rhat),
                        "- (importance-weighted draws)");

    /* omega_de: |N(0, 0.6^2)| presses on its prior's lower edge at 0, so it
     * is quoted as a 95% upper limit, its 95% quantile 0.6 z(0.975) = 1.1760
     * (closed form; z from gsl_cdf_ugaussian_Pinv). The draws unweighted
     * give z(0.975) = 1.96. Kish's effective size is about 0.75 N; the
     * quantile's Monte Carlo error is about 0.007. */
    lt_quote q = lt_quote_of(&m, 1);
    double want = 0.6 * gsl_cdf_ugaussian_Pinv(0.975);
    print_message("omega_de: kind %d, 95%% limit %.4f (closed form %.4f)\n", q.kind, q.value, want);
    assert_int_equal(q.kind, LT_QUOTE_UPPER);
    assert_abs(q.value, want, 0.025);
    /* omega_m: N(0.5, 0.6^2) cut at -0.1 = mean - 1 sd: its density there
     * is exp(-1/2) = 0.6065 of its peak (closed form); the draws unweighted
     * (N(0, 1) cut at -0.1, peak at 0) give exp(-0.005) = 0.995. Reflection
     * leaves a bias of about |f'/f| h sqrt(2/pi) at the edge (Silverman 1986,
     * section 2.10): +1/0.6 x 0.05 x 0.8 = +7% here, plus a few per cent of
     * noise; we allow 15%. Its 2.5% quantile (summary) lies within 2% of the
     * prior's width of the edge, so it too is quoted as a 95% upper limit:
     * 0.5 + 0.6 z(Phi(-1) + 0.95 (1 - Phi(-1))) = 1.5367 (closed form of the
     * truncated normal); unweighted, z(Phi(-0.1) + 0.95 (1 - Phi(-0.1))) =
     * 1.927. Monte Carlo error about 0.007. */
    q = lt_quote_of(&m, 0);
    want = 0.5 + 0.6 * gsl_cdf_ugaussian_Pinv(gsl_cdf_ugaussian_P(-1.0) +
                                              0.95 * gsl_cdf_ugaussian_Q(-1.0));
    print_message("omega_m: edge density %.4f of the peak (closed form %.4f), 95%% limit %.4f "
                  "(closed form %.4f)\n", q.edge_lo, exp(-0.5), q.value, want);
    assert_rel(q.edge_lo, exp(-0.5), 0.15);
    assert_int_equal(q.edges, LT_EDGE_LOWER);
    assert_int_equal(q.kind, LT_QUOTE_UPPER);
    assert_abs(q.value, want, 0.025);

    /* the figures' densities (lt_post_kde1d, lt_post_kde2d on the loaded
     * draws and weights, reflected at omega_m's truncation): the weighted
     * mean of omega_m's density on [-0.1, 2.9) is that of N(0.5, 0.6^2)
     * truncated at a = -0.1, mu + sd phi(-1) / (1 - Phi(-1)) = 0.6726
     * (closed form of the truncated normal; Phi from gsl_cdf_ugaussian_P);
     * unweighted it would be phi(-0.1) / (1 - Phi(-0.1)) = 0.7353. The
     * kernel moves the mean by well under 0.005 here; Monte Carlo error
     * about 0.004. */
    enum { NB = 60 };
    static double h[NB], g[NB * NB], xs[N], ys[N];
    for (size_t i = 0; i < N; i++)
        xs[i] = m.draws[i * (m.nparams + m.nderived)], ys[i] = m.draws[i * (m.nparams + m.nderived) + 1];
    double phi1 = exp(-0.5) / sqrt(2 * M_PI);
    double mean_a = 0.5 + 0.6 * phi1 / (1 - gsl_cdf_ugaussian_P(-1.0));
    double edge[4] = {-0.1, INFINITY, 0.0, INFINITY};
    lt_kde_opts o = {.edge = edge};
    assert_int_equal(lt_post_kde1d(xs, m.weights, N, &o, -0.1, 2.9, NB, h, NULL, &err), LT_OK);
    print_message("density of omega_m: mean %.4f (closed form %.4f)\n", hist_mean(h, NB, -0.1, 2.9),
                  mean_a);
    assert_abs(hist_mean(h, NB, -0.1, 2.9), mean_a, 0.012);
    /* the fraction of the mass below the mean 0.5 (a cell edge): (Phi(0) -
     * Phi(-1)) / (1 - Phi(-1)) = 0.4057; unweighted 0.4285 */
    double below = 0, total = 0;
    for (int i = 0; i < NB; i++)
        total += h[i];
    for (int i = 0; i < 12; i++)
        below += h[i] / total;
    double want_below = (0.5 - gsl_cdf_ugaussian_P(-1.0)) / (1 - gsl_cdf_ugaussian_P(-1.0));
    assert_abs(below, want_below, 0.008);
    /* the 2-D density the regions come from: its omega_de margin is
     * |N(0, 0.6^2)|, mean 0.6 sqrt(2/pi) = 0.4787 (closed form); unweighted
     * sqrt(2/pi) = 0.798 */
    assert_int_equal(lt_post_kde2d(xs, ys, m.weights, N, &o, -0.1, 2.9, 0.0, 3.0, NB, NB, g, NULL,
                                   &err),
                     LT_OK);
    double margin[NB] = {0};
    for (int i = 0; i < NB; i++)
        for (int k = 0; k < NB; k++)
            margin[k] += g[i * NB + k];
    print_message("2-D density, omega_de margin: mean %.4f (closed form %.4f)\n",
                  hist_mean(margin, NB, 0.0, 3.0), 0.6 * sqrt(2 / M_PI));
    assert_abs(hist_mean(margin, NB, 0.0, 3.0), 0.6 * sqrt(2 / M_PI), 0.012);

    /* the tables say the draws were weighted, and print no "nan" for the
     * R-hat that weighted draws do not have, converged or not */
    char out[600], cmd[700], path[700];
    snprintf(out, sizeof out, "%s/tables", dir);
    snprintf(cmd, sizeof cmd, "mkdir -p '%s'", out);
    assert_int_equal(system(cmd), 0);
    snprintf(path, sizeof path, "%s/constraints.md", out);
    for (int converged = 1; converged >= 0; converged--) {
        m.converged = converged;
        assert_int_equal(lt_report_write_tables(out, &m, 1, &err), LT_OK);
        char *md;
        size_t len;
        assert_int_equal(lt_file_read(path, 1 << 20, &md, &len, NULL), LT_OK);
        print_message("%s", md);
        assert_null(strstr(md, "nan"));
        assert_non_null(strstr(md, "lcdm: importance-weighted draws (effective sample size 30000)"));
        assert_non_null(strstr(md, "| omega_de | < 1.2 (95%) |"));
        if (!converged)
            assert_non_null(strstr(md, "worst R-hat - (importance-weighted draws) and smallest "
                                       "ESS 30000"));
        free(md);
        snprintf(path, sizeof path, "%s/constraints.tex", out);
        assert_int_equal(lt_file_read(path, 1 << 20, &md, &len, NULL), LT_OK);
        assert_null(strstr(md, "nan"));
        assert_non_null(strstr(md, "sample size: $\\Lambda$CDM 30000"));
        free(md);
        snprintf(path, sizeof path, "%s/constraints.md", out);
    }
    lt_run_model_free(&m);
    assert_null(m.weights);
}

static void test_unweighted_folder(void **state)
{
    (void)state;
    const char *folder = write_folder("plain", &(layout){0});
    lt_run_model m;
    lt_error err;
    assert_int_equal(lt_run_model_load(folder, &m, &err), LT_OK);
    assert_false(m.weighted);
    assert_null(m.weights);
    assert_int_equal(m.ndraws, NDRAW);
    assert_true(m.draws[0] == xa[0] && m.draws[3 * (N - 1) + 2] == 1 - xa[N - 1] - xb[N - 1]);
    assert_rel(m.rhat_max, 1.001, 1e-12);
    /* equal weights: the limit is the sampled |N(0, 1)|'s z(0.975) = 1.96 */
    lt_quote q = lt_quote_of(&m, 1);
    print_message("unweighted omega_de: 95%% limit %.4f (closed form %.4f)\n", q.value,
                  gsl_cdf_ugaussian_Pinv(0.975));
    assert_int_equal(q.kind, LT_QUOTE_UPPER);
    assert_abs(q.value, gsl_cdf_ugaussian_Pinv(0.975), 0.03);
    lt_run_model_free(&m);
}

/* A load that must fail with an input error at chains.csv's line `line`. */
static void load_fails(const char *sub, const layout *L, long line, const char *words)
{
    const char *folder = write_folder(sub, L);
    lt_run_model m;
    lt_error err;
    lt_error_clear(&err);
    int rc = lt_run_model_load(folder, &m, &err);
    print_message("%s: %s:%ld: %s\n", sub, err.file, err.line, err.msg);
    assert_int_equal(rc, LT_EINPUT);
    const char *base = strrchr(err.file, '/');
    assert_non_null(base);
    assert_string_equal(base, "/chains.csv");
    assert_int_equal(err.line, line);
    assert_non_null(strstr(err.msg, words));
}

static void test_bad_files(void **state)
{
    (void)state;
    /* data row k is line k + 1 */
    load_fails("negative", &(layout){.weighted = 1, .bad_row = 7, .bad_weight = "-0.5"}, 8,
               "weight '-0.5'");
    load_fails("nan", &(layout){.weighted = 1, .bad_row = 1, .bad_weight = "nan"}, 2,
               "weight 'nan'");
    load_fails("inf", &(layout){.weighted = 1, .bad_row = 300, .bad_weight = "inf"}, 301,
               "weight 'inf'");
    load_fails("misnamed",
               &(layout){.header = "chain,step,logpost,chi2,omega_x,omega_de,omega_k"}, 1,
               "column 5 is 'omega_x' where 'omega_m' was expected");
    load_fails("swapped",
               &(layout){.header = "chain,step,logpost,chi2,omega_de,omega_m,omega_k"}, 1,
               "'omega_de' where 'omega_m'");
    /* the weight elsewhere than after step */
    load_fails("weight-late",
               &(layout){.weighted = 1,
                         .header = "chain,step,logpost,weight,chi2,omega_m,omega_de,omega_k"},
               1, "column 4 is 'weight' where 'chi2' was expected");
    load_fails("short", &(layout){.header = "chain,step,logpost,chi2,omega_m,omega_de"}, 1,
               "'omega_k' was expected");
    load_fails("long", &(layout){.header = "chain,step,logpost,chi2,omega_m,omega_de,omega_k,x"},
               1, "column 'x'");
    /* a weight column the rows do not have: every row is short */
    load_fails("rows-short",
               &(layout){.header = "chain,step,weight,logpost,chi2,omega_m,omega_de,omega_k"}, 2,
               "7 fields where the header has 8");
    /* the summary says weighted, the chains have no weights */
    load_fails("no-weights", &(layout){.summary_says = 1}, 1, "no weight column");
}

static int setup(void **state)
{
    (void)state;
    make_draws();
    return lt_test_tmpdir(dir, sizeof dir, "runmodel");
}

static int teardown(void **state)
{
    (void)state;
    return lt_test_rmtree(dir);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_weighted_folder),
        cmocka_unit_test(test_unweighted_folder),
        cmocka_unit_test(test_bad_files),
    };
    return cmocka_run_group_tests_name("runmodel", tests, setup, teardown);
}
