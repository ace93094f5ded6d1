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
            pipeline_warn(h, LT_WARN_NOT_CONVERGED, text);
            *unconverged = 1;
        }
        if (lt_run_model_reference(m, rs->n, i) < 0) {
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

/* ---- probe combinations ([run] probes) ---- */

/* The probes a combination may name, as bits; each is a term of the run
 * file's: the survey ([data] file), BAO, CMB, the [measurements]. */
enum { PROBE_SN = 1, PROBE_BAO = 2, PROBE_CMB = 4, PROBE_MEAS = 8 };
static const struct {
    const char *name;
    unsigned bit;
} probe_names[] = {{"sn", PROBE_SN}, {"bao", PROBE_BAO}, {"cmb", PROBE_CMB},
                   {"measurements", PROBE_MEAS}};
#define NPROBES (sizeof probe_names / sizeof probe_names[0])

#define MAX_COMBOS 8
typedef struct {
    size_t n;
    unsigned mask[MAX_COMBOS];
    char name[MAX_COMBOS][64]; /* "sn+bao": the folder and the tables' label */
} combos;

/* The probes j was given, as bits. */
static unsigned probes_given(const lt_job *j)
{
    return (j->data.data ? PROBE_SN : 0) | (j->bao ? PROBE_BAO : 0) | (j->cmb ? PROBE_CMB : 0) |
           (j->nmeasures ? PROBE_MEAS : 0);
}

/* j's [run] probes into c: comma-separated combinations of probe names
 * joined by '+', each probe given in the run file, no combination twice,
 * every probe given used by one of them. Without the key, c->n = 0: one
 * run of everything given, in the folders of old. */
static int combo_list(const lt_job *j, const char *run_file, combos *c, lt_error *err)
{
    memset(c, 0, sizeof *c);
    if (!j->probes)
        return LT_OK;
    const lt_ini_entry *e = j->ini ? lt_ini_get(j->ini, "run", "probes") : NULL;
    const char *file = e ? j->ini->path : run_file;
    long line = e ? e->line : 0;
    unsigned given = probes_given(j), used = 0;
    const char *p = j->probes;
    while (*p) {
        size_t len = strcspn(p, ",");
        char item[256];
        snprintf(item, sizeof item, "%.*s", (int)(len < 255 ? len : 255), p);
        p += len + (p[len] == ',');
        unsigned mask = 0;
        char *save = NULL;
        for (char *tok = strtok_r(item, "+", &save); tok; tok = strtok_r(NULL, "+", &save)) {
            tok += strspn(tok, " \t");
            char *end = tok + strcspn(tok, " \t");
            if (end[strspn(end, " \t")])
                return lt_error_set(err, LT_EINPUT, file, line,
                                    "[run] probes: '%s' has a space inside: join probes "
                                    "with '+', as bao+cmb",
                                    tok);
            *end = 0;
            size_t k = 0;
            while (k < NPROBES && strcmp(tok, probe_names[k].name))
                k++;
            if (k == NPROBES)
                return lt_error_set(err, LT_EINPUT, file, line,
                                    "[run] probes: unknown probe '%s' (probes: sn, bao, cmb, "
                                    "measurements; join them with '+', as sn+bao)",
                                    tok);
            if (!(given & probe_names[k].bit))
                return lt_error_set(err, LT_EINPUT, file, line,
                                    "[run] probes: '%s' is not given in this run file (%s)",
                                    tok,
                                    k == 0   ? "[data] file"
                                    : k == 1 ? "[data] bao"
                                    : k == 2 ? "[data] cmb"
                                             : "a [measurements] section");
            mask |= probe_names[k].bit;
        }
        if (!mask)
            return lt_error_set(err, LT_EINPUT, file, line,
                                "[run] probes: an empty combination (write sn, bao, sn+bao)");
        for (size_t i = 0; i < c->n; i++)
            if (c->mask[i] == mask)
                return lt_error_set(err, LT_EINPUT, file, line,
                                    "[run] probes: %s is listed twice", c->name[i]);
        if (c->n == MAX_COMBOS)
            return lt_error_set(err, LT_EINPUT, file, line,
                                "[run] probes: at most %d combinations", MAX_COMBOS);
        /* the name in a fixed order, whatever order they were written in */
        char *name = c->name[c->n];
        for (size_t k = 0; k < NPROBES; k++)
            if (mask & probe_names[k].bit)
                snprintf(name + strlen(name), sizeof c->name[0] - strlen(name), "%s%s",
                         name[0] ? "+" : "", probe_names[k].name);
        c->mask[c->n++] = mask;
        used |= mask;
    }
    if (given & ~used) {
        size_t k = 0;
        while (!((given & ~used) & probe_names[k].bit))
            k++;
        return lt_error_set(err, LT_EINPUT, file, line,
                            "[run] probes: no combination uses %s, which the run file gives "
                            "(add it to one, or remove it from the file)",
                            probe_names[k].name);
    }
    return LT_OK;
}

/* j restricted to the probes of mask (a copy sharing j's strings): the
 * others' files and measurements dropped, and with the survey its offset's
 * treatment. BAO beside the CMB takes r_d from its formula: rd = free
 * applies to combinations without the CMB, whose early universe would
 * otherwise not tie r_d to the sound horizon the CMB measures. */
static void restrict_job(lt_job *mj, unsigned mask)
{
    if (!(mask & PROBE_SN)) {
        lt_survey_spec_init(&mj->data);
        mj->offset = NULL;
    }
    if (!(mask & PROBE_BAO))
        mj->bao = mj->bao_cov = mj->rd = NULL;
    if (mask & PROBE_CMB)
        mj->rd = NULL;
    else
        mj->cmb = mj->cmb_cov = NULL;
    if (!(mask & PROBE_MEAS))
        mj->nmeasures = 0;
}

/* Say which of the run file's priors and fixed values a combination
 * passed over (lt_like_spec.lenient): a prior meant for another combination
 * that silently did nothing here would surprise. */
static void say_passed_over(const lt_like *l, const lt_like_spec *spec, const char *title,
                            const lt_pipeline_hooks *h)
{
    for (size_t k = 0; k < spec->nsettings; k++) {
        const lt_param_setting *st = &spec->settings[k];
        int used = 0;
        if (!st->fixed)
            used = lt_like_param_index(l, st->name) >= 0;
        for (size_t f = 0; st->fixed && f < lt_like_nfixed(l); f++)
            used |= !strcmp(lt_like_fixed(l, f)->name, st->name);
        if (used)
            continue;
        char text[320];
        snprintf(text, sizeof text,
                 "note: %.80s: the %s on %s does not apply (nothing in this combination "
                 "constrains it)",
                 title, st->fixed ? "fixed value" : "prior", st->name);
        pipeline_say(h, LT_NOTE_NEWS, text);
    }
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
static int one_model(lt_job *j, const lt_survey *s, const char *name, unsigned mask,
                     const char *title, size_t k, size_t n, const char *mdir,
                     const lt_run_job_opts *o, int *stage, lt_error *err)
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
        snprintf(text, sizeof text, "[%zu/%zu] %.64s: finished earlier, kept", k + 1, n, title);
        if (kept)
            pipeline_say(o->hooks, LT_NOTE_PROGRESS, text);
        return rc;
    }
    snprintf(text, sizeof text, "[%zu/%zu] %.80s: %s", k + 1, n, title,
             again ? "resuming the sampler" : "best fit, then sampling");
    pipeline_say(o->hooks, LT_NOTE_PROGRESS, text);
    lt_job mj = *j; /* the model's own copy of the settings */
    mj.model = name;
    mj.force = 1;
    mj.ini = NULL; /* owned by j, as are its strings */
    mj.pool = NULL, mj.npool = mj.cap = 0;
    if (mask) {
        restrict_job(&mj, mask);
        if (!(mask & PROBE_SN))
            s = NULL;
    }
    lt_like_spec spec;
    lt_like *l = NULL;
    if (!(rc = lt_job_model_spec(&mj, &spec, err))) {
        spec.lenient = mask != 0; /* the priors serve every combination */
        l = lt_like_alloc(s, &spec, err);
    }
    if (rc || !l)
        return rc ? rc : err->code;
    if (mask)
        say_passed_over(l, &spec, title, o->hooks);
    char label[160];
    snprintf(label, sizeof label, "[%zu/%zu] %.80s", k + 1, n, title);
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
    rs.figure_width_in = j->figure_width;
    int rc, prepared = 0;
    j->lenient = 1; /* a prior applies to the models that have the parameter */
    combos cb;
    if ((rc = model_list(j, o->run_file, models, &n, err)) ||
        (rc = combo_list(j, o->run_file, &cb, err)))
        return rc;
    if (n * (cb.n ? cb.n : 1) > LT_REPORT_MAX_MODELS) {
        const lt_ini_entry *e = j->ini ? lt_ini_get(j->ini, "run", "probes") : NULL;
        return lt_error_set(err, LT_EINPUT, e ? j->ini->path : o->run_file, e ? e->line : 0,
                            "[run] probes: %zu models times %zu combinations is more than the "
                            "%d runs one report holds",
                            n, cb.n, LT_REPORT_MAX_MODELS);
    }
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
        pipeline_warn(o->hooks, s->warning_ids[i], s->warnings[i]);
    snprintf(what, sizeof what, "lantern %s run (running)", LT_VERSION);
    if ((rc = lt_outdir_mark(*dir, what, err)))
        goto done;
    /* each combination of probes (one of everything given without [run]
     * probes) for each model: DIR/MODEL, or DIR/COMBINATION/MODEL */
    for (size_t c = 0, k = 0; c < (cb.n ? cb.n : 1); c++)
        for (size_t i = 0; i < n; i++, k++) {
            const char *mname = models[i]->name;
            char folder[160], title[160];
            if (cb.n) {
                snprintf(folder, sizeof folder, "%s/%s", cb.name[c], mname);
                snprintf(title, sizeof title, "%s (%s)", mname, cb.name[c]);
            } else {
                snprintf(folder, sizeof folder, "%s", mname);
                snprintf(title, sizeof title, "%s", mname);
            }
            if ((rc = lt_report_set_add(&rs, *dir, folder, cb.n ? title : NULL, err)) ||
                (rc = one_model(j, s, mname, cb.n ? cb.mask[c] : 0, title, k, n * (cb.n ? cb.n : 1),
                                rs.dirs[k], o, stage, err)))
                goto done;
        }
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
