/*
 * Covariance matrices: a base (diagonal or dense) plus low-rank modes,
 * C = B + U U^T, factored once and then solved against many vectors.
 *
 * Storage is row-major. A dense base is factored in place by Cholesky,
 * B = L L^T with L in the lower triangle; the strict upper triangle keeps
 * the original values and the diagonal is saved, so the matrix can still be
 * rebuilt. Modes go through the Woodbury identity (e.g. Press et al.,
 * Numerical Recipes, 3rd ed., sec. 2.7.3):
 *   C^-1 = B^-1 - W S^-1 W^T,  W = B^-1 U,  S = I + U^T B^-1 U  (k x k),
 *   r^T C^-1 r = r^T B^-1 r - t^T S^-1 t,  t = W^T r,
 * so no N x N matrix is ever formed for the modes.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <cblas.h>
#include <lapacke.h>

#include "lantern/digest.h"
#include "lantern/survey.h"

/* malloc(0) may return NULL; ask for at least one element. */
static size_t at_least1(size_t n) { return n ? n : 1; }

struct lt_cov {
    size_t n, k;
    double *diag;      /* the diagonal base (n), when dense == NULL */
    double *dense;     /* a dense base (n x n), or NULL */
    double *dense_diag;/* the dense base's diagonal, kept through factoring */
    double *u;         /* n x k scaled modes, or NULL */
    int factored;
    double *w;         /* n x k: B^-1 U */
    double *s;         /* k x k: Cholesky factor of I + U^T W (lower) */
};

const char *lt_cov_kind_name(lt_cov_kind k)
{
    static const char *names[] = {"diagonal", "dense", "structured", "dense+modes"};
    return (unsigned)k < 4 ? names[k] : "unknown";
}

lt_cov *lt_cov_alloc(size_t n, lt_error *err)
{
    lt_cov *c = calloc(1, sizeof *c);
    if (c)
        c->diag = calloc(at_least1(n), sizeof *c->diag);
    if (!c || !c->diag) {
        free(c);
        lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory for a %zu x %zu covariance", n,
                     n);
        return NULL;
    }
    c->n = n;
    return c;
}

void lt_cov_free(lt_cov *c)
{
    if (!c)
        return;
    free(c->diag);
    free(c->dense);
    free(c->dense_diag);
    free(c->u);
    free(c->w);
    free(c->s);
    free(c);
}

size_t lt_cov_size(const lt_cov *c) { return c->n; }
size_t lt_cov_nmodes(const lt_cov *c) { return c->k; }

lt_cov_kind lt_cov_kind_of(const lt_cov *c)
{
    if (c->dense)
        return c->k ? LT_COV_DENSE_MODES : LT_COV_DENSE;
    return c->k ? LT_COV_STRUCTURED : LT_COV_DIAGONAL;
}

static int refuse_factored(const lt_cov *c, lt_error *err)
{
    if (c->factored)
        return lt_error_set(err, LT_EINPUT, NULL, 0,
                            "internal: covariance changed after it was factored");
    return LT_OK;
}

int lt_cov_add_diag(lt_cov *c, const double *var, lt_error *err)
{
    if (refuse_factored(c, err))
        return LT_EINPUT;
    for (size_t i = 0; i < c->n; i++) {
        if (c->dense)
            c->dense[i * c->n + i] += var[i];
        else
            c->diag[i] += var[i];
    }
    return LT_OK;
}

int lt_cov_add_dense(lt_cov *c, const double *m, lt_error *err)
{
    if (refuse_factored(c, err))
        return LT_EINPUT;
    size_t n = c->n;
    if (!c->dense) {
        c->dense = calloc(at_least1(n * n), sizeof *c->dense);
        if (!c->dense)
            return lt_error_set(err, LT_ENOMEM, NULL, 0,
                                "out of memory for a dense %zu x %zu covariance (%.1f GB)", n,
                                n, 8e-9 * (double)n * (double)n);
        for (size_t i = 0; i < n; i++)
            c->dense[i * n + i] = c->diag[i];
    }
    for (size_t i = 0; i < n * n; i++)
        c->dense[i] += m[i];
    return LT_OK;
}

