/*
 * lantern/report.h - summaries as JSON and tables, and result files.
 *
 * Writers take the caller's stream or path; none prints on its own.
 */
#ifndef LANTERN_REPORT_H
#define LANTERN_REPORT_H

#include <stdio.h>

#include "lantern/inference.h"
#include "lantern/likelihood.h"
#include "lantern/posterior.h"
#include "lantern/survey.h"

struct cJSON;

/*
 * The summary of a best fit (DESIGN.md fields): model, n_data, chi2_min,
 * dof, converged, params.NAME.{best,sd,prior}, derived.NAME.{best,sd},
 * and more (p_value, aic, bic, offset, fixed values, covariance,
 * correlation, optimizer, data files, warnings).
 */
struct cJSON *lt_report_fit_json(const lt_like *l, const lt_fit_result *r,
                                 const lt_survey_spec *data, unsigned long seed);

/* The same as a readable table. */
void lt_report_fit_table(FILE *f, const lt_like *l, const lt_fit_result *r,
                         const lt_survey_spec *data);

/* residuals.csv: id,z,zhel,observed,model,residual,pull, model[i] the
 * prediction for object i (lt_pipeline_predict), pull = residual /
 * sqrt(C_ii), the total variance; written atomically. */
int lt_report_write_residuals(const char *path, const lt_like *l, const double *model,
                              lt_error *err);

/* ---- sampled posteriors ---- */

/* Why r did not converge, in a sentence for warnings: the chains' step
 * cap, importance sampling's draw cap or its Pareto k, a reweighting. */
const char *lt_report_unconverged_text(const lt_posterior *r);
struct cJSON *lt_report_sample_json(const lt_like *l, const lt_posterior *r,
                                    const lt_survey_spec *data, unsigned long seed);
/* The warning for a compression that the posterior check found off and
 * could not refine (summary.json and stderr say the same), into buf. */
void lt_report_compression_warning(const lt_posterior *r, char *buf, size_t size);
void lt_report_sample_table(FILE *f, const lt_like *l, const lt_posterior *r,
                            const lt_survey_spec *data);
/* What convergence.ess_definition says of importance-sampling draws. */
#define LT_REPORT_ESS_IS_DEFINITION                                                          \
    "smallest over the parameters of the importance-sampling ESS of the weighted mean and of " \
    "the indicators of the 5% and 95% quantiles: sum w (f - mu)^2 sum w / sum w^2 (f - mu)^2, " \
    "Kish's (sum w)^2 / sum w^2 with each draw counted by its (f - mu)^2"
/* Importance weights whose Pareto k is above this are warned about
 * (Vehtari et al., arXiv:1507.02646). */
#define LT_PARETO_K_WARN 0.7
/* The warning for a posterior r of importance sampling whose Pareto k is
 * above LT_PARETO_K_WARN. */
void lt_report_pareto_warning(const lt_posterior *r, char *buf, size_t size);
/* What lt_report_write_chains is asked besides the posterior (NULL: the
 * defaults, every draw and no progress). */
typedef struct lt_chains_opts {
    size_t thin; /* keep every thin-th row of each chain (the first, thin + 1-th, ...):
                  * ceil(ndraws / thin) rows a chain; 0 or 1: every row */
    /* rows of file ("chains.csv", then "chains.fits") written so far, of
     * total, at about every tenth and at the end; NULL: none */
    void (*progress)(const char *file, size_t rows, size_t total, void *ctx);
    void *ctx;
} lt_chains_opts;
/* chains.csv and chains.fits: one row per kept draw: chain, step (the
 * draw's place in its chain as sampled, 1-based), weight (only when the
 * draws are weighted: r->weights), then r's columns. Numbers in the CSV
 * are lt_format_shortest's (each reads back as exactly the double); the
 * FITS table (extension CHAINS) has 32-bit integer chain and step columns
 * and 64-bit float columns, and header keywords naming the model, data,
 * seed, version, chains, thinning (FILETHIN), weights and convergence.
 * Both written atomically. */
int lt_report_write_chains(const char *dir, const lt_like *l, const lt_posterior *r,
                           const lt_survey_spec *data, unsigned long seed,
                           const lt_chains_opts *o, lt_error *err);

