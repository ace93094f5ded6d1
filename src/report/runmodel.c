/* Reading a sampled model back from its folder: summary.json and chains.csv. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "lantern/report.h"

void lt_run_model_free(lt_run_model *m)
{
    for (size_t i = 0; m->names && i < m->nparams + m->nderived; i++)
        free(m->names[i]);
    free(m->names);
    free(m->name);
    free(m->label);
    free(m->data_file);
    free(m->data_digest);
    free(m->priors);
    free(m->best);
    free(m->stats);
    free(m->draws);
    memset(m, 0, sizeof *m);
}

static double jnum(const cJSON *o, const char *key)
{
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(o, key);
    return cJSON_IsNumber(v) ? v->valuedouble : NAN;
}

static void stats_from(const cJSON *o, lt_post_stats *s, double *best)
{
    *best = jnum(o, "best");
    s->mean = jnum(o, "mean"), s->sd = jnum(o, "sd"), s->median = jnum(o, "median");
    s->lo68 = jnum(o, "lo68"), s->hi68 = jnum(o, "hi68");
    s->lo95 = jnum(o, "lo95"), s->hi95 = jnum(o, "hi95");
    s->hpd68_lo = jnum(o, "hpd68_lo"), s->hpd68_hi = jnum(o, "hpd68_hi");
    s->hpd95_lo = jnum(o, "hpd95_lo"), s->hpd95_hi = jnum(o, "hpd95_hi");
}

int lt_run_model_load(const char *dir, lt_run_model *m, lt_error *err)
{
    memset(m, 0, sizeof *m);
    char path[4200];
    snprintf(path, sizeof path, "%s/summary.json", dir);
    char *text = NULL;
    size_t size;
    int rc = lt_file_read(path, (size_t)64 << 20, &text, &size, err);
    if (rc)
        return rc;
    cJSON *j = cJSON_Parse(text);
    free(text);
    const cJSON *params = j ? cJSON_GetObjectItemCaseSensitive(j, "params") : NULL;
    const cJSON *derived = j ? cJSON_GetObjectItemCaseSensitive(j, "derived") : NULL;
    const cJSON *model = j ? cJSON_GetObjectItemCaseSensitive(j, "model") : NULL;
    if (!cJSON_IsObject(params) || !cJSON_IsObject(derived) || !cJSON_IsString(model)) {
        cJSON_Delete(j);
        return lt_error_set(err, LT_EINPUT, path, 0,
                            "not the summary of a sampled model (no params, derived or model)");
    }
    m->name = strdup(model->valuestring);
    m->label = strdup(model->valuestring);
    m->model = lt_cosmo_model_find(model->valuestring);
    m->nparams = (size_t)cJSON_GetArraySize(params);
    m->nderived = (size_t)cJSON_GetArraySize(derived);
    size_t nc = m->nparams + m->nderived;
    m->names = calloc(nc, sizeof *m->names);
    m->priors = calloc(m->nparams + 1, sizeof *m->priors);
    m->best = calloc(nc, sizeof *m->best);
    m->stats = calloc(nc, sizeof *m->stats);
    if (!m->name || !m->label || !m->model || !m->names || !m->priors || !m->best || !m->stats) {
        cJSON_Delete(j);
        lt_run_model_free(m);
        return lt_error_set(err, LT_EINPUT, path, 0, "unknown model or out of memory");
    }
    size_t k = 0;
    const cJSON *it;
    cJSON_ArrayForEach(it, params)
    {
        m->names[k] = strdup(it->string);
        stats_from(it, &m->stats[k], &m->best[k]);
        const cJSON *pr = cJSON_GetObjectItemCaseSensitive(it, "prior");
        double a = NAN, b = NAN;
        char kind = 'U';
        if (cJSON_IsString(pr))
            sscanf(pr->valuestring, "%c(%lf, %lf)", &kind, &a, &b);
        m->priors[k] = (lt_prior){kind == 'N' ? LT_PRIOR_GAUSS : LT_PRIOR_UNIFORM, a, b};
        k++;
    }
    cJSON_ArrayForEach(it, derived)
    {
        m->names[k] = strdup(it->string);
        stats_from(it, &m->stats[k], &m->best[k]);
        k++;
    }
    m->chi2_min = jnum(j, "chi2_min");
    m->dof = (long)jnum(j, "dof");
    m->k_params = (size_t)jnum(j, "k_params");
    m->aic = jnum(j, "aic"), m->bic = jnum(j, "bic");
    m->n_data = (size_t)jnum(j, "n_data");
    const cJSON *data = cJSON_GetObjectItemCaseSensitive(j, "data");
    const cJSON *dfile = cJSON_GetObjectItemCaseSensitive(data, "file");
    const cJSON *ddig = cJSON_GetObjectItemCaseSensitive(data, "digest");
    if (cJSON_IsString(dfile) && !(m->data_file = strdup(dfile->valuestring))) {
        cJSON_Delete(j);
        lt_run_model_free(m);
        return lt_error_set(err, LT_ENOMEM, path, 0, "out of memory");
    }
    if (cJSON_IsString(ddig) && !(m->data_digest = strdup(ddig->valuestring))) {
        cJSON_Delete(j);
        lt_run_model_free(m);
        return lt_error_set(err, LT_ENOMEM, path, 0, "out of memory");
    }
    const cJSON *ev = cJSON_GetObjectItemCaseSensitive(j, "evidence");
    m->ln_z = jnum(ev, "ln_z"), m->ln_z_err = jnum(ev, "ln_z_err");
    m->converged = cJSON_IsTrue(cJSON_GetObjectItemCaseSensitive(j, "converged"));
    const cJSON *cv = cJSON_GetObjectItemCaseSensitive(j, "convergence");
    m->rhat_max = jnum(cv, "rhat_max"), m->ess_min = jnum(cv, "ess_min");
    m->nchains = (size_t)jnum(cv, "chains");
    const cJSON *off = cJSON_GetObjectItemCaseSensitive(j, "offset");
    m->offset_best = jnum(off, "best");
    const cJSON *mode = cJSON_GetObjectItemCaseSensitive(off, "mode");
    m->offset_marginal = cJSON_IsString(mode) && !strcmp(mode->valuestring, "marginal");
    lt_cosmo_params_default(&m->best_params);
    const cJSON *fixed = cJSON_GetObjectItemCaseSensitive(j, "fixed");
    cJSON_ArrayForEach(it, fixed)
    {
        int id = lt_cosmo_param_find(it->string);
        if (id >= 0 && cJSON_IsNumber(it))
            *lt_cosmo_params_slot(&m->best_params, id) = it->valuedouble;
    }
    for (size_t i = 0; i < m->nparams; i++) {
        int id = lt_cosmo_param_find(m->names[i]);
        if (id >= 0)
            *lt_cosmo_params_slot(&m->best_params, id) = m->best[i];
        else if (!strcmp(m->names[i], "offset"))
            m->offset_best = m->best[i];
    }
    cJSON_Delete(j);
    for (size_t i = 0; i < nc; i++)
        if (!m->names[i]) {
            lt_run_model_free(m);
            return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        }

    /* chains.csv: chain,step,logpost,chi2, then the columns above in order */
    snprintf(path, sizeof path, "%s/chains.csv", dir);
    if ((rc = lt_file_read(path, (size_t)4 << 30, &text, &size, err))) {
        lt_run_model_free(m);
        return rc;
    }
    size_t lines = 0;
    for (size_t i = 0; i < size; i++)
        lines += text[i] == '\n';
    m->draws = malloc((lines + 1) * nc * sizeof *m->draws);
    if (!m->draws) {
        free(text);
        lt_run_model_free(m);
        return lt_error_set(err, LT_ENOMEM, path, 0, "out of memory");
    }
    char *save = NULL, *line = strtok_r(text, "\n", &save);
    size_t rows = 0, per_chain = 0;
    long last_chain = 0;
    for (line = strtok_r(NULL, "\n", &save); line; line = strtok_r(NULL, "\n", &save)) {
        char *f = line, *end;
        long chain = strtol(f, &end, 10);
        if (*end != ',')
            break;
        f = end + 1;
        strtod(f, &end); /* step */
        f = end + 1;
        strtod(f, &end); /* logpost */
        f = end + 1;
        strtod(f, &end); /* chi2 */
        for (size_t c = 0; c < nc; c++) {
            f = end + 1;
            m->draws[rows * nc + c] = strtod(f, &end);
        }
        if (chain != last_chain)
            per_chain = 0, last_chain = chain;
        per_chain++;
        rows++;
    }
    free(text);
    if (rows == 0 || m->nchains == 0 || rows != m->nchains * per_chain) {
        lt_run_model_free(m);
        return lt_error_set(err, LT_EINPUT, path, 0,
                            "the chains do not match the summary (rows and chains differ)");
    }
    m->ndraws = per_chain;
    return LT_OK;
}

int lt_run_model_same_data(const lt_run_model *a, const lt_run_model *b)
{
    if (a->data_digest && b->data_digest)
        return !strcmp(a->data_digest, b->data_digest);
    /* a summary written before the digest: the size and the file decide */
    return a->n_data == b->n_data && (a->data_file == NULL) == (b->data_file == NULL) &&
           (!a->data_file || !strcmp(a->data_file, b->data_file));
}
