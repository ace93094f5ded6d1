/*
 * Sampled posteriors as the user sees them: the JSON summary, the table,
 * and the chain files (CSV and FITS).
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>
#include <fitsio.h>

#include "lantern/text.h"
#include "lantern/file.h"
#include "lantern/json.h"
#include "lantern/report.h"
#include "lantern/version.h"

static cJSON *num(double v) { return lt_json_number(v); }

static cJSON *stats_json(const lt_post_stats *s, double best)
{
    cJSON *o = cJSON_CreateObject();
    cJSON_AddItemToObject(o, "best", num(best));
    cJSON_AddItemToObject(o, "mean", num(s->mean));
    cJSON_AddItemToObject(o, "sd", num(s->sd));
    cJSON_AddItemToObject(o, "median", num(s->median));
    cJSON_AddItemToObject(o, "lo68", num(s->lo68));
    cJSON_AddItemToObject(o, "hi68", num(s->hi68));
    cJSON_AddItemToObject(o, "lo95", num(s->lo95));
    cJSON_AddItemToObject(o, "hi95", num(s->hi95));
    cJSON_AddItemToObject(o, "hpd68_lo", num(s->hpd68_lo));
    cJSON_AddItemToObject(o, "hpd68_hi", num(s->hpd68_hi));
    cJSON_AddItemToObject(o, "hpd95_lo", num(s->hpd95_lo));
    cJSON_AddItemToObject(o, "hpd95_hi", num(s->hpd95_hi));
    return o;
}

const char *lt_report_unconverged_text(const lt_posterior *r)
{
    if (r->reweighted)
        return "the reweighted draws keep fewer effective samples than asked, or the run "
               "reweighted had not converged";
    if (r->method != LT_POST_IMPORTANCE)
        return "the chains did not converge within --max-steps";
    return r->finished ? "importance sampling reached its ESS target, but the weights' Pareto "
                         "k is above 0.7: not converged"
                       : "importance sampling did not reach its ESS target within its draw cap";
}

cJSON *lt_report_sample_json(const lt_like *l, const lt_posterior *r,
                             const lt_survey_spec *data, unsigned long seed)
{
    size_t d = r->nparams;
    cJSON *o = cJSON_CreateObject();
    cJSON_AddStringToObject(o, "command", "sample");
    cJSON_AddStringToObject(o, "model", lt_like_model(l)->name);
    cJSON_AddItemToObject(o, "n_data", num((double)lt_like_ndata(l)));
    const lt_survey *table = lt_like_table(l); /* light-curve tables too */
    cJSON_AddStringToObject(o, "observable", table ? lt_obs_name(table->kind) : "none");
    cJSON_AddItemToObject(o, "chi2_min", num(r->at_best.chi2));
    cJSON_AddItemToObject(o, "dof", num((double)lt_like_dof(l)));
    size_t kp = lt_like_nparams_counted(l);
    cJSON_AddItemToObject(o, "k_params", num((double)kp));
    cJSON_AddItemToObject(o, "aic", num(r->at_best.chi2 + 2.0 * (double)kp));
    cJSON_AddItemToObject(o, "bic", num(r->at_best.chi2 + (double)kp * log((double)lt_like_ndata(l))));
    cJSON_AddBoolToObject(o, "converged", r->converged);
    lt_report_add_fixed(o, l, r->measured);
    lt_report_std_json(o, l, r->cov);
    cJSON *params = cJSON_AddObjectToObject(o, "params");
    for (size_t i = 0; i < d; i++) {
        cJSON *p = stats_json(&r->stats[r->first_param + i], r->best[i]);
        char buf[64];
        lt_prior_format(lt_like_prior(l, i), buf, sizeof buf);
        cJSON_AddStringToObject(p, "prior", buf);
        cJSON_AddItemToObject(params, r->cols[r->first_param + i], p);
    }
    cJSON *der = cJSON_AddObjectToObject(o, "derived");
    for (size_t k = 0; k < r->nderived; k++)
        cJSON_AddItemToObject(der, r->cols[r->first_derived + k],
                              stats_json(&r->stats[r->first_derived + k], r->best_derived[k]));
    if (!isnan(r->z_pivot))
        cJSON_AddItemToObject(o, "z_pivot", num(r->z_pivot));
    cJSON *off = cJSON_AddObjectToObject(o, "offset");
    cJSON_AddStringToObject(off, "mode", lt_offset_name(lt_like_offset_mode(l)));
    if (lt_like_offset_mode(l) != LT_OFFSET_NONE)
        cJSON_AddItemToObject(off, "best", num(r->at_best.offset));

    const lt_mcmc_diag *dg = &r->diag;
    cJSON_AddBoolToObject(o, "weighted", r->weights != NULL);
    cJSON *cv = cJSON_AddObjectToObject(o, "convergence");
    if (r->method == LT_POST_IMPORTANCE) {
        /* independent weighted draws (DESIGN.md): no R-hat; ess_min the
         * importance-sampling ESS of the means and 5%/95% quantiles */
        cJSON_AddItemToObject(cv, "rhat_max", cJSON_CreateNull());
        cJSON_AddItemToObject(cv, "ess_min", num(r->ess_min_weighted));
        cJSON_AddStringToObject(cv, "ess_definition", LT_REPORT_ESS_IS_DEFINITION);
        cJSON_AddItemToObject(cv, "kish_ess", num(r->kish_ess));
        cJSON_AddItemToObject(cv, "pareto_k", num(r->pareto_k));
        cJSON_AddItemToObject(cv, "chains", num(1.0));
        cJSON_AddItemToObject(cv, "draws", num((double)r->ndraws));
        cJSON_AddItemToObject(cv, "iterations", num((double)r->iterations));
        cJSON_AddItemToObject(cv, "evaluations", num((double)r->evals));
        cJSON_AddItemToObject(cv, "ess_per_evaluation",
                              num(r->evals ? r->ess_min_weighted / (double)r->evals : NAN));
        cJSON *pp = cJSON_AddObjectToObject(cv, "params");
        for (size_t i = 0; i < d; i++) {
            cJSON *p = cJSON_AddObjectToObject(pp, r->cols[r->first_param + i]);
            cJSON_AddItemToObject(p, "ess_weighted", num(r->ess_weighted[i]));
        }
    } else {
    /* weighted draws (DESIGN.md): R-hat null, ess_min the weighted one; the
     * chains' own numbers stay beside them */
    cJSON_AddItemToObject(cv, "rhat_max", r->weights ? cJSON_CreateNull() : num(dg->rhat_max));
    cJSON_AddItemToObject(cv, "ess_min", num(r->weights ? r->ess_min_weighted : dg->ess_min));
    if (r->weights) {
        cJSON_AddItemToObject(cv, "rhat_max_unweighted", num(dg->rhat_max));
        cJSON_AddItemToObject(cv, "ess_min_unweighted", num(dg->ess_min));
        cJSON_AddItemToObject(cv, "kish_ess", num(r->kish_ess));
    }
    cJSON_AddItemToObject(cv, "chains", num((double)r->nchains));
    cJSON_AddItemToObject(cv, "draws", num((double)(r->nchains * r->ndraws)));
    cJSON_AddItemToObject(cv, "evaluations", num((double)r->evals));
    cJSON_AddItemToObject(cv, "ess_per_evaluation",
                          num(r->evals ? (r->weights ? r->ess_min_weighted : dg->ess_min) /
                                             (double)r->evals
                                       : NAN));
    cJSON_AddItemToObject(cv, "draws_per_chain", num((double)r->ndraws));
    cJSON_AddItemToObject(cv, "thin", num((double)r->thin));
    cJSON_AddItemToObject(cv, "steps_per_chain", num((double)r->steps));
    cJSON_AddItemToObject(cv, "warmup_per_chain", num((double)r->warmup));
    cJSON *acc = cJSON_AddArrayToObject(cv, "acceptance");
    for (size_t c = 0; c < r->nchains; c++)
        cJSON_AddItemToArray(acc, num(dg->acceptance[c]));
    cJSON *acc1 = cJSON_AddArrayToObject(cv, "acceptance_first");
    for (size_t c = 0; c < r->nchains; c++)
        cJSON_AddItemToArray(acc1, num(dg->acceptance_first[c]));
    cJSON *pp = cJSON_AddObjectToObject(cv, "params");
    for (size_t i = 0; i < d; i++) {
        cJSON *p = cJSON_AddObjectToObject(pp, r->cols[r->first_param + i]);
        cJSON_AddItemToObject(p, "rhat", num(dg->rhat[i]));
        cJSON_AddItemToObject(p, "ess_bulk", num(dg->ess_bulk[i]));
        cJSON_AddItemToObject(p, "ess_tail", num(dg->ess_tail[i]));
        cJSON_AddItemToObject(p, "tau", num(dg->tau[i]));
        if (r->weights)
            cJSON_AddItemToObject(p, "ess_weighted", num(r->ess_weighted[i]));
    }
    }
    cJSON *cov = cJSON_AddObjectToObject(o, "covariance");
    cJSON *names = cJSON_AddArrayToObject(cov, "names");
    cJSON *mat = cJSON_AddArrayToObject(cov, "matrix"), *cor = cJSON_AddArrayToObject(cov, "correlation");
    for (size_t i = 0; i < d; i++) {
        cJSON_AddItemToArray(names, cJSON_CreateString(r->cols[r->first_param + i]));
        cJSON *row = cJSON_CreateArray(), *crow = cJSON_CreateArray();
        for (size_t j = 0; j < d; j++) {
            cJSON_AddItemToArray(row, num(r->cov[i * d + j]));
            cJSON_AddItemToArray(crow, num(r->cov[i * d + j] / sqrt(r->cov[i * d + i] * r->cov[j * d + j])));
        }
        cJSON_AddItemToArray(mat, row);
        cJSON_AddItemToArray(cor, crow);
    }
    cJSON *sm = cJSON_AddObjectToObject(o, "sampler");
    cJSON_AddStringToObject(sm, "method",
                            r->method == LT_POST_IMPORTANCE
                                ? "adaptive importance sampling (Student-t mixture, recycled draws)"
                                : "adaptive Metropolis (Haario et al. 2001)");
    cJSON_AddItemToObject(sm, "seed", num((double)seed));
    int reweighted = r->weights && r->method == LT_POST_MCMC; /* by the exact likelihood */
    if (r->compression.checked_ok) {
        cJSON *cp = cJSON_AddObjectToObject(o, "compression");
        const size_t K = r->compression.knots;
        cJSON_AddStringToObject(cp, "path", K ? "compressed" : "exact");
        cJSON_AddItemToObject(cp, "knots", num((double)K));
        cJSON_AddItemToObject(cp, "knots_setup", num((double)r->compression.knots_setup));
        cJSON_AddItemToObject(cp, "max_abs_dchi2_setup", num(r->compression.setup_dchi2));
        cJSON_AddItemToObject(cp, "checked_draws", num((double)r->compression.checked));
        cJSON_AddItemToObject(cp, "max_abs_dchi2_posterior", num(r->compression.posterior_dchi2));
        cJSON_AddItemToObject(cp, "bound", num(LT_CHECK_BOUND));
        cJSON_AddBoolToObject(cp, "resampled", K != r->compression.knots_setup);
        if (K != r->compression.knots_setup)
            cJSON_AddItemToObject(cp, "max_abs_dchi2_first_draws", num(r->compression.first_dchi2));
        cJSON_AddBoolToObject(cp, "importance_weights", reweighted);
        if (reweighted) {
            cJSON_AddItemToObject(cp, "weighted_draws", num((double)(r->nchains * r->ndraws)));
            cJSON_AddItemToObject(cp, "max_abs_dchi2_weighted_draws", num(r->max_abs_dchi2));
        }
    }
    lt_report_add_data(o, data, l);
    if (lt_sample_compression_missed(&r->compression)) {
        char text[512];
        lt_report_compression_warning(r, text, sizeof text);
        lt_report_json_warning(o, LT_WARN_COMPRESSION, text);
    }
    if (!r->converged)
        lt_report_json_warning(o, LT_WARN_NOT_CONVERGED, lt_report_unconverged_text(r));
    if (r->method == LT_POST_IMPORTANCE && r->pareto_k > LT_PARETO_K_WARN) {
        char text[256];
        lt_report_pareto_warning(r, text, sizeof text);
        lt_report_json_warning(o, LT_WARN_IMPORTANCE_WEIGHTS, text);
    }
    for (size_t i = 0; i < d; i++) {
        char note[256];
        if (lt_post_edge_note(r->cols[r->first_param + i], lt_like_prior(l, i), r->edge_lo[i],
                              r->edge_hi[i], note, sizeof note))
            lt_report_json_warning(o, LT_WARN_PRIOR_EDGE, note);
    }
    /* the evidence, where a nested run gave one (lantern run), last */
    if (isfinite(r->ln_z)) {
        cJSON *ev = cJSON_AddObjectToObject(o, "evidence");
        cJSON_AddItemToObject(ev, "ln_z", num(r->ln_z));
        cJSON_AddItemToObject(ev, "ln_z_err", num(r->ln_z_err));
        cJSON_AddItemToObject(ev, "information", num(r->information));
        cJSON_AddItemToObject(ev, "live_points", num((double)r->live_points));
    }
    return o;
}

