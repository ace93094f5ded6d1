/*
 * lantern/util.h - error records and strict text-to-number parsing.
 *
 * Library functions never print and never exit. They return a status code
 * and, when given a non-NULL lt_error, fill it with a message and, where the
 * problem came from a file, that file's name and line. The command line is
 * the only place that prints them ("lantern: FILE:LINE: message").
 */
#ifndef LANTERN_UTIL_H
#define LANTERN_UTIL_H

#include <stddef.h>
#include <stdio.h>

/* Status codes. LT_OK is zero; every failure is positive. */
enum {
    LT_OK = 0,
    LT_EINPUT = 1,  /* bad input or bad usage: the user must change something */
    LT_EDOMAIN = 2, /* parameters outside the physical domain (no big bang, ...) */
    LT_ENUMERIC = 3,/* a numerical method failed */
    LT_EIO = 4,     /* reading or writing a file failed */
    LT_ENOMEM = 5,  /* an allocation failed */
    LT_EINTR = 6    /* stopped on request (a signal); the state was kept */
};

#define LT_ERROR_MSG_MAX 512
#define LT_ERROR_FILE_MAX 256

typedef struct lt_error {
    int code;                       /* one of the LT_E* codes, LT_OK if none */
    long line;                      /* 1-based line in file, 0 if not known */
    char file[LT_ERROR_FILE_MAX];   /* empty if the error has no file */
    char msg[LT_ERROR_MSG_MAX];
} lt_error;

/* Reset a record to "no error". */
void lt_error_clear(lt_error *err);

/* Fill err (if non-NULL) and return code. file may be NULL, line 0. */
int lt_error_set(lt_error *err, int code, const char *file, long line,
                 const char *fmt, ...)
    __attribute__((format(printf, 5, 6)));

/* Give an existing error a file and line, keeping its message (for a
 * caller that knows where the bad value came from). Returns err's code, or
 * code if err is NULL. */
int lt_error_locate(lt_error *err, int code, const char *file, long line);

/* Format "FILE:LINE: message", "FILE: message" or "message" into buf. */
void lt_error_format(const lt_error *err, char *buf, size_t size);

/* A short name for a status code ("bad input", "out of memory", ...). */
const char *lt_error_name(int code);

/*
 * Strict parsing of one number: the whole of text (no leading or trailing
 * junk, no empty string) must be a finite decimal number. Returns LT_OK and
 * stores the value, or LT_EINPUT without touching *out.
 */
int lt_parse_double(const char *text, double *out);

/* The same for a base-10 integer in [lo, hi]. */
int lt_parse_long(const char *text, long lo, long hi, long *out);

/*
 * Format v in the fewest significant digits (15 to 17) that read back as
 * exactly v, so that text output loses nothing ("0.1", not
 * "0.10000000000000001"). Non-finite values give "inf", "-inf" or "nan".
 * size of 32 is always enough.
 */
void lt_format_double(double v, char *buf, size_t size);

/* A cJSON number item that reads back exactly (lt_format_double), or null
 * where v is not finite: JSON has no infinities. cJSON's own printing keeps
 * 15 digits whenever they match within an epsilon, dropping the last bit. */
struct cJSON;
struct cJSON *lt_json_number(double v);

/*
 * Run and scenario files: a small INI reader of our own. Debian's libinih
 * (55) is built with a 200-byte line limit that splits longer lines
 * silently and gives its handler no line number; lantern needs both rules
 * below, so it reads INI itself.
 *
 *   # comment            ; comment         (whole lines; also after a value,
 *   [section]                               preceded by a blank)
 *   key = value
 *
 * Keys and section names are [A-Za-z0-9_.-]+. Errors, with file and line:
 * a line over LT_INI_LINE_MAX bytes, a line that is none of the above, a
 * key before any section, a key given twice in a section, a section given
 * twice. Consumers look keys up with lt_ini_get, which marks them used;
 * lt_ini_check_used then refuses any key nobody asked for (an unknown key
 * or a typo), naming its line.
 */
#define LT_INI_LINE_MAX 4096

