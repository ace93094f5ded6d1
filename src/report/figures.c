/*
 * Figures with PLplot's cairo drivers (pngcairo, pdfcairo): the Hubble
 * diagram with residuals, the posterior matrix of each model, the
 * Omega_m - Omega_de or w0 - wa plane, and the chain traces.
 *
 * PLplot keeps global state; figures are drawn one after another from one
 * thread, each opened and closed here (DESIGN.md).
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <plplot.h>

#include "lantern/file.h"
#include "lantern/report.h"

/* Colour map 0: background, ink, then one colour per model (the same model
 * has the same colour in every figure), grey for data. */
enum { C_BG = 0, C_INK = 1, C_MODEL = 2, C_GREY = 8, C_LIGHT = 9, C_GRID = 10, C_FILL = 11 };
static const int palette[][3] = {
    {255, 255, 255}, {0, 0, 0},       {31, 119, 180}, {214, 39, 40}, {44, 160, 44},
    {255, 127, 14},  {148, 103, 189}, {140, 86, 75},  {110, 110, 110}, {200, 200, 200},
    {225, 225, 225}};
#define NMODELCOL 6

static int model_colour(size_t i) { return C_MODEL + (int)(i % NMODELCOL); }

static void open_figure(const char *dev, const char *path, int w, int h)
{
    plsdev(dev);
    plsfnam(path);
    plspage(0, 0, w, h, 0, 0);
    plscolbg(255, 255, 255);
    plscmap0n(16); /* room for C_FILL, the translucent fill set before each use */
    plinit();
    pladv(0);
    for (size_t i = 0; i < sizeof palette / sizeof palette[0]; i++)
        plscol0((PLINT)i, palette[i][0], palette[i][1], palette[i][2]);
    plcol0(C_INK);
}

/* The figure at dir/name.ext for each requested driver, via draw(). */
typedef void (*drawer)(const void *ctx);

static int figure(const char *dir, const char *name, int pdf_too, int w, int h, drawer draw,
                  const void *ctx, lt_error *err)
{
    const char *devs[] = {"pngcairo", "pdfcairo"}, *exts[] = {"png", "pdf"};
    int rc = LT_OK;
    for (int k = 0; k < (pdf_too ? 2 : 1) && !rc; k++) {
        char *final = lt_path_format(err, "%s/%s.%s", dir, name, exts[k]);
        char *tmp = final ? lt_path_format(err, "%s/.%s.%s.tmp", dir, name, exts[k]) : NULL;
        if (!tmp) {
            free(final);
            return LT_ENOMEM;
        }
        open_figure(devs[k], tmp, w, h);
        draw(ctx);
        plend();
        FILE *f = fopen(tmp, "rb");
        long size = 0;
        if (f) {
            fseek(f, 0, SEEK_END);
            size = ftell(f);
            fclose(f);
        }
        if (size <= 0) {
            remove(tmp);
            rc = lt_error_set(err, LT_EIO, final, 0, "PLplot wrote no figure");
        } else if (rename(tmp, final) != 0)
            rc = lt_error_set(err, LT_EIO, final, 0, "cannot move the figure in place");
        free(final);
        free(tmp);
    }
    return rc;
}

/* ---- helpers on draws ---- */
static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* A plotting range for column c: the 0.5% to 99.5% span of the draws (of
 * their weight, for weighted draws unless as_sampled), widened by 15%,
 * clipped to the prior where there is one. */
static void range_of(const lt_run_model *m, size_t c, int as_sampled, double *lo, double *hi)
{
    size_t n = m->nchains * m->ndraws, nc = m->nparams + m->nderived, k = 0;
    int weighted = m->weights && !as_sampled;
    double *x = malloc((n ? n : 1) * sizeof *x);
    double *w = weighted ? malloc((n ? n : 1) * sizeof *w) : NULL;
    for (size_t i = 0; x && i < n; i++)
        if (isfinite(m->draws[i * nc + c])) {
            if (w)
                w[k] = m->weights[i];
            x[k++] = m->draws[i * nc + c];
        }
    if (!x || k < 2 || (weighted && !w)) {
        *lo = 0, *hi = 1;
        free(x);
        free(w);
        return;
    }
    double a, b;
    if (w) { /* weighted quantiles; zero weights drop out */
        a = lt_post_quantile(x, w, k, 0.005), b = lt_post_quantile(x, w, k, 0.995);
    } else { /* the order statistics below those points, as before weights */
        qsort(x, k, sizeof *x, cmp_double);
        a = x[(size_t)(0.005 * (double)(k - 1))], b = x[(size_t)(0.995 * (double)(k - 1))];
    }
    free(x);
    free(w);
    if (!isfinite(a) || !isfinite(b)) { /* no draw with weight */
        *lo = 0, *hi = 1;
        return;
    }
    double pad = 0.15 * (b - a > 0 ? b - a : 1.0);
    *lo = a - pad, *hi = b + pad;
    if (c < m->nparams && m->priors[c].kind == LT_PRIOR_UNIFORM && isfinite(m->priors[c].a)) {
        *lo = fmax(*lo, m->priors[c].a);
        *hi = fmin(*hi, m->priors[c].b);
    }
}

/* Smooth a grid with a Gaussian of sd s cells (separable, edges clipped). */
static void smooth(double *g, int nx, int ny, double s)
{
    int r = (int)ceil(3 * s);
    double *k = malloc((size_t)(2 * r + 1) * sizeof *k), *t = malloc((size_t)(nx * ny) * sizeof *t);
    if (!k || !t) {
        free(k);
        free(t);
        return;
    }
    for (int i = -r; i <= r; i++)
        k[i + r] = exp(-0.5 * i * i / (s * s));
    for (int pass = 0; pass < 2; pass++) {
        for (int x = 0; x < nx; x++)
            for (int y = 0; y < ny; y++) {
                double sum = 0;
                for (int i = -r; i <= r; i++) {
                    int xx = pass ? x : x + i, yy = pass ? y + i : y;
                    if (xx >= 0 && xx < nx && yy >= 0 && yy < ny)
                        sum += k[i + r] * g[xx * ny + yy];
                }
                t[x * ny + y] = sum;
            }
        memcpy(g, t, (size_t)(nx * ny) * sizeof *g);
    }
    free(k);
    free(t);
}

#define NB 60 /* histogram bins per axis */

