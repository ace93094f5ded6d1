/*
 * lantern reweight's job: a finished sample run's posterior with terms
 * added, by importance reweighting (see lantern/pipeline.h). The run's
 * likelihood is rebuilt from its checkpoint's settings and checked against
 * its digests; the combined one is the same job with the added terms; each
 * draw's weight is multiplied by exp(logpost_combined - logpost_run), both
 * evaluated here, so that the compressed path, the priors and every
 * constant are the same on both sides of the ratio.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>
#include <omp.h>

#include "lantern/file.h"
#include "lantern/json.h"
#include "lantern/outdir.h"
#include "lantern/pipeline.h"
#include "lantern/report.h"
#include "lantern/version.h"
#include "internal.h"

/* A job's likelihood: its survey (or none) and the likelihood over it. */
typedef struct {
    lt_survey *s;
    lt_like *l;
} built;

static void built_free(built *b)
{
    lt_like_free(b->l);
    lt_survey_free(b->s);
}

static int build(const lt_job *j, built *b, lt_error *err)
{
    memset(b, 0, sizeof *b);
    lt_like_spec spec;
    if (lt_job_model_spec(j, &spec, err) || lt_job_survey(j, &b->s, err))
        return err->code;
    b->l = lt_like_alloc(b->s, &spec, err);
    return b->l ? LT_OK : err->code;
}

/* add's terms into j (the run's job); refused where j has that kind. */
static int merge(lt_job *j, const lt_job *add, lt_error *err)
{
    if (add->data.data) {
        if (j->data.data)
            return lt_error_set(err, LT_EINPUT, NULL, 0,
                                "the run already has a supernova table (%s): a likelihood "
                                "holds one; add BAO, CMB or measurements to it instead",
                                j->data.data);
        j->data = add->data;
    }
    if (add->bao) {
        if (j->bao)
            return lt_error_set(err, LT_EINPUT, NULL, 0,
                                "the run already has a BAO term (%s): a likelihood holds one",
                                j->bao);
        j->bao = add->bao, j->bao_cov = add->bao_cov, j->rd = add->rd;
    }
    if (add->cmb) {
        if (j->cmb)
            return lt_error_set(err, LT_EINPUT, NULL, 0,
                                "the run already has a CMB term (%s): a likelihood holds one",
                                j->cmb);
        j->cmb = add->cmb, j->cmb_cov = add->cmb_cov;
    }
    if (j->nmeasures + add->nmeasures > LT_JOB_MAX_ENTRIES)
        return lt_error_set(err, LT_EINPUT, NULL, 0, "more than %d measurements in all",
                            LT_JOB_MAX_ENTRIES);
    for (size_t k = 0; k < add->nmeasures; k++)
        j->measures[j->nmeasures++] = add->measures[k];
    if (!add->data.data && !add->bao && !add->cmb && !add->nmeasures)
        return lt_error_set(err, LT_EINPUT, NULL, 0,
                            "nothing to add: give a term (--data, --bao, --cmb or --measure)");
    return LT_OK;
}

/* idx[i]: the run's column of l's parameter i; LT_EINPUT naming every
 * parameter of l the run did not sample (why names it). */
static int map_params(const lt_like *l, const lt_run_model *m, size_t *idx, const char *why,
                      lt_error *err)
{
    char missing[512] = "";
    size_t nmiss = 0;
    for (size_t i = 0; i < lt_like_dim(l); i++) {
        const char *name = lt_like_param_name(l, i);
        size_t k = 0;
        while (k < m->nparams && strcmp(m->names[k], name))
            k++;
        idx[i] = k;
        if (k == m->nparams) {
            size_t len = strlen(missing);
            snprintf(missing + len, sizeof missing - len, "%s%s", nmiss ? ", " : "", name);
            nmiss++;
        }
    }
    return nmiss ? lt_error_set(err, LT_EINPUT, NULL, 0, "%s %s %s", why, missing,
                                nmiss > 1 ? "(each fixed, or not in the model, when it was sampled)"
                                          : "(fixed, or not in the model, when it was sampled)")
                 : LT_OK;
}

/* Both likelihoods at every draw, in parallel (each draw's results in its
 * own slot: the same whatever the threads): lp_run[j], and rows of the
 * combination's parameters, logpost and chi2 (lt_pipeline_rows_posterior's
 * layout, dc + 2 apart). */
