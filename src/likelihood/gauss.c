/*
 * What the Gaussian terms over a probe table (BAO, CMB) share: the table
 * read and its quantities named, the normalisation, and chi2 = r^T C^-1 r
 * from the covariance's factor.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "internal.h"

double lt_probe_chi2(const double *chol, size_t n, double *r)
{
    /* r^T C^-1 r = |L^-1 r|^2, forward substitution in place */
    double chi2 = 0.0;
    for (size_t i = 0; i < n; i++) {
        double s = r[i];
        for (size_t j = 0; j < i; j++)
            s -= chol[i * n + j] * r[j];
        r[i] = s / chol[i * n + i];
        chi2 += r[i] * r[i];
    }
    return chi2;
}

int lt_probe_term_open(lt_probe_term *t, const lt_probe_config *cf, const char *what,
                       const char *const *names, int nnames, lt_error *err)
{
    memset(t, 0, sizeof *t);
    if (lt_probe_read(cf->path, cf->cov_path, &t->data, err))
        return err ? err->code : LT_EINPUT;
    const lt_probe *d = t->data;
    if (!(t->kind = malloc(d->n * sizeof *t->kind)))
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    for (size_t i = 0; i < d->n; i++) {
        int k = 0;
        while (k < nnames && strcmp(d->quantity[i], names[k]))
            k++;
        if (k == nnames) {
            char list[256] = "";
            for (int q = 0, used = 0; q < nnames && used < (int)sizeof list; q++)
                used += snprintf(list + used, sizeof list - (size_t)used, "%s%s", q ? ", " : "",
                                 names[q]);
            return lt_error_set(err, LT_EINPUT, d->path, d->line[i],
                                "unknown %s quantity '%s' (%s)", what, d->quantity[i], list);
        }
        t->kind[i] = k;
    }
    /* ln det C from the factor lt_probe_read made */
    double logdet = 0.0;
    for (size_t i = 0; i < d->n; i++)
        logdet += 2.0 * log(d->chol[i * d->n + i]);
    t->lognorm = -0.5 * ((double)d->n * log(2.0 * M_PI) + logdet);
    t->chol = d->chol;
    return LT_OK;
}

void lt_probe_term_close(lt_probe_term *t)
{
    lt_probe_free(t->data);
    free(t->kind);
}