int lt_cov_add_modes(lt_cov *c, size_t k, const double *u, const double *amp, lt_error *err)
{
    if (refuse_factored(c, err))
        return LT_EINPUT;
    size_t n = c->n, k2 = c->k + k;
    double *nu = malloc(at_least1(n * k2) * sizeof *nu);
    if (!nu)
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory for %zu x %zu modes", n,
                            k2);
    for (size_t i = 0; i < n; i++) {
        for (size_t j = 0; j < c->k; j++)
            nu[i * k2 + j] = c->u[i * c->k + j];
        for (size_t j = 0; j < k; j++)
            nu[i * k2 + c->k + j] = u[i * k + j] * (amp ? amp[j] : 1.0);
    }
    free(c->u);
    c->u = nu;
    c->k = k2;
    return LT_OK;
}

/*
 * The solves below run in the likelihood's hot path, from many threads at
 * once. They are plain loops rather than BLAS calls: OpenBLAS may take
 * buffers or locks inside even a level-2 routine, and the loops keep the
 * order of every sum fixed, so results do not depend on the library build.
 * Both sweeps read L row by row (row-major), which is contiguous.
 */

/* sum a[j] b[j], j < n, in eight running sums (four pairs of SSE2 lanes) so
 * the processor can overlap the additions; the order of the sums is fixed,
 * so the result is the same on every run and every machine. */
typedef double v2d __attribute__((vector_size(16))); /* two doubles: SSE2, on every x86-64 */

static double dot(const double *a, const double *b, size_t n)
{
    v2d s0 = {0, 0}, s1 = {0, 0}, s2 = {0, 0}, s3 = {0, 0};
    size_t j = 0;
    for (; j + 8 <= n; j += 8) {
        v2d a0, a1, a2, a3, b0, b1, b2, b3;
        memcpy(&a0, a + j, 16), memcpy(&a1, a + j + 2, 16);
        memcpy(&a2, a + j + 4, 16), memcpy(&a3, a + j + 6, 16);
        memcpy(&b0, b + j, 16), memcpy(&b1, b + j + 2, 16);
        memcpy(&b2, b + j + 4, 16), memcpy(&b3, b + j + 6, 16);
        s0 += a0 * b0, s1 += a1 * b1, s2 += a2 * b2, s3 += a3 * b3;
    }
    v2d s = (s0 + s1) + (s2 + s3);
    double t = s[0] + s[1];
    for (; j < n; j++)
        t += a[j] * b[j];
    return t;
}

/* Solve L y = b in place (L lower triangular, row-major n x n). */
static void forward(const double *L, size_t n, double *y)
{
    for (size_t i = 0; i < n; i++) {
        const double *row = L + i * n;
        y[i] = (y[i] - dot(row, y, i)) / row[i];
    }
}

/* Solve L^T x = y in place. */
static void backward(const double *L, size_t n, double *x)
{
    for (size_t i = n; i-- > 0;) {
        const double *row = L + i * n;
        x[i] /= row[i];
        double xi = x[i];
        for (size_t j = 0; j < i; j++) /* independent updates: vectorises */
            x[j] -= row[j] * xi;
    }
}

/* t = W^T r for W n x k row-major. */
static void wt_times(const double *w, size_t n, size_t k, const double *r, double *t)
{
    for (size_t j = 0; j < k; j++)
        t[j] = 0.0;
    for (size_t i = 0; i < n; i++) {
        const double *row = w + i * k;
        for (size_t j = 0; j < k; j++)
            t[j] += row[j] * r[i];
    }
}

/* B^-1 x in place, for a factored base. */
static void base_solve(const lt_cov *c, double *x)
{
    if (c->dense) {
        forward(c->dense, c->n, x);
        backward(c->dense, c->n, x);
    } else {
        for (size_t i = 0; i < c->n; i++)
            x[i] /= c->diag[i];
    }
}

