/*
 * The BAO term: distances in units of the sound horizon at the drag epoch,
 * against a table of measurements with their covariance (lt_probe_read):
 *     dm_over_rd  D_M(z) / r_d          dh_over_rd  D_H(z) / r_d, D_H = c/H(z)
 *     dv_over_rd  D_V(z) / r_d          da_over_rd  D_M(z) / ((1+z) r_d)
 *     rd_over_dv  r_d / D_V(z)          with D_V = (z D_M^2 D_H)^(1/3)
 * A row with rd_fid quotes its distance against a fiducial sound horizon,
 * as surveys since BOSS do: D rd_fid / r_d in Mpc ("D_V (r_d,fid / r_d)").
 * The model's r_d here is Aubourg et al.'s (or rd_h / h), so rd_fid must be
 * the fiducial cosmology's r_d in that convention (lantern distance of that
 * cosmology gives it); a survey's r_d,fid from Eisenstein & Hu 1998 is a
 * few per cent off and would bias every distance by as much. (r_s / D_V rows
 * of older surveys, in the EH98 convention, would need the survey's
 * fiducial cosmology to rescale, which a row does not carry: refused, with
 * the conversion to do.)
 * chi2 = r^T C^-1 r over the rows (C factored once at set-up), normalised
 * by -(n ln 2 pi + ln det C)/2.
 *
 * r_d comes from the fitting formula of Aubourg et al. 2015
 * (lt_cosmo_rd: the early universe, so radiation is on, h0 and omega_b_h2
 * are free, and dark energy must be negligible early, w0 + wa < 0, as
 * DESI 2024 VI assumed; outside that the posterior is zero), or, with
 * rd_free, from the parameter rd_h = r_d h in Mpc: every quantity is then
 * (D h) / rd_h, which depends on the expansion history alone (the ridge of
 * h0 against r_d is not sampled).
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "internal.h"

enum { Q_DM, Q_DH, Q_DV, Q_DA, Q_RD_DV, NQ };
static const char *const qname[NQ] = {"dm_over_rd", "dh_over_rd", "dv_over_rd", "da_over_rd",
                                      "rd_over_dv"};

typedef struct {
    lt_probe_term p;    /* the table, each row's Q_*, the factored covariance */
    lt_zgrid *grid;     /* the rows' redshifts */
    int rd_free, rd_at; /* rd_h's table index with rd_free */
} bao;

typedef struct {
    double *dm, *hz, *r;
} bao_work;

static void bao_needs(const void *config, lt_term_needs *needs)
{
    const lt_probe_config *cf = config;
    if (cf->rd_free) {
        if (needs->nown < LT_TERM_OWN_MAX)
            needs->own[needs->nown++] = (lt_term_param){"rd_h", {LT_PRIOR_UNIFORM, 50, 150}, 0, 0.0};
    } else {
        needs->h0 = needs->early = needs->omega_b_h2 = 1;
    }
}

static void bao_free(void *state)
{
    bao *t = state;
    if (!t)
        return;
    lt_probe_term_close(&t->p);
    lt_zgrid_free(t->grid);
    free(t);
}

