/* Reading a sampled model back from its folder: summary.json and
 * chains.fits, or chains.csv where there is no FITS file (an older folder,
 * or one written by hand). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include <unistd.h>

#include <cjson/cJSON.h>
#include <fitsio.h>

#include "lantern/file.h"
#include "lantern/report.h"
#include "lantern/text.h"

void lt_run_model_free(lt_run_model *m)
{
    for (size_t i = 0; m->names && i < m->nparams + m->nderived; i++)
        free(m->names[i]);
    free(m->names);
    free(m->name);
    free(m->label);
    free(m->data_file);
    free(m->data_digest);
    free(m->probes);
    free(m->priors);
    free(m->best);
    free(m->stats);
    free(m->draws);
    free(m->weights);
    free(m->logpost);
    free(m->chi2);
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

/* The next field of a csv line from *p (cut at the comma), or NULL at its end. */
static char *next_field(char **p)
{
    if (!*p)
        return NULL;
    char *f = *p, *c = strchr(f, ',');
    if (c)
        *c = '\0', *p = c + 1;
    else
        *p = NULL;
    return f;
}

/* The columns a chain file has before the parameters (and "weight" after
 * the first two, when the draws are weighted). */
static const char *const chain_cols[] = {"chain", "step", "logpost", "chi2"};

/* Check the chain file's column names (n of them; the CSV's line 1, the
 * FITS table's TTYPEn, line 0) against the summary's: chain, step, an optional
 * weight, logpost, chi2, then m's columns in order. A column read by
 * position from another layout would be silently wrong. */
static int header_check(const char *path, long line, char *const *names, size_t n,
                        const lt_run_model *m, int *weighted, lt_error *err)
{
    size_t nc = m->nparams + m->nderived, k = 0;
    *weighted = 0;
    for (size_t i = 0; i < n; i++) {
        const char *f = names[i];
        if (k == 2 && !*weighted && !strcmp(f, "weight")) {
            *weighted = 1;
            continue;
        }
        if (k >= 4 + nc)
            return lt_error_set(err, LT_EINPUT, path, line,
                                "column '%s' is more than the summary's %zu parameters and "
                                "derived quantities",
                                f, nc);
        const char *want = k < 4 ? chain_cols[k] : m->names[k - 4];
        if (strcmp(f, want))
            return lt_error_set(err, LT_EINPUT, path, line,
                                "column %zu is '%s' where '%s' was expected (chain,step"
                                "[,weight],logpost,chi2, then the summary's columns in order)",
                                k + 1 + (size_t)*weighted, f, want);
        k++;
    }
    if (k < 4 + nc)
        return lt_error_set(err, LT_EINPUT, path, line,
                            "the header ends after %zu columns where '%s' was expected",
                            k + (size_t)*weighted, k < 4 ? chain_cols[k] : m->names[k - 4]);
    return LT_OK;
}

/* Room for the draws of rows rows (and their weights, logpost and chi2). */
static int alloc_draws(const char *path, lt_run_model *m, size_t rows, int weighted, lt_error *err)
{
    size_t nc = m->nparams + m->nderived;
    m->draws = malloc((rows + 1) * nc * sizeof *m->draws);
    m->logpost = malloc((rows + 1) * sizeof *m->logpost);
    m->chi2 = malloc((rows + 1) * sizeof *m->chi2);
    if (weighted)
        m->weights = malloc((rows + 1) * sizeof *m->weights);
    if (!m->draws || !m->logpost || !m->chi2 || (weighted && !m->weights))
        return lt_error_set(err, LT_ENOMEM, path, 0, "out of memory");
    m->weighted |= weighted;
    return LT_OK;
}

/* Count one more row of chain; the chains must come one after another,
 * each as long as the others (checked at the end, by ends_check). */
static void count_row(long chain, long *last_chain, size_t *per_chain)
{
    if (chain != *last_chain)
        *per_chain = 0, *last_chain = chain;
    (*per_chain)++;
}

/* The steps between a chain's rows, from the first two rows' chains and
 * steps (1 where the first chain has one row, or the steps say nothing). */
static size_t step_every(long chain0, long step0, long chain1, long step1)
{
    return chain0 == chain1 && step1 > step0 ? (size_t)(step1 - step0) : 1;
}