/* ---- timing (lantern bench; lt_pipeline_bench fills it) ---- */

typedef struct lt_bench {
    const char *model;         /* its name (static) */
    size_t n_data, knots;
    int compressed;            /* the compressed path (0: the exact one) */
    const char *covariance;    /* the covariance's kind (static) */
    double evals_per_s;        /* one thread, at 200 points near the best fit */
    double setup_s;            /* reading, factorising, compressing */
    double peak_rss_mb;        /* of the process */
    double max_abs_dchi2;      /* compressed against exact over those points with chi2 -
                                * chi2_min < 50 (0 for the exact path) */
} lt_bench;
/* bench's result as JSON (model, n_data, path, knots, evals_per_s, setup_s,
 * peak_rss_mb, max_abs_dchi2, covariance), and as a table on f. */
struct cJSON *lt_report_bench_json(const lt_bench *b);
void lt_report_bench_table(FILE *f, const lt_bench *b);

/* ---- distances (lantern distance) ---- */

/* Cosmology c's table t at the n redshifts z (every column filled), as a
 * readable table headed by the model and its parameters, as CSV (columns
 * z, comoving_mpc, transverse_mpc, luminosity_mpc, angular_mpc, distmod,
 * lookback_gyr, age_gyr, hubble_km_s_mpc: DESIGN.md's order), or as JSON
 * ({model, params, rows}; an infinite age or mu at z = 0 is null). early
 * (r_d and the CMB quantities, lt_cosmo_early_eval; NULL with radiation
 * off) adds a line to the table and "early_universe" {rd_mpc, z_star,
 * rs_star_mpc, dm_star_mpc, shift_r, acoustic_l} to the JSON. */
void lt_report_distance_table(FILE *f, const lt_cosmo *c, const lt_cosmo_early *early,
                              size_t n, const double *z, const lt_cosmo_table *t);
void lt_report_distance_csv(FILE *f, size_t n, const double *z, const lt_cosmo_table *t);
struct cJSON *lt_report_distance_json(const lt_cosmo *c, const lt_cosmo_early *early, size_t n,
                                      const double *z, const lt_cosmo_table *t);

/* ---- surveys (lantern inspect) ---- */

/* A survey as read (s from spec), its summary numbers st and covariance
 * check ci: n_data, n_read, observable, the redshift and observable
 * ranges, z_histogram, err, covariance, files, warnings (every one, silenced
 * or not) and warning_ids (their kinds, in the same order). With a
 * covariance that is not positive definite, d (else NULL) its diagnosis:
 * covariance.diagnosis = {n_negative, n_zero, tolerance,
 * smallest_eigenvalues, direction: [{object, row, id, z, weight}],
 * pair_correlation, hint}. */
struct cJSON *lt_report_survey_json(const lt_survey_spec *spec, const lt_survey *s,
                                    const lt_survey_stats *st, const lt_cov_info *ci,
                                    const lt_cov_diagnosis *d);
/* The same as a readable table, with the redshift histogram drawn. */
void lt_report_survey_table(FILE *f, const lt_survey_spec *spec, const lt_survey *s,
                            const lt_survey_stats *st, const lt_cov_info *ci,
                            const lt_cov_diagnosis *d);
/* What most likely makes a covariance fail, read from its diagnosis d and
 * spec (a pair correlated beyond 1; --no-err-diag with a systematics-only
 * matrix; a negative eigenvalue within rounding of the matrix's digits; a
 * matrix that is not a covariance as given), into buf. */
void lt_report_cov_hint(const lt_survey_spec *spec, const lt_survey *s,
                        const lt_cov_diagnosis *d, char *buf, size_t size);

/* ---- comparisons (lantern compare) ---- */

/* Kass & Raftery 1995's words for |2 ln B|: below 2 "not worth more than a
 * bare mention", 2-6 "positive", 6-10 "strong", above 10 "very strong". */
const char *lt_report_kass_raftery(double two_ln_b);
/* compare's summary (DESIGN.md fields) of n models, the first the
 * reference: per model k_params, chi2_min, delta_chi2, dof, aic, bic, dic,
 * p_d, converged, evidence, ln_b (+- ln_b_err), two_ln_b, reading,
 * params.NAME.{best,mean,sd,prior}, warnings. */
