/* Running one campaign task: its data, its method, its record. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "lantern/json.h"
#include "lantern/campaign.h"
#include "lantern/inference.h"
#include "lantern/pipeline.h"
#include "lantern/report.h"
#include "internal.h"

static cJSON *num(double v) { return lt_json_number(v); }

/* Task t's method through the pipeline, as the commands run it: the
 * campaign's settings with the task's seed and the campaign's threads, no
 * checkpoint (a task is redone whole). */
static int run_method(lt_like *l, const lt_campaign *c, const lt_campaign_task *t, int threads,
                      volatile sig_atomic_t *stop, lt_posterior *post, lt_error *err)
{
    static const lt_method_type *const *methods[LT_NMETHODS] = {
        &lt_method_fit, &lt_method_mcmc, &lt_method_nested};
    lt_job job = c->job;
    job.pool = NULL, job.npool = job.cap = 0; /* the strings stay the campaign's */
    job.seed = (unsigned long)t->seed;
    job.threads = threads;
    lt_run_opts o = {NULL, NULL, NULL, LT_RUN_FRESH, stop, NULL};
    return lt_pipeline_run(*methods[t->method], l, &job, &o, NULL, post, err);
}

/* What each method adds to a record: the fit's note, the chains'
 * convergence, the evidence. */
static void method_fields(cJSON *o, const lt_posterior *p)
{
    if (p->method == LT_POST_LAPLACE && !p->fit.laplace_ok)
        cJSON_AddStringToObject(o, "note", p->fit.laplace_note);
    if (p->method == LT_POST_MCMC) {
        cJSON *cv = cJSON_AddObjectToObject(o, "convergence");
        cJSON_AddItemToObject(cv, "rhat_max", num(p->weights ? NAN : p->diag.rhat_max));
        cJSON_AddItemToObject(cv, "ess_min", num(p->weights ? p->ess_min_weighted : p->diag.ess_min));
        cJSON_AddItemToObject(cv, "chains", num((double)p->nchains));
        cJSON_AddItemToObject(cv, "draws", num((double)(p->nchains * p->ndraws)));
    }
    if (p->method == LT_POST_NESTED) {
        cJSON *ev = cJSON_AddObjectToObject(o, "evidence");
        cJSON_AddItemToObject(ev, "ln_z", num(p->ln_z));
        cJSON_AddItemToObject(ev, "ln_z_err", num(p->ln_z_err));
        cJSON_AddItemToObject(ev, "information", num(p->information));
    }
}

/* The record's head, which a failed task's record shares. */
static cJSON *task_head(const lt_campaign *c, const lt_campaign_task *t)
{
    const lt_campaign_data *d = &c->data[t->data];
    cJSON *o = cJSON_CreateObject();
    char label[512];
    lt_campaign_task_label(c, t->index, label, sizeof label);
    cJSON_AddItemToObject(o, "task", num((double)t->index));
    cJSON_AddStringToObject(o, "label", label);
    cJSON_AddStringToObject(o, "dataset", d->name);
    cJSON_AddStringToObject(o, "kind", d->simulated ? "simulated" : "file");
    if (d->simulated)
        cJSON_AddItemToObject(o, "realization", num((double)t->realization));
    cJSON_AddStringToObject(o, "model", c->models[t->model]->name);
    cJSON_AddStringToObject(o, "method", lt_method_name(t->method));
    return o;
}

cJSON *lt_campaign_task_failed(const lt_campaign *c, size_t index, const lt_error *e)
{
    lt_campaign_task t;
    lt_campaign_task_get(c, index, &t);
    cJSON *o = task_head(c, &t);
    char msg[LT_ERROR_MSG_MAX + LT_ERROR_FILE_MAX + 32];
    lt_error_format(e, msg, sizeof msg);
    cJSON_AddStringToObject(o, "status", "failed");
    cJSON_AddStringToObject(o, "error", msg);
    return o;
}

