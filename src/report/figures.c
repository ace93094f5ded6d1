/*
 * Figures of saved runs: the Hubble diagram with residuals, the posterior
 * matrix of each model, the plane of its two telling parameters, and the
 * chain traces; and the campaigns' pull and coverage figures and the
 * forecasts' ellipses. Each is a PNG (300 dpi) and a vector PDF at a
 * journal's column width (plotkit.c), with type of 8-10 pt at that size.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include <plplot.h>

#include "lantern/file.h"
#include "lantern/report.h"
#include "plotkit.h"

/* Legends' type: 9 pt at two columns' width, 8 pt in one column; a line
 * is 1.3 times the type, and a character about 0.6 em (DejaVu Sans's
 * digits are 0.64 em, its lower case about 0.55: enough for a box). */
static double legend_pt(double width) { return width < 5 ? PK_PT_TICK : PK_PT_LABEL; }
static double line_in(double width) { return 1.3 * legend_pt(width) / 72.0; }
static double text_in(const char *s, double width)
{
    size_t n = 0;
    for (; *s; s++) {
        if (s[0] == '#' && (s[1] == 'd' || s[1] == 'u')) { /* PLplot's sub/superscript: no width */
            s++;
            continue;
        }
        n += ((unsigned char)*s & 0xC0) != 0x80; /* characters, not UTF-8 bytes */
    }
    return (double)n * 0.6 * legend_pt(width) / 72.0;
}

/* The name of m for people, PLplot text: its label with the model's code
 * name typeset ("w0wa-flat (sn+bao)": "flat w0wa (SN+BAO)"). Returns buf. */
static const char *series_label(const lt_run_model *m, char *buf, size_t size)
{
    char model[96], lab[256];
    lt_report_model_label(m->name, LT_LABEL_PLOT, model, sizeof model);
    const char *at = m->label ? strstr(m->label, m->name) : NULL;
    if (!at) {
        snprintf(buf, size, "%s", m->label ? m->label : model);
        return buf;
    }
    snprintf(lab, sizeof lab, "%.*s%s%s", (int)(at - m->label), m->label, model,
             at + strlen(m->name));
    /* the probes in capitals, as papers name them */
    char *open = strchr(lab, '(');
    if (m->probes && open && !strncmp(open + 1, m->probes, strlen(m->probes)))
        for (char *c = open + 1; *c && *c != ')'; c++)
            *c = (char)(*c >= 'a' && *c <= 'z' ? *c - 'a' + 'A' : *c);
    snprintf(buf, size, "%s", lab);
    return buf;
}

/* The models one figure shows: those of one name. From several runs
 * (lantern report RUN1 RUN2) they are overlaid, each in its colour with a
 * legend naming it. */
#define MAX_OVERLAY 16
typedef struct {
    const lt_run_model *models; /* all the report's models */
    size_t idx[MAX_OVERLAY];    /* the members (colours follow the index) */
    size_t k;
    double width;               /* the page's width, inches */
    const lt_plot_opts *opts;   /* lantern plot's choices, or NULL */
} model_group;

#define MEMBER(g, j) (&(g)->models[(g)->idx[j]])

/* Member j's legend label: lantern plot's, or its own typeset. */
static const char *member_label(const model_group *g, size_t j, char *buf, size_t size)
{
    if (g->opts && g->opts->labels && g->opts->labels[j]) {
        snprintf(buf, size, "%s", g->opts->labels[j]);
        return buf;
    }
    return series_label(MEMBER(g, j), buf, size);
}

/* lantern plot's override for name in a list, or NULL. */
static const lt_plot_text *axis_of(const model_group *g, const char *name)
{
    for (size_t i = 0; g->opts && i < g->opts->naxis; i++)
        if (!strcmp(g->opts->axis[i].name, name))
            return &g->opts->axis[i];
    return NULL;
}

/* The axis label of name: lantern plot's, or the typeset name. */
static const char *axis_label(const model_group *g, const char *name, char *buf, size_t size)
{
    const lt_plot_text *t = axis_of(g, name);
    return t ? t->text : pk_param_label(name, buf, size);
}

/* The truth of name (lantern plot --truth), or NaN. */
static double truth_of(const model_group *g, const char *name)
{
    for (size_t i = 0; g->opts && i < g->opts->ntruth; i++)
        if (!strcmp(g->opts->truth[i].name, name))
            return g->opts->truth[i].value;
    return NAN;
}

static int show_best(const model_group *g) { return !(g->opts && g->opts->no_best); }

/* Member j's colour: its model's alone, its place among several (the
 * combinations of probes of a run then keep one colour each in every
 * figure, whatever the model). */
static int member_colour(const model_group *g, size_t j)
{
    return pk_series_colour(g->k > 1 ? j : g->idx[j]);
}

/* The plotting range of parameter name over the members that have it,
 * holding every member's best fit inside. */
static void group_range(const model_group *g, const char *name, double *lo, double *hi)
{
    for (size_t i = 0; g->opts && i < g->opts->nranges; i++)
        if (!strcmp(g->opts->ranges[i].name, name)) { /* the user's, as given */
            *lo = g->opts->ranges[i].lo, *hi = g->opts->ranges[i].hi;
            return;
        }
    *lo = INFINITY, *hi = -INFINITY;
    for (size_t j = 0; j < g->k; j++) {
        long c = pk_column(MEMBER(g, j), name);
        double a, b;
        if (c < 0)
            continue;
        pk_range(MEMBER(g, j), (size_t)c, 0, &a, &b);
        *lo = fmin(*lo, a), *hi = fmax(*hi, b);
    }
    if (!(*lo < *hi))
        *lo = 0, *hi = 1;
    for (size_t j = 0; show_best(g) && j < g->k; j++) {
        long c = pk_column(MEMBER(g, j), name);
        if (c >= 0)
            pk_range_hold(MEMBER(g, j)->best[c], lo, hi);
    }
    pk_range_hold(truth_of(g, name), lo, hi);
}