struct cJSON *lt_report_compare_json(const lt_model_result *m, size_t n);
/* The same as a table, with the priors the evidence depends on. */
void lt_report_compare_table(FILE *f, const lt_model_result *m, size_t n,
                             const lt_survey_spec *data);
/* What a comparison warns of for model m: a posterior reaching a prior
 * edge (ln Z depends on that prior) into edges, a p_V far from the number
 * of sampled parameters (|p_V - k| > max(1, k/2): DIC a poor guide) into
 * dic; each empty when there is nothing to say. */
void lt_report_compare_warnings(const lt_model_result *m, char *edges, size_t esize, char *dic,
                                size_t dsize);
/* dir/nested_MODEL.csv: weight,loglike, then the parameters, one row per
 * nested sample; written atomically. */
int lt_report_write_nested(const char *dir, const lt_model_result *m, lt_error *err);

/* ---- how people write names (labels.c) ---- */

/* The forms of a label: LaTeX (math in $...$) for tables, PLplot's text
 * (#d, #u: subscript and back; UTF-8 Greek letters and minus sign) for
 * figures. */
typedef enum { LT_LABEL_TEX = 0, LT_LABEL_PLOT } lt_label_form;
/* A parameter's symbol with its unit where it has one ("omega_m":
 * "$\Omega_\mathrm{m}$", "Ω#dm#u"); a per-group name NAME@GROUP is NAME's
 * symbol with the group after it in brackets; a name with no symbol comes
 * back as written (LaTeX: in \texttt, its specials escaped). Into buf
 * (truncated to size); returns buf. */
const char *lt_report_param_label(const char *name, lt_label_form f, char *buf, size_t size);
/* A model's name for people ("lcdm-flat": "flat $\Lambda$CDM", "flat
 * ΛCDM"); an unknown name as written. Into buf; returns buf. */
const char *lt_report_model_label(const char *name, lt_label_form f, char *buf, size_t size);

/* ---- runs of several models (lantern run, lantern report) ---- */

/* One sampled model as saved in its folder (summary.json, chains.fits or chains.csv). */
typedef struct lt_run_model {
    char *name;                 /* the model, "lcdm-flat" */
    char *label;                /* how tables and legends name it */
    const lt_cosmo_model *model;
    size_t nparams, nderived;
    char **names;               /* nparams then nderived */
    lt_prior *priors;           /* nparams (uniform priors give the edges) */
    double *best;               /* nparams + nderived */
    lt_post_stats *stats;       /* nparams + nderived */
    size_t nchains, ndraws;     /* draws per chain */
    size_t step_every;          /* sampler steps between a chain's rows (the step column:
                                 * --thin times the importance weighting's thinning; 1 when
                                 * every step is kept) */
    double *draws;              /* nchains * ndraws rows of nparams + nderived */
    double *weights;            /* one per row of draws (the chain file's "weight" column:
                                 * importance weights, mean 1, >= 0), NULL when the draws
                                 * are unweighted; everything that turns draws into a
                                 * quantile, density or contour uses them */
    double *logpost, *chi2;     /* one per row of draws: the chain file's logpost and chi2
                                 * columns (lt_run_model_load; NULL from a plain table) */
    int weighted;               /* weights present (summary.json "weighted": true must
                                 * come with them); rhat_max is then NaN (null) and
                                 * ess_min the importance-sampling ESS */
    int independent;            /* the draws are independent, in the order drawn (the
                                 * summary's sampler.method names importance sampling),
                                 * not the steps of chains */
    double chi2_min, aic, bic, offset_best, rhat_max, ess_min;
    double ln_z, ln_z_err;      /* NaN where no evidence was computed */
    long dof;
    size_t k_params, n_data;
    int converged, offset_marginal;
    lt_cosmo_params best_params; /* the fixed values with the best fit applied */
    char *data_file;            /* the summary's data.file, or NULL */
    char *data_digest;          /* its data.digest, or NULL (older summaries) */
    char *probes;               /* its data.probes ("sn+bao"), or NULL (older summaries) */
} lt_run_model;

