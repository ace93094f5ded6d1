/* Strict number parsing: see include/lantern/text.h. */
#include "lantern/text.h"

#include <ctype.h>
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

int lt_parse_double(const char *text, double *out)
{
    /* strtod accepts leading blanks, "inf", "nan" and hex floats; a data
     * file or a flag value should hold none of these, so refuse them here
     * rather than let a NaN travel into a fit. */
    if (!text || !*text || isspace((unsigned char)text[0]))
        return LT_EINPUT;
    for (const char *p = text; *p; p++) {
        if (!(isdigit((unsigned char)*p) || *p == '.' || *p == '-' ||
              *p == '+' || *p == 'e' || *p == 'E'))
            return LT_EINPUT;
    }
    char *end = NULL;
    errno = 0;
    double v = strtod(text, &end);
    if (end == text || *end != '\0' || !isfinite(v))
        return LT_EINPUT;
    /* ERANGE on underflow (1e-400) still gives a usable 0 or subnormal;
     * overflow already failed the isfinite test. */
    *out = v;
    return LT_OK;
}

int lt_parse_long(const char *text, long lo, long hi, long *out)
{
    if (!text || !*text || isspace((unsigned char)text[0]))
        return LT_EINPUT;
    char *end = NULL;
    errno = 0;
    long v = strtol(text, &end, 10);
    if (end == text || *end != '\0' || errno == ERANGE || v < lo || v > hi)
        return LT_EINPUT;
    *out = v;
    return LT_OK;
}

void lt_format_double(double v, char *buf, size_t size)
{
    if (!isfinite(v)) {
        snprintf(buf, size, "%s", isnan(v) ? "nan" : v > 0 ? "inf" : "-inf");
        return;
    }
    for (int digits = 15; digits <= 17; digits++) {
        snprintf(buf, size, "%.*g", digits, v);
        if (strtod(buf, NULL) == v)
            return;
    }
}
