/*
 * lantern/pipeline.h - what a run is asked to do, read once.
 *
 * A run description (lt_job) gathers a run file (RUN.ini) and the flags
 * that override it under one set of rules: every setting is a run-file key
 * (section.key) and most have a flag of the command-line contract
 * (DESIGN.md); both go through lt_job_set, so a value means the same and is
 * refused with the same words whichever way it came. fit, sample, compare,
 * run, bench and campaign read their settings this way; campaign and
 * forecast read the shared sections of their own files with
 * lt_job_apply_ini.
 *
 * Run files (our own layout; paths are relative to the run file's folder):
 *   [run]          name, models (M1, M2, ...)
 *   [data]         file, columns, cov (comma-separated), modes,
 *                  no_err_diag, zmin, zmax, keep_ids, drop_ids (the table);
 *                  cross_cov, bao, bao_cov, rd, cmb, cmb_cov, standardise,
 *                  scatter, velocity_dispersion, mass_split; no_warn (kinds
 *                  of warning not to print, comma-separated: the section
 *                  every command that reads data reads)
 *   [survey.NAME]  the table keys of [data], one section per table joined
 *                  into one survey (then [data] has none of them)
 *   [model]        name, offset (none | marginal | sampled)
 *   [priors]       PARAM = uniform:LO:HI | gauss:MEAN:SD
 *   [fixed]        PARAM = VALUE
 *   [measurements] NAME = MEAN:SD[, MEAN:SD...]
 *   [fit]          starts, seed
 *   [sampler]      method, seed, chains, threads, warmup, check_every,
 *                  max_steps, target_ess, thin (the chain files keep every
 *                  thin-th draw)
 *   [nested]       live_points
 *   [output]       dir, format, figure_size
 * Unknown sections and keys, over-long lines and bad values are errors
 * naming the file and line (or the flag).
 *
 * Contracts: nothing here prints; errors are returned in lt_error with the
 * file and line (or the flag) they came from. Strings an lt_job hands out
 * live as long as the job (or, for flag values, as long as the caller's
 * argv).
 */
#ifndef LANTERN_PIPELINE_H
#define LANTERN_PIPELINE_H

#include <signal.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>

#include "lantern/error.h"
#include "lantern/ini.h"
#include "lantern/inference.h"
#include "lantern/likelihood.h"
#include "lantern/posterior.h"
#include "lantern/report.h"
#include "lantern/survey.h"

struct cJSON;

/* A NAME = VALUE entry of [priors], [fixed] or [measurements]. */
typedef struct lt_job_entry {
    const char *name, *value;
    const char *origin; /* the run file, or the flag ("--prior") */
    long line;          /* in the run file; 0 for a flag */
    int from_file;
} lt_job_entry;

#define LT_JOB_MAX_ENTRIES 32

typedef struct lt_job {
    lt_ini *ini;         /* the run file, or NULL */
    char **pool;         /* strings made while reading */
    size_t npool, cap;
    const char *name;    /* [run] name */
    const char *models;  /* [run] models: a comma-separated list */
    const char *probes;  /* [run] probes: combinations, "sn, bao, sn+bao" (NULL: one,
                          * of every term given) */
    lt_survey_spec data; /* the table; with several, the first ([survey.NAME] or the
                          * first --data), data.more pointing at parts */
    lt_survey_spec parts[LT_SURVEY_MAX_PARTS - 1]; /* the tables after the first */
    size_t nparts;
    int data_flags;      /* --data flags so far: the second and later add parts, and
                          * the table flags after one apply to its table */
    int cov_from_flags;  /* a --cov flag replaced the run file's list */
    const char *bao, *bao_cov; /* [data] bao, bao_cov: the BAO term's files */
    const char *rd;      /* [data] rd: "formula" (the default) or "free" */
    const char *cmb, *cmb_cov; /* [data] cmb, cmb_cov: the CMB term's files */
    const char *standardise, *scatter; /* [data] standardise (latent|chi2), scatter
                                        * (per-group|shared), or NULL */
    double velocity_dispersion, mass_split; /* [data] ...; NaN: the defaults */
    const char *model, *offset;
    lt_job_entry priors[LT_JOB_MAX_ENTRIES], fixes[LT_JOB_MAX_ENTRIES],
        measures[LT_JOB_MAX_ENTRIES];
    size_t npriors, nfixes, nmeasures;
    unsigned long seed;
    long starts;
    long chains, threads, warmup, check_every, max_steps;
    long thin;           /* [sampler] thin: the chain files keep every thin-th draw of
                          * each chain (summaries use every draw) */
    double target_ess;
    const char *sampler; /* [sampler] method: "auto" (the default), "importance", "mcmc" */
    long live_points;
    const char *out, *format;
    double figure_width; /* [output] figure_size (run --figure-size): the figures' width
                          * in inches (lt_report_figure_width; 0: a double column) */
    int force, quiet, verbose;
    uint64_t no_warn;    /* [data] no_warn, --no-warn: bit k silences lt_warning_kinds()[k] */
    int lenient;         /* priors and fixes apply to the models that have them */
} lt_job;

