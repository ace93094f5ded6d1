/* Internal to the likelihood module: the compressed path (compress.c). */
#ifndef LANTERN_COMPRESS_H
#define LANTERN_COMPRESS_H

#include "lantern/likelihood.h"

typedef struct lt_compress {
    size_t K;          /* knots */
    double x0, h;      /* knots at x0 + h k in ln(1+z) */
    double *zk;        /* their redshifts */
    lt_zgrid *kgrid;   /* for g at the knots */
    double *gfid;      /* g of the fiducial at the knots */
    double *F, *b, *u; /* B^T C^-1 B (K x K), B^T C^-1 d', B^T C^-1 1 */
    double a, c1d, c11;
} lt_compress;

lt_compress *lt_compress_alloc(const lt_survey *s, const lt_cosmo *fid, size_t K, lt_error *err);
void lt_compress_free(lt_compress *c);
int lt_compress_g(const lt_cosmo *cm, const lt_zgrid *g, const double *z, size_t n, double *dm,
                  double *out);
/* A = r^T C^-1 r and Bo = 1^T C^-1 r for dg (fdg: K scratch). */
void lt_compress_quad(const lt_compress *c, const double *dg, double *fdg, double *A, double *Bo);

#endif