/*
 * Read dir/summary.json and the chains: dir/chains.fits (its CHAINS table)
 * when there is one, else dir/chains.csv. The columns must be
 * chain,step[,weight],logpost,chi2 and then the summary's parameters and
 * derived quantities in its order (in the FITS table, one number a row,
 * 64-bit floats but chain and step); another header, a row with another
 * number of fields, or a weight that is negative or not finite is an input
 * error naming the file and line (in chains.fits, the column or row in the
 * message, line 0).
 */
int lt_run_model_load(const char *dir, lt_run_model *m, lt_error *err);
void lt_run_model_free(lt_run_model *m);
/*
 * Draws from a plain table (lantern plot): a text file whose first line
 * that is not blank names the columns (after a '#' if it has one), split at
 * commas when that line has one and at blanks otherwise, with '#' lines
 * after it taken as comments; or a FITS binary table (".fits", ".fit",
 * ".fits.gz", with CFITSIO's extended names: file.fits[2]), its numeric
 * columns by their TTYPEn names. Every column is a parameter but "weight"
 * (the rows' weights: finite, >= 0) and lantern's own chain, step, logpost
 * and chi2, so that a chains.csv reads as a table too. m gets no priors
 * (NULL), no best fit (NaN), one chain of every row, and the file's name
 * without folder and extension as its name and label. A column with an
 * empty name (the row index pandas' to_csv writes first) is left out. A row
 * with another number of fields, a value that is not a number (nan is
 * allowed) or a column named twice is an input error naming the file and
 * line.
 */
int lt_run_model_load_table(const char *path, lt_run_model *m, lt_error *err);

/* m's worst R-hat as text for a note: "1.31", or "- (importance-weighted
 * draws)" where there is none (weighted draws have no R-hat). Returns buf. */
const char *lt_run_model_rhat_text(const lt_run_model *m, char *buf, size_t size);

/*
 * Rounding by the rule of the Particle Data Group (Review of Particle
 * Physics, introduction): the three leading digits of the error decide:
 * 100-354, two significant digits; 355-949, one; 950-999, round up to 1000
 * and keep two. The value keeps the error's last decimal place. For
 * asymmetric errors the smaller one decides. Writes value, minus and plus
 * as text (minus and plus without sign).
 */
void lt_pdg_round(double value, double minus, double plus, char *v, char *m, char *p,
                  size_t size);

/* Whether two saved models were fitted to the same data: the same data
 * digest where both summaries record one ("data.digest"), otherwise the
 * same n_data and data file (summaries written before the digest). */
int lt_run_model_same_data(const lt_run_model *a, const lt_run_model *b);
/* The model that model i of n is compared with (Delta AIC, Delta BIC,
 * ln B): the first of the models fitted to the same data as i (i itself
 * when it is that first one), or -1 when i is alone on its data and not the
 * first model (its cells stay blank). Each data set, as each combination of
 * probes of a run, so has its own reference. */
long lt_run_model_reference(const lt_run_model *models, size_t n, size_t i);

/*
 * How a parameter is quoted. edges flags (LT_EDGE_LOWER, LT_EDGE_UPPER)
 * the edges of a uniform prior where the posterior's density is above
 * LT_EDGE_DENSITY_WARN of its peak (lt_post_edge_density). A posterior
 * that reaches one edge only, with its 2.5% (97.5%) quantile within 2% of
 * the prior's width of that edge, is quoted as a 95% upper (lower) limit;
 * any other is a two-sided interval, which the tables mark when an edge is
 * flagged (the prior then sets part of the interval).
 */
typedef enum { LT_QUOTE_TWO_SIDED = 0, LT_QUOTE_UPPER, LT_QUOTE_LOWER } lt_quote_kind;
enum { LT_EDGE_LOWER = 1, LT_EDGE_UPPER = 2 };
typedef struct lt_quote {
    lt_quote_kind kind;
    double value, minus, plus; /* median and 68% equal-tailed; or the limit */
    unsigned edges;            /* LT_EDGE_* flags */
    double edge_lo, edge_hi;   /* density at each edge over the peak; NaN if no uniform prior */
} lt_quote;
lt_quote lt_quote_of(const lt_run_model *m, size_t col);