void lt_report_sample_table(FILE *f, const lt_like *l, const lt_posterior *r,
                            const lt_survey_spec *data)
{
    fprintf(f, "posterior of %s (%s) given ", lt_like_model(l)->name, lt_like_model(l)->summary);
    lt_report_describe_data(f, l, data);
    fputs("\n\n", f);
    int w = 10; /* names like color_mean@GROUP widen the first column */
    for (size_t k = 0; k < r->nparams + r->nderived; k++)
        w = (int)fmax(w, (double)strlen(r->cols[r->first_param + k]));
    fprintf(f, "  %-*s %11s %10s %11s %23s %23s %7s %7s\n", w, "parameter", "mean", "sd", "best",
            "68% interval", "95% interval", "R-hat", "ESS");
    for (size_t k = 0; k < r->nparams + r->nderived; k++) {
        size_t col = r->first_param + k;
        const lt_post_stats *st = &r->stats[col];
        double best = k < r->nparams ? r->best[k] : r->best_derived[k - r->nparams];
        if (k == r->nparams)
            fprintf(f, "  derived\n");
        fprintf(f, "  %-*s %11.5g %10.4g %11.5g   [%9.5g, %9.5g]   [%9.5g, %9.5g]", w, r->cols[col],
                st->mean, st->sd, best, st->lo68, st->hi68, st->lo95, st->hi95);
        if (k < r->nparams && r->method == LT_POST_IMPORTANCE)
            fprintf(f, " %7s %7.0f", "-", r->ess_weighted[k]);
        else if (k < r->nparams)
            fprintf(f, " %7.4f %7.0f", r->diag.rhat[k],
                    r->weights ? r->ess_weighted[k] : fmin(r->diag.ess_bulk[k], r->diag.ess_tail[k]));
        fputc('\n', f);
    }
    if (!isnan(r->z_pivot))
        fprintf(f, "  z_pivot    %11.5g (from the posterior covariance of w0 and wa)\n", r->z_pivot);
    if (lt_like_nmeasurements(l))
        fputc('\n', f);
    lt_report_print_measurements(f, l, r->measured);
    fprintf(f, "\n  chi2_min %.4f for %ld degrees of freedom (the best draw, polished)\n",
            r->at_best.chi2, lt_like_dof(l));
    lt_calibrated cal;
    if (lt_report_calibrated(l, r->cov, &cal)) {
        double mean[LT_MAX_FREE], sd[LT_MAX_FREE];
        for (size_t i = 0; i < r->nparams; i++)
            mean[i] = r->stats[r->first_param + i].mean, sd[i] = r->stats[r->first_param + i].sd;
        lt_report_calibrated_line(f, &cal, mean, sd);
    }
    lt_report_std_line(f, l);
    if (r->reweighted)
        fprintf(f, "  %zu %s of the run reweighted by the added terms (%zu likelihood "
                   "evaluations); smallest weighted ESS %.0f, Kish's ESS %.0f%s\n",
                r->nchains * r->ndraws,
                r->method == LT_POST_IMPORTANCE ? "independent draws" : "chain draws", r->evals,
                r->ess_min_weighted, r->kish_ess, r->converged ? "" : "; NOT CONVERGED");
    else if (r->method == LT_POST_IMPORTANCE)
        fprintf(f, "  %zu weighted draws of adaptive importance sampling (%zu iterations, %zu "
                   "likelihood evaluations); smallest ESS %.0f, Pareto k %.2f%s\n",
                r->ndraws, r->iterations, r->evals, r->ess_min_weighted, r->pareto_k,
                r->converged ? "" : "; NOT CONVERGED");
    else if (r->weights)
        fprintf(f, "  %zu chains x %zu draws after %zu warm-up steps, worst R-hat %.4f; weighted by the "
                   "exact likelihood: %zu chains x %zu draws (one in %zu), smallest weighted ESS %.0f%s\n",
                r->nchains, r->steps, r->warmup, r->diag.rhat_max, r->nchains, r->ndraws, r->thin,
                r->ess_min_weighted, r->converged ? "" : "; NOT CONVERGED");
    else
        fprintf(f, "  %zu chains x %zu draws after %zu warm-up steps; worst R-hat %.4f, smallest ESS %.0f%s\n",
                r->nchains, r->ndraws, r->warmup, r->diag.rhat_max, r->diag.ess_min,
                r->converged ? "" : "; NOT CONVERGED");
}

