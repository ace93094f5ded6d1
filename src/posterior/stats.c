/* Summaries of draws: see include/lantern/posterior.h. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "lantern/posterior.h"

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

static void stats_nan(lt_post_stats *st)
{
    double nan = NAN;
    *st = (lt_post_stats){nan, nan, nan, nan, nan, nan, nan, nan, nan, nan, nan};
}

void lt_post_summarise(const double *x, size_t n, lt_post_stats *st)
{
    double *s = malloc((n ? n : 1) * sizeof *s);
    size_t k = 0;
    for (size_t i = 0; s && i < n; i++)
        if (!isnan(x[i]))
            s[k++] = x[i];
    if (!s || k == 0) {
        stats_nan(st);
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
    st->lo68 = q7(s, k, LT_POST_P_LO68);
    st->hi68 = q7(s, k, LT_POST_P_HI68);
    st->lo95 = q7(s, k, 0.025);
    st->hi95 = q7(s, k, 0.975);
    hpd(s, k, LT_POST_P68, &st->hpd68_lo, &st->hpd68_hi);
    hpd(s, k, 0.95, &st->hpd95_lo, &st->hpd95_hi);
    free(s);
}

/* ---- weighted draws ---- */

typedef struct {
    double x, w;
} wdraw;

static int cmp_wdraw(const void *a, const void *b)
{
    double x = ((const wdraw *)a)->x, y = ((const wdraw *)b)->x;
    return (x > y) - (x < y);
}

/* The draws with a number and a positive weight, sorted; *total their
 * weight. NULL (with *k = 0) when out of memory. */
static wdraw *wsorted(const double *x, const double *w, size_t n, size_t *k, double *total)
{
    wdraw *s = malloc((n ? n : 1) * sizeof *s);
    *k = 0, *total = 0.0;
    for (size_t i = 0; s && i < n; i++) {
        double wi = w ? w[i] : 1.0;
        if (!isnan(x[i]) && wi > 0.0 && isfinite(wi))
            s[(*k)++] = (wdraw){x[i], wi}, *total += wi;
    }
    if (s)
        qsort(s, *k, sizeof *s, cmp_wdraw);
    return s;
}

/*
 * The weighted q-quantile of k sorted draws of total weight W: draw i sits
 * at the cumulative weight c_i - w_i / 2 (the middle of its own weight),
 * the first draw at probability 0 and the last at 1, and the quantile
 * interpolates linearly between neighbours. With equal weights draw i sits
 * at (i - 1) / (k - 1): Hyndman & Fan's definition 7 (what the unweighted
 * summaries use), so the two agree there.
 */
static double wq(const wdraw *s, size_t k, double total, double q)
{
    if (k == 1)
        return s[0].x;
    double first = 0.5 * s[0].w, span = total - 0.5 * (s[0].w + s[k - 1].w);
    double t = first + q * span, c = 0.0; /* c: the weight below draw i */
    for (size_t i = 0; i + 1 < k; i++) {
        double here = c + 0.5 * s[i].w, next = c + s[i].w + 0.5 * s[i + 1].w;
        if (t <= next) {
            double f = next > here ? (t - here) / (next - here) : 0.0;
            return s[i].x + fmin(fmax(f, 0.0), 1.0) * (s[i + 1].x - s[i].x);
        }
        c += s[i].w;
    }
    return s[k - 1].x;
}

/* The shortest interval [s_i, s_j] holding at least p of the weight (with
 * equal weights: ceil(p k) draws, as hpd above). */
static void whpd(const wdraw *s, size_t k, double total, double p, double *lo, double *hi)
{
    double need = p * total, in = 0.0, width = INFINITY;
    *lo = s[0].x, *hi = s[k - 1].x;
    for (size_t i = 0, j = 0; i < k; i++) { /* [i, j) holds weight in */
        while (j < k && in < need)
            in += s[j++].w;
        if (in < need)
            break;
        if (s[j - 1].x - s[i].x < width)
            width = s[j - 1].x - s[i].x, *lo = s[i].x, *hi = s[j - 1].x;
        in -= s[i].w;
    }
}

void lt_post_summarise_weighted(const double *x, const double *w, size_t n, lt_post_stats *st)
{
    if (!w) {
        lt_post_summarise(x, n, st);
        return;
    }
    size_t k;
    double total;
    wdraw *s = wsorted(x, w, n, &k, &total);
    if (!s || k == 0) {
        stats_nan(st);
        free(s);
        return;
    }
    double mean = 0.0, ss = 0.0, w2 = 0.0;
    for (size_t i = 0; i < k; i++)
        mean += s[i].w * s[i].x;
    mean /= total;
    for (size_t i = 0; i < k; i++)
        ss += s[i].w * (s[i].x - mean) * (s[i].x - mean), w2 += s[i].w * s[i].w;
    st->mean = mean;
    /* the unbiased weighted variance for weights that count draws'
     * reliability: divide by W - sum w^2 / W (k - 1 for equal weights) */
    double denom = total - w2 / total;
    st->sd = k > 1 && denom > 0.0 ? sqrt(ss / denom) : NAN;
    st->median = wq(s, k, total, 0.5);
    st->lo68 = wq(s, k, total, LT_POST_P_LO68);
    st->hi68 = wq(s, k, total, LT_POST_P_HI68);
    st->lo95 = wq(s, k, total, 0.025);
    st->hi95 = wq(s, k, total, 0.975);
    whpd(s, k, total, LT_POST_P68, &st->hpd68_lo, &st->hpd68_hi);
    whpd(s, k, total, 0.95, &st->hpd95_lo, &st->hpd95_hi);
    free(s);
}

double lt_post_quantile(const double *x, const double *w, size_t n, double q)
{
    size_t k;
    double total;
    wdraw *s = wsorted(x, w, n, &k, &total);
    double v = NAN;
    if (s && k && !w) { /* definition 7 itself, as lt_post_summarise */
        double *y = malloc(k * sizeof *y);
        for (size_t i = 0; y && i < k; i++)
            y[i] = s[i].x;
        v = y ? q7(y, k, q) : NAN;
        free(y);
    } else if (s && k) {
        v = wq(s, k, total, q);
    }
    free(s);
    return v;
}

/* ---- the density of a posterior at the edges of its prior ---- */

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
    double iqr = wq(s, k, sw, 0.75) - wq(s, k, sw, 0.25);
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
