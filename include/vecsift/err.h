/* err.h -- one error value passed down by every module.
 *
 * Modules never print and never exit (STYLE C7): they fill a struct err and
 * return -1 or NULL.  Only the CLI prints it, in the one format
 *     vecsift: FILE:LINE: what is wrong
 * followed by an optional "hint:" line.  This header is not a logger.
 */
#ifndef VECSIFT_ERR_H
#define VECSIFT_ERR_H

#include <stddef.h>

#if defined(__GNUC__)
#define ERR_PRINTF(f, a) __attribute__((format(printf, f, a)))
#else
#define ERR_PRINTF(f, a)
#endif

/* Exit statuses of the program, also the 'code' of an error. */
enum err_code {
    ERR_OK = 0,     /* success */
    ERR_IO = 1,     /* input/output or internal failure (disk full, unreadable file) */
    ERR_INPUT = 2   /* usage error or bad input data */
};

struct err {
    int code;           /* enum err_code; ERR_OK while nothing went wrong */
    char msg[1024];     /* "FILE:LINE: what is wrong", no trailing newline */
    char hint[512];     /* optional suggestion, "" when none */
};

#define ERR_INIT { 0, "", "" }

/* Record a bad-input error (code ERR_INPUT).  'file' may be NULL (no location);
 * 'line' 0 means the whole file.  The message is "file:line: text", "file: text"
 * or "text".  Always returns -1 so callers can write `return err_set(...)`.
 * Keeps the first error: a later call does not overwrite an earlier one. */
int err_set(struct err *e, const char *file, long line, const char *fmt, ...) ERR_PRINTF(4, 5);

/* Same as err_set() with code ERR_IO (a failure that is not the data's fault). */
int err_io(struct err *e, const char *file, long line, const char *fmt, ...) ERR_PRINTF(4, 5);

/* Attach a suggestion shown on a second line.  Returns -1. */
int err_hint(struct err *e, const char *fmt, ...) ERR_PRINTF(2, 3);

/* Forget any recorded error. */
void err_clear(struct err *e);

#endif
