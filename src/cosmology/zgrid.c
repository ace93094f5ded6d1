/*
 * Many redshifts in one pass.
 *
 * The redshifts are sorted once, and the gap between each one and the next
 * (the first gap starts at z = 0) gets a Gauss-Legendre plan in x = ln(1+z),
 * where the integrands e^x / E and 1 / E are sums of a few smooth
 * exponentials. Evaluating a cosmology then walks the nodes once,
 * accumulating
 *     D_C H0/c   = integral of e^x / E(x) dx      (Hogg 1999, eq. 15)
 *     t_L H0     = integral of     1 / E(x) dx      (Hogg 1999, eq. 30)
 * so the cost grows with the number of redshifts, not with its square.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "lantern/text.h"
#include "internal.h"

struct lt_zgrid {
    size_t n;
    size_t *order;    /* order[k]: input index of the k-th smallest redshift */
    double *x, *y;    /* sorted ln(1+z) and 1+z */
    size_t *gap_end;  /* nodes [gap_end[k-1], gap_end[k]) lie in (x[k-1], x[k]] */
    size_t nnodes;
    double *node_x, *node_y, *node_w; /* node_w includes the panel half-width */
};

/*
 * The rule for one gap of width dx: panels no wider than 0.1, each with the
 * fewest points that keep the error far below 1e-8. For an integrand that is
 * analytic within a distance r of the panel, an n-point rule on width h errs
 * by about (h / 2r)^(2n) relative; with r = 0.5 (closer than any singularity
 * of E^-1 for the models here but near-bounce ones) the widths below keep
 * that under 1e-12. tests/unit/test_cosmology.c checks the result against
 * GSL's adaptive QAG integrator.
 */
static void plan_gap(double dx, int *panels, int *points)
{
    if (dx <= 0.0) {
        *panels = 0, *points = 0;
        return;
    }
    int m = (int)ceil(dx / 0.1);
    double h = dx / m;
    *panels = m;
    *points = h <= 1e-3 ? 2 : h <= 1e-2 ? 3 : h <= 3e-2 ? 4 : 6;
}

typedef struct {
    double z;
    size_t i;
} zpair;

static int zpair_cmp(const void *a, const void *b)
{
    const zpair *p = a, *q = b;
    if (p->z != q->z)
        return p->z < q->z ? -1 : 1;
    return p->i < q->i ? -1 : p->i > q->i; /* ties: input order, for determinism */
}

void lt_zgrid_free(lt_zgrid *g)
{
    if (!g)
        return;
    free(g->order);
    free(g->x);
    free(g->y);
    free(g->gap_end);
    free(g->node_x);
    free(g->node_y);
    free(g->node_w);
    free(g);
}

lt_zgrid *lt_zgrid_alloc(size_t n, const double *z, lt_error *err)
{
    if (n == 0) {
        lt_error_set(err, LT_EINPUT, NULL, 0, "no redshifts given");
        return NULL;
    }
    for (size_t i = 0; i < n; i++) {
        if (!isfinite(z[i]) || z[i] < 0.0) {
            lt_error_set(err, LT_EINPUT, NULL, 0,
                         "redshift number %zu is %g: redshifts must be finite and >= 0",
                         i + 1, z[i]);
            return NULL;
        }
    }
    lt_zgrid *g = calloc(1, sizeof *g);
    zpair *pairs = malloc(n * sizeof *pairs);
    if (!g || !pairs)
        goto nomem;
    g->n = n;
    g->order = malloc(n * sizeof *g->order);
    g->x = malloc(n * sizeof *g->x);
    g->y = malloc(n * sizeof *g->y);
    g->gap_end = malloc(n * sizeof *g->gap_end);
    if (!g->order || !g->x || !g->y || !g->gap_end)
        goto nomem;
    for (size_t i = 0; i < n; i++)
        pairs[i] = (zpair){z[i], i};
    qsort(pairs, n, sizeof *pairs, zpair_cmp);
    for (size_t k = 0; k < n; k++) {
        g->order[k] = pairs[k].i;
        g->x[k] = log1p(pairs[k].z);
        g->y[k] = 1.0 + pairs[k].z;
    }
    free(pairs);
    pairs = NULL;

    /* First count the nodes, then place them. */
    size_t total = 0;
    for (size_t k = 0; k < n; k++) {
        int m, p;
        plan_gap(g->x[k] - (k ? g->x[k - 1] : 0.0), &m, &p);
        total += (size_t)m * (size_t)p;
        g->gap_end[k] = total;
    }
    g->nnodes = total;
    size_t alloc = total ? total : 1;
    g->node_x = malloc(alloc * sizeof *g->node_x);
    g->node_y = malloc(alloc * sizeof *g->node_y);
    g->node_w = malloc(alloc * sizeof *g->node_w);
    if (!g->node_x || !g->node_y || !g->node_w)
        goto nomem;
    size_t j = 0;
    for (size_t k = 0; k < n; k++) {
        double lo = k ? g->x[k - 1] : 0.0;
        int m, p;
        plan_gap(g->x[k] - lo, &m, &p);
        const lt_gl_rule *r = lt_gl_rule_get(p);
        double h = (g->x[k] - lo) / (m ? m : 1);
        for (int panel = 0; panel < m; panel++) {
            double mid = lo + (panel + 0.5) * h;
            for (int i = 0; i < p; i++, j++) {
                g->node_x[j] = mid + 0.5 * h * r->x[i];
                g->node_y[j] = exp(g->node_x[j]);
                g->node_w[j] = 0.5 * h * r->w[i];
            }
        }
    }
    return g;

nomem:
    free(pairs);
    lt_zgrid_free(g);
    lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory for %zu redshifts", n);
    return NULL;
}