static int ends_check(const char *path, lt_run_model *m, size_t rows, size_t per_chain,
                      lt_error *err)
{
    if (rows == 0 || m->nchains == 0 || rows != m->nchains * per_chain)
        return lt_error_set(err, LT_EINPUT, path, 0,
                            "the chains do not match the summary (rows and chains differ)");
    m->ndraws = per_chain;
    return LT_OK;
}

/* chains.csv into m->draws (and m->weights where it has a weight column). */
static int chains_parse(const char *path, char *text, lt_run_model *m, lt_error *err)
{
    size_t nc = m->nparams + m->nderived, lines = 0;
    for (char *c = text; *c; c++)
        lines += *c == '\n';
    char *line = text, *eol = strchr(line, '\n');
    if (eol)
        *eol = '\0';
    line[strcspn(line, "\r")] = '\0';
    size_t nfields = 1;
    for (char *c = line; *c; c++)
        nfields += *c == ',';
    char **names = malloc(nfields * sizeof *names), *p = line, *f;
    if (!names)
        return lt_error_set(err, LT_ENOMEM, path, 0, "out of memory");
    for (size_t i = 0; i < nfields; i++)
        names[i] = next_field(&p);
    int weighted;
    int rc = header_check(path, 1, names, nfields, m, &weighted, err);
    free(names);
    if (rc || (rc = alloc_draws(path, m, lines, weighted, err)))
        return rc;
    size_t rows = 0, per_chain = 0;
    long last_chain = 0, lineno = 1, first[2][2] = {{0, 0}, {0, 0}};
    while (eol) {
        line = eol + 1, lineno++;
        if ((eol = strchr(line, '\n')))
            *eol = '\0';
        line[strcspn(line, "\r")] = '\0';
        if (!*line)
            continue; /* the end of the file, or a blank line */
        size_t fields = 1;
        for (char *c = line; *c; c++)
            fields += *c == ',';
        if (fields != nfields)
            return lt_error_set(err, LT_EINPUT, path, lineno,
                                "%zu fields where the header has %zu", fields, nfields);
        char *end, *cf;
        p = line, cf = next_field(&p);
        long chain = strtol(cf, &end, 10);
        if (end == cf || *end)
            return lt_error_set(err, LT_EINPUT, path, lineno, "the chain is not a whole number");
        /* step: thinned draws skip steps; the first two rows say how many */
        long step = strtol(next_field(&p), NULL, 10);
        if (rows < 2)
            first[rows][0] = chain, first[rows][1] = step;
        if (weighted) {
            f = next_field(&p);
            double w = strtod(f, &end);
            if (*end || end == f || !isfinite(w) || w < 0)
                return lt_error_set(err, LT_EINPUT, path, lineno,
                                    "weight '%s' is not a finite number >= 0", f);
            m->weights[rows] = w;
        }
        /* strtod: logpost is -inf where a weighted draw left the domain */
        m->logpost[rows] = strtod(next_field(&p), NULL);
        m->chi2[rows] = strtod(next_field(&p), NULL);
        /* strtod: a derived quantity may be nan (an age without a big bang) */
        for (size_t c = 0; c < nc; c++)
            m->draws[rows * nc + c] = strtod(next_field(&p), NULL);
        count_row(chain, &last_chain, &per_chain);
        rows++;
    }
    m->step_every = step_every(first[0][0], first[0][1], first[1][0], first[1][1]);
    return ends_check(path, m, rows, per_chain, err);
}

/* chains.fits (its CHAINS table) into m->draws, as chains_parse: binary,
 * so about ten times faster than the text for a long run. Rows are read in
 * blocks that stay within CFITSIO's buffers, a column at a time. */
