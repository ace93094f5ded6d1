/*
 * lantern/campaign.h - many fits at once: campaigns of tasks over data sets,
 * models and methods, their bias and coverage, and Fisher forecasts of
 * survey designs.
 *
 * A campaign file (INI, keys in lantern campaign --help) lists data sets,
 * real files or simulated realizations of a scenario (seeds first_seed ..
 * first_seed + R - 1), models and methods (fit, sample, nested). The task
 * list is their product, in this order: data set, realization, model,
 * method. A task is a pure function of the campaign and its index: it
 * simulates or reads its data, runs its method and returns its result as a
 * JSON object, so tasks can run anywhere, in any order, on any number of
 * machines, and give the same numbers (the samplers' draws do not depend
 * on thread counts). Where tasks run is not this module's business: the
 * command line runs them in a loop, or over Open MPI ranks, through the
 * same queue (lt_campaign_queue), which retries a failed task once.
 *
 * Nothing here prints, but lt_campaign_result_print, to the stream its
 * caller gives.
 */
#ifndef LANTERN_CAMPAIGN_H
#define LANTERN_CAMPAIGN_H

#include <signal.h>
#include <stdint.h>
#include <stdio.h>

#include "lantern/likelihood.h"
#include "lantern/pipeline.h"
#include "lantern/simulate.h"

struct cJSON;

typedef enum { LT_METHOD_FIT = 0, LT_METHOD_SAMPLE, LT_METHOD_NESTED, LT_NMETHODS } lt_method;
const char *lt_method_name(lt_method m); /* "fit", "sample", "nested" */

typedef struct lt_campaign_data {
    char *name;               /* from the section name: [data.NAME], [simulated.NAME] */
    int simulated;
    lt_survey_spec spec;      /* real data: the files (paths absolute) */
    lt_scenario scenario;     /* simulated data */
    long first_seed, realizations;
} lt_campaign_data;

typedef struct lt_campaign {
    char *path, *name;
    uint64_t digest;          /* of the campaign file and its scenarios: ties a resume to them */
    size_t ndata;
    lt_campaign_data *data;
    size_t nmodels;
    const lt_cosmo_model *models[16]; /* at most 16 */
    size_t nmethods;
    lt_method methods[LT_NMETHODS];
    /* what every task shares, read by the run description's rules:
     * [priors], [fixed], [measurements] (each applied to the models that
     * have the parameter), [fit] starts, [sampler] chains, warmup,
     * check_every, max_steps, target_ess, [nested] live_points; [campaign]
     * seed (the base of every task's seed) and offset go into seed and
     * offset. The data sets' strings are kept here too. */
    lt_job job;
    size_t ntasks;
} lt_campaign;

/* Read and check a campaign file; errors name the file and line. */
int lt_campaign_read(const char *path, lt_campaign *c, lt_error *err);
void lt_campaign_free(lt_campaign *c);

typedef struct lt_campaign_task {
    size_t index;
    size_t data;              /* index into c->data */
    long realization;         /* the scenario seed; 0 for real data */
    size_t model;             /* index into c->models */
    lt_method method;
    uint64_t seed;            /* the sampler's seed: from the campaign seed, data set and
                               * realization, the same for every model and method */
} lt_campaign_task;

void lt_campaign_task_get(const lt_campaign *c, size_t index, lt_campaign_task *t);
/* "lamplighter/r12/lcdm-flat/sample" */
void lt_campaign_task_label(const lt_campaign *c, size_t index, char *buf, size_t size);

/*
 * Run task index with threads OpenMP threads (0: the default). On success
 * *result is a new JSON object: task, dataset, realization, model, method,
 * status "ok", n_data, chi2_min, dof, converged and params.NAME.{truth (for
 * simulated data), estimate, sd, lo68, hi68, lo95, hi95} with estimate the
 * best fit (fit) or the posterior mean (sample, nested) and the intervals
 * best +- 1 and +- 1.959964 sd (fit) or the equal-tailed 15.87-84.13% and
 * 2.5-97.5% quantiles (sample, nested), which hold the truth with
 * probability LT_NOMINAL68 and LT_NOMINAL95; sample adds convergence,
 * nested evidence. A fit whose Laplace errors are undefined (a best fit at
 * the edge of its prior) has null sd and intervals, converged false and a
 * note. LT_EINTR if *stop was set.
 */
int lt_campaign_task_run(const lt_campaign *c, size_t index, int threads,
                         volatile sig_atomic_t *stop, struct cJSON **result, lt_error *err);

/* The record of a task that failed (status "failed", its error). */
struct cJSON *lt_campaign_task_failed(const lt_campaign *c, size_t index, const lt_error *e);

/*
 * The queue both runners share: tasks in index order, skipping those
 * already done (a resume); a failed task goes back once, ahead of new ones.
 */