void lt_report_pareto_warning(const lt_posterior *r, char *buf, size_t size)
{
    snprintf(buf, size,
             "the importance weights' Pareto k is %.2f (above %.1f): their tail is heavy enough "
             "that the estimates may be off by more than their errors say (Vehtari et al., "
             "arXiv:1507.02646); try --sampler mcmc",
             r->pareto_k, LT_PARETO_K_WARN);
}

void lt_report_compression_warning(const lt_posterior *r, char *buf, size_t size)
{
    if (!r->weights || r->method != LT_POST_MCMC) {
        snprintf(buf, size,
                 "the compressed likelihood differs from the exact one by %.2g in chi2 on the "
                 "posterior draws (more than %g; compression.max_abs_dchi2_posterior) and more "
                 "knots did not help: the results are those of the compressed likelihood",
                 r->compression.posterior_dchi2, LT_CHECK_BOUND);
        return;
    }
    char which[64] = "every draw";
    if (r->thin > 1)
        snprintf(which, sizeof which, "one in %zu of each chain", r->thin);
    snprintf(buf, size,
             "the compressed likelihood differs from the exact one by %.2g in chi2 on the "
             "posterior draws (more than %g) and more knots did not help: %zu draws (%s) "
             "were evaluated by the exact likelihood and are weighted by exp(-delta chi2 / 2); "
             "their effective sample size is %.0f (smallest over the parameters) and the "
             "chain files' column 'weight' holds the weights",
             r->compression.posterior_dchi2, LT_CHECK_BOUND, r->nchains * r->ndraws, which,
             r->ess_min_weighted);
}

