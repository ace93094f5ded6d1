/* Running one campaign task: its data, its method, its record. */
#include <math.h>
#include <omp.h>
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

/* One parameter's numbers in a task record. */
typedef struct {
    double estimate, sd, lo68, hi68, lo95, hi95;
} task_param;

/* Weighted mean, sd and equal-tailed intervals of column i of nested
 * samples (lt_post_summarise_weighted; x and w: room for nsamples each). */
static void weighted_param(const lt_nested_result *r, size_t d, size_t i, double *x, double *w,
                           task_param *p)
{
    for (size_t j = 0; j < r->nsamples; j++)
        x[j] = r->theta[j * d + i], w[j] = exp(r->logw[j]);
    lt_post_stats st;
    lt_post_summarise_weighted(x, w, r->nsamples, &st);
    p->estimate = st.mean, p->sd = st.sd;
    p->lo68 = st.lo68, p->hi68 = st.hi68, p->lo95 = st.lo95, p->hi95 = st.hi95;
}

static int run_fit(const lt_like *l, const lt_campaign *c, const lt_campaign_task *t,
                   task_param *p, cJSON *o, lt_error *err)
{
    lt_fit_opts fo = {.seed = (unsigned long)t->seed, .starts = (size_t)c->job.starts, .stop = NULL};
    lt_fit_result fr;
    int rc = lt_fit_run(l, &fo, &fr, err);
    if (rc)
        return rc;
    for (size_t i = 0; i < fr.dim; i++) {
        double b = fr.best[i], s = fr.sd[i];
        /* intervals of probability LT_NOMINAL68 and LT_NOMINAL95 under the
         * Laplace (Gaussian) approximation */
        p[i] = (task_param){b, s, b - s, b + s, b - LT_Z95 * s, b + LT_Z95 * s};
    }
    cJSON_AddItemToObject(o, "chi2_min", num(fr.at_best.chi2));
    cJSON_AddBoolToObject(o, "converged", fr.info.converged && fr.laplace_ok);
    if (!fr.laplace_ok)
        cJSON_AddStringToObject(o, "note", fr.laplace_note);
    return LT_OK;
}

static int run_sample(lt_like *l, const lt_campaign *c, const lt_campaign_task *t,
                      int threads, volatile sig_atomic_t *stop, task_param *p, cJSON *o,
                      lt_error *err)
{
    /* the campaign's settings with the task's seed and the campaign's threads */
    lt_job job = c->job;
    job.seed = (unsigned long)t->seed;
    job.threads = threads;
    lt_pipeline_mcmc pm;
    lt_like_spec spec;
    int rc = lt_job_like_spec(&job, c->models[t->model], &spec, err);
    if (!rc)
        rc = lt_pipeline_mcmc_run(l, &job, &spec, NULL, 0, stop, NULL, &pm, err);
    lt_sample_result sr;
    memset(&sr, 0, sizeof sr);
    /* where more knots did not bring the compression within its bound,
     * the draws are weighted by the exact likelihood, as lantern sample does */
    int off = !rc && pm.cmp.checked_ok && pm.cmp.posterior_dchi2 > LT_CHECK_BOUND;
    if (!rc)
        rc = lt_sample_collect(l, pm.m, off ? lt_like_reweight_draws(l) : 0, &sr, err);
    lt_pipeline_mcmc_free(&pm);
    if (rc)
        return rc;
    size_t d = lt_like_dim(l);
    for (size_t i = 0; i < d; i++) {
        const lt_post_stats *s = &sr.stats[sr.first_param + i];
        p[i] = (task_param){s->mean, s->sd, s->lo68, s->hi68, s->lo95, s->hi95};
    }
    cJSON_AddItemToObject(o, "chi2_min", num(sr.at_best.chi2));
    cJSON_AddBoolToObject(o, "converged", sr.converged);
    cJSON *cv = cJSON_AddObjectToObject(o, "convergence");
    cJSON_AddItemToObject(cv, "rhat_max", num(sr.weights ? NAN : sr.diag->rhat_max));
    cJSON_AddItemToObject(cv, "ess_min", num(sr.weights ? sr.ess_min_weighted : sr.diag->ess_min));
    cJSON_AddItemToObject(cv, "chains", num((double)sr.nchains));
    cJSON_AddItemToObject(cv, "draws", num((double)(sr.nchains * sr.ndraws)));
    lt_sample_result_free(&sr);
    return LT_OK;
}

