/* A campaign's summary: its task records, and bias and coverage over the
 * realizations of each simulated data set, computed once into C data
 * (lt_campaign_result) from which summary.json is written; the records are
 * read here only, with every value checked for its type. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>
#include <gsl/gsl_randist.h>

#include "lantern/json.h"
#include "lantern/campaign.h"

static cJSON *num(double v) { return lt_json_number(v); }

double lt_binomial_test(size_t k, size_t n, double p)
{
    if (n == 0 || k > n || !(p >= 0 && p <= 1))
        return NAN;
    double pk = gsl_ran_binomial_pdf((unsigned)k, p, (unsigned)n);
    /* outcomes as likely as k within rounding count as "no more likely"
     * (the relative tolerance 1e-7 of the usual implementations) */
    double limit = pk * (1 + 1e-7), total = 0;
    for (size_t j = 0; j <= n; j++) {
        double pj = gsl_ran_binomial_pdf((unsigned)j, p, (unsigned)n);
        if (pj <= limit)
            total += pj;
    }
    return total < 1 ? total : 1;
}

void lt_bias_compute(double truth, size_t n, const double *est, const double *sd,
                     const double *lo68, const double *hi68, const double *lo95,
                     const double *hi95, lt_bias_stats *s)
{
    memset(s, 0, sizeof *s);
    s->truth = truth;
    s->nominal68 = LT_NOMINAL68, s->nominal95 = LT_NOMINAL95;
    double sb = 0, sb2 = 0, sp = 0, sp2 = 0;
    for (size_t i = 0; i < n; i++) {
        if (!isfinite(est[i]) || !(sd[i] > 0))
            continue;
        double b = est[i] - truth, p = b / sd[i];
        s->n++;
        sb += b, sb2 += b * b, sp += p, sp2 += p * p;
        s->in68 += lo68[i] <= truth && truth <= hi68[i];
        s->in95 += lo95[i] <= truth && truth <= hi95[i];
    }
    double m = (double)s->n;
    if (s->n == 0) {
        s->bias_mean = s->bias_err = s->pull_mean = s->pull_mean_err = NAN;
        s->pull_width = s->pull_width_err = NAN;
        s->cover68 = s->cover68_err = s->cover68_p = NAN;
        s->cover95 = s->cover95_err = s->cover95_p = NAN;
        return;
    }
    s->bias_mean = sb / m;
    s->pull_mean = sp / m;
    if (s->n > 1) {
        double vb = fmax(sb2 - m * s->bias_mean * s->bias_mean, 0) / (m - 1);
        double vp = fmax(sp2 - m * s->pull_mean * s->pull_mean, 0) / (m - 1);
        s->bias_err = sqrt(vb / m);
        s->pull_width = sqrt(vp);
        s->pull_mean_err = s->pull_width / sqrt(m);
        /* the standard error of a sample sd of Gaussian draws (common practice) */
        s->pull_width_err = s->pull_width / sqrt(2 * (m - 1));
    } else
        s->bias_err = s->pull_width = s->pull_mean_err = s->pull_width_err = NAN;
    /* errors at the nominal probability: the scatter the coverage would
     * show if the intervals were right */
    double p68 = s->nominal68, p95 = s->nominal95;
    s->cover68 = (double)s->in68 / m;
    s->cover68_err = sqrt(p68 * (1 - p68) / m);
    s->cover68_p = lt_binomial_test(s->in68, s->n, p68);
    s->cover95 = (double)s->in95 / m;
    s->cover95_err = sqrt(p95 * (1 - p95) / m);
    s->cover95_p = lt_binomial_test(s->in95, s->n, p95);
}

static double get(const cJSON *o, const char *name)
{
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(o, name);
    return cJSON_IsNumber(v) ? v->valuedouble : NAN;
}

static int is(const cJSON *o, const char *key, const char *value)
{
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(o, key);
    return cJSON_IsString(v) && !strcmp(v->valuestring, value);
}

/* A copy of a string member, or NULL if it is absent or not a string; *bad
 * is set when the copy itself fails. */
static char *dup_string(const cJSON *o, const char *key, int *bad)
{
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(o, key);
    if (!cJSON_IsString(v))
        return NULL;
    char *s = strdup(v->valuestring);
    *bad |= !s;
    return s;
}

/* Does record r have every estimate, sd and interval its group's numbers
 * need? A fit whose Laplace errors are undefined has not. */
static int has_errors(const cJSON *r)
{
    const char *keys[] = {"estimate", "lo68", "hi68", "lo95", "hi95"};
    const cJSON *q;
    cJSON_ArrayForEach(q, cJSON_GetObjectItemCaseSensitive(r, "params"))
    {
        if (!(get(q, "sd") > 0))
            return 0;
        for (size_t j = 0; j < sizeof keys / sizeof keys[0]; j++)
            if (!isfinite(get(q, keys[j])))
                return 0;
    }
    return 1;
}

