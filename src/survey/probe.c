/*
 * Probe tables: a few measurements with their covariance, as the BAO and
 * CMB terms read them (see lantern/survey.h).
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>

#include "lantern/file.h"
#include "lantern/survey.h"
#include "lantern/text.h"

#define PROBE_FILE_MAX (1u << 20) /* a table of a few rows; refuse anything huge */
#define PROBE_FIELDS 16

void lt_probe_free(lt_probe *p)
{
    if (!p)
        return;
    free(p->path);
    free(p->cov_path);
    free(p->quantity);
    free(p->z);
    free(p->value);
    free(p->rd_fid);
    free(p->err);
    free(p->line);
    free(p->cov);
    free(p->chol);
    free(p);
}

/* The index of name among the header's fields, or -1. */
static int column(char **head, long n, const char *name)
{
    for (long i = 0; i < n; i++)
        if (!strcmp(head[i], name))
            return (int)i;
    return -1;
}

static int grow(lt_probe *p, size_t cap)
{
    char(*q)[LT_PROBE_NAME] = realloc(p->quantity, cap * sizeof *q);
    if (q)
        p->quantity = q;
    long *line = q ? realloc(p->line, cap * sizeof *line) : NULL;
    if (line)
        p->line = line;
    double **slot[4] = {&p->z, &p->value, &p->rd_fid, &p->err};
    for (int k = 0; k < 4 && line; k++) {
        double *v = realloc(*slot[k], cap * sizeof *v);
        if (!v)
            return LT_ENOMEM;
        *slot[k] = v;
    }
    return line ? LT_OK : LT_ENOMEM;
}

/* The rows of path into p: a header naming quantity and value (and
 * optionally z, err, rd_fid; other columns are ignored), then one row per
 * measurement. */
static int read_table(lt_probe *p, const char *path, const char *cov_path, char *buf,
                      lt_error *err)
{
    lt_lines it;
    lt_lines_start(&it, buf);
    char *line, *f[PROBE_FIELDS];
    size_t len, cap = 0;
    long nhead = 0, head_line = 0;
    int cq = -1, cv = -1, cz = -1, ce = -1, cr = -1;
    while ((line = lt_lines_next(&it, &len))) {
        char *s = lt_text_trim(line);
        if (!*s || *s == '#')
            continue;
        long nf = lt_line_split(s, 1, f, PROBE_FIELDS);
        if (nf < 0)
            return nf == LT_SPLIT_TOO_MANY
                       ? lt_error_set(err, LT_EINPUT, path, it.line, "more than %d columns",
                                      PROBE_FIELDS)
                       : lt_error_set(err, LT_EINPUT, path, it.line, "%s", lt_split_error(nf));
        if (!nhead) { /* the header */
            nhead = nf, head_line = it.line;
            cq = column(f, nf, "quantity"), cv = column(f, nf, "value");
            cz = column(f, nf, "z"), ce = column(f, nf, "err"), cr = column(f, nf, "rd_fid");
            if (cq < 0 || cv < 0)
                return lt_error_set(err, LT_EINPUT, path, it.line,
                                    "the header must name the columns quantity and value "
                                    "(and z, err, rd_fid where they apply)");
            continue;
        }
        if (nf != nhead)
            return lt_error_set(err, LT_EINPUT, path, it.line,
                                "%ld fields, but the header (line %ld) names %ld", nf,
                                head_line, nhead);
        if (p->n == cap && grow(p, cap = cap ? 2 * cap : 16))
            return lt_error_set(err, LT_ENOMEM, path, it.line, "out of memory");
        size_t i = p->n;
        if (strlen(f[cq]) >= LT_PROBE_NAME || !f[cq][0])
            return lt_error_set(err, LT_EINPUT, path, it.line, "quantity '%s' is not a name",
                                f[cq]);
        strcpy(p->quantity[i], f[cq]);
        p->z[i] = p->err[i] = p->rd_fid[i] = NAN;
        const struct {
            int col;
            double *to;
            const char *what;
        } num[] = {{cv, &p->value[i], "value"}, {cz, &p->z[i], "z"},
                   {ce, &p->err[i], "err"},     {cr, &p->rd_fid[i], "rd_fid"}};
        /* value must be there; z, err and rd_fid may be left empty (NaN) */
        for (size_t k = 0; k < sizeof num / sizeof num[0]; k++)
            if (num[k].col >= 0 && (k == 0 || f[num[k].col][0]) &&
                lt_parse_double(f[num[k].col], num[k].to))
                return lt_error_set(err, LT_EINPUT, path, it.line,
                                    "%s '%s' is not a finite number", num[k].what,
                                    f[num[k].col]);
        if (!isnan(p->z[i]) && !(p->z[i] > 0.0))
            return lt_error_set(err, LT_EINPUT, path, it.line, "z must be > 0, got %g",
                                p->z[i]);
        if (ce >= 0 && !cov_path && !(p->err[i] > 0.0))
            return lt_error_set(err, LT_EINPUT, path, it.line,
                                "err must be > 0 (or give a covariance file), got %g",
                                p->err[i]);
        if (!isnan(p->rd_fid[i]) && !(p->rd_fid[i] > 0.0))
            return lt_error_set(err, LT_EINPUT, path, it.line, "rd_fid must be > 0, got %g",
                                p->rd_fid[i]);
        p->line[i] = it.line;
        p->n++;
    }
    if (!nhead || !p->n)
        return lt_error_set(err, LT_EINPUT, path, 0, "no measurements (a header and rows)");
    p->has_z = cz >= 0, p->has_err = ce >= 0;
    return LT_OK;
}

