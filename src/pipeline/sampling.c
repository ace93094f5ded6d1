/*
 * What the sampling methods (mcmc.c, importance.c) share: the compression
 * check's outcome and the knots file of a refined run (so that a resumed
 * run samples with the knots its first part used), the evaluations file,
 * and the resample of weighted draws the check reads.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "lantern/file.h"
#include "lantern/inference.h"
#include "lantern/text.h"
#include "internal.h"

int pipeline_save_knots(const char *path, size_t K, double first, lt_error *err)
{
    char buf[32], text[64];
    lt_format_double(first, buf, sizeof buf);
    snprintf(text, sizeof text, "%zu %s\n", K, buf);
    return lt_file_write_text(path, text, err);
}

int pipeline_load_knots(const char *path, lt_like *l, lt_sample_compression *cmp, lt_error *err)
{
    char text[64] = "";
    FILE *f = fopen(path, "r");
    if (!f)
        return LT_OK;
    size_t K;
    char *sp = fgets(text, sizeof text, f) ? strchr(text, ' ') : NULL;
    fclose(f);
    if (!sp || sscanf(text, "%zu", &K) != 1 ||
        lt_parse_double(strtok(sp + 1, "\n"), &cmp->first_dchi2))
        return lt_error_set(err, LT_EINPUT, path, 1, "not 'KNOTS MAX_ABS_DCHI2'");
    return lt_like_compression_set(l, K, err);
}

size_t pipeline_resample(const double *rows, const double *w, size_t n, size_t stride, size_t m,
                         double u, double *out)
{
    double sw = 0.0;
    for (size_t j = 0; j < n; j++)
        sw += w[j] > 0.0 ? w[j] : 0.0;
    if (!(sw > 0.0) || m == 0)
        return 0;
    /* points (k + u) sw / m, k < m; a row spanning several is kept once */
    size_t taken = 0, k = 0;
    double cum = 0.0;
    for (size_t j = 0; j < n && k < m; j++) {
        cum += w[j] > 0.0 ? w[j] : 0.0;
        int hit = 0;
        while (k < m && ((double)k + u) * sw / (double)m < cum)
            k++, hit = 1;
        if (hit)
            memcpy(out + taken++ * stride, rows + j * stride, stride * sizeof *out);
    }
    return taken;
}

int pipeline_after_check(const lt_pipeline_hooks *h, lt_sample_compression *cmp,
                         const lt_compression_check *chk)
{
    if (!chk->refined) {
        cmp->knots = chk->knots, cmp->checked = chk->checked;
        cmp->posterior_dchi2 = chk->max_after, cmp->checked_ok = 1;
        return 0;
    }
    if (isnan(cmp->first_dchi2))
        cmp->first_dchi2 = chk->max_before;
    char how[64] = "the exact path", text[512];
    if (chk->knots)
        snprintf(how, sizeof how, "%zu knots", chk->knots);
    snprintf(text, sizeof text,
             "the compressed likelihood is off by %.2g in chi2 on the posterior draws (more "
             "than %g; its set-up saw %.2g): sampling again with %s",
             chk->max_before, LT_CHECK_BOUND, cmp->setup_dchi2, how);
    pipeline_say(h, LT_NOTE_NEWS, text);
    return 1;
}

int pipeline_save_counts(const char *path, size_t a, size_t b, lt_error *err)
{
    if (!path)
        return LT_OK;
    char text[64];
    snprintf(text, sizeof text, "%zu %zu\n", a, b);
    return lt_file_write_text(path, text, err);
}

int pipeline_load_counts(const char *path, size_t *a, size_t *b, lt_error *err)
{
    *a = *b = 0;
    FILE *f = path ? fopen(path, "r") : NULL;
    if (!f)
        return LT_OK;
    int ok = fscanf(f, "%zu %zu", a, b) == 2;
    fclose(f);
    return ok ? LT_OK : lt_error_set(err, LT_EINPUT, path, 1, "not 'EVALUATIONS CHECKED'");
}

int pipeline_works_alloc(pipeline_works *w, lt_like *l, size_t n, lt_error *err)
{
    *w = (pipeline_works){l, n, calloc(n, sizeof *w->ctx), calloc(n, sizeof *w->ctxp), 0};
    if (!w->ctx || !w->ctxp)
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    return pipeline_works_renew(w, err);
}

int pipeline_works_renew(pipeline_works *w, lt_error *err)
{
    for (size_t i = 0; i < w->n; i++) {
        w->gone += lt_like_work_evals(w->ctx[i].w);
        lt_like_work_free(w->ctx[i].w);
        w->ctx[i] = (lt_like_chain){w->l, lt_like_work_alloc(w->l)};
        w->ctxp[i] = &w->ctx[i];
        if (!w->ctx[i].w)
            return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    }
    return LT_OK;
}

size_t pipeline_works_evals(const pipeline_works *w)
{
    size_t n = 0;
    for (size_t i = 0; i < w->n; i++)
        n += lt_like_work_evals(w->ctx[i].w);
    return n;
}

void pipeline_works_free(pipeline_works *w)
{
    for (size_t i = 0; w->ctx && i < w->n; i++)
        lt_like_work_free(w->ctx[i].w);
    free(w->ctx);
    free(w->ctxp);
    w->ctx = NULL, w->ctxp = NULL;
}
