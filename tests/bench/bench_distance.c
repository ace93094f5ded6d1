/*
 * Benchmark: the cost of distances for many redshifts at once.
 *
 * For each model, 2000 redshifts spread over 0.01 < z < 1.5 (a supernova
 * survey's range), the time of one lt_cosmo_eval for the transverse
 * comoving distance alone (what a likelihood needs) and for the full
 * table (all distances, lookback time, age, H(z)). Each figure is the best
 * of 5 repeats of a loop of at least 0.1 s, in microseconds per call of
 * one thread. Run by 'make bench'.
 */
#include <stdio.h>
#include <stdlib.h>
#include <time.h>

#include "lantern/lantern.h"

static double now(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

/* Microseconds per call of lt_cosmo_eval(c, g, t): best of 5 timed loops. */
static double time_eval(const lt_cosmo *c, const lt_zgrid *g, const lt_cosmo_table *t)
{
    double best = 1e300;
    for (int rep = 0; rep < 5; rep++) {
        long calls = 0;
        double t0 = now(), t1;
        do {
            for (int i = 0; i < 50; i++, calls++)
                if (lt_cosmo_eval(c, g, t, NULL))
                    abort();
            t1 = now();
        } while (t1 - t0 < 0.1);
        double us = 1e6 * (t1 - t0) / (double)calls;
        if (us < best)
            best = us;
    }
    return best;
}

int main(void)
{
    enum { N = 2000 };
    static double z[N], col[8][N];
    /* a fixed, irregular spread: the survey redshifts need not be sorted */
    unsigned long long s = 12345;
    for (int i = 0; i < N; i++) {
        s = s * 6364136223846793005ull + 1442695040888963407ull;
        z[i] = 0.01 + 1.49 * (double)(s >> 11) * 0x1.0p-53;
    }
    lt_error err;
    lt_zgrid *g = lt_zgrid_alloc(N, z, &err);
    if (!g) {
        fprintf(stderr, "bench: %s\n", err.msg);
        return 1;
    }
    lt_cosmo_table dm_only = {.transverse = col[1]};
    lt_cosmo_table full = {col[0], col[1], col[2], col[3], col[4], col[5], col[6], col[7]};
    printf("distances for %d redshifts in 0.01..1.5, one thread (%zu quadrature nodes)\n", N,
           lt_zgrid_nodes(g));
    printf("%-10s  %12s  %14s  %16s\n", "model", "D_M (us)", "D_M calls/s", "full table (us)");
    for (size_t k = 0; k < lt_cosmo_model_count(); k++) {
        const lt_cosmo_model *m = lt_cosmo_model_at(k);
        lt_cosmo_params p = {70, 0.3, 0.65, -0.9, 0.3, 2.7255, 3.046, 0.06, 0.02237};
        lt_cosmo c;
        if (lt_cosmo_init(&c, m, &p, &err)) {
            fprintf(stderr, "bench: %s\n", err.msg);
            return 1;
        }
        double us_dm = time_eval(&c, g, &dm_only);
        double us_full = time_eval(&c, g, &full);
        printf("%-10s  %12.1f  %14.0f  %16.1f\n", m->name, us_dm, 1e6 / us_dm, us_full);
    }
    lt_zgrid_free(g);
    return 0;
}