typedef struct lt_campaign_queue {
    size_t ntasks, next;
    unsigned char *state;     /* 0 to do, 1 running, 2 done, 3 failed for good */
    unsigned char *attempts;
    size_t *retry, nretry;    /* failed once, to run again */
    size_t running;
} lt_campaign_queue;

int lt_campaign_queue_init(lt_campaign_queue *q, size_t ntasks);
void lt_campaign_queue_free(lt_campaign_queue *q);
void lt_campaign_queue_skip(lt_campaign_queue *q, size_t index); /* finished earlier */
/* The next task to run, or -1 if none is waiting (some may be running). */
long lt_campaign_queue_take(lt_campaign_queue *q);
/* A task ended: ok or not. Returns 1 if it goes back to be retried. */
int lt_campaign_queue_done(lt_campaign_queue *q, size_t index, int ok);
int lt_campaign_queue_finished(const lt_campaign_queue *q);

/*
 * A campaign's output folder and its state while it runs, the same for
 * every runner (the command line's loop, Open MPI ranks):
 *   OUT/campaign.json  the manifest: name, file, digest and task count,
 *                      which ties a resume to the campaign file;
 *   OUT/tasks/NNNNNN.json  one record per finished task, written by
 *                      whichever process ran it. The records are the
 *                      state: a resume keeps those that finished well and
 *                      runs the rest, so it ends with the same summary.
 * The runner's loop takes indices from q and hands each to
 * lt_campaign_run_task where it runs, and each record to
 * lt_campaign_run_finished on the process that keeps the queue.
 */
typedef struct lt_campaign_run {
    const lt_campaign *c;
    char *out;                /* the folder, and its tasks/ */
    char *tasks;
    lt_campaign_queue q;
    struct cJSON **results;   /* per task: its record once finished (ok or failed) */
    size_t to_run;            /* tasks this run has to do (after a resume's scan) */
    size_t finished_now;      /* tasks finished in this run (not resumed ones) */
    int threads;              /* OpenMP threads a task uses (0: the default) */
    volatile sig_atomic_t *stop;
} lt_campaign_run;

/* The queue and the records' slots for campaign c in folder out; nothing is
 * written yet (ranks that only run tasks go no further). */
int lt_campaign_run_init(lt_campaign_run *r, const lt_campaign *c, const char *out, int threads,
                         volatile sig_atomic_t *stop, lt_error *err);
void lt_campaign_run_free(lt_campaign_run *r);

/* A new campaign in r->out: the folder is taken (lt_outdir_prepare, force as
 * there), the task records of an earlier campaign removed, tasks/ and the
 * manifest written and the folder marked as running. */
int lt_campaign_out_create(lt_campaign_run *r, int force, lt_error *err);
/* Continuing the campaign in r->out: its manifest must carry r->c's digest
 * (else LT_EINPUT: another version of the file), the finished records are
 * kept (lt_campaign_resume_scan) and the folder marked as running. */
int lt_campaign_out_resume(lt_campaign_run *r, lt_error *err);

/* The campaign file of a resume of dir, as a new string (free it): given if
 * not NULL, else the one dir's manifest names. LT_EINPUT naming dir when it
 * has no readable manifest, or naming the manifest when neither names a
 * file. */
int lt_campaign_manifest_file(const char *dir, const char *given, char **file, lt_error *err);

/*
 * The records in dir/tasks of tasks that finished well, into results[i]
 * (NULL where the task has no record or failed: it runs again). Every field
 * of a record is checked against c (index, label, data set, model, method)
 * and the types the summary reads; a record that does not parse, or that
 * belongs to another campaign, is refused (LT_EINPUT naming its file) rather
 * than silently run again or summarised. On error results holds nothing.
 */
int lt_campaign_resume_scan(const lt_campaign *c, const char *dir, struct cJSON **results,
                            lt_error *err);

/*
 * Run task index (attempt 1 or 2) where the caller is: returns its record as
 * JSON text (a new string), with "where" (rank, host, attempt, seconds),
 * and writes it to OUT/tasks/. *code is the task's status (LT_OK, LT_EINTR,
 * or the error of a failed task, whose record says what failed); fail makes
 * the attempt fail as a machine that drops out would (the command line's
 * test hook of the retry). A record that could not be written is still
 * returned (the scheduler keeps it in the summary), with the write error in
 * werr (werr->code 0 otherwise). NULL for an interrupted task.
 */
char *lt_campaign_run_task(const lt_campaign_run *r, size_t index, int attempt, int rank,
                           int fail, int *code, lt_error *werr);

