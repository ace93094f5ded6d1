/*
 * lantern sample's job (and each model of lantern run): the MCMC method on
 * a likelihood into its output folder, the evidence added where asked, the
 * summary and chain files written (see lantern/pipeline.h).
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "lantern/file.h"
#include "lantern/json.h"
#include "lantern/outdir.h"
#include "lantern/pipeline.h"
#include "internal.h"
#include "lantern/report.h"
#include "lantern/version.h"

/* What the results need read with: weights, prior edges. */
static void warnings(const lt_like *l, const lt_job *j, const lt_posterior *r,
                     const lt_pipeline_hooks *h)
{
    char text[768];
    if (r->method == LT_POST_IMPORTANCE && r->pareto_k > LT_PARETO_K_WARN) {
        lt_report_pareto_warning(r, text, sizeof text);
        pipeline_warn(h, LT_WARN_IMPORTANCE_WEIGHTS, text);
    }
    if (r->method == LT_POST_IMPORTANCE && lt_sample_compression_missed(&r->compression)) {
        /* as the summary's warnings say it */
        lt_report_compression_warning(r, text, sizeof text);
        pipeline_warn(h, LT_WARN_COMPRESSION, text);
    }
    if (r->weights && r->method == LT_POST_MCMC) {
        lt_report_compression_warning(r, text, sizeof text);
        pipeline_warn(h, LT_WARN_COMPRESSION, text);
        if (r->ess_min_weighted < j->target_ess) {
            snprintf(text, sizeof text,
                     "the weighted draws' effective sample size %.0f is below --target-ess %g",
                     r->ess_min_weighted, j->target_ess);
            pipeline_warn(h, LT_WARN_WEIGHTED_ESS, text);
        }
    }
    for (size_t i = 0; i < r->nparams; i++) {
        char note[256];
        if (lt_post_edge_note(r->cols[r->first_param + i], lt_like_prior(l, i), r->edge_lo[i],
                              r->edge_hi[i], note, sizeof note)) {
            snprintf(text, sizeof text, "%s: %s", lt_like_model(l)->name, note);
            pipeline_warn(h, LT_WARN_PRIOR_EDGE, text);
        }
    }
}

/* A run that reached --max-steps: say so, and what cap should reach the
 * target at the rate seen so far (ESS grows about linearly with the draws
 * once the chains mix). */
static void unconverged(const lt_job *j, const lt_posterior *r, const lt_pipeline_hooks *h)
{
    char text[320];
    snprintf(text, sizeof text, "%s; the results are written and marked \"converged\": false",
             lt_report_unconverged_text(r));
    pipeline_warn(h, LT_WARN_NOT_CONVERGED, text);
    if (r->method == LT_POST_IMPORTANCE)
        return;
    double e = r->diag.ess_min;
    if (isfinite(e) && e > 0.0 && e < j->target_ess) {
        snprintf(text, sizeof text,
                 "the smallest ESS is %.0f after %zu draws per chain; at that rate --max-steps "
                 "%.0f should reach %g",
                 e, r->steps, ceil(1.1 * (double)r->steps * j->target_ess / e / 1000.0) * 1000.0,
                 j->target_ess);
        pipeline_say(h, LT_NOTE_NEWS, text);
    }
}

int pipeline_write_posterior(const char *out, const char *command, const lt_like *l,
                             const lt_job *j, const lt_posterior *r, const cJSON *json,
                             const lt_pipeline_hooks *h, lt_error *err)
{
    char *path = lt_path_join(out, "summary.json", err), what[128];
    snprintf(what, sizeof what, "lantern %s %s", LT_VERSION, command);
    lt_chains_opts co = {(size_t)j->thin, h ? h->writing : NULL, h ? h->ctx : NULL};
    int rc = !path ? LT_ENOMEM
                   : lt_report_write_json(path, json, err) ||
                             lt_report_write_chains(out, l, r, &j->data, j->seed, &co, err) ||
                             lt_outdir_finish(out, what, err)
                         ? err->code
                         : LT_OK;
    free(path);
    return rc;
}

/*
 * The sampler j asks for: importance sampling (its state in
 * importance.bin), MCMC (state.bin), or under "auto" importance sampling
 * and, if it did not converge (within a cap of its own under auto: see
 * lt_method_importance), MCMC after it, whose summary then counts the
 * evaluations of both. A resumed auto run finds each part where it was.
 */
