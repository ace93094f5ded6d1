/*
 * Constraint tables: the rounding rule, how each parameter is quoted, and
 * the Markdown, LaTeX and CSV writers.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "lantern/text.h"
#include "lantern/file.h"
#include "lantern/report.h"

void lt_pdg_round(double value, double minus, double plus, char *v, char *m, char *p,
                  size_t size)
{
    double e = NAN;
    if (minus > 0 && plus > 0)
        e = fmin(minus, plus);
    else if (minus > 0)
        e = minus;
    else if (plus > 0)
        e = plus;
    if (!isfinite(e) || !isfinite(value)) {
        snprintf(v, size, "%.4g", value);
        snprintf(m, size, "%.2g", minus);
        snprintf(p, size, "%.2g", plus);
        return;
    }
    int ex = (int)floor(log10(e));
    double lead = e / pow(10.0, ex - 2); /* 100 <= lead < 1000 */
    if (lead >= 999.9999999) /* log10 rounding at an exact power of ten */
        ex++, lead /= 10.0;
    /* the digits as printed: 0.95 is 949.999... in binary, and means 950 */
    int three = (int)floor(lead + 1e-6);
    /* The power of ten of the last digit kept: two significant digits for
     * 100-354 (10^(ex-1)), one for 355-949 (10^ex); 950-999 round up to
     * 1000 = 10^(ex+1) kept as two digits, whose last is again 10^ex. */
    int place = three <= 354 ? ex - 1 : ex;
    double unit = pow(10.0, place);
    int decimals = place < 0 ? -place : 0;
    /* round half away from zero on the decimal digits as written (a
     * nudge of 1e-9 units undoes binary representation, as above) */
#define RND(x) (round((x) / unit + copysign(1e-9, (x))) * unit)
    snprintf(v, size, "%.*f", decimals, RND(value));
    snprintf(m, size, "%.*f", decimals, RND(minus));
    snprintf(p, size, "%.*f", decimals, RND(plus));
#undef RND
    /* "-0.0" reads badly */
    if (!strncmp(v, "-0", 2) && strspn(v + 1, "0.") == strlen(v + 1))
        memmove(v, v + 1, strlen(v));
}

/* Column col of m's draws, gathered (NaN kept: the callers skip it); its
 * weights, where it has them, are m->weights as they stand (one per row). */
static double *draw_column(const lt_run_model *m, size_t col, size_t *n)
{
    size_t nc = m->nparams + m->nderived;
    *n = m->nchains * m->ndraws;
    double *x = malloc((*n ? *n : 1) * sizeof *x);
    for (size_t i = 0; x && i < *n; i++)
        x[i] = m->draws[i * nc + col];
    return x;
}

lt_quote lt_quote_of(const lt_run_model *m, size_t col)
{
    const lt_post_stats *s = &m->stats[col];
    lt_quote q = {LT_QUOTE_TWO_SIDED, s->median, s->median - s->lo68, s->hi68 - s->median, 0,
                  NAN, NAN};
    if (col >= m->nparams || m->priors[col].kind != LT_PRIOR_UNIFORM)
        return q;
    double a = m->priors[col].a, b = m->priors[col].b, w = b - a;
    size_t n;
    double *x = draw_column(m, col, &n);
    if (!x || lt_post_edge_density(x, m->weights, n, a, b, &q.edge_lo, &q.edge_hi)) {
        free(x);
        return q;
    }
    /* the posterior reaches an edge where its density there is above a
     * tenth of its peak: the prior then cuts it */
    q.edges = (q.edge_lo > LT_EDGE_DENSITY_WARN ? LT_EDGE_LOWER : 0) |
              (q.edge_hi > LT_EDGE_DENSITY_WARN ? LT_EDGE_UPPER : 0);
    /* A posterior piled against one edge, its 2.5% (97.5%) quantile within
     * 2% of the prior's width of it: a one-sided 95% limit says more than an
     * interval cut by the prior. A posterior that fills its prior (both
     * edges) has no limit to give: its interval is quoted and marked. */
    if (q.edges == LT_EDGE_LOWER && s->lo95 - a < 0.02 * w)
        q = (lt_quote){LT_QUOTE_UPPER, lt_post_quantile(x, m->weights, n, 0.95), NAN, NAN, q.edges, q.edge_lo,
                       q.edge_hi};
    else if (q.edges == LT_EDGE_UPPER && b - s->hi95 < 0.02 * w)
        q = (lt_quote){LT_QUOTE_LOWER, lt_post_quantile(x, m->weights, n, 0.05), NAN, NAN, q.edges, q.edge_lo,
                       q.edge_hi};
    free(x);
    return q;
}

