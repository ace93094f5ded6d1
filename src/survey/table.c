/*
 * Survey tables: text (whitespace or CSV) and FITS binary tables, read into
 * the mapped columns only. The rules are documented at lt_survey_read in
 * include/lantern/survey.h.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include <fitsio.h>

#include "lantern/text.h"
#include "lantern/file.h"
#include "internal.h"

/* ---- column roles ---- */
const char *lt_obs_name(lt_obs k)
{
    switch (k) {
    case LT_OBS_MU: return "mu";
    case LT_OBS_MAG: return "mag";
    case LT_OBS_DL: return "dl";
    case LT_OBS_MB: return "mb";
    default: return "?";
    }
}

/* Every role's name, as --columns spells it (OBS and ERR by the kind). */
static const struct {
    const char *name;
    int role;
} roles[] = {
    {"z", LT_ROLE_Z},
    {"zhel", LT_ROLE_ZHEL},
    {"mu", LT_ROLE_OBS},
    {"mag", LT_ROLE_OBS},
    {"dl", LT_ROLE_OBS},
    {"mb", LT_ROLE_OBS},
    {"err", LT_ROLE_ERR},
    {"err_mb", LT_ROLE_ERR},
    {"x1", LT_ROLE_X1},
    {"color", LT_ROLE_COLOR},
    {"mass", LT_ROLE_MASS},
    {"err_mass", LT_ROLE_ERR_MASS},
    {"err_x1", LT_ROLE_ERR_X1},
    {"err_color", LT_ROLE_ERR_COLOR},
    {"cov_mb_x1", LT_ROLE_COV_MB_X1},
    {"cov_mb_color", LT_ROLE_COV_MB_COLOR},
    {"cov_x1_color", LT_ROLE_COV_X1_COLOR},
    {"dz", LT_ROLE_DZ},
    {"calibrator", LT_ROLE_CALIBRATOR},
    {"calib_mu", LT_ROLE_CALIB_MU},
    {"err_calib_mu", LT_ROLE_ERR_CALIB_MU},
    {"id", LT_ROLE_ID},
    {"group", LT_ROLE_GROUP},
};
#define NROLES (sizeof roles / sizeof roles[0])
#define ROLE_LIST                                                                              \
    "z, zhel, mu, mag, dl, err, id; for light-curve tables mb, err_mb, x1, color, mass, "     \
    "err_mass, err_x1, err_color, cov_mb_x1, cov_mb_color, cov_x1_color, dz, group, calibrator, "      \
    "calib_mu, err_calib_mu"

const int lt_role_cov_pairs[3][3] = {{LT_ROLE_COV_MB_X1, LT_ROLE_ERR, LT_ROLE_ERR_X1},
                                     {LT_ROLE_COV_MB_COLOR, LT_ROLE_ERR, LT_ROLE_ERR_COLOR},
                                     {LT_ROLE_COV_X1_COLOR, LT_ROLE_ERR_X1, LT_ROLE_ERR_COLOR}};

const char *lt_role_name(int role, lt_obs kind)
{
    if (role == LT_ROLE_OBS)
        return lt_obs_name(kind);
    if (role == LT_ROLE_ERR)
        return kind == LT_OBS_MB ? "err_mb" : "err";
    for (size_t k = 0; k < NROLES; k++)
        if (roles[k].role == role)
            return roles[k].name;
    return "?";
}

void lt_colmap_free(lt_colmap *map)
{
    free(map->text);
    memset(map, 0, sizeof *map);
}

