/*
 * Convergence diagnostics from their published definitions (see
 * include/lantern/inference.h for the references): R-hat, bulk and tail
 * ESS, and the integrated autocorrelation time.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_fft_complex.h>

#include "lantern/inference.h"

/*
 * Biased autocovariances summed over m series, acov[t] = sum_c (1/n)
 * sum_i (x_ci - mean_c)(x_c,i+t - mean_c), t < n, by FFT of the series
 * padded to a power of two >= 2n. Two real series go into one complex
 * transform, as real and imaginary parts: with Z = X + iY,
 * |Z_k|^2 + |Z_{len-k}|^2 = 2 (|X_k|^2 + |Y_k|^2), so one backward transform
 * of the summed power spectrum gives the summed autocovariance (Press et
 * al., Numerical Recipes, 3rd ed., sect. 12.3, "two real FFTs for the price
 * of one"). m series cost ceil(m/2) + 1 transforms instead of 2m.
 */
static int autocov_sum(const double *x, size_t m, size_t n, double *acov)
{
    size_t len = 1;
    while (len < 2 * n)
        len <<= 1;
    double *buf = malloc(2 * len * sizeof *buf), *pow = calloc(len, sizeof *pow);
    if (!buf || !pow) {
        free(buf);
        free(pow);
        return -1;
    }
    for (size_t c = 0; c < m; c += 2) {
        memset(buf, 0, 2 * len * sizeof *buf);
        for (size_t part = 0; part < 2 && c + part < m; part++) {
            const double *xc = x + (c + part) * n;
            double mean = 0.0;
            for (size_t i = 0; i < n; i++)
                mean += xc[i];
            mean /= (double)n;
            for (size_t i = 0; i < n; i++)
                buf[2 * i + part] = xc[i] - mean;
        }
        gsl_fft_complex_radix2_forward(buf, 1, len);
        for (size_t k = 0; k < len; k++) {
            size_t j = (len - k) % len;
            double a2 = buf[2 * k] * buf[2 * k] + buf[2 * k + 1] * buf[2 * k + 1];
            double b2 = buf[2 * j] * buf[2 * j] + buf[2 * j + 1] * buf[2 * j + 1];
            pow[k] += 0.5 * (a2 + b2);
        }
    }
    for (size_t k = 0; k < len; k++)
        buf[2 * k] = pow[k], buf[2 * k + 1] = 0.0;
    gsl_fft_complex_radix2_backward(buf, 1, len); /* unnormalised: divide by len */
    for (size_t t = 0; t < n; t++)
        acov[t] = buf[2 * t] / (double)len / (double)n;
    free(buf);
    free(pow);
    return 0;
}

double lt_diag_rhat_basic(const double *x, size_t m, size_t n)
{
    if (m < 1 || n < 2)
        return NAN;
    double w = 0.0, mean_all = 0.0, *means = malloc(m * sizeof *means);
    if (!means)
        return NAN;
    for (size_t c = 0; c < m; c++) {
        double mu = 0.0, ss = 0.0;
        for (size_t i = 0; i < n; i++)
            mu += x[c * n + i];
        mu /= (double)n;
        for (size_t i = 0; i < n; i++)
            ss += (x[c * n + i] - mu) * (x[c * n + i] - mu);
        w += ss / (double)(n - 1);
        means[c] = mu;
        mean_all += mu;
    }
    w /= (double)m;
    mean_all /= (double)m;
    double b = 0.0; /* B / n: the variance of the chain means */
    if (m > 1) {
        for (size_t c = 0; c < m; c++)
            b += (means[c] - mean_all) * (means[c] - mean_all);
        b /= (double)(m - 1);
    }
    free(means);
    double var_plus = (double)(n - 1) / (double)n * w + b;
    return sqrt(var_plus / w);
}