/* A two-sided quote whose posterior reaches a prior edge gets the dagger. */
static int edge_marked(const lt_quote *q)
{
    return q->kind == LT_QUOTE_TWO_SIDED && q->edges;
}

/* The quoted value as text, in Markdown (tex = 0) or LaTeX (tex = 1). */
static void quote_text(const lt_quote *q, int tex, char *buf, size_t size)
{
    char v[64], mi[64], pl[64];
    if (q->kind != LT_QUOTE_TWO_SIDED) {
        /* limits: two significant digits (common practice, no source), in
         * fixed notation: %.2g would write a limit of 148 as 1.5e+02 */
        double a = fabs(q->value);
        int dec = a > 0 && isfinite(a) ? 1 - (int)floor(log10(a)) : 0;
        snprintf(v, sizeof v, "%.*f", dec < 0 ? 0 : dec, dec < 0 ? round(q->value / pow(10, -dec)) * pow(10, -dec) : q->value);
        const char *op = q->kind == LT_QUOTE_UPPER ? (tex ? "<" : "<") : (tex ? ">" : ">");
        /* in LaTeX a mark and a footnote say "95% limit": the cell stays narrow */
        snprintf(buf, size, tex ? "$%s %s^{\\S}$" : "%s %s (95%%)", op, v);
        return;
    }
    lt_pdg_round(q->value, q->minus, q->plus, v, mi, pl, sizeof v);
    const char *mark = !edge_marked(q) ? "" : tex ? "{}^\\dagger" : " †";
    if (!strcmp(mi, pl))
        snprintf(buf, size, tex ? "$%s \\pm %s%s$" : "%s ± %s%s", v, mi, mark);
    else
        snprintf(buf, size, tex ? "$%s^{+%s}_{-%s}%s$" : "%s +%s/-%s%s", v, pl, mi, mark);
}

/* The columns of all models, in first-seen order. */
static size_t union_names(const lt_run_model *models, size_t n, const char **out, size_t max)
{
    size_t k = 0;
    for (int pass = 0; pass < 2; pass++) /* parameters first, then derived */
        for (size_t i = 0; i < n; i++) {
            size_t lo = pass ? models[i].nparams : 0;
            size_t hi = pass ? models[i].nparams + models[i].nderived : models[i].nparams;
            for (size_t c = lo; c < hi; c++) {
                size_t j = 0;
                while (j < k && strcmp(out[j], models[i].names[c]))
                    j++;
                if (j == k && k < max)
                    out[k++] = models[i].names[c];
            }
        }
    return k;
}

static long col_of(const lt_run_model *m, const char *name)
{
    for (size_t c = 0; c < m->nparams + m->nderived; c++)
        if (!strcmp(m->names[c], name))
            return (long)c;
    return -1;
}

/* The probes of a column for its TeX header: "sn+bao+cmb" as
 * "SN+BAO+CMB" ("-" for a summary that does not say). Returns buf. */
