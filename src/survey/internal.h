/*
 * Internal to the survey module: text scanning shared by the readers, and
 * the raw table that the table readers fill.
 */
#ifndef LANTERN_SURVEY_INTERNAL_H
#define LANTERN_SURVEY_INTERNAL_H

#include <fitsio.h>

#include "lantern/survey.h"
#include "lantern/text.h"

/* Limits that turn absurd input into a clear error instead of a crash. */
#define LT_TABLE_FILE_MAX ((size_t)8 << 30) /* 8 GiB of text */
#define LT_TABLE_LINE_MAX (1u << 20)        /* 1 MiB in one line */
#define LT_TABLE_FIELDS_MAX 100000          /* fields in one line */

/* Close a FITS handle that a failed open left allocated (fitscheck.c). */
void lt_fits_close_failed(fitsfile *f);

/* Scan a FITS file's headers (fitscheck.c) before CFITSIO reads them. */
int lt_fits_check(const char *path, lt_error *err);
/* ---- roles of table columns ---- */
/* Numeric roles first (below LT_ROLE_ID), then the text ones. OBS holds
 * mu, mag, dl or, in a light-curve table, mb; ERR its error (err, or
 * err_mb). The light-curve roles (X1 to ERR_CALIB_MU, and GROUP) go with
 * mb only. */
enum {
    LT_ROLE_Z,
    LT_ROLE_ZHEL,
    LT_ROLE_OBS,
    LT_ROLE_ERR,
    LT_ROLE_X1,
    LT_ROLE_COLOR,
    LT_ROLE_MASS,
    LT_ROLE_ERR_MASS,
    LT_ROLE_ERR_X1,
    LT_ROLE_ERR_COLOR,
    LT_ROLE_COV_MB_X1,
    LT_ROLE_COV_MB_COLOR,
    LT_ROLE_COV_X1_COLOR,
    LT_ROLE_DZ,
    LT_ROLE_CALIBRATOR,
    LT_ROLE_CALIB_MU,
    LT_ROLE_ERR_CALIB_MU,
    LT_ROLE_ID,
    LT_ROLE_GROUP,
    LT_ROLE_COUNT
};
#define LT_ROLE_NTEXT (LT_ROLE_COUNT - LT_ROLE_ID)
/* Each light-curve covariance role and the two error roles of its pair:
 * mapped together (lt_colmap_parse), and |cov| <= their product (checked
 * by lt_survey_read). */
extern const int lt_role_cov_pairs[3][3];

typedef struct lt_colmap {
    char *name[LT_ROLE_COUNT]; /* column names, NULL where a role is unmapped */
    lt_obs kind;               /* which observable LT_ROLE_OBS holds */
    char *text;                /* storage for the names */
} lt_colmap;

/* Parse "z=zcmb,zhel=zhel,mag=mb,err=dmb,id=name". */
int lt_colmap_parse(const char *text, lt_colmap *map, lt_error *err);
void lt_colmap_free(lt_colmap *map);
const char *lt_role_name(int role, lt_obs kind);

/* The mapped columns of a table, before any cut. */
typedef struct lt_rawtable {
    size_t n;
    double *v[LT_ROLE_ID]; /* the numeric roles; NULL where unmapped */
    char **text[LT_ROLE_NTEXT]; /* id, group; NULL where unmapped */
    long *row;             /* 1-based data-row numbers */
    long *line;            /* source lines (text), or 0 (FITS) */
    char *warning;         /* one warning, or NULL */
} lt_rawtable;

void lt_rawtable_free(lt_rawtable *t);
int lt_table_read_text(const char *path, const lt_colmap *map, lt_rawtable *t, lt_error *err);
int lt_table_read_fits(const char *path, const lt_colmap *map, lt_rawtable *t, lt_error *err);

/*
 * The mode table: a header naming the first column and then one column per
 * mode; a first data row whose first field is "amplitude" holding each
 * mode's amplitude; then one row per object in table order, its first field
 * the object's id (or row number). *u (n x k, row-major) and *amp are
 * malloc'ed; ids[i] (may be NULL) are the first fields, for matching.
 */
int lt_modes_read(const char *path, size_t *n, size_t *k, double **u, double **amp,
                  char ***ids, lt_error *err);

#endif
