/*
 * Reading a survey: the table, the covariance terms, the cuts, and the
 * factorisation that proves the total covariance positive definite.
 */
#include <ctype.h>
#include <math.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <lapacke.h>

#include "lantern/text.h"
#include "lantern/file.h"
#include "internal.h"

void lt_survey_spec_init(lt_survey_spec *s)
{
    memset(s, 0, sizeof *s);
    s->zmin = NAN;
    s->zmax = NAN;
}

static void lc_free(lt_lightcurve *lc, size_t n)
{
    if (!lc)
        return;
    double *arr[] = {lc->x1,           lc->color,        lc->mass,         lc->err_mass, lc->err_x1,
                     lc->err_color,    lc->cov_mb_x1,    lc->cov_mb_color, lc->cov_x1_color,
                     lc->dz,           lc->calib_mu,     lc->err_calib_mu};
    for (size_t k = 0; k < sizeof arr / sizeof arr[0]; k++)
        free(arr[k]);
    free(lc->calibrator);
    if (lc->group)
        for (size_t i = 0; i < n; i++)
            free(lc->group[i]);
    free(lc->group);
    free(lc);
}

/* Where row i of a table is, for a message: its line (text) or "row N"
 * (FITS). */
static void row_where(const char *path, const lt_rawtable *t, size_t i, char *buf, size_t size,
                      long *line)
{
    *line = t->line[i];
    if (t->line[i] > 0)
        snprintf(buf, size, "%s", path);
    else
        snprintf(buf, size, "%s: row %ld", path, t->row[i]);
}

/* The checks of a light-curve table that take more than one column (a
 * calibrator's calib_mu, and each covariance within its two errors:
 * |correlation| <= 1, with 1e-6 of slack for rounded files) or text (the
 * group labels, which become parts of parameter names). */
static int check_lightcurve(const char *path, const lt_colmap *map, const lt_rawtable *t,
                            lt_error *err)
{
    const int(*pairs)[3] = lt_role_cov_pairs;
    for (size_t i = 0; i < t->n; i++) {
        char where[600];
        long line;
        row_where(path, t, i, where, sizeof where, &line);
        if (t->v[LT_ROLE_CALIBRATOR] && t->v[LT_ROLE_CALIBRATOR][i] == 1.0 &&
            !map->name[LT_ROLE_CALIB_MU])
            return lt_error_set(err, LT_EINPUT, where, line,
                                "a calibrator (column '%s' is 1) without calib_mu: map the "
                                "column of its external distance modulus (calib_mu=NAME)",
                                map->name[LT_ROLE_CALIBRATOR]);
        for (int k = 0; k < 2; k++) {
            int r = k ? LT_ROLE_ERR_CALIB_MU : LT_ROLE_CALIB_MU;
            if (t->v[LT_ROLE_CALIBRATOR] && t->v[LT_ROLE_CALIBRATOR][i] == 1.0 && t->v[r] &&
                isnan(t->v[r][i]))
                return lt_error_set(err, LT_EINPUT, where, line,
                                    "a calibrator (column '%s' is 1) whose %s (column '%s') is "
                                    "a placeholder: a calibrator needs a number there",
                                    map->name[LT_ROLE_CALIBRATOR], lt_role_name(r, map->kind),
                                    map->name[r]);
        }
        const char *g = t->text[LT_ROLE_GROUP - LT_ROLE_ID]
                            ? t->text[LT_ROLE_GROUP - LT_ROLE_ID][i] : NULL;
        if (g && (!*g || strlen(g) > LT_GROUP_NAME_MAX || strpbrk(g, "=:,. \t@")))
            return lt_error_set(err, LT_EINPUT, where, line,
                                "group label '%s' (column '%s'): labels name parameters "
                                "(sigma_int@GROUP), so they need 1 to %d characters and none "
                                "of = : , . @ or blanks",
                                g, map->name[LT_ROLE_GROUP], LT_GROUP_NAME_MAX);
        for (int k = 0; k < 3; k++) {
            if (!map->name[pairs[k][0]])
                continue;
            double c = t->v[pairs[k][0]][i], a = t->v[pairs[k][1]][i], b = t->v[pairs[k][2]][i];
            if (!(fabs(c) <= a * b * (1.0 + 1e-6)))
                return lt_error_set(err, LT_EINPUT, where, line,
                                    "column '%s' (%s) is %g, beyond the product of the two "
                                    "errors (%g x %g): a correlation above 1",
                                    map->name[pairs[k][0]],
                                    lt_role_name(pairs[k][0], map->kind), c, a, b);
        }
    }
    return LT_OK;
}

/* The light-curve columns of the kept rows idx[0..m-1] into s->lc (the
 * group strings moved over). */
