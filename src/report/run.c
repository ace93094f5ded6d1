/*
 * The report of saved runs (lantern run, lantern report): which model
 * folders it is made of, read from the folders and from run summaries;
 * the models loaded; the tables, figures and summary.json of the whole.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "lantern/file.h"
#include "lantern/json.h"
#include "lantern/report.h"

void lt_report_set_init(lt_report_set *rs)
{
    memset(rs, 0, sizeof *rs);
}

void lt_report_set_free(lt_report_set *rs)
{
    for (size_t i = 0; i < rs->n; i++) {
        free(rs->dirs[i]);
        free(rs->folders[i]);
        free(rs->labels[i]);
    }
    for (size_t i = 0; i < rs->loaded; i++)
        lt_run_model_free(&rs->models[i]);
    free(rs->name);
    lt_survey_free(rs->survey);
    memset(rs, 0, sizeof *rs);
}

int lt_report_set_add(lt_report_set *rs, const char *run, const char *folder, const char *label,
                      lt_error *err)
{
    if (rs->n == LT_REPORT_MAX_MODELS)
        return lt_error_set(err, LT_EINPUT, NULL, 0, "at most %d models in one report",
                            LT_REPORT_MAX_MODELS);
    rs->dirs[rs->n] = lt_path_join(run, folder, NULL);
    rs->folders[rs->n] = strdup(folder);
    rs->labels[rs->n] = label ? strdup(label) : NULL;
    if (!rs->dirs[rs->n] || !rs->folders[rs->n] || (label && !rs->labels[rs->n])) {
        rs->n++;
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    }
    rs->n++;
    return LT_OK;
}

/* The survey a model's summary names in its "data" block, for the Hubble
 * diagram. */
static int read_data(lt_report_set *rs, const cJSON *data, lt_error *err)
{
    const cJSON *f = cJSON_GetObjectItemCaseSensitive(data, "file");
    if (!cJSON_IsString(f) || !f->valuestring[0])
        return LT_OK; /* measurements alone: no diagram */
    lt_survey_spec spec;
    lt_survey_spec_init(&spec);
    const cJSON *c = cJSON_GetObjectItemCaseSensitive(data, "columns");
    const cJSON *cov = cJSON_GetObjectItemCaseSensitive(data, "cov");
    const cJSON *modes = cJSON_GetObjectItemCaseSensitive(data, "modes");
    spec.data = f->valuestring;
    spec.columns = cJSON_IsString(c) ? c->valuestring : NULL;
    const cJSON *e;
    cJSON_ArrayForEach(e, cov) if (cJSON_IsString(e) && spec.ncov < LT_SURVEY_MAX_COV)
        spec.cov[spec.ncov++] = e->valuestring;
    spec.modes = cJSON_IsString(modes) ? modes->valuestring : NULL;
    return (rs->survey = lt_survey_read(&spec, err)) ? LT_OK : err->code;
}

int lt_report_set_add_run(lt_report_set *rs, const char *run, int label, lt_error *err)
{
    char *path = lt_path_join(run, "summary.json", NULL), *text = NULL;
    size_t size;
    cJSON *j = NULL;
    int rc;
    if (!path)
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    if ((rc = lt_file_read(path, (size_t)64 << 20, &text, &size, err)))
        goto done;
    j = cJSON_Parse(text);
    const cJSON *models = j ? cJSON_GetObjectItemCaseSensitive(j, "models") : NULL;
    const cJSON *rname = j ? cJSON_GetObjectItemCaseSensitive(j, "name") : NULL;
    const char *name = cJSON_IsString(rname) ? rname->valuestring : run;
    if (!cJSON_IsArray(models)) {
        rc = lt_error_set(err, LT_EINPUT, path, 0,
                          "not the summary of a lantern run (no models list)");
        goto done;
    }
    if (!rs->name && !(rs->name = strdup(name))) {
        rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        goto done;
    }
    size_t before = rs->n;
    const cJSON *m;
    cJSON_ArrayForEach(m, models)
    {
        const cJSON *folder = cJSON_GetObjectItemCaseSensitive(m, "folder");
        const cJSON *mlabel = cJSON_GetObjectItemCaseSensitive(m, "label");
        if (!cJSON_IsString(folder))
            continue;
        /* the label the run gave it ("w0wa-flat (sn+bao)"), else its folder */
        const char *own = cJSON_IsString(mlabel) ? mlabel->valuestring : folder->valuestring;
        char *lab = NULL;
        if (label || cJSON_IsString(mlabel)) {
            size_t n = strlen(name) + strlen(own) + 3;
            if ((lab = malloc(n)))
                snprintf(lab, n, "%s%s%s", label ? name : "", label ? ": " : "", own);
        }
        rc = (label || cJSON_IsString(mlabel)) && !lab
                 ? lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory")
                 : lt_report_set_add(rs, run, folder->valuestring, lab, err);
        free(lab);
        /* the data of the first model of the first run, for the Hubble diagram */
        if (!rc && !rs->survey)
            rc = read_data(rs, cJSON_GetObjectItemCaseSensitive(m, "data"), err);
        if (rc)
            goto done;
    }
    if (rs->n == before) /* a campaign or forecast summary also has "models", as names */
        rc = lt_error_set(err, LT_EINPUT, path, 0,
                          "not the summary of a lantern run (no model folders)");
done:
    cJSON_Delete(j);
    free(text);
    free(path);
    return rc;
}

