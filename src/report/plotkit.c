/*
 * The figures' drawing kit: see plotkit.h.
 *
 * Pages go through PLplot's extcairo driver onto a cairo surface of our
 * own: a PDF surface in points, or an image surface scaled to 300 dots per
 * inch. PLplot then lays out one page of points for both, so the PNG is
 * the PDF's exact raster (pngcairo would set type and lines in pixels,
 * shrinking them at 300 dpi).
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cairo-pdf.h>
#include <cairo.h>
#include <plplot.h>

#include "lantern/file.h"
#include "lantern/posterior.h"
#include "plotkit.h"

static const int palette[][3] = {
    {255, 255, 255}, /* PK_BG */
    {0, 0, 0},       /* PK_INK */
    {0, 114, 178},   /* blue */
    {213, 94, 0},    /* vermillion */
    {0, 158, 115},   /* bluish green */
    {204, 121, 167}, /* reddish purple */
    {230, 159, 0},   /* orange */
    {86, 180, 233},  /* sky blue */
    {70, 70, 70},    /* PK_DATA */
    {150, 150, 150}, /* PK_BAR */
    {215, 215, 215}, /* PK_GRID */
};
#define NPAL (sizeof palette / sizeof palette[0])

int pk_series_colour(size_t i) { return PK_SERIES + (int)(i % PK_NSERIES); }

void pk_rgb(int c, int rgb[3])
{
    for (int k = 0; k < 3; k++)
        rgb[k] = c >= 0 && (size_t)c < NPAL ? palette[c][k] : 0;
}

/* PLplot's character height is in millimetres and its cairo drivers set
 * type 4/3 as large as that height in points (measured with pdftotext
 * -bbox on a page of known type: tests/e2e/test_figures.sh checks the
 * result), hence the 3/4. */
void pk_font(double pt) { plschr(pt * 0.75 * 25.4 / 72.0, 1.0); }

void pk_width(double pt) { plwidth(pt); }

void pk_viewport(double x0, double x1, double y0, double y1)
{
    plsvpa(x0 * 25.4, x1 * 25.4, y0 * 25.4, y1 * 25.4);
}

/* ---- pages ---- */

/* The PNG cairo makes, collected in memory. */
typedef struct {
    unsigned char *data;
    size_t n, cap;
} png_buf;

static cairo_status_t png_append(void *ctx, const unsigned char *data, unsigned int len)
{
    png_buf *b = ctx;
    if (b->n + len > b->cap) {
        size_t cap = 2 * (b->n + len);
        unsigned char *d = realloc(b->data, cap);
        if (!d)
            return CAIRO_STATUS_NO_MEMORY;
        b->data = d, b->cap = cap;
    }
    memcpy(b->data + b->n, data, len);
    b->n += len;
    return CAIRO_STATUS_SUCCESS;
}

/* CRC-32 of PNG chunks (ISO 3309 polynomial, reflected; the PNG
 * specification, annex D). */
static unsigned long crc32_png(const unsigned char *p, size_t n)
{
    unsigned long c = 0xffffffffUL;
    for (size_t i = 0; i < n; i++) {
        c ^= p[i];
        for (int k = 0; k < 8; k++)
            c = c & 1 ? 0xedb88320UL ^ (c >> 1) : c >> 1;
    }
    return c ^ 0xffffffffUL;
}

static void put32(unsigned char *p, unsigned long v)
{
    p[0] = (unsigned char)(v >> 24), p[1] = (unsigned char)(v >> 16);
    p[2] = (unsigned char)(v >> 8), p[3] = (unsigned char)v;
}

/* Write the PNG with a pHYs chunk of 300 dots per inch after its IHDR
 * (cairo writes none; without it LaTeX and word processors take 72 dpi and
 * place a 7-inch figure 29 inches wide). */
