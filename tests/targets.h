/*
 * Test targets with normalisers and means in closed form, for the samplers'
 * tests and benchmarks. Each is a density L(y) on a box; under a uniform
 * prior over the box the evidence is Z = (mass of L in the box) / (box
 * volume), and the masses here are products of normal masses, Phi(b) -
 * Phi(a) = (erf(b/sqrt 2) - erf(a/sqrt 2)) / 2 (C99's erf).
 *
 *  - bimodal: an equal mixture of two normals N(+-sep e_1, sd^2 I) in d
 *    dimensions, in the box [-half, half]^d; ln Z = ln(mass in the box) -
 *    d ln(2 half), each component's mass a product over the axes.
 *  - banana: the twisted Gaussian of Haario, Saksman & Tamminen 1999
 *    (Comput. Stat. 14, 375, sec. 4): x ~ N(0, diag(100, 1, ..., 1)) mapped
 *    by y1 = x1, y2 = x2 + b x1^2 - 100 b, yi = xi (Jacobian 1), b = 0.03.
 *    The box truncates y1 to [lo1, hi1] and y3..yd to [-half, half], and
 *    holds y2's conditional normal to 8 of its sds everywhere in y1's range
 *    (target_banana_margin; mass lost below 1e-14, so taken as 1): the mass is
 *    (Phi(hi1/10) - Phi(lo1/10)) (Phi(half) - Phi(-half))^(d-2). The means:
 *    E[y1] of the normal N(0, 10^2) truncated to [lo1, hi1],
 *    10 (phi(a) - phi(c)) / (Phi(c) - Phi(a)) with a = lo1/10, c = hi1/10
 *    (Johnson, Kotz & Balakrishnan, Continuous Univariate Distributions
 *    vol. 1, 2nd ed., eq. 13.134, from memory), and, since E[x2 | x1] = 0,
 *    E[y2] = b (E[y1^2] - 100) with E[y1^2] = 100 (1 + (a phi(a) - c phi(c))
 *    / (Phi(c) - Phi(a))) (same source, the truncated second moment).
 *
 * Everything is static inline: include it where needed, no link step.
 */
#ifndef LANTERN_TESTS_TARGETS_H
#define LANTERN_TESTS_TARGETS_H

#include <math.h>
#include <stddef.h>

static inline double target_phi(double x) { return exp(-0.5 * x * x) / sqrt(2 * M_PI); }
static inline double target_Phi(double x) { return 0.5 * erfc(-x / M_SQRT2); }
/* ln N(x; 0, sd^2) */
static inline double target_lnnorm(double x, double sd)
{
    return -0.5 * (x / sd) * (x / sd) - log(sd) - 0.5 * log(2 * M_PI);
}

/* ---- bimodal ---- */

typedef struct {
    size_t d;
    double sep, sd, half; /* modes at +-sep on axis 1, their sd, the box */
} target_bimodal;

static inline double target_bimodal_logl(const double *y, const target_bimodal *t)
{
    double a = target_lnnorm(y[0] - t->sep, t->sd), c = target_lnnorm(y[0] + t->sep, t->sd);
    for (size_t i = 1; i < t->d; i++) {
        double r = target_lnnorm(y[i], t->sd);
        a += r, c += r;
    }
    double m = a > c ? a : c;
    return m + log(0.5 * (exp(a - m) + exp(c - m)));
}

static inline void target_bimodal_box(const target_bimodal *t, double *lo, double *hi)
{
    for (size_t i = 0; i < t->d; i++)
        lo[i] = -t->half, hi[i] = t->half;
}

/* ln Z for a uniform prior over the box */
static inline double target_bimodal_logz(const target_bimodal *t)
{
    double h = t->half / t->sd, s = t->sep / t->sd;
    double first = target_Phi(h - s) - target_Phi(-h - s); /* the same for both modes */
    double rest = target_Phi(h) - target_Phi(-h);
    double mass = first * pow(rest, (double)t->d - 1);
    return log(mass) - (double)t->d * log(2 * t->half);
}

/* ---- banana ---- */

typedef struct {
    size_t d;        /* 2 or more */
    double b;        /* 0.03 */
    double lo1, hi1; /* y1's range */
    double lo2, hi2; /* y2's: wide enough to hold its conditional normal */
    double half;     /* y3..yd in [-half, half] */
} target_banana;

static inline double target_banana_logl(const double *y, const target_banana *t)
{
    double x2 = y[1] - t->b * y[0] * y[0] + 100 * t->b;
    double s = target_lnnorm(y[0], 10.0) + target_lnnorm(x2, 1.0);
    for (size_t i = 2; i < t->d; i++)
        s += target_lnnorm(y[i], 1.0);
    return s;
}

static inline void target_banana_box(const target_banana *t, double *lo, double *hi)
{
    lo[0] = t->lo1, hi[0] = t->hi1, lo[1] = t->lo2, hi[1] = t->hi2;
    for (size_t i = 2; i < t->d; i++)
        lo[i] = -t->half, hi[i] = t->half;
}

/* How many sds of x2's conditional normal the y2 range holds at worst over
 * y1's range (the mass outside is below 2 Phi(-this)); x2 = y2 - b y1^2 +
 * 100 b is least at y1^2 largest for hi2 and at y1 = 0 for lo2. */
static inline double target_banana_margin(const target_banana *t)
{
    double m1 = fmax(t->lo1 * t->lo1, t->hi1 * t->hi1);
    double m0 = t->lo1 < 0 && t->hi1 > 0 ? 0.0 : fmin(t->lo1 * t->lo1, t->hi1 * t->hi1);
    double up = t->hi2 - t->b * m1 + 100 * t->b, down = t->lo2 - t->b * m0 + 100 * t->b;
    return fmin(up, -down);
}

static inline double target_banana_logz(const target_banana *t)
{
    double mass = target_Phi(t->hi1 / 10) - target_Phi(t->lo1 / 10);
    mass *= pow(target_Phi(t->half) - target_Phi(-t->half), (double)t->d - 2);
    double vol = (t->hi1 - t->lo1) * (t->hi2 - t->lo2) * pow(2 * t->half, (double)t->d - 2);
    return log(mass) - log(vol);
}

/* The posterior means of y1 and y2 (the others are 0 by symmetry). */
static inline void target_banana_means(const target_banana *t, double *m1, double *m2)
{
    double a = t->lo1 / 10, c = t->hi1 / 10, z = target_Phi(c) - target_Phi(a);
    *m1 = 10 * (target_phi(a) - target_phi(c)) / z;
    double second = 100 * (1 + (a * target_phi(a) - c * target_phi(c)) / z);
    *m2 = t->b * (second - 100);
}

#endif
