/* Internal to the likelihood module: the likelihood's layout, and the
 * built-in terms (sn.c, measure.c) as likelihood.c sees them. */
#ifndef LANTERN_LIKELIHOOD_INTERNAL_H
#define LANTERN_LIKELIHOOD_INTERNAL_H

#include "compress.h"
#include "lantern/likelihood.h"

#define LT_MAX_TERMS (2 + LT_MAX_MEASUREMENTS)

typedef struct lt_term {
    const lt_term_type *type;
    void *state;
} lt_term;

struct lt_like {
    const lt_cosmo_model *model;
    size_t npar;                   /* table entries, free and fixed */
    lt_param par[LT_MAX_PARAMS];
    int cosmo_id[LT_MAX_PARAMS];   /* LT_P_* of a cosmological entry, else -1 */
    size_t dim;
    size_t free_at[LT_MAX_FREE];   /* table index of free parameter i */
    size_t nfixed;
    size_t fixed_at[LT_MAX_PARAMS];
    lt_cosmo_params base;          /* fixed cosmological values and defaults */
    int h0_known;
    int rd_known;                  /* r_d from its formula: the early universe with omega_b_h2
                                    * read by a term and h0 known (derived rd, rd_h) */
    lt_offset_mode offset;         /* of the supernova term (NONE without one) */
    int offset_at;                 /* table index of a sampled offset, or -1 */
    size_t nterms;
    lt_term term[LT_MAX_TERMS];
    struct lt_sn *sn;              /* the supernova term's state, or NULL */
    size_t sn_term;                /* its index in term[] */
    const lt_survey *s_survey;     /* its survey */
    size_t nmeas;
    lt_measurement meas[LT_MAX_MEASUREMENTS];
    const lt_probe *bao, *cmb;     /* the BAO and CMB terms' tables, or NULL */
    int rd_free;
    struct lt_std *std;            /* the standardisation term's state, or NULL */
    lt_std_spec std_spec;          /* its options */
    size_t ntune;                  /* the chi2 method's scatter entries to tune */
    int tune_at[LT_STD_GROUPS_MAX];
    int tuned;                     /* lt_like_scatter_tune has set them */
};

struct lt_like_work {
    size_t nterms;
    const lt_term_type *type[LT_MAX_TERMS]; /* whose work each is (freed by it) */
    void *term[LT_MAX_TERMS];
    size_t evals; /* evaluations inside the prior (lt_like_work_evals) */
};

/* Every table entry's value at theta (free ones from theta, fixed ones
 * their value; offset 0 where it is not an entry) and the cosmological
 * parameters. */
void lt_like_values(const lt_like *l, const double *theta, double *values, lt_cosmo_params *p);

/* A quantity by name, resolved once (derived.c): a table entry, else a
 * derived quantity, else a cosmological parameter the model holds at its
 * default (w0 = -1 in LCDM). What lt_like_quantity and a measurement read. */
typedef struct lt_quantity {
    int at;      /* table index, or -1 */
    int derived; /* LT_DER_*, or -1 */
    int cosmo;   /* LT_P_*, or -1 */
} lt_quantity;
/* 0 if nothing is called name, else 1 with *q filled. */
int lt_quantity_find(const lt_like *l, const char *name, lt_quantity *q);
/* Its value for the table's values and the cosmology c (c is read only
 * when q is not a table entry). */
double lt_quantity_value(const lt_quantity *q, const double *values, const lt_cosmo *c);

/* ---- the supernova term (sn.c) ---- */
typedef struct lt_sn_config {
    const lt_survey *s;
    lt_offset_mode offset; /* resolved: none, marginal or sampled */
    lt_obs kind;           /* the observable, for the offset's default prior */
} lt_sn_config;

extern const lt_term_type lt_term_sn;

/* The distance modulus 5 log10((1 + zhel) D_M(z) / Mpc) + 25 of the
 * grid's redshifts into mu (the grid's size; D_M goes there first); -1
 * outside the domain or where a distance is not positive. What both the
 * supernova and the standardisation terms compare with. */
int lt_like_distmod(const lt_cosmo *c, const lt_zgrid *g, const double *zhel, double *mu);

/* Set up the compressed path once the whole likelihood exists (its test
 * points are drawn from the priors of every free parameter); lt_like_alloc
 * calls it unless the spec asks for the exact path. */
int lt_sn_compress(lt_like *l, lt_error *err);

/* ---- the standardisation term (standard.c) ---- */
#define LT_STD_LENSING 0.055 /* sigma_lens = 0.055 z (Jonsson et al. 2010, MNRAS 405, 535) */
typedef struct lt_std_config {
    const lt_survey *s;
    const lt_like_spec *spec; /* its settings ask for offset@GROUP */
    lt_std_spec std;
    int has_groups;           /* the table has a group column */
    size_t ngroups;           /* 1 without one */
    char group[LT_STD_GROUPS_MAX][LT_GROUP_NAME_MAX + 1]; /* sorted by strcmp */
} lt_std_config;
/* The groups of light-curve survey s and spec's options into cf;
 * LT_EINPUT for more than LT_STD_GROUPS_MAX groups. */
int lt_std_configure(lt_std_config *cf, const lt_survey *s, const lt_like_spec *spec,
                     lt_error *err);
extern const lt_term_type lt_term_std;

/* ---- measurements (measure.c) ---- */
extern const lt_term_type lt_term_measure;

/* ---- terms over a probe table: BAO (bao.c), CMB (cmb.c) ---- */
typedef struct lt_probe_config {
    const char *path, *cov_path;
    int rd_free; /* BAO: sample rd_h */
} lt_probe_config;
extern const lt_term_type lt_term_bao, lt_term_cmb;
/* The table a term's state read. */
const lt_probe *lt_bao_table(const void *state);
const lt_probe *lt_cmb_table(const void *state);
/* r^T C^-1 r from the factor; r (n values) is overwritten. */
double lt_probe_chi2(const double *chol, size_t n, double *r);
/* What a term over a probe table holds: the table, each row's quantity
 * (an index into the term's names), the factored covariance. */
typedef struct lt_probe_term {
    lt_probe *data;
    int *kind;
    const double *chol; /* data's */
    double lognorm;
} lt_probe_term;
/* Read cf's table and map each row's quantity to its index in names; an
 * unknown one is refused at its file and line ("unknown WHAT quantity").
 * Close t in every case. */
int lt_probe_term_open(lt_probe_term *t, const lt_probe_config *cf, const char *what,
                       const char *const *names, int nnames, lt_error *err);
void lt_probe_term_close(lt_probe_term *t);

/* The table index of the entry called name, free or fixed, or -1. */
int lt_like_entry(const lt_like *l, const char *name);

#endif
