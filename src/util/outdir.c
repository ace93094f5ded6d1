/*
 * Output folders and atomic file writes: see include/lantern/outdir.h and file.h.
 *
 * The marker file is the folder's memory between commands, so that no
 * state lives in the process: its first line names the command, and the
 * lines after it say which files are lantern's. A finished run lists its
 * files ("file: PATH"). A run in progress lists what it found when it took
 * the folder: the earlier run's files, to be removed once the new run has
 * succeeded unless it rewrote them ("replace:"), and anything else, which
 * is the user's and is never touched ("foreign:"); both with the inode,
 * modification time and size they had, which tell a rewritten file (every
 * write is a new file renamed into place) from an untouched one.
 */
#include <dirent.h>
#include <errno.h>
#include <inttypes.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "lantern/file.h"
#include "lantern/outdir.h"

#define MARKER_MAX (64u << 20) /* a campaign of many tasks lists many files */

/* One file below the folder: its path relative to the folder, and what
 * identifies this version of it. */
typedef struct {
    char *path;
    uint64_t ino, mtime_ns, size;
    int mark; /* 0 none, 'r' the earlier run's, 'f' the user's */
} entry;

typedef struct {
    entry *e;
    size_t n, cap;
    int failed;
} entries;

static void entries_free(entries *l)
{
    for (size_t i = 0; i < l->n; i++)
        free(l->e[i].path);
    free(l->e);
    memset(l, 0, sizeof *l);
}

static void entries_add(entries *l, const char *path, uint64_t ino, uint64_t mtime, uint64_t size,
                        int mark)
{
    if (l->n == l->cap) {
        size_t cap = l->cap ? 2 * l->cap : 64;
        entry *e = realloc(l->e, cap * sizeof *e);
        if (!e) {
            l->failed = 1;
            return;
        }
        l->e = e, l->cap = cap;
    }
    char *p = strdup(path);
    if (!p) {
        l->failed = 1;
        return;
    }
    l->e[l->n++] = (entry){p, ino, mtime, size, mark};
}

static int cmp_entry(const void *a, const void *b)
{
    return strcmp(((const entry *)a)->path, ((const entry *)b)->path);
}

/* The entry of path in l, sorted by entries_sort (a campaign's folder holds
 * a file a task, so a linear search per file would be quadratic). */
static const entry *entries_find(const entries *l, const char *path)
{
    entry key = {(char *)path, 0, 0, 0, 0};
    return l->n ? bsearch(&key, l->e, l->n, sizeof *l->e, cmp_entry) : NULL;
}

static void entries_sort(entries *l)
{
    if (l->n)
        qsort(l->e, l->n, sizeof *l->e, cmp_entry);
}

/* x is the version of the file that o recorded: not rewritten since (every
 * write is a new file renamed into place, a new inode). */
static int unchanged(const entry *o, const entry *x)
{
    return o && o->ino == x->ino && o->mtime_ns == x->mtime_ns && o->size == x->size;
}

static uint64_t mtime_ns(const struct stat *st)
{
    return (uint64_t)st->st_mtim.tv_sec * 1000000000u + (uint64_t)st->st_mtim.tv_nsec;
}

/* Every regular file below root/rel, but the marker and temporary files;
 * names with a newline are left out (the marker is line-based, and lantern
 * writes no such names). dirs (if not NULL) gets the folders below, each
 * after the folders inside it. */
