/*
 * Running a method (see lantern/pipeline.h): fresh or resumed, with its
 * checkpoint folder, stopped and saved. Every method goes through here, so
 * that resume is written once.
 */
#include <errno.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "lantern/file.h"
#include "lantern/inference.h"
#include "lantern/pipeline.h"
#include "internal.h"

/* The chi2 standardisation's sigma_int, set with the fit before any method
 * runs (the same seed and starts give the same values, so a resumed run
 * gets its first part's scatter back; the fingerprint checks it). */
static int tune_scatter(lt_like *l, const lt_job *j, const lt_run_opts *o, lt_error *err)
{
    pipeline_say(o->hooks, LT_NOTE_PROGRESS,
                 "setting sigma_int so that chi2/dof = 1 in each group, with the fit");
    lt_fit_opts fo = {.seed = j->seed, .starts = (size_t)j->starts, .stop = o->stop};
    lt_fit_result *r = malloc(sizeof *r);
    if (!r)
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    lt_scatter_tune tune;
    int iterations;
    int rc = lt_fit_scatter(l, &fo, r, &tune, &iterations, err);
    free(r);
    if (rc)
        return rc;
    char text[512];
    size_t at = (size_t)snprintf(text, sizeof text, "sigma_int after %d rounds:", iterations);
    for (size_t e = 0; e < tune.n && at < sizeof text; e++)
        at += (size_t)snprintf(text + at, sizeof text - at, " %s = %.4f%s", tune.name[e],
                               tune.sigma[e], tune.at_zero[e] ? " (chi2 below dof at 0)" : "");
    pipeline_say(o->hooks, LT_NOTE_NEWS, text);
    return LT_OK;
}

int lt_pipeline_run(const lt_method_type *t, lt_like *l, lt_job *j, const lt_run_opts *o,
                    int *started, lt_posterior *post, lt_error *err)
{
    memset(post, 0, sizeof *post);
    if (started)
        *started = 0;
    char *state = NULL, *settings = NULL;
    int rc = LT_OK;
    if (lt_like_scatter_untuned(l) && (rc = tune_scatter(l, j, o, err)))
        return rc;
    void *s = t->alloc(l, j, o->ckdir, err);
    if (!s)
        return err->code;
    if (o->ckdir && ((o->state && !(state = lt_path_join(o->ckdir, o->state, NULL))) ||
                     (o->spec && !(settings = lt_path_join(o->ckdir, "settings.ini", NULL))))) {
        rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        goto done;
    }
    lt_fingerprint parts;
    uint64_t fp = t->fingerprint(s, &parts);
    int resume = t->load && state &&
                 (o->mode == LT_RUN_RESUME || (o->mode == LT_RUN_IF_PRESENT && lt_path_exists(state)));
    if (o->mode == LT_RUN_RESUME && !resume) {
        rc = lt_error_set(err, LT_EINPUT, o->ckdir, 0, "no %s checkpoint to resume here",
                          t->name);
        goto done;
    }
    if (resume) {
        if ((settings && (rc = lt_fingerprint_check(settings, &parts, err))) ||
            (rc = t->load(s, state, fp, err)))
            goto done;
    } else {
        if ((rc = t->start(s, o->stop, err)))
            goto done;
        /* an earlier run's state, in a folder reused with --force, goes only
         * now: a run stopped or failed before it started leaves it */
        if (state && o->mode == LT_RUN_FRESH)
            remove(state);
        if (o->ckdir && mkdir(o->ckdir, 0777) != 0 && errno != EEXIST) {
            rc = lt_error_set(err, LT_EIO, o->ckdir, 0, "cannot make the checkpoint folder: %s",
                              strerror(errno));
            goto done;
        }
        if (settings && ((rc = lt_job_write(j, o->spec, settings, err)) ||
                         (rc = lt_fingerprint_write(settings, &parts, err))))
            goto done;
    }
    if (started)
        *started = 1;
    rc = t->iterate(s, state, fp, o->stop, o->hooks, err);
    /* the state as it ends or stops: nothing done is lost, and a finished
     * run is not redone when a later step is resumed */
    if (state && t->save && (rc == LT_OK || rc == LT_EINTR)) {
        lt_error serr;
        if (t->save(s, state, fp, &serr)) {
            *err = serr;
            rc = serr.code;
        }
    }
    if (rc == LT_OK)
        rc = t->result(s, o->hooks, post, err);
done:
    t->free(s);
    free(state);
    free(settings);
    return rc;
}

void pipeline_say(const lt_pipeline_hooks *h, lt_note_kind kind, const char *text)
{
    if (h && h->note)
        h->note(kind, NULL, text, h->ctx);
}

/* ---- the best fit ---- */

typedef struct {
    const lt_like *l;
    lt_fit_opts fo;
    lt_fit_result fr;
} fit_run;

static void *fit_alloc(lt_like *l, lt_job *j, const char *ckdir, lt_error *err)
{
    (void)ckdir;
    fit_run *r = calloc(1, sizeof *r);
    if (!r) {
        lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        return NULL;
    }
    r->l = l;
    r->fo = (lt_fit_opts){.seed = j->seed, .starts = (size_t)j->starts, .stop = NULL};
    return r;
}

static uint64_t fit_fingerprint(const void *p, lt_fingerprint *fp)
{
    const fit_run *r = p;
    lt_fingerprint_like(r->l, fp);
    return lt_fingerprint_value(fp);
}

static int fit_start(void *p, volatile sig_atomic_t *stop, lt_error *err)
{
    (void)err;
    fit_run *r = p;
    r->fo.stop = stop;
    return LT_OK;
}

static int fit_iterate(void *p, const char *state, uint64_t fp, volatile sig_atomic_t *stop,
                       const lt_pipeline_hooks *h, lt_error *err)
{
    (void)state, (void)fp, (void)h;
    fit_run *r = p;
    int rc = lt_fit_run(r->l, &r->fo, &r->fr, err);
    /* a stop during the last start still gives a best fit: call it stopped */
    if (!rc && stop && *stop)
        rc = lt_error_set(err, LT_EINTR, NULL, 0, "interrupted");
    return rc;
}

static int fit_result(void *p, const lt_pipeline_hooks *h, lt_posterior *post, lt_error *err)
{
    (void)h;
    fit_run *r = p;
    return lt_pipeline_fit_posterior(r->l, &r->fr, post, err);
}

static const lt_method_type fit_type = {"fit",     fit_alloc, fit_fingerprint, fit_start, fit_iterate,
                                        NULL,      NULL,      fit_result,      free};
const lt_method_type *lt_method_fit = &fit_type;