static int take_lightcurve(const lt_colmap *map, lt_rawtable *t, const size_t *idx, size_t m,
                           lt_survey *s)
{
    lt_lightcurve *lc = s->lc = calloc(1, sizeof *lc);
    if (!lc)
        return -1;
    struct {
        int role;
        double **to;
    } cols[] = {{LT_ROLE_X1, &lc->x1},
                {LT_ROLE_COLOR, &lc->color},
                {LT_ROLE_MASS, &lc->mass},
                {LT_ROLE_ERR_MASS, &lc->err_mass},
                {LT_ROLE_ERR_X1, &lc->err_x1},
                {LT_ROLE_ERR_COLOR, &lc->err_color},
                {LT_ROLE_COV_MB_X1, &lc->cov_mb_x1},
                {LT_ROLE_COV_MB_COLOR, &lc->cov_mb_color},
                {LT_ROLE_COV_X1_COLOR, &lc->cov_x1_color},
                {LT_ROLE_DZ, &lc->dz},
                {LT_ROLE_CALIB_MU, &lc->calib_mu},
                {LT_ROLE_ERR_CALIB_MU, &lc->err_calib_mu}};
    for (size_t k = 0; k < sizeof cols / sizeof cols[0]; k++) {
        if (!map->name[cols[k].role])
            continue;
        double *v = *cols[k].to = malloc((m ? m : 1) * sizeof *v);
        if (!v)
            return -1;
        for (size_t a = 0; a < m; a++)
            v[a] = t->v[cols[k].role][idx[a]];
    }
    /* calib_mu means nothing without a calibrator column: no row is one */
    for (size_t a = 0; lc->calib_mu && !map->name[LT_ROLE_CALIBRATOR] && a < m; a++)
        lc->calib_mu[a] = NAN;
    if (map->name[LT_ROLE_CALIBRATOR]) {
        if (!(lc->calibrator = malloc((m ? m : 1) * sizeof *lc->calibrator)))
            return -1;
        for (size_t a = 0; a < m; a++) {
            lc->calibrator[a] = t->v[LT_ROLE_CALIBRATOR][idx[a]] == 1.0;
            lc->ncalibrators += (size_t)lc->calibrator[a];
            if (lc->calib_mu && !lc->calibrator[a]) /* only calibrators have one */
                lc->calib_mu[a] = NAN;
        }
    }
    char **g = t->text[LT_ROLE_GROUP - LT_ROLE_ID];
    if (g) {
        if (!(lc->group = calloc(m ? m : 1, sizeof *lc->group)))
            return -1;
        for (size_t a = 0; a < m; a++)
            lc->group[a] = g[idx[a]], g[idx[a]] = NULL;
    }
    return 0;
}

void lt_survey_free(lt_survey *s)
{
    if (!s)
        return;
    free(s->z);
    free(s->zhel);
    free(s->obs);
    free(s->err);
    if (s->id)
        for (size_t i = 0; i < s->n; i++)
            free(s->id[i]);
    free(s->id);
    free(s->row);
    lt_cov_free(s->cov);
    lc_free(s->lc, s->n);
    for (size_t i = 0; i < s->nwarnings; i++)
        free(s->warnings[i]);
    free(s->warnings);
    free(s->warning_ids);
    free(s);
}

int lt_survey_warn(lt_survey *s, const char *id, const char *fmt, ...)
{
    char buf[1024];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(buf, sizeof buf, fmt, ap);
    va_end(ap);
    char **w = realloc(s->warnings, (s->nwarnings + 1) * sizeof *w);
    if (!w)
        return LT_ENOMEM;
    s->warnings = w;
    const char **ids = realloc(s->warning_ids, (s->nwarnings + 1) * sizeof *ids);
    if (!ids)
        return LT_ENOMEM;
    s->warning_ids = ids;
    if (!(w[s->nwarnings] = strdup(buf)))
        return LT_ENOMEM;
    ids[s->nwarnings++] = id;
    return LT_OK;
}

static int cmp_str(const void *a, const void *b)
{
    return strcmp(*(char *const *)a, *(char *const *)b);
}

/* A sorted list of the ids in a file, one a line ('#' lines and blanks
 * skipped). */
typedef struct {
    size_t n;
    char **id;
    char *buf;
} idlist;

static void idlist_free(idlist *l)
{
    free(l->id);
    free(l->buf);
}

static int idlist_read(const char *path, idlist *l, lt_error *err)
{
    memset(l, 0, sizeof *l);
    size_t size;
    int rc = lt_file_read(path, LT_TABLE_FILE_MAX, &l->buf, &size, err);
    if (rc)
        return rc;
    lt_lines it;
    lt_lines_start(&it, l->buf);
    char *s;
    size_t len, cap = 0;
    while ((s = lt_lines_next(&it, &len))) {
        s = lt_text_trim(s);
        if (!*s || *s == '#')
            continue;
        if (l->n == cap) {
            cap = cap ? 2 * cap : 256;
            char **ni = realloc(l->id, cap * sizeof *ni);
            if (!ni) {
                idlist_free(l);
                return lt_error_set(err, LT_ENOMEM, path, it.line, "out of memory");
            }
            l->id = ni;
        }
        l->id[l->n++] = s;
    }
    if (l->n == 0) {
        idlist_free(l);
        return lt_error_set(err, LT_EINPUT, path, 0, "the id list is empty");
    }
    qsort(l->id, l->n, sizeof *l->id, cmp_str);
    return LT_OK;
}

static int idlist_has(const idlist *l, const char *id)
{
    return bsearch(&id, l->id, l->n, sizeof *l->id, cmp_str) != NULL;
}

