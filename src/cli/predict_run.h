/* predict_run.h -- the chunks of rows `vecsift predict` streams through
 * par_stream_run (par.h): read from the CSV in order, routed by
 * route_text (route.h) on any thread, written in order by cmd_predict.c.
 * Private to src/cli.
 */
#ifndef VECSIFT_CLI_PREDICT_RUN_H
#define VECSIFT_CLI_PREDICT_RUN_H

#include <stddef.h>

#include "vecsift/csv.h"
#include "vecsift/route.h"

struct err;

/* rows per chunk */
#define PREDICT_CHUNK 1024

/* One chunk of rows with their routes. */
struct batch {
    size_t n;
    char **cells;       /* (PREDICT_CHUNK x ncols) into 'text' */
    size_t *cell_off;   /* (PREDICT_CHUNK x ncols) offsets into 'text' while reading */
    char *text;         /* the cells back to back, NUL-terminated */
    size_t tlen, tcap;
    const char **parts; /* (PREDICT_CHUNK x ntext) the text cells of each row */
    double *prob;       /* (n x K) */
    struct route_result *res; /* (n) */
};

/* Allocate for 'ncols' columns, 'ntext' text columns and K labels; forget
 * the rows keeping the memory; free everything (safe on a zeroed batch). */
void predict_batch_init(struct batch *b, size_t ncols, size_t ntext, size_t K);
void predict_batch_clear(struct batch *b);
void predict_batch_release(struct batch *b);

/* Read up to PREDICT_CHUNK rows into b (cleared first), with the text
 * columns textcol[0..ntext).  Returns 1 when the chunk is full (more rows
 * may follow), 0 at the end of the input, -1 on error ('e' set by the
 * reader). */
int predict_batch_read(struct batch *b, csv_reader *r, size_t ncols, const long *textcol, size_t ntext,
                       struct err *e);

/* Route every row of b with worker w (one per thread). */
void predict_batch_route(struct batch *b, route_worker *w, size_t ntext, size_t K);

#endif
