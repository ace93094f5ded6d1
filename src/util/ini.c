/* The INI reader: see include/lantern/ini.h for the rules. */
#include <ctype.h>
#include <stdlib.h>
#include <string.h>

#include "lantern/text.h"
#include "lantern/file.h"
#include "lantern/ini.h"

/* Run files are small; anything larger is a mistake (a data file passed
 * where a run file was meant). */
#define INI_FILE_MAX (4u << 20)

static int is_name_char(int c) { return isalnum(c) || c == '_' || c == '.' || c == '-'; }

static int valid_name(const char *s)
{
    if (!*s)
        return 0;
    for (; *s; s++)
        if (!is_name_char((unsigned char)*s))
            return 0;
    return 1;
}

/* A key: a name, optionally NAME@GROUP (a per-group parameter of the
 * standardisation, sigma_int@SNLS), the group a label of printable
 * characters without blanks, '=', ':', ',', '.' or '@' (lantern/survey.h). */
static int valid_key(const char *s)
{
    const char *at = strchr(s, '@');
    if (!at)
        return valid_name(s);
    if (at == s || !at[1])
        return 0;
    for (const char *p = s; p < at; p++)
        if (!is_name_char((unsigned char)*p))
            return 0;
    for (const char *p = at + 1; *p; p++)
        if (!isgraph((unsigned char)*p) || strchr("=:,.@", *p))
            return 0;
    return 1;
}

void lt_ini_free(lt_ini *ini)
{
    if (!ini)
        return;
    for (size_t i = 0; i < ini->n; i++) {
        free(ini->entries[i].key);
        free(ini->entries[i].value);
    }
    for (size_t i = 0; i < ini->nsections; i++)
        free(ini->sections[i]);
    free(ini->entries);
    free(ini->sections);
    free(ini->section_lines);
    free(ini->section_used);
    free(ini->path);
    free(ini);
}

static int add_section(lt_ini *ini, const char *name, long line, lt_error *err)
{
    for (size_t i = 0; i < ini->nsections; i++)
        if (strcmp(ini->sections[i], name) == 0)
            return lt_error_set(err, LT_EINPUT, ini->path, line,
                                "section [%s] appears twice (first at line %ld)", name,
                                ini->section_lines[i]);
    size_t n = ini->nsections + 1;
    char **s = realloc(ini->sections, n * sizeof *s);
    if (s)
        ini->sections = s;
    long *l = realloc(ini->section_lines, n * sizeof *l);
    if (l)
        ini->section_lines = l;
    int *u = realloc(ini->section_used, n * sizeof *u);
    if (u)
        ini->section_used = u;
    char *copy = strdup(name);
    if (!s || !l || !u || !copy) {
        free(copy);
        return lt_error_set(err, LT_ENOMEM, ini->path, line, "out of memory");
    }
    ini->sections[ini->nsections] = copy;
    ini->section_lines[ini->nsections] = line;
    ini->section_used[ini->nsections] = 0;
    ini->nsections = n;
    return LT_OK;
}

static int add_entry(lt_ini *ini, const char *key, const char *value, long line,
                     lt_error *err)
{
    const char *section = ini->sections[ini->nsections - 1];
    for (size_t i = 0; i < ini->n; i++)
        if (ini->entries[i].section == section && strcmp(ini->entries[i].key, key) == 0)
            return lt_error_set(err, LT_EINPUT, ini->path, line,
                                "key '%s' appears twice in [%s] (first at line %ld)", key,
                                section, ini->entries[i].line);
    lt_ini_entry *e = realloc(ini->entries, (ini->n + 1) * sizeof *e);
    if (!e)
        return lt_error_set(err, LT_ENOMEM, ini->path, line, "out of memory");
    ini->entries = e;
    lt_ini_entry *x = &ini->entries[ini->n];
    x->section = (char *)section; /* owned by ini->sections */
    x->key = strdup(key);
    x->value = strdup(value);
    x->line = line;
    x->used = 0;
    if (!x->key || !x->value) {
        free(x->key);
        free(x->value);
        return lt_error_set(err, LT_ENOMEM, ini->path, line, "out of memory");
    }
    ini->n++;
    return LT_OK;
}

/* Parse one line (already without its line end) into ini. */
static int parse_line(lt_ini *ini, char *raw, long line, lt_error *err)
{
    char *s = lt_text_trim(raw);
    if (!*s || *s == '#' || *s == ';')
        return LT_OK;
    if (*s == '[') {
        char *close = strchr(s, ']');
        if (!close)
            return lt_error_set(err, LT_EINPUT, ini->path, line,
                                "section header without ']': %s", s);
        char *rest = lt_text_trim(close + 1);
        if (*rest && *rest != '#' && *rest != ';')
            return lt_error_set(err, LT_EINPUT, ini->path, line,
                                "unexpected text after the section header: %s", rest);
        *close = '\0';
        char *name = lt_text_trim(s + 1);
        if (!valid_name(name))
            return lt_error_set(err, LT_EINPUT, ini->path, line,
                                "section name '%s' may hold only letters, digits, '_', "
                                "'.' and '-'",
                                name);
        return add_section(ini, name, line, err);
    }
    char *eq = strchr(s, '=');
    if (!eq)
        return lt_error_set(err, LT_EINPUT, ini->path, line,
                            "expected 'key = value', '[section]' or a comment, got: %s", s);
    *eq = '\0';
    char *key = lt_text_trim(s), *value = eq + 1;
    if (!valid_key(key))
        return lt_error_set(err, LT_EINPUT, ini->path, line,
                            "key '%s' may hold only letters, digits, '_', '.' and '-' (and "
                            "'@GROUP' after a parameter's name)",
                            key);
    /* An inline comment starts at a '#' or ';' that follows a blank. */
    for (char *p = value; *p; p++) {
        if ((*p == '#' || *p == ';') && (p == value || p[-1] == ' ' || p[-1] == '\t')) {
            *p = '\0';
            break;
        }
    }
    value = lt_text_trim(value);
    if (ini->nsections == 0)
        return lt_error_set(err, LT_EINPUT, ini->path, line,
                            "key '%s' comes before any [section]", key);
    return add_entry(ini, key, value, line, err);
}