static const char *tex_probes(const char *probes, char *buf, size_t size)
{
    static const struct {
        const char *name, *tex;
    } t[] = {{"sn", "SN"}, {"bao", "BAO"}, {"cmb", "CMB"}, {"measurements", "meas."}};
    buf[0] = 0;
    if (!probes)
        return "--";
    char copy[128], *save = NULL;
    snprintf(copy, sizeof copy, "%s", probes);
    for (char *p = strtok_r(copy, "+", &save); p; p = strtok_r(NULL, "+", &save)) {
        const char *tex = p;
        for (size_t i = 0; i < sizeof t / sizeof t[0]; i++)
            if (!strcmp(t[i].name, p))
                tex = t[i].tex;
        snprintf(buf + strlen(buf), size - strlen(buf), "%s%s", buf[0] ? "+" : "", tex);
    }
    return buf;
}

/* A column in a LaTeX footnote: its model, and its probes where the
 * columns' probes differ. Returns a constant or buf. */
static const char *tex_column(const lt_run_model *m, int with_probes, char *buf, size_t size)
{
    char probes[128], model[128];
    lt_report_model_label(m->name, LT_LABEL_TEX, model, sizeof model);
    if (!with_probes)
        snprintf(buf, size, "%s", model);
    else
        snprintf(buf, size, "%s (%s)", model, tex_probes(m->probes, probes, sizeof probes));
    return buf;
}

/* Open the temporary file of dir/name, whose path goes in *final (the
 * previous one freed). */
static int open_tmp(const char *dir, const char *name, char **final, FILE **f, lt_error *err)
{
    free(*final);
    if (!(*final = lt_path_join(dir, name, err)))
        return LT_ENOMEM;
    return lt_file_open_tmp(*final, f, err);
}

/* What the tables need of each model, worked out once: the quotes (each a
 * kernel density estimate at the prior's edges) and the model each is
 * compared with. */
typedef struct {
    lt_quote **q; /* q[i][c] */
    long *ref;    /* ref[i]: lt_run_model_reference, -1 for a blank */
    int any_edge, any_unconverged;
    int any_alone;  /* a model alone on its data (blank cells) */
    int many_refs;  /* more than one data set with its own reference */
    int many_probes; /* the models used different probes (the TeX header names them) */
} table_facts;

static void facts_free(table_facts *t, size_t n)
{
    for (size_t i = 0; t->q && i < n; i++)
        free(t->q[i]);
    free(t->q);
    free(t->ref);
}

static int facts_of(const lt_run_model *models, size_t n, table_facts *t, lt_error *err)
{
    memset(t, 0, sizeof *t);
    t->q = calloc(n, sizeof *t->q);
    t->ref = calloc(n, sizeof *t->ref);
    if (!t->q || !t->ref)
        goto nomem;
    for (size_t i = 0; i < n; i++) {
        size_t nc = models[i].nparams + models[i].nderived;
        if (!(t->q[i] = malloc((nc ? nc : 1) * sizeof *t->q[i])))
            goto nomem;
        for (size_t c = 0; c < nc; c++) {
            t->q[i][c] = lt_quote_of(&models[i], c);
            t->any_edge |= edge_marked(&t->q[i][c]);
        }
        t->ref[i] = lt_run_model_reference(models, n, i);
        t->any_alone |= t->ref[i] < 0;
        t->many_refs |= t->ref[i] > 0;
        t->any_unconverged |= !models[i].converged;
        t->many_probes |= models[i].probes && models[0].probes &&
                          strcmp(models[i].probes, models[0].probes);
    }
    return LT_OK;
nomem:
    facts_free(t, n);
    return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory writing the tables");
}

static const char *base_name(const char *path)
{
    const char *b = path ? strrchr(path, '/') : NULL;
    return b ? b + 1 : path ? path : "file not recorded";
}

/* ---- LaTeX ---- */

/* Model columns in one tabular: four fit the text width of a two-column
 * page (about 7 in) with room for the parameter column; more are split
 * into several tabulars, one under another (a convention of ours). */