static int fits_parse(const char *path, lt_run_model *m, lt_error *err)
{
    size_t nc = m->nparams + m->nderived;
    fitsfile *f = NULL;
    int status = 0, ncols = 0, rc = LT_OK;
    LONGLONG nrows = 0;
    char **names = NULL, (*text)[FLEN_VALUE] = NULL;
    double *col = NULL;
    long *chain = NULL;
    if (fits_open_file(&f, path, READONLY, &status) ||
        fits_movnam_hdu(f, BINARY_TBL, "CHAINS", 0, &status) ||
        fits_get_num_rowsll(f, &nrows, &status) || fits_get_num_cols(f, &ncols, &status))
        goto fitserr;
    size_t n = (size_t)ncols;
    names = malloc((n + 1) * sizeof *names);
    text = malloc((n + 1) * sizeof *text);
    if (!names || !text) {
        rc = lt_error_set(err, LT_ENOMEM, path, 0, "out of memory");
        goto done;
    }
    for (size_t i = 0; i < n; i++) {
        char key[FLEN_KEYWORD];
        snprintf(key, sizeof key, "TTYPE%zu", i + 1);
        if (fits_read_key(f, TSTRING, key, text[i], NULL, &status))
            goto fitserr;
        names[i] = text[i];
    }
    int weighted;
    if ((rc = header_check(path, 0, names, n, m, &weighted, err)))
        goto done;
    /* each column one number a row; all but chain and step 64-bit floats,
     * so that they read back bit for bit */
    for (int i = 1; i <= ncols; i++) {
        int type;
        long repeat, width;
        if (fits_get_coltype(f, i, &type, &repeat, &width, &status))
            goto fitserr;
        int integer = i <= 2;
        if (repeat != 1 || (integer ? type != TLONG && type != TINT && type != TSHORT &&
                                          type != TLONGLONG
                                    : type != TDOUBLE)) {
            rc = lt_error_set(err, LT_EINPUT, path, 0,
                              "column %d ('%s') is not one %s a row", i, names[i - 1],
                              integer ? "whole number" : "64-bit float");
            goto done;
        }
    }
    size_t rows = (size_t)nrows, block = 96 * 1024 / (8 * (size_t)ncols) + 1;
    if ((rc = alloc_draws(path, m, rows, weighted, err)))
        goto done;
    col = malloc(block * sizeof *col);
    chain = malloc(block * sizeof *chain);
    if (!col || !chain) {
        rc = lt_error_set(err, LT_ENOMEM, path, 0, "out of memory");
        goto done;
    }
    size_t per_chain = 0;
    long last_chain = 0;
    int first_draw = 5 + weighted; /* chain, step, [weight,] logpost, chi2: 1-based */
    for (size_t r0 = 0; r0 < rows; r0 += block) {
        size_t b = rows - r0 < block ? rows - r0 : block;
        LONGLONG first = (LONGLONG)r0 + 1;
        if (fits_read_col(f, TLONG, 1, first, 1, (LONGLONG)b, NULL, chain, NULL, &status))
            goto fitserr;
        if (r0 == 0) {
            /* the steps of the first two rows: how many a row stands for */
            long step[2] = {0, 0};
            if (fits_read_col(f, TLONG, 2, 1, 1, b < 2 ? 1 : 2, NULL, step, NULL, &status))
                goto fitserr;
            m->step_every = step_every(chain[0], step[0], b < 2 ? 0 : chain[1], step[1]);
        }
        if (weighted) {
            if (fits_read_col(f, TDOUBLE, 3, first, 1, (LONGLONG)b, NULL, m->weights + r0,
                              NULL, &status))
                goto fitserr;
            for (size_t j = 0; j < b; j++) {
                double w = m->weights[r0 + j];
                if (!isfinite(w) || w < 0) {
                    rc = lt_error_set(err, LT_EINPUT, path, 0,
                                      "row %zu: weight %g is not a finite number >= 0",
                                      r0 + j + 1, w);
                    goto done;
                }
            }
        }
        if (fits_read_col(f, TDOUBLE, first_draw - 2, first, 1, (LONGLONG)b, NULL,
                          m->logpost + r0, NULL, &status) ||
            fits_read_col(f, TDOUBLE, first_draw - 1, first, 1, (LONGLONG)b, NULL, m->chi2 + r0,
                          NULL, &status))
            goto fitserr;
        for (size_t c = 0; c < nc; c++) {
            if (fits_read_col(f, TDOUBLE, first_draw + (int)c, first, 1, (LONGLONG)b, NULL, col,
                              NULL, &status))
                goto fitserr;
            for (size_t j = 0; j < b; j++)
                m->draws[(r0 + j) * nc + c] = col[j];
        }
        for (size_t j = 0; j < b; j++)
            count_row(chain[j], &last_chain, &per_chain);
    }
    rc = ends_check(path, m, rows, per_chain, err);
    goto done;
fitserr: {
    char msg[FLEN_STATUS];
    fits_get_errstatus(status, msg);
    fits_clear_errmsg();
    rc = lt_error_set(err, LT_EINPUT, path, 0, "reading the chains table: %s", msg);
}
done:
    if (f) {
        int st2 = 0;
        fits_close_file(f, &st2);
    }
    free(names);
    free(text);
    free(col);
    free(chain);
    return rc;
}