static int write_png_300(const char *path, const png_buf *b)
{
    /* signature (8) and IHDR (4 length + 4 type + 13 data + 4 crc) */
    const size_t after_ihdr = 8 + 25;
    if (b->n < after_ihdr || memcmp(b->data + 12, "IHDR", 4))
        return -1;
    unsigned char phys[21];
    unsigned long ppm = 11811; /* 300 / 0.0254 m */
    put32(phys, 9);
    memcpy(phys + 4, "pHYs", 4);
    put32(phys + 8, ppm);
    put32(phys + 12, ppm);
    phys[16] = 1; /* unit: the metre */
    put32(phys + 17, crc32_png(phys + 4, 13));
    FILE *f = fopen(path, "wb");
    if (!f)
        return -1;
    int ok = fwrite(b->data, 1, after_ihdr, f) == after_ihdr &&
             fwrite(phys, 1, sizeof phys, f) == sizeof phys &&
             fwrite(b->data + after_ihdr, 1, b->n - after_ihdr, f) == b->n - after_ihdr;
    return fclose(f) == 0 && ok ? 0 : -1;
}

static int write_page(const char *path, pk_format fmt, double w_in, double h_in, pk_drawer draw,
                      const void *ctx)
{
    double wpt = w_in * 72.0, hpt = h_in * 72.0, scale = fmt == PK_PNG ? 300.0 / 72.0 : 1.0;
    cairo_surface_t *surf =
        fmt == PK_PDF ? cairo_pdf_surface_create(path, wpt, hpt)
                      : cairo_image_surface_create(CAIRO_FORMAT_RGB24, (int)lround(wpt * scale),
                                                   (int)lround(hpt * scale));
    if (cairo_surface_status(surf) != CAIRO_STATUS_SUCCESS) {
        cairo_surface_destroy(surf);
        return -1;
    }
    cairo_t *cr = cairo_create(surf);
    cairo_scale(cr, scale, scale);
    cairo_set_source_rgb(cr, 1, 1, 1);
    cairo_paint(cr);
    plsdev("extcairo");
    plspage(72, 72, (PLINT)lround(wpt), (PLINT)lround(hpt), 0, 0);
    plscolbg(255, 255, 255);
    plscmap0n(16);
    plinit();
    pl_cmd(PLESC_DEVINIT, cr);
    pladv(0);
    for (size_t i = 0; i < NPAL; i++)
        plscol0((PLINT)i, palette[i][0], palette[i][1], palette[i][2]);
    plcol0(PK_INK);
    pk_font(PK_PT_LABEL);
    pk_width(0.6);
    plsmaj(0, 0.9); /* ticks a little shorter than PLplot's, for narrow panels */
    plsmin(0, 0.9);
    draw(ctx);
    plend();
    cairo_destroy(cr);
    int rc = 0;
    if (fmt == PK_PNG) {
        png_buf b = {NULL, 0, 0};
        rc = cairo_surface_write_to_png_stream(surf, png_append, &b) != CAIRO_STATUS_SUCCESS ||
                     write_png_300(path, &b)
                 ? -1
                 : 0;
        free(b.data);
    }
    cairo_surface_finish(surf);
    if (cairo_surface_status(surf) != CAIRO_STATUS_SUCCESS)
        rc = -1;
    cairo_surface_destroy(surf);
    return rc;
}

int pk_write(const char *path, pk_format fmt, double w_in, double h_in, pk_drawer draw,
             const void *ctx, lt_error *err)
{
    const char *slash = strrchr(path, '/');
    char *tmp = slash ? lt_path_format(err, "%.*s/.%s.tmp", (int)(slash - path), path, slash + 1)
                      : lt_path_format(err, ".%s.tmp", path);
    if (!tmp)
        return LT_ENOMEM;
    int rc = LT_OK;
    if (write_page(tmp, fmt, w_in, h_in, draw, ctx) != 0) {
        remove(tmp);
        rc = lt_error_set(err, LT_EIO, path, 0, "cairo could not write the figure");
    } else if (rename(tmp, path) != 0) {
        remove(tmp);
        rc = lt_error_set(err, LT_EIO, path, 0, "cannot move the figure in place");
    }
    free(tmp);
    return rc;
}

int pk_figure(const char *dir, const char *name, unsigned formats, double w_in, double h_in,
              pk_drawer draw, const void *ctx, lt_error *err)
{
    const pk_format fmts[] = {PK_PNG, PK_PDF};
    const char *exts[] = {"png", "pdf"};
    int rc = LT_OK;
    for (int k = 0; k < 2 && !rc; k++) {
        if (!(formats & fmts[k]))
            continue;
        char *path = lt_path_format(err, "%s/%s.%s", dir, name, exts[k]);
        if (!path)
            return LT_ENOMEM;
        rc = pk_write(path, fmts[k], w_in, h_in, draw, ctx, err);
        free(path);
    }
    return rc;
}

