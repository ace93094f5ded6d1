/* Posterior summaries of draws: see include/lantern/report.h. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "lantern/report.h"

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* Hyndman & Fan definition 7: h = (n - 1) p, interpolate between floor and
 * ceiling. */
static double q7(const double *s, size_t n, double p)
{
    double h = (double)(n - 1) * p;
    size_t lo = (size_t)floor(h);
    if (lo + 1 >= n)
        return s[n - 1];
    return s[lo] + (h - (double)lo) * (s[lo + 1] - s[lo]);
}

static void hpd(const double *s, size_t n, double p, double *lo, double *hi)
{
    size_t k = (size_t)ceil(p * (double)n); /* draws inside */
    if (k < 1)
        k = 1;
    if (k > n)
        k = n;
    size_t best = 0;
    double width = INFINITY;
    for (size_t i = 0; i + k - 1 < n; i++) {
        double w = s[i + k - 1] - s[i];
        if (w < width)
            width = w, best = i;
    }
    *lo = s[best];
    *hi = s[best + k - 1];
}

void lt_post_summarise(const double *x, size_t n, lt_post_stats *st)
{
    double *s = malloc((n ? n : 1) * sizeof *s);
    size_t k = 0;
    for (size_t i = 0; s && i < n; i++)
        if (!isnan(x[i]))
            s[k++] = x[i];
    if (!s || k == 0) {
        double nan = NAN;
        *st = (lt_post_stats){nan, nan, nan, nan, nan, nan, nan, nan, nan, nan, nan};
        free(s);
        return;
    }
    qsort(s, k, sizeof *s, cmp_double);
    double sum = 0.0;
    for (size_t i = 0; i < k; i++)
        sum += s[i];
    double mean = sum / (double)k, ss = 0.0;
    for (size_t i = 0; i < k; i++)
        ss += (s[i] - mean) * (s[i] - mean);
    st->mean = mean;
    st->sd = k > 1 ? sqrt(ss / (double)(k - 1)) : NAN;
    st->median = q7(s, k, 0.5);
    st->lo68 = q7(s, k, 0.15865525393145707); /* Phi(-1) */
    st->hi68 = q7(s, k, 0.84134474606854293);
    st->lo95 = q7(s, k, 0.025);
    st->hi95 = q7(s, k, 0.975);
    hpd(s, k, 0.6826894921370859, &st->hpd68_lo, &st->hpd68_hi);
    hpd(s, k, 0.95, &st->hpd95_lo, &st->hpd95_hi);
    free(s);
}

/* ---- the density of a posterior at the edges of its prior ---- */

typedef struct {
    double x, w;
} wdraw;

static int cmp_wdraw(const void *a, const void *b)
{
    double x = ((const wdraw *)a)->x, y = ((const wdraw *)b)->x;
    return (x > y) - (x < y);
}

/* The first index of s[0..n) with s[i].x >= v (s sorted). */
static size_t lower_bound(const wdraw *s, size_t n, double v)
{
    size_t lo = 0, hi = n;
    while (lo < hi) {
        size_t mid = lo + (hi - lo) / 2;
        if (s[mid].x < v)
            lo = mid + 1;
        else
            hi = mid;
    }
    return lo;
}

/* Sum of w K((t - x) / h) over the draws with |t - x| < 5 h, for draws
 * mirrored as x -> 2 c - x when mirror is set (the kernel is cut at 5 h,
 * where it is 4e-6 of its peak). */
static double kernel_sum(const wdraw *s, size_t n, double t, double h, int mirror, double c)
{
    /* a mirrored draw 2c - x lies within 5h of t when x lies within 5h of 2c - t */
    double centre = mirror ? 2.0 * c - t : t, sum = 0.0;
    for (size_t i = lower_bound(s, n, centre - 5.0 * h); i < n && s[i].x <= centre + 5.0 * h; i++) {
        double u = (centre - s[i].x) / h;
        sum += s[i].w * exp(-0.5 * u * u);
    }
    return sum;
}

/* The weighted q-quantile of sorted draws (the first draw whose cumulative
 * weight reaches q of the total). */