int lt_cov_factor(lt_cov *c, lt_error *err)
{
    if (c->factored)
        return LT_OK;
    size_t n = c->n, k = c->k;
    if (c->dense) {
        c->dense_diag = malloc(at_least1(n) * sizeof *c->dense_diag);
        if (!c->dense_diag)
            return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        for (size_t i = 0; i < n; i++)
            c->dense_diag[i] = c->dense[i * n + i];
        /* Row-major lower is column-major upper: dpotrf('U') on the same
         * memory gives B = L L^T with L in our lower triangle, with no
         * transposed copy. */
        lapack_int info = LAPACKE_dpotrf(LAPACK_COL_MAJOR, 'U', (lapack_int)n, c->dense,
                                         (lapack_int)n);
        if (info != 0) {
            /* restore the matrix so the caller may still inspect it */
            for (size_t i = 0; i < n; i++) {
                c->dense[i * n + i] = c->dense_diag[i];
                for (size_t j = 0; j < i; j++)
                    c->dense[i * n + j] = c->dense[j * n + i];
            }
            free(c->dense_diag);
            c->dense_diag = NULL;
            if (info > 0)
                return lt_error_set(err, LT_EINPUT, NULL, 0,
                                    "the covariance matrix is not positive definite "
                                    "(Cholesky fails at row %d of %zu)",
                                    (int)info, n);
            return lt_error_set(err, LT_ENUMERIC, NULL, 0, "LAPACK dpotrf failed (%d)",
                                (int)info);
        }
    } else {
        for (size_t i = 0; i < n; i++)
            if (!(c->diag[i] > 0.0) || !isfinite(c->diag[i]))
                return lt_error_set(err, LT_EINPUT, NULL, 0,
                                    "the covariance matrix is not positive definite: "
                                    "variance %g for object %zu",
                                    c->diag[i], i + 1);
    }
    if (k) {
        c->w = malloc(n * k * sizeof *c->w);
        c->s = calloc(k * k, sizeof *c->s);
        double *col = malloc(at_least1(n) * sizeof *col);
        if (!c->w || !c->s || !col) {
            free(col);
            return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory for the modes");
        }
        for (size_t j = 0; j < k; j++) {
            for (size_t i = 0; i < n; i++)
                col[i] = c->u[i * k + j];
            base_solve(c, col);
            for (size_t i = 0; i < n; i++)
                c->w[i * k + j] = col[i];
        }
        free(col);
        for (size_t j = 0; j < k; j++)
            c->s[j * k + j] = 1.0;
        cblas_dgemm(CblasRowMajor, CblasTrans, CblasNoTrans, (int)k, (int)k, (int)n, 1.0, c->u,
                    (int)k, c->w, (int)k, 1.0, c->s, (int)k);
        lapack_int info = LAPACKE_dpotrf(LAPACK_COL_MAJOR, 'U', (lapack_int)k, c->s,
                                         (lapack_int)k);
        if (info != 0)
            return lt_error_set(err, LT_ENUMERIC, NULL, 0,
                                "the %zu systematic modes make the covariance singular "
                                "(capacitance matrix not positive definite)",
                                k);
    }
    c->factored = 1;
    return LT_OK;
}

size_t lt_cov_work_size(const lt_cov *c) { return c->n + c->k + 1; }

double lt_cov_logdet(const lt_cov *c)
{
    /* det(B + U U^T) = det(B) det(I + U^T B^-1 U) (the matrix determinant
     * lemma); both factors come from the Cholesky factors. */
    double ld = 0.0;
    for (size_t i = 0; i < c->n; i++)
        ld += c->dense ? 2.0 * log(c->dense[i * c->n + i]) : log(c->diag[i]);
    for (size_t j = 0; j < c->k; j++)
        ld += 2.0 * log(c->s[j * c->k + j]);
    return ld;
}

double lt_cov_chi2(const lt_cov *c, const double *r, double *work)
{
    size_t n = c->n, k = c->k;
    double chi2 = 0.0;
    if (c->dense) {
        memcpy(work, r, n * sizeof *work);
        forward(c->dense, n, work);
        for (size_t i = 0; i < n; i++)
            chi2 += work[i] * work[i];
    } else {
        for (size_t i = 0; i < n; i++)
            chi2 += r[i] * r[i] / c->diag[i];
    }
    if (k) {
        double *t = work + n;
        wt_times(c->w, n, k, r, t);
        forward(c->s, k, t);
        for (size_t j = 0; j < k; j++)
            chi2 -= t[j] * t[j];
    }
    return chi2;
}

