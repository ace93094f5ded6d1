/*
 * lantern/survey.h - Hubble-diagram data: tables, covariances, cuts, and
 * simulated surveys.
 *
 * A survey is N objects, each with a CMB-frame redshift z, a heliocentric
 * redshift zhel, one observable (distance modulus, standardised magnitude
 * or luminosity distance) and usually its error, plus the total covariance
 * of the observables:
 *
 *     C = diag(err^2) [unless no_err_diag] + sum of dense matrices + U U^T
 *
 * where U (N x k) holds systematic modes already scaled by their
 * amplitudes. The modes are never expanded to N x N: solves go through the
 * Woodbury identity, so memory grows as N k.
 *
 * Tables are whitespace-separated text, CSV (RFC 4180) or FITS binary
 * tables, with a header or (text) without one; the rules for headers,
 * quotes, comments, names and short rows are in the docs of lt_survey_read
 * below.
 */
#ifndef LANTERN_SURVEY_H
#define LANTERN_SURVEY_H

#include <stddef.h>
#include <stdint.h>

#include "lantern/error.h"

/* ---------------------------------------------------------------------- */
/* Covariance matrices                                                     */
/* ---------------------------------------------------------------------- */

typedef enum {
    LT_COV_DIAGONAL = 0, /* diag(d) */
    LT_COV_DENSE,        /* a full N x N matrix */
    LT_COV_STRUCTURED,   /* diag(d) + U U^T */
    LT_COV_DENSE_MODES   /* dense + U U^T */
} lt_cov_kind;

const char *lt_cov_kind_name(lt_cov_kind k); /* "diagonal", "dense", ... */

typedef struct lt_cov lt_cov;

/* An N x N covariance, zero to start with. */
lt_cov *lt_cov_alloc(size_t n, lt_error *err);
void lt_cov_free(lt_cov *c);
size_t lt_cov_size(const lt_cov *c);
size_t lt_cov_nmodes(const lt_cov *c);
lt_cov_kind lt_cov_kind_of(const lt_cov *c);

/* Add diag(var). */
int lt_cov_add_diag(lt_cov *c, const double *var, lt_error *err);
/* Add a dense symmetric matrix m (row-major N x N); the first call turns
 * the base into a dense matrix (N^2 doubles). */
int lt_cov_add_dense(lt_cov *c, const double *m, lt_error *err);
/* Add sum_j (amp_j u_j)(amp_j u_j)^T for k modes; u is N x k, row-major
 * (row i holds object i's response to each mode); amp may be NULL (all 1). */
int lt_cov_add_modes(lt_cov *c, size_t k, const double *u, const double *amp,
                     lt_error *err);

/*
 * Factor the covariance for solves: Cholesky of the base (LAPACK dpotrf for
 * a dense base), then the k x k Woodbury capacitance matrix I + U^T B^-1 U.
 * Fails with LT_EINPUT if the matrix is not positive definite. After this,
 * no more terms may be added.
 */
int lt_cov_factor(lt_cov *c, lt_error *err);

/* ln det C of a factored covariance (for normalised likelihoods). */
double lt_cov_logdet(const lt_cov *c);

/* Scratch space, in doubles, that lt_cov_chi2 and lt_cov_solve need. */
size_t lt_cov_work_size(const lt_cov *c);
/* r^T C^-1 r for a factored covariance; allocates nothing. */
double lt_cov_chi2(const lt_cov *c, const double *r, double *work);
/* x = C^-1 b (x may equal b); allocates nothing. */
void lt_cov_solve(const lt_cov *c, const double *b, double *x, double *work);

/* The sub-covariance of the objects idx[0..m-1] (in that order), unfactored. */
lt_cov *lt_cov_select(const lt_cov *c, size_t m, const size_t *idx, lt_error *err);

/* The block-diagonal covariance of np parts (factored or not), unfactored:
 * their bases on the diagonal (dense if any part's is) and their modes as
 * columns of their own. */