const char *lt_run_model_rhat_text(const lt_run_model *m, char *buf, size_t size)
{
    if (isfinite(m->rhat_max))
        snprintf(buf, size, "%.3g", m->rhat_max);
    else
        snprintf(buf, size, "- (%s)", m->weighted ? "importance-weighted draws" : "not recorded");
    return buf;
}

/* lt_run_model_load from the folder's summary (path) and chain file: fits
 * when there is one, else the csv chains. */
static int load(const char *path, const char *fits, const char *chains, lt_run_model *m,
                lt_error *err)
{
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
    const cJSON *dprobes = cJSON_GetObjectItemCaseSensitive(data, "probes");
    if ((cJSON_IsString(ddig) && !(m->data_digest = strdup(ddig->valuestring))) ||
        (cJSON_IsString(dprobes) && !(m->probes = strdup(dprobes->valuestring)))) {
        cJSON_Delete(j);
        lt_run_model_free(m);
        return lt_error_set(err, LT_ENOMEM, path, 0, "out of memory");
    }
    const cJSON *ev = cJSON_GetObjectItemCaseSensitive(j, "evidence");
    m->ln_z = jnum(ev, "ln_z"), m->ln_z_err = jnum(ev, "ln_z_err");
    m->converged = cJSON_IsTrue(cJSON_GetObjectItemCaseSensitive(j, "converged"));
    m->weighted = cJSON_IsTrue(cJSON_GetObjectItemCaseSensitive(j, "weighted"));
    const cJSON *smp = cJSON_GetObjectItemCaseSensitive(j, "sampler");
    const cJSON *smeth = cJSON_GetObjectItemCaseSensitive(smp, "method");
    m->independent = cJSON_IsString(smeth) && strstr(smeth->valuestring, "importance sampling");
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

    int says_weighted = m->weighted;
    if (fits) {
        rc = fits_parse(fits, m, err);
        chains = fits;
    } else {
        if ((rc = lt_file_read(chains, (size_t)4 << 30, &text, &size, err))) {
            lt_run_model_free(m);
            return rc;
        }
        rc = chains_parse(chains, text, m, err);
        free(text);
    }
    if (!rc && says_weighted && !m->weights)
        rc = lt_error_set(err, LT_EINPUT, chains, 1,
                          "summary.json says the draws are weighted, but there is no weight "
                          "column");
    if (rc)
        lt_run_model_free(m);
    return rc;
}

int lt_run_model_load(const char *dir, lt_run_model *m, lt_error *err)
{
    memset(m, 0, sizeof *m);
    char *summary = lt_path_join(dir, "summary.json", err);
    char *chains = summary ? lt_path_join(dir, "chains.csv", err) : NULL;
    char *fits = chains ? lt_path_join(dir, "chains.fits", err) : NULL;
    int rc = fits ? load(summary, access(fits, F_OK) ? NULL : fits, chains, m, err) : LT_ENOMEM;
    free(summary);
    free(chains);
    free(fits);
    return rc;
}


int lt_run_model_same_data(const lt_run_model *a, const lt_run_model *b)
{
    if (a->data_digest && b->data_digest)
        return !strcmp(a->data_digest, b->data_digest);
    /* a summary written before the digest: the size and the file decide */
    return a->n_data == b->n_data && (a->data_file == NULL) == (b->data_file == NULL) &&
           (!a->data_file || !strcmp(a->data_file, b->data_file));
}

long lt_run_model_reference(const lt_run_model *models, size_t n, size_t i)
{
    size_t ref = i, others = 0;
    for (size_t k = 0; k < n; k++)
        if (k != i && lt_run_model_same_data(&models[k], &models[i])) {
            others++;
            if (k < ref)
                ref = k;
        }
    /* alone on its data, it compares with nothing (the first model is
     * the reference of its own all the same) */
    return others || i == 0 ? (long)ref : -1;
}