static void walk(const char *root, const char *rel, entries *out, entries *dirs)
{
    const char *sep = rel[0] ? "/" : "";
    char *path = lt_path_format(NULL, "%s%s%s", root, sep, rel);
    if (!path) {
        out->failed = 1; /* out of memory: the list is not whole */
        return;
    }
    DIR *d = opendir(path);
    free(path);
    if (!d)
        return;
    struct dirent *de;
    while ((de = readdir(d))) {
        const char *nm = de->d_name;
        size_t len = strlen(nm);
        if (!strcmp(nm, ".") || !strcmp(nm, "..") || strchr(nm, '\n'))
            continue;
        if (!rel[0] && !strcmp(nm, LT_MARKER))
            continue;
        char *sub = lt_path_format(NULL, "%s%s%s", rel, sep, nm);
        char *full = sub ? lt_path_join(root, sub, NULL) : NULL;
        struct stat st;
        int seen = full && lstat(full, &st) == 0;
        out->failed |= !full;
        if (seen && S_ISDIR(st.st_mode)) {
            walk(root, sub, out, dirs);
            if (dirs) /* after its contents: deepest first */
                entries_add(dirs, sub, 0, 0, 0, 0);
        }
        else if (seen && S_ISREG(st.st_mode) && !(len > 4 && !strcmp(nm + len - 4, ".tmp")))
            entries_add(out, sub, (uint64_t)st.st_ino, mtime_ns(&st), (uint64_t)st.st_size, 0);
        free(sub);
        free(full);
        if (out->failed)
            break;
    }
    closedir(d);
}

/* The marker as read: its first line, its state lines. */
typedef struct {
    char first[512];
    int present, done, created;
    int made; /* folders made for it, the folder and its missing parents */
    char was[512];   /* the first line of the marker a forced run replaced */
    entries listed;  /* done: "file:"; in progress: "replace:" and "foreign:" */
    uint64_t mtime_ns;
} marker;

static void marker_free(marker *m) { entries_free(&m->listed); }

static int marker_read(const char *dir, marker *m, lt_error *err)
{
    memset(m, 0, sizeof *m);
    char *path = lt_path_join(dir, LT_MARKER, err);
    if (!path)
        return LT_ENOMEM;
    struct stat st;
    char *text = NULL;
    size_t size;
    int rc = stat(path, &st) != 0 ? LT_OK : lt_file_read(path, MARKER_MAX, &text, &size, err);
    if (!text) {
        free(path);
        return rc;
    }
    m->present = 1;
    m->mtime_ns = mtime_ns(&st);
    /* a marker with no state lines (lantern before 0.x) is a finished run
     * whose files are unknown: nothing of it will be removed */
    m->done = 1;
    char *save = NULL;
    int lineno = 0;
    for (char *line = strtok_r(text, "\n", &save); line; line = strtok_r(NULL, "\n", &save)) {
        if (lineno++ == 0) {
            snprintf(m->first, sizeof m->first, "%s", line);
            continue;
        }
        uint64_t ino, mt, sz;
        int off = 0;
        if (!strcmp(line, "state: done"))
            m->done = 1;
        else if (!strcmp(line, "state: running"))
            m->done = 0;
        else if (!strcmp(line, "created: yes"))
            m->created = 1;
        else if (sscanf(line, "made: %d", &m->made) == 1)
            ;
        else if (!strncmp(line, "was: ", 5))
            snprintf(m->was, sizeof m->was, "%s", line + 5);
        else if (!strncmp(line, "file: ", 6))
            entries_add(&m->listed, line + 6, 0, 0, 0, 'r');
        else if ((!strncmp(line, "replace: ", 9) || !strncmp(line, "foreign: ", 9)) &&
                 sscanf(line + 9, "%" SCNu64 " %" SCNu64 " %" SCNu64 " %n", &ino, &mt, &sz, &off) == 3 &&
                 off > 0)
            entries_add(&m->listed, line + 9 + off, ino, mt, sz, line[0] == 'r' ? 'r' : 'f');
    }
    free(text);
    if (m->listed.failed)
        rc = lt_error_set(err, LT_ENOMEM, path, 0, "out of memory");
    else
        entries_sort(&m->listed);
    free(path);
    return rc;
}

/* Write the marker: first line, then the state lines of m (in progress) or
 * the files of a finished run (done = 1, files). */