/* The covariance terms given as files, over all n rows of the table. */
/* The calibrators' own covariance K (spec->calib_cov: one row and column
 * per calibrator, in table order, before cuts) as modes of c: with K =
 * V diag(l) V^T (LAPACK dsyevd), each eigenvector a mode of amplitude
 * sqrt(l) on the calibrator rows, so the covariance keeps its cheap
 * diagonal-plus-modes form (a dense block would cost a factorisation of
 * the whole matrix at every evaluation of a standardisation). */
static int add_calib_cov(const lt_survey_spec *spec, const lt_rawtable *t, lt_cov *c,
                         lt_error *err)
{
    const char *path = spec->calib_cov;
    if (!t->v[LT_ROLE_CALIBRATOR])
        return lt_error_set(err, LT_EINPUT, path, 0,
                            "a calibrators' covariance needs a calibrator column "
                            "(calibrator=NAME in --columns)");
    size_t n = t->n, ncal = 0;
    for (size_t i = 0; i < n; i++)
        ncal += t->v[LT_ROLE_CALIBRATOR][i] == 1.0;
    double *m = NULL, *ev = NULL, *u = NULL, *amp = NULL;
    size_t mn = 0;
    int rc = lt_matrix_read(path, &m, &mn, err);
    if (rc)
        return rc;
    if (mn != ncal) {
        rc = lt_error_set(err, LT_EINPUT, path, lt_path_is_fits(path) ? 0 : 1,
                          "the matrix is %zu x %zu but the table %s has %zu calibrators (one "
                          "row and column each, in table order)",
                          mn, mn, spec->data, ncal);
        goto done;
    }
    ev = malloc((ncal ? ncal : 1) * sizeof *ev);
    u = calloc(n && ncal ? n * ncal : 1, sizeof *u);
    amp = malloc((ncal ? ncal : 1) * sizeof *amp);
    if (!ev || !u || !amp) {
        rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        goto done;
    }
    double scale = 0.0;
    for (size_t i = 0; i < ncal; i++)
        scale = fmax(scale, fabs(m[i * ncal + i]));
    /* row-major symmetric m is its own column-major transpose */
    if (ncal && LAPACKE_dsyevd(LAPACK_COL_MAJOR, 'V', 'U', (lapack_int)ncal, m,
                               (lapack_int)ncal, ev) != 0) {
        rc = lt_error_set(err, LT_ENUMERIC, path, 0, "LAPACK dsyevd failed");
        goto done;
    }
    for (size_t k = 0; k < ncal; k++) {
        if (ev[k] < -1e-10 * scale) {
            rc = lt_error_set(err, LT_EINPUT, path, 0,
                              "not positive semi-definite: an eigenvalue is %g", ev[k]);
            goto done;
        }
        amp[k] = sqrt(fmax(ev[k], 0.0));
    }
    /* column k of m (column-major) is eigenvector k; calibrator a's row */
    size_t a = 0;
    for (size_t i = 0; i < n; i++) {
        if (t->v[LT_ROLE_CALIBRATOR][i] != 1.0)
            continue;
        for (size_t k = 0; k < ncal; k++)
            u[i * ncal + k] = m[k * ncal + a];
        a++;
    }
    rc = lt_cov_add_modes(c, ncal, u, amp, err);
done:
    free(m);
    free(ev);
    free(u);
    free(amp);
    return rc;
}

/* Say so when the diagonal of a covariance file (m, n x n) already holds
 * the statistical errors e[0..n-1] (rows with e = 0 skipped) that
 * diag(err^2) adds again: the rule of
 * LT_WARN_COV_DOUBLE_DIAG (lantern/survey.h). A sure sign, since
 * double-counted errors raise every sigma quietly (Pantheon 2018's binned
 * Omega_m: 0.0217 to 0.0256) and the fit still looks well. */
static void warn_double_diagonal(lt_survey *s, const char *path, const double *m,
                                 const double *e, size_t n, const char *fix)
{
    size_t rows = 0, reach = 0;
    for (size_t i = 0; i < n; i++) {
        if (!(e[i] > 0.0))
            continue;
        rows++;
        reach += m[i * n + i] >= (1.0 - LT_DOUBLE_DIAG_SLACK) * e[i] * e[i];
    }
    if (rows && (double)reach >= LT_DOUBLE_DIAG_SHARE * (double)rows)
        lt_survey_warn(s, LT_WARN_COV_DOUBLE_DIAG,
                       "%s: its diagonal reaches err^2 on %zu of %zu rows, so it holds the "
                       "statistical errors already and diag(err^2) adds them a second time "
                       "(every sigma comes out too large): %s. If it holds only systematics "
                       "that exceed the errors, silence this with --no-warn %s",
                       path, reach, rows, fix, LT_WARN_COV_DOUBLE_DIAG);
}