/* A legend's size in inches: one line per member (a swatch of its two
 * tints and edge, then its name), then the lines of note. */
static void legend_size(const model_group *g, const char *const *note, size_t nnote, double *w,
                        double *h)
{
    char lab[320];
    double li = line_in(g->width);
    *w = 0;
    for (size_t j = 0; j < g->k + nnote; j++)
        *w = fmax(*w, j < g->k ? text_in(member_label(g, j, lab, sizeof lab), g->width) +
                                     2.4 * li
                               : text_in(note[j - g->k], g->width) + 0.12);
    *h = (double)(g->k + nnote) * li + 0.08;
}

/* The legend with its top right corner at (x, y), inches. */
static void group_legend(const model_group *g, double x, double y, const char *const *note,
                         size_t nnote)
{
    double w, h, li = line_in(g->width);
    char lab[320];
    legend_size(g, note, nnote, &w, &h);
    pk_viewport(x - w, x, y - h, y);
    plwind(0, w, -h, 0);
    pk_font(legend_pt(g->width));
    double ly = -0.04 - 0.5 * li;
    for (size_t j = 0; j < g->k + nnote; j++, ly -= li) {
        plcol0(PK_INK);
        if (j >= g->k) {
            plptex(0.06, ly, 1, 0, 0, note[j - g->k]);
            continue;
        }
        int rgb[3], col = member_colour(g, j);
        pk_rgb(col, rgb);
        plscol0(PK_FILL, (int)lround(255 - 0.55 * (255 - rgb[0])),
                (int)lround(255 - 0.55 * (255 - rgb[1])), (int)lround(255 - 0.55 * (255 - rgb[2])));
        double s = 0.6 * li, mid = ly - 0.12 * li; /* the swatch at the text's x-height */
        PLFLT sx[4] = {0.06, 0.06 + 2 * s, 0.06 + 2 * s, 0.06},
              sy[4] = {mid - s / 2, mid - s / 2, mid + s / 2, mid + s / 2};
        plcol0(PK_FILL);
        plfill(4, sx, sy);
        plcol0(col);
        pk_width(1.2);
        plline(4, sx, sy);
        pk_width(0.6);
        plcol0(PK_INK);
        plptex(0.1 + 2 * s, ly, 1, 0, 0, member_label(g, j, lab, sizeof lab));
    }
}

/* Every member's regions of columns xn, yn in the current window: all the
 * fills first, the widest underneath (so that the narrow ones, the
 * combinations of most probes, lie on top), then all the edges, so that
 * each stays in view. */
static void group_regions(const model_group *g, const char *xn, const char *yn)
{
    /* each member's density once, for its area, its fills and its edges */
    pk_density *dens[MAX_OVERLAY];
    size_t order[MAX_OVERLAY];
    double area[MAX_OVERLAY];
    for (size_t j = 0; j < g->k; j++) {
        long jx = pk_column(MEMBER(g, j), xn), jy = pk_column(MEMBER(g, j), yn);
        dens[j] = jx >= 0 && jy >= 0 ? pk_density_of(MEMBER(g, j), (size_t)jx, (size_t)jy) : NULL;
        area[j] = pk_density_area(dens[j]);
        size_t at = j;
        for (; at > 0 && area[order[at - 1]] < area[j]; at--)
            order[at] = order[at - 1];
        order[at] = j;
    }
    for (unsigned part = PK_PART_FILL; part <= PK_PART_LINES; part <<= 1)
        for (size_t o = 0; o < g->k; o++)
            if (dens[order[o]])
                pk_density_draw(dens[order[o]], member_colour(g, order[o]), part);
    for (size_t j = 0; j < g->k; j++)
        free(dens[j]);
}

/* Every member's best fit of columns xn, yn as a cross (in ink for one
 * member, in its colour among several), unless lantern plot leaves them out. */