/* What the scheduler learns as a task ends, for its progress line. */
typedef struct lt_campaign_progress {
    int ok;                   /* the task succeeded */
    int again;                /* it failed and goes back to the queue */
    char label[512];
    double seconds;           /* from the record's "where" (NAN if absent) */
    int rank;
    char error[LT_ERROR_MSG_MAX + LT_ERROR_FILE_MAX + 32]; /* a failed task's, or "no record" */
} lt_campaign_progress;

/* On the process that keeps the queue: task index ended with code and record
 * text (NULL: none came). The record is kept unless the task is retried. */
void lt_campaign_run_finished(lt_campaign_run *r, size_t index, int code, const char *text,
                              lt_campaign_progress *p);

/*
 * The summary: the campaign, counts of tasks done and failed, each task's
 * result (in index order; results[i] may be NULL for a task not run), and
 * for each (data set, model, method) of simulated data, each parameter's
 * bias and coverage (lt_bias_compute). A group's bias and coverage use the
 * realizations whose record has every estimate, sd and interval (`used`);
 * the others are `dropped`, counted by reason (`dropped_failed`: the task
 * failed or did not run; `dropped_no_errors`: the method gave no errors,
 * as a fit whose best fit lies at a prior edge) and listed with their
 * reason, so that no realization leaves the numbers unsaid. The results
 * are not taken over.
 */
struct cJSON *lt_campaign_summary(const lt_campaign *c, struct cJSON *const *results);

/* ---- bias and coverage over realizations ---- */

/* The probability each interval of a task record is defined to hold: the
 * 68% intervals (best +- 1 sd, or the 15.87-84.13% quantiles, Phi(-1) and
 * Phi(1)) hold Phi(1) - Phi(-1) = erf(1/sqrt 2) of a Gaussian, not 0.68;
 * the 95% ones (best +- 1.959964 sd, or the 2.5-97.5% quantiles) hold 0.95.
 * Coverage is tested against these. */
#define LT_NOMINAL68 0.6826894921370859
#define LT_NOMINAL95 0.95

typedef struct lt_bias_stats {
    size_t n;                        /* realizations with an estimate and an error */
    double truth;
    double bias_mean, bias_err;      /* mean of estimate - truth, and its error sd/sqrt(n) */
    double pull_mean, pull_mean_err; /* pulls (estimate - truth)/sd */
    double pull_width, pull_width_err; /* their sd, and its error sd/sqrt(2(n-1)) */
    size_t in68, in95;               /* intervals that hold the truth */
    double nominal68, nominal95;     /* LT_NOMINAL68, LT_NOMINAL95 */
    /* fraction, binomial error at the nominal probability, exact test against it */
    double cover68, cover68_err, cover68_p;
    double cover95, cover95_err, cover95_p;
} lt_bias_stats;

/* From n realizations: estimate, sd, and the 68% and 95% intervals (tested
 * against LT_NOMINAL68 and LT_NOMINAL95). A realization without a finite
 * estimate and a positive sd is left out of every number. */
void lt_bias_compute(double truth, size_t n, const double *est, const double *sd,
                     const double *lo68, const double *hi68, const double *lo95,
                     const double *hi95, lt_bias_stats *s);

/* The two-sided exact binomial test of k successes in n trials against
 * probability p: the total probability of the outcomes no more likely than
 * k (the usual definition, e.g. Hollander & Wolfe, Nonparametric
 * Statistical Methods, section 2.1). */
double lt_binomial_test(size_t k, size_t n, double p);

/*
 * The summary as C data, from which summary.json, the table, bias.csv and
 * the figures are all made (so nothing reads the JSON back). Strings are
 * copies; lt_campaign_result_free frees them.
 */
typedef struct lt_campaign_param_bias {
    char *name;
    lt_bias_stats s;
    size_t npulls;            /* one per realization used (NAN without an sd) */
    double *pulls;
} lt_campaign_param_bias;

typedef struct lt_campaign_dropped {
    long realization;
    char *reason;
} lt_campaign_dropped;

/* Bias and coverage of one (simulated data set, model, method). */
typedef struct lt_campaign_group {
    const char *dataset, *model, *method; /* the campaign's strings */
    size_t realizations, used, dropped_failed, dropped_no_errors, unconverged;
    size_t ndropped;
    lt_campaign_dropped *dropped;
    size_t nparams;
    lt_campaign_param_bias *params;
} lt_campaign_group;

/* One task as the table lists it. */
typedef struct lt_campaign_line {
    char *label;
    int ok, failed, file;     /* status "ok" or "failed"; data from a survey file (no truth) */
    double chi2_min;          /* NAN where the record has none */
    long dof;
    char *error;              /* a failed task's message (NULL if it has none) */
    size_t nparams;
    char **names;
    double *estimate, *sd;
} lt_campaign_line;

typedef struct lt_campaign_result {
    const char *name;         /* the campaign's */
    size_t tasks, done, failed, not_run, unconverged;
    size_t ngroups;
    lt_campaign_group *groups;
    size_t nlines;            /* the tasks with a record, in index order */
    lt_campaign_line *lines;
} lt_campaign_result;