/* The 68% and 95% levels of a density grid: the values above which it
 * holds those fractions of the total (highest-density regions). */
static void hpd_levels(const double *g, int n, double *l68, double *l95)
{
    double *s = malloc((size_t)n * sizeof *s), total = 0;
    if (!s)
        return;
    memcpy(s, g, (size_t)n * sizeof *s);
    qsort(s, (size_t)n, sizeof *s, cmp_double);
    for (int i = 0; i < n; i++)
        total += s[i];
    double cum = 0;
    *l68 = *l95 = s[n - 1];
    for (int i = n - 1; i >= 0; i--) {
        cum += s[i];
        if (cum <= 0.6827 * total)
            *l68 = s[i];
        if (cum <= 0.9545 * total)
            *l95 = s[i];
    }
    free(s);
}

/* The smoothed histogram of columns cx, cy of m on the window into g
 * (NB x NB) and its 68% and 95% levels. */
static void density(const lt_run_model *m, size_t cx, size_t cy, double x0, double x1, double y0,
                    double y1, double *g, double *l68, double *l95)
{
    lt_run_model_histogram(m, cx, cy, x0, x1, y0, y1, NB, NB, g);
    smooth(g, NB, NB, 1.2);
    *l68 = *l95 = 0;
    hpd_levels(g, NB * NB, l68, l95);
}

/* Contours of columns cx, cy of model m in the current window: with
 * PART_FILL the 95% and 68% regions filled in light and lighter tints of
 * colour, with PART_LINES their edges, dashed and solid. Several runs in
 * one panel: all fills first, widest first, then all edges, so that every
 * run's edges stay in view. (Opaque tints, not translucency: PLplot fills
 * cell by cell, and translucent cells show each seam.) */
enum { PART_FILL = 1, PART_LINES = 2 };
static void contours(const lt_run_model *m, size_t cx, size_t cy, double x0, double x1,
                     double y0, double y1, int colour, unsigned parts)
{
    double g[NB * NB];
    double l68, l95;
    density(m, cx, cy, x0, x1, y0, y1, g, &l68, &l95);
    PLFLT **f;
    plAlloc2dGrid(&f, NB, NB);
    PLFLT xg[NB], yg[NB];
    for (int i = 0; i < NB; i++) {
        xg[i] = x0 + (x1 - x0) * (i + 0.5) / NB;
        yg[i] = y0 + (y1 - y0) * (i + 0.5) / NB;
        for (int k = 0; k < NB; k++)
            f[i][k] = g[i * NB + k];
    }
    PLcGrid cg = {xg, yg, NULL, NB, NB, 0};
    PLFLT lev95[1] = {l95}, lev68[1] = {l68}, top = 0;
    for (int i = 0; i < NB * NB; i++)
        top = fmax(top, g[i]);
    for (int k = 0; (parts & PART_FILL) && k < 2 && l95 > 0 && top > l95; k++) {
        double t = k ? 0.45 : 0.2; /* the share of the colour against white */
        int rgb[3];
        for (int c = 0; c < 3; c++)
            rgb[c] = (int)lround(255 - t * (255 - palette[colour][c]));
        plscol0(C_FILL, rgb[0], rgb[1], rgb[2]);
        plshade((PLFLT_MATRIX)f, NB, NB, NULL, x0, x1, y0, y1, k ? l68 : l95, top + 1, 0, C_FILL,
                0, 0, 0, 0, 0, plfill, 1, pltr1, &cg);
    }
    if (!(parts & PART_LINES)) {
        plFree2dGrid(f, NB, NB);
        return;
    }
    plcol0(colour);
    plwidth(1.5);
    pllsty(2);
    plcont((PLFLT_MATRIX)f, NB, NB, 1, NB, 1, NB, lev95, 1, pltr1, &cg);
    pllsty(1);
    plwidth(2.5);
    plcont((PLFLT_MATRIX)f, NB, NB, 1, NB, 1, NB, lev68, 1, pltr1, &cg);
    plwidth(1);
    plFree2dGrid(f, NB, NB);
}

/* The 1-D marginal of column c as a smoothed histogram scaled to peak 1. */
static void marginal(const lt_run_model *m, size_t c, double x0, double x1, int colour)
{
    double h[NB];
    lt_run_model_histogram(m, c, c, x0, x1, x0, x1, NB, 1, h);
    smooth(h, NB, 1, 1.2);
    double peak = 0;
    for (int i = 0; i < NB; i++)
        peak = fmax(peak, h[i]);
    PLFLT x[NB], y[NB];
    for (int i = 0; i < NB; i++)
        x[i] = x0 + (x1 - x0) * (i + 0.5) / NB, y[i] = peak > 0 ? h[i] / peak : 0;
    plcol0(colour);
    plwidth(2);
    plline(NB, x, y);
    plwidth(1);
}

/* Labels with units, as PLplot text (#g gives Greek letters). */
static const char *axis_label(const char *name)
{
    static const struct {
        const char *name, *label;
    } t[] = {{"omega_m", "#gW#dm#u"},       {"omega_de", "#gW#dDE#u"}, {"omega_k", "#gW#dk#u"},
             {"w0", "w#d0#u"},             {"wa", "w#da#u"},          {"h0", "H#d0#u [km/s/Mpc]"},
             {"offset", "M [mag]"},        {"q0", "q#d0#u"},          {"z_t", "z#dt#u"},
             {"age_gyr", "age [Gyr]"},     {"w_pivot", "w#dp#u"},
             {"omega_b_h2", "#gW#db#uh#u2#d"}, {"rd_h", "r#dd#uh [Mpc]"}, {"rd", "r#dd#u [Mpc]"},
             {"m_nu", "#gS#um#d#gn#u [eV]"}};
    for (size_t i = 0; i < sizeof t / sizeof t[0]; i++)
        if (!strcmp(t[i].name, name))
            return t[i].label;
    return name;
}

/* A major-tick step of 1, 2 or 5 times a power of ten that puts about
 * `labels` labels on [lo, hi]: PLplot's automatic step crowds the labels of
 * a narrow panel until they run together ("-1.6-1.4-1.2"). */