lt_cov *lt_cov_join(lt_cov *const *parts, size_t np, lt_error *err);

/* The diagonal C_ii (N values) into out. */
void lt_cov_diagonal(const lt_cov *c, double *out);

/* The whole matrix, row-major N x N into out (for tests and small N). */
void lt_cov_to_dense(const lt_cov *c, double *out);

/* Add the covariance as given to the FNV-1a digest *h (lantern/digest.h):
 * its size, every element of the base on and above the diagonal (the
 * values read, also after factoring) and the scaled modes, so that a
 * change of any element, off the diagonal too, changes the digest.
 * Allocates nothing; O(N^2) for a dense base. */
void lt_cov_digest(const lt_cov *c, uint64_t *h);

/* What lt_cov_inspect reports. */
typedef struct lt_cov_info {
    lt_cov_kind kind;
    int positive_definite;
    double min_eigenvalue, max_eigenvalue, condition; /* 2-norm condition */
    /* "exact": eigenvalues by LAPACK dsyevd; "bound": min_eigenvalue is a
     * lower and condition an upper bound (large structured matrices);
     * "estimate": condition from LAPACK dpocon (1-norm), no eigenvalues (NaN). */
    const char *method;
} lt_cov_info;

/* Eigenvalues are exact up to this N; larger matrices get bounds or
 * estimates (an eigen-decomposition costs N^3). */
#define LT_COV_EXACT_MAX 3000

/* Describe a factored covariance. */
int lt_cov_inspect(const lt_cov *c, lt_cov_info *info, lt_error *err);

/*
 * Why a covariance is not positive definite (lantern inspect): its
 * eigenvalues by LAPACK dsyevd, the eigenvector of the smallest by LAPACK
 * dsyevr, and the objects that weigh most in that direction. Works on a
 * covariance that lt_cov_factor refused (it restores the matrix) or any
 * other; O(N^3), so callers keep to moderate N.
 */
#define LT_DIAG_EIGEN 5 /* the smallest eigenvalues reported */
#define LT_DIAG_TOP 5   /* the objects reported */
typedef struct lt_cov_diagnosis {
    size_t n;
    size_t n_negative, n_zero; /* eigenvalues below -tolerance; within +-tolerance */
    double tolerance;          /* n eps max|eigenvalue|: rounding's reach */
    double max_eigenvalue;
    size_t neigen;
    double eigen[LT_DIAG_EIGEN]; /* the smallest eigenvalues, ascending */
    /* the unit eigenvector v of eigen[0] at its ntop largest |components|,
     * largest first: object index top[i] (0-based, as in the covariance)
     * and v_i (signed so that weight[0] > 0) */
    size_t ntop;
    size_t top[LT_DIAG_TOP];
    double weight[LT_DIAG_TOP];
    /* C_ab / sqrt(C_aa C_bb) of the two heaviest objects (a correlation
     * beyond +-1 is a pair that alone breaks the matrix); NaN for n < 2 */
    double pair_correlation;
} lt_cov_diagnosis;
int lt_cov_diagnose(const lt_cov *c, lt_cov_diagnosis *d, lt_error *err);

/*
 * A covariance whose diagonal changes from one evaluation to the next,
 * C(d) = F + diag(d) with F a survey's covariance (what the
 * standardisation needs: each object's variance depends on alpha, beta and
 * the intrinsic scatter, the systematic part does not). For F = diag(b) +
 * U U^T a solve costs N k^2 (Woodbury with the capacitance matrix rebuilt);
 * for a dense F, N^3 / 3 (a Cholesky factorisation of F + diag(d)).
 */
