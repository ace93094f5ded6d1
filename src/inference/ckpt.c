/*
 * Checkpoint files of the samplers: raw bytes with an FNV-1a hash of
 * everything written, checked on reading, so that a damaged or truncated
 * file is refused rather than resumed. Written to a temporary name and
 * renamed when complete (lt_file_commit), so a crash never leaves half a
 * checkpoint where a whole one was.
 */
#include <errno.h>
#include <stdlib.h>
#include <string.h>

#include "lantern/digest.h"
#include "lantern/file.h"
#include "internal.h"

int lt_ckpt_create(lt_ckpt *s, const char *path, lt_error *err)
{
    s->path = path;
    s->tmp = lt_tmp_name(path, err);
    s->f = s->tmp ? fopen(s->tmp, "wb") : NULL;
    s->h = LT_DIGEST_START;
    s->bad = 0;
    if (s->f)
        return LT_OK;
    int rc = s->tmp ? lt_error_set(err, LT_EIO, s->tmp, 0, "cannot write the checkpoint: %s",
                                   strerror(errno))
                    : LT_ENOMEM;
    free(s->tmp);
    s->tmp = NULL;
    return rc;
}

void lt_ckpt_put(lt_ckpt *s, const void *p, size_t n)
{
    lt_digest_add(&s->h, p, n);
    if (n && fwrite(p, 1, n, s->f) != n)
        s->bad = 1;
}

int lt_ckpt_commit(lt_ckpt *s, lt_error *err)
{
    uint64_t h = s->h;
    lt_ckpt_put(s, &h, sizeof h);
    int bad = s->bad || fflush(s->f) != 0;
    bad |= fclose(s->f) != 0;
    int rc;
    if (bad) {
        remove(s->tmp);
        rc = lt_error_set(err, LT_EIO, s->tmp, 0, "writing the checkpoint failed (disk full?)");
    } else
        rc = lt_file_commit(s->path, err);
    free(s->tmp);
    s->tmp = NULL;
    return rc;
}

int lt_ckpt_open(lt_ckpt *s, const char *path, lt_error *err)
{
    s->path = path;
    s->tmp = NULL;
    s->f = fopen(path, "rb");
    s->h = LT_DIGEST_START;
    s->bad = 0;
    if (!s->f)
        return lt_error_set(err, LT_EINPUT, path, 0, "cannot open the checkpoint: %s",
                            strerror(errno));
    return LT_OK;
}

int lt_ckpt_get(lt_ckpt *s, void *p, size_t n)
{
    if (n && fread(p, 1, n, s->f) != n)
        return (s->bad = 1), -1;
    lt_digest_add(&s->h, p, n);
    return 0;
}

int lt_ckpt_close_read(lt_ckpt *s)
{
    uint64_t h_calc = s->h, h_file;
    int ok = !s->bad && fread(&h_file, sizeof h_file, 1, s->f) == 1 && h_file == h_calc &&
             fgetc(s->f) == EOF;
    fclose(s->f);
    return ok ? 0 : -1;
}