static void group_best_marks(const model_group *g, const char *xn, const char *yn)
{
    for (size_t j = 0; show_best(g) && j < g->k; j++) {
        const lt_run_model *mj = MEMBER(g, j);
        long jx = pk_column(mj, xn), jy = pk_column(mj, yn);
        if (jx < 0 || jy < 0 || !isfinite(mj->best[jx]) || !isfinite(mj->best[jy]))
            continue;
        plcol0(g->k > 1 ? member_colour(g, j) : PK_INK);
        pk_font(PK_PT_LABEL);
        plstring(1, &mj->best[jx], &mj->best[jy], "×");
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

/* The page of a posterior matrix of d parameters at width w: square, or
 * a strip for one parameter. */
/* The notes under a legend: what is shaded, and the marks drawn. */
static size_t marks_note(const model_group *g, const char **note)
{
    size_t n = 0;
    note[n++] = "shaded: 68.27%, 95.45%";
    note[n++] = "of the posterior mass";
    int best = 0;
    for (size_t j = 0; show_best(g) && j < g->k; j++)
        for (size_t c = 0; c < MEMBER(g, j)->nparams; c++)
            best |= isfinite(MEMBER(g, j)->best[c]);
    if (best)
        note[n++] = "×: best fit";
    if (g->opts && g->opts->ntruth)
        note[n++] = "+: truth";
    return n;
}

static double matrix_base(size_t d, double w) { return d < 2 ? 0.62 * w : w - 0.24; }

/* Room above a matrix for its legend, in inches: none when the legend fits
 * in the empty upper right (right of the first column, beside the strip
 * for one parameter), else its height (two parameters in one column). */
static double matrix_legend_room(const model_group *g, size_t d, size_t nnote)
{
    const char *note[4] = {"shaded: 68.27%, 95.45%", "of the posterior mass", "", ""};
    double W = g->width, lw, lh;
    legend_size(g, note, nnote, &lw, &lh);
    double side = fmin((W - 0.82) / (double)d, (matrix_base(d, W) - 0.58) / (double)d);
    double room = d < 2 ? W - 0.12 - (0.7 + side * 0.55) : W - 0.12 - (0.7 + side);
    return lw <= room && (d >= 2 || lh <= matrix_base(d, W) - 0.2) ? 0.0 : lh + 0.06;
}

static double matrix_height(const model_group *g, size_t d)
{
    const char *note[4];
    return matrix_base(d, g->width) + matrix_legend_room(g, d, marks_note(g, note));
}


/* The parameters a matrix shows: lantern plot's, or the members'. */
static size_t shown_params(const model_group *g, const char **names)
{
    if (!g->opts || !g->opts->nparams)
        return group_params(g, names);
    size_t d = g->opts->nparams < LT_MAX_FREE ? g->opts->nparams : LT_MAX_FREE;
    for (size_t i = 0; i < d; i++)
        names[i] = g->opts->params[i];
    return d;
}

/* A truth's marks in the current window: a dotted line on a marginal, a
 * "+" at the pair (dotted lines where only one of the two is known). */
static void truth_marks(double tx, double ty, double x0, double x1, double y0, double y1)
{
    plcol0(PK_INK);
    pllsty(3);
    pk_width(0.6);
    if (isfinite(tx)) {
        PLFLT lx[2] = {tx, tx}, ly[2] = {y0, y1};
        plline(2, lx, ly);
    }
    if (isfinite(ty)) {
        PLFLT lx[2] = {x0, x1}, ly[2] = {ty, ty};
        plline(2, lx, ly);
    }
    pllsty(1);
    if (isfinite(tx) && isfinite(ty)) {
        pk_font(PK_PT_TITLE);
        plstring(1, &tx, &ty, "+");
    }
}

static void draw_posterior(const void *p)
{
    const model_group *g = p;
    const char *names[LT_MAX_FREE], *note[4];
    size_t d = shown_params(g, names), nnote = marks_note(g, note);
    double lo[LT_MAX_FREE], hi[LT_MAX_FREE];
    for (size_t i = 0; i < d; i++)
        group_range(g, names[i], &lo[i], &hi[i]);
    double W = g->width, room = matrix_legend_room(g, d, nnote);
    double H = g->opts && g->opts->height_in > 0 ? g->opts->height_in : matrix_height(g, d);
    double left = 0.7, bottom = 0.5, top = 0.08 + room, right = 0.12;
    double side = fmin((W - left - right) / (double)d, (H - top - bottom) / (double)d);
    int nl = side > 1.6 ? 4 : side > 0.95 ? 3 : 2; /* tick labels a panel */
    char lab[160];
    for (size_t r = 0; r < d; r++)
        for (size_t c = 0; c <= r; c++) {
            double x0 = left + (double)c * side, y1 = H - top - (double)r * side;
            pk_viewport(x0 + 0.025, x0 + side - 0.025, y1 - side + 0.025, y1 - 0.025);
            const char *xo = r == d - 1 ? "bcnst" : "bcst", *yo = c == 0 && r > 0 ? "bcnstv" : "bcst";
            double xs = pk_tick_step(lo[c], hi[c], nl), ys = pk_tick_step(lo[r], hi[r], nl);
            pk_font(PK_PT_TICK);
            plcol0(PK_INK);
            if (r == c)
                plwind(lo[c], hi[c], 0, 1.08);
            else
                plwind(lo[c], hi[c], lo[r], hi[r]);
            if (r != c) {
                group_regions(g, names[c], names[r]);
                group_best_marks(g, names[c], names[r]);
            }
            for (size_t j = 0; r == c && j < g->k; j++) {
                const lt_run_model *mj = MEMBER(g, j);
                long cx = pk_column(mj, names[c]);
                int col = member_colour(g, j);
                if (cx < 0)
                    continue;
                pk_marginal(mj, (size_t)cx, col);
                /* the best fit in ink for one model, in its colour among several */
                PLFLT bx[2] = {mj->best[cx], mj->best[cx]}, by[2] = {0, 1.08};
                plcol0(g->k > 1 ? col : PK_INK);
                pllsty(2);
                if (show_best(g) && isfinite(mj->best[cx]))
                    plline(2, bx, by);
                pllsty(1);
            }
            if (r == c)
                truth_marks(truth_of(g, names[c]), NAN, lo[c], hi[c], 0, 1.08);
            else
                truth_marks(truth_of(g, names[c]), truth_of(g, names[r]), lo[c], hi[c], lo[r],
                            hi[r]);
            plcol0(PK_INK);
            pk_font(PK_PT_TICK);
            if (r == c)
                pk_box_inner(xo, xs, "bc", 0);
            else
                pk_box_inner(xo, xs, yo, ys);
            pk_font(PK_PT_LABEL);
            if (r == d - 1)
                plmtex("b", 2.6, 0.5, 0.5, axis_label(g, names[c], lab, sizeof lab));
            if (c == 0 && r > 0)
                plmtex("l", 5.0, 0.5, 0.5, axis_label(g, names[r], lab, sizeof lab));
        }
    /* the legend in the empty upper right, or above the matrix */
    group_legend(g, W - right, H - top - 0.05 + room, note, nnote);
}

/* ---- traces ---- */
typedef struct {
    const lt_run_model *m;
    double width;
} trace_ctx;

static double traces_height(size_t d) { return 0.5 + 0.9 * (double)(d < 1 ? 1 : d); }

static void draw_traces(const void *p)
{
    const trace_ctx *t = p;
    const lt_run_model *m = t->m;
    size_t d = m->nparams, nc = m->nparams + m->nderived, n = m->ndraws;
    /* rows of thinned files stand for step_every steps each: x is the step */
    double every = m->step_every ? (double)m->step_every : 1.0;
    double H = traces_height(d), row = 0.9;
    size_t stride = n > 4000 ? n / 4000 : 1; /* at most 4000 points per chain */
    PLFLT *x = malloc((n / stride + 1) * sizeof *x), *y = malloc((n / stride + 1) * sizeof *y);
    char lab[160];
    for (size_t k = 0; x && y && k < d; k++) {
        double lo, hi;
        pk_range(m, k, 1, &lo, &hi); /* the span of the draws as sampled */
        double top = H - 0.1 - (double)k * row;
        pk_viewport(0.75, t->width - 0.12, top - row + 0.06, top);
        plwind(1, (double)(n - 1) * every + 1, lo, hi);
        for (size_t c = 0; c < m->nchains; c++) {
            size_t j = 0;
            for (size_t i = 0; i < n; i += stride, j++) {
                x[j] = (double)i * every + 1;
                y[j] = m->draws[(c * n + i) * nc + k];
            }
            plcol0(pk_series_colour(c));
            pk_width(0.4);
            plline((PLINT)j, x, y);
        }
        pk_width(0.6);
        plcol0(PK_INK);
        pk_font(PK_PT_TICK);
        pk_box(k == d - 1 ? "bcnst" : "bcst", 0, "bcnstv", pk_tick_step(lo, hi, 3));
        pk_font(PK_PT_LABEL);
        plmtex("l", 4.6, 0.5, 0.5, pk_param_label(m->names[k], lab, sizeof lab));
    }
    plcol0(PK_INK);
    pk_font(PK_PT_LABEL);
    /* the draws as sampled: a trace shows how a chain moved, which
     * importance weights do not change, so it leaves them out */
    plmtex("b", 2.6, 0.5, 0.5,
           m->independent ? "draw, in the order drawn (weights not shown)"
           : m->weighted  ? "step after warm-up, one colour a chain (weights not shown)"
                          : "step after warm-up, one colour a chain");
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
    int w0 = pk_column(m, "w0") >= 0, wa = pk_column(m, "wa") >= 0,
        om = pk_column(m, "omega_m") >= 0;
    if (w0 && wa)
        return PLANE_W0WA;
    if (m->model && !m->model->flat && om && pk_column(m, "omega_de") >= 0)
        return PLANE_CURVED;
    return w0 && om ? PLANE_OMW : PLANE_NONE;
}

static double plane_height(double w) { return 0.8 * w; }

/* Text along the line from (ax, ay) to (bx, by) at the point a fraction f
 * of the way along the part of it inside the window, set just above it,
 * right-aligned so that it runs back along the line and stays inside. */
static void line_note(double ax, double ay, double bx, double by, double x0, double x1, double y0,
                      double y1, const char *text)
{
    /* the part of the segment inside the window, by sampling */
    double t0 = -1, t1 = -1;
    for (int k = 0; k <= 400; k++) {
        double t = k / 400.0, x = ax + t * (bx - ax), y = ay + t * (by - ay);
        if (x > x0 && x < x1 && y > y0 && y < y1) {
            if (t0 < 0)
                t0 = t;
            t1 = t;
        }
    }
    if (t0 < 0)
        return; /* the line misses the window */
    double t = t0 + 0.92 * (t1 - t0), x = ax + t * (bx - ax), y = ay + t * (by - ay);
    /* plptex writes along (dx, dy) in world units, the window's aspect allowed for */
    plptex(x, y + 0.012 * (y1 - y0), bx - ax, by - ay, 1.0, text);
}

static void draw_plane(const void *p)
{
    const model_group *g = p;
    const lt_run_model *m = MEMBER(g, 0);
    plane_kind kind = plane_of(m);
    static const char *const cols[][2] = {
        {"", ""}, {"w0", "wa"}, {"omega_m", "omega_de"}, {"omega_m", "w0"}};
    const char *xn = cols[kind][0], *yn = cols[kind][1];
    double x0, x1, y0, y1;
    group_range(g, xn, &x0, &x1);
    group_range(g, yn, &y0, &y1);
    if (kind == PLANE_W0WA) /* make sure w = -1 is in view */
        x0 = fmin(x0, -1.1), x1 = fmax(x1, -0.9), y0 = fmin(y0, -0.2), y1 = fmax(y1, 0.2);
    if (kind == PLANE_OMW)
        y0 = fmin(y0, -1.1), y1 = fmax(y1, -0.9);
    double W = g->width, H = plane_height(W), lw, lh;
    char xl[160], yl[160];
    static const char *const note[] = {"shaded: 68.27%, 95.45% of the posterior mass"};
    legend_size(g, note, 1, &lw, &lh);
    /* the legend above the frame, where no region can lie under it */
    pk_viewport(0.62, W - 0.15, 0.48, H - 0.06 - lh);
    plwind(x0, x1, y0, y1);
    group_regions(g, xn, yn);
    /* the cosmological constant, and for curved models flatness and
     * q0 = 0 (for w = -1: q0 = Omega_m / 2 - Omega_DE) */
    plcol0(PK_BAR);
    pk_width(0.6);
    pk_font(PK_PT_TICK);
    if (kind == PLANE_W0WA || kind == PLANE_OMW) {
        PLFLT lx[2] = {-1, -1}, ly[2] = {y0, y1}, hx[2] = {x0, x1}, hy[2] = {0, 0};
        PLFLT cy[2] = {-1, -1};
        pllsty(3);
        if (kind == PLANE_W0WA) {
            plline(2, lx, ly);
            plline(2, hx, hy);
        } else
            plline(2, hx, cy);
        pllsty(1);
        plcol0(PK_DATA);
        if (kind == PLANE_W0WA) {
            PLFLT px = -1, py = 0;
            plstring(1, &px, &py, "●");
            plptex(-1 + 0.03 * (x1 - x0), 0.03 * (y1 - y0), 1, 0, 0, "ΛCDM");
        } else
            plptex(x0 + 0.02 * (x1 - x0), -1 + 0.02 * (y1 - y0), 1, 0, 0, "w = −1 (Λ)");
    } else {
        PLFLT fx[2] = {x0, x1}, fy[2] = {1 - x0, 1 - x1}, ay[2] = {x0 / 2, x1 / 2};
        pllsty(2);
        plline(2, fx, fy);
        pllsty(3);
        plline(2, fx, ay);
        pllsty(1);
        plcol0(PK_DATA);
        line_note(x0, 1 - x0, x1, 1 - x1, x0, x1, y0, y1, "flat");
        line_note(x0, x0 / 2, x1, x1 / 2, x0, x1, y0, y1, "q#d0#u = 0 (Λ): accelerating above");
    }
    group_best_marks(g, xn, yn); /* over everything */
    plcol0(PK_INK);
    pk_font(PK_PT_TICK);
    pk_box("bcnst", pk_tick_step(x0, x1, 5), "bcnstv", pk_tick_step(y0, y1, 5));
    pk_font(PK_PT_LABEL);
    plmtex("b", 2.6, 0.5, 0.5, pk_param_label(xn, xl, sizeof xl));
    plmtex("l", 4.2, 0.5, 0.5, pk_param_label(yn, yl, sizeof yl));
    group_legend(g, W - 0.15, H - 0.04, note, 1);
}

/* ---- the Hubble diagram ---- */
typedef struct {
    const lt_run_model *models;
    size_t n;
    const lt_survey *s;
    double width;
} hubble_ctx;

static double hubble_height(double w) { return w < 5 ? 0.9 * w : 0.64 * w; }

/* mu(z) of model m's best fit at n redshifts (zhel may be NULL: = z). */
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

/* Points with error bars: few (up to 150) as dark dots on dark bars that a
 * reader can count, many as small dots on pale bars. */
static void data_points(size_t n, const PLFLT *x, const PLFLT *y, const PLFLT *lo,
                        const PLFLT *hi)
{
    int few = n <= 150;
    plcol0(few ? PK_DATA : PK_BAR);
    pk_width(few ? 0.7 : 0.35);
    plerry((PLINT)n, x, lo, hi);
    pk_width(0.6);
    plcol0(PK_DATA);
    pk_font(few ? 6.0 : 5.0);
    plstring((PLINT)n, x, y, few ? "●" : "•");
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
    PLFLT *lz = malloc(n * sizeof *lz), *y0 = malloc(n * sizeof *y0), *y1 = malloc(n * sizeof *y1);
    double zmin = INFINITY, zmax = 0;
    enum { NG = 200 };
    double zg[NG], mg[NG], mg_ref[NG];
    PLFLT lg[NG];
    char text[256], lab[160];
    if (!mu || !err || !mref || !lz || !y0 || !y1)
        goto done;
    lt_cov_diagonal(s->cov, err);
    for (size_t i = 0; i < n; i++) {
        double sd = sqrt(err[i]);
        mu[i] = dl ? 5 * log10(s->obs[i]) + 25 : s->obs[i] - off;
        err[i] = dl ? 5 / log(10.0) * sd / s->obs[i] : sd;
        zmin = fmin(zmin, s->z[i]), zmax = fmax(zmax, s->z[i]);
    }
    for (int k = 0; k < NG; k++) {
        zg[k] = zmin * 0.9 * pow(zmax * 1.1 / (zmin * 0.9), k / (NG - 1.0));
        lg[k] = log10(zg[k]);
    }
    if (model_mu(ref, n, s->z, s->zhel, mref) || model_mu(ref, NG, zg, NULL, mg_ref))
        goto done;
    double lx0 = log10(zmin * 0.9), lx1 = log10(zmax * 1.1);
    double ylo = INFINITY, yhi = -INFINITY, rlo = INFINITY, rhi = -INFINITY;
    for (size_t i = 0; i < n; i++) {
        ylo = fmin(ylo, mu[i] - err[i]), yhi = fmax(yhi, mu[i] + err[i]);
        double r = mu[i] - mref[i];
        rlo = fmin(rlo, r - err[i]), rhi = fmax(rhi, r + err[i]);
    }
    double rr = fmin(fmax(fabs(rlo), fabs(rhi)), 1.5);
    double W = h->width, H = hubble_height(W), split = 0.48 + 0.3 * (H - 0.6);
    /* top: the diagram */
    pk_viewport(0.7, W - 0.12, split + 0.04, H - 0.1);
    double span = yhi - ylo;
    plwind(lx0, lx1, ylo - 0.05 * span, yhi + 0.05 * span);
    for (size_t i = 0; i < n; i++)
        lz[i] = log10(s->z[i]), y0[i] = mu[i] - err[i], y1[i] = mu[i] + err[i];
    data_points(n, lz, mu, y0, y1);
    for (size_t m = 0; m < h->n; m++) {
        if (model_mu(&h->models[m], NG, zg, NULL, mg))
            continue;
        /* the data are m - M of the first model; another model's curve is
         * moved by its own offset's difference, so it meets the data */
        double shift = mag && isfinite(h->models[m].offset_best) ? h->models[m].offset_best - off : 0;
        for (int k = 0; k < NG; k++)
            mg[k] += shift;
        plcol0(pk_series_colour(m));
        pk_width(1.2);
        pllsty(1 + (int)(m % 4));
        plline(NG, lg, mg);
        pllsty(1);
    }
    pk_width(0.6);
    plcol0(PK_INK);
    pk_font(PK_PT_TICK);
    pk_box("bclst", 0, "bcnstv", pk_tick_step(ylo, yhi, 5));
    pk_font(PK_PT_LABEL);
    plmtex("l", 4.4, 0.5, 0.5, mag ? "μ = m − M#dbest#u [mag]" : "μ [mag]");
    /* the legend, top left, above the data (which climb from lower left
     * to upper right): line style, model, chi2; then what the residuals
     * are measured from */
    double li = line_in(W), lh = (double)(h->n + 1) * li + 0.06, top_in = H - 0.1 - 0.04;
    pk_viewport(0.7 + 0.05, W - 0.12, top_in - lh, top_in);
    plwind(0, W - 0.87, -lh, 0);
    pk_font(legend_pt(W));
    for (size_t m = 0; m <= h->n; m++) {
        double ly = -0.03 - (0.5 + (double)m) * li;
        plcol0(PK_INK);
        if (m == h->n) {
            snprintf(text, sizeof text, W < 5 ? "Δμ: from %s" : "Δμ below: data − best fit of %s",
                     series_label(ref, lab, sizeof lab));
            plptex(0.02, ly, 1, 0, 0, text);
            break;
        }
        PLFLT sx[2] = {0.02, 0.02 + 2.2 * li}, sy[2] = {ly - 0.12 * li, ly - 0.12 * li};
        plcol0(pk_series_colour(m));
        pk_width(1.2);
        pllsty(1 + (int)(m % 4));
        plline(2, sx, sy);
        pllsty(1);
        pk_width(0.6);
        plcol0(PK_INK);
        /* one column has no room for chi2 beside the data: the tables give it */
        if (W < 5)
            series_label(&h->models[m], text, sizeof text);
        else
            snprintf(text, sizeof text, "%s (χ#u2#d#dmin#u = %.1f)",
                     series_label(&h->models[m], lab, sizeof lab), h->models[m].chi2_min);
        plptex(0.1 + 2.2 * li, ly, 1, 0, 0, text);
    }
    /* bottom: residuals against the first model */
    pk_viewport(0.7, W - 0.12, 0.45, split - 0.02);
    plwind(lx0, lx1, -rr * 1.1, rr * 1.1);
    for (size_t i = 0; i < n; i++) {
        double r = mu[i] - mref[i];
        y0[i] = r - err[i], y1[i] = r + err[i], mu[i] = r;
    }
    data_points(n, lz, mu, y0, y1);
    for (size_t m = 0; m < h->n; m++) {
        if (model_mu(&h->models[m], NG, zg, NULL, mg))
            continue;
        double shift = mag && isfinite(h->models[m].offset_best) ? h->models[m].offset_best - off : 0;
        for (int k = 0; k < NG; k++)
            mg[k] += shift - mg_ref[k];
        plcol0(pk_series_colour(m));
        pk_width(1.2);
        pllsty(1 + (int)(m % 4));
        plline(NG, lg, mg);
        pllsty(1);
    }
    pk_width(0.6);
    plcol0(PK_INK);
    pk_font(PK_PT_TICK);
    pk_box("bclnst", 0, "bcnstv", pk_tick_step(-rr, rr, 3));
    pk_font(PK_PT_LABEL);
    plmtex("b", 2.9, 0.5, 0.5, "redshift z");
    plmtex("l", 4.4, 0.5, 0.5, "Δμ [mag]");
done:
    free(lz);
    free(y0);
    free(y1);
    free(mu);
    free(err);
    free(mref);
}

int lt_report_write_figures(const char *dir, const lt_run_model *models, size_t n,
                            const lt_survey *s, double width_in, lt_error *err)
{
    if (n == 0 || !models)
        return lt_error_set(err, LT_EINPUT, dir, 0, "a report needs at least one model");
    double W = width_in > 0 ? width_in : LT_FIGURE_DOUBLE_IN;
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
    hubble_ctx h = {shown, ns, s, W};
    const unsigned both = PK_PNG | PK_PDF;
    /* a light-curve table's magnitudes are not distances until standardised:
     * its Hubble diagram needs the standardised mu, not drawn yet */
    int rc = s && s->kind != LT_OBS_MB
                 ? pk_figure(dir, "hubble", both, W, hubble_height(W), draw_hubble, &h, err)
                 : LT_OK;
    for (size_t i = 0; !rc && i < n; i++) {
        /* the models of this name: the figures of the first one show them all */
        model_group g = {models, {0}, 0, W, NULL};
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
        if (!seen) {
            snprintf(name, sizeof name, "posterior_%s", models[i].name);
            rc = pk_figure(dir, name, both, W, matrix_height(&g, dg), draw_posterior, &g, err);
            if (!rc && plane_of(&models[i]) != PLANE_NONE) {
                snprintf(name, sizeof name, "plane_%s", models[i].name);
                rc = pk_figure(dir, name, both, W, plane_height(W), draw_plane, &g, err);
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
            trace_ctx t = {&models[i], W};
            rc = pk_figure(dir, name, both, W, traces_height(d), draw_traces, &t, err);
        }
    }
    return rc;
}

/* ---- lantern plot ---- */

/* A pair figure's height: the plane's, and room above for the legend. */
static double pair_height(const model_group *g, size_t nnote)
{
    double lw, lh;
    const char *note[4] = {"", "", "", ""};
    legend_size(g, note, nnote, &lw, &lh);
    return plane_height(g->width) + lh;
}

/* One 2-D panel of the pair of parameters lantern plot names: every
 * model's regions, widest first, marks, and the legend above the frame. */
static void draw_pair(const void *p)
{
    const model_group *g = p;
    const char *xn = g->opts->params[0], *yn = g->opts->params[1], *note[4];
    size_t nnote = marks_note(g, note);
    double x0, x1, y0, y1, lw, lh;
    group_range(g, xn, &x0, &x1);
    group_range(g, yn, &y0, &y1);
    double W = g->width;
    legend_size(g, note, nnote, &lw, &lh);
    double H = g->opts->height_in > 0 ? g->opts->height_in : pair_height(g, nnote);
    pk_viewport(0.7, W - 0.15, 0.48, H - 0.06 - lh);
    plwind(x0, x1, y0, y1);
    group_regions(g, xn, yn);
    group_best_marks(g, xn, yn);
    truth_marks(truth_of(g, xn), truth_of(g, yn), x0, x1, y0, y1);
    char xl[160], yl[160];
    plcol0(PK_INK);
    pk_font(PK_PT_TICK);
    pk_box("bcnst", pk_tick_step(x0, x1, 5), "bcnstv", pk_tick_step(y0, y1, 5));
    pk_font(PK_PT_LABEL);
    plmtex("b", 2.6, 0.5, 0.5, axis_label(g, xn, xl, sizeof xl));
    plmtex("l", 5.0, 0.5, 0.5, axis_label(g, yn, yl, sizeof yl));
    group_legend(g, W - 0.15, H - 0.04, note, nnote);
}

/* Does some member have column name? */
static int group_has(const model_group *g, const char *name)
{
    for (size_t j = 0; j < g->k; j++)
        if (pk_column(MEMBER(g, j), name) >= 0)
            return 1;
    return 0;
}

/* Is name among the parameters drawn? */
static int drawn(const char *const *names, size_t d, const char *name)
{
    for (size_t i = 0; i < d; i++)
        if (!strcmp(names[i], name))
            return 1;
    return 0;
}

int lt_report_plot(const char *path, const lt_run_model *models, size_t n,
                   const lt_plot_opts *o, lt_error *err)
{
    static const lt_plot_opts none = {0};
    if (!o)
        o = &none;
    size_t len = strlen(path);
    pk_format fmt = len > 4 && !strcasecmp(path + len - 4, ".pdf")   ? PK_PDF
                    : len > 4 && !strcasecmp(path + len - 4, ".png") ? PK_PNG
                                                                     : 0;
    if (!fmt)
        return lt_error_set(err, LT_EINPUT, path, 0, "the figure's name must end in .pdf or .png");
    if (n == 0 || n > LT_PLOT_MAX_SERIES)
        return lt_error_set(err, LT_EINPUT, path, 0, "%zu sets of draws: give 1 to %d", n,
                            LT_PLOT_MAX_SERIES);
    model_group g = {models, {0}, n, o->width_in > 0 ? o->width_in : LT_FIGURE_DOUBLE_IN, o};
    for (size_t j = 0; j < n; j++)
        g.idx[j] = j;
    const char *names[LT_MAX_FREE];
    size_t d = shown_params(&g, names);
    if (o->nparams > LT_MAX_FREE)
        return lt_error_set(err, LT_EINPUT, path, 0, "at most %d parameters in one figure",
                            LT_MAX_FREE);
    if (d == 0)
        return lt_error_set(err, LT_EINPUT, path, 0, "no parameter to draw");
    for (size_t i = 0; i < d; i++)
        if (!group_has(&g, names[i])) {
            char have[512] = "";
            for (size_t c = 0; c < models[0].nparams + models[0].nderived; c++)
                snprintf(have + strlen(have), sizeof have - strlen(have), "%s%s", c ? ", " : "",
                         models[0].names[c]);
            return lt_error_set(err, LT_EINPUT, names[i], 0,
                                "no set of draws has this parameter (the first has %s)", have);
        }
    for (size_t i = 0; i < o->nranges; i++)
        if (!drawn(names, d, o->ranges[i].name) || !(o->ranges[i].lo < o->ranges[i].hi))
            return lt_error_set(err, LT_EINPUT, o->ranges[i].name, 0,
                                !(o->ranges[i].lo < o->ranges[i].hi)
                                    ? "a range needs LO < HI"
                                    : "a range for a parameter that is not drawn");
    for (size_t i = 0; i < o->naxis; i++)
        if (!drawn(names, d, o->axis[i].name))
            return lt_error_set(err, LT_EINPUT, o->axis[i].name, 0,
                                "a label for a parameter that is not drawn");
    if (o->pair && d != 2)
        return lt_error_set(err, LT_EINPUT, path, 0,
                            "a pair figure draws two parameters (%zu given)", d);
    /* a column that cannot be smoothed would leave its panels blank */
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < d; i++) {
            long c = pk_column(&models[j], names[i]);
            const char *why;
            if (c >= 0 && !pk_can_smooth(&models[j], (size_t)c, &why))
                return lt_error_set(err, LT_EINPUT, models[j].label, 0,
                                    "%s cannot be drawn: %s", names[i], why);
        }
    const char *note[4];
    double h = o->height_in > 0 ? o->height_in
               : o->pair        ? pair_height(&g, marks_note(&g, note))
                                : matrix_height(&g, d);
    return pk_write(path, fmt, g.width, h, o->pair ? draw_pair : draw_posterior, &g, err);
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
    char lab[160];
    size_t np = b->np;
    pk_font(PK_PT_TICK);
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
        plcol0(PK_INK);
        plwind(lo, hi, 0, 1.15 * (peak > 0 ? peak : 1));
        pk_box("bcnst", 0, k == 0 ? "bcnstv" : "bcst", 0);
        plcol0(PK_SERIES);
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
        plcol0(PK_INK);
        pllsty(2);
        plline(81, gx, gy);
        pllsty(1);
        plmtex("b", 3.0, 0.5, 0.5, "pull (estimate − truth) / σ");
        if (k == 0)
            plmtex("l", 3.5, 0.5, 0.5, "realizations");
        char t[160], mean[32];
        snprintf(t, sizeof t, "%s: mean %s, width %.2f", pk_param_label(p->name, lab, sizeof lab),
                 pk_number(p->pull_mean, 2, mean, sizeof mean), p->pull_width);
        plmtex("t", 0.8, 0.5, 0.5, t);
    }
    /* bottom: coverage of the 68% and 95% intervals with their binomial errors */
    plvpor(left, right, 0.10, 0.42);
    plcol0(PK_INK);
    plwind(0.5, (double)np + 0.5, 0.4, 1.02);
    pk_box("bc", 0, "bcnstv", 0);
    const double nominal[2] = {b->p[0].nominal68, b->p[0].nominal95};
    for (int s = 0; s < 2; s++) {
        PLFLT hx[2] = {0.5, (double)np + 0.5}, hy[2] = {nominal[s], nominal[s]};
        plcol0(PK_BAR);
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
            plcol0(PK_SERIES + s);
            plline(2, ex, ey);
            plssym(0, 1.3);
            plpoin(1, &x, &y, s ? 4 : 17);
            plssym(0, 1.0);
        }
        plcol0(PK_INK);
        plmtex("b", 1.5, ((double)k + 0.5) / (double)np, 0.5, pk_param_label(p->name, lab, sizeof lab));
    }
    plcol0(PK_INK);
    plmtex("l", 3.5, 0.5, 0.5, "coverage");
    char caption[200];
    snprintf(caption, sizeof caption,
             "68%% (dot), 95%% (circle) intervals holding the truth; dashed: nominal %.4g, "
             "%.4g; bars: binomial errors",
             nominal[0], nominal[1]);
    plmtex("b", 3.2, 0.5, 0.5, caption);
    pk_font(PK_PT_TITLE);
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
    return pk_figure(dir, name, PK_PNG | PK_PDF, LT_FIGURE_DOUBLE_IN, 4.4, draw_bias, &b, err);
}