static double tick_step(double lo, double hi, int labels)
{
    double raw = (hi - lo) / labels;
    if (!(raw > 0) || !isfinite(raw))
        return 0; /* PLplot's own choice */
    double mag = pow(10.0, floor(log10(raw))), f = raw / mag;
    return (f < 1.5 ? 1.0 : f < 3.0 ? 2.0 : f < 7.0 ? 5.0 : 10.0) * mag;
}

static long find_col(const lt_run_model *m, const char *name)
{
    for (size_t c = 0; c < m->nparams + m->nderived; c++)
        if (!strcmp(m->names[c], name))
            return (long)c;
    return -1;
}

/* The models one figure shows: those of one name. From several runs
 * (lantern report RUN1 RUN2) they are overlaid, each in its colour with a
 * legend naming it, where one file per model once let the last run's
 * figure replace the others. */
#define MAX_OVERLAY 16
typedef struct {
    const lt_run_model *models; /* all the report's models */
    size_t idx[MAX_OVERLAY];    /* the members (colours follow the index) */
    size_t k;
} model_group;

#define MEMBER(g, j) (&(g)->models[(g)->idx[j]])

/* Member j's colour: its model's alone, its place among several (the
 * combinations of probes of a run then keep one colour each in every
 * figure, whatever the model). */
static int member_colour(const model_group *g, size_t j)
{
    return model_colour(g->k > 1 ? j : g->idx[j]);
}

/* The plotting range of parameter name over the members that have it. */
static void group_range(const model_group *g, const char *name, double *lo, double *hi)
{
    *lo = INFINITY, *hi = -INFINITY;
    for (size_t j = 0; j < g->k; j++) {
        long c = find_col(MEMBER(g, j), name);
        double a, b;
        if (c < 0)
            continue;
        range_of(MEMBER(g, j), (size_t)c, 0, &a, &b);
        *lo = fmin(*lo, a), *hi = fmax(*hi, b);
    }
    if (!(*lo < *hi))
        *lo = 0, *hi = 1;
}

/* A legend of the members, one line each from the top of the current
 * viewport (window 0-1 on both axes), starting at y and stepping dy down. */
/* Are all the members' draws weighted? Then a title says so once and the
 * legend lines need not (long labels ran out of the legend box). */
static int all_weighted(const model_group *g)
{
    for (size_t j = 0; j < g->k; j++)
        if (!MEMBER(g, j)->weighted)
            return 0;
    return 1;
}

static void group_legend(const model_group *g, double y, double dy)
{
    int mark = !all_weighted(g);
    for (size_t j = 0; j < g->k; j++, y -= dy) {
        PLFLT lx[2] = {0.02, 0.14}, ly[2] = {y, y};
        plcol0(member_colour(g, j));
        plwidth(2.5);
        plline(2, lx, ly);
        plwidth(1);
        plcol0(C_INK);
        char lab[320];
        snprintf(lab, sizeof lab, "%s%s", MEMBER(g, j)->label,
                 mark && MEMBER(g, j)->weighted ? " (weighted draws)" : "");
        plptex(0.17, y, 1, 0, 0, lab);
    }
}

/* ---- the posterior matrix ---- */
/* The parameters of the members, in first-seen order (the same model may
 * have other free parameters in another run); returns how many. */
static size_t group_params(const model_group *g, const char **names)
{
    size_t d = 0;
    for (size_t j = 0; j < g->k; j++)
        for (size_t c = 0; c < MEMBER(g, j)->nparams; c++) {
            /* a standardisation's per-group nuisances (sigma_int@G, the
             * populations x1_mean@G ...) stay in the tables: twenty-odd
             * panels a side would leave none readable */
            if (strchr(MEMBER(g, j)->names[c], '@'))
                continue;
            size_t i = 0;
            while (i < d && strcmp(names[i], MEMBER(g, j)->names[c]))
                i++;
            if (i == d && d < LT_MAX_FREE)
                names[d++] = MEMBER(g, j)->names[c];
        }
    return d;
}

static void draw_posterior(const void *p)
{
    const model_group *g = p;
    const lt_run_model *m = MEMBER(g, 0);
    const char *names[LT_MAX_FREE];
    size_t d = group_params(g, names);
    double lo[LT_MAX_FREE], hi[LT_MAX_FREE];
    for (size_t i = 0; i < d; i++)
        group_range(g, names[i], &lo[i], &hi[i]);
    plschr(0, d > 3 ? 0.6 : 0.8);
    int nl = d >= 3 ? 3 : 5; /* about this many tick labels per panel */
    /* the text lines of the legend: a title, two notes, and the runs */
    size_t lines = 3 + (g->k > 1 ? g->k : 0);
    /* one parameter: leave the top for the legend */
    double margin = 0.11, top = d == 1 ? 0.94 - 0.055 * (double)lines : 0.97;
    double span = (top - margin) / (double)d;
    for (size_t r = 0; r < d; r++)
        for (size_t c = 0; c <= r; c++) {
            double vx0 = margin + c * span, vy1 = top - r * span;
            plvpor(vx0 + 0.008, vx0 + span - 0.008, vy1 - span + 0.008, vy1 - 0.008);
            const char *xo = r == d - 1 ? "bcnst" : "bcst", *yo = c == 0 && r > 0 ? "bcnstv" : "bcst";
            plcol0(C_INK);
            if (r == c) {
                plwind(lo[c], hi[c], 0, 1.1);
                plbox(xo, tick_step(lo[c], hi[c], nl), 0, "bc", 0, 0);
            } else {
                plwind(lo[c], hi[c], lo[r], hi[r]);
                plbox(xo, tick_step(lo[c], hi[c], nl), 0, yo, tick_step(lo[r], hi[r], nl), 0);
            }
            for (size_t j = 0; j < g->k; j++) {
                const lt_run_model *mj = MEMBER(g, j);
                long cx = find_col(mj, names[c]), cy = find_col(mj, names[r]);
                int col = member_colour(g, j);
                if (cx < 0 || cy < 0)
                    continue;
                /* the best fit in ink for one model, in its colour among several */
                if (r == c) {
                    marginal(mj, (size_t)cx, lo[c], hi[c], col);
                    PLFLT bx[2] = {mj->best[cx], mj->best[cx]}, by[2] = {0, 1.1};
                    plcol0(g->k > 1 ? col : C_INK);
                    pllsty(3);
                    plline(2, bx, by);
                    pllsty(1);
                } else {
                    /* filled for one model; among several, edges only (the
                     * plane figure layers the fills of several) */
                    contours(mj, (size_t)cx, (size_t)cy, lo[c], hi[c], lo[r], hi[r], col,
                             g->k > 1 ? PART_LINES : PART_FILL | PART_LINES);
                    PLFLT bx = mj->best[cx], by = mj->best[cy];
                    plcol0(g->k > 1 ? col : C_INK);
                    plpoin(1, &bx, &by, 5);
                }
            }
            plcol0(C_INK);
            if (r != c) /* again: the fills may have covered its ticks */
                plbox(xo, tick_step(lo[c], hi[c], nl), 0, yo, tick_step(lo[r], hi[r], nl), 0);
            if (r == d - 1)
                plmtex("b", 3.2, 0.5, 0.5, axis_label(names[c]));
            if (c == 0 && r > 0)
                plmtex("l", 5.0, 0.5, 0.5, axis_label(names[r]));
        }
    /* legend and title in the empty upper right */
    double dy = d == 1 ? 0.055 : 0.04; /* a line, as a fraction of the page */
    double vtop = 0.97, vbot = vtop - dy * (double)lines;
    plvpor(0.45, 0.97, vbot, vtop);
    plwind(0, 1, 0, 1);
    double step = 1.0 / (double)lines; /* a line in the window */
    plschr(0, 0.9);
    char title[160];
    /* weighted draws: the densities and regions hold the weight; among
     * several runs the legend says which */
    if (g->k > 1)
        snprintf(title, sizeof title, "posterior of %s, %zu runs%s", m->name, g->k,
                 all_weighted(g) ? " (weighted draws)" : "");
    else
        snprintf(title, sizeof title, "posterior of %s%s", m->label,
                 m->weighted ? " (weighted draws)" : "");
    plcol0(C_INK);
    plptex(1.0, 1 - 0.6 * step, 1, 0, 1.0, title);
    plschr(0, 0.7);
    plptex(1.0, 1 - 1.6 * step, 1, 0, 1.0, "68% (solid) and 95% (dashed) regions");
    plptex(1.0, 1 - 2.6 * step, 1, 0, 1.0,
           g->k > 1 ? "x and long-dashed lines: each best fit" : "x and long-dashed line: the best fit");
    if (g->k > 1)
        group_legend(g, 1 - 3.6 * step, step);
}

