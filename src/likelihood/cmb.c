/*
 * The CMB distance-prior term: the shift parameter R = sqrt(omega_m) H0
 * D_M(z_*)/c, the acoustic scale l_A = pi D_M(z_*)/r_s(z_*) and omega_b h^2
 * against a table of them with their covariance (lt_probe_read):
 *     shift_r, acoustic_l, omega_b_h2
 * chi2 = r^T C^-1 r. z_* comes from the fitting formula of Hu & Sugiyama
 * 1996 (lt_cosmo_z_star) unless the table gives it in a z column; r_s is
 * integrated with the baryon-photon sound speed (lt_cosmo_cmb). Like the
 * r_d formula it assumes a standard early universe: radiation on, h0 and
 * omega_b_h2 free, and dark energy negligible early (w0 + wa < 0; outside
 * that the posterior is zero).
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "internal.h"

enum { Q_R, Q_LA, Q_WB, NQ };
static const char *const qname[NQ] = {"shift_r", "acoustic_l", "omega_b_h2"};

typedef struct {
    lt_probe_term p; /* the table, each row's Q_*, the factored covariance */
    double z_star;   /* the table's, or NaN: the formula's */
} cmb;

static void cmb_needs(const void *config, lt_term_needs *needs)
{
    (void)config;
    needs->h0 = needs->early = needs->omega_b_h2 = 1;
}

static void cmb_free(void *state)
{
    cmb *t = state;
    if (!t)
        return;
    lt_probe_term_close(&t->p);
    free(t);
}

static void *cmb_setup(const void *config, const lt_like *l, lt_error *err)
{
    const lt_probe_config *cf = config;
    cmb *t = calloc(1, sizeof *t);
    if (!t) {
        lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        return NULL;
    }
    (void)l;
    if (lt_probe_term_open(&t->p, cf, "CMB", qname, NQ, err))
        goto fail;
    const lt_probe *d = t->p.data;
    t->z_star = NAN;
    for (size_t i = 0; i < d->n; i++) {
        int k = t->p.kind[i];
        for (size_t j = 0; j < i; j++)
            if (t->p.kind[j] == k) {
                lt_error_set(err, LT_EINPUT, d->path, d->line[i], "%s is given twice",
                             qname[k]);
                goto fail;
            }
        /* a z column gives z_* for R and l_A: one value for both */
        if (k != Q_WB && !isnan(d->z[i])) {
            if (!isnan(t->z_star) && t->z_star != d->z[i]) {
                lt_error_set(err, LT_EINPUT, d->path, d->line[i],
                             "z (z_*) differs from the earlier row's %g", t->z_star);
                goto fail;
            }
            t->z_star = d->z[i];
        }
    }
    return t;
fail:
    cmb_free(t);
    return NULL;
}

static void *cmb_work_alloc(const void *state)
{
    return malloc(((const cmb *)state)->p.data->n * sizeof(double));
}

static void cmb_work_free(void *work) { free(work); }

static int cmb_eval(const void *state, void *work, const lt_term_in *in, lt_term_out *out)
{
    const cmb *t = state;
    const lt_cosmo *c = in->cosmo;
    double *r = work;
    lt_cmb_point q;
    if (!lt_cosmo_early_standard(c) || lt_cosmo_cmb(c, t->z_star, &q, NULL))
        return -1;
    const lt_probe *d = t->p.data;
    for (size_t i = 0; i < d->n; i++) {
        double pred = t->p.kind[i] == Q_R ? q.shift_r : t->p.kind[i] == Q_LA ? q.acoustic_l
                                                                         : c->p.omega_b_h2;
        r[i] = d->value[i] - pred;
    }
    out->chi2 = out->chi2_eff = lt_probe_chi2(t->p.chol, d->n, r);
    return 0;
}

static size_t cmb_ndata(const void *state) { return ((const cmb *)state)->p.data->n; }
static double cmb_lognorm(const void *state) { return ((const cmb *)state)->p.lognorm; }
const lt_probe *lt_cmb_table(const void *state) { return ((const cmb *)state)->p.data; }

const lt_term_type lt_term_cmb = {.name = "cmb",
                                  .add_params = cmb_needs,
                                  .setup = cmb_setup,
                                  .work_alloc = cmb_work_alloc,
                                  .work_free = cmb_work_free,
                                  .eval = cmb_eval,
                                  .ndata = cmb_ndata,
                                  .lognorm = cmb_lognorm,
                                  .free = cmb_free};