/* results as in lt_campaign_summary; NULL (LT_ENOMEM) when memory runs out.
 * The result points to c's strings: free it before c. */
lt_campaign_result *lt_campaign_result_alloc(const lt_campaign *c, struct cJSON *const *results,
                                             lt_error *err);
void lt_campaign_result_free(lt_campaign_result *r);
/* summary.json's object (lt_campaign_summary is this for a result it makes). */
struct cJSON *lt_campaign_result_json(const lt_campaign_result *r, const lt_campaign *c,
                                      struct cJSON *const *results);

/* The table: counts, each group's bias, pulls and coverage with exact
 * binomial p-values, the survey files' estimates, the failed tasks. */
void lt_campaign_result_print(FILE *f, const lt_campaign_result *r);
/* dir/bias.csv, one row per group and parameter. */
int lt_campaign_result_write_csv(const char *dir, const lt_campaign_result *r, lt_error *err);
/* dir/bias_DATASET_MODEL_METHOD.{png,pdf}, one per group. */
int lt_campaign_result_write_figures(const char *dir, const lt_campaign_result *r,
                                     lt_error *err);
/* The end of a campaign that ran to its end: summary.json, bias.csv and the
 * figures in r's folder, which is then finished (lt_outdir_finish). */
int lt_campaign_out_finish(const lt_campaign_run *run, const lt_campaign_result *res,
                           struct cJSON *summary, lt_error *err);

/* ---- forecasts ---- */

/*
 * The Fisher matrix of a survey design: the scenario simulated without
 * noise (observed = truth, the same objects and covariance), the
 * likelihood of spec on it, and F = (1/2) d^2 chi2_eff / dtheta_i dtheta_j
 * at the scenario's parameters by central differences (the compressed
 * likelihood where it applies). With noiseless data the residuals vanish
 * at the truth, so this is J^T C^-1 J, the Fisher matrix of a Gaussian
 * likelihood (Tegmark, Taylor & Heavens 1997, ApJ 480, 22, eq. 15), with
 * the marginalised offset projected out. Gaussian priors add 1/sd^2;
 * uniform priors add nothing.
 */
typedef struct lt_forecast {
    size_t dim, n_data;
    char names[LT_MAX_FREE][LT_NAME_MAX]; /* by free position */
    double fiducial[LT_MAX_FREE];
    double fisher[LT_MAX_FREE * LT_MAX_FREE];
    double cov[LT_MAX_FREE * LT_MAX_FREE]; /* F^-1 */
    double sd[LT_MAX_FREE];          /* marginal: sqrt of cov's diagonal */
    double sd_cond[LT_MAX_FREE];     /* the others fixed: 1/sqrt(F_ii) */
    int has_w0wa;
    double fom;                      /* 1/sqrt(det Cov(w0, wa)) */
    double z_pivot, w_pivot_sd;
    size_t K;                        /* compression knots (0: exact path) */
} lt_forecast;

int lt_forecast_run(const lt_scenario *sc, const lt_like_spec *spec, lt_forecast *f,
                    lt_error *err);

/*
 * A forecast file: a scenario (lantern simulate --help) and, optionally,
 *   [forecast] model = NAME (default: the scenario's), offset = none |
 *              marginal | sampled
 *   [priors]   PARAM = uniform:LO:HI | gauss:MEAN:SD
 *   [fixed]    PARAM = VALUE
 * into sc and spec. Errors name the file and line.
 */
int lt_forecast_read(const char *path, lt_scenario *sc, lt_like_spec *spec, lt_error *err);

/* The forecast f of scenario sc with spec as lantern forecast's JSON:
 * params (fiducial, sd, sd with the others fixed, a user's prior), the
 * Fisher matrix (with and without the Gaussian priors it includes), the
 * covariance and correlations, and the figure of merit for w0-wa. */
struct cJSON *lt_forecast_json(const lt_scenario *sc, const lt_like_spec *spec,
                               const lt_forecast *f);
/* The same as a readable table. */
void lt_forecast_print(FILE *out, const lt_scenario *sc, const lt_like_spec *spec,
                       const lt_forecast *f);
/* The forecast into the folder out (force: replace an earlier lantern
 * output): json (lt_forecast_json) as summary.json and the error ellipse
 * of w0-wa, else of the first two parameters, as ellipse_X_Y.png/.pdf; the
 * folder marked done. A stop (*stop set) or failure leaves no folder. */
int lt_forecast_write(const char *out, int force, const lt_scenario *sc,
                      const lt_like_spec *spec, const lt_forecast *f, const struct cJSON *json,
                      volatile sig_atomic_t *stop, lt_error *err);

#endif