/* ---- traces ---- */
static void draw_traces(const void *p)
{
    const lt_run_model *m = p;
    size_t d = m->nparams, nc = m->nparams + m->nderived, n = m->ndraws;
    /* rows of thinned files stand for step_every steps each: x is the step */
    double every = m->step_every ? (double)m->step_every : 1.0;
    plschr(0, 0.75);
    size_t stride = n > 4000 ? n / 4000 : 1; /* at most 4000 points per chain */
    PLFLT *x = malloc((n / stride + 1) * sizeof *x), *y = malloc((n / stride + 1) * sizeof *y);
    for (size_t k = 0; x && y && k < d; k++) {
        double lo, hi;
        range_of(m, k, 1, &lo, &hi); /* the span of the draws as sampled */
        double top = 0.95 - k * (0.87 / (double)d);
        plvpor(0.1, 0.97, top - 0.87 / (double)d + 0.03, top);
        plwind(1, (double)(n - 1) * every + 1, lo, hi);
        plcol0(C_INK);
        plbox(k == d - 1 ? "bcnst" : "bcst", 0, 0, "bcnstv", 0, 0);
        plmtex("l", 4.5, 0.5, 0.5, axis_label(m->names[k]));
        for (size_t c = 0; c < m->nchains; c++) {
            size_t j = 0;
            for (size_t i = 0; i < n; i += stride, j++) {
                x[j] = (double)i * every + 1;
                y[j] = m->draws[(c * n + i) * nc + k];
            }
            plcol0(C_MODEL + (int)(c % NMODELCOL));
            plline((PLINT)j, x, y);
        }
        if (k == 0) {
            /* the draws as sampled: a trace shows how a chain moved, which
             * importance weights do not change, so it leaves them out */
            char t[200];
            if (m->independent)
                snprintf(t, sizeof t, "%s: %zu independent draws in the order drawn "
                         "(importance sampling; weights not shown)", m->label, n);
            else if (m->weighted)
                snprintf(t, sizeof t, "traces of %s: %zu chains (colours) x %zu draws as sampled "
                         "(importance weights not shown)", m->label, m->nchains, n);
            else if (every > 1)
                snprintf(t, sizeof t, "traces of %s: %zu chains (colours) x %zu draws after "
                         "warm-up (one in %.0f steps)", m->label, m->nchains, n, every);
            else
                snprintf(t, sizeof t, "traces of %s: %zu chains (colours) x %zu draws after warm-up",
                         m->label, m->nchains, n);
            plcol0(C_INK);
            plmtex("t", 1.0, 0.5, 0.5, t);
        }
    }
    plcol0(C_INK);
    /* thinned rows (--thin, the importance weighting) are placed at their steps */
    plmtex("b", 3.0, 0.5, 0.5, m->independent ? "draw" : "step after warm-up");
    free(x);
    free(y);
}

/* ---- the plane of a model's two telling parameters ---- */

/* Which plane a model has, from its columns: w0 - wa (w0wa models),
 * Omega_m - Omega_DE (curved models without evolving w), Omega_m - w0
 * (flat wCDM), or none (flat LCDM). */
typedef enum { PLANE_NONE = 0, PLANE_W0WA, PLANE_CURVED, PLANE_OMW } plane_kind;
static plane_kind plane_of(const lt_run_model *m)
{
    int w0 = find_col(m, "w0") >= 0, wa = find_col(m, "wa") >= 0, om = find_col(m, "omega_m") >= 0;
    if (w0 && wa)
        return PLANE_W0WA;
    if (m->model && !m->model->flat && om && find_col(m, "omega_de") >= 0)
        return PLANE_CURVED;
    return w0 && om ? PLANE_OMW : PLANE_NONE;
}