/* constraints.md, constraints.tex (booktabs) and constraints.csv
 * (model,parameter,value,minus,plus,kind,prior_edge,converged) for n
 * models, into dir. Marks: a dagger on a two-sided interval whose
 * posterior reaches a prior edge, a double dagger on a model whose chains
 * did not converge, each with its footnote; Delta AIC, Delta BIC and ln B
 * are left blank for a model fitted to other data than the first model
 * (lt_run_model_same_data), with a footnote saying so. prior_edge is
 * none, lower, upper or both; converged is true or false. */
int lt_report_write_tables(const char *dir, const lt_run_model *models, size_t n,
                           lt_error *err);

/* ---- the report of saved runs (lantern run, lantern report) ---- */

#define LT_REPORT_MAX_MODELS 32
/* The models of one report: their folders and labels, then, once written,
 * the models as loaded (for the caller's notes). */
typedef struct lt_report_set {
    size_t n;
    char *dirs[LT_REPORT_MAX_MODELS];    /* each model's folder */
    char *folders[LT_REPORT_MAX_MODELS]; /* the same, as given (relative to its run) */
    char *labels[LT_REPORT_MAX_MODELS];  /* how tables name it (NULL: its model) */
    char *name;                          /* the first run's name, from its summary */
    lt_survey *survey;                   /* the first model's data (lt_report_set_add_run) */
    size_t loaded;
    double figure_width_in;              /* the figures' width (0: double column) */
    lt_run_model models[LT_REPORT_MAX_MODELS];
} lt_report_set;
void lt_report_set_init(lt_report_set *rs);
void lt_report_set_free(lt_report_set *rs);
/* Add the model folder run/folder, named label in the tables (NULL: its
 * model). */
int lt_report_set_add(lt_report_set *rs, const char *run, const char *folder, const char *label,
                      lt_error *err);
/* Add every model of a saved run (the folders its summary.json lists),
 * labelled "RUN: MODEL" if label is set; the first model's data is read
 * for the Hubble diagram. A summary that is not a run's (no model folders)
 * is an input error naming it. */
int lt_report_set_add_run(lt_report_set *rs, const char *run, int label, lt_error *err);
/* Load the models (lt_run_model_load) and write dir/constraints.*, the
 * figures (the Hubble diagram from s, or the set's own survey when s is
 * NULL) and dir/summary.json: every model's summary with its "folder",
 * and the comparison (k_params, chi2_min, dof, aic, bic, their differences
 * to the first model, null across other data, converged, ln_z, ln_b and its
 * reading). */
int lt_report_set_write(lt_report_set *rs, const char *dir, const char *name,
                        const lt_survey *s, lt_error *err);

/* The printed widths of figures: a journal's single and double column,
 * in inches (about 8.6 and 17.8 cm; common practice across journals). */
#define LT_FIGURE_SINGLE_IN 3.4
#define LT_FIGURE_DOUBLE_IN 7.0
/* A figure width from text: "single" (LT_FIGURE_SINGLE_IN), "double"
 * (LT_FIGURE_DOUBLE_IN) or inches from 2 to 20 ("5.5"). Returns 0, or -1
 * for anything else (*width_in unchanged). */
int lt_report_figure_width(const char *text, double *width_in);
#define LT_FIGURE_WIDTH_TEXT                                                                   \
    "single (a journal's column, 3.4 in), double (two columns, 7 in; the default) or a width " \
    "in inches from 2 to 20"

/* Figures (PLplot through cairo), each a PNG at 300 dpi and a vector PDF
 * of width_in inches (0: LT_FIGURE_DOUBLE_IN): hubble.*, and per model
 * posterior_<model>.*, plane_<model>.* (curved, flat wCDM and w0-wa
 * models) and traces_<model>.*. The survey s gives the Hubble diagram's
 * data (NULL: no Hubble diagram, for measurements alone). Regions are
 * the highest-density regions holding 68.27% and 95.45% of a Gaussian
 * kernel density estimate of the draws (lt_post_kde2d). */
int lt_report_write_figures(const char *dir, const lt_run_model *models, size_t n,
                            const lt_survey *s, double width_in, lt_error *err);