/* summary.json of the whole run: every model's summary (its folder's,
 * with "folder" added) and the comparison. */
static int write_summary(const char *dir, const char *name, const lt_report_set *rs,
                         lt_error *err)
{
    const lt_run_model *models = rs->models;
    cJSON *o = cJSON_CreateObject();
    cJSON_AddStringToObject(o, "command", "run");
    cJSON_AddStringToObject(o, "name", name);
    cJSON *list = cJSON_AddArrayToObject(o, "models");
    cJSON *cmp = cJSON_AddArrayToObject(o, "comparison");
    for (size_t i = 0; i < rs->n; i++) {
        char *path = lt_path_join(rs->dirs[i], "summary.json", NULL), *text = NULL;
        size_t size;
        int rc = path ? lt_file_read(path, (size_t)64 << 20, &text, &size, err)
                      : lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        free(path);
        if (rc) {
            cJSON_Delete(o);
            return rc;
        }
        cJSON *m = cJSON_Parse(text);
        free(text);
        if (m) {
            cJSON_AddStringToObject(m, "folder", rs->folders[i]);
            cJSON_AddStringToObject(m, "label", models[i].label);
            cJSON_AddItemToArray(list, m);
        }
        cJSON *c = cJSON_CreateObject();
        cJSON_AddStringToObject(c, "model", models[i].name);
        cJSON_AddItemToObject(c, "k_params", lt_json_number((double)models[i].k_params));
        cJSON_AddItemToObject(c, "chi2_min", lt_json_number(models[i].chi2_min));
        cJSON_AddItemToObject(c, "dof", lt_json_number((double)models[i].dof));
        cJSON_AddItemToObject(c, "aic", lt_json_number(models[i].aic));
        cJSON_AddItemToObject(c, "bic", lt_json_number(models[i].bic));
        /* differences within one data set, to its first model (the
         * reference); one alone on its data compares with nothing: null */
        int same = lt_run_model_same_data(&models[0], &models[i]);
        long ref = lt_run_model_reference(models, rs->n, i);
        const lt_run_model *r = &models[ref < 0 ? (long)i : ref];
        double other = ref >= 0 ? 0.0 : NAN;
        cJSON_AddStringToObject(c, "label", models[i].label);
        cJSON_AddItemToObject(c, "delta_aic", lt_json_number(models[i].aic - r->aic + other));
        cJSON_AddItemToObject(c, "delta_bic", lt_json_number(models[i].bic - r->bic + other));
        cJSON_AddBoolToObject(c, "same_data_as_first", same);
        if (ref >= 0)
            cJSON_AddStringToObject(c, "reference", r->label);
        else
            cJSON_AddNullToObject(c, "reference");
        cJSON_AddBoolToObject(c, "converged", models[i].converged);
        if (isfinite(models[i].ln_z)) {
            double lnb = models[i].ln_z - r->ln_z + other;
            cJSON_AddItemToObject(c, "ln_z", lt_json_number(models[i].ln_z));
            cJSON_AddItemToObject(c, "ln_z_err", lt_json_number(models[i].ln_z_err));
            cJSON_AddItemToObject(c, "ln_b", lt_json_number(lnb));
            cJSON_AddItemToObject(c, "two_ln_b", lt_json_number(2 * lnb));
            char rd[160];
            snprintf(rd, sizeof rd, ref == (long)i ? "reference" : "%s: %s",
                     2 * lnb >= 0 ? "for this model" : "for the reference",
                     lt_report_kass_raftery(2 * lnb));
            if (ref < 0)
                snprintf(rd, sizeof rd, "not compared: fitted to other data than the first model");
            cJSON_AddStringToObject(c, "reading", rd);
        }
        cJSON_AddItemToArray(cmp, c);
    }
    char *path = lt_path_join(dir, "summary.json", NULL);
    int rc = path ? lt_report_write_json(path, o, err)
                  : lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    free(path);
    cJSON_Delete(o);
    return rc;
}

int lt_report_set_write(lt_report_set *rs, const char *dir, const char *name,
                        const lt_survey *s, lt_error *err)
{
    int rc;
    for (; rs->loaded < rs->n; rs->loaded++) {
        lt_run_model *m = &rs->models[rs->loaded];
        if ((rc = lt_run_model_load(rs->dirs[rs->loaded], m, err)))
            return rc;
        if (rs->labels[rs->loaded]) {
            free(m->label);
            if (!(m->label = strdup(rs->labels[rs->loaded]))) {
                rs->loaded++;
                return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
            }
        }
    }
    if ((rc = lt_report_write_tables(dir, rs->models, rs->n, err)) ||
        (rc = lt_report_write_figures(dir, rs->models, rs->n, s ? s : rs->survey,
                                           rs->figure_width_in, err)) ||
        (rc = write_summary(dir, name, rs, err)))
        return rc;
    return LT_OK;
}