#define TEX_COLS 4
/* Footnote lines are broken at about this many characters a model column
 * (plus the parameter column's), so that no note is wider than the table. */
#define TEX_NOTE_CHARS(k) (22 + 16 * (k))

/* One footnote as rows of the tabular (so that \input brings it along),
 * broken at spaces into lines of at most width characters. */
static void tex_note(FILE *f, size_t cols, size_t width, const char *text)
{
    const char *p = text;
    while (*p) {
        size_t len = strlen(p), cut = len;
        if (len > width) {
            /* the last space at or before width outside math ($...$): a
             * line may not end inside a formula */
            size_t last = 0;
            int math = 0;
            for (size_t i = 0; i < len && (i <= width || !last); i++) {
                if (p[i] == '$' && (i == 0 || p[i - 1] != '\\'))
                    math = !math;
                else if (p[i] == ' ' && !math)
                    last = i;
            }
            cut = last ? last : len; /* no space outside math: as it is */
        }
        fprintf(f, "\\multicolumn{%zu}{l}{\\footnotesize %.*s} \\\\\n", cols, (int)cut, p);
        p += cut;
        while (*p == ' ')
            p++;
    }
}

/* A difference for the comparison rows, in math mode (a real minus). */
#define TEX_DIFF(field)                                                                      \
    for (size_t i = first; i < last; i++)                                                    \
        if (t->ref[i] >= 0 && isfinite(models[i].field - models[t->ref[i]].field))           \
            fprintf(f, " & $%+.2f$", models[i].field - models[t->ref[i]].field);             \
        else                                                                                 \
            fputs(" &", f);