typedef struct lt_dcov lt_dcov;
/* The fixed part F = c, copied (c may be freed after). */
lt_dcov *lt_dcov_alloc(const lt_cov *c, lt_error *err);
void lt_dcov_free(lt_dcov *v);
/* 1 if F is dense (a solve costs N^3 / 3), 0 if diagonal plus modes. */
int lt_dcov_dense(const lt_dcov *v);
/* Scratch space, in doubles, that lt_dcov_solve needs. */
size_t lt_dcov_work_size(const lt_dcov *v);
/* With C = F + diag(d): *chi2 = r^T C^-1 r, *logdet = ln det C and, if x is
 * not NULL, x = C^-1 r (n values, not aliasing r). Returns -1 (outputs
 * undefined) if C is not positive definite. Allocates nothing. */
int lt_dcov_solve(const lt_dcov *v, const double *d, const double *r, double *x, double *work,
                  double *chi2, double *logdet);

/* ---------------------------------------------------------------------- */
/* Surveys                                                                 */
/* ---------------------------------------------------------------------- */

/* LT_OBS_MB: a light-curve table, the observable the peak magnitude mb,
 * to be standardised with x1 and color (lt_lightcurve). */
typedef enum { LT_OBS_MU = 0, LT_OBS_MAG, LT_OBS_DL, LT_OBS_MB } lt_obs;
const char *lt_obs_name(lt_obs k); /* "mu", "mag", "dl", "mb" */

#define LT_SURVEY_MAX_COV 16

/* What to read. Paths may be FITS extended names ("file.fits[2]"). */
typedef struct lt_survey_spec {
    const char *data;     /* the table */
    const char *columns;  /* "role=name,..." (name: a column number in a table without a
                           * header); roles z, zhel, mu|mag|dl, err, id; or, for a
                           * light-curve table, mb, err_mb, x1, color, mass, err_mass, err_x1,
                           * err_color, cov_mb_x1, cov_mb_color, cov_x1_color, dz, group,
                           * calibrator, calib_mu, err_calib_mu */
    const char *cov[LT_SURVEY_MAX_COV];
    size_t ncov;
    const char *modes;    /* N x k mode table, or NULL */
    int no_err_diag;      /* the covariances already hold the errors */
    double zmin, zmax;    /* keep zmin <= z <= zmax; NaN for no cut */
    const char *keep_ids; /* a file of ids to keep (one a line), or NULL */
    const char *drop_ids; /* a file of ids to drop, or NULL */
    const char *calib_cov; /* the calibrators' own covariance (one row and column per
                            * calibrator, in table order, before cuts), added as modes */
    /* Several tables joined into one survey: this one, then more[0..nmore-1]
     * (each with its own columns, covariances and cuts), in that order. */
    const char *name;     /* the table's name, the group label of its rows when
                           * it has no group column (NULL: the file's stem) */
    const struct lt_survey_spec *more;
    size_t nmore;
    const char *cross_cov; /* added to the joined covariance: a matrix over every
                            * row of every table, in order, before cuts (or NULL) */
} lt_survey_spec;

/* At most this many tables join into one survey. */
#define LT_SURVEY_MAX_PARTS 16

void lt_survey_spec_init(lt_survey_spec *s);

/*
 * The light-curve columns of a table whose observable is mb (Tripp 1998,
 * A&A 331, 815: mb, the stretch x1, the colour c, the host's log10 stellar
 * mass), per object; an array is NULL where its role is unmapped. The
 * survey's obs holds mb and err err_mb.
 */
typedef struct lt_lightcurve {
    double *x1, *color;               /* always */
    double *mass, *err_mass;          /* log10 M / M_sun, and its error (> 0) */
    double *err_x1, *err_color;       /* > 0 */
    double *cov_mb_x1, *cov_mb_color, *cov_x1_color; /* |correlation| <= 1 */
    double *dz;                       /* redshift error, >= 0 */
    int *calibrator;                  /* 0 or 1 (NULL: none is) */
    double *calib_mu, *err_calib_mu;  /* a calibrator's external distance modulus; NaN
                                       * for the others */
    char **group;                     /* survey or subsample labels */
    size_t ncalibrators;
} lt_lightcurve;