/* ---- lantern plot: posteriors of any runs or tables in one figure ---- */

#define LT_PLOT_MAX_SERIES 16
typedef struct lt_plot_range {
    const char *name;
    double lo, hi;
} lt_plot_range;
typedef struct lt_plot_text {
    const char *name, *text; /* text: PLplot's (UTF-8; #d, #u for sub- and superscripts) */
} lt_plot_text;
typedef struct lt_plot_value {
    const char *name;
    double value;
} lt_plot_value;
/* What lt_report_plot draws; zeros and NULLs are the defaults. */
typedef struct lt_plot_opts {
    const char *const *params; /* the parameters, in order (NULL: every free parameter
                                * of the models, as the run figures have them) */
    size_t nparams;
    int pair;                  /* one 2-D panel of exactly two parameters, not a matrix */
    double width_in, height_in; /* 0: LT_FIGURE_DOUBLE_IN; 0: the layout's own height */
    const char *const *labels; /* a legend label per model (NULL, or a NULL entry: its own) */
    const lt_plot_range *ranges; /* axis ranges that replace the automatic ones */
    size_t nranges;
    const lt_plot_text *axis; /* axis labels that replace the typeset names */
    size_t naxis;
    const lt_plot_value *truth; /* values marked with a "+" and dotted lines */
    size_t ntruth;
    int no_best;               /* leave out the best fits' marks */
} lt_plot_opts;
/*
 * The posteriors of n models (runs' models, or tables of draws from
 * lt_run_model_load_table) overlaid in one figure at path: a PDF (vector)
 * or PNG (300 dpi) by its extension. Each model has its colour, its
 * regions of 68.27% and 95.45% of the mass and its marginals, as the run
 * figures draw them; best fits and truths are marked and kept in view.
 * A parameter no model has, a range or label for a parameter not drawn, a
 * range with lo >= hi, more than LT_PLOT_MAX_SERIES models, a pair layout
 * without exactly two parameters or another extension is an input error.
 */
int lt_report_plot(const char *path, const lt_run_model *models, size_t n,
                   const lt_plot_opts *o, lt_error *err);
/*
 * The draws lantern plot reads from each of nsrc sources, into out[0..*n):
 *  - a run's folder (its summary.json lists model folders): every model,
 *    or those named model when model is not NULL;
 *  - a sampled model's folder (summary.json and chains.csv: lantern
 *    sample --out, or a model's folder in a run), and its chains.csv or
 *    chains.fits named alone: its draws with their priors and best fit;
 *  - any other file: a plain table (lt_run_model_load_table).
 * With several sources each legend label starts with its source (a run's
 * name, or the path). At most max models; on failure none is kept (the
 * error names the source).
 */
int lt_report_plot_sources(const char *const *src, size_t nsrc, const char *model,
                           lt_run_model *out, size_t max, size_t *n, lt_error *err);

/*
 * Kinds of warning of the methods and their summaries (besides the
 * survey's, LT_WARN_* in lantern/survey.h): stable short ids, printed with
 * each warning and named by --no-warn ID (lt_warning_kinds in
 * lantern/pipeline.h lists them all).
 */
#define LT_WARN_IMPORTANCE_WEIGHTS "importance-weights" /* Pareto k of the weights high */
#define LT_WARN_COMPRESSION "compression"      /* compressed vs exact likelihood */
#define LT_WARN_WEIGHTED_ESS "weighted-ess"    /* weighted draws' ESS below the target */
#define LT_WARN_PRIOR_EDGE "prior-edge"        /* a posterior against its prior's edge */
#define LT_WARN_NOT_CONVERGED "not-converged"  /* a run that did not converge */
#define LT_WARN_NO_EVIDENCE "no-evidence"      /* too many parameters for nested sampling */
#define LT_WARN_LAPLACE "laplace"              /* no Laplace errors at the best fit */
#define LT_WARN_DIC "dic"                      /* DIC a poor guide for a model */
#define LT_WARN_RENAMED_FLAG "renamed-flag"    /* a flag's old name (run --set) */