static int build_cov(const lt_survey_spec *spec, const lt_rawtable *t, lt_survey *s,
                     lt_cov **out, lt_error *err)
{
    size_t n = t->n;
    lt_cov *c = lt_cov_alloc(n, err);
    if (!c)
        return LT_ENOMEM;
    int rc = LT_OK;
    if (!spec->no_err_diag) {
        double *var = malloc(n * sizeof *var);
        if (!var) {
            lt_cov_free(c);
            return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        }
        for (size_t i = 0; i < n; i++) {
            var[i] = t->v[LT_ROLE_ERR][i] * t->v[LT_ROLE_ERR][i];
            /* a standardised table's calibrator: its distance's error too
             * (a light-curve table's standardisation adds it itself) */
            if (s->kind == LT_OBS_MAG && t->v[LT_ROLE_CALIBRATOR] &&
                t->v[LT_ROLE_CALIBRATOR][i] == 1.0 && t->v[LT_ROLE_ERR_CALIB_MU])
                var[i] += t->v[LT_ROLE_ERR_CALIB_MU][i] * t->v[LT_ROLE_ERR_CALIB_MU][i];
        }
        rc = lt_cov_add_diag(c, var, err);
        free(var);
    }
    for (size_t f = 0; !rc && f < spec->ncov; f++) {
        double *m = NULL;
        size_t mn = 0;
        rc = lt_matrix_read(spec->cov[f], &m, &mn, err);
        if (!rc && mn != n) /* the size is what line 1 gives: N, or a row of N values */
            rc = lt_error_set(err, LT_EINPUT, spec->cov[f], lt_path_is_fits(spec->cov[f]) ? 0 : 1,
                              "the matrix is %zu x %zu but the table %s has %zu objects "
                              "(the covariance must cover every row, before cuts)",
                              mn, mn, spec->data, n);
        if (!rc && !spec->no_err_diag)
            warn_double_diagonal(s, spec->cov[f], m, t->v[LT_ROLE_ERR], n,
                                 "give --no-err-diag (no_err_diag = true in a run file) so "
                                 "that the matrix alone makes the covariance");
        if (!rc)
            rc = lt_cov_add_dense(c, m, err);
        free(m);
    }
    if (!rc && spec->modes) {
        size_t mn = 0, k = 0;
        double *u = NULL, *amp = NULL;
        char **ids = NULL;
        rc = lt_modes_read(spec->modes, &mn, &k, &u, &amp, &ids, err);
        if (!rc && mn != n)
            rc = lt_error_set(err, LT_EINPUT, spec->modes, 0,
                              "the mode table has %zu object rows but the table %s has %zu",
                              mn, spec->data, n);
        /* Rows must follow the table: each label is the object's id or its
         * row number. Without an id column, ids in the mode table cannot be
         * checked; say so rather than refuse. */
        int unchecked = 0;
        for (size_t i = 0; !rc && i < n; i++) {
            char num[32];
            snprintf(num, sizeof num, "%zu", i + 1);
            long label;
            int numeric = lt_parse_long(ids[i], 1, 2147483647L, &label) == LT_OK;
            if (!t->text[0] && !numeric) {
                unchecked = 1;
                continue;
            }
            if (strcmp(ids[i], num) != 0 && !(t->text[0] && strcmp(ids[i], t->text[0][i]) == 0))
                rc = lt_error_set(err, LT_EINPUT, spec->modes, 0,
                                  "object row %zu is labelled '%s', but the table's object "
                                  "%zu is %s%s%s: rows must follow the table's order",
                                  i + 1, ids[i], i + 1, t->text[0] ? "'" : "row ",
                                  t->text[0] ? t->text[0][i] : num, t->text[0] ? "'" : "");
        }
        if (!rc && unchecked)
            lt_survey_warn(s, LT_WARN_MODES_ORDER,
                           "%s: the mode rows are labelled by id but the table has no id "
                           "column, so their order is not checked; map id=NAME to check it",
                           spec->modes);
        if (!rc)
            rc = lt_cov_add_modes(c, k, u, amp, err);
        if (ids)
            for (size_t i = 0; i < mn; i++)
                free(ids[i]);
        free(ids);
        free(u);
        free(amp);
    }
    if (!rc && spec->calib_cov)
        rc = add_calib_cov(spec, t, c, err);
    if (!rc && spec->no_err_diag && spec->ncov == 0 && !spec->modes)
        rc = lt_error_set(err, LT_EINPUT, "--no-err-diag", 0,
                          "leaves no covariance: give --cov with the full matrix, or drop "
                          "--no-err-diag");
    if (rc) {
        lt_cov_free(c);
        return rc;
    }
    *out = c;
    return LT_OK;
}