int lt_colmap_parse(const char *text, lt_colmap *map, lt_error *err)
{
    memset(map, 0, sizeof *map);
    if (!text || !*text)
        return lt_error_set(err, LT_EINPUT, "--columns", 0,
                            "no column mapping given; say which column holds what, e.g. "
                            "--columns z=zcmb,mag=mb,err=dmb");
    map->text = strdup(text);
    if (!map->text)
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    int have_obs = 0, err_name_mb = -1;
    char *save = NULL;
    for (char *item = strtok_r(map->text, ",", &save); item; item = strtok_r(NULL, ",", &save)) {
        char *eq = strchr(item, '=');
        if (!eq || eq == item || !eq[1]) {
            lt_error_set(err, LT_EINPUT, "--columns", 0, "'%s' is not role=column (roles: %s)",
                         item, ROLE_LIST);
            goto fail;
        }
        *eq = '\0';
        const char *role = item, *name = eq + 1;
        int r = -1;
        lt_obs kind = LT_OBS_MU;
        for (size_t k = 0; k < NROLES && r < 0; k++)
            if (strcmp(role, roles[k].name) == 0)
                r = roles[k].role;
        if (r < 0) {
            lt_error_set(err, LT_EINPUT, "--columns", 0, "unknown role '%s' (roles: %s)", role,
                         ROLE_LIST);
            goto fail;
        }
        if (r == LT_ROLE_OBS)
            kind = !strcmp(role, "mu")    ? LT_OBS_MU
                   : !strcmp(role, "mag") ? LT_OBS_MAG
                   : !strcmp(role, "dl")  ? LT_OBS_DL
                                          : LT_OBS_MB;
        if (map->name[r]) {
            lt_error_set(err, LT_EINPUT, "--columns", 0,
                         r == LT_ROLE_OBS   ? "more than one observable (mu, mag, dl, mb) mapped"
                         : r == LT_ROLE_ERR ? "more than one error column (err, err_mb) mapped"
                                            : "role '%s' mapped twice",
                         role);
            goto fail;
        }
        map->name[r] = (char *)name;
        if (r == LT_ROLE_OBS)
            map->kind = kind, have_obs = 1;
        if (r == LT_ROLE_ERR)
            err_name_mb = !strcmp(role, "err_mb");
    }
    if (!map->name[LT_ROLE_Z] || !have_obs) {
        lt_error_set(err, LT_EINPUT, "--columns", 0,
                     "map at least z and one observable (mu, mag or dl; or mb, x1 and color "
                     "for a light-curve table), e.g. z=zcmb,mag=mb,err=dmb");
        goto fail;
    }
    int lc = map->kind == LT_OBS_MB;
    if (err_name_mb >= 0 && err_name_mb != lc) {
        lt_error_set(err, LT_EINPUT, "--columns", 0,
                     lc ? "a light-curve table's error of mb is err_mb, not err"
                        : "err_mb is the error of mb, in a light-curve table; here use err");
        goto fail;
    }
    if (lc && (!map->name[LT_ROLE_X1] || !map->name[LT_ROLE_COLOR])) {
        lt_error_set(err, LT_EINPUT, "--columns", 0,
                     "a light-curve table (mb) needs x1 and color mapped too");
        goto fail;
    }
    /* a standardised table may hold calibrators (mag - M = calib_mu) */
    int calib_role_ok = map->kind == LT_OBS_MAG;
    for (int r = LT_ROLE_X1; !lc && r < LT_ROLE_COUNT; r++)
        if (r != LT_ROLE_ID && map->name[r] &&
            !(calib_role_ok && (r == LT_ROLE_CALIBRATOR || r == LT_ROLE_CALIB_MU ||
                                r == LT_ROLE_ERR_CALIB_MU))) {
            lt_error_set(err, LT_EINPUT, "--columns", 0,
                         r == LT_ROLE_CALIBRATOR || r == LT_ROLE_CALIB_MU ||
                                 r == LT_ROLE_ERR_CALIB_MU
                             ? "%s is a calibrators' role: it goes with mb (light curves) or "
                               "mag (standardised magnitudes), not with %s"
                             : "%s is a light-curve role: it goes with mb (the peak magnitude), "
                               "x1 and color, not with %s",
                         lt_role_name(r, map->kind), lt_obs_name(map->kind));
            goto fail;
        }
    /* a covariance term needs both errors of its pair (the correlation is
     * checked against them) */
    const int(*pairs)[3] = lt_role_cov_pairs;
    for (int k = 0; k < 3; k++)
        if (map->name[pairs[k][0]] && (!map->name[pairs[k][1]] || !map->name[pairs[k][2]])) {
            lt_error_set(err, LT_EINPUT, "--columns", 0, "%s needs %s and %s mapped too",
                         lt_role_name(pairs[k][0], map->kind),
                         lt_role_name(pairs[k][1], map->kind),
                         lt_role_name(pairs[k][2], map->kind));
            goto fail;
        }
    if (map->name[LT_ROLE_ERR_MASS] && !map->name[LT_ROLE_MASS]) {
        lt_error_set(err, LT_EINPUT, "--columns", 0, "err_mass needs mass mapped too");
        goto fail;
    }
    if (map->name[LT_ROLE_ERR_CALIB_MU] && !map->name[LT_ROLE_CALIB_MU]) {
        lt_error_set(err, LT_EINPUT, "--columns", 0, "err_calib_mu needs calib_mu mapped too");
        goto fail;
    }
    for (int a = 0; a < LT_ROLE_COUNT; a++)
        for (int b = a + 1; b < LT_ROLE_COUNT; b++)
            if (map->name[a] && map->name[b] && strcmp(map->name[a], map->name[b]) == 0 &&
                !(a == LT_ROLE_Z && b == LT_ROLE_ZHEL)) {
                lt_error_set(err, LT_EINPUT, "--columns", 0,
                             "column '%s' is mapped to both %s and %s", map->name[a],
                             lt_role_name(a, map->kind), lt_role_name(b, map->kind));
                goto fail;
            }
    return LT_OK;
fail:
    lt_colmap_free(map);
    return err ? err->code : LT_EINPUT;
}

