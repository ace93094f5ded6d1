/* Campaign files, the task list and the queue: see lantern/campaign.h. */
#include <errno.h>
#include <limits.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "lantern/digest.h"
#include "lantern/ini.h"
#include "lantern/file.h"
#include "lantern/campaign.h"
#include "lantern/text.h"
#include "internal.h"

const char *lt_method_name(lt_method m)
{
    static const char *names[LT_NMETHODS] = {"fit", "sample", "nested"};
    return m < LT_NMETHODS ? names[m] : "?";
}

/* The digest of a file's bytes into h. */
static int digest_file(uint64_t *h, const char *path, lt_error *err)
{
    char *text = NULL;
    size_t size = 0;
    if (lt_file_read(path, 16u << 20, &text, &size, err))
        return err->code;
    lt_digest_add(h, text, size);
    free(text);
    return LT_OK;
}

/* A path from the campaign file: relative to its folder, made absolute so
 * that task records name it from anywhere. Returns a new string, NULL only
 * when memory runs out (a working folder that cannot be named leaves the
 * path relative). */
static char *resolve(const char *campaign_path, const char *path)
{
    if (path[0] == '/')
        return strdup(path);
    const char *slash = strrchr(campaign_path, '/');
    char *cwd = NULL;
    if (campaign_path[0] != '/' && !(cwd = getcwd(NULL, 0)) && errno == ENOMEM)
        return NULL;
    int dir_len = slash ? (int)(slash - campaign_path) : 0;
    char *s = lt_path_format(NULL, "%s%s%.*s%s%s", cwd ? cwd : "", cwd && cwd[0] ? "/" : "",
                             dir_len, campaign_path, slash ? "/" : "", path);
    free(cwd);
    return s;
}

/* Split a comma-separated list in place into at most max trimmed items. */
static size_t split_list(char *s, char **items, size_t max)
{
    size_t n = 0;
    for (char *tok = strtok(s, ","); tok; tok = strtok(NULL, ",")) {
        tok = lt_text_trim(tok);
        if (n == max)
            return max + 1;
        items[n++] = tok;
    }
    return n;
}

static int read_models(lt_ini *ini, lt_campaign *c, lt_error *err)
{
    lt_ini_entry *e = lt_ini_get(ini, "campaign", "models");
    if (!e)
        return lt_error_set(err, LT_EINPUT, ini->path, 0,
                            "[campaign] needs models = M1, M2, ... (lcdm-flat, lcdm, wcdm-flat, "
                            "wcdm, w0wa-flat, w0wa)");
    return lt_cosmo_model_list(e->value, ini->path, e->line, "models: ",
                               sizeof c->models / sizeof c->models[0],
                               c->models, &c->nmodels, err);
}

static int read_methods(lt_ini *ini, lt_campaign *c, lt_error *err)
{
    lt_ini_entry *e = lt_ini_get(ini, "campaign", "methods");
    if (!e) {
        c->methods[c->nmethods++] = LT_METHOD_FIT;
        return LT_OK;
    }
    char buf[LT_INI_LINE_MAX + 1], *items[LT_NMETHODS + 1];
    snprintf(buf, sizeof buf, "%s", e->value);
    size_t n = split_list(buf, items, LT_NMETHODS);
    if (n == 0 || n > LT_NMETHODS)
        return lt_error_set(err, LT_EINPUT, ini->path, e->line,
                            "methods: give one or more of fit, sample, nested");
    for (size_t i = 0; i < n; i++) {
        int m = -1;
        for (int k = 0; k < LT_NMETHODS; k++)
            if (!strcmp(items[i], lt_method_name((lt_method)k)))
                m = k;
        if (m < 0)
            return lt_error_set(err, LT_EINPUT, ini->path, e->line,
                                "unknown method '%s' (fit, sample, nested)", items[i]);
        for (size_t k = 0; k < c->nmethods; k++)
            if (c->methods[k] == (lt_method)m)
                return lt_error_set(err, LT_EINPUT, ini->path, e->line,
                                    "method %s is listed twice", items[i]);
        c->methods[c->nmethods++] = (lt_method)m;
    }
    return LT_OK;
}