typedef struct lt_survey {
    size_t n;
    lt_obs kind;
    double *z;    /* CMB-frame redshift */
    double *zhel; /* heliocentric redshift (= z when the table has none) */
    double *obs;  /* the observable: mu or mag in magnitudes, dl in Mpc */
    double *err;  /* its error, NULL if the table has none */
    char **id;    /* NULL if the table has no id column */
    long *row;    /* each object's 1-based data row in the table */
    lt_cov *cov;  /* the total covariance, factored */
    lt_lightcurve *lc; /* kind LT_OBS_MB: the light-curve columns; else NULL */
    size_t n_read;     /* objects in the table before cuts */
    size_t nwarnings;
    char **warnings;   /* things worth saying that are not errors */
    const char **warning_ids; /* the kind of each (one of LT_WARN_*, static strings) */
} lt_survey;

/*
 * The kinds of warning a survey gives: stable short ids, printed with each
 * warning and named by --no-warn ID (the pipeline's list, lt_warning_kinds,
 * holds these and its own).
 */
#define LT_WARN_HEADER_EXTRA "header-extra-names" /* trailing header names no row fills */
#define LT_WARN_NO_ZHEL "no-zhel"                 /* zhel taken equal to z */
#define LT_WARN_MODES_ORDER "modes-order-unchecked" /* mode rows by id, table without ids */
#define LT_WARN_CUTS "cuts"                       /* cuts keep M of N objects */
#define LT_WARN_DUPLICATE_IDS "duplicate-ids"     /* an id on more than one row */
#define LT_WARN_COV_DOUBLE_DIAG "cov-double-diagonal" /* a --cov holding err^2, added again */

/*
 * The rule of LT_WARN_COV_DOUBLE_DIAG: a --cov file (or a cross-covariance)
 * whose diagonal reaches the table's err^2, C_ii >= (1 - LT_DOUBLE_DIAG_SLACK)
 * err_i^2, on at least LT_DOUBLE_DIAG_SHARE of the rows with err > 0 already
 * holds the statistical errors (alone, or with systematics on top), and
 * diag(err^2) added to it counts them twice. A systematics-only matrix sits
 * below err^2 on most rows: Pantheon 2018's sys_DS17f.txt reaches it on 1 of
 * its 40 rows (its C_ii / dmb^2 run from 0.058 to 1.14, median 0.27). The
 * slack allows for files written with few digits. A sample whose
 * systematics exceed its statistical errors almost everywhere would trip the
 * rule: the warning says so, and --no-warn cov-double-diagonal silences it.
 */
#define LT_DOUBLE_DIAG_SLACK 0.02
#define LT_DOUBLE_DIAG_SHARE 0.9

