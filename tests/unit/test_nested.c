/*
 * Nested sampling against evidences known in closed form: a normalised
 * Gaussian likelihood under a wide uniform prior in 1, 2 and 5 dimensions
 * (Z = 1/V, the prior's inverse volume, up to the negligible mass outside
 * the box), and a straight line fitted to Gaussian data, whose evidence is
 * L_max sqrt(det(2 pi Sigma_post)) / V exactly for a linear-Gaussian model
 * (e.g. Sivia & Skilling, Data Analysis, 2nd ed., ch. 4, from memory).
 * Each within 3 reported sigma; the reported sigma within a factor 2 of
 * the scatter over seeds; and the posterior weights give the mean.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <signal.h>
#include <string.h>
#include <math.h>
#include <unistd.h>

#include <cmocka.h>
#include <gsl/gsl_errno.h>
#include <omp.h>

#include "lantern/lantern.h"
#include "../testutil.h"

typedef struct {
    size_t d;
    double half; /* prior: [-half, half]^d */
} box;

static void to_box(const double *u, double *t, void *p)
{
    const box *b = p;
    for (size_t i = 0; i < b->d; i++)
        t[i] = -b->half + 2 * b->half * u[i];
}

/* A normalised Gaussian with means 0.5 i and sds 1, 0.5, 2, ... */
static double gauss_ll(const double *t, void *p)
{
    const box *b = p;
    double s = 0, norm = 0;
    for (size_t i = 0; i < b->d; i++) {
        double sd = i % 3 == 0 ? 1.0 : i % 3 == 1 ? 0.5 : 2.0;
        double z = (t[i] - 0.5 * (double)i) / sd;
        s += z * z;
        norm += log(sd * sqrt(2 * M_PI));
    }
    return -0.5 * s - norm;
}

static lt_nested_result run(size_t d, size_t nlive, uint64_t seed, box *b, lt_loglike f)
{
    void *ctx[64];
    for (int i = 0; i < 64; i++)
        ctx[i] = b;
    lt_nested_opts o = {.dim = d, .nlive = nlive, .seed = seed, .dlogz = 0.01, .enlarge = 1.25,
                        .max_iter = 1000000, .threads = 0};
    lt_nested_result r;
    lt_error err;
    assert_int_equal(lt_nested_run(&o, to_box, b, f, ctx, &r, &err), LT_OK);
    assert_true(r.finished);
    return r;
}

static void test_gaussian_evidence(void **state)
{
    (void)state;
    size_t dims[] = {1, 2, 5};
    for (int k = 0; k < 3; k++) {
        box b = {dims[k], 10.0};
        lt_nested_result r = run(dims[k], 400, 1 + k, &b, gauss_ll);
        double want = -(double)dims[k] * log(20.0);
        print_message("d = %zu: ln Z = %.4f +- %.4f, closed form %.4f (%zu evaluations)\n",
                      dims[k], r.logz, r.logz_err, want, r.evals);
        assert_abs(r.logz, want, 3 * r.logz_err);
        /* the weighted samples give the posterior mean 0.5 i */
        for (size_t i = 0; i < dims[k]; i++) {
            double m = 0;
            for (size_t j = 0; j < r.nsamples; j++)
                m += exp(r.logw[j]) * r.theta[j * dims[k] + i];
            double sd = i % 3 == 0 ? 1.0 : i % 3 == 1 ? 0.5 : 2.0;
            assert_abs(m, 0.5 * (double)i, 0.1 * sd);
        }
        lt_nested_result_free(&r);
    }
}

static void test_error_is_honest(void **state)
{
    (void)state;
    enum { SEEDS = 12 };
    box b = {2, 10.0};
    double z[SEEDS], err = 0, mean = 0;
    for (int s = 0; s < SEEDS; s++) {
        lt_nested_result r = run(2, 150, 100 + s, &b, gauss_ll);
        z[s] = r.logz, err += r.logz_err / SEEDS, mean += r.logz / SEEDS;
        lt_nested_result_free(&r);
    }
    double var = 0;
    for (int s = 0; s < SEEDS; s++)
        var += (z[s] - mean) * (z[s] - mean) / (SEEDS - 1);
    double scatter = sqrt(var);
    print_message("reported sigma %.4f, scatter over %d seeds %.4f\n", err, SEEDS, scatter);
    assert_true(err / scatter < 2.0 && err / scatter > 0.5);
}

/* ---- a straight line ---- */
enum { NP = 20 };
static double xs[NP], ys[NP], sig[NP];