static void draw_plane(const void *p)
{
    const model_group *g = p;
    const lt_run_model *m = MEMBER(g, 0);
    plane_kind kind = plane_of(m);
    static const char *const cols[][2] = {
        {"", ""}, {"w0", "wa"}, {"omega_m", "omega_de"}, {"omega_m", "w0"}};
    static const char *const what[] = {"", "w#d0#u - w#da#u", "#gW#dm#u - #gW#dDE#u",
                                       "#gW#dm#u - w#d0#u"};
    const char *xn = cols[kind][0], *yn = cols[kind][1];
    double x0, x1, y0, y1;
    group_range(g, xn, &x0, &x1);
    group_range(g, yn, &y0, &y1);
    if (kind == PLANE_W0WA) /* make sure w = -1 is in view */
        x0 = fmin(x0, -1.1), x1 = fmax(x1, -0.9), y0 = fmin(y0, -0.2), y1 = fmax(y1, 0.2);
    if (kind == PLANE_OMW)
        y0 = fmin(y0, -1.1), y1 = fmax(y1, -0.9);
    plschr(0, 1.0);
    plvpor(0.13, 0.95, 0.12, 0.9);
    plwind(x0, x1, y0, y1);
    plcol0(C_INK);
    plbox("bcnst", 0, 0, "bcnstv", 0, 0);
    pllab(axis_label(xn), axis_label(yn), "");
    /* the widest regions first, so that the narrow ones (the combinations
     * of most probes) are drawn over them, not under */
    size_t order[MAX_OVERLAY];
    double area[MAX_OVERLAY];
    for (size_t j = 0; j < g->k; j++) {
        const lt_run_model *mj = MEMBER(g, j);
        long jx = find_col(mj, xn), jy = find_col(mj, yn);
        double gr[NB * NB], l68, l95;
        area[j] = 0;
        if (jx >= 0 && jy >= 0) {
            density(mj, (size_t)jx, (size_t)jy, x0, x1, y0, y1, gr, &l68, &l95);
            for (int c = 0; c < NB * NB; c++)
                area[j] += gr[c] >= l95;
        }
        size_t at = j;
        for (; at > 0 && area[order[at - 1]] < area[j]; at--)
            order[at] = order[at - 1];
        order[at] = j;
    }
    for (unsigned part = PART_FILL; part <= PART_LINES; part <<= 1)
        for (size_t o = 0; o < g->k; o++) {
            size_t j = order[o];
            const lt_run_model *mj = MEMBER(g, j);
            long jx = find_col(mj, xn), jy = find_col(mj, yn);
            if (jx < 0 || jy < 0)
                continue;
            contours(mj, (size_t)jx, (size_t)jy, x0, x1, y0, y1, member_colour(g, j), part);
            if (part == PART_LINES) {
                PLFLT bx = mj->best[jx], by = mj->best[jy];
                plcol0(g->k > 1 ? member_colour(g, j) : C_INK);
                plpoin(1, &bx, &by, 5);
            }
        }
    plcol0(C_INK);
    plbox("bcnst", 0, 0, "bcnstv", 0, 0); /* again, over the fills */
    char title[200];
    /* weighted draws: the regions hold that much of the weight (among
     * runs of which only some are weighted, the legend says which) */
    const char *of = all_weighted(g) ? " of the weight" : "";
    plcol0(C_GREY);
    if (kind == PLANE_W0WA || kind == PLANE_OMW) {
        /* the cosmological constant: the point w0 = -1, wa = 0, or the
         * line w0 = -1 */
        PLFLT lx[2] = {-1, -1}, ly[2] = {y0, y1}, hx[2] = {x0, x1}, hy[2] = {0, 0};
        PLFLT cx[2] = {x0, x1}, cy[2] = {-1, -1};
        pllsty(3);
        if (kind == PLANE_W0WA) {
            plline(2, lx, ly);
            plline(2, hx, hy);
        } else
            plline(2, cx, cy);
        pllsty(1);
        plcol0(C_INK);
        if (kind == PLANE_W0WA) {
            PLFLT px = -1, py = 0;
            plpoin(1, &px, &py, 17);
            plptex(-1 + 0.01 * (x1 - x0), 0.02 * (y1 - y0), 1, 0, 0, "#gL");
        } else
            plptex(x0 + 0.02 * (x1 - x0), -1 + 0.02 * (y1 - y0), 1, 0, 0, "w = -1");
    } else {
        /* flat: Omega_de = 1 - Omega_m; q0 = 0: Omega_de = Omega_m / 2 (q0 = Om/2 - OL,
         * for a cosmological constant; the line is drawn for w = -1) */
        PLFLT fx[2] = {x0, x1}, fy[2] = {1 - x0, 1 - x1}, ay[2] = {x0 / 2, x1 / 2};
        pllsty(2);
        plline(2, fx, fy);
        pllsty(3);
        plline(2, fx, ay);
        pllsty(1);
        double tx = x0 + 0.75 * (x1 - x0);
        plptex(tx, 1 - tx, 1, -1, 0.5, "flat");
        plptex(tx, tx / 2, 1, 0.5, 0.5, "accelerating above, decelerating below");
    }
    if (g->k > 1) /* the runs name themselves in the legend */
        snprintf(title, sizeof title, "%s, %zu runs: %s plane (68%%, 95%%%s)", m->name, g->k,
                 what[kind], of);
    else
        snprintf(title, sizeof title, "%s: %s plane (68%%, 95%%%s)", m->label, what[kind], of);
    plcol0(C_INK);
    plmtex("t", 1.5, 0.5, 0.5, title);
    if (g->k > 1) {
        plschr(0, 0.8);
        double h = 0.045 * (double)g->k;
        plvpor(0.55, 0.94, 0.89 - h, 0.89);
        plwind(0, 1, 0, 1);
        /* on white, with a frame: the regions may reach under it */
        PLFLT bx[4] = {0, 1, 1, 0}, by[4] = {0, 0, 1, 1};
        plcol0(C_BG);
        plfill(4, bx, by);
        plcol0(C_GREY);
        plbox("bc", 0, 0, "bc", 0, 0);
        group_legend(g, 1 - 0.5 / (double)g->k, 1.0 / (double)g->k);
    }
}

/* ---- the Hubble diagram ---- */
typedef struct {
    const lt_run_model *models;
    size_t n;
    const lt_survey *s;
} hubble_ctx;

/* mu(z) of model m's best fit at n redshifts (zhel may be NULL: = z),
 * shifted by its offset relative to ref_offset for mag data. */
