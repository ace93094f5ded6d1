/*
 * Kinds of warning: the list of every warning's id (the survey's and the
 * pipeline's), what --no-warn checks its ids against and what decides
 * which warnings a command prints (see lantern/pipeline.h).
 */
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
