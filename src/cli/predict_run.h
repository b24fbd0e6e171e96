/* predict_run.h -- the scoring side of `vecsift predict`: batches of rows
 * and the threads that route them.  Private to src/cli (cmd_predict.c
 * reads the input, writes the output and drives these).
 */
#ifndef VECSIFT_CLI_PREDICT_RUN_H
#define VECSIFT_CLI_PREDICT_RUN_H

#include <pthread.h>
#include <stddef.h>

#include "vecsift/csv.h"
#include "vecsift/pipeline.h"

struct err;
struct model;
struct worker;

/* rows per batch */
#define BATCH 4096

/* The settings every row shares. */
struct job {
    const pipeline *pipe;
    const struct model *m;
    size_t ncols, ntextcol;
    const long *textcol;
    size_t top, explain;
    double cut;
};

/* One batch of rows: read by the main thread, scored by all. */
struct batch {
    size_t n;
    char **cells;       /* (BATCH x ncols) into 'text' */
    size_t *cell_off;   /* (BATCH x ncols) offsets into 'text' while reading */
    char *text;         /* the cells back to back, NUL-terminated */
    size_t tlen, tcap;
    int *label;         /* (n) */
    double *prob;       /* (n x K) */
    char **why;         /* (n) explanation text or NULL */
    int *empty;         /* (n) */
};

struct pool_arg;

/* Threads that score a batch together (fields private to predict_run.c):
 * rows go out in chunks from a shared counter, so the threads balance
 * themselves, and the caller's thread joins in with predict_pool_finish. */
struct pool {
    const struct job *j;
    pthread_mutex_t mu;
    pthread_cond_t go, done;
    struct batch *b;      /* the batch being scored */
    size_t next, finished;
    unsigned long gen;    /* counts batches handed out */
    int quit;
    size_t nthreads;      /* threads running beside the main one */
    pthread_t *tid;
    struct worker *w;     /* (nthreads + 1), [0] the main thread's */
    struct pool_arg *args;
};

/* Batches: allocate for 'ncols' columns and K labels; forget the rows
 * (and their explanations) keeping the memory; free everything. */
void predict_batch_init(struct batch *b, size_t ncols, size_t K);
void predict_batch_clear(struct batch *b);
void predict_batch_release(struct batch *b);

/* Read up to BATCH rows into b (cleared first).  Returns 1 when the batch
 * is full (more rows may follow), 0 at the end of the input, -1 on error
 * ('e' set by the reader). */
int predict_batch_read(struct batch *b, csv_reader *r, size_t ncols, struct err *e);

/* Start threads-1 threads beside the calling one (fewer if the system
 * refuses some: the others then do their share). */
void predict_pool_init(struct pool *p, const struct job *j, int threads);
/* Hand batch b to the pool's threads; returns at once. */
void predict_pool_start(struct pool *p, struct batch *b);
/* Score what is left of the batch on the calling thread, then wait until
 * every row is done. */
void predict_pool_finish(struct pool *p);
/* Tokens over TEXT_MAX_TOKEN bytes skipped so far (after predict_pool_finish). */
size_t predict_pool_too_long(struct pool *p);
/* Stop and join the threads, free everything; safe on a zeroed pool. */
void predict_pool_release(struct pool *p);

#endif
