/* err.c -- fill a struct err.  Printing is the CLI's job (src/cli/util.c). */
#include "vecsift/err.h"

#include <stdarg.h>
#include <stdio.h>
#include <string.h>

static int vset(struct err *e, int code, const char *file, long line, const char *fmt, va_list ap)
{
    if (!e || e->code != ERR_OK)
        return -1;
    size_t n = 0;
    if (file && line > 0)
        n = (size_t)snprintf(e->msg, sizeof e->msg, "%s:%ld: ", file, line);
    else if (file)
        n = (size_t)snprintf(e->msg, sizeof e->msg, "%s: ", file);
    if (n < sizeof e->msg)
        vsnprintf(e->msg + n, sizeof e->msg - n, fmt, ap);
    e->code = code;
    e->hint[0] = '\0';
    return -1;
}

int err_set(struct err *e, const char *file, long line, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    vset(e, ERR_INPUT, file, line, fmt, ap);
    va_end(ap);
    return -1;
}

int err_io(struct err *e, const char *file, long line, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    vset(e, ERR_IO, file, line, fmt, ap);
    va_end(ap);
    return -1;
}

int err_hint(struct err *e, const char *fmt, ...)
{
    if (!e || e->hint[0])
        return -1;
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(e->hint, sizeof e->hint, fmt, ap);
    va_end(ap);
    return -1;
}

void err_clear(struct err *e)
{
    e->code = ERR_OK;
    e->msg[0] = e->hint[0] = '\0';
}