/* Append a warning to o's "warnings" list and its kind's id (LT_WARN_*) to
 * "warning_ids", making both lists if o has none: the summaries' parallel
 * lists, as inspect's, so that scripts can pick warnings by kind. */
void lt_report_json_warning(struct cJSON *o, const char *id, const char *text);
/* Add the "data" block (files, columns, a digest of the survey and the
 * measurements) and the warnings of l's survey (lt_report_json_warning)
 * to o. */
void lt_report_add_data(struct cJSON *o, const lt_survey_spec *data, const lt_like *l);
/* Add "calibrators" ({n, h0_offset_correlation}) to o where l's table has
 * calibrators, and "standardisation" ({n_objects, method, scatter,
 * velocity_dispersion_km_s, mass_split, lensing_per_z, tuned_sigma_int:
 * {NAME: value}}) where l standardises a light-curve table; cov is the
 * covariance of l's free parameters (dim x dim), or NULL (no correlation). */
void lt_report_std_json(struct cJSON *o, const lt_like *l, const double *cov);

/* The text line "standardisation: METHOD likelihood, ..." (nothing
 * without a standardisation). */
void lt_report_std_line(FILE *f, const lt_like *l);

/* What calibrators measure: H0 and M (offset) with their correlation. */
typedef struct lt_calibrated {
    size_t ncal;              /* calibrator rows */
    size_t h0_at, offset_at;  /* indices among l's free parameters */
    double correlation;       /* of h0 and offset, from the covariance given */
} lt_calibrated;
/* Fill c from cov (dim x dim over l's free parameters; NULL: correlation
 * NaN); 1 where l's table has calibrators and h0 and offset are both free,
 * else 0. */
int lt_report_calibrated(const lt_like *l, const double *cov, lt_calibrated *c);
/* The text line "calibrators: N ...: H0 = ..., M = ..., correlation r",
 * with value and sd indexed like l's free parameters. */
void lt_report_calibrated_line(FILE *f, const lt_calibrated *c, const double *value,
                               const double *sd);
/* Print "FILE: N objects, observable mag; 1 measurement" (the parts there
 * are) to f, with the file's whole name however long. */
void lt_report_describe_data(FILE *f, const lt_like *l, const lt_survey_spec *data);

/* Add "fixed" (every parameter of l that is not free, with its value) and,
 * where l has measurements, "measurements" ([{name, mean, sd, at_best,
 * pull}], at_best = measured[k], the quantity at the best fit, as the fit
 * or posterior holds it; pull = (at_best - mean) / sd) to o. */
void lt_report_add_fixed(struct cJSON *o, const lt_like *l, const double *measured);
/* The measurements and their pulls as table lines ("  measured h0 = 73.04
 * +- 1.04: 72.9 at the best fit, pull -0.13"), measured[k] at the best
 * fit, if any. */
void lt_report_print_measurements(FILE *f, const lt_like *l, const double *measured);

/* Write a JSON object to path atomically (pretty-printed). */
int lt_report_write_json(const char *path, const struct cJSON *o, lt_error *err);

/* ---- campaigns and forecasts ---- */

/* One parameter of a campaign group: its pulls and its coverage. */
typedef struct lt_bias_panel {
    const char *name;
    size_t n;
    const double *pulls;
    double pull_mean, pull_width;
    double cover68, cover68_err, cover95, cover95_err;
    double nominal68, nominal95;     /* the probabilities the intervals are defined to hold */
} lt_bias_panel;

/* dir/name.{png,pdf}: a histogram of each parameter's pulls against the
 * N(0, 1) they should follow, and below, the coverage of the 68% and 95%
 * intervals with their binomial errors against the nominal values (those
 * of the first panel, which every panel of a campaign group shares). */
int lt_report_write_bias_figure(const char *dir, const char *name, const char *title,
                                const lt_bias_panel *panels, size_t np, lt_error *err);

/* dir/name.{png,pdf}: the 68% and 95% joint regions of a two-parameter
 * Gaussian with covariance cov (row major, 2 x 2) around (x, y). */
int lt_report_write_ellipse(const char *dir, const char *name, const char *title,
                            const char *xname, const char *yname, double x, double y,
                            const double cov[4], lt_error *err);

#endif