static int model_mu(const lt_run_model *m, size_t n, const double *z, const double *zhel,
                    double *mu)
{
    lt_cosmo c;
    if (!m->model || lt_cosmo_init(&c, m->model, &m->best_params, NULL))
        return -1;
    lt_zgrid *g = lt_zgrid_alloc(n, z, NULL);
    double *dm = malloc(n * sizeof *dm);
    lt_cosmo_table t = {.transverse = dm};
    int rc = !g || !dm || lt_cosmo_eval(&c, g, &t, NULL) ? -1 : 0;
    for (size_t i = 0; !rc && i < n; i++)
        mu[i] = 5 * log10((1 + (zhel ? zhel[i] : z[i])) * dm[i]) + 25;
    lt_zgrid_free(g);
    free(dm);
    return rc;
}

static void draw_hubble(const void *p)
{
    const hubble_ctx *h = p;
    const lt_survey *s = h->s;
    size_t n = s->n;
    const lt_run_model *ref = &h->models[0];
    int mag = s->kind == LT_OBS_MAG, dl = s->kind == LT_OBS_DL;
    double off = mag && isfinite(ref->offset_best) ? ref->offset_best : 0.0;
    double *mu = malloc(n * sizeof *mu), *err = malloc(n * sizeof *err), *mref = malloc(n * sizeof *mref);
    double zmin = INFINITY, zmax = 0;
    enum { NG = 200 };
    double zg[NG], mg[NG], mg_ref[NG];
    if (!mu || !err || !mref)
        goto done;
    lt_cov_diagonal(s->cov, err);
    for (size_t i = 0; i < n; i++) {
        double sd = sqrt(err[i]);
        mu[i] = dl ? 5 * log10(s->obs[i]) + 25 : s->obs[i] - off;
        err[i] = dl ? 5 / log(10.0) * sd / s->obs[i] : sd;
        zmin = fmin(zmin, s->z[i]), zmax = fmax(zmax, s->z[i]);
    }
    for (int k = 0; k < NG; k++)
        zg[k] = zmin * 0.9 * pow(zmax * 1.1 / (zmin * 0.9), k / (NG - 1.0));
    if (model_mu(ref, n, s->z, s->zhel, mref) || model_mu(ref, NG, zg, NULL, mg_ref))
        goto done;
    double lx0 = log10(zmin * 0.9), lx1 = log10(zmax * 1.1);
    double ylo = INFINITY, yhi = -INFINITY, rlo = INFINITY, rhi = -INFINITY;
    for (size_t i = 0; i < n; i++) {
        ylo = fmin(ylo, mu[i] - err[i]), yhi = fmax(yhi, mu[i] + err[i]);
        double r = mu[i] - mref[i];
        rlo = fmin(rlo, r - err[i]), rhi = fmax(rhi, r + err[i]);
    }
    double rr = fmax(fabs(rlo), fabs(rhi));
    rr = fmin(rr, 1.5);
    /* top: the diagram */
    plschr(0, 0.9);
    plvpor(0.1, 0.96, 0.36, 0.92);
    plwind(lx0, lx1, ylo - 0.3, yhi + 0.3);
    plcol0(C_INK);
    plbox("bclst", 0, 0, "bcnstv", 0, 0);
    plmtex("l", 4.3, 0.5, 0.5, mag ? "#gm = m - M#dbest#u [mag]" : "#gm [mag]");
    char title[256];
    snprintf(title, sizeof title, "Hubble diagram: %zu objects and the best fit of each model", n);
    plmtex("t", 1.5, 0.5, 0.5, title);
    PLFLT *lz = malloc(n * sizeof *lz), *y0 = malloc(n * sizeof *y0), *y1 = malloc(n * sizeof *y1);
    if (!lz || !y0 || !y1) {
        free(lz), free(y0), free(y1);
        goto done;
    }
    for (size_t i = 0; i < n; i++)
        lz[i] = log10(s->z[i]), y0[i] = mu[i] - err[i], y1[i] = mu[i] + err[i];
    plcol0(C_LIGHT);
    plerry((PLINT)n, lz, y0, y1);
    plcol0(C_GREY);
    plpoin((PLINT)n, lz, mu, 1);
    PLFLT lg[NG];
    for (int k = 0; k < NG; k++)
        lg[k] = log10(zg[k]);
    for (size_t m = 0; m < h->n; m++) {
        if (model_mu(&h->models[m], NG, zg, NULL, mg))
            continue;
        /* the data are m - M of the first model; another model's curve is
         * moved by its own offset's difference, so it meets the data */
        double shift = mag && isfinite(h->models[m].offset_best) ? h->models[m].offset_best - off : 0;
        for (int k = 0; k < NG; k++)
            mg[k] += shift;
        plcol0(model_colour(m));
        plwidth(2);
        pllsty(1 + (int)(m % 4));
        plline(NG, lg, mg);
        pllsty(1);
        plwidth(1);
        /* the legend, top left */
        double ly = yhi + 0.3 - (yhi - ylo + 0.6) * (0.06 + 0.065 * (double)m);
        PLFLT sx[2] = {lx0 + 0.03 * (lx1 - lx0), lx0 + 0.1 * (lx1 - lx0)}, sy[2] = {ly, ly};
        pllsty(1 + (int)(m % 4));
        plwidth(2);
        plline(2, sx, sy);
        plwidth(1);
        pllsty(1);
        char lab[160];
        snprintf(lab, sizeof lab, "%s (chi2_min = %.1f)", h->models[m].label, h->models[m].chi2_min);
        plcol0(C_INK);
        plptex(lx0 + 0.12 * (lx1 - lx0), ly, 1, 0, 0, lab);
    }
    /* bottom: residuals against the first model */
    plvpor(0.1, 0.96, 0.1, 0.34);
    plwind(lx0, lx1, -rr * 1.1, rr * 1.1);
    plcol0(C_INK);
    plbox("bclnst", 0, 0, "bcnstv", 0, 0);
    plmtex("b", 3.0, 0.5, 0.5, "redshift z");
    snprintf(title, sizeof title, "#gm - #gm(%s)", ref->name);
    plmtex("l", 4.3, 0.5, 0.5, title);
    for (size_t i = 0; i < n; i++) {
        double r = mu[i] - mref[i];
        y0[i] = r - err[i], y1[i] = r + err[i], mu[i] = r;
    }
    plcol0(C_LIGHT);
    plerry((PLINT)n, lz, y0, y1);
    plcol0(C_GREY);
    plpoin((PLINT)n, lz, mu, 1);
    for (size_t m = 0; m < h->n; m++) {
        if (model_mu(&h->models[m], NG, zg, NULL, mg))
            continue;
        double shift = mag && isfinite(h->models[m].offset_best) ? h->models[m].offset_best - off : 0;
        for (int k = 0; k < NG; k++)
            mg[k] += shift - mg_ref[k];
        plcol0(model_colour(m));
        plwidth(2);
        pllsty(1 + (int)(m % 4));
        plline(NG, lg, mg);
        pllsty(1);
        plwidth(1);
    }
    free(lz);
    free(y0);
    free(y1);
done:
    free(mu);
    free(err);
    free(mref);
}

