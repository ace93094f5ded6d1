/*
 * Kinds of warning: the list of every warning's id (the survey's and the
 * pipeline's), what --no-warn checks its ids against and what decides
 * which warnings a command prints (see lantern/pipeline.h).
 */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "lantern/pipeline.h"
#include "lantern/survey.h"
#include "internal.h"

/* Ids are ours, short, lower case with dashes; once given, never renamed
 * (scripts and run files name them). */
static const lt_warning_kind kinds[] = {
    {LT_WARN_HEADER_EXTRA, "trailing header names that no row fills"},
    {LT_WARN_NO_ZHEL, "no zhel column: zhel taken equal to z"},
    {LT_WARN_MODES_ORDER, "mode rows labelled by id, the table without ids"},
    {LT_WARN_CUTS, "the cuts keep fewer objects than were read"},
    {LT_WARN_DUPLICATE_IDS, "an id on more than one row"},
    {LT_WARN_COV_DOUBLE_DIAG, "a --cov that holds err^2, added to diag(err^2)"},
    {LT_WARN_IMPORTANCE_WEIGHTS, "importance weights with a heavy tail (Pareto k)"},
    {LT_WARN_COMPRESSION, "the compressed likelihood against the exact one"},
    {LT_WARN_WEIGHTED_ESS, "weighted draws below the target ESS"},
    {LT_WARN_PRIOR_EDGE, "a posterior against its prior's edge"},
    {LT_WARN_NOT_CONVERGED, "a run that did not converge"},
    {LT_WARN_NO_EVIDENCE, "no evidence: too many parameters for nested sampling"},
    {LT_WARN_LAPLACE, "no Laplace errors at the best fit"},
    {LT_WARN_DIC, "DIC a poor guide for a model"},
    {LT_WARN_RENAMED_FLAG, "a flag given by its old name"},
    {NULL, NULL}};

const lt_warning_kind *lt_warning_kinds(void) { return kinds; }

int pipeline_warning_index(const char *id)
{
    for (int k = 0; id && kinds[k].id; k++)
        if (!strcmp(kinds[k].id, id))
            return k;
    return -1;
}

void pipeline_warning_ids(char *buf, size_t size)
{
    buf[0] = '\0';
    for (size_t k = 0; kinds[k].id; k++) {
        size_t used = strlen(buf);
        snprintf(buf + used, size - used, "%s%s", k ? ", " : "", kinds[k].id);
    }
}

int lt_job_warning_shown(const lt_job *j, const char *id)
{
    int k = pipeline_warning_index(id);
    return !j || k < 0 || !(j->no_warn >> k & 1u);
}

void pipeline_warn(const lt_pipeline_hooks *h, const char *id, const char *text)
{
    if (h && h->note)
        h->note(LT_NOTE_WARNING, id, text, h->ctx);
}

/* ---- progress lines (here: what a long job says, beside its warnings) ---- */

void lt_pipeline_progress_text(const lt_progress *p, double seconds, double target_ess,
                               char *buf, size_t size)
{
    char eta[48] = "";
    if (p->ess_min > 0 && isfinite(p->ess_min) && !p->converged)
        snprintf(eta, sizeof eta, ", about %.0f s left",
                 seconds * fmax(0.0, target_ess / p->ess_min - 1.0));
    if (p->weighted)
        snprintf(buf, size,
                 "importance sampling: %zu draws, smallest ESS %.0f, Pareto k %.2f, %.1f s%s",
                 p->draws_per_chain, p->ess_min, p->pareto_k, seconds, eta);
    else
        snprintf(buf, size,
                 "sampling: %zu draws per chain, worst R-hat %.4f, smallest ESS %.0f, %.1f s%s",
                 p->draws_per_chain, p->rhat_max, p->ess_min, seconds, eta);
}

void lt_pipeline_nested_text(const lt_nested_progress *p, char *buf, size_t size)
{
    snprintf(buf, size,
             "nested sampling %s: %zu iterations, %zu likelihood evaluations, ln Z = %.3f, the "
             "live points could add %.3g",
             p->model, p->iterations, p->evals, p->logz, p->dlogz);
}
