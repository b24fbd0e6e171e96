/* csvdump.c -- test tool: read a CSV file with csv.h and print what it saw.
 *
 *   csvdump [--encoding NAME] [--replace] FILE     one JSON array per row
 *                                                  (header first)
 *   csvdump --rewrite FILE                         the rows again, through
 *                                                  csv_put_row (no guard)
 *
 * Used by tests/ext/csv_vs_python.py to compare our reader and writer with
 * Python's csv module.  Errors go to stderr as "FILE:LINE: ..." with exit 2.
 * Not installed.
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/csv.h"
#include "vecsift/err.h"
#include "vecsift/xalloc.h"

static void json_str(const char *s, size_t n)
{
    putchar('"');
    for (size_t i = 0; i < n; i++) {
        unsigned char c = (unsigned char)s[i];
        if (c == '"' || c == '\\')
            printf("\\%c", c);
        else if (c < 0x20)
            printf("\\u%04x", c);
        else
            putchar(c);
    }
    putchar('"');
}

static void json_row(const char *const *f, const size_t *len, size_t n)
{
    putchar('[');
    for (size_t i = 0; i < n; i++) {
        if (i)
            putchar(',');
        json_str(f[i], len[i]);
    }
    puts("]");
}

int main(int argc, char **argv)
{
    struct csv_options o = CSV_OPTIONS_INIT;
    int rewrite = 0;
    const char *path = NULL;
    for (int i = 1; i < argc; i++) {
        if (!strcmp(argv[i], "--encoding") && i + 1 < argc) {
            if (csv_encoding_parse(argv[++i], &o.encoding) < 0) {
                fprintf(stderr, "csvdump: unknown encoding '%s'\n", argv[i]);
                return 2;
            }
        } else if (!strcmp(argv[i], "--replace"))
            o.replace_invalid = 1;
        else if (!strcmp(argv[i], "--rewrite"))
            rewrite = 1;
        else
            path = argv[i];
    }
    if (!path) {
        fprintf(stderr, "usage: csvdump [--encoding NAME] [--replace] [--rewrite] FILE\n");
        return 2;
    }
    struct err e = ERR_INIT;
    csv_reader *r = csv_open(path, &o, &e);
    if (!r) {
        fprintf(stderr, "%s\n", e.msg);
        return e.code;
    }
    size_t n = csv_ncols(r);
    const char **f = xmalloc(xmul(n, sizeof *f));
    size_t *len = xmalloc(xmul(n, sizeof *len));
    for (size_t i = 0; i < n; i++) {
        f[i] = csv_colname(r, i);
        len[i] = strlen(f[i]);
    }
    if (rewrite)
        csv_put_row(stdout, f, n, 0);
    else
        json_row(f, len, n);
    int k;
    while ((k = csv_next(r, &e)) == 1) {
        for (size_t i = 0; i < n; i++) {
            f[i] = csv_field(r, i);
            len[i] = csv_field_len(r, i);
        }
        if (rewrite)
            csv_put_row(stdout, f, n, 0);
        else
            json_row(f, len, n);
    }
    int rc = 0;
    if (k < 0) {
        fprintf(stderr, "%s\n", e.msg);
        rc = e.code;
    } else if (o.replace_invalid)
        fprintf(stderr, "replaced %zu\n", csv_replaced(r));
    free(f);
    free(len);
    csv_close(r);
    return rc;
}