/* ---- axes ---- */

double pk_tick_step(double lo, double hi, int labels)
{
    double raw = (hi - lo) / labels;
    if (!(raw > 0) || !isfinite(raw))
        return 0;
    double mag = pow(10.0, floor(log10(raw))), f = raw / mag;
    return (f < 1.5 ? 1.0 : f < 3.0 ? 2.0 : f < 7.0 ? 5.0 : 10.0) * mag;
}

/* What the label function needs per axis: decimals, and whether the axis
 * is logarithmic (PLplot then passes log10 of the value). */
typedef struct {
    int decimals[2];
    int log[2];
    int inner;          /* leave out labels within 8% of an end of the axis */
    double lo[2], hi[2]; /* the window */
} tick_fmt;

const char *pk_number(double v, int decimals, char *buf, size_t size)
{
    char num[64];
    /* no "-0.00": a value that rounds to zero has no sign */
    if (fabs(v) < 0.5 * pow(10.0, -decimals))
        v = 0.0;
    snprintf(num, sizeof num, "%.*f", decimals, v);
    snprintf(buf, size, "%s%s", num[0] == '-' ? "−" : "", num + (num[0] == '-'));
    return buf;
}

/* Numbers with the minus sign U+2212 (a hyphen is shorter and sits lower;
 * typesetters and journals ask for the real sign). */
static void tick_label(PLINT axis, PLFLT value, char *label, PLINT length, PLPointer data)
{
    const tick_fmt *t = data;
    int a = axis == PL_Y_AXIS ? 1 : 0;
    double span = t->hi[a] - t->lo[a];
    if (t->inner && !t->log[a] &&
        (value - t->lo[a] < 0.08 * span || t->hi[a] - value < 0.08 * span)) {
        label[0] = '\0'; /* it would run into the next panel's */
        return;
    }
    if (t->log[a])
        snprintf(label, (size_t)length, "%.10g", pow(10.0, value));
    else
        pk_number(value, t->decimals[a], label, (size_t)length);
}

static int decimals_of(double step)
{
    if (!(step > 0))
        return 1;
    int d = (int)-floor(log10(step) + 1e-9);
    return d < 0 ? 0 : d;
}

static void box(const char *xopt, double xstep, const char *yopt, double ystep, int inner)
{
    PLFLT wx0, wx1, wy0, wy1;
    plgvpw(&wx0, &wx1, &wy0, &wy1);
    tick_fmt t = {{decimals_of(xstep), decimals_of(ystep)},
                  {strchr(xopt, 'l') != NULL, strchr(yopt, 'l') != NULL},
                  inner,
                  {fmin(wx0, wx1), fmin(wy0, wy1)},
                  {fmax(wx0, wx1), fmax(wy0, wy1)}};
    char xo[32], yo[32];
    /* "o": our label function for the numbers */
    snprintf(xo, sizeof xo, "%so", xopt);
    snprintf(yo, sizeof yo, "%so", yopt);
    /* PLplot's own step: label with the decimals of ours for the window */
    if (!xstep && !t.log[0])
        t.decimals[0] = decimals_of(pk_tick_step(wx0, wx1, 5));
    if (!ystep && !t.log[1])
        t.decimals[1] = decimals_of(pk_tick_step(wy0, wy1, 5));
    plslabelfunc(tick_label, &t);
    plbox(xo, xstep, 0, yo, ystep, 0);
    plslabelfunc(NULL, NULL);
}

void pk_box(const char *xopt, double xstep, const char *yopt, double ystep)
{
    box(xopt, xstep, yopt, ystep, 0);
}

void pk_box_inner(const char *xopt, double xstep, const char *yopt, double ystep)
{
    box(xopt, xstep, yopt, ystep, 1);
}

const char *pk_param_label(const char *name, char *buf, size_t size)
{
    return lt_report_param_label(name, LT_LABEL_PLOT, buf, size);
}

/* ---- densities ---- */