/* ---- forecasts: the Fisher ellipse of two parameters ---- */
typedef struct {
    const char *title, *xname, *yname;
    double x, y, cxx, cxy, cyy;
} ellipse_ctx;

static void draw_ellipse(const void *ctx)
{
    const ellipse_ctx *e = ctx;
    char lab[160];
    /* for two parameters jointly, the 68.3% and 95.4% regions of a Gaussian
     * are Delta chi2 = 2.30 and 6.18 (Press et al., Numerical Recipes, 3rd
     * ed., section 15.6, table) */
    const double dchi2[2] = {2.30, 6.18};
    double a = e->cxx, b = e->cxy, c = e->cyy;
    /* axes from the eigen-decomposition of [[a b][b c]] */
    double tr = 0.5 * (a + c), disc = sqrt(0.25 * (a - c) * (a - c) + b * b);
    double l1 = tr + disc, l2 = fmax(tr - disc, 0), ang = 0.5 * atan2(2 * b, a - c);
    double sx = sqrt(a * dchi2[1]) * 1.25, sy = sqrt(c * dchi2[1]) * 1.25;
    pk_font(PK_PT_TICK);
    plvpor(0.14, 0.95, 0.12, 0.90);
    plcol0(PK_INK);
    plwind(e->x - sx, e->x + sx, e->y - sy, e->y + sy);
    pk_box("bcnst", 0, "bcnstv", 0);
    for (int k = 0; k < 2; k++) {
        PLFLT px[201], py[201];
        double r1 = sqrt(l1 * dchi2[k]), r2 = sqrt(l2 * dchi2[k]);
        for (int j = 0; j <= 200; j++) {
            double t = 2 * M_PI * j / 200.0, u = r1 * cos(t), v = r2 * sin(t);
            px[j] = e->x + u * cos(ang) - v * sin(ang);
            py[j] = e->y + u * sin(ang) + v * cos(ang);
        }
        plcol0(PK_SERIES);
        pllsty(k ? 2 : 1);
        pk_width(1.2);
        plline(201, px, py);
        pk_width(0.6);
        pllsty(1);
    }
    PLFLT fx = e->x, fy = e->y;
    plcol0(PK_INK);
    plstring(1, &fx, &fy, "×");
    plmtex("b", 3.2, 0.5, 0.5, pk_param_label(e->xname, lab, sizeof lab));
    plmtex("l", 4.5, 0.5, 0.5, pk_param_label(e->yname, lab, sizeof lab));
    pk_font(PK_PT_LABEL);
    plmtex("t", 2.3, 0.5, 0.5, e->title);
    pk_font(PK_PT_TICK);
    plmtex("t", 0.8, 0.5, 0.5, "Fisher: 68.3% (solid), 95.4% (dashed); ×: fiducial");
}

int lt_report_write_ellipse(const char *dir, const char *name, const char *title,
                            const char *xname, const char *yname, double x, double y,
                            const double cov[4], lt_error *err)
{
    ellipse_ctx e = {title, xname, yname, x, y, cov[0], cov[1], cov[3]};
    return pk_figure(dir, name, PK_PNG | PK_PDF, LT_FIGURE_SINGLE_IN, 3.0, draw_ellipse, &e, err);
}