int lt_report_write_figures(const char *dir, const lt_run_model *models, size_t n,
                            const lt_survey *s, lt_error *err)
{
    if (n == 0 || !models)
        return lt_error_set(err, LT_EINPUT, dir, 0, "a report needs at least one model");
    /* the Hubble diagram where there is a survey of distances (measurements
     * alone have none) */
    /* the models fitted to the survey drawn, as the first of them was: one
     * combination of probes (a run's BAO-only fit has no offset to meet
     * these data, and others' curves would only crowd the diagram) */
    lt_run_model shown[LT_REPORT_MAX_MODELS]; /* shallow copies, read only */
    size_t first = 0, ns = 0;
    while (first < n && !(models[first].data_file && models[first].data_file[0]))
        first++;
    for (size_t i = 0; i < n && ns < LT_REPORT_MAX_MODELS; i++)
        if (first == n || lt_run_model_same_data(&models[first], &models[i]))
            shown[ns++] = models[i];
    hubble_ctx h = {shown, ns, s};
    /* a light-curve table's magnitudes are not distances until standardised:
     * its Hubble diagram needs the standardised mu, not drawn yet */
    int rc = s && s->kind != LT_OBS_MB ? figure(dir, "hubble", 1, 1100, 800, draw_hubble, &h, err)
                                       : LT_OK;
    for (size_t i = 0; !rc && i < n; i++) {
        /* the models of this name: the figures of the first one show them all */
        model_group g = {models, {0}, 0};
        size_t seen = 0; /* earlier models of the same name */
        for (size_t j = 0; j < n; j++)
            if (!strcmp(models[j].name, models[i].name)) {
                if (j < i)
                    seen++;
                if (g.k < MAX_OVERLAY)
                    g.idx[g.k++] = j;
            }
        char name[256];
        const char *pnames[LT_MAX_FREE];
        size_t d = models[i].nparams, dg = group_params(&g, pnames);
        size_t side = dg < 2 ? 500 : 260 * dg + 80;
        if (!seen) {
            snprintf(name, sizeof name, "posterior_%s", models[i].name);
            rc = figure(dir, name, 1, (int)side, (int)side, draw_posterior, &g, err);
            if (!rc && plane_of(&models[i]) != PLANE_NONE) {
                snprintf(name, sizeof name, "plane_%s", models[i].name);
                rc = figure(dir, name, 1, 800, 700, draw_plane, &g, err);
            }
        }
        /* traces are not overlaid: the second model of a name gets its
         * probes' name (a run's combinations), else _2, and so on */
        if (!rc) {
            const char *pr = models[i].probes, *pr0 = models[g.idx[0]].probes;
            /* by probes only where this model and probes come first (two
             * runs of combinations would otherwise write one file twice) */
            int pair_first = 1;
            for (size_t j = 0; j < i; j++)
                pair_first &= !(models[j].probes && pr && !strcmp(models[j].name, models[i].name) &&
                           !strcmp(models[j].probes, pr));
            if (seen && pr && pr0 && strcmp(pr, pr0) && pair_first)
                snprintf(name, sizeof name, "traces_%s_%s", models[i].name, pr);
            else if (seen)
                snprintf(name, sizeof name, "traces_%s_%zu", models[i].name, seen + 1);
            else
                snprintf(name, sizeof name, "traces_%s", models[i].name);
            rc = figure(dir, name, 0, 1000, 200 * (int)(d < 2 ? 2 : d), draw_traces, &models[i], err);
        }
    }
    return rc;
}

/* ---- campaigns: pulls and coverage ---- */
typedef struct {
    const char *title;
    const lt_bias_panel *p;
    size_t np;
} bias_ctx;

