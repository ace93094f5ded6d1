/* A campaign's table, bias.csv and figures, from its result as C data
 * (lt_campaign_result): the numbers are those summary.json holds, never
 * read back from it. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "lantern/campaign.h"
#include "lantern/file.h"
#include "lantern/report.h"
#include "lantern/text.h"

static void print_group(FILE *f, const lt_campaign_group *g)
{
    size_t dropped = g->dropped_failed + g->dropped_no_errors;
    fprintf(f, "\n%s / %s / %s: %d of %d realizations used, %d dropped", g->dataset, g->model,
            g->method, (int)g->used, (int)g->realizations, (int)dropped);
    if (dropped > 0)
        fprintf(f, " (%d without errors, %d failed; summary.json lists them)",
                (int)g->dropped_no_errors, (int)g->dropped_failed);
    fputc('\n', f);
    /* the headers name the probability each coverage is tested against */
    char h68[32] = "", h95[32] = "";
    if (g->nparams > 0) {
        snprintf(h68, sizeof h68, "cover %.4g%% (p)", 100 * g->params[0].s.nominal68);
        snprintf(h95, sizeof h95, "cover %.4g%% (p)", 100 * g->params[0].s.nominal95);
    }
    int w = 9; /* names like sigma_int@GROUP widen the first column */
    for (size_t j = 0; j < g->nparams; j++)
        w = (int)fmax(w, (double)strlen(g->params[j].name));
    fprintf(f, "  %-*s %9s %21s %15s %15s %17s %17s\n", w, "parameter", "truth", "bias",
            "pull mean", "pull width", h68, h95);
    for (size_t j = 0; j < g->nparams; j++) {
        const lt_bias_stats *s = &g->params[j].s;
        fprintf(f, "  %-*s %9.4g %10.3g +- %7.2g %6.3f +- %5.3f %6.3f +- %5.3f %6.3f (%6.2g) "
                   "%6.3f (%6.2g)\n",
                w, g->params[j].name, s->truth, s->bias_mean, s->bias_err, s->pull_mean,
                s->pull_mean_err, s->pull_width, s->pull_width_err, s->cover68, s->cover68_p,
                s->cover95, s->cover95_p);
    }
}

void lt_campaign_result_print(FILE *f, const lt_campaign_result *r)
{
    fprintf(f, "campaign %s: %d tasks, %d done, %d failed, %d not run, %d unconverged\n", r->name,
            (int)r->tasks, (int)r->done, (int)r->failed, (int)r->not_run, (int)r->unconverged);
    for (size_t g = 0; g < r->ngroups; g++)
        print_group(f, &r->groups[g]);
    /* Data sets without a truth (survey files) have no bias to show: their
     * estimates are listed instead, one line per task; then every failure. */
    int header = 0;
    for (size_t i = 0; i < r->nlines; i++) {
        const lt_campaign_line *l = &r->lines[i];
        if (!l->file || !l->ok)
            continue;
        if (!header++)
            fprintf(f, "\nsurvey files (estimate +- sd; posterior mean for sample and nested):\n");
        fprintf(f, "  %-36s chi2_min %9.2f / %-5d", l->label ? l->label : "", l->chi2_min,
                (int)l->dof);
        for (size_t k = 0; k < l->nparams; k++)
            fprintf(f, "  %s = %.4g +- %.2g", l->names[k], l->estimate[k], l->sd[k]);
        fputc('\n', f);
    }
    header = 0;
    for (size_t i = 0; i < r->nlines; i++) {
        const lt_campaign_line *l = &r->lines[i];
        if (!l->failed)
            continue;
        if (!header++)
            fprintf(f, "\nfailed tasks (tried twice):\n");
        fprintf(f, "  %s: %s\n", l->label ? l->label : "", l->error ? l->error : "(no message)");
    }
}

/* A csv field: the exact digits, or nothing where the value is undefined
 * (as summary.json's null). */
static int csv_number(char **s, size_t *len, size_t *cap, double v)
{
    char b[32] = "";
    if (isfinite(v))
        lt_format_double(v, b, sizeof b);
    if (*cap - *len < 64) {
        char *t = realloc(*s, *cap *= 2);
        if (!t)
            return LT_ENOMEM;
        *s = t;
    }
    *len += (size_t)snprintf(*s + *len, *cap - *len, ",%s", b);
    return LT_OK;
}