/* Models [first, last) as one tabular. */
static void tex_tabular(FILE *f, const lt_run_model *models, size_t first, size_t last,
                        const char **names, size_t nn, const table_facts *t, int notes)
{
    size_t k = last - first;
    char cell[200];
    int have_z = 0, any_limit = 0;
    for (size_t i = first; i < last; i++)
        have_z |= isfinite(models[i].ln_z);
    /* rows a little apart, so that asymmetric errors' super- and
     * subscripts do not touch the next row's */
    fputs("{\\renewcommand{\\arraystretch}{1.3}\\setlength{\\tabcolsep}{4pt}%\n", f);
    fputs("\\begin{tabular}{l", f);
    for (size_t i = 0; i < k; i++)
        fputc('c', f);
    fputs("}\n\\toprule\nParameter", f);
    for (size_t i = first; i < last; i++)
        fprintf(f, " & %s%s", lt_report_model_label(models[i].name, LT_LABEL_TEX, cell, sizeof cell),
                models[i].converged ? "" : "$^\\ddagger$");
    if (t->many_probes) { /* a second header row: the probes of each column */
        fputs(" \\\\\n", f);
        for (size_t i = first; i < last; i++)
            fprintf(f, " & %s", tex_probes(models[i].probes, cell, sizeof cell));
    }
    fputs(" \\\\\n\\midrule\n", f);
    for (size_t p = 0; p < nn; p++) {
        int any = 0;
        for (size_t i = first; i < last; i++)
            any |= col_of(&models[i], names[p]) >= 0;
        if (!any)
            continue; /* a parameter of the other tabular's models only */
        fprintf(f, "%s", lt_report_param_label(names[p], LT_LABEL_TEX, cell, sizeof cell));
        for (size_t i = first; i < last; i++) {
            long c = col_of(&models[i], names[p]);
            if (c < 0) {
                fputs(" & ---", f);
                continue;
            }
            quote_text(&t->q[i][c], 1, cell, sizeof cell);
            any_limit |= t->q[i][c].kind != LT_QUOTE_TWO_SIDED;
            fprintf(f, " & %s", cell);
        }
        fputs(" \\\\\n", f);
    }
    fputs("\\midrule\n$\\chi^2_\\mathrm{min}$/dof", f);
    for (size_t i = first; i < last; i++)
        fprintf(f, " & $%.2f/%ld$", models[i].chi2_min, models[i].dof);
    fputs(" \\\\\n$\\Delta$AIC", f);
    TEX_DIFF(aic)
    fputs(" \\\\\n$\\Delta$BIC", f);
    TEX_DIFF(bic)
    if (have_z) {
        fputs(" \\\\\n$\\ln Z$", f);
        for (size_t i = first; i < last; i++)
            if (isfinite(models[i].ln_z))
                fprintf(f, " & $%.2f \\pm %.2f$", models[i].ln_z, models[i].ln_z_err);
            else
                fputs(" &", f);
        fputs(" \\\\\n$\\ln B$", f);
        TEX_DIFF(ln_z)
    }
    fputs(" \\\\\n\\bottomrule\n", f);
    size_t w = TEX_NOTE_CHARS(k), cols = k + 1;
    char text[600];
    if (notes) {
        if (any_limit)
            tex_note(f, cols, w, "$^\\S$ 95\\% limit: the posterior piles against an edge of "
                                 "its prior");
        if (t->any_edge)
            tex_note(f, cols, w, "$^\\dagger$ the posterior reaches a prior edge (density there "
                                 "$>10\\%$ of its peak): the prior sets part of the interval");
        for (size_t i = first; i < last; i++)
            if (!models[i].converged) {
                snprintf(text, sizeof text,
                         "$^\\ddagger$ %s: not converged (step cap reached; smallest ESS %.0f); "
                         "its numbers are provisional",
                         tex_column(&models[i], t->many_probes, cell, sizeof cell),
                         models[i].ess_min);
                tex_note(f, cols, w, text);
            }
        size_t nw = 0, at = 0;
        for (size_t i = first; i < last; i++)
            nw += models[i].weighted;
        if (nw) { /* one note for all the importance-weighted columns */
            at = (size_t)snprintf(text, sizeof text, "importance-weighted draws, effective "
                                                     "sample size:");
            for (size_t i = first, j = 0; i < last && at < sizeof text; i++)
                if (models[i].weighted)
                    at += (size_t)snprintf(text + at, sizeof text - at, "%s %s %.0f",
                                           j++ ? "," : "",
                                           tex_column(&models[i], t->many_probes, cell,
                                                      sizeof cell),
                                           models[i].ess_min);
            tex_note(f, cols, w, text);
        }
        if (t->many_refs)
            tex_note(f, cols, w, "$\\Delta$: to the first column of the same data");
        if (t->any_alone)
            tex_note(f, cols, w, "blank $\\Delta$: fitted to other data than the first column");
    }
    fputs("\\end{tabular}}%\n", f);
}

/* Every model, in tabulars of at most TEX_COLS model columns, one under
 * another; the comparison rows keep their references across the split. */
static void tex_tabulars(FILE *f, const lt_run_model *models, size_t n, const char **names,
                         size_t nn, const table_facts *t)
{
    for (size_t first = 0; first < n; first += TEX_COLS) {
        size_t last = first + TEX_COLS < n ? first + TEX_COLS : n;
        if (first)
            fputs("\\par\\medskip\n", f);
        tex_tabular(f, models, first, last, names, nn, t, 1);
    }
}

/* constraints_table.tex: the tabulars in a float with a caption and a label,
 * a table for one or two model columns (a column of the page), a table*
 * across both columns for more. */