/* ---- draws from a plain table (lantern plot) ---- */

/* Columns that are not parameters: lantern's own bookkeeping, and the
 * weight, which weighs the rows. */
static int bookkeeping(const char *name)
{
    for (size_t i = 0; i < sizeof chain_cols / sizeof chain_cols[0]; i++)
        if (!strcmp(name, chain_cols[i]))
            return 1;
    return 0;
}

/* The file's name without folder and extension, for a legend. */
static char *stem_of(const char *path)
{
    const char *b = strrchr(path, '/');
    b = b ? b + 1 : path;
    size_t n = strcspn(b, ".[");
    char *s = malloc(n + 1);
    if (s)
        memcpy(s, b, n), s[n] = '\0';
    return s;
}

/* m's columns named by names[keep[k]] (n of them): names, no priors, no
 * best fit (NaN), the stem as name and label. */
static int table_model(const char *path, char *const *names, const size_t *keep, size_t n,
                       lt_run_model *m, lt_error *err)
{
    m->nparams = n;
    m->names = calloc(n ? n : 1, sizeof *m->names);
    m->best = malloc((n ? n : 1) * sizeof *m->best);
    m->stats = calloc(n ? n : 1, sizeof *m->stats);
    m->name = stem_of(path);
    m->label = m->name ? strdup(m->name) : NULL;
    if (!m->names || !m->best || !m->stats || !m->label)
        return lt_error_set(err, LT_ENOMEM, path, 0, "out of memory");
    for (size_t k = 0; k < n; k++) {
        if (!(m->names[k] = strdup(names[keep[k]])))
            return lt_error_set(err, LT_ENOMEM, path, 0, "out of memory");
        m->best[k] = NAN;
    }
    m->nchains = 1;
    m->step_every = 1;
    m->chi2_min = m->aic = m->bic = m->offset_best = m->rhat_max = m->ess_min = NAN;
    m->ln_z = m->ln_z_err = NAN;
    m->converged = 1;
    return LT_OK;
}

/* Which columns are parameters and which is the weight; a parameter named
 * twice or a table without one is an input error. A column without a name
 * (the index pandas writes first) is left out. */
static int table_columns(const char *path, long line, char *const *names, size_t n, size_t *keep,
                         size_t *nkeep, long *wcol, lt_error *err)
{
    *nkeep = 0, *wcol = -1;
    for (size_t i = 0; i < n; i++) {
        if (!names[i][0])
            continue; /* the unnamed index column pandas writes: row numbers */
        for (size_t j = 0; j < i; j++)
            if (!strcmp(names[i], names[j]))
                return lt_error_set(err, LT_EINPUT, path, line, "column '%s' is named twice",
                                    names[i]);
        if (!strcmp(names[i], "weight"))
            *wcol = (long)i;
        else if (!bookkeeping(names[i]))
            keep[(*nkeep)++] = i;
    }
    if (!*nkeep)
        return lt_error_set(err, LT_EINPUT, path, line,
                            "the header names no parameter (only chain, step, weight, logpost "
                            "or chi2)");
    return LT_OK;
}

static int weight_check(const char *path, long line, double w, lt_error *err)
{
    return isfinite(w) && w >= 0
               ? LT_OK
               : lt_error_set(err, LT_EINPUT, path, line, "weight %g is not a finite number >= 0", w);
}

#define TABLE_MAX_COLS 256