size_t lt_zgrid_size(const lt_zgrid *g) { return g->n; }
size_t lt_zgrid_nodes(const lt_zgrid *g) { return g->nnodes; }

static int bad_e2(lt_error *err, double x)
{
    return lt_error_set(err, LT_EDOMAIN, NULL, 0,
                        "E^2 = H^2/H0^2 is not positive at z = %.4g for these "
                        "parameters: this universe turns around before that "
                        "redshift, so distances there are undefined",
                        expm1(x));
}

int lt_cosmo_eval(const lt_cosmo *c, const lt_zgrid *g, const lt_cosmo_table *out,
                  lt_error *err)
{
    const double ok = c->omega_k, dh = c->dh_mpc, th = c->th_gyr;
    const double antipode = ok < 0.0 ? M_PI / sqrt(-ok) : INFINITY;
    lt_watch w;
    lt_watch_start(&w, lt_watch_e2_of_x);
    if (lt_watch_push(&w, c, 0.0, lt_cosmo_e2_xy(c, 0.0, 1.0)))
        return bad_e2(err, 0.0);

    double chi = 0.0, look = 0.0;
    size_t j = 0;
    for (size_t k = 0; k < g->n; k++) {
        for (; j < g->gap_end[k]; j++) {
            double e2 = lt_cosmo_e2_xy(c, g->node_x[j], g->node_y[j]);
            if (lt_watch_push(&w, c, g->node_x[j], e2))
                return bad_e2(err, w.bad_t);
            double inv_e = 1.0 / sqrt(e2);
            chi += g->node_w[j] * g->node_y[j] * inv_e;
            look += g->node_w[j] * inv_e;
        }
        size_t i = g->order[k];
        double y = g->y[k];
        if (out->hubble || k + 1 == g->n) {
            /* E^2 at the redshift itself: needed for H(z), and at the last
             * redshift to close the positivity check. */
            double e2 = lt_cosmo_e2_xy(c, g->x[k], y);
            if (lt_watch_push(&w, c, g->x[k], e2))
                return bad_e2(err, w.bad_t);
            if (out->hubble)
                out->hubble[i] = c->p.h0 * sqrt(e2);
        }
        if (chi >= antipode)
            return lt_error_set(err, LT_EDOMAIN, NULL, 0,
                                "light from z = %.4g would cross the antipode of this "
                                "closed universe (sqrt(-omega_k) D_C H0/c >= pi); "
                                "distances beyond it are undefined",
                                y - 1.0);
        double dm = dh * lt_transverse_of(chi, ok);
        if (out->comoving)
            out->comoving[i] = dh * chi;
        if (out->transverse)
            out->transverse[i] = dm;
        if (out->luminosity)
            out->luminosity[i] = dm * y;
        if (out->angular)
            out->angular[i] = dm / y;
        if (out->distmod)
            out->distmod[i] = 5.0 * log10(dm * y) + 25.0; /* D_L in Mpc, 10 pc */
        if (out->lookback)
            out->lookback[i] = th * look;
        if (out->age)
            out->age[i] = look; /* for now: turned into ages below */
    }
    if (out->age) {
        double tail, bad_z;
        if (lt_cosmo_age_tail(c, g->x[g->n - 1], &tail, &bad_z))
            return lt_cosmo_err_no_big_bang(err, bad_z);
        /* age(z_k) = tail + integral from x_k to x_max = tail + (look - look_k) */
        for (size_t k = 0; k < g->n; k++) {
            size_t i = g->order[k];
            out->age[i] = th * (tail + (look - out->age[i]));
        }
    }
    return LT_OK;
}