static int evaluate(const built *run, const built *comb, const lt_run_model *m,
                    const size_t *irun, const size_t *icomb, int threads, double *lp_run,
                    double *rows, size_t *evals, lt_error *err)
{
    size_t n = m->nchains * m->ndraws, nc = m->nparams + m->nderived;
    size_t dr = lt_like_dim(run->l), dc = lt_like_dim(comb->l);
    int failed = 0;
    size_t count = 0;
#pragma omp parallel num_threads(threads) reduction(+ : count)
    {
        lt_like_work *wr = lt_like_work_alloc(run->l), *wc = lt_like_work_alloc(comb->l);
        if (!wr || !wc) {
#pragma omp atomic write
            failed = 1;
        }
#pragma omp for schedule(dynamic, 256)
        for (size_t j = 0; j < n; j++) {
            if (!wr || !wc)
                continue;
            const double *row = m->draws + j * nc;
            double xr[LT_MAX_FREE], *xc = rows + j * (dc + 2);
            for (size_t i = 0; i < dr; i++)
                xr[i] = row[irun[i]];
            for (size_t i = 0; i < dc; i++)
                xc[i] = row[icomb[i]];
            lt_like_point pr, pc;
            lt_like_eval(run->l, wr, xr, &pr);
            lt_like_eval(comb->l, wc, xc, &pc);
            lp_run[j] = pr.logpost;
            xc[dc] = pc.domain_ok ? pc.logpost : -INFINITY;
            xc[dc + 1] = pc.domain_ok ? pc.chi2 : NAN;
        }
        if (wr)
            count += lt_like_work_evals(wr);
        if (wc)
            count += lt_like_work_evals(wc);
        lt_like_work_free(wr);
        lt_like_work_free(wc);
    }
    *evals = count;
    return failed ? lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory") : LT_OK;
}

/* The "reweighted" object of the summary. */
static void describe(cJSON *o, const char *run, const lt_job *add, const lt_reweight_info *in,
                     double min_ess)
{
    cJSON *r = cJSON_AddObjectToObject(o, "reweighted");
    cJSON_AddStringToObject(r, "run", run);
    cJSON *terms = cJSON_AddArrayToObject(r, "added");
    if (add->data.data)
        cJSON_AddItemToArray(terms, cJSON_CreateString(add->data.data));
    if (add->bao)
        cJSON_AddItemToArray(terms, cJSON_CreateString(add->bao));
    if (add->cmb)
        cJSON_AddItemToArray(terms, cJSON_CreateString(add->cmb));
    for (size_t k = 0; k < add->nmeasures; k++) {
        char buf[256];
        snprintf(buf, sizeof buf, "%s=%s", add->measures[k].name, add->measures[k].value);
        cJSON_AddItemToArray(terms, cJSON_CreateString(buf));
    }
    cJSON_AddItemToObject(r, "draws", lt_json_number((double)in->draws));
    cJSON_AddItemToObject(r, "ess_before", lt_json_number(in->ess_before));
    cJSON_AddItemToObject(r, "ess_after", lt_json_number(in->ess_after));
    cJSON_AddItemToObject(r, "kish_before", lt_json_number(in->kish_before));
    cJSON_AddItemToObject(r, "kish_after", lt_json_number(in->kish_after));
    cJSON_AddItemToObject(r, "pareto_k", lt_json_number(in->pareto_k));
    cJSON_AddItemToObject(r, "min_ess", lt_json_number(min_ess));
    cJSON_AddItemToObject(r, "chi2_added_at_best", lt_json_number(in->chi2_added_best));
}

/* What a result's like and data belong to. */
typedef struct {
    lt_job j;
    built comb;
} owned;

void lt_reweight_result_free(lt_reweight_result *r)
{
    owned *w = r->own;
    lt_posterior_free(&r->post);
    cJSON_Delete(r->summary);
    if (w) {
        built_free(&w->comb);
        w->j.out = NULL;
        lt_job_free(&w->j);
        free(w);
    }
    memset(r, 0, sizeof *r);
}

