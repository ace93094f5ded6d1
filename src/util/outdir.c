/* Output folders and atomic file writes: see include/lantern/util.h. */
#include <dirent.h>
#include <errno.h>
#include <stdio.h>
#include <string.h>
#include <sys/stat.h>

#include "lantern/util.h"

int lt_outdir_prepare(const char *dir, int force, lt_error *err)
{
    struct stat st;
    if (stat(dir, &st) != 0) {
        if (errno != ENOENT)
            return lt_error_set(err, LT_EIO, dir, 0, "cannot use: %s", strerror(errno));
        /* make the folder and its missing parents */
        char path[4096];
        if (snprintf(path, sizeof path, "%s", dir) >= (int)sizeof path)
            return lt_error_set(err, LT_EINPUT, dir, 0, "path too long");
        for (char *p = path + 1; *p; p++) {
            if (*p != '/')
                continue;
            *p = '\0';
            if (mkdir(path, 0777) != 0 && errno != EEXIST)
                return lt_error_set(err, LT_EIO, path, 0, "cannot make the folder: %s",
                                    strerror(errno));
            *p = '/';
        }
        if (mkdir(path, 0777) != 0 && errno != EEXIST)
            return lt_error_set(err, LT_EIO, dir, 0, "cannot make the folder: %s",
                                strerror(errno));
        return LT_OK;
    }
    if (!S_ISDIR(st.st_mode))
        return lt_error_set(err, LT_EINPUT, dir, 0, "exists and is not a folder");
    DIR *d = opendir(dir);
    if (!d)
        return lt_error_set(err, LT_EIO, dir, 0, "cannot read the folder: %s", strerror(errno));
    int empty = 1, marked = 0;
    struct dirent *e;
    while ((e = readdir(d))) {
        if (!strcmp(e->d_name, ".") || !strcmp(e->d_name, ".."))
            continue;
        empty = 0;
        if (!strcmp(e->d_name, LT_MARKER))
            marked = 1;
    }
    closedir(d);
    if (empty)
        return LT_OK;
    if (!marked)
        return lt_error_set(err, LT_EINPUT, dir, 0,
                            "folder is not empty and was not made by lantern; choose another "
                            "--out folder");
    if (!force)
        return lt_error_set(err, LT_EINPUT, dir, 0,
                            "folder holds an earlier lantern run; pass --force to replace it");
    return LT_OK;
}

int lt_outdir_mark(const char *dir, const char *what, lt_error *err)
{
    char path[4096], text[512];
    snprintf(path, sizeof path, "%s/%s", dir, LT_MARKER);
    snprintf(text, sizeof text, "this folder was written by %s\n", what);
    return lt_file_write_text(path, text, err);
}

int lt_outdir_command(const char *dir, char *command, size_t size, lt_error *err)
{
    char path[4096], text[512] = "";
    snprintf(path, sizeof path, "%s/%s", dir, LT_MARKER);
    FILE *f = fopen(path, "r");
    if (!f)
        return lt_error_set(err, LT_EINPUT, dir, 0, "was not made by lantern (no %s file)",
                            LT_MARKER);
    size_t got = fread(text, 1, sizeof text - 1, f);
    fclose(f);
    text[got] = '\0';
    /* "this folder was written by lantern VERSION COMMAND[ ...]" */
    char word[64] = "";
    if (sscanf(text, "this folder was written by lantern %*s %63[a-z]", word) != 1)
        return lt_error_set(err, LT_EINPUT, path, 1, "not a lantern marker file");
    snprintf(command, size, "%s", word);
    return LT_OK;
}

void lt_tmp_name(const char *final, char *buf, size_t size)
{
    snprintf(buf, size, "%s.tmp", final);
}

int lt_file_commit(const char *final, lt_error *err)
{
    char tmp[4096];
    lt_tmp_name(final, tmp, sizeof tmp);
    if (rename(tmp, final) != 0)
        return lt_error_set(err, LT_EIO, final, 0, "cannot move the finished file in place: %s",
                            strerror(errno));
    return LT_OK;
}

int lt_file_write_text(const char *path, const char *text, lt_error *err)
{
    char tmp[4096];
    lt_tmp_name(path, tmp, sizeof tmp);
    FILE *f = fopen(tmp, "w");
    if (!f)
        return lt_error_set(err, LT_EIO, tmp, 0, "cannot write: %s", strerror(errno));
    size_t n = strlen(text);
    int bad = fwrite(text, 1, n, f) != n;
    bad |= fclose(f) != 0;
    if (bad) {
        remove(tmp);
        return lt_error_set(err, LT_EIO, tmp, 0, "write failed (disk full?)");
    }
    return lt_file_commit(path, err);
}