/* Why a realization is left out of its group's numbers, from its record. */
static const char *drop_reason(const cJSON *r)
{
    int ok = is(r, "status", "ok");
    const cJSON *why = cJSON_GetObjectItemCaseSensitive(r, ok ? "note" : "error");
    if (cJSON_IsString(why))
        return why->valuestring;
    return !r ? "not run" : ok ? "an estimate, error or interval is undefined" : "failed";
}

/* Bias and coverage of one (data set, model, method) group into g; the
 * records used are gathered in rec, the numbers in buf (6 R values). */
static int group_compute(const lt_campaign *c, size_t d, size_t m, lt_method k,
                         cJSON *const *results, const cJSON **rec, double *buf,
                         lt_campaign_group *g)
{
    size_t R = (size_t)c->data[d].realizations;
    const cJSON *first = NULL;
    g->dataset = c->data[d].name;
    g->model = c->models[m]->name;
    g->method = lt_method_name(k);
    g->realizations = R;
    if (!(g->dropped = calloc(R + 1, sizeof *g->dropped)))
        return LT_ENOMEM;
    size_t n = 0;
    for (size_t i = 0; i < c->ntasks; i++) {
        lt_campaign_task t;
        lt_campaign_task_get(c, i, &t);
        if (t.data != d || t.model != m || t.method != k)
            continue;
        const cJSON *r = results[i];
        int ok = r && is(r, "status", "ok");
        if (ok && !first)
            first = r; /* the parameters' names and truths */
        if (ok && has_errors(r)) {
            rec[n++] = r;
            continue;
        }
        /* left out of bias and coverage: said, not silently */
        if (ok)
            g->dropped_no_errors++;
        else
            g->dropped_failed++;
        lt_campaign_dropped *x = &g->dropped[g->ndropped++];
        x->realization = t.realization;
        if (!(x->reason = strdup(drop_reason(r))))
            return LT_ENOMEM;
    }
    g->used = n;
    for (size_t i = 0; i < n; i++)
        g->unconverged += !cJSON_IsTrue(cJSON_GetObjectItemCaseSensitive(rec[i], "converged"));
    const cJSON *fp = first ? cJSON_GetObjectItemCaseSensitive(first, "params") : NULL;
    size_t np = (size_t)cJSON_GetArraySize(fp);
    if (!(g->params = calloc(np + 1, sizeof *g->params)))
        return LT_ENOMEM;
    const cJSON *par;
    cJSON_ArrayForEach(par, fp)
    {
        double *est = buf, *sd = buf + R, *l68 = buf + 2 * R, *h68 = buf + 3 * R;
        double *l95 = buf + 4 * R, *h95 = buf + 5 * R;
        for (size_t i = 0; i < n; i++) {
            const cJSON *q = cJSON_GetObjectItemCaseSensitive(
                cJSON_GetObjectItemCaseSensitive(rec[i], "params"), par->string);
            est[i] = get(q, "estimate"), sd[i] = get(q, "sd");
            l68[i] = get(q, "lo68"), h68[i] = get(q, "hi68");
            l95[i] = get(q, "lo95"), h95[i] = get(q, "hi95");
        }
        lt_campaign_param_bias *b = &g->params[g->nparams++];
        if (!(b->name = strdup(par->string)) || !(b->pulls = malloc((n + 1) * sizeof *b->pulls)))
            return LT_ENOMEM;
        lt_bias_compute(get(par, "truth"), n, est, sd, l68, h68, l95, h95, &b->s);
        b->npulls = n;
        for (size_t i = 0; i < n; i++)
            b->pulls[i] = sd[i] > 0 ? (est[i] - b->s.truth) / sd[i] : NAN;
    }
    return LT_OK;
}

/* Task record r as the table lists it. */
static int line_read(const cJSON *r, lt_campaign_line *l)
{
    int bad = 0;
    l->label = dup_string(r, "label", &bad);
    l->error = dup_string(r, "error", &bad);
    l->ok = is(r, "status", "ok");
    l->failed = is(r, "status", "failed");
    l->file = is(r, "kind", "file");
    l->chi2_min = get(r, "chi2_min");
    double dof = get(r, "dof");
    l->dof = isfinite(dof) ? (long)dof : 0;
    const cJSON *params = cJSON_GetObjectItemCaseSensitive(r, "params"), *p;
    size_t np = (size_t)cJSON_GetArraySize(params);
    l->names = calloc(np + 1, sizeof *l->names);
    l->estimate = malloc((np + 1) * sizeof *l->estimate);
    l->sd = malloc((np + 1) * sizeof *l->sd);
    if (bad || !l->names || !l->estimate || !l->sd)
        return LT_ENOMEM;
    cJSON_ArrayForEach(p, params)
    {
        if (!(l->names[l->nparams] = strdup(p->string)))
            return LT_ENOMEM;
        l->estimate[l->nparams] = get(p, "estimate");
        l->sd[l->nparams++] = get(p, "sd");
    }
    return LT_OK;
}