static int marker_write(const char *dir, const char *first, const marker *m, const entries *files,
                        lt_error *err)
{
    char *path = lt_path_join(dir, LT_MARKER, err);
    FILE *f = NULL;
    int rc = path ? lt_file_open_tmp(path, &f, err) : LT_ENOMEM;
    if (rc) {
        free(path);
        return rc;
    }
    fprintf(f, "%s\n", first);
    if (files) {
        fputs("state: done\n", f);
        for (size_t i = 0; i < files->n; i++)
            fprintf(f, "file: %s\n", files->e[i].path);
    } else {
        fputs("state: running\n", f);
        if (m->created)
            fputs("created: yes\n", f);
        if (m->made)
            fprintf(f, "made: %d\n", m->made);
        if (m->was[0])
            fprintf(f, "was: %s\n", m->was);
        for (size_t i = 0; i < m->listed.n; i++) {
            const entry *e = &m->listed.e[i];
            fprintf(f, "%s: %" PRIu64 " %" PRIu64 " %" PRIu64 " %s\n",
                    e->mark == 'r' ? "replace" : "foreign", e->ino, e->mtime_ns, e->size, e->path);
        }
    }
    rc = lt_file_close_commit(f, path, err);
    free(path);
    return rc;
}

/* Make dir and its missing parents; *made counts the folders made. */
static int make_dirs(const char *dir, int *made, lt_error *err)
{
    *made = 0;
    char *path = strdup(dir); /* cut at each '/' in turn */
    if (!path)
        return lt_error_set(err, LT_ENOMEM, dir, 0, "out of memory");
    int rc = LT_OK;
    for (char *p = path + 1; *p && !rc; p++) {
        if (*p != '/')
            continue;
        *p = '\0';
        if (mkdir(path, 0777) == 0)
            ++*made;
        else if (errno != EEXIST)
            rc = lt_error_set(err, LT_EIO, path, 0, "cannot make the folder: %s", strerror(errno));
        *p = '/';
    }
    free(path);
    if (rc)
        return rc;
    if (mkdir(dir, 0777) == 0)
        ++*made;
    else if (errno != EEXIST)
        return lt_error_set(err, LT_EIO, dir, 0, "cannot make the folder: %s", strerror(errno));
    return LT_OK;
}