void lt_cov_solve(const lt_cov *c, const double *b, double *x, double *work)
{
    size_t n = c->n, k = c->k;
    double *t = work + n;
    if (k)
        wt_times(c->w, n, k, b, t);
    if (x != b)
        memcpy(x, b, n * sizeof *x);
    base_solve(c, x);
    if (k) {
        forward(c->s, k, t);
        backward(c->s, k, t);
        for (size_t i = 0; i < n; i++) {
            const double *row = c->w + i * k;
            double s = 0.0;
            for (size_t j = 0; j < k; j++)
                s += row[j] * t[j];
            x[i] -= s;
        }
    }
}

/* Base element (i, j) as given, whether or not factored. */
static double base_at(const lt_cov *c, size_t i, size_t j)
{
    if (!c->dense)
        return i == j ? c->diag[i] : 0.0;
    if (i == j)
        return c->factored ? c->dense_diag[i] : c->dense[i * c->n + i];
    if (c->factored && i > j) /* the lower triangle holds L: read the upper */
        return c->dense[j * c->n + i];
    return c->dense[i * c->n + j];
}

void lt_cov_diagonal(const lt_cov *c, double *out)
{
    for (size_t i = 0; i < c->n; i++) {
        double v = base_at(c, i, i);
        for (size_t m = 0; m < c->k; m++)
            v += c->u[i * c->k + m] * c->u[i * c->k + m];
        out[i] = v;
    }
}

void lt_cov_digest(const lt_cov *c, uint64_t *h)
{
    size_t n = c->n, k = c->k;
    int dense = c->dense != NULL;
    lt_digest_add(h, &n, sizeof n);
    lt_digest_add(h, &k, sizeof k);
    lt_digest_add(h, &dense, sizeof dense);
    for (size_t i = 0; i < n; i++)
        for (size_t j = i; j < (dense ? n : i + 1); j++) { /* a diagonal base: C_ii only */
            double v = base_at(c, i, j);
            lt_digest_add(h, &v, sizeof v);
        }
    if (k)
        lt_digest_add(h, c->u, n * k * sizeof *c->u);
}

void lt_cov_to_dense(const lt_cov *c, double *out)
{
    size_t n = c->n, k = c->k;
    for (size_t i = 0; i < n; i++)
        for (size_t j = 0; j < n; j++) {
            double v = base_at(c, i, j);
            for (size_t m = 0; m < k; m++)
                v += c->u[i * k + m] * c->u[j * k + m];
            out[i * n + j] = v;
        }
}

lt_cov *lt_cov_select(const lt_cov *c, size_t m, const size_t *idx, lt_error *err)
{
    lt_cov *s = lt_cov_alloc(m, err);
    if (!s)
        return NULL;
    if (c->dense) {
        s->dense = malloc(at_least1(m * m) * sizeof *s->dense);
        if (!s->dense)
            goto nomem;
        for (size_t a = 0; a < m; a++)
            for (size_t b = 0; b < m; b++)
                s->dense[a * m + b] = base_at(c, idx[a], idx[b]);
    } else {
        for (size_t a = 0; a < m; a++)
            s->diag[a] = c->diag[idx[a]];
    }
    if (c->k) {
        s->k = c->k;
        s->u = malloc(at_least1(m * c->k) * sizeof *s->u);
        if (!s->u)
            goto nomem;
        for (size_t a = 0; a < m; a++)
            memcpy(s->u + a * c->k, c->u + idx[a] * c->k, c->k * sizeof *s->u);
    }
    return s;
nomem:
    lt_cov_free(s);
    lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory selecting %zu objects", m);
    return NULL;
}

lt_cov *lt_cov_join(lt_cov *const *parts, size_t np, lt_error *err)
{
    size_t n = 0, k = 0;
    int dense = 0;
    for (size_t p = 0; p < np; p++)
        n += parts[p]->n, k += parts[p]->k, dense |= parts[p]->dense != NULL;
    lt_cov *c = lt_cov_alloc(n, err);
    if (!c)
        return NULL;
    /* a dense part makes the whole base dense (zero between the blocks);
     * otherwise the diagonals line up */
    if (dense && !(c->dense = calloc(at_least1(n * n), sizeof *c->dense)))
        goto nomem;
    if (k && !(c->u = calloc(at_least1(n * k), sizeof *c->u)))
        goto nomem;
    c->k = k;
    size_t row = 0, col = 0;
    for (size_t p = 0; p < np; p++) {
        const lt_cov *q = parts[p];
        for (size_t a = 0; a < q->n; a++) {
            if (dense)
                for (size_t b = 0; b < q->n; b++)
                    c->dense[(row + a) * n + row + b] = base_at(q, a, b);
            else
                c->diag[row + a] = q->diag[a];
            /* each part's modes are columns of their own, zero elsewhere */
            if (q->k)
                memcpy(c->u + (row + a) * k + col, q->u + a * q->k, q->k * sizeof *c->u);
        }
        row += q->n, col += q->k;
    }
    return c;
nomem:
    lt_cov_free(c);
    lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory joining covariances of %zu objects", n);
    return NULL;
}

