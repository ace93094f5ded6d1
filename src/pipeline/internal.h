/* Internal to the pipeline module: what its files share. */
#ifndef LANTERN_PIPELINE_INTERNAL_H
#define LANTERN_PIPELINE_INTERNAL_H

#include "lantern/pipeline.h"

/* Hand a line to the caller's note hook, if it has one: pipeline_say for
 * progress and news, pipeline_warn for a warning of kind id (LT_WARN_*). */
void pipeline_say(const lt_pipeline_hooks *h, lt_note_kind kind, const char *text);
void pipeline_warn(const lt_pipeline_hooks *h, const char *id, const char *text);
/* The index of warning kind id in lt_warning_kinds() (-1: unknown), and
 * every id, comma-separated, into buf (src/pipeline/warnings.c). */
int pipeline_warning_index(const char *id);
void pipeline_warning_ids(char *buf, size_t size);

/* A sampled posterior into its folder out: summary.json (json), the chain
 * files (every j->thin-th draw, told to h->writing), and the folder marked
 * done by "lantern VERSION command" (src/pipeline/sample.c). */
int pipeline_write_posterior(const char *out, const char *command, const lt_like *l,
                             const lt_job *j, const lt_posterior *r, const struct cJSON *json,
                             const lt_pipeline_hooks *h, lt_error *err);

/* A refined run's knots file in its checkpoint folder: "KNOTS
 * MAX_ABS_DCHI2", the knots it samples with and the check that asked for
 * them. load applies the knots to l (nothing if the file is absent) and
 * reads the check into cmp->first_dchi2. */
int pipeline_save_knots(const char *path, size_t K, double first, lt_error *err);
int pipeline_load_knots(const char *path, lt_like *l, lt_sample_compression *cmp, lt_error *err);

/* The work spaces of a sampler's chains or threads, one per context the
 * log density gets (ctxp[i] = &ctx[i]); gone counts the evaluations of
 * work spaces renew has replaced. */
typedef struct pipeline_works {
    lt_like *l;
    size_t n;
    lt_like_chain *ctx;
    void **ctxp;
    size_t gone;
} pipeline_works;
/* n work spaces for l; LT_ENOMEM (w then holds what free needs). */
int pipeline_works_alloc(pipeline_works *w, lt_like *l, size_t n, lt_error *err);
/* Each made afresh: after a refinement the old ones belong to the old
 * compression. LT_ENOMEM. */
int pipeline_works_renew(pipeline_works *w, lt_error *err);
/* Evaluations made in the current work spaces. */
size_t pipeline_works_evals(const pipeline_works *w);
void pipeline_works_free(pipeline_works *w);

/* A compression check's outcome into cmp. Not refined: its numbers, and
 * 0. Refined: the first finding kept, a note to h that the sampling starts
 * again with the new knots, and 1. */
int pipeline_after_check(const lt_pipeline_hooks *h, lt_sample_compression *cmp,
                         const lt_compression_check *chk);

/* evaluations.txt in a checkpoint folder: two counts, "A B" (path NULL:
 * nothing written; a missing file reads as 0 0). */
int pipeline_save_counts(const char *path, size_t a, size_t b, lt_error *err);
int pipeline_load_counts(const char *path, size_t *a, size_t *b, lt_error *err);

/* The weighted resample of n draws (rows of stride doubles) that a
 * compression check looks at: at most m rows, picked by systematic
 * resampling on the weights (Kitagawa 1996, J. Comput. Graph. Stat. 5, 1)
 * with the offset u in [0, 1), each kept once; into out (m x stride).
 * Returns the rows taken. */
size_t pipeline_resample(const double *rows, const double *w, size_t n, size_t stride, size_t m,
                         double u, double *out);

#endif
