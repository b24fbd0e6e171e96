/* map_out.c -- shared parts of `map` and `vectors map` (see map_out.h). */
#include "map_out.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "common.h"
#include "vecsift/csv.h"
#include "vecsift/err.h"
#include "vecsift/jsonv.h"
#include "vecsift/xalloc.h"

void map_args_init(struct map_args *a)
{
    struct tsne_params tp = TSNE_PARAMS_INIT;
    a->tp = tp;
    a->coords = NULL;
}

int map_args_option(struct map_args *a, const struct cli_cmd *cmd, const char *name, const char *val)
{
    long v;
    if (strcmp(name, "perplexity") == 0) {
        if (cli_double(cmd, name, val, 1, 1e6, &a->tp.perplexity) < 0)
            return -1;
    } else if (strcmp(name, "iterations") == 0) {
        /* the first 250 steps exaggerate P (tsne.h): fewer would never relax */
        if (cli_long(cmd, name, val, 250, 1000000, &v) < 0)
            return -1;
        a->tp.iters = (int)v;
    } else if (strcmp(name, "coords") == 0) {
        a->coords = val;
    } else {
        return 0;
    }
    return 1;
}

char *map_caption_new(const char *lead, const struct map_args *a, size_t n, const char *what)
{
    double perp = a->tp.perplexity, most = ((double)n - 1) / 3;
    if (perp > most)
        perp = most;
    const char *fmt = "%s Map by t-SNE (van der Maaten and Hinton 2008), %zu points, perplexity %.3g, "
                      "%d steps, seed %llu; %s.";
    int len = snprintf(NULL, 0, fmt, lead, n, perp, a->tp.iters,
                       (unsigned long long)a->tp.seed, what);
    char *s = xmalloc((size_t)len + 1);
    snprintf(s, (size_t)len + 1, fmt, lead, n, perp, a->tp.iters, (unsigned long long)a->tp.seed,
             what);
    return s;
}

void map_write_coords(FILE *fp, const char *head, const char *const *names, const double *Y, size_t n)
{
    fprintf(fp, "row,%s,x,y\r\n", head);
    char x[40], y[40];
    for (size_t i = 0; i < n; i++) {
        fprintf(fp, "%zu,", i + 1);
        if (names && names[i])
            csv_put(fp, names[i], strlen(names[i]), 1);
        jsonv_format_double(Y[2 * i], x, sizeof x);
        jsonv_format_double(Y[2 * i + 1], y, sizeof y);
        fprintf(fp, ",%s,%s\r\n", x, y);
    }
}
