/*
 * Helpers shared by the cmocka test programs. Include after <cmocka.h>.
 */
#ifndef LANTERN_TESTUTIL_H
#define LANTERN_TESTUTIL_H

#include <math.h>
#include <stdio.h>
#include <stdlib.h>

/* Fail unless |got - want| <= tol * |want| (or <= tol where want == 0). */
#define assert_rel(got, want, tol) \
    lt_test_rel((got), (want), (tol), #got, __FILE__, __LINE__)

static inline void lt_test_rel(double got, double want, double tol, const char *what,
                               const char *file, int line)
{
    double scale = want != 0.0 ? fabs(want) : 1.0;
    double rel = fabs(got - want) / scale;
    if (!(rel <= tol)) {
        print_error("%s = %.17g, want %.17g (relative difference %.3g > %.3g)\n", what,
                    got, want, rel, tol);
        _fail(file, line);
    }
}

/* Fail unless |got - want| <= tol. */
#define assert_abs(got, want, tol) \
    lt_test_abs((got), (want), (tol), #got, __FILE__, __LINE__)

static inline void lt_test_abs(double got, double want, double tol, const char *what,
                               const char *file, int line)
{
    if (!(fabs(got - want) <= tol)) {
        print_error("%s = %.17g, want %.17g (difference %.3g > %.3g)\n", what, got, want,
                    fabs(got - want), tol);
        _fail(file, line);
    }
}

/* A small seeded generator for test parameters (splitmix64), so that every
 * run draws the same "random" cases. */
static inline double lt_test_uniform(unsigned long long *state, double lo, double hi)
{
    unsigned long long z = (*state += 0x9E3779B97F4A7C15ull);
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
    z ^= z >> 31;
    return lo + (hi - lo) * ((double)(z >> 11) * 0x1.0p-53);
}

/* A fresh folder /tmp/lantern-test-TAG-XXXXXX for a test program's files,
 * and its removal with everything in it. */
static inline int lt_test_tmpdir(char *dir, size_t size, const char *tag)
{
    snprintf(dir, size, "/tmp/lantern-test-%s-XXXXXX", tag);
    return mkdtemp(dir) ? 0 : -1;
}

static inline int lt_test_rmtree(const char *dir)
{
    char cmd[600];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
    return system(cmd) == 0 ? 0 : -1;
}

/* Write len bytes of text to dir/name and return the path, from one of 16
 * buffers used in turn, so that a test can hold several paths at once. A
 * file that cannot be written fails the test. */
static inline const char *lt_test_write(const char *dir, const char *name, const char *text,
                                        size_t len)
{
    static char path[16][512];
    static int next = 0;
    char *p = path[next++ % 16];
    snprintf(p, sizeof path[0], "%s/%s", dir, name);
    FILE *f = fopen(p, "wb");
    assert_non_null(f);
    assert_int_equal(fwrite(text, 1, len, f), len);
    fclose(f);
    return p;
}

#endif
