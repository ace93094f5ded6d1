/*
 * The figures' drawing kit (internal to the report module): pages sized in
 * inches for a journal's columns, type in points, our palette, tick labels
 * with real minus signs, and smoothed posterior densities drawn as filled
 * regions and curves. figures.c draws with it.
 *
 * PLplot keeps global state: a figure is drawn from one thread, opened and
 * closed by pk_write, one at a time (DESIGN.md).
 */
#ifndef LANTERN_REPORT_PLOTKIT_H
#define LANTERN_REPORT_PLOTKIT_H

#include "lantern/report.h"

/* Type sizes in points at the printed size: tick labels, axis labels and
 * legends, titles (journals ask for 7-10 pt in figures; common practice). */
#define PK_PT_TICK 8.0
#define PK_PT_LABEL 9.0
#define PK_PT_TITLE 10.0

/* Colour map 0: background, ink, the series' colours, greys. The series'
 * colours are Okabe and Ito's set for colour-blind readers ("Color
 * Universal Design", 2008: blue, vermillion, bluish green, reddish
 * purple, orange, sky blue), yellow left out for lack of contrast on white. */
enum { PK_BG = 0, PK_INK = 1, PK_SERIES = 2, PK_DATA = 8, PK_BAR = 9, PK_GRID = 10, PK_FILL = 11 };
#define PK_NSERIES 6
int pk_series_colour(size_t i);
/* The RGB of colour-map entry c. */
void pk_rgb(int c, int rgb[3]);

/* Draw a figure of w x h inches into path: "png" at 300 dots per inch or
 * "pdf" (vector), through cairo, written to a temporary name and renamed
 * in place. draw(ctx) draws on the open page; sizes in millimetres
 * (plsvpa) follow the page's inches. */
typedef void (*pk_drawer)(const void *ctx);
typedef enum { PK_PNG = 1, PK_PDF = 2 } pk_format;
int pk_write(const char *path, pk_format fmt, double w_in, double h_in, pk_drawer draw,
             const void *ctx, lt_error *err);
/* dir/name.png and dir/name.pdf (formats: PK_PNG | PK_PDF). */
int pk_figure(const char *dir, const char *name, unsigned formats, double w_in, double h_in,
              pk_drawer draw, const void *ctx, lt_error *err);

/* Type of pt points for what follows. */
void pk_font(double pt);
/* A line width in points. */
void pk_width(double pt);
/* A viewport in inches from the page's lower left corner. */
void pk_viewport(double x0, double x1, double y0, double y1);

/* A major-tick step of 1, 2 or 5 times a power of ten putting about labels
 * labels on [lo, hi] (0: PLplot's own). */
double pk_tick_step(double lo, double hi, int labels);
/* plbox with our tick labels (real minus signs, the step's decimals):
 * xopt and yopt as plbox's, xstep and ystep the major steps (0: PLplot's). */
void pk_box(const char *xopt, double xstep, const char *yopt, double ystep);
/* The same without the labels within 8% of an axis's ends, which would run
 * into those of the next panel of a matrix. */
void pk_box_inner(const char *xopt, double xstep, const char *yopt, double ystep);

/* v with decimals decimals and a real minus sign (U+2212), into buf;
 * returns buf. */
const char *pk_number(double v, int decimals, char *buf, size_t size);
/* A parameter's axis label, PLplot text, into buf; returns buf. */
const char *pk_param_label(const char *name, char *buf, size_t size);

/* ---- posterior densities of a saved model's draws ---- */

/* Grid cells a side of the 2-D densities and points of the 1-D ones: the
 * binning error against the direct kernel sum is then under 1% of the peak
 * (tests/reference/test_kde_scipy.c). */
#define PK_GRID 100
#define PK_LINE 240

/* The density of columns cx, cy of m and its levels holding 68.27% and
 * 95.45% of the mass, formed once and drawn as often as needed. It is
 * evaluated on m's own span of the two columns (pk_range), not on the
 * figure's window, so that a tight posterior beside a broad one is resolved
 * and a narrowed window still counts all of the mass. NULL if it cannot be
 * formed (pk_can_smooth says why) or memory is short; free() it. */
typedef struct pk_density pk_density;
pk_density *pk_density_of(const lt_run_model *m, size_t cx, size_t cy);
/* The area of d's 95.45% region, in the columns' units (0 for NULL), to
 * layer several widest first. */
double pk_density_area(const pk_density *d);
/* d's regions in the current window: PART_FILL fills them in two tints of
 * colour, PART_LINES draws their edges. */
enum { PK_PART_FILL = 1, PK_PART_LINES = 2 };
void pk_density_draw(const pk_density *d, int colour, unsigned parts);
/* The 1-D marginal of column c, on m's own span, scaled to peak 1. */
int pk_marginal(const lt_run_model *m, size_t c, int colour);
/* Whether column c of m can be smoothed: two draws with weight and more
 * than one value; otherwise 0 and *why says what is missing. */
int pk_can_smooth(const lt_run_model *m, size_t c, const char **why);

/* A plotting range for column c of m: the 0.5% to 99.5% span of the draws
 * (as weighted, unless as_sampled), widened by 15%, clipped to the prior
 * where there is one. */
void pk_range(const lt_run_model *m, size_t c, int as_sampled, double *lo, double *hi);
/* Widen [lo, hi] so that the point v sits at least 4% of the span inside
 * (a mark at a prior edge is then drawn whole). */
void pk_range_hold(double v, double *lo, double *hi);
/* Column of name in m, or -1. */
long pk_column(const lt_run_model *m, const char *name);

#endif