/* ---- the raw table ---- */
void lt_rawtable_free(lt_rawtable *t)
{
    for (int r = 0; r < LT_ROLE_ID; r++)
        free(t->v[r]);
    for (int k = 0; k < LT_ROLE_NTEXT; k++) {
        if (t->text[k])
            for (size_t i = 0; i < t->n; i++)
                free(t->text[k][i]);
        free(t->text[k]);
    }
    free(t->row);
    free(t->line);
    free(t->warning);
    memset(t, 0, sizeof *t);
}

/* Grow every mapped array of t to hold cap rows. */
static int grow(lt_rawtable *t, const lt_colmap *map, size_t cap)
{
    for (int r = 0; r < LT_ROLE_ID; r++) {
        if (!map->name[r])
            continue;
        double *v = realloc(t->v[r], cap * sizeof *v);
        if (!v)
            return -1;
        t->v[r] = v;
    }
    for (int k = 0; k < LT_ROLE_NTEXT; k++) {
        if (!map->name[LT_ROLE_ID + k])
            continue;
        char **txt = realloc(t->text[k], cap * sizeof *txt);
        if (!txt)
            return -1;
        t->text[k] = txt;
    }
    long *row = realloc(t->row, cap * sizeof *row);
    if (!row)
        return -1;
    t->row = row;
    long *line = realloc(t->line, cap * sizeof *line);
    if (!line)
        return -1;
    t->line = line;
    return 0;
}

/* A calibrator's distance columns mean nothing on the other rows, which
 * may hold a placeholder there: empty, '-', 'nan' or 'NA' (any case). */
static int placeholder_ok(int role)
{
    return role == LT_ROLE_CALIB_MU || role == LT_ROLE_ERR_CALIB_MU;
}

static int is_placeholder(const char *f)
{
    return !*f || !strcmp(f, "-") || !strcasecmp(f, "nan") || !strcasecmp(f, "na");
}