/* The defaults: seed 1, 8 starts, 4 chains, warm-up 0 (max(2000, 1000 d)),
 * checks every 1000 steps, 200000 steps at most, target ESS 1000, thin 1,
 * 1000 live points, format "table". */
void lt_job_init(lt_job *j);
void lt_job_free(lt_job *j);

/* Read RUN.ini into j, with "section.key=value" overrides applied to the
 * file first (origins[i]: the flag each came from, for errors). Every
 * section of the file must be one of the list above. */
int lt_job_read(lt_job *j, const char *path, const char *const *overrides,
                const char *const *origins, size_t noverrides, lt_error *err);

/*
 * Kinds of warning. Every warning lantern prints has a stable short id
 * (printed with it, "lantern: warning [ID]: ..."), so that one kind can be
 * silenced (--no-warn ID, [data] no_warn): the survey's (LT_WARN_* in
 * lantern/survey.h) and those below. Silencing concerns what is printed
 * only: JSON summaries keep every warning.
 */
/* (the ids, LT_WARN_IMPORTANCE_WEIGHTS ..., are in lantern/report.h, whose
 * summaries list them beside their warnings) */
typedef struct lt_warning_kind {
    const char *id, *what; /* what: a few words, for lists of the ids */
} lt_warning_kind;
/* Every kind, ended by {NULL, NULL}; at most 64. */
const lt_warning_kind *lt_warning_kinds(void);
/* 1 if j (NULL: none) lets warnings of kind id (NULL: of no kind) be
 * printed. */
int lt_job_warning_shown(const lt_job *j, const char *id);

/* The sections lt_job_apply_ini reads, as a mask. */
enum {
    LT_JOB_RUN = 1 << 0,
    LT_JOB_DATA = 1 << 1,
    LT_JOB_MODEL = 1 << 2,
    LT_JOB_PARAMS = 1 << 3, /* [priors], [fixed], [measurements] */
    LT_JOB_FIT = 1 << 4,
    LT_JOB_SAMPLER = 1 << 5,
    LT_JOB_NESTED = 1 << 6,
    LT_JOB_OUTPUT = 1 << 7,
    LT_JOB_ALL = 0xff
};
/* Apply the sections of ini in mask to j (marking their keys used; the
 * caller checks for unused ones). ini must outlive j. */
int lt_job_apply_ini(lt_job *j, lt_ini *ini, unsigned mask, lt_error *err);

/* One setting: section.key = value, from origin (a file, with its line) or
 * from a flag (origin the flag, line 0, from_file 0). Values are copied. */
int lt_job_set(lt_job *j, const char *section, const char *key, const char *value,
               const char *origin, long line, int from_file, lt_error *err);

/* Flags. lt_job_flag_find says whether flag ("--chains") is one of the
 * run description's, in which section (an LT_JOB_ bit), and whether it
 * takes a value;
 * lt_job_flag applies it (value NULL for one that takes none). */
