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

char *lt_text_trim(char *s)
{
    while (*s == ' ' || *s == '\t')
        s++;
    size_t n = strlen(s);
    while (n && (s[n - 1] == ' ' || s[n - 1] == '\t'))
        s[--n] = '\0';
    return s;
}

long lt_line_split(char *line, int csv, char **fields, long max)
{
    long n = 0;
    if (csv) {
        char *p = line;
        for (;;) {
            char *comma = strchr(p, ',');
            if (comma)
                *comma = '\0';
            if (n == max)
                return -1;
            fields[n++] = lt_text_trim(p);
            if (!comma)
                break;
            p = comma + 1;
        }
        return n;
    }
    char *p = line;
    for (;;) {
        while (*p == ' ' || *p == '\t')
            p++;
        if (!*p)
            break;
        if (n == max)
            return -1;
        fields[n++] = p;
        while (*p && *p != ' ' && *p != '\t')
            p++;
        if (*p)
            *p++ = '\0';
    }
    return n;
}