/* Check one value of a mapped numeric column; the message says what to do. */
static int check_value(const char *path, long line, const lt_colmap *map, int role,
                       double v, lt_error *err)
{
    const char *col = map->name[role], *rn = lt_role_name(role, map->kind);
    if ((role == LT_ROLE_Z || role == LT_ROLE_ZHEL) && !(v > 0.0))
        return lt_error_set(err, LT_EINPUT, path, line,
                            "column '%s' (%s) is %g: redshifts must be > 0; remove the row "
                            "or cut it with --zmin",
                            col, rn, v);
    if (role == LT_ROLE_ERR && !(v > 0.0))
        return lt_error_set(err, LT_EINPUT, path, line,
                            "column '%s' (err) is %g: errors must be > 0", col, v);
    if (role == LT_ROLE_OBS && map->kind == LT_OBS_DL && !(v > 0.0))
        return lt_error_set(err, LT_EINPUT, path, line,
                            "column '%s' (dl) is %g: luminosity distances must be > 0", col,
                            v);
    if ((role == LT_ROLE_ERR_X1 || role == LT_ROLE_ERR_COLOR || role == LT_ROLE_ERR_CALIB_MU ||
         role == LT_ROLE_ERR_MASS) &&
        !(v > 0.0))
        return lt_error_set(err, LT_EINPUT, path, line,
                            "column '%s' (%s) is %g: errors must be > 0", col, rn, v);
    if (role == LT_ROLE_DZ && !(v >= 0.0))
        return lt_error_set(err, LT_EINPUT, path, line,
                            "column '%s' (dz) is %g: a redshift error must be >= 0", col, v);
    if (role == LT_ROLE_CALIBRATOR && v != 0.0 && v != 1.0)
        return lt_error_set(err, LT_EINPUT, path, line,
                            "column '%s' (calibrator) is %g: it must be 0 or 1", col, v);
    return LT_OK;
}

/* ---- finding the mapped columns ---- */

/* "a, b, c": names[0..n-1] for a message, an unnamed column as '', cut
 * short near the end of buf. */
static void list_names(const char *const *names, long n, char *buf, size_t size)
{
    buf[0] = '\0';
    for (long a = 0; a < n && strlen(buf) + 100 < size; a++)
        snprintf(buf + strlen(buf), size - strlen(buf), "%s%s", a ? ", " : "",
                 *names[a] ? names[a] : "''");
}

/* A name of digits only is a 1-based column number: 1 and *pos if it is
 * one, 0 if the name is not all digits, -1 if it is 0 or too large. */
static int column_number(const char *name, long *pos)
{
    if (!*name || name[strspn(name, "0123456789")])
        return 0;
    return lt_parse_long(name, 1, LT_TABLE_FIELDS_MAX, pos) == LT_OK ? 1 : -1;
}

/*
 * The column (0-based) of each mapped role into col (-1 where unmapped).
 * names[0..n-1] are the table's column names ("" for an unnamed one), or
 * NULL for a text table without a header, whose n columns go by number.
 * A name matches exactly, else ignoring ASCII case if just one column
 * does so; two roles may share a column only as z and zhel. Errors name
 * path:line; listed says what lists the names ("the header names").
 */