/* Which rows survive the cuts. */
static int select_rows(const lt_survey_spec *spec, const lt_rawtable *t, lt_survey *s,
                       size_t **out, size_t *m, lt_error *err)
{
    idlist keep = {0}, drop = {0};
    int rc = LT_OK;
    if ((spec->keep_ids || spec->drop_ids) && !t->text[0])
        return lt_error_set(err, LT_EINPUT, "--columns", 0,
                            "id lists need an id column: add id=NAME to --columns");
    if (spec->keep_ids && (rc = idlist_read(spec->keep_ids, &keep, err)))
        return rc;
    if (spec->drop_ids && (rc = idlist_read(spec->drop_ids, &drop, err))) {
        idlist_free(&keep);
        return rc;
    }
    size_t *idx = malloc((t->n ? t->n : 1) * sizeof *idx), k = 0;
    if (!idx) {
        rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        goto done;
    }
    for (size_t i = 0; i < t->n; i++) {
        double z = t->v[LT_ROLE_Z][i];
        /* calibrators are exempt from the redshift cuts: their distances
         * are external, and a Hubble-flow cut (zmin 0.023, say) would
         * drop every one of them */
        int calib = t->v[LT_ROLE_CALIBRATOR] && t->v[LT_ROLE_CALIBRATOR][i] == 1.0;
        if (!calib && !isnan(spec->zmin) && z < spec->zmin)
            continue;
        if (!calib && !isnan(spec->zmax) && z > spec->zmax)
            continue;
        if (spec->keep_ids && !idlist_has(&keep, t->text[0][i]))
            continue;
        if (spec->drop_ids && idlist_has(&drop, t->text[0][i]))
            continue;
        idx[k++] = i;
    }
    if (k == 0) {
        free(idx);
        rc = lt_error_set(err, LT_EINPUT, spec->data, 0,
                          "no objects are left after the cuts (%zu read)", t->n);
        goto done;
    }
    if (k < t->n)
        lt_survey_warn(s, LT_WARN_CUTS, "cuts keep %zu of the %zu objects read", k, t->n);
    *out = idx;
    *m = k;
done:
    idlist_free(&keep);
    idlist_free(&drop);
    return rc;
}

/* Say so when ids repeat: id lists and residual tables would be ambiguous. */
static void warn_duplicate_ids(lt_survey *s)
{
    if (!s->id || s->n < 2)
        return;
    char **sorted = malloc(s->n * sizeof *sorted);
    if (!sorted)
        return;
    memcpy(sorted, s->id, s->n * sizeof *sorted);
    qsort(sorted, s->n, sizeof *sorted, cmp_str);
    size_t dups = 0;
    const char *first = NULL;
    for (size_t i = 1; i < s->n; i++)
        if (strcmp(sorted[i], sorted[i - 1]) == 0) {
            if (!first)
                first = sorted[i];
            dups++;
        }
    if (dups)
        lt_survey_warn(s, LT_WARN_DUPLICATE_IDS, "%zu ids appear more than once (the first: '%s')",
                       dups, first);
    free(sorted);
}

static lt_survey *read_joined(const lt_survey_spec *spec, lt_error *err);

/* Factor s's covariance; a failure says which matrices made it. */
int lt_survey_factor(const lt_survey_spec *spec, lt_survey *s, lt_error *err)
{
    int rc = lt_cov_factor(s->cov, err);
    if (!rc)
        return LT_OK;
    /* a matrix that is not positive definite (rather than a failure of
     * memory or LAPACK) gets the way to its diagnosis */
    const char *hint = rc == LT_EINPUT ? LT_SURVEY_INSPECT_HINT : "";
    if (spec->nmore) {
        char msg[LT_ERROR_MSG_MAX];
        snprintf(msg, sizeof msg, "%s", err ? err->msg : "");
        return lt_error_set(err, rc, spec->cross_cov ? spec->cross_cov : spec->data, 0,
                            "%s; the total is the %zu tables' own covariances%s%s", msg,
                            spec->nmore + 1,
                            spec->cross_cov ? " plus this cross-covariance" : "", hint);
    }
    /* Say which matrix and which object, so the user can look. */
    char what[512] = "diag(err^2)";
    if (spec->no_err_diag)
        what[0] = '\0';
    for (size_t f = 0; f < spec->ncov; f++)
        snprintf(what + strlen(what), sizeof what - strlen(what), "%s%s", what[0] ? " + " : "",
                 spec->cov[f]);
    if (spec->modes)
        snprintf(what + strlen(what), sizeof what - strlen(what), "%smodes %s",
                 what[0] ? " + " : "", spec->modes);
    char msg[LT_ERROR_MSG_MAX + sizeof what + sizeof LT_SURVEY_INSPECT_HINT + 32];
    snprintf(msg, sizeof msg, "%s; the total is %s%s", err ? err->msg : "", what, hint);
    return lt_error_set(err, rc, spec->ncov ? spec->cov[0] : spec->data, 0, "%s", msg);
}

static lt_survey *read_table(const lt_survey_spec *spec, lt_error *err);

lt_survey *lt_survey_read_unfactored(const lt_survey_spec *spec, lt_error *err)
{
    if (spec->nmore)
        return read_joined(spec, err);
    if (spec->cross_cov) {
        lt_error_set(err, LT_EINPUT, spec->cross_cov, 0,
                     "a cross-covariance joins several tables, and there is one: give it "
                     "with --cov instead");
        return NULL;
    }
    return read_table(spec, err);
}

lt_survey *lt_survey_read(const lt_survey_spec *spec, lt_error *err)
{
    lt_survey *s = lt_survey_read_unfactored(spec, err);
    if (s && lt_survey_factor(spec, s, err)) {
        lt_survey_free(s);
        return NULL;
    }
    return s;
}