/*
 * Autocovariances on demand. Geyer's sum often stops after a few lags, so
 * lags are computed directly, O(m n) each, up to DIRECT_LAGS; a run that
 * mixes more slowly gets all lags at once by FFT, which costs about as much
 * as 30 to 40 direct lags (measured on 10^5 to 10^6 draws, 2026-12-02: with
 * the cut at 256 lags the checks took 80% of a slow w0-wa run).
 */
#define DIRECT_LAGS 32
typedef struct {
    const double *x;
    size_t m, n;
    const double *means;
    double *fft; /* n autocovariances summed over the chains, once computed */
    int failed;
} lags;

/* The autocovariance at lag t averaged over the m chains. */
static double mean_acov(lags *a, size_t t)
{
    size_t m = a->m, n = a->n;
    if (!a->fft && !a->failed && t > DIRECT_LAGS) {
        a->fft = malloc(n * sizeof *a->fft);
        if (!a->fft || autocov_sum(a->x, m, n, a->fft))
            a->failed = 1;
    }
    if (a->fft && !a->failed)
        return a->fft[t] / (double)m;
    double s = 0.0;
    for (size_t c = 0; c < m; c++) {
        const double *xc = a->x + c * n;
        double mu = a->means[c], sc = 0.0;
        for (size_t i = 0; i + t < n; i++)
            sc += (xc[i] - mu) * (xc[i + t] - mu);
        s += sc / (double)n;
    }
    return s / (double)m;
}

double lt_diag_ess(const double *x, size_t m, size_t n)
{
    if (m < 1 || n < 4)
        return NAN;
    double *means = malloc(m * sizeof *means), *rho = malloc((n + 1) * sizeof *rho);
    lags a = {x, m, n, means, NULL, 0};
    double ess = NAN;
    if (!means || !rho)
        goto done;
    double mean_all = 0.0;
    for (size_t c = 0; c < m; c++) {
        double mu = 0.0;
        for (size_t i = 0; i < n; i++)
            mu += x[c * n + i];
        means[c] = mu / (double)n;
        mean_all += means[c];
    }
    mean_all /= (double)m;
    /* W, the mean within-chain variance with n - 1 denominators */
    double w = mean_acov(&a, 0) * (double)n / (double)(n - 1);
    double b = 0.0;
    if (m > 1) {
        for (size_t c = 0; c < m; c++)
            b += (means[c] - mean_all) * (means[c] - mean_all);
        b /= (double)(m - 1);
    }
    double var_plus = w * (double)(n - 1) / (double)n + b;
    if (!(var_plus > 0.0))
        goto done; /* a constant: no information about mixing */
    /* rho_t = 1 - (W - mean_c acov_c(t)) / var_plus */
#define RHO(t) (1.0 - (w - mean_acov(&a, (t))) / var_plus)
    for (size_t t = 0; t <= n; t++)
        rho[t] = 0.0;
    rho[0] = 1.0;
    double even = 1.0, odd = RHO(1);
    rho[1] = odd;
    size_t t = 1;
    /* Geyer: sum pairs rho_{2k} + rho_{2k+1} while they stay positive */
    while (t + 2 < n - 3 && even + odd > 0.0) {
        even = RHO(t + 1);
        odd = RHO(t + 2);
        if (even + odd >= 0.0) {
            rho[t + 1] = even;
            rho[t + 2] = odd;
        }
        t += 2;
    }
    size_t max_t = t;
    if (even > 0.0 && max_t + 1 <= n)
        rho[max_t + 1] = even;
    /* ... and make the pair sums monotone (the initial monotone sequence) */
    for (t = 1; t + 2 <= max_t; t += 2) {
        if (rho[t + 1] + rho[t + 2] > rho[t - 1] + rho[t]) {
            rho[t + 1] = 0.5 * (rho[t - 1] + rho[t]);
            rho[t + 2] = rho[t + 1];
        }
    }
    double sum = 0.0;
    for (t = 0; t <= max_t; t++)
        sum += rho[t];
    double tau = -1.0 + 2.0 * sum + (max_t + 1 <= n ? rho[max_t + 1] : 0.0);
    double total = (double)(m * n);
    tau = fmax(tau, 1.0 / log10(total)); /* a floor against antithetic chains */
    ess = a.failed ? NAN : total / tau;
#undef RHO
done:
    free(a.fft);
    free(means);
    free(rho);
    return ess;
}

