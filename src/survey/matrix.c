/*
 * Dense covariance files (text or FITS image) and systematic-mode tables.
 */
#include <ctype.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <fitsio.h>

#include "lantern/text.h"
#include "lantern/file.h"
#include "internal.h"

/* A dense matrix beyond this many bytes is refused with advice to use
 * modes: 2 GiB is a 16384 x 16384 matrix. */
#define DENSE_BYTES_MAX ((size_t)2 << 30)

int lt_path_is_fits(const char *path)
{
    size_t n = strcspn(path, "[");
    static const char *ext[] = {".fits", ".fit", ".fts", ".fits.gz", ".fit.gz", ".fz"};
    for (size_t i = 0; i < sizeof ext / sizeof ext[0]; i++) {
        size_t m = strlen(ext[i]);
        if (n >= m && strncasecmp(path + n - m, ext[i], m) == 0)
            return 1;
    }
    return 0;
}

static int too_big(const char *path, long line, size_t n, lt_error *err)
{
    return lt_error_set(err, LT_EINPUT, path, line,
                        "a dense %zu x %zu matrix needs %.1f GB, over the limit of %.1f GB; "
                        "give large systematics as modes (--modes)",
                        n, n, 8e-9 * (double)n * (double)n, 1e-9 * (double)DENSE_BYTES_MAX);
}

/* Symmetric within |a_ij - a_ji| <= 1e-6 sqrt(|a_ii a_jj|); then the mean of
 * the pair is kept, so later steps see an exactly symmetric matrix. The
 * tolerance allows for values printed to about seven digits. */
static int check_symmetric(const char *path, double *m, size_t n, const long *row_line,
                           lt_error *err)
{
    for (size_t i = 0; i < n; i++)
        for (size_t j = 0; j < i; j++) {
            double a = m[i * n + j], b = m[j * n + i];
            double tol = 1e-6 * sqrt(fabs(m[i * n + i] * m[j * n + j]));
            if (!(fabs(a - b) <= tol)) {
                char rows[96] = "";
                if (row_line)
                    snprintf(rows, sizeof rows, " (row %zu starts at line %ld, row %zu at line %ld)",
                             j + 1, row_line[j], i + 1, row_line[i]);
                return lt_error_set(err, LT_EINPUT, path, row_line ? row_line[i] : 0,
                                    "matrix is not symmetric: element (%zu,%zu) is %.10g but "
                                    "(%zu,%zu) is %.10g%s",
                                    i + 1, j + 1, a, j + 1, i + 1, b, rows);
            }
            m[i * n + j] = m[j * n + i] = 0.5 * (a + b);
        }
    return LT_OK;
}

static int matrix_read_fits(const char *path, double **out, size_t *nout, lt_error *err)
{
    fitsfile *f = NULL;
    int status = 0, naxis = 0, rc = LT_OK;
    long dims[3] = {0, 0, 0};
    double *m = NULL;
    if (lt_fits_check(path, err))
        return LT_EINPUT;
    if (fits_open_image(&f, path, READONLY, &status)) {
        char text[FLEN_STATUS];
        fits_get_errstatus(status, text);
        fits_clear_errmsg();
        lt_fits_close_failed(f);
        return lt_error_set(err, LT_EINPUT, path, 0, "cannot open a FITS image: %s", text);
    }
    fits_get_img_dim(f, &naxis, &status);
    if (!status && naxis == 2)
        fits_get_img_size(f, 2, dims, &status);
    if (status || naxis != 2 || dims[0] != dims[1] || dims[0] <= 0) {
        rc = lt_error_set(err, LT_EINPUT, path, 0,
                          "the image must be a square 2-D matrix (NAXIS = %d, %ld x %ld)",
                          naxis, dims[0], dims[1]);
        goto done;
    }
    size_t n = (size_t)dims[0];
    if (n > DENSE_BYTES_MAX / 8 / n) {
        rc = too_big(path, 0, n, err);
        goto done;
    }
    m = malloc(n * n * sizeof *m);
    if (!m) {
        rc = lt_error_set(err, LT_ENOMEM, path, 0, "out of memory");
        goto done;
    }
    double nul = NAN;
    int anynul = 0;
    fits_read_img(f, TDOUBLE, 1, (LONGLONG)(n * n), &nul, m, &anynul, &status);
    if (status) {
        char text[FLEN_STATUS];
        fits_get_errstatus(status, text);
        fits_clear_errmsg();
        rc = lt_error_set(err, LT_EINPUT, path, 0, "cannot read the image: %s", text);
        goto done;
    }
    for (size_t i = 0; i < n * n; i++)
        if (!isfinite(m[i])) {
            rc = lt_error_set(err, LT_EINPUT, path, 0,
                              "element (%zu,%zu) is not a finite number", i / n + 1,
                              i % n + 1);
            goto done;
        }
    if ((rc = check_symmetric(path, m, n, NULL, err)))
        goto done;
    *out = m, *nout = n;
    m = NULL;
done:
    free(m);
    status = 0;
    fits_close_file(f, &status);
    return rc;
}