static int find_columns(const char *path, long line, const char *const *names, long n,
                        const char *listed, const lt_colmap *map, long col[LT_ROLE_COUNT],
                        lt_error *err)
{
    char list[1024];
    for (int r = 0; r < LT_ROLE_COUNT; r++) {
        const char *want = map->name[r], *rn = lt_role_name(r, map->kind);
        long pos;
        col[r] = -1;
        if (!want)
            continue;
        if (!names) {
            int isnum = column_number(want, &pos);
            if (isnum < 0)
                return lt_error_set(err, LT_EINPUT, path, line,
                                    "%s=%s: column numbers count from 1", rn, want);
            if (!isnum)
                return lt_error_set(err, LT_EINPUT, path, line,
                                    "the table has no header (its first line holds only "
                                    "numbers), so its columns go by number from 1: map %s "
                                    "to one (%s=1 for the first), not to '%s'",
                                    rn, rn, want);
            if (pos > n)
                return lt_error_set(err, LT_EINPUT, path, line,
                                    "%s=%s: the first row has only %ld fields", rn, want, n);
            col[r] = pos - 1;
            continue;
        }
        long exact = -1, folded = -1, nexact = 0, nfolded = 0;
        for (long a = 0; a < n; a++)
            if (strcmp(names[a], want) == 0)
                nexact++, exact = a;
            else if (strcasecmp(names[a], want) == 0 && nfolded++ == 0)
                folded = a;
        if (nexact > 1)
            return lt_error_set(err, LT_EINPUT, path, line,
                                "more than one column is named '%s' (%s); rename one", want,
                                rn);
        if (!nexact && nfolded > 1) {
            long other = -1;
            for (long a = folded + 1; a < n && other < 0; a++)
                if (strcasecmp(names[a], want) == 0)
                    other = a;
            return lt_error_set(err, LT_EINPUT, path, line,
                                "'%s' (%s) matches columns %ld '%s' and %ld '%s', which differ "
                                "only in case; name one exactly as written",
                                want, rn, folded + 1, names[folded], other + 1, names[other]);
        }
        col[r] = nexact ? exact : folded;
        if (col[r] < 0) {
            list_names(names, n, list, sizeof list);
            return lt_error_set(err, LT_EINPUT, path, line, "no column '%s' for %s (%s: %s)%s",
                                want, rn, listed, list,
                                column_number(want, &pos)
                                    ? "; a number names a column by its position only in a "
                                      "text table without a header (its first line all "
                                      "numbers)"
                                    : "");
        }
    }
    for (int a = 0; a < LT_ROLE_COUNT; a++)
        for (int b = a + 1; b < LT_ROLE_COUNT; b++)
            if (col[a] >= 0 && col[a] == col[b] && !(a == LT_ROLE_Z && b == LT_ROLE_ZHEL)) {
                char which[64];
                snprintf(which, sizeof which, "%ld", col[a] + 1);
                return lt_error_set(err, LT_EINPUT, path, line,
                                    "column %s%s%s is mapped to both %s (as '%s') and %s (as "
                                    "'%s')",
                                    names ? "'" : "", names ? names[col[a]] : which,
                                    names ? "'" : "", lt_role_name(a, map->kind), map->name[a],
                                    lt_role_name(b, map->kind), map->name[b]);
            }
    return LT_OK;
}

/* Is every field a number? A first line like that is data: no header. */
static int all_numbers(char *const *fields, long n)
{
    double v;
    for (long a = 0; a < n; a++)
        if (lt_parse_double(fields[a], &v))
            return 0;
    return n > 0;
}