/*
 * Read a survey. Tables:
 *  - Text: the header is the first non-blank line and may start with '#';
 *    later lines starting with '#' are comments; blank lines, CRLF line
 *    ends, a UTF-8 byte-order mark and tabs are accepted. A first line
 *    holding a comma makes the file CSV, otherwise fields are split at runs
 *    of blanks and tabs.
 *  - CSV is RFC 4180's (lt_line_split): fields split at commas and trimmed;
 *    a field in double quotes may hold commas, and "" in it is one quote;
 *    header names may be quoted too. A quoted field must close on its line:
 *    one holding a line break is refused at the line where it opens (a
 *    record is one line, so every error names its line).
 *  - No header: a first line that does not start with '#' and whose every
 *    field is a number is the first data row of a table without a header.
 *    Its columns are mapped by number, counting from 1 as awk and cut do
 *    ("z=1,mu=2,err=3"), and only by number. In a table with a header an
 *    all-digit name is a name ("z=1" wants a column named 1, as pandas
 *    names unnamed columns 0, 1, ...). So a header made only of numbers
 *    reads as data, and a header-less table whose first row holds text
 *    (ids) reads that row as its header: give such a table a header.
 *  - Names match exactly, else ignoring ASCII case when just one column
 *    does ("z=zcmb" finds ZCMB); when several columns differ from the name
 *    only in case and none matches exactly, the mapping is refused as
 *    ambiguous. An exact match wins, so that a table with both zcmb and
 *    ZCMB reads each by its own spelling. FITS column names (TTYPEn) go by
 *    the same rule. Two roles may not reach one column (z and zhel may).
 *  - An empty header name (the unnamed index column pandas' to_csv writes
 *    first, ",z,mu,err") is a column that no role can map; it keeps the
 *    other columns in place.
 *  - Every data row must have the same number of fields as the first one.
 *    A row may have fewer fields than the header has names only if the
 *    names left over are trailing, filled by no row and mapped to no role,
 *    and no name is empty: they are ignored with one warning (the Pantheon
 *    2018 files have one such name). A row with more fields than names, or
 *    a missing mapped column, is an error: columns never shift.
 *  - Values are checked only in mapped columns; the id column is text.
 *  - FITS binary tables by CFITSIO's extended names; errors name the row.
 * Light-curve tables (mb with x1 and color; the roles in lt_survey_spec's
 * columns): err_x1, err_color and err_calib_mu > 0, dz >= 0, calibrator 0
 * or 1 and a calibrator's calib_mu given, |cov_a_b| <= err_a err_b, group
 * labels of 1 to LT_GROUP_NAME_MAX characters without = : , . @ or blanks.
 * Checks: finite numbers, z > 0, zhel > 0, err > 0, dl > 0, no duplicate
 * header names, the covariance sizes, symmetry (|C_ij - C_ji| <= 1e-6
 * sqrt(C_ii C_jj); the mean of the two is used) and positive definiteness.
 * Cuts apply to the table and the covariance together.
 */
/*
 * With spec->nmore > 0 the tables are read each by its own spec and joined:
 * rows in order, the covariance block-diagonal (lt_cov_join) plus
 * spec->cross_cov, every table with the same observable (and, for light
 * curves, all with a mass column or none). A light-curve row's group is
 * its table's group column, else the table's name (spec->name, or the
 * file's stem), which must then be a group label; row numbers stay those
 * of each table. Warnings are prefixed with the table's name.
 */
lt_survey *lt_survey_read(const lt_survey_spec *spec, lt_error *err);
void lt_survey_free(lt_survey *s);

/* lt_survey_read in its two steps: everything but the factorisation (the
 * covariance built and cut, not yet proved positive definite), then
 * lt_survey_factor, which factors s->cov and, on failure, says which
 * matrices made it (LT_EINPUT for a matrix that is not positive definite,
 * whose message ends with LT_SURVEY_INSPECT_HINT; s->cov is then left as
 * built, for lt_cov_diagnose). lantern inspect takes the two steps to
 * diagnose what the others refuse. */
lt_survey *lt_survey_read_unfactored(const lt_survey_spec *spec, lt_error *err);
int lt_survey_factor(const lt_survey_spec *spec, lt_survey *s, lt_error *err);
#define LT_SURVEY_INSPECT_HINT \
    " ('lantern inspect' with the same data options shows its negative directions)"

/* The name of the table spec reads: spec->name, or the file's stem (no
 * folders, no extension, no FITS [..] suffix), into buf. */
void lt_survey_spec_name(const lt_survey_spec *spec, char *buf, size_t size);

/* Add a warning (copied) of kind id (an LT_WARN_* string, kept as given)
 * to s; returns LT_ENOMEM on failure. */
int lt_survey_warn(lt_survey *s, const char *id, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));

/* Add a light-curve table's own columns (x1, colour, masses, their errors
 * and covariances, dz, calibrators, group labels) to the FNV-1a digest *h
 * (lantern/digest.h); nothing for other tables. */
void lt_survey_digest_lightcurve(const lt_survey *s, uint64_t *h);