/* Eigenvalues (ascending) of a symmetric k x k or n x n row-major matrix
 * a, destroyed. */
static int eigenvalues(double *a, size_t n, double *ev, lt_error *err)
{
    lapack_int info = LAPACKE_dsyevd(LAPACK_COL_MAJOR, 'N', 'U', (lapack_int)n, a,
                                     (lapack_int)n, ev);
    if (info != 0)
        return lt_error_set(err, LT_ENUMERIC, NULL, 0, "LAPACK dsyevd failed (%d)", (int)info);
    return LT_OK;
}

int lt_cov_inspect(const lt_cov *c, lt_cov_info *info, lt_error *err)
{
    size_t n = c->n, k = c->k;
    info->kind = lt_cov_kind_of(c);
    info->positive_definite = c->factored;
    info->method = "exact";
    info->min_eigenvalue = info->max_eigenvalue = info->condition = NAN;
    if (n == 0)
        return LT_OK;
    if (info->kind == LT_COV_DIAGONAL) {
        double lo = INFINITY, hi = -INFINITY;
        for (size_t i = 0; i < n; i++)
            lo = fmin(lo, c->diag[i]), hi = fmax(hi, c->diag[i]);
        info->min_eigenvalue = lo, info->max_eigenvalue = hi, info->condition = hi / lo;
        return LT_OK;
    }
    if (n <= LT_COV_EXACT_MAX) {
        double *a = malloc(n * n * sizeof *a), *ev = malloc(n * sizeof *ev);
        if (!a || !ev) {
            free(a);
            free(ev);
            return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        }
        lt_cov_to_dense(c, a);
        int rc = eigenvalues(a, n, ev, err);
        if (!rc) {
            info->min_eigenvalue = ev[0], info->max_eigenvalue = ev[n - 1];
            info->condition = ev[n - 1] / ev[0];
        }
        free(a);
        free(ev);
        return rc;
    }
    if (info->kind == LT_COV_STRUCTURED) {
        /* Weyl's inequality: eig(D + U U^T) lies in [min D, max D + max eig(U^T U)];
         * with D = d I the spectrum is exactly d and d + eig(U^T U). */
        double lo = INFINITY, hi = -INFINITY;
        for (size_t i = 0; i < n; i++)
            lo = fmin(lo, c->diag[i]), hi = fmax(hi, c->diag[i]);
        double *g = calloc(k * k, sizeof *g), *ev = malloc(k * sizeof *ev);
        if (!g || !ev) {
            free(g);
            free(ev);
            return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        }
        cblas_dgemm(CblasRowMajor, CblasTrans, CblasNoTrans, (int)k, (int)k, (int)n, 1.0, c->u,
                    (int)k, c->u, (int)k, 0.0, g, (int)k);
        int rc = eigenvalues(g, k, ev, err);
        if (!rc) {
            info->min_eigenvalue = lo;
            info->max_eigenvalue = hi + ev[k - 1];
            info->condition = info->max_eigenvalue / lo;
            info->method = lo == hi ? "exact" : "bound";
        }
        free(g);
        free(ev);
        return rc;
    }
    /* a large dense base: LAPACK's 1-norm condition estimate of the base */
    double anorm = 0.0;
    for (size_t j = 0; j < n; j++) {
        double s = 0.0;
        for (size_t i = 0; i < n; i++)
            s += fabs(base_at(c, i, j));
        anorm = fmax(anorm, s);
    }
    double rcond = NAN;
    lapack_int rc = LAPACKE_dpocon(LAPACK_COL_MAJOR, 'U', (lapack_int)n, c->dense,
                                   (lapack_int)n, anorm, &rcond);
    if (rc != 0)
        return lt_error_set(err, LT_ENUMERIC, NULL, 0, "LAPACK dpocon failed (%d)", (int)rc);
    info->condition = 1.0 / rcond;
    info->method = "estimate";
    return LT_OK;
}