double lt_diag_ess_weighted(const double *f, const double *w, size_t m, size_t n)
{
    size_t total = m * n;
    if (m < 1 || n < 4)
        return NAN;
    double sw = 0.0, mu = 0.0;
    for (size_t i = 0; i < total; i++)
        if (w[i] > 0.0 && !isnan(f[i]))
            sw += w[i], mu += w[i] * f[i];
    if (!(sw > 0.0))
        return NAN;
    mu /= sw;
    double *g = malloc(total * sizeof *g);
    if (!g)
        return NAN;
    /* g_i = (w_i / mean w) (f_i - mu): the self-normalised estimate's error
     * is, to first order, the plain mean of g; a draw without a value or
     * weight contributes nothing */
    double mean_w = sw / (double)total, var_f = 0.0, var_g = 0.0;
    for (size_t i = 0; i < total; i++) {
        int counts = w[i] > 0.0 && !isnan(f[i]);
        g[i] = counts ? w[i] / mean_w * (f[i] - mu) : 0.0;
        if (counts)
            var_f += w[i] * (f[i] - mu) * (f[i] - mu);
        var_g += g[i] * g[i];
    }
    var_f /= sw, var_g /= (double)total;
    double ess = var_g > 0.0 ? var_f * lt_diag_ess(g, m, n) / var_g : NAN;
    free(g);
    return ess;
}

/* Split each chain in halves (dropping a middle draw when n is odd):
 * 2m chains of n/2. */
static double *split(const double *x, size_t m, size_t n, size_t *half)
{
    size_t h = n / 2;
    double *y = malloc(2 * m * (h ? h : 1) * sizeof *y);
    if (!y)
        return NULL;
    for (size_t c = 0; c < m; c++) {
        memcpy(y + (2 * c) * h, x + c * n, h * sizeof *y);
        memcpy(y + (2 * c + 1) * h, x + c * n + (n - h), h * sizeof *y);
    }
    *half = h;
    return y;
}

typedef struct {
    double v;
    size_t i;
} ranked;

static int cmp_ranked(const void *a, const void *b)
{
    double x = ((const ranked *)a)->v, y = ((const ranked *)b)->v;
    return (x > y) - (x < y);
}

/* Normal scores of the sorted order: y[r[k].i] for ranks with ties
 * averaged. */
static void scores(const ranked *r, size_t len, double *y)
{
    for (size_t i = 0; i < len;) {
        size_t j = i;
        while (j + 1 < len && r[j + 1].v == r[i].v)
            j++;
        double rank = 0.5 * (double)(i + j) + 1.0;
        double z = gsl_cdf_ugaussian_Pinv((rank - 0.375) / ((double)len + 0.25));
        for (size_t k = i; k <= j; k++)
            y[r[k].i] = z;
        i = j + 1;
    }
}

/* The q-quantile of sorted values (linear interpolation). */
static double sorted_quantile(const ranked *r, size_t len, double q)
{
    double h = q * (double)(len - 1);
    size_t lo = (size_t)floor(h);
    return lo + 1 < len ? r[lo].v + (h - (double)lo) * (r[lo + 1].v - r[lo].v) : r[len - 1].v;
}