int lt_matrix_read(const char *path, double **out, size_t *nout, lt_error *err)
{
    if (lt_path_is_fits(path))
        return matrix_read_fits(path, out, nout, err);
    char *buf = NULL;
    size_t size = 0;
    int rc = lt_file_read(path, LT_TABLE_FILE_MAX, &buf, &size, err);
    if (rc)
        return rc;
    double *m = NULL;
    long *row_line = NULL;
    if (size == 0 || lt_line_blank(buf)) {
        rc = lt_error_set(err, LT_EINPUT, path, 0, "file is empty");
        goto done;
    }
    if (memchr(buf, '\0', size)) {
        rc = lt_error_set(err, LT_EINPUT, path, 0,
                          "holds a NUL byte: not a text matrix (FITS images need a .fits name)");
        goto done;
    }
    /* Pass 1: the shape. Count values per content line (blank and '#'
     * lines are skipped). */
    char *copy = strdup(buf);
    if (!copy) {
        rc = lt_error_set(err, LT_ENOMEM, path, 0, "out of memory");
        goto done;
    }
    lt_lines it;
    lt_lines_start(&it, copy);
    size_t len, rows = 0, total = 0, first_count = 0, width_mismatch_line = 0;
    size_t first_width = 0;
    long first_line = 0, last_line = 0;
    char *s, *first_token = NULL;
    while ((s = lt_lines_next(&it, &len))) {
        char *q = s;
        while (*q == ' ' || *q == '\t')
            q++;
        if (!*q || *q == '#')
            continue;
        size_t count = 0;
        for (char *p = q; *p;) {
            while (*p == ' ' || *p == '\t' || *p == ',')
                p++;
            if (!*p)
                break;
            count++;
            if (!first_token)
                first_token = p;
            while (*p && *p != ' ' && *p != '\t' && *p != ',')
                p++;
        }
        if (rows == 0)
            first_count = count, first_line = it.line;
        else if (rows == 1)
            first_width = count;
        else if (count != first_width && !width_mismatch_line)
            width_mismatch_line = (size_t)it.line;
        rows++;
        total += count;
        last_line = it.line;
    }
    /* Form A: "N" alone on the first line, then N*N values. */
    long n_header = 0;
    int form_a = 0;
    if (first_count == 1) {
        char tok[32];
        size_t tl = strcspn(first_token, " \t,\r\n");
        if (tl < sizeof tok) {
            memcpy(tok, first_token, tl);
            tok[tl] = '\0';
            form_a = lt_parse_long(tok, 1, 100000000, &n_header) == LT_OK;
        }
    }
    free(copy);
    size_t n;
    if (form_a && !(rows == 1 && n_header == 1 && total == 1)) {
        n = (size_t)n_header;
        if (n && n > DENSE_BYTES_MAX / 8 / n) { /* n = 0 divided by zero (fuzzing) */
            rc = too_big(path, first_line, n, err);
            goto done;
        }
        if (total - 1 != n * n) {
            rc = lt_error_set(err, LT_EINPUT, path, last_line,
                              "the first line gives the size %zu, so %zu values should follow, "
                              "but the file %s %zu (it ends at line %ld)",
                              n, n * n, total - 1 < n * n ? "is truncated after" : "holds",
                              total - 1, last_line);
            goto done;
        }
    } else {
        /* Form B: N rows of N values. */
        n = rows;
        if (n && n > DENSE_BYTES_MAX / 8 / n) { /* n = 0 divided by zero (fuzzing) */
            rc = too_big(path, first_line, n, err);
            goto done;
        }
        if (first_count != n || (rows > 1 && first_width != n) || width_mismatch_line) {
            long bad = width_mismatch_line ? (long)width_mismatch_line : first_line;
            rc = lt_error_set(err, LT_EINPUT, path, bad,
                              "not a square matrix: expected either the size N on the first "
                              "line and N*N values, or N rows of N values; found %zu rows "
                              "and %zu values in all",
                              rows, total);
            goto done;
        }
    }
    m = malloc(n * n * sizeof *m);
    row_line = malloc(n * sizeof *row_line);
    if (!m || !row_line) {
        rc = lt_error_set(err, LT_ENOMEM, path, 0, "out of memory for a %zu x %zu matrix", n, n);
        goto done;
    }
    /* Pass 2: the values. */
    lt_lines_start(&it, buf);
    size_t k = 0;
    int skip = form_a;
    while ((s = lt_lines_next(&it, &len))) {
        for (char *p = s; *p;) {
            while (*p == ' ' || *p == '\t' || *p == ',')
                p++;
            if (!*p || *p == '#')
                break;
            char *tok = p;
            while (*p && *p != ' ' && *p != '\t' && *p != ',')
                p++;
            char save = *p;
            *p = '\0';
            if (skip) {
                skip = 0;
            } else {
                if (lt_parse_double(tok, &m[k])) {
                    rc = lt_error_set(err, LT_EINPUT, path, it.line,
                                      "'%s' is not a finite number (element %zu,%zu)", tok,
                                      k / n + 1, k % n + 1);
                    goto done;
                }
                if (k % n == 0)
                    row_line[k / n] = it.line;
                k++;
            }
            *p = save;
        }
    }
    if ((rc = check_symmetric(path, m, n, row_line, err)))
        goto done;
    *out = m, *nout = n;
    m = NULL;
done:
    free(row_line);
    free(m);
    free(buf);
    return rc;
}

