/*
 * The measurement term: a Gaussian measurement x = mean +- sd of one
 * parameter of the table or one derived quantity, chi2 = ((x - mean)/sd)^2,
 * its normalisation -ln(2 pi sd^2)/2. A derived quantity is computed from
 * the cosmology at the parameters (lt_derived_of), so on a flat model a
 * measurement of omega_k sees 0; a parameter the model does not vary sees
 * the value the model holds it at (w0 = -1, wa = 0 in LCDM), so that every
 * model of a comparison meets the same measurement. Undefined values (an age without a big
 * bang, no deceleration for z_t) are outside the term's domain.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "internal.h"

typedef struct {
    lt_measurement m;
    lt_quantity q; /* what it measures */
} measure;

/* A measurement of h0 or of the age (which scales with 1/h0) frees h0; one
 * of omega_b_h2 puts it in the table. */
static void measure_needs(const void *config, lt_term_needs *needs)
{
    const lt_measurement *m = config;
    if (!strcmp(m->name, "h0") || !strcmp(m->name, "age_gyr"))
        needs->h0 = 1;
    if (!strcmp(m->name, "omega_b_h2"))
        needs->omega_b_h2 = 1;
}

static void *measure_setup(const void *config, const lt_like *l, lt_error *err)
{
    const lt_measurement *m = config;
    measure *t = calloc(1, sizeof *t);
    if (!t) {
        lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        return NULL;
    }
    t->m = *m;
    int found = lt_quantity_find(l, m->name, &t->q);
    const char *where = m->origin ? m->origin : "--measure";
    if (t->q.at < 0 && !strcmp(m->name, "offset")) {
        lt_error_set(err, LT_EINPUT, where, m->line,
                     l->sn ? "the offset is marginalised here, so it has no value to measure: "
                             "sample it (--offset sampled) to measure it"
                           : "there is no survey, so no offset to measure");
        free(t);
        return NULL;
    }
    if (!found) {
        lt_error_set(err, LT_EINPUT, where, m->line,
                     "nothing called '%s' to measure in model %s (parameters: %s; derived: "
                     "omega_k, omega_de, q0, z_t, age_gyr, rd, rd_h)",
                     m->name, l->model->name, lt_param_known_list());
        free(t);
        return NULL;
    }
    /* a derived quantity this likelihood cannot compute (r_d without the
     * early universe) would reject every point: refused here instead */
    if (t->q.at < 0 && (t->q.derived == LT_DER_RD || t->q.derived == LT_DER_RD_H) &&
        !lt_like_has_derived(l, t->q.derived)) {
        lt_error_set(err, LT_EINPUT, where, m->line,
                     "%s is not defined here: r_d and r_d h come from the early universe (BAO "
                     "with the r_d formula, or the CMB); with --rd free measure rd_h",
                     m->name);
        free(t);
        return NULL;
    }
    /* an age measurement freed h0 (measure_needs), so the age is defined */
    return t;
}

static void *measure_work_alloc(const void *state)
{
    (void)state;
    return malloc(1); /* nothing to hold, but a work space all the same */
}

static void measure_work_free(void *work) { free(work); }

static int measure_eval(const void *state, void *work, const lt_term_in *in, lt_term_out *out)
{
    (void)work;
    const measure *t = state;
    double x = lt_quantity_value(&t->q, in->values, in->cosmo);
    if (!isfinite(x))
        return -1;
    double u = (x - t->m.mean) / t->m.sd;
    out->chi2 = out->chi2_eff = u * u;
    return 0;
}

static size_t measure_ndata(const void *state)
{
    (void)state;
    return 1;
}

static double measure_lognorm(const void *state)
{
    const measure *t = state;
    return -0.5 * log(2.0 * M_PI * t->m.sd * t->m.sd);
}

static void measure_free(void *state) { free(state); }

const lt_term_type lt_term_measure = {.name = "measurement",
                                      .add_params = measure_needs,
                                      .setup = measure_setup,
                                      .work_alloc = measure_work_alloc,
                                      .work_free = measure_work_free,
                                      .eval = measure_eval,
                                      .ndata = measure_ndata,
                                      .lognorm = measure_lognorm,
                                      .free = measure_free};