int lt_table_read_text(const char *path, const lt_colmap *map, lt_rawtable *t, lt_error *err)
{
    memset(t, 0, sizeof *t);
    char *buf = NULL;
    size_t size = 0;
    if (lt_file_read(path, LT_TABLE_FILE_MAX, &buf, &size, err))
        return err ? err->code : LT_EINPUT;
    char **fields = malloc(LT_TABLE_FIELDS_MAX * sizeof *fields);
    char **header = NULL;
    int rc = LT_OK;
    if (!fields) {
        rc = lt_error_set(err, LT_ENOMEM, path, 0, "out of memory");
        goto done;
    }
    if (size == 0) {
        rc = lt_error_set(err, LT_EINPUT, path, 0, "file is empty");
        goto done;
    }
    if (memchr(buf, '\0', size)) {
        rc = lt_error_set(err, LT_EINPUT, path, 0,
                          "holds a NUL byte: not a text table (FITS files need a .fits, "
                          ".fit or .fts name)");
        goto done;
    }

    lt_lines it;
    lt_lines_start(&it, buf);
    char *s;
    size_t len;
    /* The header: the first non-blank line, unless that holds only
     * numbers (and no '#'): then it is the first row of a table without a
     * header. */
    while ((s = lt_lines_next(&it, &len)) && lt_line_blank(s))
        ;
    if (!s) {
        rc = lt_error_set(err, LT_EINPUT, path, 0, "file holds only blank lines: no header");
        goto done;
    }
    if (len > LT_TABLE_LINE_MAX) {
        rc = lt_error_set(err, LT_EINPUT, path, it.line, "line is longer than %u bytes",
                          LT_TABLE_LINE_MAX);
        goto done;
    }
    long header_line = it.line;
    while (*s == ' ' || *s == '\t')
        s++;
    int hashed = *s == '#';
    while (*s == '#' || *s == ' ' || *s == '\t')
        s++;
    int csv = strchr(s, ',') != NULL;
    long h = lt_line_split(s, csv, fields, LT_TABLE_FIELDS_MAX);
    if (h <= 0) {
        if (h == LT_SPLIT_TOO_MANY || h == 0)
            rc = lt_error_set(err, LT_EINPUT, path, header_line,
                              h ? "header has more than %d names" : "header names no columns",
                              LT_TABLE_FIELDS_MAX);
        else
            rc = lt_error_set(err, LT_EINPUT, path, header_line, "%s", lt_split_error(h));
        goto done;
    }
    int headerless = !hashed && all_numbers(fields, h), unnamed = 0;
    if (!headerless) {
        header = malloc((size_t)h * sizeof *header);
        if (!header) {
            rc = lt_error_set(err, LT_ENOMEM, path, 0, "out of memory");
            goto done;
        }
        memcpy(header, fields, (size_t)h * sizeof *header);
        /* an unnamed column (pandas writes its index so) cannot be mapped,
         * and is read only to keep the others in place */
        for (long a = 0; a < h; a++) {
            unnamed += !*header[a];
            for (long b = 0; b < a && *header[a]; b++)
                if (strcmp(header[a], header[b]) == 0) {
                    rc = lt_error_set(err, LT_EINPUT, path, header_line,
                                      "header names '%s' twice (columns %ld and %ld); rename "
                                      "one",
                                      header[a], b + 1, a + 1);
                    goto done;
                }
        }
    }
    long col[LT_ROLE_COUNT];
    if ((rc = find_columns(path, header_line, (const char *const *)header, h,
                           "the header names", map, col, err)))
        goto done;

    long first_fields = -1, first_line = 0;
    size_t cap = 0;
    int pending = headerless; /* the first line, split already, is the first row */
    while (pending || (s = lt_lines_next(&it, &len))) {
        long nf = h;
        if (!pending) {
            if (len > LT_TABLE_LINE_MAX) {
                rc = lt_error_set(err, LT_EINPUT, path, it.line,
                                  "line is longer than %u bytes", LT_TABLE_LINE_MAX);
                goto done;
            }
            if (lt_line_skipped(s))
                continue;
            nf = lt_line_split(s, csv, fields, LT_TABLE_FIELDS_MAX);
            if (nf < 0) {
                if (nf == LT_SPLIT_TOO_MANY)
                    rc = lt_error_set(err, LT_EINPUT, path, it.line, "more than %d fields",
                                      LT_TABLE_FIELDS_MAX);
                else
                    rc = lt_error_set(err, LT_EINPUT, path, it.line, "%s", lt_split_error(nf));
                goto done;
            }
        }
        pending = 0;
        if (first_fields < 0) {
            first_fields = nf, first_line = it.line;
            if (nf > h) {
                rc = lt_error_set(err, LT_EINPUT, path, it.line,
                                  "row has %ld fields but the header (line %ld) names %ld "
                                  "columns: columns would shift; fix the header",
                                  nf, header_line, h);
                goto done;
            }
            if (nf < h && unnamed) {
                rc = lt_error_set(err, LT_EINPUT, path, it.line,
                                  "row has %ld fields but the header (line %ld) names %ld "
                                  "columns, %d of them unnamed: columns would shift; fix the "
                                  "header",
                                  nf, header_line, h, unnamed);
                goto done;
            }
            if (nf < h) {
                for (int r = 0; r < LT_ROLE_COUNT; r++)
                    if (col[r] >= nf) {
                        rc = lt_error_set(err, LT_EINPUT, path, it.line,
                                          "column '%s' (%s) is field %ld, but rows have %ld "
                                          "fields",
                                          map->name[r], lt_role_name(r, map->kind),
                                          col[r] + 1, nf);
                        goto done;
                    }
                char names[512];
                list_names((const char *const *)header + nf, h - nf, names, sizeof names);
                char msg[768];
                snprintf(msg, sizeof msg,
                         "%s:%ld: the header names %ld columns but rows have %ld fields; "
                         "the trailing name%s %s, filled by no row and mapped to no role, "
                         "%s ignored",
                         path, header_line, h, nf, h - nf > 1 ? "s" : "", names,
                         h - nf > 1 ? "are" : "is");
                t->warning = strdup(msg);
            }
        } else if (nf != first_fields) {
            rc = lt_error_set(err, LT_EINPUT, path, it.line,
                              "row has %ld fields but the first data row (line %ld) has %ld: "
                              "%s",
                              nf, first_line, first_fields,
                              nf < first_fields ? "a short row" : "an extra field");
            goto done;
        }
        if (t->n == cap) {
            cap = cap ? 2 * cap : 1024;
            if (grow(t, map, cap)) {
                rc = lt_error_set(err, LT_ENOMEM, path, it.line, "out of memory");
                goto done;
            }
        }
        size_t i = t->n;
        for (int r = 0; r < LT_ROLE_ID; r++) {
            if (col[r] < 0)
                continue;
            double v;
            const char *f = fields[col[r]];
            if (placeholder_ok(r) && is_placeholder(f)) {
                t->v[r][i] = NAN; /* a non-calibrator's; check_lightcurve checks */
                continue;
            }
            if (lt_parse_double(f, &v)) {
                rc = lt_error_set(err, LT_EINPUT, path, it.line,
                                  "column '%s' (%s): '%s' is not a finite number",
                                  map->name[r], lt_role_name(r, map->kind), f);
                goto done;
            }
            if ((rc = check_value(path, it.line, map, r, v, err)))
                goto done;
            t->v[r][i] = v;
        }
        for (int k = 0; k < LT_ROLE_NTEXT; k++) {
            if (col[LT_ROLE_ID + k] < 0)
                continue;
            t->text[k][i] = strdup(fields[col[LT_ROLE_ID + k]]);
            if (!t->text[k][i]) {
                rc = lt_error_set(err, LT_ENOMEM, path, it.line, "out of memory");
                goto done;
            }
        }
        t->row[i] = (long)i + 1;
        t->line[i] = it.line;
        t->n++;
    }
    if (t->n == 0)
        rc = lt_error_set(err, LT_EINPUT, path, header_line,
                          "no data rows after the header");
done:
    free(header);
    free(fields);
    free(buf);
    if (rc)
        lt_rawtable_free(t);
    return rc;
}