/* Which rows of each chain the files keep, and how far they have come. */
typedef struct chain_rows {
    const lt_posterior *r;
    size_t thin;      /* every thin-th row of each chain */
    size_t per_chain; /* rows kept per chain: ceil(ndraws / thin) */
    size_t total;     /* kept in all */
    const lt_chains_opts *o;
} chain_rows;

static chain_rows rows_of(const lt_posterior *r, const lt_chains_opts *o)
{
    size_t thin = o && o->thin > 1 ? o->thin : 1;
    size_t per = (r->ndraws + thin - 1) / thin;
    return (chain_rows){r, thin, per, per * r->nchains, o};
}

/* Kept row j (0-based over all chains): its place in the posterior's rows. */
static size_t source_row(const chain_rows *k, size_t j)
{
    return (j / k->per_chain) * k->r->ndraws + (j % k->per_chain) * k->thin;
}

/* A tenth of the rows: how often the caller hears of them. */
static size_t tenth(const chain_rows *k) { return k->total / 10 ? k->total / 10 : 1; }

/* Tell the caller about rows done of file, at every tenth of them and at
 * the end (a few calls a second at most for files that take a while). */
static void progress(const chain_rows *k, const char *file, size_t done, size_t *next)
{
    if (!k->o || !k->o->progress || (done < *next && done < k->total))
        return;
    k->o->progress(file, done, k->total, k->o->ctx);
    *next = done + tenth(k);
}