/* [data.NAME]: the keys of a run file's [data] section, by its rules;
 * file and columns are required, and paths made absolute so that task
 * records name them from anywhere. */
static int read_real(lt_job *job, lt_ini *ini, const char *section, lt_campaign_data *d,
                     lt_error *err)
{
    const char *v;
    int rc;
    if ((rc = lt_ini_string(ini, section, "file", 1, &v, err)) ||
        (rc = lt_ini_string(ini, section, "columns", 1, &v, err)) ||
        (rc = lt_job_data_section(job, ini, section, &d->spec, err)) ||
        (rc = lt_job_absolute(job, &d->spec, err)))
        return rc;
    d->realizations = 1;
    return LT_OK;
}

/* [simulated.NAME]: scenario = FILE, realizations = R, first_seed = S. */
static int read_simulated(lt_ini *ini, const char *section, lt_campaign_data *d, uint64_t *h,
                          lt_error *err)
{
    const char *v;
    int rc;
    if ((rc = lt_ini_string(ini, section, "scenario", 1, &v, err)))
        return rc;
    char *path = resolve(ini->path, v);
    if (!path)
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    rc = lt_scenario_read(path, &d->scenario, err);
    if (rc == LT_OK)
        rc = digest_file(h, path, err);
    free(path);
    if (rc)
        return rc;
    d->simulated = 1;
    d->first_seed = 1;
    if ((rc = lt_ini_long(ini, section, "realizations", 1, 1, 1000000, &d->realizations, err)) ||
        (rc = lt_ini_long(ini, section, "first_seed", 0, 1, LONG_MAX / 2, &d->first_seed, err)))
        return rc;
    return LT_OK;
}

