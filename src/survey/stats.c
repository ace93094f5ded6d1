/* Summary numbers of a survey: ranges, error statistics, a z histogram. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "lantern/digest.h"
#include "lantern/survey.h"

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* The light-curve columns' ranges, the host-mass split, the groups and
 * the calibrators. */
static void lightcurve_stats(const lt_survey *s, lt_lightcurve_stats *lc)
{
    const lt_lightcurve *c = s->lc;
    lc->ncalibrators = c->ncalibrators;
    lc->x1_min = lc->color_min = lc->mass_min = lc->x1_max = lc->color_max = lc->mass_max = NAN;
    if (!c->x1) /* a standardised table's calibrators alone */
        return;
    lc->x1_min = lc->color_min = lc->mass_min = INFINITY;
    lc->x1_max = lc->color_max = lc->mass_max = -INFINITY;
    for (size_t i = 0; i < s->n; i++) {
        lc->x1_min = fmin(lc->x1_min, c->x1[i]);
        lc->x1_max = fmax(lc->x1_max, c->x1[i]);
        lc->color_min = fmin(lc->color_min, c->color[i]);
        lc->color_max = fmax(lc->color_max, c->color[i]);
        if (c->mass && c->mass[i] < LT_MASS_PLACEHOLDER) {
            lc->n_mass_placeholder++;
        } else if (c->mass) {
            lc->mass_min = fmin(lc->mass_min, c->mass[i]);
            lc->mass_max = fmax(lc->mass_max, c->mass[i]);
            if (c->mass[i] >= LT_MASS_SPLIT)
                lc->n_mass_high++;
            else
                lc->n_mass_low++;
        }
        if (c->group) {
            size_t g = 0;
            while (g < lc->ngroups && strcmp(lc->group[g], c->group[i]))
                g++;
            if (g == lc->ngroups && g < LT_GROUPS_MAX)
                lc->group[lc->ngroups++] = c->group[i];
            if (g < lc->ngroups)
                lc->group_n[g]++;
            else
                lc->groups_more++;
        }
    }
    if (!(lc->mass_min <= lc->mass_max))
        lc->mass_min = lc->mass_max = NAN;
}

int lt_survey_stats_compute(const lt_survey *s, size_t nbins, lt_survey_stats *st,
                            lt_error *err)
{
    if (nbins < 1 || nbins > LT_HIST_MAX)
        return lt_error_set(err, LT_EINPUT, NULL, 0, "histogram bins must be 1 to %d",
                            LT_HIST_MAX);
    memset(st, 0, sizeof *st);
    st->z_min = st->zhel_min = st->obs_min = INFINITY;
    st->z_max = st->zhel_max = st->obs_max = -INFINITY;
    for (size_t i = 0; i < s->n; i++) {
        st->z_min = fmin(st->z_min, s->z[i]);
        st->z_max = fmax(st->z_max, s->z[i]);
        st->zhel_min = fmin(st->zhel_min, s->zhel[i]);
        st->zhel_max = fmax(st->zhel_max, s->zhel[i]);
        st->obs_min = fmin(st->obs_min, s->obs[i]);
        st->obs_max = fmax(st->obs_max, s->obs[i]);
    }
    st->err_min = st->err_median = st->err_max = st->err_mean = NAN;
    if (s->err) {
        double *e = malloc(s->n * sizeof *e);
        if (!e)
            return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        memcpy(e, s->err, s->n * sizeof *e);
        qsort(e, s->n, sizeof *e, cmp_double);
        double sum = 0.0;
        for (size_t i = 0; i < s->n; i++)
            sum += e[i];
        st->err_min = e[0];
        st->err_max = e[s->n - 1];
        st->err_median = s->n % 2 ? e[s->n / 2] : 0.5 * (e[s->n / 2 - 1] + e[s->n / 2]);
        st->err_mean = sum / (double)s->n;
        free(e);
    }
    if (s->lc)
        lightcurve_stats(s, &st->lc);
    st->nbins = nbins;
    double w = (st->z_max - st->z_min) / (double)nbins;
    for (size_t b = 0; b <= nbins; b++)
        st->edges[b] = st->z_min + w * (double)b;
    st->edges[nbins] = st->z_max;
    for (size_t i = 0; i < s->n; i++) {
        size_t b = w > 0 ? (size_t)((s->z[i] - st->z_min) / w) : 0;
        if (b >= nbins)
            b = nbins - 1; /* z_max belongs to the last bin */
        st->counts[b]++;
    }
    return LT_OK;
}

void lt_survey_digest_lightcurve(const lt_survey *s, uint64_t *h)
{
    const lt_lightcurve *lc = s->lc;
    if (!lc)
        return;
    const double *cols[] = {lc->x1,           lc->color,        lc->mass,     lc->err_mass,
                            lc->err_x1,       lc->err_color,    lc->cov_mb_x1, lc->cov_mb_color,
                            lc->cov_x1_color, lc->dz,           lc->calib_mu, lc->err_calib_mu};
    for (size_t k = 0; k < sizeof cols / sizeof cols[0]; k++) {
        int present = cols[k] != NULL;
        lt_digest_add(h, &present, sizeof present);
        if (present) /* NaN calib_mu of non-calibrators: the same bytes each time */
            lt_digest_add(h, cols[k], s->n * sizeof *cols[k]);
    }
    if (lc->calibrator)
        lt_digest_add(h, lc->calibrator, s->n * sizeof *lc->calibrator);
    for (size_t i = 0; lc->group && i < s->n; i++)
        lt_digest_add(h, lc->group[i], strlen(lc->group[i]) + 1);
}