/* ---- mode tables ---- */
int lt_modes_read(const char *path, size_t *nout, size_t *kout, double **uout,
                  double **ampout, char ***idsout, lt_error *err)
{
    char *buf = NULL;
    size_t size = 0;
    int rc = lt_file_read(path, LT_TABLE_FILE_MAX, &buf, &size, err);
    if (rc)
        return rc;
    char **fields = malloc(LT_TABLE_FIELDS_MAX * sizeof *fields);
    double *u = NULL, *amp = NULL;
    char **ids = NULL;
    size_t n = 0, cap = 0, k = 0;
    if (!fields) {
        rc = lt_error_set(err, LT_ENOMEM, path, 0, "out of memory");
        goto done;
    }
    if (size == 0 || memchr(buf, '\0', size)) {
        rc = lt_error_set(err, LT_EINPUT, path, 0,
                          size ? "holds a NUL byte: not a text table" : "file is empty");
        goto done;
    }
    lt_lines it;
    lt_lines_start(&it, buf);
    char *s;
    size_t len;
    while ((s = lt_lines_next(&it, &len)) && lt_line_blank(s))
        ;
    if (!s) {
        rc = lt_error_set(err, LT_EINPUT, path, 0, "file holds only blank lines");
        goto done;
    }
    while (*s == '#' || *s == ' ' || *s == '\t')
        s++;
    int csv = strchr(s, ',') != NULL;
    long h = lt_line_split(s, csv, fields, LT_TABLE_FIELDS_MAX);
    long header_line = it.line;
    if (h < 2) {
        rc = lt_error_set(err, LT_EINPUT, path, header_line, "%s",
                          h < 0 ? lt_split_error(h)
                                : "the header must name an id column and at least one mode");
        goto done;
    }
    k = (size_t)h - 1;
    amp = malloc(k * sizeof *amp);
    if (!amp) {
        rc = lt_error_set(err, LT_ENOMEM, path, 0, "out of memory");
        goto done;
    }
    int have_amp = 0;
    while ((s = lt_lines_next(&it, &len))) {
        if (lt_line_skipped(s))
            continue;
        long nf = lt_line_split(s, csv, fields, LT_TABLE_FIELDS_MAX);
        if (nf < 0) {
            rc = lt_error_set(err, LT_EINPUT, path, it.line, "%s", lt_split_error(nf));
            goto done;
        }
        if (nf != h) {
            rc = lt_error_set(err, LT_EINPUT, path, it.line,
                              "row has %ld fields but the header (line %ld) names %ld", nf,
                              header_line, h);
            goto done;
        }
        if (!have_amp) {
            if (strcmp(fields[0], "amplitude") != 0) {
                rc = lt_error_set(err, LT_EINPUT, path, it.line,
                                  "the first row after the header must start with "
                                  "'amplitude' and give each mode's amplitude");
                goto done;
            }
            for (size_t j = 0; j < k; j++)
                if (lt_parse_double(fields[j + 1], &amp[j]) || amp[j] < 0) {
                    rc = lt_error_set(err, LT_EINPUT, path, it.line,
                                      "amplitude of mode %zu is '%s': it must be a finite "
                                      "number >= 0",
                                      j + 1, fields[j + 1]);
                    goto done;
                }
            have_amp = 1;
            continue;
        }
        if (n == cap) {
            cap = cap ? 2 * cap : 1024;
            double *nu = realloc(u, cap * k * sizeof *nu);
            char **ni = realloc(ids, cap * sizeof *ni);
            if (nu)
                u = nu;
            if (ni)
                ids = ni;
            if (!nu || !ni) {
                rc = lt_error_set(err, LT_ENOMEM, path, it.line, "out of memory");
                goto done;
            }
        }
        ids[n] = strdup(fields[0]);
        if (!ids[n]) {
            rc = lt_error_set(err, LT_ENOMEM, path, it.line, "out of memory");
            goto done;
        }
        n++;
        for (size_t j = 0; j < k; j++)
            if (lt_parse_double(fields[j + 1], &u[(n - 1) * k + j])) {
                rc = lt_error_set(err, LT_EINPUT, path, it.line,
                                  "mode %zu: '%s' is not a finite number", j + 1,
                                  fields[j + 1]);
                goto done;
            }
    }
    if (!have_amp || n == 0) {
        rc = lt_error_set(err, LT_EINPUT, path, header_line,
                          have_amp ? "no object rows after the amplitude row"
                                   : "no amplitude row after the header");
        goto done;
    }
    *nout = n, *kout = k, *uout = u, *ampout = amp, *idsout = ids;
    u = NULL, amp = NULL, ids = NULL;
done:
    if (ids)
        for (size_t i = 0; i < n; i++)
            free(ids[i]);
    free(ids);
    free(u);
    free(amp);
    free(fields);
    free(buf);
    return rc;
}