static void draw_bias(const void *ctx)
{
    const bias_ctx *b = ctx;
    size_t np = b->np;
    plschr(0, 0.75);
    double left = 0.07, right = 0.98, gap = 0.04;
    double w = (right - left - gap * (double)(np - 1)) / (double)np;
    /* top row: the pulls of each parameter against N(0, 1) */
    for (size_t k = 0; k < np; k++) {
        const lt_bias_panel *p = &b->p[k];
        double x0 = left + (double)k * (w + gap);
        plvpor(x0, x0 + w, 0.56, 0.90);
        const int nb = 16;
        const double lo = -4, hi = 4, bw = (hi - lo) / nb;
        double count[16] = {0}, peak = 0.4 * (double)p->n * bw;
        for (size_t i = 0; i < p->n; i++) {
            if (!isfinite(p->pulls[i]))
                continue;
            int j = (int)floor((p->pulls[i] - lo) / bw);
            j = j < 0 ? 0 : j >= nb ? nb - 1 : j; /* the outer bins hold the tails */
            count[j] += 1;
        }
        for (int j = 0; j < nb; j++)
            peak = fmax(peak, count[j]);
        plcol0(C_INK);
        plwind(lo, hi, 0, 1.15 * (peak > 0 ? peak : 1));
        plbox("bcnst", 0, 0, k == 0 ? "bcnstv" : "bcst", 0, 0);
        plcol0(C_MODEL);
        for (int j = 0; j < nb; j++) {
            if (count[j] <= 0)
                continue;
            PLFLT xs[4] = {lo + j * bw, lo + j * bw, lo + (j + 1) * bw, lo + (j + 1) * bw};
            PLFLT ys[4] = {0, count[j], count[j], 0};
            plline(4, xs, ys);
        }
        /* the expectation: n bw phi(x) */
        PLFLT gx[81], gy[81];
        for (int j = 0; j < 81; j++) {
            gx[j] = lo + (hi - lo) * j / 80.0;
            gy[j] = (double)p->n * bw * exp(-0.5 * gx[j] * gx[j]) / sqrt(2 * M_PI);
        }
        plcol0(C_INK);
        pllsty(2);
        plline(81, gx, gy);
        pllsty(1);
        plmtex("b", 3.0, 0.5, 0.5, "pull (estimate - truth) / #gs");
        if (k == 0)
            plmtex("l", 3.5, 0.5, 0.5, "realizations");
        char t[128];
        snprintf(t, sizeof t, "%s: mean %.2f, width %.2f", axis_label(p->name), p->pull_mean,
                 p->pull_width);
        plmtex("t", 0.8, 0.5, 0.5, t);
    }
    /* bottom: coverage of the 68% and 95% intervals with their binomial errors */
    plvpor(left, right, 0.10, 0.42);
    plcol0(C_INK);
    plwind(0.5, (double)np + 0.5, 0.4, 1.02);
    plbox("bc", 0, 0, "bcnstv", 0, 0);
    const double nominal[2] = {b->p[0].nominal68, b->p[0].nominal95};
    for (int s = 0; s < 2; s++) {
        PLFLT hx[2] = {0.5, (double)np + 0.5}, hy[2] = {nominal[s], nominal[s]};
        plcol0(C_GREY);
        pllsty(2);
        plline(2, hx, hy);
        pllsty(1);
    }
    for (size_t k = 0; k < np; k++) {
        const lt_bias_panel *p = &b->p[k];
        const double f[2] = {p->cover68, p->cover95}, e[2] = {p->cover68_err, p->cover95_err};
        for (int s = 0; s < 2; s++) {
            PLFLT x = (double)(k + 1) + (s ? 0.08 : -0.08), y = f[s];
            PLFLT ex[2] = {x, x}, ey[2] = {y - e[s], y + e[s]};
            plcol0(C_MODEL + s);
            plline(2, ex, ey);
            plssym(0, 1.3);
            plpoin(1, &x, &y, s ? 4 : 17);
            plssym(0, 1.0);
        }
        plcol0(C_INK);
        plmtex("b", 1.5, ((double)k + 0.5) / (double)np, 0.5, axis_label(p->name));
    }
    plcol0(C_INK);
    plmtex("l", 3.5, 0.5, 0.5, "coverage");
    char caption[200];
    snprintf(caption, sizeof caption,
             "68%% (dot), 95%% (circle) intervals holding the truth; dashed: nominal %.4g, "
             "%.4g; bars: binomial errors",
             nominal[0], nominal[1]);
    plmtex("b", 3.2, 0.5, 0.5, caption);
    plschr(0, 0.9);
    plmtex("t", 2.2, 0.5, 0.5, ""); /* keeps PLplot's character state */
    plvpor(left, right, 0.93, 0.99);
    plwind(0, 1, 0, 1);
    plptex(0.5, 0.3, 1, 0, 0.5, b->title);
}

int lt_report_write_bias_figure(const char *dir, const char *name, const char *title,
                                const lt_bias_panel *panels, size_t np, lt_error *err)
{
    if (np == 0)
        return LT_OK;
    bias_ctx b = {title, panels, np};
    int w = np < 3 ? 900 : 300 * (int)np + 100;
    return figure(dir, name, 1, w, 700, draw_bias, &b, err);
}

/* ---- forecasts: the Fisher ellipse of two parameters ---- */
typedef struct {
    const char *title, *xname, *yname;
    double x, y, cxx, cxy, cyy;
} ellipse_ctx;

static void draw_ellipse(const void *ctx)
{
    const ellipse_ctx *e = ctx;
    /* for two parameters jointly, the 68.3% and 95.4% regions of a Gaussian
     * are Delta chi2 = 2.30 and 6.18 (Press et al., Numerical Recipes, 3rd
     * ed., section 15.6, table) */
    const double dchi2[2] = {2.30, 6.18};
    double a = e->cxx, b = e->cxy, c = e->cyy;
    /* axes from the eigen-decomposition of [[a b][b c]] */
    double tr = 0.5 * (a + c), disc = sqrt(0.25 * (a - c) * (a - c) + b * b);
    double l1 = tr + disc, l2 = fmax(tr - disc, 0), ang = 0.5 * atan2(2 * b, a - c);
    double sx = sqrt(a * dchi2[1]) * 1.25, sy = sqrt(c * dchi2[1]) * 1.25;
    plschr(0, 0.85);
    plvpor(0.14, 0.95, 0.12, 0.90);
    plcol0(C_INK);
    plwind(e->x - sx, e->x + sx, e->y - sy, e->y + sy);
    plbox("bcnst", 0, 0, "bcnstv", 0, 0);
    for (int k = 0; k < 2; k++) {
        PLFLT px[201], py[201];
        double r1 = sqrt(l1 * dchi2[k]), r2 = sqrt(l2 * dchi2[k]);
        for (int j = 0; j <= 200; j++) {
            double t = 2 * M_PI * j / 200.0, u = r1 * cos(t), v = r2 * sin(t);
            px[j] = e->x + u * cos(ang) - v * sin(ang);
            py[j] = e->y + u * sin(ang) + v * cos(ang);
        }
        plcol0(C_MODEL);
        pllsty(k ? 2 : 1);
        plwidth(2);
        plline(201, px, py);
        plwidth(1);
        pllsty(1);
    }
    PLFLT fx = e->x, fy = e->y;
    plcol0(C_INK);
    plpoin(1, &fx, &fy, 5);
    plmtex("b", 3.2, 0.5, 0.5, axis_label(e->xname));
    plmtex("l", 4.5, 0.5, 0.5, axis_label(e->yname));
    plmtex("t", 2.5, 0.5, 0.5, e->title);
    plschr(0, 0.7);
    plmtex("t", 0.9, 0.5, 0.5, "Fisher forecast: 68% (solid) and 95% (dashed) regions, x: fiducial");
}

int lt_report_write_ellipse(const char *dir, const char *name, const char *title,
                            const char *xname, const char *yname, double x, double y,
                            const double cov[4], lt_error *err)
{
    ellipse_ctx e = {title, xname, yname, x, y, cov[0], cov[1], cov[3]};
    return figure(dir, name, 1, 800, 700, draw_ellipse, &e, err);
}