void lt_campaign_result_free(lt_campaign_result *r)
{
    if (!r)
        return;
    for (size_t g = 0; g < r->ngroups; g++) {
        lt_campaign_group *x = &r->groups[g];
        for (size_t i = 0; i < x->ndropped; i++)
            free(x->dropped[i].reason);
        for (size_t i = 0; i < x->nparams; i++) {
            free(x->params[i].name);
            free(x->params[i].pulls);
        }
        free(x->dropped);
        free(x->params);
    }
    for (size_t i = 0; i < r->nlines; i++) {
        lt_campaign_line *l = &r->lines[i];
        for (size_t k = 0; k < l->nparams; k++)
            free(l->names[k]);
        free(l->names);
        free(l->estimate);
        free(l->sd);
        free(l->label);
        free(l->error);
    }
    free(r->groups);
    free(r->lines);
    free(r);
}

lt_campaign_result *lt_campaign_result_alloc(const lt_campaign *c, cJSON *const *results,
                                             lt_error *err)
{
    lt_campaign_result *r = calloc(1, sizeof *r);
    size_t R = 0;
    for (size_t d = 0; d < c->ndata; d++)
        if (c->data[d].simulated && (size_t)c->data[d].realizations > R)
            R = (size_t)c->data[d].realizations;
    const cJSON **rec = calloc(R + 1, sizeof *rec);
    double *buf = malloc(6 * (R + 1) * sizeof *buf);
    int rc = r && rec && buf ? LT_OK : LT_ENOMEM;
    if (!rc) {
        r->name = c->name;
        r->tasks = c->ntasks;
        r->groups = calloc(c->ndata * c->nmodels * c->nmethods + 1, sizeof *r->groups);
        r->lines = calloc(c->ntasks + 1, sizeof *r->lines);
        rc = r->groups && r->lines ? LT_OK : LT_ENOMEM;
    }
    for (size_t i = 0; !rc && i < c->ntasks; i++) {
        if (!results[i])
            continue;
        if (is(results[i], "status", "ok")) {
            r->done++;
            r->unconverged +=
                !cJSON_IsTrue(cJSON_GetObjectItemCaseSensitive(results[i], "converged"));
        } else
            r->failed++;
        rc = line_read(results[i], &r->lines[r->nlines++]);
    }
    if (!rc)
        r->not_run = c->ntasks - r->done - r->failed;
    for (size_t d = 0; !rc && d < c->ndata; d++) {
        if (!c->data[d].simulated)
            continue;
        for (size_t m = 0; !rc && m < c->nmodels; m++)
            for (size_t k = 0; !rc && k < c->nmethods; k++)
                rc = group_compute(c, d, m, c->methods[k], results, rec, buf,
                                   &r->groups[r->ngroups++]);
    }
    free(rec);
    free(buf);
    if (rc) {
        lt_campaign_result_free(r);
        lt_error_set(err, LT_ENOMEM, c->path, 0, "out of memory for the campaign's summary");
        return NULL;
    }
    return r;
}

static cJSON *coverage_json(size_t k, size_t n, double f, double e, double p, double nominal)
{
    cJSON *o = cJSON_CreateObject();
    cJSON_AddItemToObject(o, "nominal", num(nominal));
    cJSON_AddItemToObject(o, "fraction", num(f));
    cJSON_AddItemToObject(o, "err", num(e));
    cJSON_AddItemToObject(o, "covered", num((double)k));
    cJSON_AddItemToObject(o, "of", num((double)n));
    cJSON_AddItemToObject(o, "p_value", num(p));
    return o;
}

