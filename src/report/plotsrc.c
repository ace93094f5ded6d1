/*
 * What lantern plot reads: run folders, sampled-model folders, chain files
 * and plain tables of draws, each into lt_run_model (see
 * lt_report_plot_sources in include/lantern/report.h).
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include <cjson/cJSON.h>

#include "lantern/file.h"
#include "lantern/report.h"

static int is_dir(const char *p)
{
    struct stat st;
    return stat(p, &st) == 0 && S_ISDIR(st.st_mode);
}

static int exists(const char *dir, const char *name)
{
    char *p = lt_path_join(dir, name, NULL);
    int ok = p && lt_path_exists(p);
    free(p);
    return ok;
}

/* One more model into out[*n], or an input error when there is no room. */
static lt_run_model *slot(const char *src, lt_run_model *out, size_t max, size_t *n,
                          lt_error *err)
{
    if (*n == max) {
        lt_error_set(err, LT_EINPUT, src, 0, "more than %zu sets of draws in one figure", max);
        return NULL;
    }
    return &out[(*n)++];
}

/* Replace m's label with "PREFIX: label" (prefix NULL: leave it). */
static int prefix_label(lt_run_model *m, const char *prefix, lt_error *err)
{
    if (!prefix)
        return LT_OK;
    size_t len = strlen(prefix) + strlen(m->label) + 3;
    char *l = malloc(len);
    if (!l)
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    snprintf(l, len, "%s: %s", prefix, m->label);
    free(m->label);
    m->label = l;
    return LT_OK;
}

/* Every model folder a run's summary lists (its "models"[].folder), of the
 * model named model if that is not NULL. */
static int add_run(const char *run, const char *model, int prefix, lt_run_model *out, size_t max,
                   size_t *n, lt_error *err)
{
    char *path = lt_path_join(run, "summary.json", NULL), *text = NULL;
    size_t size, before = *n;
    if (!path)
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    int rc = lt_file_read(path, (size_t)64 << 20, &text, &size, err);
    cJSON *j = rc ? NULL : cJSON_Parse(text);
    const cJSON *models = cJSON_GetObjectItemCaseSensitive(j, "models");
    const cJSON *rname = cJSON_GetObjectItemCaseSensitive(j, "name");
    const cJSON *m;
    cJSON_ArrayForEach(m, models)
    {
        const cJSON *folder = cJSON_GetObjectItemCaseSensitive(m, "folder");
        const cJSON *mname = cJSON_GetObjectItemCaseSensitive(m, "model");
        const cJSON *label = cJSON_GetObjectItemCaseSensitive(m, "label");
        if (rc || !cJSON_IsString(folder) ||
            (model && !(cJSON_IsString(mname) && !strcmp(mname->valuestring, model))))
            continue;
        char *dir = lt_path_join(run, folder->valuestring, NULL);
        lt_run_model *s = dir ? slot(run, out, max, n, err) : NULL;
        rc = !dir ? lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory")
             : !s ? err->code
                  : lt_run_model_load(dir, s, err);
        if (rc && s)
            (*n)--; /* nothing to free: a failed load leaves none */
        if (!rc && cJSON_IsString(label)) {
            free(s->label);
            if (!(s->label = strdup(label->valuestring)))
                rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        }
        if (!rc && prefix)
            rc = prefix_label(s, cJSON_IsString(rname) ? rname->valuestring : run, err);
        free(dir);
    }
    if (!rc && *n == before)
        rc = model ? lt_error_set(err, LT_EINPUT, path, 0, "the run has no model %s", model)
                   : lt_error_set(err, LT_EINPUT, path, 0,
                                  "not the summary of a lantern run or sample (no model folders)");
    cJSON_Delete(j);
    free(text);
    free(path);
    return rc;
}

int lt_report_plot_sources(const char *const *src, size_t nsrc, const char *model,
                           lt_run_model *out, size_t max, size_t *n, lt_error *err)
{
    int rc = LT_OK;
    *n = 0;
    for (size_t i = 0; !rc && i < nsrc; i++) {
        const char *p = src[i];
        const char *base = strrchr(p, '/') ? strrchr(p, '/') + 1 : p;
        char *dir = NULL;
        /* a chain file beside its summary reads as its folder: priors, best fit */
        if (!is_dir(p) && (!strcmp(base, "chains.csv") || !strcmp(base, "chains.fits"))) {
            dir = base == p ? strdup(".") : strndup(p, (size_t)(base - p - 1));
            if (!dir)
                return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
            if (!exists(dir, "summary.json"))
                free(dir), dir = NULL;
        }
        const char *folder = dir ? dir : p;
        lt_run_model *m;
        if (is_dir(folder) && (exists(folder, "chains.csv") || exists(folder, "chains.fits")) &&
            exists(folder, "summary.json")) {
            if (!(m = slot(p, out, max, n, err)))
                rc = err->code;
            else if ((rc = lt_run_model_load(folder, m, err)))
                (*n)--;
            else if (model && strcmp(m->name, model)) {
                rc = lt_error_set(err, LT_EINPUT, p, 0, "holds model %s, not %s", m->name, model);
                lt_run_model_free(m), (*n)--;
            } else
                rc = prefix_label(m, nsrc > 1 ? p : NULL, err);
        } else if (is_dir(folder)) {
            rc = add_run(folder, model, nsrc > 1, out, max, n, err);
        } else if (!(m = slot(p, out, max, n, err)))
            rc = err->code;
        else if ((rc = lt_run_model_load_table(p, m, err)))
            (*n)--;
        free(dir);
    }
    if (rc) {
        for (size_t i = 0; i < *n; i++)
            lt_run_model_free(&out[i]);
        *n = 0;
    }
    return rc;
}