int lt_cov_diagnose(const lt_cov *c, lt_cov_diagnosis *d, lt_error *err)
{
    size_t n = c->n;
    memset(d, 0, sizeof *d);
    d->n = n;
    d->pair_correlation = NAN;
    if (n == 0)
        return LT_OK;
    double *a = malloc(n * n * sizeof *a), *ev = malloc(n * sizeof *ev);
    double *v = malloc(n * sizeof *v);
    lapack_int *support = malloc(2 * sizeof *support);
    int rc = LT_OK;
    if (!a || !ev || !v || !support) {
        rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory for a %zu x %zu eigen-problem",
                          n, n);
        goto done;
    }
    /* every eigenvalue (to count the negative ones), then the eigenvector
     * of the smallest alone (dsyevr computes just the ones asked for) */
    lt_cov_to_dense(c, a);
    if ((rc = eigenvalues(a, n, ev, err)))
        goto done;
    double big = fmax(fabs(ev[0]), fabs(ev[n - 1]));
    d->max_eigenvalue = ev[n - 1];
    d->tolerance = (double)n * 2.220446049250313e-16 * big; /* n eps |lambda|max */
    for (size_t i = 0; i < n; i++) {
        d->n_negative += ev[i] < -d->tolerance;
        d->n_zero += fabs(ev[i]) <= d->tolerance;
    }
    d->neigen = n < LT_DIAG_EIGEN ? n : LT_DIAG_EIGEN;
    memcpy(d->eigen, ev, d->neigen * sizeof *ev);
    lt_cov_to_dense(c, a);
    lapack_int found = 0;
    double lowest;
    /* row-major symmetric a is its own column-major transpose */
    lapack_int info = LAPACKE_dsyevr(LAPACK_COL_MAJOR, 'V', 'I', 'U', (lapack_int)n, a,
                                     (lapack_int)n, 0.0, 0.0, 1, 1, 0.0, &found, &lowest, v,
                                     (lapack_int)n, support);
    if (info != 0 || found != 1) {
        rc = lt_error_set(err, LT_ENUMERIC, NULL, 0, "LAPACK dsyevr failed (%d)", (int)info);
        goto done;
    }
    /* the heaviest components, largest |v_i| first (ties: the earlier
     * object), by selection: LT_DIAG_TOP passes over n */
    d->ntop = n < LT_DIAG_TOP ? n : LT_DIAG_TOP;
    for (size_t t = 0; t < d->ntop; t++) {
        size_t best = n;
        for (size_t i = 0; i < n; i++) {
            int taken = 0;
            for (size_t q = 0; q < t; q++)
                taken |= d->top[q] == i;
            if (!taken && (best == n || fabs(v[i]) > fabs(v[best])))
                best = i;
        }
        d->top[t] = best;
    }
    /* an eigenvector's sign is arbitrary: fix it by the heaviest */
    double sign = v[d->top[0]] < 0 ? -1.0 : 1.0;
    for (size_t t = 0; t < d->ntop; t++)
        d->weight[t] = sign * v[d->top[t]];
    if (n >= 2) {
        size_t i = d->top[0], j = d->top[1];
        lt_cov_to_dense(c, a);
        d->pair_correlation = a[i * n + j] / sqrt(a[i * n + i] * a[j * n + j]);
    }
done:
    free(a);
    free(ev);
    free(v);
    free(support);
    return rc;
}

/* ---- a covariance whose diagonal changes: F + diag(d) ---- */

/*
 * For a diagonal base b the fixed part is F = diag(b) + U U^T and each
 * evaluation solves with diag(b + d) + U U^T by Woodbury (the capacitance
 * matrix I + U^T D^-1 U is rebuilt, N k^2, since D changed); for a dense
 * base the whole matrix F (modes folded in once, here) is copied, its
 * diagonal raised by d and factored by LAPACK dpotrf: N^3 / 3 a time.
 */
struct lt_dcov {
    size_t n, k;
    double *base; /* diagonal base b (n), or NULL */
    double *u;    /* n x k modes (diagonal base only), or NULL */
    double *full; /* n x n, row-major: F (dense base), or NULL */
};