int lt_campaign_result_write_csv(const char *dir, const lt_campaign_result *r, lt_error *err)
{
    size_t cap = 1 << 16, len = 0;
    char *s = malloc(cap);
    int rc = s ? LT_OK : LT_ENOMEM;
    if (s)
        len += (size_t)snprintf(
            s, cap,
            "dataset,model,method,parameter,truth,n,bias_mean,bias_err,pull_mean,"
            "pull_mean_err,pull_width,pull_width_err,coverage68,coverage68_err,"
            "coverage68_p,coverage95,coverage95_err,coverage95_p,coverage68_nominal,"
            "coverage95_nominal,dropped\n");
    for (size_t k = 0; !rc && k < r->ngroups; k++) {
        const lt_campaign_group *g = &r->groups[k];
        for (size_t j = 0; !rc && j < g->nparams; j++) {
            const lt_bias_stats *b = &g->params[j].s;
            const double vals[] = {b->truth,        (double)b->n,     b->bias_mean,
                                   b->bias_err,     b->pull_mean,     b->pull_mean_err,
                                   b->pull_width,   b->pull_width_err, b->cover68,
                                   b->cover68_err,  b->cover68_p,     b->cover95,
                                   b->cover95_err,  b->cover95_p,     b->nominal68,
                                   b->nominal95,
                                   (double)(g->dropped_failed + g->dropped_no_errors)};
            size_t need = strlen(g->dataset) + strlen(g->model) + strlen(g->method) +
                          strlen(g->params[j].name) + 8;
            while (cap - len < need) {
                char *t = realloc(s, cap *= 2);
                if (!t) {
                    rc = LT_ENOMEM;
                    break;
                }
                s = t;
            }
            if (rc)
                break;
            len += (size_t)snprintf(s + len, cap - len, "%s,%s,%s,%s", g->dataset, g->model,
                                    g->method, g->params[j].name);
            for (size_t v = 0; !rc && v < sizeof vals / sizeof vals[0]; v++)
                rc = csv_number(&s, &len, &cap, vals[v]);
            if (!rc)
                len += (size_t)snprintf(s + len, cap - len, "\n");
        }
    }
    char *path = rc ? NULL : lt_path_join(dir, "bias.csv", err);
    if (rc)
        lt_error_set(err, LT_ENOMEM, dir, 0, "out of memory writing bias.csv");
    else if (!path)
        rc = err->code;
    else
        rc = lt_file_write_text(path, s, err);
    free(path);
    free(s);
    return rc;
}

int lt_campaign_result_write_figures(const char *dir, const lt_campaign_result *r,
                                     lt_error *err)
{
    for (size_t k = 0; k < r->ngroups; k++) {
        const lt_campaign_group *g = &r->groups[k];
        lt_bias_panel panels[LT_MAX_FREE];
        size_t np = g->nparams < LT_MAX_FREE ? g->nparams : LT_MAX_FREE;
        for (size_t j = 0; j < np; j++) {
            const lt_campaign_param_bias *p = &g->params[j];
            panels[j] = (lt_bias_panel){p->name,           p->npulls,       p->pulls,
                                        p->s.pull_mean,    p->s.pull_width, p->s.cover68,
                                        p->s.cover68_err,  p->s.cover95,    p->s.cover95_err,
                                        p->s.nominal68,    p->s.nominal95};
        }
        size_t dropped = g->dropped_failed + g->dropped_no_errors;
        size_t n = strlen(g->dataset) + strlen(g->model) + strlen(g->method);
        char *name = malloc(n + 16), *title = malloc(n + 96), model[96];
        lt_report_model_label(g->model, LT_LABEL_PLOT, model, sizeof model);
        n += strlen(model);
        int rc = name && title ? LT_OK : lt_error_set(err, LT_ENOMEM, dir, 0, "out of memory");
        if (!rc) {
            snprintf(name, n + 16, "bias_%s_%s_%s", g->dataset, g->model, g->method);
            if (dropped > 0)
                snprintf(title, n + 96, "%s, %s by %s: %d realizations (%d dropped)", g->dataset,
                         model, g->method, (int)g->used, (int)dropped);
            else
                snprintf(title, n + 96, "%s, %s by %s: %d realizations", g->dataset, model,
                         g->method, (int)g->used);
            rc = lt_report_write_bias_figure(dir, name, title, panels, np, err);
        }
        free(name);
        free(title);
        if (rc)
            return rc;
    }
    return LT_OK;
}
