/* Error records: see include/lantern/error.h. */
#include "lantern/error.h"

#include <stdarg.h>
#include <stdio.h>
#include <string.h>

void lt_error_clear(lt_error *err)
{
    if (!err)
        return;
    err->code = LT_OK;
    err->line = 0;
    err->file[0] = '\0';
    err->msg[0] = '\0';
}

int lt_error_set(lt_error *err, int code, const char *file, long line,
                 const char *fmt, ...)
{
    if (!err)
        return code;
    err->code = code;
    err->line = line;
    if (file)
        snprintf(err->file, sizeof err->file, "%s", file);
    else
        err->file[0] = '\0';
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(err->msg, sizeof err->msg, fmt, ap);
    va_end(ap);
    return code;
}

int lt_error_locate(lt_error *err, int code, const char *file, long line)
{
    if (!err)
        return code;
    if (file)
        snprintf(err->file, sizeof err->file, "%s", file);
    else
        err->file[0] = '\0';
    err->line = line;
    return err->code;
}

void lt_error_format(const lt_error *err, char *buf, size_t size)
{
    if (err->file[0] && err->line > 0)
        snprintf(buf, size, "%s:%ld: %s", err->file, err->line, err->msg);
    else if (err->file[0])
        snprintf(buf, size, "%s: %s", err->file, err->msg);
    else
        snprintf(buf, size, "%s", err->msg);
}

const char *lt_error_name(int code)
{
    switch (code) {
    case LT_OK: return "no error";
    case LT_EINPUT: return "bad input";
    case LT_EDOMAIN: return "unphysical parameters";
    case LT_ENUMERIC: return "numerical failure";
    case LT_EIO: return "input/output error";
    case LT_ENOMEM: return "out of memory";
    case LT_EINTR: return "interrupted";
    default: return "unknown error";
    }
}