lt_dcov *lt_dcov_alloc(const lt_cov *c, lt_error *err)
{
    lt_dcov *v = calloc(1, sizeof *v);
    if (!v)
        goto nomem;
    size_t n = c->n;
    v->n = n;
    if (c->dense) {
        if (!(v->full = malloc(at_least1(n * n) * sizeof *v->full)))
            goto nomem;
        lt_cov_to_dense(c, v->full);
        return v;
    }
    v->k = c->k;
    if (!(v->base = malloc(at_least1(n) * sizeof *v->base)))
        goto nomem;
    memcpy(v->base, c->diag, n * sizeof *v->base);
    if (c->k) {
        if (!(v->u = malloc(n * c->k * sizeof *v->u)))
            goto nomem;
        memcpy(v->u, c->u, n * c->k * sizeof *v->u);
    }
    return v;
nomem:
    lt_dcov_free(v);
    lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory for a %zu x %zu covariance", c->n, c->n);
    return NULL;
}

void lt_dcov_free(lt_dcov *v)
{
    if (!v)
        return;
    free(v->base);
    free(v->u);
    free(v->full);
    free(v);
}

int lt_dcov_dense(const lt_dcov *v) { return v->full != NULL; }

size_t lt_dcov_work_size(const lt_dcov *v)
{
    size_t n = v->n, k = v->k;
    return v->full ? n * n + n + 1 : n + n * k + k * k + k + 1;
}

int lt_dcov_solve(const lt_dcov *v, const double *d, const double *r, double *x, double *work,
                  double *chi2, double *logdet)
{
    size_t n = v->n, k = v->k;
    double q = 0.0, ld = 0.0;
    if (v->full) {
        double *a = work, *y = work + n * n;
        memcpy(a, v->full, n * n * sizeof *a);
        for (size_t i = 0; i < n; i++)
            a[i * n + i] += d[i];
        /* row-major lower = column-major upper, as in lt_cov_factor */
        if (LAPACKE_dpotrf(LAPACK_COL_MAJOR, 'U', (lapack_int)n, a, (lapack_int)n) != 0)
            return -1;
        memcpy(y, r, n * sizeof *y);
        forward(a, n, y);
        for (size_t i = 0; i < n; i++)
            q += y[i] * y[i], ld += 2.0 * log(a[i * n + i]);
        if (x) {
            backward(a, n, y);
            memcpy(x, y, n * sizeof *x);
        }
        *chi2 = q, *logdet = ld;
        return 0;
    }
    double *dr = work, *du = work + n, *kk = du + n * k, *t = kk + k * k;
    for (size_t i = 0; i < n; i++) {
        double di = v->base[i] + d[i];
        if (!(di > 0.0))
            return -1;
        dr[i] = r[i] / di;
        q += r[i] * dr[i];
        ld += log(di);
        for (size_t j = 0; j < k; j++)
            du[i * k + j] = v->u[i * k + j] / di;
    }
    if (k) {
        /* K = I + U^T D^-1 U, t = U^T D^-1 r; q -= t^T K^-1 t */
        for (size_t a = 0; a < k * k; a++)
            kk[a] = 0.0;
        for (size_t j = 0; j < k; j++)
            kk[j * k + j] = 1.0;
        cblas_dgemm(CblasRowMajor, CblasTrans, CblasNoTrans, (int)k, (int)k, (int)n, 1.0, v->u,
                    (int)k, du, (int)k, 1.0, kk, (int)k);
        if (LAPACKE_dpotrf(LAPACK_COL_MAJOR, 'U', (lapack_int)k, kk, (lapack_int)k) != 0)
            return -1;
        wt_times(v->u, n, k, dr, t);
        forward(kk, k, t);
        for (size_t j = 0; j < k; j++)
            q -= t[j] * t[j], ld += 2.0 * log(kk[j * k + j]);
        if (x) {
            backward(kk, k, t);
            for (size_t i = 0; i < n; i++) {
                double s = 0.0;
                for (size_t j = 0; j < k; j++)
                    s += du[i * k + j] * t[j];
                x[i] = dr[i] - s;
            }
        }
    } else if (x) {
        memcpy(x, dr, n * sizeof *x);
    }
    *chi2 = q, *logdet = ld;
    return 0;
}