/* One table, its covariance built and cut but not factored. */
static lt_survey *read_table(const lt_survey_spec *spec, lt_error *err)
{
    if (!spec->data) {
        lt_error_set(err, LT_EINPUT, "--data", 0, "no data table given (--data FILE)");
        return NULL;
    }
    lt_colmap map;
    if (lt_colmap_parse(spec->columns, &map, err))
        return NULL;
    if (!map.name[LT_ROLE_ERR] && !spec->no_err_diag) {
        lt_error_set(err, LT_EINPUT, "--columns", 0,
                     map.kind == LT_OBS_MB
                         ? "map the error column of mb (err_mb=NAME), or give --no-err-diag "
                           "with a --cov that holds the statistical errors"
                         : "map the error column (err=NAME), or give --no-err-diag with a "
                           "--cov that holds the statistical errors");
        lt_colmap_free(&map);
        return NULL;
    }
    lt_rawtable t;
    int rc = lt_path_is_fits(spec->data) ? lt_table_read_fits(spec->data, &map, &t, err)
                                         : lt_table_read_text(spec->data, &map, &t, err);
    if (rc) {
        lt_colmap_free(&map);
        return NULL;
    }
    lt_survey *s = calloc(1, sizeof *s);
    lt_cov *full = NULL;
    size_t *idx = NULL, m = 0;
    if (!s) {
        lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        goto fail;
    }
    /* a standardised (mag) table may carry calibrators: their columns
     * live in s->lc too, the light-curve ones left NULL */
    int has_lc = map.kind == LT_OBS_MB || map.name[LT_ROLE_CALIBRATOR];
    if (has_lc && check_lightcurve(spec->data, &map, &t, err))
        goto fail;
    s->kind = map.kind;
    s->n_read = t.n;
    if (t.warning)
        lt_survey_warn(s, LT_WARN_HEADER_EXTRA, "%s", t.warning); /* the only one */
    if (!map.name[LT_ROLE_ZHEL])
        lt_survey_warn(s, LT_WARN_NO_ZHEL,
                       "no zhel column: heliocentric redshifts are taken equal to z");
    if (build_cov(spec, &t, s, &full, err))
        goto fail;
    if (select_rows(spec, &t, s, &idx, &m, err))
        goto fail;

    s->n = m;
    s->z = malloc(m * sizeof *s->z);
    s->zhel = malloc(m * sizeof *s->zhel);
    s->obs = malloc(m * sizeof *s->obs);
    s->row = malloc(m * sizeof *s->row);
    if (map.name[LT_ROLE_ERR])
        s->err = malloc(m * sizeof *s->err);
    if (t.text[0])
        s->id = calloc(m, sizeof *s->id);
    if (!s->z || !s->zhel || !s->obs || !s->row || (map.name[LT_ROLE_ERR] && !s->err) ||
        (t.text[0] && !s->id)) {
        lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        goto fail;
    }
    for (size_t a = 0; a < m; a++) {
        size_t i = idx[a];
        s->z[a] = t.v[LT_ROLE_Z][i];
        s->zhel[a] = map.name[LT_ROLE_ZHEL] ? t.v[LT_ROLE_ZHEL][i] : t.v[LT_ROLE_Z][i];
        s->obs[a] = t.v[LT_ROLE_OBS][i];
        if (s->err)
            s->err[a] = t.v[LT_ROLE_ERR][i];
        s->row[a] = t.row[i];
        if (s->id) { /* move the strings over */
            s->id[a] = t.text[0][i];
            t.text[0][i] = NULL;
        }
    }
    if (has_lc && take_lightcurve(&map, &t, idx, m, s)) {
        lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        goto fail;
    }
    warn_duplicate_ids(s);
    s->cov = m == t.n ? full : lt_cov_select(full, m, idx, err);
    if (!s->cov)
        goto fail;
    if (s->cov != full)
        lt_cov_free(full);
    full = NULL;
    free(idx);
    lt_rawtable_free(&t);
    lt_colmap_free(&map);
    return s;
fail:
    free(idx);
    lt_cov_free(full);
    lt_survey_free(s);
    lt_rawtable_free(&t);
    lt_colmap_free(&map);
    return NULL;
}

/* ---- several tables as one survey ---- */

void lt_survey_spec_name(const lt_survey_spec *spec, char *buf, size_t size)
{
    if (spec->name) {
        snprintf(buf, size, "%s", spec->name);
        return;
    }
    const char *path = spec->data ? spec->data : "";
    const char *base = strrchr(path, '/') ? strrchr(path, '/') + 1 : path;
    size_t n = strcspn(base, ".[");
    snprintf(buf, size, "%.*s", (int)n, base);
}

/* Concatenate the parts' arrays of doubles at offset off of lt_lightcurve
 * (or of lt_survey when lc is 0) into *out; a part without the array gives
 * fill. NULL *out when no part has it. */
static int join_doubles(lt_survey *const *part, size_t np, size_t n, size_t off, int lc,
                        double fill, double **out)
{
    *out = NULL;
    int any = 0;
    /* a part without light-curve columns (a standardised table without
     * calibrators) has none of the arrays */
#define ARRAY(p) (lc && !part[p]->lc ? NULL \
                  : *(double **)((char *)(lc ? (void *)part[p]->lc : (void *)part[p]) + off))
    for (size_t p = 0; p < np; p++)
        any |= ARRAY(p) != NULL;
    if (!any)
        return 0;
    if (!(*out = malloc((n ? n : 1) * sizeof **out)))
        return -1;
    size_t i = 0;
    for (size_t p = 0; p < np; p++) {
        const double *a = ARRAY(p);
        for (size_t k = 0; k < part[p]->n; k++)
            (*out)[i++] = a ? a[k] : fill;
    }
    return 0;
