/*
 * lantern/text.h - scanning text: lines of a buffer, fields of a line,
 * trimming, and strict numbers (parsing and exact formatting).
 *
 * Every reader of text files (survey tables, covariance matrices, mode
 * tables, id lists, run files) walks its buffer with lt_lines, so that all
 * of them count lines alike (the numbers their error messages name) and
 * treat a UTF-8 byte-order mark and "\r\n" line ends alike. Everything
 * here edits the caller's buffer in place and allocates nothing. Blanks
 * are spaces and tabs only: a line's other bytes are the reader's to judge.
 */
#ifndef LANTERN_TEXT_H
#define LANTERN_TEXT_H

#include <stddef.h>

#include "lantern/error.h" /* the status codes of the parsers */

/* Lines of a NUL-terminated buffer, cut in place. */
typedef struct lt_lines {
    char *p;   /* the rest of the buffer */
    long line; /* the 1-based number of the line last returned */
} lt_lines;

/* Start at buf, skipping a UTF-8 byte-order mark. */
void lt_lines_start(lt_lines *it, char *buf);

/* The next line, NUL-terminated and without its "\n" or "\r\n", or NULL at
 * the end; *len gets its length. */
char *lt_lines_next(lt_lines *it, size_t *len);

/* Is the line empty or only blanks and tabs? */
int lt_line_blank(const char *s);

/* Split line in place into fields: at commas (csv, fields trimmed of blanks
 * and tabs) or at runs of blanks and tabs. Returns the count, or -1 if
 * there are more than max. */
long lt_line_split(char *line, int csv, char **fields, long max);

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

/*
 * Format v as short as the Grisu2 algorithm finds (Loitsch 2010) and always
 * reading back as exactly v, at most 17 significant digits, into out (32
 * bytes always enough): plain notation from 1e-4 to below 1e17, else
 * "d.ddde-XX" as printf's %g; "nan", "inf", "-inf", "-0" as such. Returns
 * the length. Much faster than lt_format_double (no printf, no strtod), for
 * files of millions of numbers; it can differ from it in the last digit
 * (both read back as v).
 */
size_t lt_format_shortest(double v, char *out);

/* s without its leading and trailing blanks and tabs: the trailing ones are
 * cut in place, and the result points into s. */
char *lt_text_trim(char *s);

#endif