long pk_column(const lt_run_model *m, const char *name)
{
    for (size_t c = 0; c < m->nparams + m->nderived; c++)
        if (!strcmp(m->names[c], name))
            return (long)c;
    return -1;
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

void pk_range(const lt_run_model *m, size_t c, int as_sampled, double *lo, double *hi)
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
    if (w) {
        a = lt_post_quantile(x, w, k, 0.005), b = lt_post_quantile(x, w, k, 0.995);
    } else {
        qsort(x, k, sizeof *x, cmp_double);
        a = x[(size_t)(0.005 * (double)(k - 1))], b = x[(size_t)(0.995 * (double)(k - 1))];
    }
    free(x);
    free(w);
    if (!isfinite(a) || !isfinite(b)) {
        *lo = 0, *hi = 1;
        return;
    }
    double pad = 0.15 * (b - a > 0 ? b - a : 1.0);
    *lo = a - pad, *hi = b + pad;
    if (c < m->nparams && m->priors && m->priors[c].kind == LT_PRIOR_UNIFORM &&
        isfinite(m->priors[c].a)) {
        *lo = fmax(*lo, m->priors[c].a);
        *hi = fmin(*hi, m->priors[c].b);
    }
}

void pk_range_hold(double v, double *lo, double *hi)
{
    if (!isfinite(v))
        return;
    double span = *hi - *lo, inset = 0.04 * span;
    if (v - inset < *lo)
        *lo = v - inset - 0.01 * span;
    if (v + inset > *hi)
        *hi = v + inset + 0.01 * span;
}

/* The options of m's densities for columns cols: the prior's edges where
 * it is uniform, and the effective sample size of its draws. */
static void kde_opts(const lt_run_model *m, const size_t *cols, int d, double *edge,
                     lt_kde_opts *o)
{
    for (int a = 0; a < d; a++) {
        const lt_prior *p = cols[a] < m->nparams && m->priors ? &m->priors[cols[a]] : NULL;
        int uni = p && p->kind == LT_PRIOR_UNIFORM;
        edge[2 * a] = uni ? p->a : -INFINITY;
        edge[2 * a + 1] = uni ? p->b : INFINITY;
    }
    *o = (lt_kde_opts){.ess = isfinite(m->ess_min) ? m->ess_min : 0, .edge = edge};
}

/* Columns cx (and cy) of m's draws as arrays; NULL on failure. */
static double *column(const lt_run_model *m, size_t c)
{
    size_t n = m->nchains * m->ndraws, nc = m->nparams + m->nderived;
    double *x = malloc((n ? n : 1) * sizeof *x);
    for (size_t i = 0; x && i < n; i++)
        x[i] = m->draws[i * nc + c];
    return x;
}

/* The window a model's density is evaluated on: its own columns' span
 * (pk_range), whatever window the figure shows. A figure that overlays a
 * tight posterior with a broad one, or whose range the user has narrowed,
 * then still resolves each region and counts all of its mass. */
struct pk_density {
    double x0, x1, y0, y1;
    double g[PK_GRID * PK_GRID];
    double lev[2]; /* the 68.27% and 95.45% levels (0: the grid cannot hold it) */
};

pk_density *pk_density_of(const lt_run_model *m, size_t cx, size_t cy)
{
    pk_density *d = malloc(sizeof *d);
    if (!d)
        return NULL;
    size_t n = m->nchains * m->ndraws, cols[2] = {cx, cy};
    pk_range(m, cx, 0, &d->x0, &d->x1);
    pk_range(m, cy, 0, &d->y0, &d->y1);
    double *x = column(m, cx), *y = column(m, cy), edge[4], outside = 0;
    lt_kde_opts o;
    kde_opts(m, cols, 2, edge, &o);
    lt_error err;
    int rc = !x || !y ? -1
                      : lt_post_kde2d(x, y, m->weights, n, &o, d->x0, d->x1, d->y0, d->y1,
                                      PK_GRID, PK_GRID, d->g, &outside, &err);
    free(x);
    free(y);
    if (rc) {
        free(d);
        return NULL;
    }
    const double p[2] = {LT_POST_MASS_1SIGMA, LT_POST_MASS_2SIGMA};
    lt_post_hpd_levels(d->g, PK_GRID * PK_GRID,
                       (d->x1 - d->x0) / PK_GRID * (d->y1 - d->y0) / PK_GRID, outside, p, 2,
                       d->lev);
    return d;
}

double pk_density_area(const pk_density *d)
{
    double area = 0;
    if (!d || !(d->lev[1] > 0))
        return 0;
    for (int i = 0; i < PK_GRID * PK_GRID; i++)
        area += d->g[i] >= d->lev[1];
    return area * (d->x1 - d->x0) / PK_GRID * (d->y1 - d->y0) / PK_GRID;
}