void lt_diag_all(const double *x, size_t m, size_t n, double *rhat, double *ess_bulk,
                 double *ess_tail)
{
    *rhat = *ess_bulk = *ess_tail = NAN;
    size_t h;
    double *y = split(x, m, n, &h);
    size_t len = 2 * m * h;
    double *z = y ? malloc((len ? len : 1) * sizeof *z) : NULL;
    ranked *r = z ? malloc((len ? len : 1) * sizeof *r) : NULL;
    if (!r || h < 4)
        goto done;
    /* one sort serves the median, the tail quantiles and the bulk ranks */
    for (size_t i = 0; i < len; i++)
        r[i] = (ranked){y[i], i};
    qsort(r, len, sizeof *r, cmp_ranked);
    double med = sorted_quantile(r, len, 0.5);
    double q05 = sorted_quantile(r, len, 0.05), q95 = sorted_quantile(r, len, 0.95);
    /* tail: ESS of the indicators of the 5% and 95% quantiles */
    for (int k = 0; k < 2; k++) {
        double q = k ? q95 : q05;
        for (size_t i = 0; i < len; i++)
            z[i] = y[i] <= q ? 1.0 : 0.0;
        double e = lt_diag_ess(z, 2 * m, h);
        *ess_tail = k ? fmin(*ess_tail, e) : e;
    }
    /* folded: |y - median|, rank-normalised */
    for (size_t i = 0; i < len; i++)
        z[i] = fabs(y[i] - med);
    /* bulk: the ranks of y */
    scores(r, len, y);
    *ess_bulk = lt_diag_ess(y, 2 * m, h);
    double bulk = lt_diag_rhat_basic(y, 2 * m, h);
    for (size_t i = 0; i < len; i++)
        r[i] = (ranked){z[i], i};
    qsort(r, len, sizeof *r, cmp_ranked);
    scores(r, len, z);
    *rhat = fmax(bulk, lt_diag_rhat_basic(z, 2 * m, h));
done:
    free(y);
    free(z);
    free(r);
}

double lt_diag_rhat(const double *x, size_t m, size_t n)
{
    double r, b, t;
    lt_diag_all(x, m, n, &r, &b, &t);
    return r;
}

double lt_diag_ess_bulk(const double *x, size_t m, size_t n)
{
    double r, b, t;
    lt_diag_all(x, m, n, &r, &b, &t);
    return b;
}

double lt_diag_ess_tail(const double *x, size_t m, size_t n)
{
    double r, b, t;
    lt_diag_all(x, m, n, &r, &b, &t);
    return t;
}

double lt_diag_tau(const double *x, size_t n)
{
    if (n < 4)
        return NAN;
    double mean = 0.0;
    for (size_t i = 0; i < n; i++)
        mean += x[i];
    mean /= (double)n;
    lags a = {x, 1, n, &mean, NULL, 0};
    double c0 = mean_acov(&a, 0), tau = NAN;
    if (c0 > 0.0) {
        tau = 1.0;
        for (size_t w = 1; w < n; w++) {
            tau += 2.0 * mean_acov(&a, w) / c0;
            if ((double)w >= 5.0 * tau)
                break;
        }
    }
    free(a.fft);
    return a.failed ? NAN : tau;
}

int lt_dic_compute(const double *dev, const double *w, size_t n, lt_dic *out)
{
    /* two passes (mean, then centred squares): D is of the order of the
     * number of data, var(D) of the number of parameters, so the one-pass
     * E[D^2] - E[D]^2 would lose digits to cancellation */
    double sw = 0.0, m = 0.0;
    for (size_t i = 0; i < n; i++) {
        double wi = w ? w[i] : 1.0;
        if (wi > 0.0 && isfinite(dev[i]))
            sw += wi, m += wi * dev[i];
    }
    if (!(sw > 0.0)) {
        out->d_mean = out->p_v = out->dic = NAN;
        return LT_EDOMAIN;
    }
    m /= sw;
    double v = 0.0;
    for (size_t i = 0; i < n; i++) {
        double wi = w ? w[i] : 1.0;
        if (wi > 0.0 && isfinite(dev[i]))
            v += wi * (dev[i] - m) * (dev[i] - m);
    }
    v /= sw;
    out->d_mean = m;
    out->p_v = 0.5 * v;
    out->dic = m + out->p_v;
    return LT_OK;
}