int lt_campaign_read(const char *path, lt_campaign *c, lt_error *err)
{
    memset(c, 0, sizeof *c);
    lt_job_init(&c->job);
    c->job.lenient = 1; /* a prior or fixed value applies to the models that have it */
    c->digest = LT_DIGEST_START;
    lt_ini *ini = lt_ini_read(path, err);
    if (!ini)
        return err->code;
    int rc;
    const char *v = NULL;
    /* absolute, so that a resume from another folder finds it */
    char *full = realpath(path, NULL);
    if (!(c->path = full ? full : strdup(path))) {
        rc = lt_error_set(err, LT_ENOMEM, path, 0, "out of memory");
        goto done;
    }
    if ((rc = digest_file(&c->digest, path, err)))
        goto done;
    if ((rc = lt_ini_string(ini, "campaign", "name", 0, &v, err)))
        goto done;
    if (!v) {
        /* the file's stem */
        const char *base = strrchr(path, '/') ? strrchr(path, '/') + 1 : path;
        const char *dot = strrchr(base, '.');
        size_t len = dot && dot != base ? (size_t)(dot - base) : strlen(base);
        c->name = strndup(base, len);
    } else
        c->name = strdup(v);
    if (!c->name) {
        rc = lt_error_set(err, LT_ENOMEM, path, 0, "out of memory");
        goto done;
    }
    /* a task runs with the campaign's --threads, and its seed comes from
     * [campaign] seed: run-file keys that would say otherwise are refused */
    static const char *const not_here[][2] = {{"sampler", "threads"}, {"sampler", "seed"},
                                              {"fit", "seed"}, {"sampler", "thin"}};
    for (size_t k = 0; k < sizeof not_here / sizeof not_here[0]; k++)
        for (size_t i = 0; i < ini->n; i++)
            if (!strcmp(ini->entries[i].section, not_here[k][0]) &&
                !strcmp(ini->entries[i].key, not_here[k][1])) {
                rc = lt_error_set(err, LT_EINPUT, ini->path, ini->entries[i].line,
                                  "[%s] %s has no place in a campaign (%s)", not_here[k][0],
                                  not_here[k][1],
                                  k == 0   ? "give lantern campaign --threads"
                                  : k == 3 ? "a campaign writes no chain files"
                                           : "[campaign] seed seeds every task");
                goto done;
            }
    if ((rc = read_models(ini, c, err)) || (rc = read_methods(ini, c, err)) ||
        (rc = lt_job_apply_ini(&c->job, ini,
                               LT_JOB_PARAMS | LT_JOB_FIT | LT_JOB_SAMPLER | LT_JOB_NESTED, err)))
        goto done;
    lt_ini_entry *e;
    if ((e = lt_ini_get(ini, "campaign", "seed")) &&
        (rc = lt_job_set(&c->job, "sampler", "seed", e->value, ini->path, e->line, 1, err)))
        goto done;
    if ((e = lt_ini_get(ini, "campaign", "offset"))) {
        if (lt_offset_parse(e->value) < 0) {
            rc = lt_error_set(err, LT_EINPUT, ini->path, e->line,
                              "offset = '%s': give none, marginal or sampled", e->value);
            goto done;
        }
        if ((rc = lt_job_set(&c->job, "model", "offset", e->value, ini->path, e->line, 1, err)))
            goto done;
    }
    /* a light-curve data set's standardisation (the run file's [data]
     * keys; lantern fit --help) */
    static const char *const std_keys[] = {"standardise", "scatter", "velocity_dispersion",
                                           "mass_split"};
    for (size_t k = 0; k < sizeof std_keys / sizeof std_keys[0]; k++)
        if ((e = lt_ini_get(ini, "campaign", std_keys[k])) &&
            (rc = lt_job_set(&c->job, "data", std_keys[k], e->value, ini->path, e->line, 1, err)))
            goto done;
    /* every model's priors and fixed values, checked now rather than in
     * the middle of the campaign */
    for (size_t k = 0; k < c->nmodels; k++) {
        lt_like_spec spec;
        if ((rc = lt_job_like_spec(&c->job, c->models[k], &spec, err)))
            goto done;
    }
    /* data sets, in file order */
    for (size_t i = 0; i < ini->nsections; i++) {
        const char *s = ini->sections[i];
        int real = !strncmp(s, "data.", 5), sim = !strncmp(s, "simulated.", 10);
        if (!real && !sim)
            continue;
        const char *name = s + (real ? 5 : 10);
        if (!*name || strchr(name, '/')) {
            rc = lt_error_set(err, LT_EINPUT, ini->path, ini->section_lines[i],
                              "[%s]: name the data set after the dot, without '/'", s);
            goto done;
        }
        lt_campaign_data *d = realloc(c->data, (c->ndata + 1) * sizeof *d);
        if (!d) {
            rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
            goto done;
        }
        c->data = d;
        d = &c->data[c->ndata++];
        memset(d, 0, sizeof *d);
        d->name = strdup(name);
        for (size_t k = 0; k + 1 < c->ndata; k++)
            if (!strcmp(c->data[k].name, name)) {
                rc = lt_error_set(err, LT_EINPUT, ini->path, ini->section_lines[i],
                                  "data set '%s' is given twice", name);
                goto done;
            }
        lt_ini_has_section(ini, s);
        if ((rc = real ? read_real(&c->job, ini, s, d, err)
                       : read_simulated(ini, s, d, &c->digest, err)))
            goto done;
    }
    if (c->ndata == 0) {
        rc = lt_error_set(err, LT_EINPUT, ini->path, 0,
                          "no data sets: add [data.NAME] (a survey file) or [simulated.NAME] "
                          "(realizations of a scenario) sections");
        goto done;
    }
    if ((rc = lt_ini_check_used(ini, err)))
        goto done;
    for (size_t i = 0; i < c->ndata; i++)
        c->ntasks += (size_t)c->data[i].realizations;
    c->ntasks *= c->nmodels * c->nmethods;
done:
    lt_ini_free(ini);
    if (rc)
        lt_campaign_free(c);
    return rc;
}

