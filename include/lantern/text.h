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

/* Is the line one that tables skip: blank, or a comment (its first
 * non-blank character '#')? */
int lt_line_skipped(const char *s);

/*
 * Split line in place into fields: at runs of blanks and tabs, or (csv) as
 * one record of RFC 4180 CSV: fields separated by commas and trimmed of
 * blanks and tabs, a field that starts with '"' quoted up to its closing
 * '"' (commas inside it kept, "" read as one quote, the text inside taken
 * as it is, blanks too). A quote inside an unquoted field is an ordinary
 * character. Returns the count, or a negative LT_SPLIT_* code:
 * LT_SPLIT_TOO_MANY if there are more than max fields, LT_SPLIT_OPEN_QUOTE
 * if a quoted field is not closed on the line (the line breaks RFC 4180
 * allows inside quotes are refused: every reader here counts a record as
 * one line, the number its errors name), LT_SPLIT_AFTER_QUOTE if text
 * follows a closing quote (a quote not doubled).
 */
#define LT_SPLIT_TOO_MANY (-1)
#define LT_SPLIT_OPEN_QUOTE (-2)
#define LT_SPLIT_AFTER_QUOTE (-3)
long lt_line_split(char *line, int csv, char **fields, long max);
/* What a negative count of lt_line_split means, for an error message. */
const char *lt_split_error(long code);

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