static int run_sampler(lt_like *l, lt_job *j, const lt_like_spec *spec, const lt_sample_opts *o,
                       const char *ckdir, int *started, lt_posterior *post, lt_error *err)
{
    int is_auto = !strcmp(j->sampler, "auto"), rc;
    lt_run_mode mode = o->resume ? LT_RUN_RESUME : LT_RUN_FRESH;
    if (!strcmp(j->sampler, "mcmc")) {
        lt_run_opts ro = {ckdir, "state.bin", spec, mode, o->stop, o->hooks};
        return lt_pipeline_run(lt_method_mcmc, l, j, &ro, started, post, err);
    }
    lt_run_opts ro = {ckdir, "importance.bin", spec, mode, o->stop, o->hooks};
    if ((rc = lt_pipeline_run(lt_method_importance, l, j, &ro, started, post, err)))
        return rc;
    if (!is_auto || post->converged)
        return LT_OK;
    char text[320];
    snprintf(text, sizeof text,
             "importance sampling reached ESS %.0f with Pareto k %.2f in %zu draws (%zu "
             "evaluations): sampling by MCMC instead",
             post->ess_min_weighted, post->pareto_k, post->ndraws, post->evals);
    pipeline_say(o->hooks, LT_NOTE_NEWS, text);
    size_t before = post->evals;
    lt_posterior_free(post);
    lt_run_opts mo = {ckdir, "state.bin", NULL, o->resume ? LT_RUN_IF_PRESENT : LT_RUN_FRESH,
                      o->stop, o->hooks};
    rc = lt_pipeline_run(lt_method_mcmc, l, j, &mo, NULL, post, err);
    if (!rc)
        post->evals += before;
    return rc;
}

int lt_pipeline_sample(lt_like *l, lt_job *j, const lt_like_spec *spec, const lt_sample_opts *o,
                       lt_posterior *post, cJSON **summary, int *stage, lt_error *err)
{
    memset(post, 0, sizeof *post);
    *summary = NULL;
    *stage = 0;
    int rc, prepared = 0, started = 0;
    char *ckdir = o->out ? lt_path_join(o->out, "checkpoint", err) : NULL;
    if (o->out && !ckdir)
        return LT_ENOMEM;
    if (o->out && !o->resume) {
        char what[128];
        snprintf(what, sizeof what, "lantern %s sample (running)", LT_VERSION);
        if ((rc = lt_outdir_prepare(o->out, j->force, err)))
            goto done;
        prepared = 1;
        if ((rc = lt_outdir_mark(o->out, what, err)))
            goto done;
    }
    rc = run_sampler(l, j, spec, o, ckdir, &started, post, err);
    *stage = started;
    if (rc)
        goto done;
    lt_run_opts ro = {ckdir, "state.bin", spec, o->resume ? LT_RUN_RESUME : LT_RUN_FRESH, o->stop,
                      o->hooks};
    warnings(l, j, post, o->hooks);
    if (o->evidence_label && lt_like_dim(l) > LT_NESTED_DIM_MAX) {
        char text[200];
        snprintf(text, sizeof text,
                 "%s: no evidence (ln Z): nested sampling takes at most %d parameters and this "
                 "model has %zu",
                 o->evidence_label, LT_NESTED_DIM_MAX, lt_like_dim(l));
        pipeline_warn(o->hooks, LT_WARN_NO_EVIDENCE, text);
    } else if (o->evidence_label) {
        /* the evidence joins the summary, which is then written whole */
        char text[160];
        snprintf(text, sizeof text, "%s: evidence by nested sampling", o->evidence_label);
        pipeline_say(o->hooks, LT_NOTE_PROGRESS, text);
        lt_posterior ev;
        lt_run_opts eo = ro;
        eo.state = "nested.bin", eo.spec = NULL;
        eo.mode = o->resume ? LT_RUN_IF_PRESENT : LT_RUN_FRESH;
        *stage = 2;
        rc = lt_pipeline_run(lt_method_nested, l, j, &eo, NULL, &ev, err);
        post->ln_z = ev.ln_z, post->ln_z_err = ev.ln_z_err, post->information = ev.information;
        post->live_points = ev.live_points;
        lt_posterior_free(&ev);
        if (rc)
            goto done;
    }
    *summary = lt_report_sample_json(l, post, &j->data, j->seed);
    /* the chain files' own thinning, apart from convergence.thin (the
     * importance weighting's, which the summaries do see): the files keep
     * every file_thin-th of the posterior's draws of each chain */
    cJSON *cv = cJSON_GetObjectItemCaseSensitive(*summary, "convergence");
    size_t ft = (size_t)j->thin;
    cJSON_AddItemToObject(cv, "file_thin", lt_json_number((double)ft));
    cJSON_AddItemToObject(cv, "file_draws_per_chain",
                          lt_json_number((double)((post->ndraws + ft - 1) / ft)));
    if (o->out && (rc = pipeline_write_posterior(o->out, "sample", l, j, post, *summary, o->hooks,
                                                err)))
        goto done;
    if (!post->converged)
        unconverged(j, post, o->hooks);
done:
    /* a failure leaves the earlier run (or no folder) behind; a checkpoint
     * to resume from stays */
    if (prepared && rc)
        lt_outdir_abandon(o->out);
    free(ckdir);
    return rc;
}