typedef struct lt_ini_entry {
    char *section, *key, *value;
    long line;
    int used;
} lt_ini_entry;

typedef struct lt_ini {
    char *path;
    size_t n;
    lt_ini_entry *entries;
    size_t nsections;
    char **sections;      /* in file order */
    long *section_lines;  /* the line of each [section] */
    int *section_used;
} lt_ini;

lt_ini *lt_ini_read(const char *path, lt_error *err);
void lt_ini_free(lt_ini *ini);
/* The entry for section/key, marked used, or NULL. */
lt_ini_entry *lt_ini_get(lt_ini *ini, const char *section, const char *key);
/* Mark a section as known (its keys are still checked one by one). */
int lt_ini_has_section(lt_ini *ini, const char *section);
/* LT_EINPUT for the first unused key or unknown section, naming its line. */
int lt_ini_check_used(const lt_ini *ini, lt_error *err);

/* Typed look-ups: LT_OK and the value, LT_OK and *out untouched if the key
 * is absent and not required, or LT_EINPUT naming the file and line. */
int lt_ini_double(lt_ini *ini, const char *section, const char *key, int required,
                  double *out, lt_error *err);
int lt_ini_long(lt_ini *ini, const char *section, const char *key, int required, long lo,
                long hi, long *out, lt_error *err);
int lt_ini_string(lt_ini *ini, const char *section, const char *key, int required,
                  const char **out, lt_error *err);

/*
 * Reading whole files: the bytes of path, NUL-terminated, in *data (free
 * it). Refuses a directory, a missing or unreadable file, and files over
 * max_bytes, with messages that name the file.
 */
int lt_file_read(const char *path, size_t max_bytes, char **data, size_t *size,
                 lt_error *err);

/*
 * Output folders (DESIGN.md): an absent or empty folder is used; a folder
 * holding lantern's marker file (LT_MARKER) is an earlier run and is
 * refused unless force; any other non-empty folder is refused always, so
 * that lantern never overwrites files it did not make.
 *
 * The life of a folder: lt_outdir_prepare takes it (making it if need be)
 * and writes the marker, noting what the folder holds; lt_outdir_mark
 * renames the command in the marker while the run goes on ("(running)");
 * then exactly one of
 *   lt_outdir_finish   the run succeeded: the earlier run's files that this
 *                      run did not rewrite are removed (a fit forced over a
 *                      sample leaves no chains behind), files the user put
 *                      there are kept, and the marker lists the run's files;
 *   lt_outdir_abandon  the run failed: nothing is removed; a folder this run
 *                      made (or found empty) that holds nothing of it is
 *                      removed, and a forced folder the run never wrote to
 *                      gets the earlier run's marker back, so that a failed
 *                      run neither destroys the earlier one nor leaves an
 *                      empty folder. A checkpoint to resume keeps the folder.
 * The state lives in the marker, so a resumed run finishes the same way.
 */
#define LT_MARKER ".lantern-output"
int lt_outdir_prepare(const char *dir, int force, lt_error *err);
/* Write the marker's first line, naming the command that makes the folder. */
int lt_outdir_mark(const char *dir, const char *what, lt_error *err);
int lt_outdir_finish(const char *dir, const char *what, lt_error *err);
void lt_outdir_abandon(const char *dir);
/* dir/name into buf (size bytes); LT_EINPUT when it does not fit. */
int lt_outdir_path(char *buf, size_t size, const char *dir, const char *name, lt_error *err);
int lt_outdir_command(const char *dir, char *command, size_t size, lt_error *err);

/*
 * Atomic files: write to lt_tmp_name(final) and then lt_file_commit it into
 * place with rename(2), so a failure or an interruption never leaves a
 * half-written final file.
 */
void lt_tmp_name(const char *final, char *buf, size_t size);
int lt_file_commit(const char *final, lt_error *err);
/* Close f, the temporary file of final, and commit it; a write error or a
 * failed close removes the temporary file and is reported (disk full). */
int lt_file_close_commit(FILE *f, const char *final, lt_error *err);
/* Write text (NUL-terminated) atomically. */
int lt_file_write_text(const char *path, const char *text, lt_error *err);

#endif