/* ---- redshifts from text (lantern distance's --z and --z-range) ---- */

/* Redshifts from "--z 0.1,0.5,1". */
int lt_z_parse_list(const char *text, const char *origin, double **z, size_t *n, lt_error *err)
{
    size_t cap = 1;
    for (const char *p = text; *p; p++)
        cap += *p == ',';
    char *copy = strdup(text);
    double *v = malloc(cap * sizeof *v);
    if (!copy || !v) {
        free(copy);
        free(v);
        return lt_error_set(err, LT_ENOMEM, origin, 0, "out of memory");
    }
    size_t k = 0;
    int status = LT_OK;
    /* Split by hand: strtok would silently skip empty items ("0.1,,2"). */
    char *item = copy;
    for (;;) {
        char *comma = strchr(item, ',');
        if (comma)
            *comma = '\0';
        if (lt_parse_double(item, &v[k]) || v[k] < 0.0) {
            status = lt_error_set(err, LT_EINPUT, origin, 0,
                                  "'%s' is not a redshift (a finite number >= 0)", item);
            break;
        }
        k++;
        if (!comma)
            break;
        item = comma + 1;
    }
    free(copy);
    if (status) {
        free(v);
        return status;
    }
    *z = v;
    *n = k;
    return LT_OK;
}

/* Redshifts from "--z-range LO:HI:N[:log]". */
int lt_z_parse_range(const char *text, const char *origin, double **z, size_t *n, lt_error *err)
{
    char buf[256];
    if (strlen(text) >= sizeof buf)
        return lt_error_set(err, LT_EINPUT, origin, 0, "value too long");
    strcpy(buf, text);
    char *field[5] = {0};
    int nf = 0;
    char *p = buf;
    while (nf < 5) {
        field[nf++] = p;
        char *colon = strchr(p, ':');
        if (!colon)
            break;
        *colon = '\0';
        p = colon + 1;
    }
    double lo, hi;
    long count;
    int logscale = nf == 4 && strcmp(field[3], "log") == 0;
    if ((nf != 3 && !logscale) || lt_parse_double(field[0], &lo) ||
        lt_parse_double(field[1], &hi) || lt_parse_long(field[2], 1, 10000000, &count))
        return lt_error_set(err, LT_EINPUT, origin, 0,
                            "'%s' is not LO:HI:N or LO:HI:N:log (N from 1 to 10^7)", text);
    if (lo < 0.0 || hi < lo)
        return lt_error_set(err, LT_EINPUT, origin, 0, "need 0 <= LO <= HI, got %g:%g", lo, hi);
    if (logscale && lo <= 0.0)
        return lt_error_set(err, LT_EINPUT, origin, 0, "log spacing needs LO > 0, got %g", lo);
    double *v = malloc((size_t)count * sizeof *v);
    if (!v)
        return lt_error_set(err, LT_ENOMEM, origin, 0, "out of memory for %ld redshifts", count);
    for (long i = 0; i < count; i++) {
        double t = count > 1 ? (double)i / (double)(count - 1) : 0.0;
        v[i] = logscale ? lo * pow(hi / lo, t) : lo + (hi - lo) * t;
    }
    if (count > 1)
        v[count - 1] = hi; /* exactly, whatever the rounding above */
    *z = v;
    *n = (size_t)count;
    return LT_OK;
}
