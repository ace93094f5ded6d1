/* Whole-file reading: see include/lantern/file.h. */
#include <errno.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "lantern/file.h"

int lt_file_read(const char *path, size_t max_bytes, char **data, size_t *size,
                 lt_error *err)
{
    struct stat st;
    if (stat(path, &st) != 0)
        return lt_error_set(err, LT_EINPUT, path, 0, "cannot open: %s", strerror(errno));
    if (S_ISDIR(st.st_mode))
        return lt_error_set(err, LT_EINPUT, path, 0,
                            "is a directory; give the path of a file");
    FILE *f = fopen(path, "rb");
    if (!f)
        return lt_error_set(err, LT_EINPUT, path, 0, "cannot open: %s", strerror(errno));
    /* Read in chunks rather than trusting st_size: pipes and /proc files
     * report 0. */
    size_t cap = st.st_size > 0 ? (size_t)st.st_size + 1 : 65536, n = 0;
    if (cap > max_bytes + 1)
        cap = max_bytes + 1;
    char *buf = malloc(cap + 1);
    if (!buf) {
        fclose(f);
        return lt_error_set(err, LT_ENOMEM, path, 0, "out of memory reading the file");
    }
    for (;;) {
        if (n == cap) {
            if (cap > max_bytes) {
                free(buf);
                fclose(f);
                return lt_error_set(err, LT_EINPUT, path, 0,
                                    "file is larger than the limit of %zu bytes",
                                    max_bytes);
            }
            size_t ncap = cap * 2 > max_bytes + 1 ? max_bytes + 1 : cap * 2;
            char *nb = realloc(buf, ncap + 1);
            if (!nb) {
                free(buf);
                fclose(f);
                return lt_error_set(err, LT_ENOMEM, path, 0, "out of memory reading the file");
            }
            buf = nb, cap = ncap;
        }
        size_t got = fread(buf + n, 1, cap - n, f);
        n += got;
        if (got == 0)
            break;
    }
    int bad = ferror(f);
    fclose(f);
    if (bad) {
        free(buf);
        return lt_error_set(err, LT_EIO, path, 0, "read error");
    }
    if (n > max_bytes) {
        free(buf);
        return lt_error_set(err, LT_EINPUT, path, 0,
                            "file is larger than the limit of %zu bytes", max_bytes);
    }
    buf[n] = '\0';
    *data = buf;
    *size = n;
    return LT_OK;
}

char *lt_path_format(lt_error *err, const char *fmt, ...)
{
    va_list ap, again;
    va_start(ap, fmt);
    va_copy(again, ap);
    /* measure, then write: the second pass sees the same arguments */
    int n = vsnprintf(NULL, 0, fmt, ap);
    va_end(ap);
    char *s = n >= 0 ? malloc((size_t)n + 1) : NULL; /* n < 0: over INT_MAX bytes */
    if (s)
        vsnprintf(s, (size_t)n + 1, fmt, again);
    va_end(again);
    if (!s)
        lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory for a path");
    return s;
}

char *lt_path_join(const char *dir, const char *name, lt_error *err)
{
    return lt_path_format(err, "%s/%s", dir, name);
}

int lt_path_exists(const char *path)
{
    struct stat st;
    return stat(path, &st) == 0;
}