double campaign_h0_fixed(const lt_like *l)
{
    for (size_t k = 0; k < lt_like_nfixed(l); k++)
        if (!strcmp(lt_like_fixed(l, k)->name, "h0"))
            return lt_like_fixed(l, k)->value;
    return NAN;
}

int lt_campaign_task_run(const lt_campaign *c, size_t index, int threads,
                         volatile sig_atomic_t *stop, cJSON **result, lt_error *err)
{
    *result = NULL;
    if (index >= c->ntasks)
        return lt_error_set(err, LT_EINPUT, c->path, 0, "no task %zu (the campaign has %zu)",
                            index, c->ntasks);
    lt_campaign_task t;
    lt_campaign_task_get(c, index, &t);
    const lt_campaign_data *d = &c->data[t.data];
    lt_sim sim;
    memset(&sim, 0, sizeof sim);
    lt_survey *own = NULL;
    const lt_survey *s;
    lt_like *l = NULL;
    cJSON *o = NULL;
    int rc;
    if (d->simulated) {
        lt_scenario sc = d->scenario; /* a shallow copy with this realization's seed */
        sc.seed = (unsigned long)t.realization;
        if ((rc = lt_simulate(&sc, &sim, err)))
            goto done;
        s = sim.survey;
    } else {
        if (!(own = lt_survey_read(&d->spec, err))) {
            rc = err->code;
            goto done;
        }
        s = own;
    }
    lt_like_spec spec;
    if ((rc = lt_job_like_spec(&c->job, c->models[t.model], &spec, err)))
        goto done;
    if (!(l = lt_like_alloc(s, &spec, err))) {
        rc = err->code;
        goto done;
    }
    size_t dim = lt_like_dim(l);
    if (dim == 0) {
        rc = lt_error_set(err, LT_EINPUT, c->path, 0, "%s: every parameter is fixed",
                          c->models[t.model]->name);
        goto done;
    }
    o = task_head(c, &t);
    cJSON_AddStringToObject(o, "status", "ok");
    cJSON_AddItemToObject(o, "n_data", num((double)s->n));
    cJSON_AddItemToObject(o, "dof", num((double)lt_like_dof(l)));
    lt_posterior post;
    memset(&post, 0, sizeof post);
    rc = run_method(l, c, &t, threads, stop, &post, err);
    if (rc) {
        lt_posterior_free(&post);
        goto done;
    }
    cJSON_AddItemToObject(o, "chi2_min", num(post.at_best.chi2));
    cJSON_AddBoolToObject(o, "converged", post.converged);
    method_fields(o, &post);
    cJSON *params = cJSON_AddObjectToObject(o, "params");
    double h0_fixed = campaign_h0_fixed(l);
    for (size_t i = 0; i < dim; i++) {
        const char *name = lt_like_param_name(l, i);
        const lt_post_stats *st = &post.stats[post.first_param + i];
        /* the estimate: the best fit for a fit, the posterior mean otherwise */
        double est = t.method == LT_METHOD_FIT ? post.best[i] : st->mean;
        cJSON *q = cJSON_AddObjectToObject(params, name);
        if (d->simulated)
            cJSON_AddItemToObject(q, "truth",
                                  num(lt_scenario_truth(&d->scenario, name, h0_fixed)));
        cJSON_AddItemToObject(q, "estimate", num(est));
        cJSON_AddItemToObject(q, "sd", num(st->sd));
        cJSON_AddItemToObject(q, "lo68", num(st->lo68));
        cJSON_AddItemToObject(q, "hi68", num(st->hi68));
        cJSON_AddItemToObject(q, "lo95", num(st->lo95));
        cJSON_AddItemToObject(q, "hi95", num(st->hi95));
    }
    lt_posterior_free(&post);
done:
    lt_like_free(l);
    lt_survey_free(own);
    if (d->simulated)
        lt_sim_free(&sim);
    if (rc) {
        cJSON_Delete(o);
        return rc;
    }
    *result = o;
    return LT_OK;
}