/* Summary numbers of a survey, for lantern inspect. */
#define LT_HIST_MAX 64
#define LT_GROUPS_MAX 64
/* A host mass below this (log10 M / M_sun) is a placeholder for a host
 * without a measurement (JLA writes 5 for them; real SN Ia hosts lie above
 * about 7: common practice, no source). */
#define LT_MASS_PLACEHOLDER 7.0
/* The host-mass split of the standardisation's step (JLA's, Betoule et al.
 * 2014). */
#define LT_MASS_SPLIT 10.0
/* The longest group label: parameters are named NAME@GROUP within
 * LT_NAME_MAX (32) characters, and the longest NAME is color_mean. */
#define LT_GROUP_NAME_MAX 20
typedef struct lt_lightcurve_stats {
    double x1_min, x1_max, color_min, color_max;
    double mass_min, mass_max;            /* over real masses (NaN: no mass column) */
    size_t n_mass_high, n_mass_low;       /* real masses >= LT_MASS_SPLIT, below it */
    size_t n_mass_placeholder;            /* below LT_MASS_PLACEHOLDER */
    size_t ngroups;                       /* distinct labels (at most LT_GROUPS_MAX; more
                                           * are counted in groups_more) */
    const char *group[LT_GROUPS_MAX];     /* first seen first; point into the survey */
    size_t group_n[LT_GROUPS_MAX];
    size_t groups_more;
    size_t ncalibrators;
} lt_lightcurve_stats;

typedef struct lt_survey_stats {
    lt_lightcurve_stats lc;                        /* light-curve tables only */
    double z_min, z_max, zhel_min, zhel_max, obs_min, obs_max;
    double err_min, err_median, err_max, err_mean; /* NaN without errors */
    size_t nbins;                                  /* histogram of z */
    double edges[LT_HIST_MAX + 1];                 /* equal widths in z */
    size_t counts[LT_HIST_MAX];
} lt_survey_stats;

/* Fill st for s with an nbins-bin histogram (1 <= nbins <= LT_HIST_MAX). */
int lt_survey_stats_compute(const lt_survey *s, size_t nbins, lt_survey_stats *st,
                            lt_error *err);

/* ---------------------------------------------------------------------- */
/* Probe tables: a few measurements and their covariance (BAO, CMB)        */
/* ---------------------------------------------------------------------- */

/*
 * A CSV file with a header naming its columns: quantity and value always;
 * z (> 0), err (> 0; needed without a covariance) and rd_fid (> 0) where
 * they apply, each of them empty in a row it does not apply to; any other
 * column (a tracer's name, say) is ignored. '#' starts a comment line. The
 * covariance comes from cov_path (lt_matrix_read, which refuses an
 * asymmetric matrix; its size must match the rows), else from err
 * (diagonal); it must be positive definite, and is factored once here.
 * Absent columns and empty fields read NaN. Errors name the file and line.
 */
#define LT_PROBE_NAME 32
typedef struct lt_probe {
    char *path, *cov_path;          /* as given (cov_path NULL: from err) */
    size_t n;
    char (*quantity)[LT_PROBE_NAME];
    double *z, *value, *err, *rd_fid;
    long *line;                     /* each row's line in path */
    int has_z, has_err;
    double *cov;                    /* n x n, row-major */
    double *chol;                   /* its lower Cholesky factor (GSL's layout) */
} lt_probe;
int lt_probe_read(const char *path, const char *cov_path, lt_probe **out, lt_error *err);
void lt_probe_free(lt_probe *p);

/* ---------------------------------------------------------------------- */
/* Dense covariance files                                                  */
/* ---------------------------------------------------------------------- */

/*
 * Read a dense matrix: text, either the size N then N*N values (any line
 * breaks), or N rows of N values; or a FITS image (2-D, N x N). *m gets a
 * malloc'ed row-major matrix, *n its size. Errors name the file and line.
 */
int lt_matrix_read(const char *path, double **m, size_t *n, lt_error *err);

/* True if path names a FITS file (by extension, before any [..] suffix). */
int lt_path_is_fits(const char *path);

#endif
