/* Lines, fields and trimming: see include/lantern/text.h. */
#include <string.h>

#include "lantern/text.h"

void lt_lines_start(lt_lines *it, char *buf)
{
    /* strncmp, not memcmp: the buffer may be shorter than three bytes
     * (found by fuzzing) */
    if (strncmp(buf, "\xEF\xBB\xBF", 3) == 0)
        buf += 3;
    it->p = buf;
    it->line = 0;
}

char *lt_lines_next(lt_lines *it, size_t *len)
{
    if (!*it->p)
        return NULL;
    char *s = it->p, *end = strchr(s, '\n');
    if (end) {
        *end = '\0';
        it->p = end + 1;
    } else {
        it->p = s + strlen(s);
    }
    size_t n = end ? (size_t)(end - s) : strlen(s);
    if (n && s[n - 1] == '\r')
        s[--n] = '\0';
    it->line++;
    *len = n;
    return s;
}

int lt_line_blank(const char *s)
{
    for (; *s; s++)
        if (*s != ' ' && *s != '\t')
            return 0;
    return 1;
}

int lt_line_skipped(const char *s)
{
    while (*s == ' ' || *s == '\t')
        s++;
    return !*s || *s == '#';
}

char *lt_text_trim(char *s)
{
    while (*s == ' ' || *s == '\t')
        s++;
    size_t n = strlen(s);
    while (n && (s[n - 1] == ' ' || s[n - 1] == '\t'))
        s[--n] = '\0';
    return s;
}

/* One RFC 4180 field at p (blanks before it skipped): quoted, with "" for a
 * quote, or bare up to the next comma (trimmed). *f gets the field, cut in
 * place; returns where the next field starts, NULL after the last, or sets
 * *bad (a quote left open, or text after a closing quote). */
static char *csv_field(char *p, char **f, long *bad)
{
    while (*p == ' ' || *p == '\t')
        p++;
    if (*p != '"') {
        char *comma = strchr(p, ',');
        if (comma)
            *comma = '\0';
        *f = lt_text_trim(p);
        return comma ? comma + 1 : NULL;
    }
    /* the unquoted text is never longer than the quoted, so it is written
     * over it from the opening quote on */
    char *w = p, *q = p + 1;
    *f = w;
    for (;;) {
        if (!*q) {
            *bad = LT_SPLIT_OPEN_QUOTE;
            return NULL;
        }
        if (*q == '"' && q[1] == '"')
            *w++ = '"', q += 2;
        else if (*q == '"')
            break;
        else
            *w++ = *q++;
    }
    *w = '\0';
    for (q++; *q == ' ' || *q == '\t'; q++)
        ;
    if (*q && *q != ',')
        *bad = LT_SPLIT_AFTER_QUOTE;
    return *q == ',' ? q + 1 : NULL;
}

long lt_line_split(char *line, int csv, char **fields, long max)
{
    long n = 0;
    if (csv) {
        char *p = line;
        do {
            long bad = 0;
            if (n == max)
                return LT_SPLIT_TOO_MANY;
            p = csv_field(p, &fields[n++], &bad);
            if (bad)
                return bad;
        } while (p);
        return n;
    }
    char *p = line;
    for (;;) {
        while (*p == ' ' || *p == '\t')
            p++;
        if (!*p)
            break;
        if (n == max)
            return LT_SPLIT_TOO_MANY;
        fields[n++] = p;
        while (*p && *p != ' ' && *p != '\t')
            p++;
        if (*p)
            *p++ = '\0';
    }
    return n;
}

const char *lt_split_error(long code)
{
    switch (code) {
    case LT_SPLIT_OPEN_QUOTE:
        return "a quoted field is not closed on its line (a quoted field may not hold a line "
               "break)";
    case LT_SPLIT_AFTER_QUOTE:
        return "text after a quoted field's closing quote (write a quote inside a quoted field "
               "twice: \"\")";
    default:
        return "too many fields";
    }
}