static double line_ll(const double *t, void *p)
{
    (void)p;
    double s = 0, norm = 0;
    for (int i = 0; i < NP; i++) {
        double r = (ys[i] - t[0] - t[1] * xs[i]) / sig[i];
        s += r * r;
        norm += log(sig[i] * sqrt(2 * M_PI));
    }
    return -0.5 * s - norm;
}

static void test_linear_gaussian(void **state)
{
    (void)state;
    unsigned long long seed = 3;
    for (int i = 0; i < NP; i++) {
        xs[i] = 0.2 * i;
        sig[i] = 0.3;
        ys[i] = 1.0 + 0.5 * xs[i] + 0.3 * lt_test_uniform(&seed, -1.7, 1.7);
    }
    /* weighted least squares (Press et al., Numerical Recipes, sec. 15.2) */
    double S = 0, Sx = 0, Sxx = 0, Sy = 0, Sxy = 0;
    for (int i = 0; i < NP; i++) {
        double w = 1 / (sig[i] * sig[i]);
        S += w, Sx += w * xs[i], Sxx += w * xs[i] * xs[i], Sy += w * ys[i], Sxy += w * xs[i] * ys[i];
    }
    double delta = S * Sxx - Sx * Sx;
    double best[2] = {(Sxx * Sy - Sx * Sxy) / delta, (S * Sxy - Sx * Sy) / delta};
    double det_cov = (Sxx / delta) * (S / delta) - (Sx / delta) * (Sx / delta);
    box b = {2, 5.0};
    double want = line_ll(best, NULL) + 0.5 * log(4 * M_PI * M_PI * det_cov) - log(100.0);
    lt_nested_result r = run(2, 400, 9, &b, line_ll);
    print_message("line: ln Z = %.4f +- %.4f, closed form %.4f\n", r.logz, r.logz_err, want);
    assert_abs(r.logz, want, 3 * r.logz_err);
    lt_nested_result_free(&r);
}

/* the same seed, the same run, with 1 and 2 threads */
static void test_threads(void **state)
{
    (void)state;
    box b = {2, 10.0};
    void *ctx[2] = {&b, &b};
    lt_nested_opts o1 = {.dim = 2, .nlive = 100, .seed = 5, .dlogz = 0.01, .enlarge = 1.25,
                         .max_iter = 100000, .threads = 1}, o2 = o1;
    o2.threads = 2;
    lt_nested_result a, c;
    lt_error err;
    assert_int_equal(lt_nested_run(&o1, to_box, &b, gauss_ll, ctx, &a, &err), LT_OK);
    assert_int_equal(lt_nested_run(&o2, to_box, &b, gauss_ll, ctx, &c, &err), LT_OK);
    assert_true(a.logz == c.logz && a.nsamples == c.nsamples);
    assert_memory_equal(a.theta, c.theta, a.nsamples * 2 * sizeof(double));
    lt_nested_result_free(&a);
    lt_nested_result_free(&c);
}

/*
 * Where the batches run (issue 16). A parallel region around a batch of
 * eight 2-us likelihoods, every iteration, stalled a loaded machine (threads
 * waiting at the barrier for a core, then spinning): with 2 threads, a cheap
 * likelihood must be called outside any parallel region once the live points
 * are drawn. A likelihood of 2 ms a call (16 ms a batch, past the 10 ms the
 * sampler asks of a batch before sharing it out) must reach the second
 * thread. Counts are kept per thread context, so they need no locks.
 */
typedef struct {
    box b;
    double busy;           /* seconds each call takes */
    long calls, in_parallel;
} probe;

static double probe_ll(const double *t, void *p)
{
    probe *q = p;
    q->calls++;
    q->in_parallel += omp_in_parallel() != 0;
    for (double t0 = omp_get_wtime(); omp_get_wtime() - t0 < q->busy;)
        ;
    return gauss_ll(t, &q->b);
}

static void probe_iterate(double busy, size_t max_iter, probe q[2])
{
    void *ctx[2] = {&q[0], &q[1]};
    for (int t = 0; t < 2; t++)
        q[t] = (probe){{2, 10.0}, busy, 0, 0};
    lt_nested_opts o = {.dim = 2, .nlive = 20, .seed = 3, .dlogz = 0.01, .enlarge = 1.25,
                        .max_iter = max_iter, .threads = 2};
    lt_error err;
    lt_nested *s = lt_nested_alloc(&o, to_box, &q[0].b, probe_ll, ctx, &err);
    assert_non_null(s);
    for (int t = 0; t < 2; t++) /* count the iterations only */
        q[t].calls = q[t].in_parallel = 0;
    assert_int_equal(lt_nested_iterate(s, NULL, &err), LT_OK);
    lt_nested_free(s);
}