static int table_text(const char *path, lt_run_model *m, lt_error *err)
{
    char *text = NULL, *fields[TABLE_MAX_COLS + 1], *names[TABLE_MAX_COLS];
    size_t size, keep[TABLE_MAX_COLS], nkeep = 0, rows = 0, cap = 0;
    long wcol = -1, ncol = 0, hline = 0;
    int rc = lt_file_read(path, (size_t)1 << 31, &text, &size, err);
    if (rc)
        return rc;
    int csv = 0;
    lt_lines it;
    lt_lines_start(&it, text);
    char *line;
    size_t len;
    while (!rc && (line = lt_lines_next(&it, &len))) {
        if (lt_line_blank(line))
            continue;
        if (!hline) { /* the header: names, after a '#' if there is one */
            char *h = line + strspn(line, " \t");
            if (*h == '#')
                h++;
            csv = strchr(h, ',') != NULL;
            ncol = lt_line_split(h, csv, fields, TABLE_MAX_COLS);
            long numbers = 0;
            for (long i = 0; i < ncol; i++) {
                double v;
                numbers += !lt_parse_double(fields[i], &v) || !strcasecmp(fields[i], "nan");
            }
            if (ncol > 0 && numbers == ncol) { /* numpy's savetxt writes no header */
                rc = lt_error_set(err, LT_EINPUT, path, it.line,
                                  "the first line holds numbers, not column names: a table of "
                                  "draws needs a line of names first (parameter names, and "
                                  "weight for weights)");
                break;
            }
            if (ncol < 0) {
                rc = ncol == LT_SPLIT_TOO_MANY
                         ? lt_error_set(err, LT_EINPUT, path, it.line, "more than %d columns",
                                        TABLE_MAX_COLS)
                         : lt_error_set(err, LT_EINPUT, path, it.line, "%s", lt_split_error(ncol));
                break;
            }
            for (long i = 0; i < ncol; i++)
                names[i] = fields[i];
            hline = it.line;
            if ((rc = table_columns(path, hline, names, (size_t)ncol, keep, &nkeep, &wcol, err)) ||
                (rc = table_model(path, names, keep, nkeep, m, err)))
                break;
            continue;
        }
        if (line[strspn(line, " \t")] == '#')
            continue; /* a comment */
        long nf = lt_line_split(line, csv, fields, TABLE_MAX_COLS);
        if (nf < 0 && nf != LT_SPLIT_TOO_MANY) {
            rc = lt_error_set(err, LT_EINPUT, path, it.line, "%s", lt_split_error(nf));
            break;
        }
        if (nf != ncol) {
            rc = lt_error_set(err, LT_EINPUT, path, it.line, "%ld fields where the header has %ld",
                              nf < 0 ? (long)TABLE_MAX_COLS + 1 : nf, ncol);
            break;
        }
        if (rows == cap) {
            cap = cap ? 2 * cap : 1024;
            double *d = realloc(m->draws, cap * nkeep * sizeof *d);
            double *w = d && wcol >= 0 ? realloc(m->weights, cap * sizeof *w) : m->weights;
            if (d)
                m->draws = d;
            if (w)
                m->weights = w;
            if (!d || (wcol >= 0 && !w)) {
                rc = lt_error_set(err, LT_ENOMEM, path, 0, "out of memory");
                break;
            }
        }
        for (size_t k = 0; k < nkeep && !rc; k++) {
            const char *v = fields[keep[k]];
            double *d = &m->draws[rows * nkeep + k];
            if (!strcasecmp(v, "nan")) /* a derived quantity may be undefined */
                *d = NAN;
            else if (lt_parse_double(v, d))
                rc = lt_error_set(err, LT_EINPUT, path, it.line, "%s: '%s' is not a number",
                                  m->names[k], v);
        }
        if (!rc && wcol >= 0)
            rc = lt_parse_double(fields[wcol], &m->weights[rows])
                     ? lt_error_set(err, LT_EINPUT, path, it.line, "weight '%s' is not a number",
                                    fields[wcol])
                     : weight_check(path, it.line, m->weights[rows], err);
        rows++;
    }
    if (!rc && !hline)
        rc = lt_error_set(err, LT_EINPUT, path, 0, "the file is empty: no header of names");
    if (!rc && rows < 2)
        rc = lt_error_set(err, LT_EINPUT, path, 0, "%zu rows of draws: a density needs two or more",
                          rows);
    m->weighted = wcol >= 0;
    m->ndraws = rows;
    free(text);
    return rc;
}

