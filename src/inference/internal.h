/* Internal to the inference module. */
#ifndef LANTERN_INFERENCE_INTERNAL_H
#define LANTERN_INFERENCE_INTERNAL_H

#include <stddef.h>
#include <stdint.h>
#include <stdio.h>

#include "lantern/error.h"

/* Cholesky factor l (lower, row-major) of a small symmetric d x d matrix a;
 * -1 if a is not positive definite. For the proposal and bounding-ellipsoid
 * shapes of a few parameters, where a LAPACK call would cost more than it
 * saves. */
int lt_small_cholesky(const double *a, size_t d, double *l);

/* Checkpoint streams (ckpt.c): bytes with a running FNV-1a hash; the hash
 * closes the file and is checked on reading. A stream being written holds
 * the caller's path (which must outlive it) and its own temporary name,
 * freed by lt_ckpt_commit, which must follow a successful lt_ckpt_create. */
typedef struct lt_ckpt {
    FILE *f;
    uint64_t h;
    int bad;
    const char *path;
    char *tmp;
} lt_ckpt;
int lt_ckpt_create(lt_ckpt *s, const char *path, lt_error *err); /* to path's temporary name */
void lt_ckpt_put(lt_ckpt *s, const void *p, size_t n);
int lt_ckpt_commit(lt_ckpt *s, lt_error *err); /* the hash, close, rename */
int lt_ckpt_open(lt_ckpt *s, const char *path, lt_error *err);
int lt_ckpt_get(lt_ckpt *s, void *p, size_t n); /* -1 at a short read */
int lt_ckpt_close_read(lt_ckpt *s);             /* -1 if the hash or length is wrong */

#endif