/*
 * The shape of a generalized Pareto distribution fitted to x[0..n)
 * (exceedances over a threshold, sorted ascending, all > 0) by Zhang &
 * Stephens 2009 (Technometrics 51, 316): the profile likelihood of
 * theta = -xi / sigma averaged over m = 30 + sqrt(n) points
 * theta_j = 1 / x_max + (1 - sqrt(m / (j - 1/2))) / (3 x_q1), each with
 * weight 1 / sum_l exp(L_l - L_j), L(theta) = n (ln(theta / k) + k - 1),
 * k = -mean ln(1 - theta x); then xi = mean ln(1 - theta_hat x) (their k
 * with the sign of the usual shape).
 */
static double gpd_shape(const double *x, size_t n)
{
    size_t m = 30 + (size_t)sqrt((double)n);
    double *th = malloc(2 * m * sizeof *th);
    if (!th)
        return NAN;
    double *L = th + m, xq = x[(size_t)(n / 4.0 + 0.5) - 1], top = -INFINITY;
    for (size_t j = 0; j < m; j++) {
        th[j] = 1.0 / x[n - 1] + (1.0 - sqrt((double)m / ((double)j + 0.5))) / (3.0 * xq);
        double k = 0.0;
        for (size_t i = 0; i < n; i++)
            k -= log1p(-th[j] * x[i]);
        k /= (double)n;
        L[j] = (double)n * (log(th[j] / k) + k - 1.0);
        top = fmax(top, L[j]);
    }
    /* the posterior mean of theta: weights exp(L_j) normalised */
    double sw = 0.0, st = 0.0;
    for (size_t j = 0; j < m; j++) {
        double wj = isfinite(L[j]) ? exp(L[j] - top) : 0.0;
        sw += wj, st += wj * th[j];
    }
    double theta = st / sw, xi = 0.0;
    for (size_t i = 0; i < n; i++)
        xi += log1p(-theta * x[i]);
    free(th);
    return xi / (double)n;
}

static int cmp_double(const void *a, const void *b)
{
    double u = *(const double *)a, v = *(const double *)b;
    return u < v ? -1 : u > v;
}

double lt_diag_pareto_k(const double *logw, size_t n)
{
    /* the tail: the M = min(n / 5, 3 sqrt(n)) largest weights, over the
     * next largest as threshold (Vehtari, Simpson, Gelman, Yao & Gabry,
     * arXiv:1507.02646, sec. 3) */
    size_t M = (size_t)fmin((double)n / 5.0, 3.0 * sqrt((double)n));
    if (M < 5)
        return NAN;
    double *lw = malloc(n * sizeof *lw);
    if (!lw)
        return NAN;
    size_t k = 0;
    for (size_t i = 0; i < n; i++)
        lw[k++] = isnan(logw[i]) ? -INFINITY : logw[i];
    qsort(lw, k, sizeof *lw, cmp_double);
    double top = lw[k - 1], cut = lw[k - 1 - M];
    if (!isfinite(top) || cut == top) {
        free(lw);
        return isfinite(top) ? -INFINITY : NAN; /* a flat tail: no heavier than exponential */
    }
    double base = isfinite(cut) ? exp(cut - top) : 0.0;
    double *x = malloc(M * sizeof *x);
    if (!x) {
        free(lw);
        return NAN;
    }
    for (size_t i = 0; i < M; i++)
        x[i] = exp(lw[k - M + i] - top) - base;
    free(lw);
    size_t first = 0; /* ties with the threshold carry no tail information */
    while (first < M && !(x[first] > 0.0))
        first++;
    double xi = M - first >= 5 ? gpd_shape(x + first, M - first) : NAN;
    size_t mt = M - first;
    free(x);
    /* the weakly informative prior of the PSIS paper: shrink towards 0.5
     * as if 10 more observations were 0.5 */
    return xi * (double)mt / ((double)mt + 10.0) + 10.0 * 0.5 / ((double)mt + 10.0);
}