static void test_where_batches_run(void **state)
{
    (void)state;
    probe q[2];
    probe_iterate(0.0, 100000, q);
    print_message("cheap: %ld + %ld calls, %ld in a parallel region\n", q[0].calls, q[1].calls,
                  q[0].in_parallel + q[1].in_parallel);
    assert_true(q[0].calls > 200); /* well past the 8 timed batches of 8 */
    assert_int_equal(q[1].calls, 0);
    assert_int_equal(q[0].in_parallel, 0);
    probe_iterate(2e-3, 120, q);
    print_message("2 ms: %ld + %ld calls, %ld in a parallel region\n", q[0].calls, q[1].calls,
                  q[0].in_parallel + q[1].in_parallel);
    assert_true(q[1].calls > 0);
    assert_true(q[0].in_parallel + q[1].in_parallel > 0);
}

/* Stop after K likelihood calls (one thread, so the point is exact), save,
 * load, finish: the result of a run without the stop, to the byte. Then a
 * foreign checkpoint (another fingerprint, another seed) and a damaged one
 * are refused. */
static volatile sig_atomic_t stop_flag;
static long calls_left;

static double counting_ll(const double *t, void *p)
{
    if (--calls_left == 0)
        stop_flag = 1;
    return gauss_ll(t, p);
}

static void test_resume(void **state)
{
    (void)state;
    box b = {2, 10.0};
    void *ctx[1] = {&b};
    lt_nested_opts o = {.dim = 2, .nlive = 100, .seed = 9, .dlogz = 0.01, .enlarge = 1.25,
                        .max_iter = 100000, .threads = 1};
    lt_nested_result whole, again;
    lt_error err;
    calls_left = -1;
    assert_int_equal(lt_nested_run(&o, to_box, &b, counting_ll, ctx, &whole, &err), LT_OK);
    char path[] = "/tmp/lantern-test-nested-XXXXXX";
    int fd = mkstemp(path);
    assert_true(fd >= 0);
    close(fd);
    /* early and late stops: a tenth, a half and nine tenths of the calls
     * after the live points */
    for (int q = 1; q <= 9; q += 4) {
        stop_flag = 0;
        calls_left = 100 + (long)(whole.evals - 100) * q / 10;
        lt_nested *s = lt_nested_alloc(&o, to_box, &b, counting_ll, ctx, &err);
        assert_non_null(s);
        assert_int_equal(lt_nested_iterate(s, &stop_flag, &err), LT_EINTR);
        size_t at = lt_nested_iterations(s);
        assert_int_equal(lt_nested_save(s, path, 42, &err), LT_OK);
        lt_nested_free(s);
        calls_left = -1;
        stop_flag = 0;
        s = lt_nested_load(path, 42, &o, to_box, &b, counting_ll, ctx, &err);
        assert_non_null(s);
        assert_int_equal(lt_nested_iterations(s), at);
        assert_int_equal(lt_nested_iterate(s, &stop_flag, &err), LT_OK);
        assert_int_equal(lt_nested_result_get(s, &again, &err), LT_OK);
        lt_nested_free(s);
        assert_true(again.logz == whole.logz && again.nsamples == whole.nsamples &&
                    again.evals == whole.evals && again.iterations == whole.iterations);
        assert_memory_equal(again.theta, whole.theta, whole.nsamples * 2 * sizeof(double));
        assert_memory_equal(again.logw, whole.logw, whole.nsamples * sizeof(double));
        lt_nested_result_free(&again);
    }
    /* foreign and damaged checkpoints */
    assert_null(lt_nested_load(path, 43, &o, to_box, &b, gauss_ll, ctx, &err));
    assert_non_null(strstr(err.msg, "belongs to another run"));
    lt_nested_opts other = o;
    other.seed = 10;
    assert_null(lt_nested_load(path, 42, &other, to_box, &b, gauss_ll, ctx, &err));
    assert_non_null(strstr(err.msg, "belongs to another run"));
    FILE *f = fopen(path, "r+b");
    assert_non_null(f);
    fseek(f, 200, SEEK_SET);
    int was = fgetc(f);
    fseek(f, 200, SEEK_SET);
    fputc(was ^ 0x5a, f); /* a byte that differs */
    fclose(f);
    assert_null(lt_nested_load(path, 42, &o, to_box, &b, gauss_ll, ctx, &err));
    assert_non_null(strstr(err.msg, "damaged"));
    truncate(path, 100);
    assert_null(lt_nested_load(path, 42, &o, to_box, &b, gauss_ll, ctx, &err));
    assert_non_null(strstr(err.msg, "damaged"));
    /* a checkpoint of the sampler before issue 20 (no bound, no queue) */
    f = fopen(path, "r+b");
    assert_non_null(f);
    fwrite("lantern-nest-v1", 1, 16, f);
    fclose(f);
    assert_null(lt_nested_load(path, 42, &o, to_box, &b, gauss_ll, ctx, &err));
    assert_non_null(strstr(err.msg, "older lantern's nested sampler"));
    remove(path);
    lt_nested_result_free(&whole);
}