int lt_probe_read(const char *path, const char *cov_path, lt_probe **out, lt_error *err)
{
    *out = NULL;
    lt_probe *p = calloc(1, sizeof *p);
    char *buf = NULL;
    size_t size;
    int rc = p ? LT_OK : lt_error_set(err, LT_ENOMEM, path, 0, "out of memory");
    if (!rc && !(p->path = strdup(path)))
        rc = lt_error_set(err, LT_ENOMEM, path, 0, "out of memory");
    if (!rc)
        rc = lt_file_read(path, PROBE_FILE_MAX, &buf, &size, err);
    if (!rc)
        rc = read_table(p, path, cov_path, buf, err);
    free(buf);
    if (!rc && cov_path) {
        size_t n = 0;
        if (!(p->cov_path = strdup(cov_path)))
            rc = lt_error_set(err, LT_ENOMEM, cov_path, 0, "out of memory");
        else if (!(rc = lt_matrix_read(cov_path, &p->cov, &n, err)) && n != p->n)
            rc = lt_error_set(err, LT_EINPUT, cov_path, 0,
                              "a %zu x %zu covariance for the %zu measurements of %s", n, n,
                              p->n, path);
    } else if (!rc && !p->has_err)
        rc = lt_error_set(err, LT_EINPUT, path, 0,
                          "no err column and no covariance file: give one of them");
    if (!rc && !p->cov) { /* diagonal from the errors */
        if (!(p->cov = calloc(p->n * p->n, sizeof *p->cov)))
            rc = lt_error_set(err, LT_ENOMEM, path, 0, "out of memory");
        for (size_t i = 0; !rc && i < p->n; i++)
            p->cov[i * p->n + i] = p->err[i] * p->err[i];
    }
    if (!rc) { /* positive definite, or refused now (lt_matrix_read refuses an asymmetric one) */
        const char *where = cov_path ? cov_path : path;
        size_t n = p->n;
        if (!(p->chol = malloc(n * n * sizeof *p->chol)))
            rc = lt_error_set(err, LT_ENOMEM, where, 0, "out of memory");
        else {
            memcpy(p->chol, p->cov, n * n * sizeof *p->chol);
            gsl_matrix_view v = gsl_matrix_view_array(p->chol, n, n);
            if (gsl_linalg_cholesky_decomp1(&v.matrix) != GSL_SUCCESS)
                rc = lt_error_set(err, LT_EINPUT, where, 0,
                                  "the covariance is not positive definite");
        }
    }
    if (rc) {
        lt_probe_free(p);
        return rc;
    }
    *out = p;
    return LT_OK;
}