static void *bao_setup(const void *config, const lt_like *l, lt_error *err)
{
    const lt_probe_config *cf = config;
    bao *t = calloc(1, sizeof *t);
    if (!t) {
        lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        return NULL;
    }
    if (lt_probe_term_open(&t->p, cf, "BAO", qname, NQ, err))
        goto fail;
    const lt_probe *d = t->p.data;
    size_t n = d->n;
    for (size_t i = 0; i < n; i++) {
        if (isnan(d->z[i])) {
            lt_error_set(err, LT_EINPUT, d->path, d->has_z ? d->line[i] : 0,
                         "BAO measurements need a z column, with a redshift in every row");
            goto fail;
        }
        if (isfinite(d->rd_fid[i]) && t->p.kind[i] == Q_RD_DV) {
            lt_error_set(err, LT_EINPUT, d->path, d->line[i],
                         "rd_fid applies to the distances over r_d (quoted as D rd_fid/r_d, in "
                         "Mpc); an r_s/D_V of another sound-horizon convention (Eisenstein & Hu "
                         "1998) needs the survey's fiducial cosmology: multiply it by r_d/r_s of "
                         "that cosmology (lantern distance gives r_d) and drop rd_fid");
            goto fail;
        }
    }
    if (!(t->grid = lt_zgrid_alloc(n, d->z, err)))
        goto fail;
    t->rd_free = cf->rd_free;
    t->rd_at = lt_like_entry(l, "rd_h");
    if (!t->rd_free) { /* the formula's own conditions, refused once here */
        lt_cosmo c;
        double rd;
        if (lt_cosmo_init(&c, l->model, &l->base, err) || lt_cosmo_rd(&c, &rd, err))
            goto fail;
    }
    return t;
fail:
    bao_free(t);
    return NULL;
}

static void *bao_work_alloc(const void *state)
{
    const bao *t = state;
    size_t n = t->p.data->n;
    bao_work *w = calloc(1, sizeof *w);
    if (w && (!(w->dm = malloc(n * sizeof *w->dm)) || !(w->hz = malloc(n * sizeof *w->hz)) ||
              !(w->r = malloc(n * sizeof *w->r)))) {
        free(w->dm), free(w->hz), free(w);
        return NULL;
    }
    return w;
}

static void bao_work_free(void *work)
{
    bao_work *w = work;
    if (!w)
        return;
    free(w->dm), free(w->hz), free(w->r), free(w);
}

static int bao_eval(const void *state, void *work, const lt_term_in *in, lt_term_out *out)
{
    const bao *t = state;
    bao_work *w = work;
    const lt_cosmo *c = in->cosmo;
    const lt_probe *d = t->p.data;
    size_t n = d->n;
    double rd;
    if (t->rd_free) {
        rd = in->values[t->rd_at] / (c->p.h0 / 100.0);
    } else {
        /* the early universe: dark energy negligible at high redshift */
        if (!lt_cosmo_early_standard(c) || lt_cosmo_rd(c, &rd, NULL))
            return -1;
    }
    lt_cosmo_table tab = {.transverse = w->dm, .hubble = w->hz};
    if (lt_cosmo_eval(c, t->grid, &tab, NULL))
        return -1;
    for (size_t i = 0; i < n; i++) {
        double z = d->z[i], dm = w->dm[i], dh = LT_C_KM_S / w->hz[i], pred;
        switch (t->p.kind[i]) {
        case Q_DM: pred = dm / rd; break;
        case Q_DH: pred = dh / rd; break;
        case Q_DA: pred = dm / ((1.0 + z) * rd); break;
        case Q_DV: pred = cbrt(z * dm * dm * dh) / rd; break;
        default: pred = rd / cbrt(z * dm * dm * dh); break;
        }
        /* quoted against a fiducial sound horizon: D rd_fid / r_d, in Mpc */
        if (isfinite(d->rd_fid[i]))
            pred *= d->rd_fid[i];
        w->r[i] = d->value[i] - pred;
    }
    out->chi2 = out->chi2_eff = lt_probe_chi2(t->p.chol, n, w->r);
    return 0;
}

const lt_probe *lt_bao_table(const void *state) { return ((const bao *)state)->p.data; }

static size_t bao_ndata(const void *state) { return ((const bao *)state)->p.data->n; }
static double bao_lognorm(const void *state) { return ((const bao *)state)->p.lognorm; }

const lt_term_type lt_term_bao = {.name = "bao",
                                  .add_params = bao_needs,
                                  .setup = bao_setup,
                                  .work_alloc = bao_work_alloc,
                                  .work_free = bao_work_free,
                                  .eval = bao_eval,
                                  .ndata = bao_ndata,
                                  .lognorm = bao_lognorm,
                                  .free = bao_free};
