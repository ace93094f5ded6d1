/*
 * The likelihood's parameter table as its terms and callers read it: the
 * free and fixed entries, and the values and cosmology at a point. These
 * read the table only, so the terms may use them without calling the sum
 * that calls the terms (see include/lantern/likelihood.h).
 */
#include <math.h>
#include <string.h>

#include "internal.h"

/* ---- accessors ---- */
size_t lt_like_dim(const lt_like *l) { return l->dim; }
const lt_param *lt_like_param(const lt_like *l, size_t i) { return &l->par[l->free_at[i]]; }
const char *lt_like_param_name(const lt_like *l, size_t i) { return l->par[l->free_at[i]].name; }
const lt_prior *lt_like_prior(const lt_like *l, size_t i) { return &l->par[l->free_at[i]].prior; }
size_t lt_like_nfixed(const lt_like *l) { return l->nfixed; }
const lt_param *lt_like_fixed(const lt_like *l, size_t k) { return &l->par[l->fixed_at[k]]; }
lt_offset_mode lt_like_offset_mode(const lt_like *l) { return l->offset; }
const lt_survey *lt_like_survey(const lt_like *l) { return l->sn ? l->s_survey : NULL; }
const lt_std_spec *lt_like_std(const lt_like *l) { return l->std ? &l->std_spec : NULL; }
const lt_survey *lt_like_table(const lt_like *l) { return l->s_survey; }
const lt_probe *lt_like_bao(const lt_like *l, int *rd_free)
{
    if (rd_free)
        *rd_free = l->rd_free;
    return l->bao;
}
const lt_probe *lt_like_cmb(const lt_like *l) { return l->cmb; }
const lt_cosmo_model *lt_like_model(const lt_like *l) { return l->model; }
const lt_cosmo_params *lt_like_base(const lt_like *l) { return &l->base; }
int lt_like_h0_known(const lt_like *l) { return l->h0_known; }
size_t lt_like_nmeasurements(const lt_like *l) { return l->nmeas; }
const lt_measurement *lt_like_measurement(const lt_like *l, size_t k) { return &l->meas[k]; }

int lt_like_entry(const lt_like *l, const char *name)
{
    for (size_t k = 0; k < l->npar; k++)
        if (!strcmp(l->par[k].name, name))
            return (int)k;
    return -1;
}

int lt_like_param_index(const lt_like *l, const char *name)
{
    for (size_t i = 0; i < l->dim; i++)
        if (!strcmp(l->par[l->free_at[i]].name, name))
            return (int)i;
    return -1;
}

void lt_like_values(const lt_like *l, const double *theta, double *values, lt_cosmo_params *p)
{
    *p = l->base;
    for (size_t k = 0; k < l->npar; k++)
        values[k] = l->par[k].value;
    for (size_t i = 0; i < l->dim; i++) {
        size_t k = l->free_at[i];
        values[k] = theta[i];
        if (l->cosmo_id[k] >= 0)
            *lt_cosmo_params_slot(p, l->cosmo_id[k]) = theta[i];
    }
}

int lt_like_cosmo(const lt_like *l, const double *theta, lt_cosmo *c, lt_error *err)
{
    double values[LT_MAX_PARAMS];
    lt_cosmo_params p;
    lt_like_values(l, theta, values, &p);
    return lt_cosmo_init(c, l->model, &p, err);
}

/* The centre of a prior: a uniform one's midpoint, a Gaussian one's mean. */
static double prior_centre(const lt_prior *p)
{
    return p->kind == LT_PRIOR_UNIFORM ? 0.5 * (p->a + p->b) : p->a;
}

void lt_like_guess(const lt_like *l, double *theta)
{
    double values[LT_MAX_PARAMS];
    for (size_t k = 0; k < l->npar; k++)
        values[k] = l->par[k].free ? prior_centre(&l->par[k].prior) : l->par[k].value;
    for (size_t t = 0; t < l->nterms; t++)
        if (l->term[t].type->guess)
            l->term[t].type->guess(l->term[t].state, values);
    for (size_t i = 0; i < l->dim; i++) {
        const lt_param *p = &l->par[l->free_at[i]];
        double v = values[l->free_at[i]];
        theta[i] = isfinite(lt_prior_logpdf(&p->prior, v)) ? v : prior_centre(&p->prior);
    }
}