static cJSON *group_json(const lt_campaign_group *g)
{
    cJSON *o = cJSON_CreateObject();
    cJSON_AddStringToObject(o, "dataset", g->dataset);
    cJSON_AddStringToObject(o, "model", g->model);
    cJSON_AddStringToObject(o, "method", g->method);
    cJSON_AddItemToObject(o, "realizations", num((double)g->realizations));
    cJSON_AddItemToObject(o, "used", num((double)g->used));
    cJSON_AddItemToObject(o, "dropped", num((double)(g->dropped_failed + g->dropped_no_errors)));
    cJSON_AddItemToObject(o, "dropped_failed", num((double)g->dropped_failed));
    cJSON_AddItemToObject(o, "dropped_no_errors", num((double)g->dropped_no_errors));
    cJSON *dropped = cJSON_AddArrayToObject(o, "dropped_realizations");
    for (size_t i = 0; i < g->ndropped; i++) {
        cJSON *x = cJSON_CreateObject();
        cJSON_AddItemToObject(x, "realization", num((double)g->dropped[i].realization));
        cJSON_AddStringToObject(x, "reason", g->dropped[i].reason);
        cJSON_AddItemToArray(dropped, x);
    }
    cJSON_AddItemToObject(o, "unconverged", num((double)g->unconverged));
    cJSON *params = cJSON_AddObjectToObject(o, "params");
    for (size_t j = 0; j < g->nparams; j++) {
        const lt_campaign_param_bias *p = &g->params[j];
        const lt_bias_stats *s = &p->s;
        cJSON *b = cJSON_AddObjectToObject(params, p->name);
        cJSON_AddItemToObject(b, "truth", num(s->truth));
        cJSON_AddItemToObject(b, "n", num((double)s->n));
        cJSON_AddItemToObject(b, "bias_mean", num(s->bias_mean));
        cJSON_AddItemToObject(b, "bias_err", num(s->bias_err));
        cJSON_AddItemToObject(b, "pull_mean", num(s->pull_mean));
        cJSON_AddItemToObject(b, "pull_mean_err", num(s->pull_mean_err));
        cJSON_AddItemToObject(b, "pull_width", num(s->pull_width));
        cJSON_AddItemToObject(b, "pull_width_err", num(s->pull_width_err));
        cJSON_AddItemToObject(b, "coverage68", coverage_json(s->in68, s->n, s->cover68,
                                                             s->cover68_err, s->cover68_p,
                                                             s->nominal68));
        cJSON_AddItemToObject(b, "coverage95", coverage_json(s->in95, s->n, s->cover95,
                                                             s->cover95_err, s->cover95_p,
                                                             s->nominal95));
        cJSON *pulls = cJSON_AddArrayToObject(b, "pulls");
        for (size_t i = 0; i < p->npulls; i++)
            cJSON_AddItemToArray(pulls, num(p->pulls[i]));
    }
    return o;
}

cJSON *lt_campaign_result_json(const lt_campaign_result *r, const lt_campaign *c,
                               cJSON *const *results)
{
    cJSON *o = cJSON_CreateObject();
    cJSON_AddStringToObject(o, "command", "campaign");
    cJSON_AddStringToObject(o, "campaign", c->name);
    cJSON_AddStringToObject(o, "file", c->path);
    cJSON *models = cJSON_AddArrayToObject(o, "models");
    for (size_t m = 0; m < c->nmodels; m++)
        cJSON_AddItemToArray(models, cJSON_CreateString(c->models[m]->name));
    cJSON *methods = cJSON_AddArrayToObject(o, "methods");
    for (size_t k = 0; k < c->nmethods; k++)
        cJSON_AddItemToArray(methods, cJSON_CreateString(lt_method_name(c->methods[k])));
    cJSON_AddItemToObject(o, "tasks", num((double)r->tasks));
    cJSON_AddItemToObject(o, "done", num((double)r->done));
    cJSON_AddItemToObject(o, "failed", num((double)r->failed));
    cJSON_AddItemToObject(o, "not_run", num((double)r->not_run));
    cJSON_AddItemToObject(o, "unconverged", num((double)r->unconverged));
    cJSON_AddBoolToObject(o, "converged", r->done == r->tasks && r->unconverged == 0);
    cJSON *bias = cJSON_AddArrayToObject(o, "bias");
    for (size_t g = 0; g < r->ngroups; g++)
        cJSON_AddItemToArray(bias, group_json(&r->groups[g]));
    cJSON *list = cJSON_AddArrayToObject(o, "results");
    for (size_t i = 0; i < c->ntasks; i++)
        if (results[i]) {
            cJSON *x = cJSON_Duplicate(results[i], 1);
            cJSON_DeleteItemFromObjectCaseSensitive(x, "where"); /* rank, host, time */
            cJSON_AddItemToArray(list, x);
        }
    return o;
}

cJSON *lt_campaign_summary(const lt_campaign *c, cJSON *const *results)
{
    lt_error err;
    lt_campaign_result *r = lt_campaign_result_alloc(c, results, &err);
    cJSON *o = r ? lt_campaign_result_json(r, c, results) : NULL;
    lt_campaign_result_free(r);
    return o;
}