int lt_job_flag_find(const char *flag, unsigned *section, int *takes_value);
int lt_job_flag(lt_job *j, const char *flag, const char *value, lt_error *err);

/* The data keys of section (as [data]) of ini into spec, paths relative to
 * ini's file; strings kept by j. For campaign files' [data.NAME]. */
int lt_job_data_section(lt_job *j, lt_ini *ini, const char *section, lt_survey_spec *spec,
                        lt_error *err);

/* The run description a stopped run left in dir/checkpoint/settings.ini,
 * with dir as its output folder: what --resume DIR reads. A folder without
 * one is refused ("no checkpoint here ...: " what). */
int lt_job_resume(lt_job *j, const char *dir, const char *what, lt_error *err);

/* Make spec's paths and j's BAO files absolute (strings kept by j), so
 * that summaries and resumes name them from anywhere. */
int lt_job_absolute(lt_job *j, lt_survey_spec *spec, lt_error *err);

/* The likelihood spec for model m: the offset, the priors and fixed values
 * (the run file's first, then the flags', which override them; with
 * lenient set, those of parameters m lacks are left out), and every
 * measurement. Errors name the file and line or the flag. */
int lt_job_like_spec(const lt_job *j, const lt_cosmo_model *m, lt_like_spec *spec,
                     lt_error *err);
/* The same for j's model, which must be given. */
int lt_job_model_spec(const lt_job *j, lt_like_spec *spec, lt_error *err);

/* j's survey into *s; none (NULL) when no data file is given but j has a
 * measurement or a BAO file (the likelihood then has other terms; other
 * survey options are then an error). */
int lt_job_survey(const lt_job *j, lt_survey **s, lt_error *err);

/* Write j, with its final likelihood spec, as a run file (absolute paths)
 * that lt_job_read reads back to the same run: what --resume reads. For a
 * job of several models (compare), spec NULL: the priors, fixed values and
 * measurements as j's entries finally stand. */
int lt_job_write(const lt_job *j, const lt_like_spec *spec, const char *path, lt_error *err);

/*
 * Checkpoint fingerprints: FNV-1a digests, in parts, of the data as read
 * (n, z, zhel, observations), the whole covariance, the model with its
 * priors, fixed values, measurements and offset mode, and the caller's
 * settings (seed, method options).
 */
enum { LT_FP_DATA, LT_FP_COV, LT_FP_MODEL, LT_FP_SETTINGS, LT_FP_NPARTS };
typedef struct lt_fingerprint {
    uint64_t part[LT_FP_NPARTS];
} lt_fingerprint;
/* The data, covariance and model parts; settings left at the empty digest
 * for the caller to add to. */
void lt_fingerprint_like(const lt_like *l, lt_fingerprint *fp);
/* The one number a checkpoint stores: the digest of the parts. */
uint64_t lt_fingerprint_value(const lt_fingerprint *fp);
/* Append the parts to a checkpoint's settings file (lt_job_write's) as a
 * comment line, rewriting it atomically; and check them on resume: LT_OK if
 * the file has no such line (an older checkpoint) or every part matches,
 * else LT_EINPUT naming the parts that differ. A part of fp that is 0 is
 * not compared (a caller that rebuilds the likelihood but not the method:
 * lantern reweight). */
int lt_fingerprint_write(const char *settings, const lt_fingerprint *fp, lt_error *err);
int lt_fingerprint_check(const char *settings, const lt_fingerprint *fp, lt_error *err);

/* ---- running methods ---- */

/* How a long method is doing, at each of its checks. */
typedef struct lt_progress {
    size_t draws_per_chain;
    double rhat_max, ess_min; /* over the parameters */
    int converged;
    int weighted;             /* importance sampling: draws_per_chain is all the draws,
                               * rhat_max NaN, pareto_k its weights' */
    double pareto_k;
} lt_progress;

/* How a nested run is doing: every LT_NESTED_PROGRESS_EVERY iterations
 * and once at its end (lt_nested_status, with the model's name). */