/* ---- FITS binary tables ---- */
static int fits_fail(const char *path, int status, const char *what, lt_error *err)
{
    char text[FLEN_STATUS];
    fits_get_errstatus(status, text);
    fits_clear_errmsg();
    return lt_error_set(err, LT_EINPUT, path, 0, "%s: %s (CFITSIO status %d)", what, text,
                        status);
}

int lt_table_read_fits(const char *path, const lt_colmap *map, lt_rawtable *t, lt_error *err)
{
    memset(t, 0, sizeof *t);
    fitsfile *f = NULL;
    int status = 0, rc = LT_OK;
    size_t n = 0, ids_ready = 0;
    /* fits_open_table moves to the first table HDU unless the name picks
     * one ("file.fits[2]", "file.fits[NAME]"). */
    if (lt_fits_check(path, err))
        return LT_EINPUT;
    if (fits_open_table(&f, path, READONLY, &status)) {
        lt_fits_close_failed(f);
        return fits_fail(path, status, "cannot open a FITS table", err);
    }
    long nrows = 0;
    int ncols = 0;
    fits_get_num_rows(f, &nrows, &status);
    fits_get_num_cols(f, &ncols, &status);
    if (status) {
        rc = fits_fail(path, status, "cannot read the table size", err);
        goto done;
    }
    if (nrows <= 0) {
        rc = lt_error_set(err, LT_EINPUT, path, 0, "the FITS table has no rows");
        goto done;
    }
    /* The names by their TTYPEn keys as written: CFITSIO's own lookup
     * would read '*' and '#' in a name as wildcards. A column without a
     * TTYPEn has no name. */
    char(*ttype)[FLEN_VALUE] = calloc((size_t)ncols + 1, sizeof *ttype);
    const char **names = calloc((size_t)ncols + 1, sizeof *names);
    long col[LT_ROLE_COUNT];
    if (!ttype || !names)
        rc = lt_error_set(err, LT_ENOMEM, path, 0, "out of memory");
    for (int c = 0; !rc && c < ncols; c++) {
        char key[FLEN_KEYWORD];
        int st = 0;
        snprintf(key, sizeof key, "TTYPE%d", c + 1);
        if (fits_read_key(f, TSTRING, key, ttype[c], NULL, &st))
            ttype[c][0] = '\0';
        names[c] = ttype[c];
    }
    fits_clear_errmsg();
    if (!rc)
        rc = find_columns(path, 0, names, ncols, "columns", map, col, err);
    free(names);
    free(ttype);
    if (rc)
        goto done;
    n = (size_t)nrows;
    if (grow(t, map, n)) {
        rc = lt_error_set(err, LT_ENOMEM, path, 0, "out of memory for %zu rows", n);
        goto done;
    }
    for (int k = 0; k < LT_ROLE_NTEXT; k++)
        if (t->text[k])
            for (size_t i = 0; i < n; i++)
                t->text[k][i] = NULL; /* so that a failure part-way frees only what it made */
    ids_ready = 1;
    for (int r = 0; r < LT_ROLE_ID; r++) {
        if (col[r] < 0)
            continue;
        int typecode;
        long repeat, width;
        fits_get_coltype(f, (int)col[r] + 1, &typecode, &repeat, &width, &status);
        if (!status && (typecode == TSTRING || repeat != 1)) {
            rc = lt_error_set(err, LT_EINPUT, path, 0,
                              "column '%s' (%s) is not a scalar numeric column",
                              map->name[r], lt_role_name(r, map->kind));
            goto done;
        }
        double nul = NAN;
        int anynul = 0;
        fits_read_col(f, TDOUBLE, (int)col[r] + 1, 1, 1, nrows, &nul, t->v[r], &anynul, &status);
        if (status) {
            rc = fits_fail(path, status, "cannot read a column", err);
            goto done;
        }
        for (size_t i = 0; i < n; i++) {
            if (placeholder_ok(r) && isnan(t->v[r][i]))
                continue; /* a non-calibrator's; check_lightcurve checks */
            if (!isfinite(t->v[r][i])) {
                rc = lt_error_set(err, LT_EINPUT, path, 0,
                                  "row %zu: column '%s' (%s) is not a finite number", i + 1,
                                  map->name[r], lt_role_name(r, map->kind));
                goto done;
            }
            char where[64];
            snprintf(where, sizeof where, "%s: row %zu", path, i + 1);
            if ((rc = check_value(where, 0, map, r, t->v[r][i], err)))
                goto done;
        }
    }
    for (int k = 0; k < LT_ROLE_NTEXT; k++) {
        if (col[LT_ROLE_ID + k] < 0)
            continue;
        int c = (int)col[LT_ROLE_ID + k] + 1;
        int typecode;
        long repeat, width;
        fits_get_coltype(f, c, &typecode, &repeat, &width, &status);
        long w = typecode == TSTRING ? repeat : 32;
        for (size_t i = 0; i < n && !status; i++) {
            char *cell = calloc((size_t)w + 1, 1);
            if (!cell) {
                rc = lt_error_set(err, LT_ENOMEM, path, 0, "out of memory");
                goto done;
            }
            t->text[k][i] = cell;
            int anynul = 0;
            fits_read_col(f, TSTRING, c, (LONGLONG)i + 1, 1, 1, "", &t->text[k][i], &anynul,
                          &status);
        }
        if (status) {
            rc = fits_fail(path, status, "cannot read a text column", err);
            goto done;
        }
    }
    for (size_t i = 0; i < n; i++)
        t->row[i] = (long)i + 1, t->line[i] = 0;
    t->n = n;
done:
    status = 0;
    fits_close_file(f, &status);
    if (rc) {
        t->n = ids_ready ? n : 0; /* every id is then a string or NULL */
        lt_rawtable_free(t);
    }
    return rc;
}
