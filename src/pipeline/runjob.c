/*
 * lantern run's job (and lantern report's): every model of a run file
 * sampled into its own folder with its evidence, then the report of the
 * whole; see lantern/pipeline.h.
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "lantern/file.h"
#include "lantern/outdir.h"
#include "lantern/pipeline.h"
#include "internal.h"
#include "lantern/report.h"
#include "lantern/version.h"

int lt_pipeline_report(lt_report_set *rs, const char *dir, const char *name, const lt_survey *s,
                       const lt_pipeline_hooks *h, int *unconverged, lt_error *err)
{
    *unconverged = 0;
    int rc = lt_report_set_write(rs, dir, name, s, err);
    if (rc)
        return rc;
    /* what the tables mark, said where the user looks first */
    const lt_run_model *m = rs->models;
    for (size_t i = 0; i < rs->n; i++) {
        char text[512], rhat[64];
        if (!m[i].converged) {
            snprintf(text, sizeof text,
                     "%s did not converge (worst R-hat %s, smallest ESS %.0f): its numbers are "
                     "provisional; the tables mark it with a double dagger",
                     m[i].label, lt_run_model_rhat_text(&m[i], rhat, sizeof rhat), m[i].ess_min);
            pipeline_say(h, LT_NOTE_WARNING, text);
            *unconverged = 1;
        }
        if (!lt_run_model_same_data(&m[0], &m[i])) {
            snprintf(text, sizeof text,
                     "note: %s was fitted to other data (%zu objects) than %s (%zu objects): the "
                     "tables leave its AIC, BIC and ln B differences blank",
                     m[i].label, m[i].n_data, m[0].label, m[0].n_data);
            pipeline_say(h, LT_NOTE_NEWS, text);
        }
    }
    return LT_OK;
}

/* j's [run] models: each a known model, none twice. */
static int model_list(const lt_job *j, const char *run_file, const lt_cosmo_model **m, size_t *n,
                      lt_error *err)
{
    if (!j->models)
        return lt_error_set(err, LT_EINPUT, run_file, 0,
                            "[run] needs models = M1, M2, ... (lcdm-flat, lcdm, wcdm-flat, wcdm, "
                            "w0wa-flat, w0wa)");
    return lt_cosmo_model_list(j->models, run_file, 0, "[run] models: ", LT_REPORT_MAX_MODELS, m,
                               n, err);
}

/* The folder of a resumed run must hold a run's output ("report" too:
 * lantern report rebuilding a run in place re-marks it). */
static int check_resume(const char *dir, lt_error *err)
{
    if (!lt_path_exists(dir))
        return lt_error_set(err, LT_EINPUT, "--resume", 0, "%s does not exist", dir);
    char made_by[64];
    int rc = lt_outdir_command(dir, made_by, sizeof made_by, err);
    if (!rc && strcmp(made_by, "run") && strcmp(made_by, "report"))
        rc = lt_error_set(err, LT_EINPUT, dir, 0,
                          "holds the output of 'lantern %s', not of a run: nothing to resume",
                          made_by);
    return rc;
}

/* Model k of n into its folder rs->dirs[k]: kept if it has a summary
 * (written once, whole, with the evidence), else sampled, continuing its
 * checkpoint when resuming. */