typedef struct lt_nested_progress {
    const char *model;
    size_t iterations, evals;
    double logz, dlogz; /* ln Z so far; what the live points could still add */
} lt_nested_progress;

/* A check's progress as one line, without a newline, for whoever shows
 * it (the command line on stderr, the Python package on sys.stderr):
 * "sampling: ..." or "importance sampling: ...", the seconds so far and,
 * until converged, the seconds left at the rate seen (the ESS grows about
 * linearly with the draws once the chains mix) towards target_ess. */
void lt_pipeline_progress_text(const lt_progress *p, double seconds, double target_ess,
                               char *buf, size_t size);
/* A nested run's progress as one line, without a newline. */
void lt_pipeline_nested_text(const lt_nested_progress *p, char *buf, size_t size);

/* The kinds of line a long job has to say. */
typedef enum {
    LT_NOTE_PROGRESS = 0, /* where it is: "[1/3] lcdm: best fit, then nested sampling ..." */
    LT_NOTE_NEWS,         /* what happened: "the compressed likelihood is off ..." */
    LT_NOTE_WARNING       /* what the results need read with: a prior edge, no convergence */
} lt_note_kind;

/* What a long method tells its caller as it goes (the command line prints
 * it; nothing here does). Any hook may be NULL; a note or a nested run's
 * progress may come from any thread (compare runs models side by side),
 * whole. */
typedef struct lt_pipeline_hooks {
    /* after every convergence check of the chains (and its checkpoint) */
    void (*check)(const lt_progress *p, void *ctx);
    /* a line to say, without a newline; id: a warning's kind (LT_WARN_*),
     * NULL for the other kinds of line */
    void (*note)(lt_note_kind kind, const char *id, const char *text, void *ctx);
    void *ctx;
    /* rows of a chain file ("chains.csv", then "chains.fits") written so
     * far, of total: about every tenth and at the end (lt_chains_opts) */
    void (*writing)(const char *file, size_t rows, size_t total, void *ctx);
    /* during a nested run (last, so that {check, note, ctx} still reads) */
    void (*nested)(const lt_nested_progress *p, void *ctx);
} lt_pipeline_hooks;

/*
 * A method, in the manner of GSL's gsl_rng_type: a table of functions over
 * a state of its own. lt_pipeline_run drives every method the same way
 * (fresh or resumed, checkpointed, stopped), so resume is written once.
 *   alloc        a run of l by j's settings (ckdir: the checkpoint folder,
 *                for files of the method's own, or NULL); NULL and err on
 *                failure. It may settle defaults in j (the warm-up).
 *   fingerprint  the likelihood's parts and the method's settings into fp;
 *                returns the number its state file stores
 *   start        a fresh start (the chains' best fit; the first live
 *                points); LT_EINTR if stopped
 *   iterate      until done or *stop (LT_EINTR), saving to state (a path,
 *                or NULL) at its own checkpoints; progress to h
 *   save, load   the state to and from a file (NULL for a method with no
 *                checkpoint: the best fit)
 *   result       the posterior
 */
typedef struct lt_method_type {
    const char *name;
    void *(*alloc)(lt_like *l, lt_job *j, const char *ckdir, lt_error *err);
    uint64_t (*fingerprint)(const void *s, lt_fingerprint *fp);
    int (*start)(void *s, volatile sig_atomic_t *stop, lt_error *err);
    int (*iterate)(void *s, const char *state, uint64_t fp, volatile sig_atomic_t *stop,
                   const lt_pipeline_hooks *h, lt_error *err);
    int (*save)(const void *s, const char *path, uint64_t fp, lt_error *err);
    int (*load)(void *s, const char *path, uint64_t fp, lt_error *err);
    int (*result)(void *s, const lt_pipeline_hooks *h, lt_posterior *p, lt_error *err);
    void (*free)(void *s);
} lt_method_type;

/* The best fit and its Laplace posterior (j's seed and starts); no
 * checkpoint. */
