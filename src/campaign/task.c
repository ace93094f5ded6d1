/* Running one campaign task: its data, its method, its record. */
#include <math.h>
#include <omp.h>
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "lantern/json.h"
#include "lantern/campaign.h"
#include "lantern/inference.h"
#include "lantern/report.h"
#include "internal.h"

static cJSON *num(double v) { return lt_json_number(v); }

/* One parameter's numbers in a task record. */
typedef struct {
    double estimate, sd, lo68, hi68, lo95, hi95;
} task_param;

void campaign_like_spec(const lt_cosmo_model *m, lt_offset_mode offset,
                        const lt_campaign_kv *kv, size_t nkv, lt_like_spec *spec)
{
    lt_like_spec_init(spec, m);
    spec->offset = offset;
    for (size_t i = 0; i < nkv; i++) {
        if (!lt_param_of_model(m, kv[i].name))
            continue;
        /* names were checked on reading and the list fits: no error here */
        if (kv[i].prior)
            lt_like_spec_prior(spec, kv[i].name, kv[i].p, NULL);
        else
            lt_like_spec_fix(spec, kv[i].name, kv[i].value, NULL);
    }
}

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
    lt_fit_opts fo = {.seed = (unsigned long)t->seed, .starts = (size_t)c->starts, .stop = NULL};
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

static int run_sample(const lt_like *l, const lt_campaign *c, const lt_campaign_task *t,
                      int threads, volatile sig_atomic_t *stop, task_param *p, cJSON *o,
                      lt_error *err)
{
    size_t d = lt_like_dim(l), nc = (size_t)c->chains;
    lt_like_chain *ctx = calloc(nc, sizeof *ctx);
    void **cp = calloc(nc, sizeof *cp);
    lt_mcmc *m = NULL;
    int rc = LT_OK;
    for (size_t k = 0; ctx && cp && k < nc; k++) {
        ctx[k] = (lt_like_chain){l, lt_like_work_alloc(l)};
        cp[k] = &ctx[k];
        if (!ctx[k].w)
            rc = LT_ENOMEM;
    }
    if (!ctx || !cp || rc) {
        rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        goto done;
    }
    /* the chains' centre: the best fit and its Laplace covariance */
    lt_fit_opts fo = {.seed = (unsigned long)t->seed, .starts = (size_t)c->starts, .stop = NULL};
    lt_fit_result fr;
    if ((rc = lt_fit_run(l, &fo, &fr, err)))
        goto done;
    double scale[LT_MAX_FREE];
    for (size_t i = 0; i < d; i++) {
        const lt_prior *pr = lt_like_prior(l, i);
        scale[i] = pr->kind == LT_PRIOR_UNIFORM ? pr->b - pr->a : 4 * pr->b;
    }
    long warmup = c->warmup ? c->warmup : (long)(d * 1000 > 2000 ? d * 1000 : 2000);
    lt_mcmc_opts mo = {.dim = d, .nextra = 1, .nchains = nc, .seed = t->seed, .center = fr.best,
                       .cov = fr.laplace_ok ? fr.cov : NULL, .scale = scale,
                       .warmup = (size_t)warmup, .check_every = (size_t)c->check_every,
                       .max_steps = (size_t)c->max_steps, .target_ess = c->target_ess,
                       .rhat_tol = 0.01, .threads = threads, .memory_limit = 0};
    if (!(m = lt_mcmc_alloc(&mo, lt_like_logdensity, cp, err))) {
        rc = err->code;
        goto done;
    }
    if ((rc = lt_mcmc_run(m, stop, NULL, NULL, err)))
        goto done;
    lt_sample_result sr;
    if ((rc = lt_sample_collect(l, m, 0, &sr, err)))
        goto done;
    for (size_t i = 0; i < d; i++) {
        const lt_post_stats *s = &sr.stats[sr.first_param + i];
        p[i] = (task_param){s->mean, s->sd, s->lo68, s->hi68, s->lo95, s->hi95};
    }
    cJSON_AddItemToObject(o, "chi2_min", num(sr.at_best.chi2));
    cJSON_AddBoolToObject(o, "converged", sr.converged);
    cJSON *cv = cJSON_AddObjectToObject(o, "convergence");
    cJSON_AddItemToObject(cv, "rhat_max", num(sr.diag->rhat_max));
    cJSON_AddItemToObject(cv, "ess_min", num(sr.diag->ess_min));
    cJSON_AddItemToObject(cv, "chains", num((double)sr.nchains));
    cJSON_AddItemToObject(cv, "draws", num((double)(sr.nchains * sr.ndraws)));
    lt_sample_result_free(&sr);
done:
    lt_mcmc_free(m);
    for (size_t k = 0; ctx && k < nc; k++)
        lt_like_work_free(ctx[k].w);
    free(ctx);
    free(cp);
    return rc;
}

static int run_nested(const lt_like *l, const lt_campaign *c, const lt_campaign_task *t,
                      int threads, volatile sig_atomic_t *stop, task_param *p, cJSON *o,
                      lt_error *err)
{
    size_t d = lt_like_dim(l);
    int nt = threads > 0 ? threads : omp_get_max_threads();
    lt_like_nested *ctx = calloc((size_t)nt, sizeof *ctx);
    void **cp = calloc((size_t)nt, sizeof *cp);
    lt_nested *ns = NULL;
    lt_nested_result r;
    memset(&r, 0, sizeof r);
    double *pair = NULL;
    int rc = LT_OK;
    for (int k = 0; ctx && cp && k < nt; k++) {
        ctx[k] = (lt_like_nested){{l, lt_like_work_alloc(l)}, lt_like_lognorm(l)};
        cp[k] = &ctx[k];
        if (!ctx[k].c.w)
            rc = LT_ENOMEM;
    }
    if (!ctx || !cp || rc) {
        rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        goto done;
    }
    lt_nested_opts no = {.dim = d, .nlive = (size_t)c->live_points, .seed = t->seed, .dlogz = 0.01,
                         .enlarge = 1.25, .max_iter = 10000000, .threads = nt};
    if (!(ns = lt_nested_alloc(&no, lt_like_prior_transform, (void *)l, lt_like_nested_loglike,
                               cp, err))) {
        rc = err->code;
        goto done;
    }
    if ((rc = lt_nested_iterate(ns, stop, err)) || (rc = lt_nested_result_get(ns, &r, err)))
        goto done;
    if (!(pair = malloc(2 * r.nsamples * sizeof *pair + 1))) {
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
    lt_like_work *w = ctx[0].c.w;
    lt_like_point pt;
    lt_like_eval(l, w, &r.theta[best * d], &pt);
    cJSON_AddItemToObject(o, "chi2_min", num(pt.chi2));
    cJSON_AddBoolToObject(o, "converged", r.finished);
    cJSON *ev = cJSON_AddObjectToObject(o, "evidence");
    cJSON_AddItemToObject(ev, "ln_z", num(r.logz));
    cJSON_AddItemToObject(ev, "ln_z_err", num(r.logz_err));
    cJSON_AddItemToObject(ev, "information", num(r.info));
done:
    free(pair);
    lt_nested_result_free(&r);
    lt_nested_free(ns);
    for (int k = 0; ctx && k < nt; k++)
        lt_like_work_free(ctx[k].c.w);
    free(ctx);
    free(cp);
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
    campaign_like_spec(c->models[t.model], c->offset, c->kv, c->nkv, &spec);
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
