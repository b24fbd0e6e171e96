/* map_out.h -- what `map` and `vectors map` share: the t-SNE options, the
 * run itself, the caption and the coordinates file.  Private to src/cli. */
#ifndef VECSIFT_CLI_MAP_OUT_H
#define VECSIFT_CLI_MAP_OUT_H

#include <stddef.h>
#include <stdio.h>

#include "cli.h"
#include "vecsift/tsne.h"

struct err;

#define MAP_OPTIONS \
    { "perplexity", 0, "<x>", "t-SNE: effective number of neighbours, >= 1 (default: 30, at most (n-1)/3)" }, \
    { "iterations", 0, "<n>", "t-SNE: gradient steps, >= 250 (default: 1000)" }, \
    { "coords", 0, "<file>", "also write the 2-D coordinates as CSV (row, name, x, y)" }

struct map_args {
    struct tsne_params tp;
    const char *coords;
};

void map_args_init(struct map_args *a);
/* 1: taken; 0: not a map option; -1: usage error printed. */
int map_args_option(struct map_args *a, const struct cli_cmd *cmd, const char *name, const char *val);

/* The caption under a map: 'lead' (what a t-SNE map can and cannot show,
 * e.g. SVGPLOT_MAP_CAPTION), then how this one was made ('what': e.g.
 * "features: tfidf pooling of V.vecs").  A new string; caller frees. */
char *map_caption_new(const char *lead, const struct map_args *a, size_t n, const char *what);

/* Write rows (row, name, x, y) of Y (n, 2) as CSV to 'fp'; 'head' names the
 * second column, names[i] its cells (NULL: empty). */
void map_write_coords(FILE *fp, const char *head, const char *const *names, const double *Y, size_t n);

#endif