extern const lt_method_type *lt_method_fit;
/* Adaptive Metropolis from the best fit until converged or max_steps, the
 * compression checked on the draws and the chains drawn again where more
 * knots fix it (j's [fit] and [sampler] settings; warm-up 0 becomes
 * max(2000, 1000 d)). The posterior is importance-weighted where more knots
 * did not help. */
extern const lt_method_type *lt_method_mcmc;
/* Adaptive importance sampling (lt_ais) from a rough best fit and its
 * Laplace covariance until every parameter's importance-sampling ESS
 * reaches the target with Pareto k <= 0.7, the compression checked on a
 * weighted resample of the draws and the sampling done again where more
 * knots fix it. j's seed, target_ess and threads; max_steps x chains caps
 * the draws. */
extern const lt_method_type *lt_method_importance;
/* Nested sampling with j's live points and seed, to dlogz 0.01; the
 * posterior carries the evidence. */
extern const lt_method_type *lt_method_nested;

/* Whether lt_pipeline_run starts afresh or continues a saved state. */
typedef enum {
    LT_RUN_FRESH = 0,   /* start afresh (a state file there, an earlier run's, is removed
                         * once the method has started) */
    LT_RUN_RESUME,      /* continue the state file, which must exist */
    LT_RUN_IF_PRESENT   /* continue it if it exists, else start afresh */
} lt_run_mode;

typedef struct lt_run_opts {
    const char *ckdir;          /* the checkpoint folder (made if missing), or NULL */
    const char *state;          /* the method's state file in it ("state.bin") */
    const lt_like_spec *spec;   /* with ckdir: write ckdir/settings.ini (lt_job_write and the
                                 * fingerprint) on a fresh start and check it on resume; NULL:
                                 * none */
    lt_run_mode mode;
    volatile sig_atomic_t *stop; /* set by a signal: stop at the next safe point */
    const lt_pipeline_hooks *hooks;
} lt_run_opts;

/*
 * Run method t on l by j and o, into post. Fresh: start, then (with a
 * checkpoint folder) write the settings; resumed: check the settings'
 * fingerprint (refusing, with the parts that differ named, another run's
 * checkpoint) and load the state. Then iterate; the state is saved when it
 * ends or is stopped, so that nothing done is lost and a finished run is
 * not redone. Returns LT_OK with post filled; LT_EINTR if stopped (*started
 * 0 when that was before the method had started: nothing was saved); or an
 * error.
 */
int lt_pipeline_run(const lt_method_type *t, lt_like *l, lt_job *j, const lt_run_opts *o,
                    int *started, lt_posterior *post, lt_error *err);

/*
 * The posterior of m's chains: the draws, derived columns (computed in
 * parallel), the best draw polished by the optimiser, the summaries
 * (lt_posterior_summarise) and a copy of the chains' diagnostics. The summary's "warnings" (lt_report_sample_json)
 * name each parameter whose posterior reaches a prior edge (lt_post_edge_note).
 *
 * reweight > 0 corrects draws of a compressed likelihood that missed its
 * bound (lt_like_check_posterior could not refine it): every thin-th draw
 * of each chain is kept, thin the smallest that leaves at most reweight
 * draws, each is evaluated by the exact path, its logpost and chi2 become
 * the exact ones and its weight exp(logpost_exact - logpost_compressed)
 * (normalised to mean 1). Summaries, covariance, edge densities and the
 * weighted ESS then use the weights, and chi2_min is the exact chi2 at the
 * polished best draw. reweight 0: every draw, unweighted.
 */
/* The posterior of adaptive importance sampling: its weighted draws, the
 * derived columns, the summaries (ESS by lt_diag_ess_is), the best draw
 * polished, Pareto k, and the evidence the weights estimate. */
int lt_pipeline_ais_posterior(const lt_like *l, const lt_ais *s, lt_posterior *r, lt_error *err);
int lt_pipeline_mcmc_posterior(const lt_like *l, const lt_mcmc *m, size_t reweight,
                               lt_posterior *r, lt_error *err);

