/* Internal to the inference module. */
#ifndef LANTERN_INFERENCE_INTERNAL_H
#define LANTERN_INFERENCE_INTERNAL_H

#include <stddef.h>

/* Cholesky factor l (lower, row-major) of a small symmetric d x d matrix a;
 * -1 if a is not positive definite. For the proposal and bounding-ellipsoid
 * shapes of a few parameters, where a LAPACK call would cost more than it
 * saves. */
int lt_small_cholesky(const double *a, size_t d, double *l);

#endif