/* n as decimal digits at o; returns the end. */
static char *put_size(char *o, size_t n)
{
    char t[24];
    int i = 0;
    do
        t[i++] = (char)('0' + n % 10), n /= 10;
    while (n);
    while (i)
        *o++ = t[--i];
    return o;
}

/* The text of chains.csv goes through one large buffer (lt_format_shortest:
 * no printf per number), which made 160 000 rows take 0.3 s, not 3.6. */
static int csv_write(const char *path, const chain_rows *k, lt_error *err)
{
    const lt_posterior *r = k->r;
    FILE *f;
    int rc = lt_file_open_tmp(path, &f, err);
    if (rc)
        return rc;
    fputs(r->weights ? "chain,step,weight" : "chain,step", f);
    for (size_t c = 0; c < r->ncols; c++)
        fprintf(f, ",%s", r->cols[c]);
    fputc('\n', f);
    /* a row at most: two whole numbers and ncols + 1 numbers of 32 bytes */
    size_t row_max = 48 + (r->ncols + 1) * 33, cap = ((size_t)1 << 20) + row_max, len = 0;
    char *buf = malloc(cap);
    if (!buf) {
        fclose(f);
        char *tmp = lt_tmp_name(path, NULL);
        if (tmp)
            remove(tmp);
        free(tmp);
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    }
    size_t next = tenth(k);
    for (size_t j = 0; j < k->total; j++) {
        size_t src = source_row(k, j), c = src / r->ndraws, i = src % r->ndraws;
        char *o = buf + len;
        o = put_size(o, c + 1);
        *o++ = ',';
        /* step: the draw's place in its chain before any thinning */
        o = put_size(o, i * r->thin + 1);
        if (r->weights)
            *o++ = ',', o += lt_format_shortest(r->weights[src], o);
        const double *row = r->rows + src * r->ncols;
        for (size_t col = 0; col < r->ncols; col++)
            *o++ = ',', o += lt_format_shortest(row[col], o);
        *o++ = '\n';
        len = (size_t)(o - buf);
        if (len > cap - row_max || j + 1 == k->total) {
            fwrite(buf, 1, len, f);
            len = 0;
        }
        progress(k, "chains.csv", j + 1, &next);
    }
    free(buf);
    return lt_file_close_commit(f, path, err);
}