/*
 * The posterior of a nested run (LT_POST_NESTED): one "chain" of the
 * samples, weighted by exp(logw); logpost NaN (the sampler keeps ln L
 * only), chi2 = -2 (ln L - lt_like_lognorm); the summaries, DIC and Kish's
 * ESS; best the sample of largest ln L (at_best its evaluation); and the
 * evidence (live: the live points it ran with). No derived columns.
 */
int lt_pipeline_nested_posterior(const lt_like *l, const lt_nested_result *nr, size_t live,
                                 lt_posterior *r, lt_error *err);
/* The Laplace posterior of a best fit (LT_POST_LAPLACE, no draws): each
 * parameter's stats the Gaussian ones about the best fit (mean, median
 * and best the best fit; the intervals +-sd and +-LT_Z95 sd), the Laplace
 * covariance; converged when the optimiser and the Laplace step both
 * succeeded. */
int lt_pipeline_fit_posterior(const lt_like *l, const lt_fit_result *fr, lt_posterior *r,
                              lt_error *err);

/* ---- a best fit into its folder (lantern fit) ---- */

/*
 * The best fit of l by j (lt_method_fit) with its Laplace errors, into
 * j->out when set: the folder taken first (j->force to replace an earlier
 * lantern output), then summary.json and residuals.csv written and the
 * folder marked done. post and *summary (the JSON; the caller deletes it)
 * are filled on LT_OK; free post in every case. Warnings (no Laplace
 * errors, no convergence: post->fit.info.converged) go to hooks. LT_EINTR
 * if stopped; a stop or failure leaves an earlier run's folder as it was.
 */
int lt_pipeline_fit(lt_like *l, lt_job *j, volatile sig_atomic_t *stop,
                    const lt_pipeline_hooks *hooks, lt_posterior *post, struct cJSON **summary,
                    lt_error *err);

/* ---- a sampled model into its folder (lantern sample, run) ---- */

typedef struct lt_sample_opts {
    const char *out;            /* the folder (summary.json, chains.csv, chains.fits,
                                 * checkpoint/), or NULL: nothing written */
    int resume;                 /* continue out's checkpoint */
    const char *evidence_label; /* add the evidence by nested sampling (j's live points
                                 * and seed, checkpointed in out), its progress line
                                 * labelled so ("[1/4] lcdm"); NULL: none */
    volatile sig_atomic_t *stop;
    const lt_pipeline_hooks *hooks;
} lt_sample_opts;

/*
 * Sample l (spec: what it was made from, for the settings file) by j with
 * lt_method_mcmc into o->out: the folder taken (j->force to replace an
 * earlier lantern output) and marked while running, the warnings said
 * (importance weights, prior edges, no convergence), the evidence added
 * where asked, summary.json and the chain files written (every j->thin-th
 * draw of each chain, told to hooks->writing; the summary's
 * convergence.file_thin and file_draws_per_chain say so), the folder marked
 * done. post and *summary (the JSON written; the caller deletes it) are
 * filled on LT_OK; free post in every case. *stage says how far a stop or
 * failure came: 0 before sampling began (the best fit), 1 sampling, 2 the
 * evidence. A failure leaves an earlier run's folder as it was; a stop
 * leaves the checkpoint to resume.
 */
int lt_pipeline_sample(lt_like *l, lt_job *j, const lt_like_spec *spec, const lt_sample_opts *o,
                       lt_posterior *post, struct cJSON **summary, int *stage, lt_error *err);

/* ---- a finished posterior reweighted by added terms (lantern reweight) ---- */

/* The smallest effective sample size a reweighted posterior may keep
 * (--min-ess): below about a hundred, the 5% and 95% quantiles of a
 * parameter rest on a handful of draws (common practice, no source). */
#define LT_REWEIGHT_MIN_ESS 100.0

typedef struct lt_reweight_opts {
    const char *run;            /* the folder of a finished 'lantern sample --out' */
    double min_ess;             /* refuse below this ESS (0: LT_REWEIGHT_MIN_ESS) */
    const char *out;            /* summary.json and the chain files, or NULL */
    int threads;                /* 0: OpenMP's default */
    const lt_pipeline_hooks *hooks;
} lt_reweight_opts;