lt_ini *lt_ini_read(const char *path, lt_error *err)
{
    char *data = NULL;
    size_t size = 0;
    if (lt_file_read(path, INI_FILE_MAX, &data, &size, err))
        return NULL;
    lt_ini *ini = calloc(1, sizeof *ini);
    if (!ini || !(ini->path = strdup(path))) {
        free(ini);
        free(data);
        lt_error_set(err, LT_ENOMEM, path, 0, "out of memory");
        return NULL;
    }
    if (memchr(data, '\0', size)) {
        lt_error_set(err, LT_EINPUT, path, 0, "holds a NUL byte: not a text file");
        goto fail;
    }
    lt_lines it;
    lt_lines_start(&it, data);
    char *p;
    size_t len;
    while ((p = lt_lines_next(&it, &len))) {
        if (len > LT_INI_LINE_MAX) {
            lt_error_set(err, LT_EINPUT, path, it.line,
                         "line is %zu bytes long, over the limit of %d", len,
                         LT_INI_LINE_MAX);
            goto fail;
        }
        if (parse_line(ini, p, it.line, err))
            goto fail;
    }
    free(data);
    return ini;
fail:
    free(data);
    lt_ini_free(ini);
    return NULL;
}

lt_ini_entry *lt_ini_get(lt_ini *ini, const char *section, const char *key)
{
    lt_ini_has_section(ini, section);
    for (size_t i = 0; i < ini->n; i++) {
        lt_ini_entry *e = &ini->entries[i];
        if (strcmp(e->section, section) == 0 && strcmp(e->key, key) == 0) {
            e->used = 1;
            return e;
        }
    }
    return NULL;
}

int lt_ini_has_section(lt_ini *ini, const char *section)
{
    for (size_t i = 0; i < ini->nsections; i++)
        if (strcmp(ini->sections[i], section) == 0) {
            ini->section_used[i] = 1;
            return 1;
        }
    return 0;
}

int lt_ini_check_used(const lt_ini *ini, lt_error *err)
{
    for (size_t i = 0; i < ini->nsections; i++)
        if (!ini->section_used[i])
            return lt_error_set(err, LT_EINPUT, ini->path, ini->section_lines[i],
                                "unknown section [%s]", ini->sections[i]);
    for (size_t i = 0; i < ini->n; i++)
        if (!ini->entries[i].used)
            return lt_error_set(err, LT_EINPUT, ini->path, ini->entries[i].line,
                                "unknown key '%s' in [%s]", ini->entries[i].key,
                                ini->entries[i].section);
    return LT_OK;
}

/* The entry, or NULL; fails if required and absent. */
static int lookup(lt_ini *ini, const char *section, const char *key, int required,
                  lt_ini_entry **e, lt_error *err)
{
    *e = lt_ini_get(ini, section, key);
    if (*e || !required)
        return LT_OK;
    long line = 0; /* point at the section, where the key belongs */
    for (size_t i = 0; i < ini->nsections; i++)
        if (strcmp(ini->sections[i], section) == 0)
            line = ini->section_lines[i];
    return lt_error_set(err, LT_EINPUT, ini->path, line, "[%s] needs the key '%s'", section,
                        key);
}

int lt_ini_double(lt_ini *ini, const char *section, const char *key, int required,
                  double *out, lt_error *err)
{
    lt_ini_entry *e;
    int rc = lookup(ini, section, key, required, &e, err);
    if (rc)
        return rc;
    if (e && lt_parse_double(e->value, out))
        return lt_error_set(err, LT_EINPUT, ini->path, e->line,
                            "%s = '%s' is not a finite number", key, e->value);
    return LT_OK;
}

int lt_ini_long(lt_ini *ini, const char *section, const char *key, int required, long lo,
                long hi, long *out, lt_error *err)
{
    lt_ini_entry *e;
    int rc = lookup(ini, section, key, required, &e, err);
    if (rc)
        return rc;
    if (e && lt_parse_long(e->value, lo, hi, out))
        return lt_error_set(err, LT_EINPUT, ini->path, e->line,
                            "%s = '%s' is not a whole number from %ld to %ld", key, e->value,
                            lo, hi);
    return LT_OK;
}

int lt_ini_string(lt_ini *ini, const char *section, const char *key, int required,
                  const char **out, lt_error *err)
{
    lt_ini_entry *e;
    int rc = lookup(ini, section, key, required, &e, err);
    if (rc)
        return rc;
    if (e) {
        if (!*e->value)
            return lt_error_set(err, LT_EINPUT, ini->path, e->line, "%s has no value", key);
        *out = e->value;
    }
    return LT_OK;
}
