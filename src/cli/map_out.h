/* map_out.h -- what `map` and `vectors map` share: the t-SNE options, the
 * run itself, the caption and the coordinates file.  Private to src/cli. */
#ifndef VECSIFT_CLI_MAP_OUT_H
#define VECSIFT_CLI_MAP_OUT_H

#include <stddef.h>
#include <stdio.h>

#include "cli.h"
#include "vecsift/ofile.h"
#include "vecsift/tsne.h"

struct err;

struct map_args {
    struct tsne_params tp;
    const char *coords;
};

/* The t-SNE rows of a command's table; M names the struct map_args member
 * of the args struct T.  The first 250 steps exaggerate P (tsne.h): fewer
 * would never relax, hence --iterations >= 250. */
#define MAP_OPTIONS(T, M) \
    CLI_OPT_DOUBLE("perplexity", 0, "<x>", \
                   "t-SNE: effective number of neighbours, >= 1 (default: 30, at most (n-1)/3)", T, \
                   M.tp.perplexity, 1, 1e6), \
    CLI_OPT_INT("iterations", 0, "<n>", "t-SNE: gradient steps, >= 250 (default: 1000)", T, M.tp.iters, 250, \
                1000000), \
    CLI_OPT_STR("coords", 0, "<file>", "also write the 2-D coordinates as CSV (row, name, x, y)", T, M.coords)

void map_args_init(struct map_args *a);

/* The caption under a map: 'lead' (what a t-SNE map can and cannot show,
 * e.g. SVGPLOT_MAP_CAPTION), then how this one was made ('what': e.g.
 * "features: tfidf pooling of V.vecs").  A new string; caller frees. */
char *map_caption_new(const char *lead, const struct map_args *a, size_t n, const char *what);

/* Commit the drawing *o, then the coordinates *oc when there are any;
 * both pointers become NULL (ofile_abort on them is then a no-op).
 * 0, or -1 with e set when either could not be committed. */
int map_commit(ofile **o, ofile **oc, struct err *e);

/* Write rows (row, name, x, y) of Y (n, 2) as CSV to 'fp'; 'head' names the
 * second column, names[i] its cells (NULL: empty). */
void map_write_coords(FILE *fp, const char *head, const char *const *names, const double *Y, size_t n);

#endif
