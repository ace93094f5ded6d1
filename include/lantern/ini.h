/*
 * lantern/ini.h - run and scenario files (INI syntax): the reader, typed
 * look-ups, and the check that every key was asked for.
 */
#ifndef LANTERN_INI_H
#define LANTERN_INI_H

#include <stddef.h>

#include "lantern/error.h"

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

#endif