void lt_campaign_free(lt_campaign *c)
{
    if (!c)
        return;
    for (size_t i = 0; i < c->ndata; i++) {
        lt_campaign_data *d = &c->data[i];
        free(d->name);
        if (d->simulated)
            lt_scenario_free(&d->scenario);
    }
    free(c->data);
    free(c->path);
    free(c->name);
    lt_job_free(&c->job);
    memset(c, 0, sizeof *c);
}

/* splitmix64's finaliser: a well-mixed seed from a few words. */
static uint64_t mix(uint64_t x)
{
    x += 0x9E3779B97F4A7C15ull;
    x = (x ^ (x >> 30)) * 0xBF58476D1CE4E5B9ull;
    x = (x ^ (x >> 27)) * 0x94D049BB133111EBull;
    return x ^ (x >> 31);
}

void lt_campaign_task_get(const lt_campaign *c, size_t index, lt_campaign_task *t)
{
    memset(t, 0, sizeof *t);
    t->index = index;
    size_t per = c->nmodels * c->nmethods, rest = index / per, inner = index % per;
    t->model = inner / c->nmethods;
    t->method = c->methods[inner % c->nmethods];
    for (size_t i = 0; i < c->ndata; i++) {
        size_t r = (size_t)c->data[i].realizations;
        if (rest < r) {
            t->data = i;
            t->realization = c->data[i].simulated ? c->data[i].first_seed + (long)rest : 0;
            break;
        }
        rest -= r;
    }
    t->seed = mix(mix(mix(c->job.seed) ^ t->data) ^ (uint64_t)t->realization) >> 1;
}

void lt_campaign_task_label(const lt_campaign *c, size_t index, char *buf, size_t size)
{
    lt_campaign_task t;
    lt_campaign_task_get(c, index, &t);
    char r[32] = "";
    if (c->data[t.data].simulated)
        snprintf(r, sizeof r, "/r%ld", t.realization);
    snprintf(buf, size, "%s%s/%s/%s", c->data[t.data].name, r, c->models[t.model]->name,
             lt_method_name(t.method));
}

/* ---- the queue ---- */

int lt_campaign_queue_init(lt_campaign_queue *q, size_t ntasks)
{
    memset(q, 0, sizeof *q);
    q->ntasks = ntasks;
    q->state = calloc(ntasks + 1, 1);
    q->attempts = calloc(ntasks + 1, 1);
    q->retry = calloc(ntasks + 1, sizeof *q->retry);
    if (!q->state || !q->attempts || !q->retry) {
        lt_campaign_queue_free(q);
        return LT_ENOMEM;
    }
    return LT_OK;
}

void lt_campaign_queue_free(lt_campaign_queue *q)
{
    free(q->state);
    free(q->attempts);
    free(q->retry);
    memset(q, 0, sizeof *q);
}

void lt_campaign_queue_skip(lt_campaign_queue *q, size_t index)
{
    if (index < q->ntasks)
        q->state[index] = 2;
}

long lt_campaign_queue_take(lt_campaign_queue *q)
{
    size_t i;
    if (q->nretry)
        i = q->retry[--q->nretry];
    else {
        while (q->next < q->ntasks && q->state[q->next] != 0)
            q->next++;
        if (q->next == q->ntasks)
            return -1;
        i = q->next++;
    }
    q->state[i] = 1;
    q->attempts[i]++;
    q->running++;
    return (long)i;
}

int lt_campaign_queue_done(lt_campaign_queue *q, size_t index, int ok)
{
    q->running--;
    if (ok) {
        q->state[index] = 2;
        return 0;
    }
    if (q->attempts[index] < 2) {
        q->state[index] = 0;
        q->retry[q->nretry++] = index;
        return 1;
    }
    q->state[index] = 3;
    return 0;
}

int lt_campaign_queue_finished(const lt_campaign_queue *q)
{
    if (q->running || q->nretry)
        return 0;
    for (size_t i = q->next; i < q->ntasks; i++)
        if (q->state[i] == 0)
            return 0;
    return 1;
}
