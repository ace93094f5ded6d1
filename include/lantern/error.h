/*
 * lantern/error.h - error records and status codes.
 *
 * Library functions never print and never exit. They return a status code
 * and, when given a non-NULL lt_error, fill it with a message and, where the
 * problem came from a file, that file's name and line. The command line is
 * the only place that prints them ("lantern: FILE:LINE: message").
 */
#ifndef LANTERN_ERROR_H
#define LANTERN_ERROR_H

#include <stddef.h>

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

#endif