static void tex_float(FILE *f, const lt_run_model *models, size_t n, const char **names,
                      size_t nn, const table_facts *t)
{
    const char *env = n <= 2 ? "table" : "table*";
    size_t objects = models[0].n_data; /* said only when every column has as many */
    for (size_t i = 1; i < n; i++)
        if (models[i].n_data != objects)
            objects = 0;
    fprintf(f, "%% lantern constraint table as a float; needs \\usepackage{booktabs}\n"
               "\\begin{%s}\n\\centering\n",
            env);
    fprintf(f, "\\caption{Posterior medians and 68\\%% equal-tailed intervals of each model's "
               "parameters (rounded by the Particle Data Group's rule), or 95\\%% limits where "
               "a posterior piles against a prior edge");
    if (objects)
        fprintf(f, "; %zu objects", objects);
    fputs(". $\\chi^2_\\mathrm{min}$ is at the best fit; $\\Delta$AIC, $\\Delta$BIC and "
          "$\\ln B$ are taken to the first model of the same data.}\n"
          "\\label{tab:lantern-constraints}\n",
          f);
    tex_tabulars(f, models, n, names, nn, t);
    fprintf(f, "\n\\end{%s}\n", env);
}

int lt_report_write_tables(const char *dir, const lt_run_model *models, size_t n,
                           lt_error *err)
{
    const char *names[64];
    size_t nn = union_names(models, n, names, 64);
    char *final = NULL, cell[160];
    FILE *f;
    table_facts t;
    int rc = facts_of(models, n, &t, err);
    if (rc)
        return rc;

    /* Markdown */
    if ((rc = open_tmp(dir, "constraints.md", &final, &f, err)))
        goto done;
    fputs("| parameter |", f);
    for (size_t i = 0; i < n; i++)
        fprintf(f, " %s%s |", models[i].label, models[i].converged ? "" : " ‡");
    fputs("\n| --- |", f);
    for (size_t i = 0; i < n; i++)
        fputs(" --- |", f);
    fputc('\n', f);
    for (size_t p = 0; p < nn; p++) {
        fprintf(f, "| %s |", names[p]);
        for (size_t i = 0; i < n; i++) {
            long c = col_of(&models[i], names[p]);
            if (c < 0) {
                fputs(" - |", f);
                continue;
            }
            quote_text(&t.q[i][c], 0, cell, sizeof cell);
            fprintf(f, " %s |", cell);
        }
        fputc('\n', f);
    }
    fputs("| chi2_min / dof |", f);
    for (size_t i = 0; i < n; i++)
        fprintf(f, " %.2f / %ld |", models[i].chi2_min, models[i].dof);
    /* differences only within one data set, to its first model; a model
     * alone on its data compares with nothing: its cells stay blank */
#define ROW(fmt, blank, field)                                                               \
    for (size_t i = 0; i < n; i++)                                                           \
        if (t.ref[i] >= 0 && isfinite(models[i].field - models[t.ref[i]].field))             \
            fprintf(f, fmt, models[i].field - models[t.ref[i]].field);                       \
        else                                                                                 \
            fputs(blank, f);
    const char *against = t.many_refs ? "reference" : "first";
    fprintf(f, "\n| AIC - AIC(%s) |", against);
    ROW(" %+.2f |", " |", aic)
    fprintf(f, "\n| BIC - BIC(%s) |", against);
    ROW(" %+.2f |", " |", bic)
    int have_z = 0;
    for (size_t i = 0; i < n; i++)
        have_z |= isfinite(models[i].ln_z);
    if (have_z) {
        fputs("\n| ln Z (nested sampling) |", f);
        for (size_t i = 0; i < n; i++)
            if (isfinite(models[i].ln_z))
                fprintf(f, " %.2f ± %.2f |", models[i].ln_z, models[i].ln_z_err);
            else
                fputs(" |", f); /* a model sampled without its evidence */
        fprintf(f, "\n| ln B vs %s |", against);
        ROW(" %+.2f |", " |", ln_z)
    }
    fputs("\n\nValues are posterior medians with 68% equal-tailed intervals, rounded by the "
          "Particle Data Group's rule; a parameter whose posterior presses on a prior edge is "
          "given as a 95% limit.\n",
          f);
    if (t.any_edge)
        fputs("\n† The posterior reaches an edge of its uniform prior (its density there is "
              "above 10% of its peak, by a kernel estimate reflected at the edge): the prior "
              "sets part of this interval.\n",
              f);
    for (size_t i = 0; i < n; i++)
        if (!models[i].converged) {
            char rhat[64];
            fprintf(f, "\n‡ %s did not converge: its sampler stopped at the step cap with worst "
                       "R-hat %s and smallest ESS %.0f; its numbers are provisional (sample "
                       "longer: a larger max_steps).\n",
                    models[i].label, lt_run_model_rhat_text(&models[i], rhat, sizeof rhat),
                    models[i].ess_min);
        }
    /* said of every weighted model, converged or not: its quotes come from
     * weighted draws and its ESS is not the chains' */
    for (size_t i = 0; i < n; i++)
        if (models[i].weighted)
            fprintf(f, "\n%s: importance-weighted draws (effective sample size %.0f); its "
                       "values are weighted quantiles.\n",
                    models[i].label, models[i].ess_min);
    if (t.many_refs) {
        fputs("\nAIC, BIC and ln B differences compare models fitted to the same data: each "
              "is taken to the first model of its data (the reference),",
              f);
        for (size_t i = 0, k = 0; i < n; i++)
            if (t.ref[i] == (long)i)
                fprintf(f, "%s %s", k++ ? ";" : "", models[i].label);
        fputs(".\n", f);
    }
    if (t.any_alone) {
        fprintf(f, "\nAIC, BIC and ln B differences compare models fitted to the same data, "
                   "here that of %s (%zu objects, %s); they are left blank for",
                models[0].label, models[0].n_data, base_name(models[0].data_file));
        for (size_t i = 0, k = 0; i < n; i++)
            if (t.ref[i] < 0)
                fprintf(f, "%s %s (%zu objects, %s)", k++ ? "," : "", models[i].label,
                        models[i].n_data, base_name(models[i].data_file));
        fputs(", fitted to other data.\n", f);
    }
    if ((rc = lt_file_close_commit(f, final, err)))
        goto done;

    /* LaTeX (booktabs): the bare tabular(s) for \input, and the same in a
     * float with caption and label */
    if ((rc = open_tmp(dir, "constraints.tex", &final, &f, err)))
        goto done;
    fputs("% lantern constraint table; needs \\usepackage{booktabs}\n", f);
    tex_tabulars(f, models, n, names, nn, &t);
    if ((rc = lt_file_close_commit(f, final, err)) ||
        (rc = open_tmp(dir, "constraints_table.tex", &final, &f, err)))
        goto done;
    tex_float(f, models, n, names, nn, &t);
    if ((rc = lt_file_close_commit(f, final, err)))
        goto done;

    /* CSV: unrounded numbers; prior_edge and converged carry the marks */
    if ((rc = open_tmp(dir, "constraints.csv", &final, &f, err)))
        goto done;
    fputs("model,parameter,value,minus,plus,kind,prior_edge,converged\n", f);
    static const char *kinds[] = {"two-sided", "upper", "lower"};
    static const char *edges[] = {"none", "lower", "upper", "both"};
    for (size_t i = 0; i < n; i++)
        for (size_t c = 0; c < models[i].nparams + models[i].nderived; c++) {
            const lt_quote *q = &t.q[i][c];
            char v[32], mi[32], pl[32];
            lt_format_double(q->value, v, sizeof v);
            lt_format_double(q->minus, mi, sizeof mi);
            lt_format_double(q->plus, pl, sizeof pl);
            fprintf(f, "%s,%s,%s,%s,%s,%s,%s,%s\n", models[i].label, models[i].names[c], v,
                    q->kind ? "" : mi, q->kind ? "" : pl, kinds[q->kind], edges[q->edges & 3],
                    models[i].converged ? "true" : "false");
        }
    rc = lt_file_close_commit(f, final, err);
done:
    free(final);
    facts_free(&t, n);
    return rc;
}