static int table_fits(const char *path, lt_run_model *m, lt_error *err)
{
    fitsfile *f = NULL;
    int status = 0, ncol = 0;
    long nrows = 0;
    char msg[FLEN_STATUS];
    if (fits_open_table(&f, path, READONLY, &status) || fits_get_num_cols(f, &ncol, &status) ||
        fits_get_num_rows(f, &nrows, &status)) {
        fits_get_errstatus(status, msg);
        if (f)
            fits_close_file(f, &status);
        return lt_error_set(err, LT_EINPUT, path, 0, "cannot read a FITS table: %s", msg);
    }
    char *names[TABLE_MAX_COLS], buf[TABLE_MAX_COLS][FLEN_VALUE];
    size_t keep[TABLE_MAX_COLS], nkeep = 0, numeric[TABLE_MAX_COLS], nnum = 0;
    long wcol = -1;
    int rc = LT_OK;
    if (ncol > TABLE_MAX_COLS)
        rc = lt_error_set(err, LT_EINPUT, path, 0, "more than %d columns", TABLE_MAX_COLS);
    /* the numeric columns by their names (TTYPEn); text columns are left out */
    for (int c = 1; !rc && c <= ncol; c++) {
        char key[FLEN_KEYWORD];
        int type;
        long repeat, width;
        snprintf(key, sizeof key, "TTYPE%d", c);
        if (fits_read_key(f, TSTRING, key, buf[nnum], NULL, &status) ||
            fits_get_coltype(f, c, &type, &repeat, &width, &status)) {
            fits_get_errstatus(status, msg);
            rc = lt_error_set(err, LT_EINPUT, path, 0, "column %d: %s", c, msg);
            break;
        }
        if (type == TSTRING || type == TLOGICAL || type == TBIT || repeat != 1)
            continue;
        names[nnum] = buf[nnum];
        numeric[nnum++] = (size_t)c;
    }
    if (!rc)
        rc = table_columns(path, 0, names, nnum, keep, &nkeep, &wcol, err);
    if (!rc)
        rc = table_model(path, names, keep, nkeep, m, err);
    if (!rc && nrows < 2)
        rc = lt_error_set(err, LT_EINPUT, path, 0, "%ld rows of draws: a density needs two or more",
                          nrows);
    double *col = rc ? NULL : malloc((size_t)nrows * sizeof *col);
    if (!rc) {
        m->draws = malloc((size_t)nrows * nkeep * sizeof *m->draws);
        m->weights = wcol >= 0 ? malloc((size_t)nrows * sizeof *m->weights) : NULL;
        if (!col || !m->draws || (wcol >= 0 && !m->weights))
            rc = lt_error_set(err, LT_ENOMEM, path, 0, "out of memory");
    }
    for (size_t k = 0; !rc && k <= nkeep; k++) {
        if (k == nkeep && wcol < 0)
            break;
        int c = (int)numeric[k < nkeep ? keep[k] : (size_t)wcol];
        double nul = NAN;
        int any = 0;
        if (fits_read_col(f, TDOUBLE, c, 1, 1, nrows, &nul, col, &any, &status)) {
            fits_get_errstatus(status, msg);
            rc = lt_error_set(err, LT_EINPUT, path, 0, "column %s: %s", names[k < nkeep ? keep[k] : (size_t)wcol], msg);
            break;
        }
        for (long r = 0; r < nrows && !rc; r++) {
            if (k < nkeep)
                m->draws[(size_t)r * nkeep + k] = col[r];
            else if (!(isfinite(col[r]) && col[r] >= 0))
                rc = lt_error_set(err, LT_EINPUT, path, 0,
                                  "row %ld: weight %g is not a finite number >= 0", r + 1, col[r]);
            else
                m->weights[r] = col[r];
        }
    }
    free(col);
    status = 0;
    fits_close_file(f, &status);
    m->weighted = wcol >= 0;
    m->ndraws = (size_t)nrows;
    return rc;
}

int lt_run_model_load_table(const char *path, lt_run_model *m, lt_error *err)
{
    memset(m, 0, sizeof *m);
    size_t n = strcspn(path, "[");
    int fits = (n >= 5 && !strncasecmp(path + n - 5, ".fits", 5)) ||
               (n >= 4 && !strncasecmp(path + n - 4, ".fit", 4)) ||
               (n >= 8 && !strncasecmp(path + n - 8, ".fits.gz", 8));
    int rc = fits ? table_fits(path, m, err) : table_text(path, m, err);
    if (rc) {
        lt_run_model_free(m);
        memset(m, 0, sizeof *m);
    }
    return rc;
}