typedef struct lt_reweight_info {
    size_t draws;               /* the run's rows, reweighted */
    double ess_before, ess_after; /* the run's ess_min, and the reweighted posterior's
                                   * (at most kish_after: see reweight.c) */
    double kish_before, kish_after; /* (sum w)^2 / sum w^2 of the run's weights (all 1 for
                                     * chains: the rows) and of the new ones */
    double pareto_k;            /* lt_diag_pareto_k of the added terms' likelihood ratios */
    double chi2_added_best;     /* the added terms' chi2 at the reweighted best fit */
} lt_reweight_info;

/*
 * The posterior of a finished sample run (o->run: its summary, chain files
 * and checkpoint/settings.ini, which says how it was made) with the terms
 * of add (its data table, BAO, CMB and measurements; none of its priors or
 * fixed values) added, by importance reweighting: each draw's weight is
 * multiplied by the ratio of the combined posterior to the run's, both
 * evaluated here (2 evaluations a draw). The run's own likelihood is rebuilt
 * from its settings and checked against the checkpoint's digests (its
 * data or model changed since: LT_EINPUT naming the parts). Refusals, with
 * LT_EINPUT: a term of a kind the run already has (one table, one BAO, one
 * CMB term at most); a combined likelihood with a free parameter the run
 * did not sample (a supernova run with a marginalised offset holds h0
 * fixed, so BAO cannot be added to it), naming every missing one. The
 * result (r: the posterior, LT_POST_IMPORTANCE for a run of independent
 * draws, LT_POST_MCMC for chains, whose ESS then counts their
 * autocorrelation; its summary, with a "reweighted" object; the combined
 * likelihood and its table's spec, for a report) is filled on LT_OK and on
 * LT_ENUMERIC, which says that the ESS left is below min_ess: nothing is
 * then written. With o->out the folder is taken (add->force to replace an
 * earlier output), then summary.json and the chain files written. Free r
 * in every case.
 */
typedef struct lt_reweight_result {
    lt_posterior post;
    struct cJSON *summary;
    lt_reweight_info info;
    const lt_like *like;        /* the combination */
    const lt_survey_spec *data; /* its table (its spec's data NULL: none) */
    void *own;                  /* what like and data belong to */
} lt_reweight_result;
void lt_reweight_result_free(lt_reweight_result *r);
int lt_pipeline_reweight(const lt_job *add, const lt_reweight_opts *o, lt_reweight_result *r,
                         lt_error *err);

/*
 * A posterior (method LT_POST_IMPORTANCE or LT_POST_MCMC) from given rows,
 * nchains x ndraws of them, stride apart, each l's parameters (in l's
 * order), then their logpost under l, then chi2 (NaN where stride leaves
 * no room for it), as lt_ais draws its rows; and weights w (mean 1; NULL:
 * none): the derived columns, summaries, Kish's ESS, for chains their
 * unweighted R-hat and ESS, and the best draw polished (its evaluations in
 * r->evals). converged and the method's own numbers are left to the
 * caller. lt_pipeline_ais_posterior is this on lt_ais's draws.
 */
int lt_pipeline_rows_posterior(const lt_like *l, lt_post_method method, size_t nchains,
                               size_t ndraws, const double *rows, size_t stride,
                               const double *w, lt_posterior *r, lt_error *err);

/* ---- a run of several models and its report (lantern run, report) ---- */

typedef struct lt_run_job_opts {
    const char *run_file;       /* named in errors; its stem names the default folder */
    const char *out;            /* the folder (--out or --resume); NULL: [output] dir, else
                                 * out/NAME with NAME from [run] name or the file's stem */
    int resume, force;
    volatile sig_atomic_t *stop;
    const lt_pipeline_hooks *hooks;
} lt_run_job_opts;
/*
 * Every model of j's [run] models (known, none twice) sampled into DIR/MODEL
 * with its evidence (lt_pipeline_sample; resumed, a model with a summary is
 * kept and one with a checkpoint continued), the data read once, then the
 * report of the whole (lt_pipeline_report) and the folder marked done.
 * *dir: the folder (the caller frees it, also on failure, to say where to
 * resume). *unconverged: a model did not converge. *stage: how far the
 * last model came (lt_pipeline_sample's: 0 its best fit). LT_EINTR if stopped;
 * a failure leaves an earlier run's folder as it was.
 */