void pk_density_draw(const pk_density *d, int colour, unsigned parts)
{
    PLFLT **f = NULL;
    plAlloc2dGrid(&f, PK_GRID, PK_GRID);
    PLFLT xg[PK_GRID], yg[PK_GRID], top = 0;
    for (int i = 0; i < PK_GRID; i++) {
        xg[i] = d->x0 + (d->x1 - d->x0) * (i + 0.5) / PK_GRID;
        yg[i] = d->y0 + (d->y1 - d->y0) * (i + 0.5) / PK_GRID;
        for (int k = 0; k < PK_GRID; k++) {
            f[i][k] = d->g[i * PK_GRID + k];
            top = fmax(top, f[i][k]);
        }
    }
    PLcGrid cg = {xg, yg, NULL, PK_GRID, PK_GRID, 0};
    /* the 95.45% region, then the 68.27% one over it, each drawn if the
     * grid holds it; opaque tints, not translucency: PLplot fills cell by
     * cell, and translucent cells would show every seam */
    for (int k = 1; (parts & PK_PART_FILL) && k >= 0; k--) {
        if (!(d->lev[k] > 0 && top > d->lev[k]))
            continue;
        double t = k == 0 ? 0.55 : 0.25; /* the share of the colour against white */
        int rgb[3];
        pk_rgb(colour, rgb);
        for (int c = 0; c < 3; c++)
            rgb[c] = (int)lround(255 - t * (255 - rgb[c]));
        plscol0(PK_FILL, rgb[0], rgb[1], rgb[2]);
        plshade((PLFLT_MATRIX)f, PK_GRID, PK_GRID, NULL, d->x0, d->x1, d->y0, d->y1, d->lev[k],
                top + 1, 0, PK_FILL, 0, 0, 0, 0, 0, plfill, 1, pltr1, &cg);
    }
    if (parts & PK_PART_LINES) {
        plcol0(colour);
        for (int k = 1; k >= 0; k--) {
            PLFLT lev[1] = {d->lev[k]};
            pk_width(k == 0 ? 1.2 : 0.7);
            if (d->lev[k] > 0)
                plcont((PLFLT_MATRIX)f, PK_GRID, PK_GRID, 1, PK_GRID, 1, PK_GRID, lev, 1, pltr1,
                       &cg);
        }
        pk_width(0.6);
    }
    plFree2dGrid(f, PK_GRID, PK_GRID);
}

int pk_can_smooth(const lt_run_model *m, size_t c, const char **why)
{
    size_t n = m->nchains * m->ndraws, nc = m->nparams + m->nderived, used = 0;
    double lo = INFINITY, hi = -INFINITY;
    for (size_t i = 0; i < n; i++) {
        double w = m->weights ? m->weights[i] : 1.0, v = m->draws[i * nc + c];
        if (!(w > 0) || !isfinite(w) || !isfinite(v))
            continue;
        used++;
        lo = fmin(lo, v), hi = fmax(hi, v);
    }
    *why = used < 2 ? "fewer than two draws with weight" : !(hi > lo) ? "one value in every draw" : NULL;
    return *why == NULL;
}

int pk_marginal(const lt_run_model *m, size_t c, int colour)
{
    size_t n = m->nchains * m->ndraws;
    double *x = column(m, c), g[PK_LINE], edge[2], x0, x1;
    pk_range(m, c, 0, &x0, &x1);
    lt_kde_opts o;
    kde_opts(m, &c, 1, edge, &o);
    lt_error err;
    int rc = !x ? -1 : lt_post_kde1d(x, m->weights, n, &o, x0, x1, PK_LINE, g, NULL, &err);
    free(x);
    if (rc)
        return -1;
    double peak = 0;
    for (int i = 0; i < PK_LINE; i++)
        peak = fmax(peak, g[i]);
    PLFLT px[PK_LINE], py[PK_LINE];
    for (int i = 0; i < PK_LINE; i++)
        px[i] = x0 + (x1 - x0) * (i + 0.5) / PK_LINE, py[i] = peak > 0 ? g[i] / peak : 0;
    plcol0(colour);
    pk_width(1.2);
    plline(PK_LINE, px, py);
    pk_width(0.6);
    return 0;
}