static double wquantile(const wdraw *s, size_t n, double total, double q)
{
    double cum = 0.0;
    for (size_t i = 0; i < n; i++) {
        cum += s[i].w;
        if (cum >= q * total)
            return s[i].x;
    }
    return s[n - 1].x;
}

int lt_post_edge_density(const double *x, const double *w, size_t n, double a, double b,
                         double *lo_ratio, double *hi_ratio)
{
    *lo_ratio = *hi_ratio = NAN;
    if (!(a < b) || !isfinite(a) || !isfinite(b))
        return LT_EINPUT;
    wdraw *s = malloc((n ? n : 1) * sizeof *s);
    if (!s)
        return LT_ENOMEM;
    size_t k = 0;
    double sw = 0.0, sw2 = 0.0, m = 0.0;
    for (size_t i = 0; i < n; i++) {
        double wi = w ? w[i] : 1.0;
        if (isnan(x[i]) || !(wi > 0.0))
            continue;
        /* a draw outside the prior (rounding) counts at its edge */
        s[k++] = (wdraw){fmin(fmax(x[i], a), b), wi};
        sw += wi, sw2 += wi * wi, m += wi * x[i];
    }
    if (k < 2) {
        free(s);
        return LT_EINPUT;
    }
    qsort(s, k, sizeof *s, cmp_wdraw);
    m /= sw;
    double var = 0.0;
    for (size_t i = 0; i < k; i++)
        var += s[i].w * (s[i].x - m) * (s[i].x - m);
    double sd = sqrt(var / sw);
    double iqr = wquantile(s, k, sw, 0.75) - wquantile(s, k, sw, 0.25);
    /* Silverman's rule of thumb (Density Estimation, 1986, eq. 3.31),
     * h = 0.9 min(sd, IQR / 1.34) n^(-1/5), with Kish's effective sample
     * size (sum w)^2 / sum w^2 for n when the draws are weighted */
    double spread = iqr > 0.0 ? fmin(sd, iqr / 1.34) : sd;
    double neff = sw * sw / sw2, h = 0.9 * spread * pow(neff, -0.2);
    if (!(h > 0.0)) { /* all draws at one value */
        *lo_ratio = s[0].x == a ? 1.0 : 0.0;
        *hi_ratio = s[0].x == b ? 1.0 : 0.0;
        free(s);
        return LT_OK;
    }
    /* The kernel estimate reflected at both edges (Silverman 1986, section
     * 2.10): each draw also counts mirrored at a and at b, so no weight
     * leaks past an edge; unreflected, the estimate at a hard edge is about
     * half the density there. */
#define DENSITY(t) (kernel_sum(s, k, (t), h, 0, 0.0) + kernel_sum(s, k, (t), h, 1, a) + \
                    kernel_sum(s, k, (t), h, 1, b))
    double at_a = DENSITY(a), at_b = DENSITY(b), peak = fmax(at_a, at_b);
    /* the peak on a grid of 512 steps over the span of the draws: for a
     * span of 10 sd and 10^6 draws (h = 0.057 sd) a step is h / 3, which
     * misses a Gaussian peak by at most (h/6)^2 / (2 h^2) = 1.4% */
    double lo = s[0].x, hi = s[k - 1].x;
    for (int g = 0; g <= 512; g++) {
        double t = lo + (hi - lo) * g / 512.0, f = DENSITY(t);
        peak = fmax(peak, f);
    }
#undef DENSITY
    free(s);
    *lo_ratio = peak > 0.0 ? at_a / peak : 0.0;
    *hi_ratio = peak > 0.0 ? at_b / peak : 0.0;
    return LT_OK;
}

int lt_post_edge_note(const char *name, const lt_prior *p, double lo, double hi, char *buf,
                      size_t size)
{
    int at_lo = lo > LT_EDGE_DENSITY_WARN, at_hi = hi > LT_EDGE_DENSITY_WARN;
    if (!at_lo && !at_hi)
        return 0;
    snprintf(buf, size,
             "the posterior of %s reaches %s of its prior U(%g, %g) (density there %.0f%% and "
             "%.0f%% of its peak): the prior sets part of its interval",
             name, at_lo && at_hi ? "both edges" : at_lo ? "the lower edge" : "the upper edge",
             p->a, p->b, 100 * lo, 100 * hi);
    return 1;
}
