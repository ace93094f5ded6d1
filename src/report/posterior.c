/* Posterior summaries of draws: see include/lantern/report.h. */
#include <math.h>
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
