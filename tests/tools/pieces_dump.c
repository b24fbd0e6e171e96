/* pieces_dump.c -- test-only: what vecsift makes of words with pieces, for
 * tests/ext/pieces_vs_gensim.py to compare with numpy and gensim.
 * Not installed.
 *
 *   pieces_dump grams MIN MAX K      words on stdin, one a line: each line
 *                                    out is the word's pieces, each as
 *                                    PIECE:BUCKET, TAB-separated
 *   pieces_dump rows STORE OUT       the store's piece rows as text
 *                                    (vecset_export_pieces)
 *   pieces_dump vector STORE         words on stdin: "word kind n x1 .. xD",
 *                                    kind whole | pieces | none, n the rows
 *                                    averaged, numbers as %.9g
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/err.h"
#include "vecsift/pieces.h"
#include "vecsift/vecset.h"

static int line(char *buf, size_t n)
{
    if (!fgets(buf, (int)n, stdin))
        return 0;
    buf[strcspn(buf, "\r\n")] = '\0';
    return 1;
}

struct grams {
    uint32_t k;
    int first;
};

static void show(void *ud, const char *p, size_t len)
{
    struct grams *g = ud;
    printf("%s%.*s:%u", g->first ? "" : "\t", (int)len, p, (unsigned)(pieces_fnv1a32(p, len) % g->k));
    g->first = 0;
}

int main(int argc, char **argv)
{
    char buf[4096];
    struct err e = ERR_INIT;
    if (argc == 5 && strcmp(argv[1], "grams") == 0) {
        unsigned lo = (unsigned)atoi(argv[2]), hi = (unsigned)atoi(argv[3]);
        struct grams g = { (uint32_t)strtoul(argv[4], NULL, 10), 1 };
        while (line(buf, sizeof buf)) {
            g.first = 1;
            pieces_each(buf, strlen(buf), lo, hi, show, &g);
            putchar('\n');
        }
        return ferror(stdout) ? 1 : 0;
    }
    if ((argc == 4 && strcmp(argv[1], "rows") == 0) || (argc == 3 && strcmp(argv[1], "vector") == 0)) {
        vecset *v = vecset_open(argv[2], &e);
        if (!v) {
            fprintf(stderr, "pieces_dump: %s\n", e.msg);
            return 2;
        }
        int rc = 0;
        if (argc == 4) {
            if (vecset_export_pieces(v, argv[3], &e) < 0) {
                fprintf(stderr, "pieces_dump: %s\n", e.msg);
                rc = 2;
            }
        } else {
            size_t D = vecset_dim(v);
            float *x = calloc(D, sizeof *x);
            while (line(buf, sizeof buf)) {
                long r = vecset_find(v, buf);
                size_t n = 0;
                const char *kind = "none";
                if (r >= 0) {
                    memcpy(x, vecset_row(v, (size_t)r), D * sizeof *x);
                    kind = "whole";
                    n = 1;
                } else if ((n = vecset_compose(v, buf, strlen(buf), x)) > 0) {
                    kind = "pieces";
                }
                printf("%s %s %zu", buf, kind, n);
                for (size_t d = 0; n && d < D; d++)
                    printf(" %.9g", (double)x[d]);
                putchar('\n');
            }
            free(x);
        }
        vecset_close(v);
        return rc ? rc : ferror(stdout) ? 1 : 0;
    }
    fprintf(stderr, "usage: pieces_dump grams MIN MAX K | rows STORE OUT | vector STORE\n");
    return 2;
}