/*
 * Every evaluation is counted, and none is thrown away: r.evals equals the
 * calls made, and the evaluations per iteration on a Gaussian in 1 and 2
 * dimensions stay below twice what an ideal bound would cost, 1.25^d (the
 * enlarged ellipsoid's volume over the region's; the factor 2 is room for
 * the bound's imperfection, no outside source). The sampler before issue
 * 20 evaluated batches of 8 and kept one, 8 or more per iteration.
 */
static long calls;

static double tally_ll(const double *t, void *p)
{
    calls++;
    return gauss_ll(t, p);
}

static void test_every_evaluation_counts(void **state)
{
    (void)state;
    for (size_t d = 1; d <= 2; d++) {
        box b = {d, 10.0};
        void *ctx[1] = {&b};
        lt_nested_opts o = {.dim = d, .nlive = 200, .seed = 4, .dlogz = 0.01, .enlarge = 1.25,
                            .max_iter = 100000, .threads = 1};
        lt_nested_result r;
        lt_error err;
        calls = 0;
        assert_int_equal(lt_nested_run(&o, to_box, &b, tally_ll, ctx, &r, &err), LT_OK);
        double per = (double)(r.evals - o.nlive) / (double)r.iterations;
        print_message("d = %zu: %zu evaluations, %ld calls, %.2f per iteration\n", d, r.evals,
                      calls, per);
        assert_int_equal(r.evals, (size_t)calls);
        assert_true(per < 2 * pow(1.25, (double)d));
        lt_nested_result_free(&r);
    }
}

/* The progress callback: every LT_NESTED_PROGRESS_EVERY iterations and
 * once at the end, with the run's own numbers; the last one's dlogz is
 * below the stopping rule's, and its iterations and evaluations are the
 * result's. ln Z so far only grows and stays below the final ln Z (which
 * adds the live points). */
typedef struct {
    int n;
    lt_nested_status st[64];
} progress_log;

static void log_progress(const lt_nested_status *st, void *p)
{
    progress_log *g = p;
    if (g->n < 64)
        g->st[g->n] = *st;
    g->n++;
}

static void test_progress(void **state)
{
    (void)state;
    box b = {2, 10.0};
    void *ctx[1] = {&b};
    progress_log g = {0};
    lt_nested_opts o = {.dim = 2, .nlive = 400, .seed = 6, .dlogz = 0.01, .enlarge = 1.25,
                        .max_iter = 100000, .threads = 1, .progress = log_progress,
                        .progress_ctx = &g};
    lt_nested_result r;
    lt_error err;
    assert_int_equal(lt_nested_run(&o, to_box, &b, gauss_ll, ctx, &r, &err), LT_OK);
    print_message("%d progress calls over %zu iterations\n", g.n, r.iterations);
    assert_int_equal(g.n, (int)(r.iterations / LT_NESTED_PROGRESS_EVERY) + 1);
    for (int i = 0; i + 1 < g.n; i++) {
        assert_int_equal(g.st[i].iterations, (size_t)(i + 1) * LT_NESTED_PROGRESS_EVERY);
        assert_true(g.st[i].dlogz >= o.dlogz);
        assert_true(i == 0 || (g.st[i].evals > g.st[i - 1].evals && g.st[i].logz > g.st[i - 1].logz));
    }
    const lt_nested_status *last = &g.st[g.n - 1];
    assert_int_equal(last->iterations, r.iterations);
    assert_int_equal(last->evals, r.evals);
    assert_true(last->dlogz < o.dlogz && last->logz < r.logz && r.logz - last->logz < o.dlogz);
    lt_nested_result_free(&r);
}

int main(void)
{
    gsl_set_error_handler_off();
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_gaussian_evidence),
        cmocka_unit_test(test_error_is_honest),
        cmocka_unit_test(test_linear_gaussian),
        cmocka_unit_test(test_threads),
        cmocka_unit_test(test_where_batches_run),
        cmocka_unit_test(test_resume),
        cmocka_unit_test(test_every_evaluation_counts),
        cmocka_unit_test(test_progress),
    };
    return cmocka_run_group_tests_name("nested", tests, NULL, NULL);
}