#undef ARRAY
}

/* The joined light-curve columns of the parts into s->lc: rows keep their
 * group label, else take their table's name. */
static int join_lightcurve(lt_survey *const *part, char (*name)[256],
                           size_t np, lt_survey *s)
{
    lt_lightcurve *lc = s->lc = calloc(1, sizeof *lc);
    if (!lc)
        return -1;
    static const struct {
        size_t off;
        double fill;
    } cols[] = {{offsetof(lt_lightcurve, x1), 0},           {offsetof(lt_lightcurve, color), 0},
                {offsetof(lt_lightcurve, mass), 0},         {offsetof(lt_lightcurve, err_mass), 0},
                {offsetof(lt_lightcurve, err_x1), 0},       {offsetof(lt_lightcurve, err_color), 0},
                {offsetof(lt_lightcurve, cov_mb_x1), 0},    {offsetof(lt_lightcurve, cov_mb_color), 0},
                {offsetof(lt_lightcurve, cov_x1_color), 0}, {offsetof(lt_lightcurve, dz), 0},
                {offsetof(lt_lightcurve, calib_mu), NAN},   {offsetof(lt_lightcurve, err_calib_mu), NAN}};
    for (size_t c = 0; c < sizeof cols / sizeof cols[0]; c++)
        if (join_doubles(part, np, s->n, cols[c].off, 1, cols[c].fill,
                         (double **)((char *)lc + cols[c].off)))
            return -1;
    size_t m = s->n ? s->n : 1;
    if (!(lc->group = calloc(m, sizeof *lc->group)))
        return -1;
    int cal = 0;
    for (size_t p = 0; p < np; p++)
        cal |= part[p]->lc && part[p]->lc->calibrator;
    if (cal && !(lc->calibrator = calloc(m, sizeof *lc->calibrator)))
        return -1;
    size_t i = 0;
    for (size_t p = 0; p < np; p++) {
        const lt_lightcurve *q = part[p]->lc;
        for (size_t k = 0; k < part[p]->n; k++, i++) {
            if (!(lc->group[i] = strdup(q && q->group ? q->group[k] : name[p])))
                return -1;
            if (q && q->calibrator)
                lc->calibrator[i] = q->calibrator[k];
        }
        lc->ncalibrators += q ? q->ncalibrators : 0;
    }
    return 0;
}

/* The cross-covariance file over every row of every table before cuts
 * (offsets first[p] into it), at the kept rows, added to s->cov. */
static int add_cross(const lt_survey_spec *spec, lt_survey *const *part, size_t np,
                     lt_survey *s, lt_error *err)
{
    double *m = NULL, *x = NULL;
    size_t mn = 0, total = 0, first[LT_SURVEY_MAX_PARTS + 1];
    for (size_t p = 0; p < np; p++)
        first[p] = total, total += part[p]->n_read;
    int rc = lt_matrix_read(spec->cross_cov, &m, &mn, err);
    if (rc)
        return rc;
    if (mn != total) {
        /* the size is what line 1 gives: N, or a row of N values */
        rc = lt_error_set(err, LT_EINPUT, spec->cross_cov, lt_path_is_fits(spec->cross_cov) ? 0 : 1,
                          "the matrix is %zu x %zu but the %zu joined tables have %zu rows (the "
                          "cross-covariance covers every row of every table, in order, before "
                          "cuts)",
                          mn, mn, np, total);
        goto done;
    }
    size_t n = s->n, *at = malloc((n ? n : 1) * sizeof *at);
    if (!at || !(x = malloc((n ? n * n : 1) * sizeof *x))) {
        free(at);
        rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        goto done;
    }
    size_t i = 0;
    for (size_t p = 0; p < np; p++)
        for (size_t k = 0; k < part[p]->n; k++)
            at[i++] = first[p] + (size_t)part[p]->row[k] - 1;
    for (size_t a = 0; a < n; a++)
        for (size_t b = 0; b < n; b++)
            x[a * n + b] = m[at[a] * mn + at[b]];
    /* the errors of the rows whose table adds diag(err^2), 0 for the
     * others (which the double-diagonal check then skips); when a table
     * has no err column the joined survey keeps none, and the check is
     * left out */
    double *e = s->err ? malloc((n ? n : 1) * sizeof *e) : NULL;
    for (size_t p = 0, a = 0; e && p < np; p++)
        for (size_t k = 0; k < part[p]->n; k++, a++)
            e[a] = (p ? spec->more[p - 1].no_err_diag : spec->no_err_diag) ? 0.0 : s->err[a];
    if (e)
        warn_double_diagonal(s, spec->cross_cov, x, e, n,
                             "give no_err_diag = true in each [survey.NAME] (--no-err-diag "
                             "after each --data) so that the tables add no diag(err^2) of their "
                             "own");
    free(e);
    free(at);
    rc = lt_cov_add_dense(s->cov, x, err);
done:
    free(m);
    free(x);
    return rc;
}