static int run_nested(const lt_like *l, const lt_campaign *c, const lt_campaign_task *t,
                      int threads, volatile sig_atomic_t *stop, task_param *p, cJSON *o,
                      lt_error *err)
{
    size_t d = lt_like_dim(l);
    int nt = threads > 0 ? threads : omp_get_max_threads();
    lt_nested_result r;
    double *pair = NULL;
    lt_like_work *w = NULL;
    int rc = lt_pipeline_nested_run(l, c->job.live_points, t->seed, nt, NULL, stop, &r, err);
    if (rc)
        goto done;
    if (!(pair = malloc(2 * r.nsamples * sizeof *pair + 1)) || !(w = lt_like_work_alloc(l))) {
        rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        goto done;
    }
    for (size_t i = 0; i < d; i++)
        weighted_param(&r, d, i, pair, pair + r.nsamples, &p[i]);
    /* chi2 at the best sample: the largest ln L, less the normalisation */
    size_t best = 0;
    for (size_t j = 1; j < r.nsamples; j++)
        if (r.loglike[j] > r.loglike[best])
            best = j;
    lt_like_point pt;
    lt_like_eval(l, w, &r.theta[best * d], &pt);
    cJSON_AddItemToObject(o, "chi2_min", num(pt.chi2));
    cJSON_AddBoolToObject(o, "converged", r.finished);
    cJSON *ev = cJSON_AddObjectToObject(o, "evidence");
    cJSON_AddItemToObject(ev, "ln_z", num(r.logz));
    cJSON_AddItemToObject(ev, "ln_z_err", num(r.logz_err));
    cJSON_AddItemToObject(ev, "information", num(r.info));
done:
    lt_like_work_free(w);
    free(pair);
    lt_nested_result_free(&r);
    return rc;
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

double campaign_truth(const lt_scenario *sc, const char *name)
{
    if (!strcmp(name, "offset"))
        return sc->kind == LT_OBS_MAG ? sc->offset : 0.0;
    lt_cosmo_params p = sc->params;
    int id = lt_cosmo_param_find(name);
    return id >= 0 ? *lt_cosmo_params_slot(&p, id) : NAN;
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
    task_param p[LT_MAX_FREE];
    rc = t.method == LT_METHOD_FIT      ? run_fit(l, c, &t, p, o, err)
         : t.method == LT_METHOD_SAMPLE ? run_sample(l, c, &t, threads, stop, p, o, err)
                                        : run_nested(l, c, &t, threads, stop, p, o, err);
    if (rc)
        goto done;
    cJSON *params = cJSON_AddObjectToObject(o, "params");
    for (size_t i = 0; i < dim; i++) {
        const char *name = lt_like_param_name(l, i);
        cJSON *q = cJSON_AddObjectToObject(params, name);
        if (d->simulated)
            cJSON_AddItemToObject(q, "truth", num(campaign_truth(&d->scenario, name)));
        cJSON_AddItemToObject(q, "estimate", num(p[i].estimate));
        cJSON_AddItemToObject(q, "sd", num(p[i].sd));
        cJSON_AddItemToObject(q, "lo68", num(p[i].lo68));
        cJSON_AddItemToObject(q, "hi68", num(p[i].hi68));
        cJSON_AddItemToObject(q, "lo95", num(p[i].lo95));
        cJSON_AddItemToObject(q, "hi95", num(p[i].hi95));
    }
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