/* Rows go into the FITS table in blocks, one fits_write_col per column per
 * block: a block (96 kB at most) stays within CFITSIO's buffers, where a
 * whole column at a time passes over the file once per column. */
enum { FITS_BLOCK_BYTES = 96 * 1024 };

static int fits_write(const char *path, const lt_like *l, const chain_rows *k,
                      const lt_survey_spec *data, unsigned long seed, lt_error *err)
{
    const lt_posterior *r = k->r;
    char *tmp = lt_tmp_name(path, err);
    if (!tmp)
        return LT_ENOMEM;
    remove(tmp);
    /* chain, step, [weight,] the columns */
    size_t lead = r->weights ? 3 : 2, nc = r->ncols + lead, total = k->total;
    size_t block = FITS_BLOCK_BYTES / (8 * nc);
    char **ttype = malloc(nc * sizeof *ttype), **tform = malloc(nc * sizeof *tform);
    double *col = malloc(block * sizeof *col);
    long *ichain = malloc(block * sizeof *ichain), *istep = malloc(block * sizeof *istep);
    int status = 0, rc = LT_OK;
    fitsfile *f = NULL;
    if (!ttype || !tform || !col || !ichain || !istep) {
        rc = lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        goto done;
    }
    ttype[0] = "chain", ttype[1] = "step", tform[0] = tform[1] = "1J";
    if (r->weights)
        ttype[2] = "weight", tform[2] = "1D";
    for (size_t c = 0; c < r->ncols; c++)
        ttype[c + lead] = r->cols[c], tform[c + lead] = "1D";
    if (fits_create_file(&f, tmp, &status))
        goto fitserr;
    fits_create_tbl(f, BINARY_TBL, (LONGLONG)total, (int)nc, ttype, tform, NULL, "CHAINS", &status);
    char version[32] = "lantern " LT_VERSION, model[64];
    snprintf(model, sizeof model, "%s", lt_like_model(l)->name);
    long lseed = (long)seed, lchains = (long)r->nchains, lthin = (long)k->thin;
    int conv = r->converged;
    double rhat = r->weights ? NAN : r->diag.rhat_max;
    double ess = r->weights ? r->ess_min_weighted : r->diag.ess_min;
    fits_update_key(f, TSTRING, "CREATOR", version, "program that wrote this file", &status);
    fits_update_key(f, TSTRING, "MODEL", model, "cosmological model", &status);
    fits_update_key_longstr(f, "DATAFILE", (char *)(data->data ? data->data : ""), "survey table", &status);
    fits_update_key(f, TLONG, "SEED", &lseed, "random seed", &status);
    fits_update_key(f, TLONG, "NCHAINS", &lchains, "chains", &status);
    fits_update_key(f, TLONG, "FILETHIN", &lthin, "every FILETHIN-th draw of each chain kept",
                    &status);
    fits_update_key(f, TLOGICAL, "CONVERGD", &conv, "R-hat and ESS criteria met", &status);
    if (isfinite(rhat))
        fits_update_key(f, TDOUBLE, "RHATMAX", &rhat, "worst R-hat", &status);
    if (isfinite(ess))
        fits_update_key(f, TDOUBLE, "ESSMIN", &ess,
                        r->weights ? "smallest weighted ESS (mean, 5% and 95%)"
                                   : "smallest ESS (bulk and tail)", &status);
    int weighted = r->weights != NULL;
    fits_update_key(f, TLOGICAL, "WEIGHTED", &weighted, "draws carry importance weights", &status);
    size_t next = tenth(k);
    for (size_t j0 = 0; j0 < total && !status; j0 += block) {
        size_t n = total - j0 < block ? total - j0 : block;
        LONGLONG first = (LONGLONG)j0 + 1;
        for (size_t j = 0; j < n; j++) {
            size_t src = source_row(k, j0 + j);
            ichain[j] = (long)(src / r->ndraws) + 1;
            istep[j] = (long)((src % r->ndraws) * r->thin) + 1;
        }
        fits_write_col(f, TLONG, 1, first, 1, (LONGLONG)n, ichain, &status);
        fits_write_col(f, TLONG, 2, first, 1, (LONGLONG)n, istep, &status);
        for (size_t c = 0; c + 2 < nc; c++) {
            for (size_t j = 0; j < n; j++) {
                size_t src = source_row(k, j0 + j);
                col[j] = r->weights && c == 0 ? r->weights[src]
                                              : r->rows[src * r->ncols + c - (lead - 2)];
            }
            fits_write_col(f, TDOUBLE, (int)c + 3, first, 1, (LONGLONG)n, col, &status);
        }
        progress(k, "chains.fits", j0 + n, &next);
    }
    if (status)
        goto fitserr;
    fits_close_file(f, &status);
    f = NULL;
    if (status)
        goto fitserr;
    rc = lt_file_commit(path, err);
    goto done;
fitserr: {
    char text[FLEN_STATUS];
    fits_get_errstatus(status, text);
    fits_clear_errmsg();
    rc = lt_error_set(err, LT_EIO, tmp, 0, "writing FITS: %s", text);
    int st2 = 0;
    if (f)
        fits_close_file(f, &st2);
    remove(tmp);
}
done:
    free(ttype);
    free(tform);
    free(col);
    free(ichain);
    free(istep);
    free(tmp);
    return rc;
}

int lt_report_write_chains(const char *dir, const lt_like *l, const lt_posterior *r,
                           const lt_survey_spec *data, unsigned long seed,
                           const lt_chains_opts *o, lt_error *err)
{
    chain_rows k = rows_of(r, o);
    char *csv = lt_path_join(dir, "chains.csv", err);
    char *fits = csv ? lt_path_join(dir, "chains.fits", err) : NULL;
    int rc = fits ? csv_write(csv, &k, err) : LT_ENOMEM;
    if (!rc)
        rc = fits_write(fits, l, &k, data, seed, err);
    free(csv);
    free(fits);
    return rc;
}