static int one_model(lt_job *j, const lt_survey *s, const char *name, size_t k, size_t n,
                     const char *mdir, const lt_run_job_opts *o, int *stage, lt_error *err)
{
    char *sum = lt_path_join(mdir, "summary.json", err);
    char *chk = lt_path_join(mdir, "checkpoint/state.bin", err);
    int rc = sum && chk ? LT_OK : LT_ENOMEM;
    /* kept: a summary this run finished (an earlier run's, in a folder
     * taken with --force, leaves the model folder not done) */
    int kept = !rc && o->resume && lt_path_exists(sum) && lt_outdir_done(mdir);
    int again = !rc && o->resume && lt_path_exists(chk);
    free(sum);
    free(chk);
    char text[160];
    if (rc || kept) {
        snprintf(text, sizeof text, "[%zu/%zu] %.64s: finished earlier, kept", k + 1, n, name);
        if (kept)
            pipeline_say(o->hooks, LT_NOTE_PROGRESS, text);
        return rc;
    }
    snprintf(text, sizeof text, "[%zu/%zu] %.64s: %s", k + 1, n, name,
             again ? "resuming the sampler" : "best fit, then sampling");
    pipeline_say(o->hooks, LT_NOTE_PROGRESS, text);
    lt_job mj = *j; /* the model's own copy of the settings */
    mj.model = name;
    mj.force = 1;
    mj.ini = NULL; /* owned by j, as are its strings */
    mj.pool = NULL, mj.npool = mj.cap = 0;
    lt_like_spec spec;
    lt_like *l = NULL;
    if ((rc = lt_job_model_spec(&mj, &spec, err)) || !(l = lt_like_alloc(s, &spec, err)))
        return rc ? rc : err->code;
    char label[128];
    snprintf(label, sizeof label, "[%zu/%zu] %.64s", k + 1, n, name);
    lt_sample_opts so = {mdir, again, label, o->stop, o->hooks};
    lt_posterior post;
    struct cJSON *summary = NULL;
    rc = lt_pipeline_sample(l, &mj, &spec, &so, &post, &summary, stage, err);
    cJSON_Delete(summary);
    lt_posterior_free(&post);
    lt_like_free(l);
    return rc;
}

int lt_pipeline_run_job(lt_job *j, const lt_run_job_opts *o, char **dir, int *unconverged,
                        int *stage, lt_error *err)
{
    *dir = NULL;
    *unconverged = 0;
    *stage = 0;
    const lt_cosmo_model *models[LT_REPORT_MAX_MODELS];
    char what[128], text[600];
    size_t n;
    lt_survey *s = NULL;
    lt_report_set rs;
    lt_report_set_init(&rs);
    int rc, prepared = 0;
    j->lenient = 1; /* a prior applies to the models that have the parameter */
    if ((rc = model_list(j, o->run_file, models, &n, err)))
        return rc;
    /* the folder: out/NAME by default, NAME from [run] name or the file's stem */
    char stem[256];
    const char *base = strrchr(o->run_file, '/') ? strrchr(o->run_file, '/') + 1 : o->run_file;
    snprintf(stem, sizeof stem, "%.*s", (int)strcspn(base, "."), base);
    const char *name = j->name ? j->name : stem;
    const char *given = o->out ? o->out : j->out;
    if (!(*dir = given ? strdup(given) : lt_path_join("out", name, err)))
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    if (o->resume)
        rc = check_resume(*dir, err);
    else if (!(rc = lt_outdir_prepare(*dir, o->force, err)))
        prepared = 1;
    if (rc || (rc = lt_job_absolute(j, &j->data, err)))
        goto done;
    /* the data, once */
    snprintf(text, sizeof text, "lantern run %s: reading %s", name,
             j->data.data ? j->data.data : "no survey (measurements only)");
    pipeline_say(o->hooks, LT_NOTE_PROGRESS, text);
    if ((rc = lt_job_survey(j, &s, err)))
        goto done;
    for (size_t i = 0; s && i < s->nwarnings; i++)
        pipeline_say(o->hooks, LT_NOTE_WARNING, s->warnings[i]);
    snprintf(what, sizeof what, "lantern %s run (running)", LT_VERSION);
    if ((rc = lt_outdir_mark(*dir, what, err)))
        goto done;
    for (size_t k = 0; k < n; k++)
        if ((rc = lt_report_set_add(&rs, *dir, models[k]->name, NULL, err)) ||
            (rc = one_model(j, s, models[k]->name, k, n, rs.dirs[k], o, stage, err)))
            goto done;
    snprintf(text, sizeof text, "report: tables and figures in %s/", *dir);
    pipeline_say(o->hooks, LT_NOTE_PROGRESS, text);
    snprintf(what, sizeof what, "lantern %s run %s", LT_VERSION, o->run_file);
    if (!(rc = lt_pipeline_report(&rs, *dir, name, s, o->hooks, unconverged, err)))
        rc = lt_outdir_finish(*dir, what, err);
done:
    /* a failed run leaves the earlier one (or no folder); a stopped one its
     * checkpoints, to resume (a folder with nothing in it goes) */
    if (prepared && rc)
        lt_outdir_abandon(*dir);
    lt_report_set_free(&rs);
    lt_survey_free(s);
    return rc;
}
