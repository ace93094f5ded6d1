/*
 * lantern/file.h - whole files: reading them with a size limit, and writing
 * them atomically (a temporary name, then rename), so that a failure or an
 * interruption never leaves a half-written final file.
 */
#ifndef LANTERN_FILE_H
#define LANTERN_FILE_H

#include <stddef.h>
#include <stdio.h>

#include "lantern/error.h"

/*
 * Reading whole files: the bytes of path, NUL-terminated, in *data (free
 * it). Refuses a directory, a missing or unreadable file, and files over
 * max_bytes, with messages that name the file.
 */
int lt_file_read(const char *path, size_t max_bytes, char **data, size_t *size,
                 lt_error *err);

/* Whether path exists. */
int lt_path_exists(const char *path);

/*
 * Atomic files: write to lt_tmp_name(final) and then lt_file_commit it into
 * place with rename(2), so a failure or an interruption never leaves a
 * half-written final file. lt_tmp_name is "FINAL.tmp" as a new string (free
 * it); NULL (LT_ENOMEM in err) only when memory runs out.
 */
char *lt_tmp_name(const char *final, lt_error *err);
/* Open final's temporary file for writing into *f; LT_ENOMEM, or LT_EIO
 * naming the temporary file when it cannot be made (*f is then NULL). */
int lt_file_open_tmp(const char *final, FILE **f, lt_error *err);
int lt_file_commit(const char *final, lt_error *err);
/* Close f, the temporary file of final, and commit it; a write error or a
 * failed close removes the temporary file and is reported (disk full). */
int lt_file_close_commit(FILE *f, const char *final, lt_error *err);
/* Write text (NUL-terminated) atomically. */
int lt_file_write_text(const char *path, const char *text, lt_error *err);

/*
 * Paths are built here, as new strings of whatever length (free them),
 * rather than in fixed buffers, which cut long paths short: a path too long
 * for the operating system is then refused by it, under its whole name.
 * lt_path_join is "dir/name"; lt_path_format any other shape of path
 * (printf's format). NULL (LT_ENOMEM in err) only when memory runs out.
 */
char *lt_path_join(const char *dir, const char *name, lt_error *err);
char *lt_path_format(lt_error *err, const char *fmt, ...)
    __attribute__((format(printf, 2, 3)));

#endif