static lt_survey *read_joined(const lt_survey_spec *spec, lt_error *err)
{
    size_t np = 1 + spec->nmore;
    if (np > LT_SURVEY_MAX_PARTS) {
        lt_error_set(err, LT_EINPUT, spec->more[LT_SURVEY_MAX_PARTS - 1].data, 0,
                     "more than %d tables to join", LT_SURVEY_MAX_PARTS);
        return NULL;
    }
    const lt_survey_spec *sp[LT_SURVEY_MAX_PARTS];
    lt_survey *part[LT_SURVEY_MAX_PARTS] = {NULL};
    char name[LT_SURVEY_MAX_PARTS][256];
    lt_cov *covs[LT_SURVEY_MAX_PARTS];
    lt_survey *s = NULL;
    for (size_t p = 0; p < np; p++)
        sp[p] = p ? &spec->more[p - 1] : spec;
    for (size_t p = 0; p < np; p++) {
        if (!(part[p] = read_table(sp[p], err)))
            goto fail;
        covs[p] = part[p]->cov;
        char nm[256];
        lt_survey_spec_name(sp[p], nm, sizeof nm);
        const lt_lightcurve *lc = part[p]->lc;
        /* a table's name heads its [survey.NAME] section in the settings
         * a resume reads, and labels the group of light-curve rows
         * without a group column (sigma_int@NAME) */
        int name_ok = *nm && strlen(nm) <= LT_GROUP_NAME_MAX;
        for (const char *c = nm; *c; c++)
            name_ok &= isalnum((unsigned char)*c) || *c == '_' || *c == '-';
        if (!name_ok) {
            lt_error_set(err, LT_EINPUT, sp[p]->data, 0,
                         "the table's name '%s' (it names the table's section in the settings "
                         "and its rows' group, sigma_int@NAME) needs 1 to %d letters, digits, "
                         "'_' or '-': name it (--table-name NAME, or [survey.NAME] in a run "
                         "file)",
                         nm, LT_GROUP_NAME_MAX);
            goto fail;
        }
        memcpy(name[p], nm, sizeof nm);
        for (size_t q = 0; q < p; q++)
            if (!strcmp(name[q], name[p])) {
                lt_error_set(err, LT_EINPUT, sp[p]->data, 0,
                             "two joined tables are named '%s' (%s and %s): name them apart "
                             "(--table-name NAME, or [survey.NAME] sections in a run file)",
                             nm, sp[q]->data, sp[p]->data);
                goto fail;
            }
        if (part[p]->kind != part[0]->kind) {
            lt_error_set(err, LT_EINPUT, sp[p]->data, 0,
                         "its observable is %s but %s's is %s: tables joined into one survey "
                         "share their observable",
                         lt_obs_name(part[p]->kind), sp[0]->data, lt_obs_name(part[0]->kind));
            goto fail;
        }
        if (lc && lc->x1 && ((lc->mass != NULL) != (part[0]->lc->mass != NULL) ||
                   (lc->err_mass != NULL) != (part[0]->lc->err_mass != NULL))) {
            lt_error_set(err, LT_EINPUT, sp[p]->data, 0,
                         "host masses (mass, err_mass) are mapped for some of the joined tables "
                         "and not for others: the host-mass step needs them in every table or "
                         "in none");
            goto fail;
        }
    }
    if (!(s = calloc(1, sizeof *s))) {
        lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        goto fail;
    }
    s->kind = part[0]->kind;
    int all_err = 1, all_id = 1, any_lc = 0;
    for (size_t p = 0; p < np; p++) {
        s->n += part[p]->n, s->n_read += part[p]->n_read;
        all_err &= part[p]->err != NULL, all_id &= part[p]->id != NULL;
        any_lc |= part[p]->lc != NULL;
        for (size_t w = 0; w < part[p]->nwarnings; w++)
            lt_survey_warn(s, part[p]->warning_ids[w], "%s: %s", name[p], part[p]->warnings[w]);
    }
    size_t m = s->n ? s->n : 1;
    if (join_doubles(part, np, s->n, offsetof(lt_survey, z), 0, 0, &s->z) ||
        join_doubles(part, np, s->n, offsetof(lt_survey, zhel), 0, 0, &s->zhel) ||
        join_doubles(part, np, s->n, offsetof(lt_survey, obs), 0, 0, &s->obs) ||
        (all_err && join_doubles(part, np, s->n, offsetof(lt_survey, err), 0, 0, &s->err)) ||
        !(s->row = malloc(m * sizeof *s->row)) ||
        (all_id && !(s->id = calloc(m, sizeof *s->id))) ||
        (any_lc && join_lightcurve(part, name, np, s)))
        goto nomem;
    size_t i = 0;
    for (size_t p = 0; p < np; p++)
        for (size_t k = 0; k < part[p]->n; k++, i++) {
            s->row[i] = part[p]->row[k];
            if (s->id) { /* moved over */
                s->id[i] = part[p]->id[k];
                part[p]->id[k] = NULL;
            }
        }
    warn_duplicate_ids(s);
    if (!(s->cov = lt_cov_join(covs, np, err)) ||
        (spec->cross_cov && add_cross(spec, part, np, s, err)))
        goto fail;
    for (size_t p = 0; p < np; p++)
        lt_survey_free(part[p]);
    return s;
nomem:
    lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
fail:
    for (size_t p = 0; p < np; p++)
        lt_survey_free(part[p]);
    lt_survey_free(s);
    return NULL;
}