int lt_outdir_prepare(const char *dir, int force, lt_error *err)
{
    struct stat st;
    marker m;
    memset(&m, 0, sizeof m);
    if (stat(dir, &st) != 0) {
        if (errno != ENOENT)
            return lt_error_set(err, LT_EIO, dir, 0, "cannot use: %s", strerror(errno));
        if (make_dirs(dir, &m.made, err))
            return err->code;
        m.created = 1;
        return marker_write(dir, "this folder was written by lantern (starting)", &m, NULL, err);
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
    if (empty) {
        m.created = 1;
        return marker_write(dir, "this folder was written by lantern (starting)", &m, NULL, err);
    }
    if (!marked)
        return lt_error_set(err, LT_EINPUT, dir, 0,
                            "folder is not empty and was not made by lantern; choose another "
                            "--out folder");
    if (!force)
        return lt_error_set(err, LT_EINPUT, dir, 0,
                            "folder holds an earlier lantern run; pass --force to replace it");
    /* --force: note what is here, to be sorted out when the new run succeeds */
    marker old;
    if (marker_read(dir, &old, err))
        return err->code;
    entries now = {0};
    walk(dir, "", &now, NULL);
    int rc = LT_OK;
    if (now.failed) {
        rc = lt_error_set(err, LT_ENOMEM, dir, 0, "out of memory");
        goto done;
    }
    m.created = !old.done && old.created;
    snprintf(m.was, sizeof m.was, "%s", old.done ? old.first : old.was);
    for (size_t i = 0; i < now.n; i++) {
        const entry *x = &now.e[i], *o = entries_find(&old.listed, x->path);
        /* a finished run's listed files are lantern's; in an unfinished one,
         * whatever is not known to be the user's came from lantern */
        int mark = old.done ? (o ? 'r' : 'f') : (o && o->mark == 'f' ? 'f' : 'r');
        entries_add(&m.listed, x->path, x->ino, x->mtime_ns, x->size, mark);
    }
    if (m.listed.failed)
        rc = lt_error_set(err, LT_ENOMEM, dir, 0, "out of memory");
    else
        rc = marker_write(dir, old.first[0] ? old.first : "this folder was written by lantern",
                          &m, NULL, err);
done:
    entries_free(&now);
    marker_free(&old);
    marker_free(&m);
    return rc;
}

int lt_outdir_mark(const char *dir, const char *what, lt_error *err)
{
    char first[512];
    snprintf(first, sizeof first, "this folder was written by %s", what);
    marker m;
    if (marker_read(dir, &m, err))
        return err->code;
    int rc = m.present && m.done && m.listed.n ? marker_write(dir, first, NULL, &m.listed, err)
                                                : marker_write(dir, first, &m, NULL, err);
    marker_free(&m);
    return rc;
}

/* Remove the folders left empty below dir (not dir itself). */
static void prune(const char *dir)
{
    entries files = {0}, dirs = {0};
    walk(dir, "", &files, &dirs);
    for (size_t i = 0; i < dirs.n; i++) {
        char *full = lt_path_join(dir, dirs.e[i].path, NULL);
        if (full)
            rmdir(full); /* fails, harmlessly, unless empty */
        free(full);
    }
    entries_free(&files);
    entries_free(&dirs);
}

int lt_outdir_finish(const char *dir, const char *what, lt_error *err)
{
    marker m;
    if (marker_read(dir, &m, err))
        return err->code;
    entries now = {0}, files = {0};
    walk(dir, "", &now, NULL);
    int rc = LT_OK;
    for (size_t i = 0; i < now.n && !now.failed; i++) {
        const entry *x = &now.e[i], *o = entries_find(&m.listed, x->path);
        int same = unchanged(o, x);
        if (m.present && m.done) {
            /* finished before (a report rebuilt in place): its files and
             * those written since the marker */
            if (o || x->mtime_ns >= m.mtime_ns)
                entries_add(&files, x->path, 0, 0, 0, 'r');
        } else if (same && o->mark == 'r') {
            /* the earlier run's, not rewritten by this one */
            char *full = lt_path_join(dir, x->path, err);
            if (!full)
                rc = LT_ENOMEM;
            else if (remove(full) != 0 && errno != ENOENT)
                rc = lt_error_set(err, LT_EIO, full, 0, "cannot remove the earlier run's file: %s",
                                  strerror(errno));
            free(full);
            if (rc)
                goto done;
        } else if (!(same && o->mark == 'f')) {
            entries_add(&files, x->path, 0, 0, 0, 'r');
        }
    }
    if (now.failed || files.failed) {
        rc = lt_error_set(err, LT_ENOMEM, dir, 0, "out of memory");
        goto done;
    }
    prune(dir);
    char first[512];
    snprintf(first, sizeof first, "this folder was written by %s", what);
    rc = marker_write(dir, first, NULL, &files, err);
done:
    entries_free(&now);
    entries_free(&files);
    marker_free(&m);
    return rc;
}

void lt_outdir_abandon(const char *dir)
{
    lt_error err;
    marker m;
    if (marker_read(dir, &m, &err) || !m.present || m.done) {
        marker_free(&m);
        return;
    }
    entries now = {0};
    walk(dir, "", &now, NULL);
    /* did this run write anything worth keeping (a checkpoint to resume)? */
    int wrote = now.failed;
    for (size_t i = 0; i < now.n; i++) {
        const entry *x = &now.e[i], *o = entries_find(&m.listed, x->path);
        if (!unchanged(o, x))
            wrote = 1;
    }
    if (!wrote && m.was[0]) {
        /* a forced run that failed before writing: the earlier run stands,
         * with its own marker back */
        entries files = {0};
        for (size_t i = 0; i < m.listed.n; i++)
            if (m.listed.e[i].mark == 'r')
                entries_add(&files, m.listed.e[i].path, 0, 0, 0, 'r');
        if (!files.failed)
            marker_write(dir, m.was, NULL, &files, &err);
        entries_free(&files);
    } else if (!wrote && m.created && now.n == 0) {
        /* a new folder with nothing in it: leave no trace */
        prune(dir);
        char *path = lt_path_join(dir, LT_MARKER, &err);
        if (path)
            remove(path);
        free(path);
        /* the folder, and the parents made for it (each only if empty) */
        path = strdup(dir);
        for (int k = 0; path && k < m.made; k++) { /* an empty folder of the user's stays */
            size_t len = strlen(path);
            while (len > 1 && path[len - 1] == '/')
                path[--len] = '\0';
            if (rmdir(path) != 0)
                break;
            char *slash = strrchr(path, '/');
            if (!slash || slash == path)
                break;
            *slash = '\0';
        }
        free(path);
    }
    entries_free(&now);
    marker_free(&m);
}

int lt_outdir_command(const char *dir, char *command, size_t size, lt_error *err)
{
    char *path = lt_path_join(dir, LT_MARKER, err), text[512] = "";
    if (!path)
        return LT_ENOMEM;
    FILE *f = fopen(path, "r");
    int rc = LT_OK;
    if (!f) {
        rc = lt_error_set(err, LT_EINPUT, dir, 0, "was not made by lantern (no %s file)",
                          LT_MARKER);
        goto done;
    }
    size_t got = fread(text, 1, sizeof text - 1, f);
    fclose(f);
    text[got] = '\0';
    /* "this folder was written by lantern VERSION COMMAND[ ...]" */
    char word[64] = "";
    if (sscanf(text, "this folder was written by lantern %*s %63[a-z]", word) != 1)
        rc = lt_error_set(err, LT_EINPUT, path, 1, "not a lantern marker file");
    else
        snprintf(command, size, "%s", word);
done:
    free(path);
    return rc;
}

char *lt_tmp_name(const char *final, lt_error *err)
{
    return lt_path_format(err, "%s.tmp", final);
}

int lt_file_open_tmp(const char *final, FILE **f, lt_error *err)
{
    char *tmp = lt_tmp_name(final, err);
    *f = tmp ? fopen(tmp, "w") : NULL;
    int rc = !tmp ? LT_ENOMEM
             : !*f ? lt_error_set(err, LT_EIO, tmp, 0, "cannot write: %s", strerror(errno))
                   : LT_OK;
    free(tmp);
    return rc;
}

int lt_file_close_commit(FILE *f, const char *final, lt_error *err)
{
    int bad = ferror(f);
    bad |= fclose(f) != 0;
    if (!bad)
        return lt_file_commit(final, err);
    char *tmp = lt_tmp_name(final, err);
    if (!tmp) /* the temporary file stays; output folders pass over *.tmp */
        return LT_ENOMEM;
    remove(tmp);
    int rc = lt_error_set(err, LT_EIO, tmp, 0, "write failed (disk full?)");
    free(tmp);
    return rc;
}

int lt_file_commit(const char *final, lt_error *err)
{
    char *tmp = lt_tmp_name(final, err);
    if (!tmp)
        return LT_ENOMEM;
    int rc = LT_OK;
    if (rename(tmp, final) != 0)
        rc = lt_error_set(err, LT_EIO, final, 0, "cannot move the finished file in place: %s",
                          strerror(errno));
    free(tmp);
    return rc;
}

int lt_file_write_text(const char *path, const char *text, lt_error *err)
{
    FILE *f;
    int rc = lt_file_open_tmp(path, &f, err);
    if (rc)
        return rc;
    fputs(text, f); /* a short write shows in ferror(f), checked on closing */
    return lt_file_close_commit(f, path, err);
}

int lt_outdir_done(const char *dir)
{
    lt_error err;
    marker m;
    int done = !marker_read(dir, &m, &err) && m.present && m.done;
    marker_free(&m);
    return done;
}