int lt_pipeline_run_job(lt_job *j, const lt_run_job_opts *o, char **dir, int *unconverged,
                        int *stage, lt_error *err);
/* rs's report into dir (lt_report_set_write, the Hubble diagram from s or
 * the set's own survey), then its notes through h: a model that did not
 * converge (*unconverged set), one fitted to other data. */
int lt_pipeline_report(lt_report_set *rs, const char *dir, const char *name, const lt_survey *s,
                       const lt_pipeline_hooks *h, int *unconverged, lt_error *err);

/* ---- comparing models ---- */

/* The likelihood of each model m[k].name (set by the caller) from j's
 * priors, fixed values, measurements and offset (j->lenient: a prior
 * applies to the models that have the parameter) on survey s (NULL for
 * measurements alone). One after another: this may refuse the input. */
int lt_pipeline_compare_setup(lt_model_result *m, size_t n, const lt_job *j, const lt_survey *s,
                              lt_error *err);
/*
 * Each model's best fit (j's seed and starts), nested run (j's live points
 * and seed; with ckdir, its checkpoint ckdir/nested_NAME.bin: resumed, it
 * is continued when there is one; fresh, an earlier one is removed, and
 * ckdir/settings.ini written first, so that the folder alone can resume) and
 * posterior, the models side by side on j's
 * threads; h->note gets a line as each model starts (from its thread).
 * The results do not depend on the thread count. Returns LT_EINTR if any
 * model was stopped, else the first failure in model order (err, and each
 * model's own rc and err), else LT_OK.
 */
int lt_pipeline_compare(lt_model_result *m, size_t n, const lt_job *j, const char *ckdir,
                        int resume, volatile sig_atomic_t *stop, const lt_pipeline_hooks *h,
                        lt_error *err);

/* lantern compare's job: the models of j's [run] models compared on j's
 * data. */
#define LT_MAX_COMPARED 16
typedef struct lt_comparison {
    size_t n;
    lt_model_result m[LT_MAX_COMPARED];
    lt_survey *survey;         /* none for measurements alone */
    struct cJSON *summary;     /* lt_report_compare_json, once done */
} lt_comparison;
/*
 * Read j's survey; with j->out, take the folder (j->force) unless resuming
 * (then its checkpoint/ must exist); compare the models (lt_pipeline_compare,
 * j->lenient set); say the survey's and the models' warnings through h; and
 * write OUT/nested_MODEL.csv and OUT/summary.json, marking the folder done.
 * LT_EINTR if stopped (the checkpoints kept, no final file); a failure
 * leaves an earlier run's folder as it was. Free c in every case.
 */
int lt_pipeline_compare_job(lt_job *j, int resume, volatile sig_atomic_t *stop,
                            const lt_pipeline_hooks *h, lt_comparison *c, lt_error *err);
void lt_comparison_free(lt_comparison *c);

/* ---- timing (lantern bench) ---- */

/* (lt_bench, the result, is report.h's: the report prints it.) */
/* Read j's survey, build spec's likelihood, time evals evaluations at 200
 * points drawn from the best fit's Laplace posterior widened three times
 * (j's seed), and compare the compressed and exact paths there. */
int lt_pipeline_bench(const lt_job *j, const lt_like_spec *spec, long evals, lt_bench *b,
                      lt_error *err);

/* The model's prediction for every object of l's survey at theta (with the
 * offset at its best value when marginalised) into model[n]: what
 * residual tables print. */
int lt_pipeline_predict(const lt_like *l, const double *theta, double *model, lt_error *err);

#endif