int lt_pipeline_reweight(const lt_job *add, const lt_reweight_opts *o, lt_reweight_result *res,
                         lt_error *err)
{
    memset(res, 0, sizeof *res);
    owned *own = calloc(1, sizeof *own);
    if (!own)
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    res->own = own;
    lt_posterior *post = &res->post;
    lt_reweight_info *info = &res->info;
    cJSON **summary = &res->summary;
    double min_ess = o->min_ess > 0.0 ? o->min_ess : LT_REWEIGHT_MIN_ESS;
    int threads = o->threads > 0 ? o->threads : omp_get_max_threads();
    lt_job *j = &own->j;
    lt_job_init(j);
    lt_run_model m;
    memset(&m, 0, sizeof m);
    built run = {0}, *comb = &own->comb;
    double *buf = NULL;
    char *settings = NULL;
    int rc, prepared = 0;
    /* the run: its settings, its likelihood (as it was: the digests), its draws */
    if ((rc = lt_job_resume(j, o->run,
                            "reweight reads the folder of a finished 'lantern sample --out'",
                            err)) ||
        (rc = lt_run_model_load(o->run, &m, err)) || (rc = build(j, &run, err)))
        goto done;
    if (!(settings = lt_path_join(o->run, "checkpoint/settings.ini", err))) {
        rc = LT_ENOMEM;
        goto done;
    }
    lt_fingerprint fp;
    lt_fingerprint_like(run.l, &fp);
    fp.part[LT_FP_SETTINGS] = 0; /* the sampler's settings: not ours to check */
    if ((rc = lt_fingerprint_check(settings, &fp, err)))
        goto done;
    /* the combination */
    if ((rc = merge(j, add, err)) || (rc = build(j, comb, err)))
        goto done;
    size_t irun[LT_MAX_FREE], icomb[LT_MAX_FREE];
    if ((rc = map_params(run.l, &m, irun, "the run's folder does not hold", err)) ||
        (rc = map_params(comb->l, &m, icomb,
                         "the added terms need parameters the run did not sample:", err)))
        goto done;
    size_t n = m.nchains * m.ndraws, dc = lt_like_dim(comb->l), evals = 0;
    if (!(buf = malloc((n ? n : 1) * (5 + dc) * sizeof *buf))) { /* lp_run, w, lr, rows */
        rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        goto done;
    }
    double *lp_run = buf, *w = buf + n, *lr = buf + 2 * n, *rows = buf + 3 * n;
    if ((rc = evaluate(&run, comb, &m, irun, icomb, threads, lp_run, rows, &evals, err)))
        goto done;
    /* new weights: old x exp(lp_comb - lp_run), the largest ratio taken
     * out before the exponential; mean 1 */
    double top = -INFINITY, sw = 0.0, sw2 = 0.0, ow = 0.0, ow2 = 0.0;
    for (size_t k = 0; k < n; k++) {
        double w0 = m.weights ? m.weights[k] : 1.0;
        double lp_comb = rows[k * (dc + 2) + dc];
        lr[k] = w0 > 0.0 && isfinite(lp_run[k]) && isfinite(lp_comb) ? lp_comb - lp_run[k]
                                                                      : -INFINITY;
        w[k] = lr[k] + (w0 > 0.0 ? log(w0) : -INFINITY);
        top = fmax(top, w[k]);
        ow += w0, ow2 += w0 * w0;
    }
    if (!isfinite(top)) {
        rc = lt_error_set(err, LT_EDOMAIN, NULL, 0,
                          "no draw of the run is possible under the added terms");
        goto done;
    }
    for (size_t k = 0; k < n; k++)
        sw += w[k] = exp(w[k] - top);
    for (size_t k = 0; k < n; k++) {
        w[k] *= (double)n / sw;
        sw2 += w[k] * w[k];
    }
    info->draws = n;
    info->ess_before = m.ess_min;
    info->kish_before = ow2 > 0.0 ? ow * ow / ow2 : 0.0;
    info->kish_after = (double)n * (double)n / sw2;
    info->pareto_k = lt_diag_pareto_k(lr, n);
    if ((rc = lt_pipeline_rows_posterior(comb->l, m.independent ? LT_POST_IMPORTANCE : LT_POST_MCMC,
                                         m.nchains, m.ndraws, rows, dc + 2, w, post, err)))
        goto done;
    post->evals += evals;
    post->reweighted = 1;
    post->pareto_k = info->pareto_k;
    /* the ESS left: the smallest over the parameters of the weighted ESS,
     * and never above Kish's of the weights: where one draw takes nearly
     * all the weight the f-specific ESS divides two vanishing sums (seen:
     * 3e8 from 1500 draws whose Kish ESS was 1) */
    post->ess_min_weighted = fmin(post->ess_min_weighted, info->kish_after);
    info->ess_after = post->ess_min_weighted;
    post->converged = m.converged && info->ess_after >= min_ess;
    {
        /* the added terms' chi2 at the best fit: combined minus the run's */
        size_t ir[LT_MAX_FREE];
        double x[LT_MAX_FREE];
        lt_like_work *wr = lt_like_work_alloc(run.l);
        for (size_t i = 0; i < lt_like_dim(run.l); i++) {
            ir[i] = (size_t)lt_like_param_index(comb->l, lt_like_param_name(run.l, i));
            x[i] = post->best[ir[i]];
        }
        lt_like_point p;
        if (wr) {
            lt_like_eval(run.l, wr, x, &p);
            info->chi2_added_best = post->at_best.chi2 - p.chi2;
        }
        lt_like_work_free(wr);
    }
    *summary = lt_report_sample_json(comb->l, post, &j->data, j->seed);
    if (!*summary) {
        rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        goto done;
    }
    cJSON_ReplaceItemInObject(*summary, "command", cJSON_CreateString("reweight"));
    describe(*summary, o->run, add, info, min_ess);
    if (info->ess_after < min_ess) {
        rc = lt_error_set(err, LT_ENUMERIC, NULL, 0,
                          "the reweighted draws keep an effective sample size of %.0f (of %.0f "
                          "before), below --min-ess %g: too few of the run's draws carry the "
                          "combined posterior; sample the combination instead",
                          info->ess_after, info->ess_before, min_ess);
        goto done;
    }
    if (o->out) {
        if ((rc = lt_outdir_prepare(o->out, add->force, err)))
            goto done;
        prepared = 1;
        j->thin = 1;
        if ((rc = pipeline_write_posterior(o->out, "reweight", comb->l, j, post, *summary,
                                           o->hooks, err)))
            goto done;
    }
done:
    if (prepared && rc)
        lt_outdir_abandon(o->out);
    free(buf);
    free(settings);
    built_free(&run);
    lt_run_model_free(&m);
    res->like = comb->l;
    res->data = &j->data;
    return rc;
}
