/* predict_run.c -- the scoring side of `vecsift predict` (predict_run.h):
 * each thread keeps its tokens, word memo and buffers from row to row;
 * rows of a batch are handed out in chunks.  It does not write output.
 */
#include "predict_run.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/dataset.h"
#include "vecsift/err.h"
#include "vecsift/features.h"
#include "vecsift/fmat.h"
#include "vecsift/model.h"
#include "vecsift/text.h"
#include "vecsift/xalloc.h"

/* What one thread keeps from row to row (and batch to batch). */
struct worker {
    struct text_tokens tt;
    features_memo *memo;
    struct fmat X;
    const char **ptr;
    size_t *lens;
    size_t cap;
    char *text;
    size_t tcap;
    const char **parts;
    const char **words;
    double *push;
};

static void worker_init(struct worker *w, const struct job *j)
{
    memset(w, 0, sizeof *w);
    text_tokens_clear(&w->tt);
    w->memo = features_memo_new(pipeline_featurizer(j->pipe));
    w->parts = xcalloc(j->ntextcol, sizeof *w->parts);
    w->words = j->explain ? xcalloc(j->explain, sizeof *w->words) : NULL;
    w->push = j->explain ? xcalloc(j->explain, sizeof *w->push) : NULL;
    features_alloc(pipeline_featurizer(j->pipe), 1, &w->X);
}

static void worker_release(struct worker *w)
{
    features_memo_free(w->memo);
    fmat_release(&w->X);
    text_tokens_release(&w->tt);
    free(w->ptr);
    free(w->lens);
    free(w->text);
    free(w->parts);
    free(w->words);
    free(w->push);
}

/* Route rows [from, to) of batch b. */
static void work(const struct job *j, struct worker *w, struct batch *b, size_t from, size_t to)
{
    size_t K = j->m->k;
    const featurizer *f = pipeline_featurizer(j->pipe);
    for (size_t r = from; r < to; r++) {
        /* the text columns joined as the training rows were */
        for (size_t t = 0; t < j->ntextcol; t++)
            w->parts[t] = b->cells[r * j->ncols + (size_t)j->textcol[t]];
        size_t tlen = dataset_join_text(&w->text, &w->tcap, w->parts, j->ntextcol);
        text_tokens_clear(&w->tt);
        struct err e = ERR_INIT;
        if (text_tokenize(w->text, tlen, &j->m->text, &w->tt, &e) < 0)
            text_tokens_clear(&w->tt); /* cannot happen: the reader checked UTF-8 */
        size_t nt = w->tt.n, cap = w->cap;
        w->ptr = xgrow(w->ptr, &cap, nt + 1, sizeof *w->ptr);
        w->lens = xreallocarray(w->lens, cap, sizeof *w->lens);
        w->cap = cap;
        for (size_t q = 0; q < nt; q++) {
            w->ptr[q] = text_token(&w->tt, q);
            w->lens[q] = (q + 1 < nt ? w->tt.off[q + 1] : w->tt.len) - w->tt.off[q] - 1;
        }
        /* A dense row is overwritten whole by each transform; a sparse one
         * is appended to and starts afresh. */
        if (features_sparse(f))
            features_alloc(f, 1, &w->X);
        struct features_stats st = { 0, 0, 0 };
        features_transform_memo(f, w->memo, w->ptr, w->lens, nt, &w->X, 0, &st);
        double *pr = b->prob + r * K;
        pipeline_proba_row(j->pipe, &w->X, 0, pr);
        int best = 0;
        for (size_t k = 1; k < K; k++)
            if (pr[k] > pr[best])
                best = (int)k;
        b->label[r] = best;
        b->empty[r] = st.with_vector == 0;
        if (j->explain) {
            size_t nw = pipeline_explain(j->pipe, w->ptr, nt, pr, best, j->explain, w->words, w->push);
            size_t len = 0, bcap = 0;
            char *s = NULL;
            for (size_t q = 0; q < nw; q++) {
                char item[256];
                int il = snprintf(item, sizeof item, "%s%.80s (%+.3f)", q ? "; " : "", w->words[q], w->push[q]);
                s = xgrow(s, &bcap, len + (size_t)il + 1, 1);
                memcpy(s + len, item, (size_t)il + 1);
                len += (size_t)il;
            }
            b->why[r] = s ? s : xstrdup("");
        }
    }
}

/* ---- the thread pool ---- */

/* Rows are handed out in chunks from a shared counter, so the threads
 * balance themselves; the main thread reads the next batch and writes the
 * previous one while the others score, then joins them.  Each row's result
 * depends on the row alone, so the output does not depend on who scored
 * what. */
#define CHUNK 64

struct pool_arg {
    struct pool *p;
    size_t id;
};

/* Take chunks of the current batch until none is left.  Called and
 * returns with p->mu held. */
static void take_chunks(struct pool *p, struct worker *w)
{
    struct batch *b = p->b;
    while (p->next < b->n) {
        size_t from = p->next, to = from + CHUNK < b->n ? from + CHUNK : b->n;
        p->next = to;
        pthread_mutex_unlock(&p->mu);
        work(p->j, w, b, from, to);
        pthread_mutex_lock(&p->mu);
        p->finished += to - from;
        if (p->finished == b->n)
            pthread_cond_broadcast(&p->done);
    }
}

static void *pool_thread(void *arg)
{
    struct pool_arg *a = arg;
    struct pool *p = a->p;
    unsigned long seen = 0;
    pthread_mutex_lock(&p->mu);
    for (;;) {
        while (p->gen == seen && !p->quit)
            pthread_cond_wait(&p->go, &p->mu);
        if (p->quit)
            break;
        seen = p->gen;
        take_chunks(p, &p->w[a->id]);
    }
    pthread_mutex_unlock(&p->mu);
    return NULL;
}

void predict_pool_init(struct pool *p, const struct job *j, int threads)
{
    memset(p, 0, sizeof *p);
    p->j = j;
    pthread_mutex_init(&p->mu, NULL);
    pthread_cond_init(&p->go, NULL);
    pthread_cond_init(&p->done, NULL);
    size_t T = threads > 1 ? (size_t)threads : 1;
    p->w = xcalloc(T, sizeof *p->w);
    p->tid = xcalloc(T, sizeof *p->tid);
    p->args = xcalloc(T, sizeof *p->args);
    struct pool_arg *args = p->args;
    worker_init(&p->w[0], j);
    for (size_t t = 1; t < T; t++) {
        args[t].p = p;
        args[t].id = t;
        worker_init(&p->w[t], j);
        if (pthread_create(&p->tid[p->nthreads], NULL, pool_thread, &args[t]) != 0) {
            worker_release(&p->w[t]); /* fewer threads: the others do the work */
            break;
        }
        p->nthreads++;
    }
}

/* Hand batch b to the pool threads; returns at once. */
void predict_pool_start(struct pool *p, struct batch *b)
{
    pthread_mutex_lock(&p->mu);
    p->b = b;
    p->next = 0;
    p->finished = 0;
    p->gen++;
    pthread_cond_broadcast(&p->go);
    pthread_mutex_unlock(&p->mu);
}

/* Score what is left of the batch on this thread, then wait for the rest. */
void predict_pool_finish(struct pool *p)
{
    pthread_mutex_lock(&p->mu);
    take_chunks(p, &p->w[0]);
    while (p->finished < p->b->n)
        pthread_cond_wait(&p->done, &p->mu);
    pthread_mutex_unlock(&p->mu);
}

size_t predict_pool_too_long(struct pool *p)
{
    size_t n = 0;
    pthread_mutex_lock(&p->mu);
    for (size_t t = 0; t < p->nthreads + 1; t++)
        n += p->w[t].tt.too_long; /* each worker's tokeniser counts its own rows */
    pthread_mutex_unlock(&p->mu);
    return n;
}

void predict_pool_release(struct pool *p)
{
    if (!p->w)
        return;
    pthread_mutex_lock(&p->mu);
    p->quit = 1;
    pthread_cond_broadcast(&p->go);
    pthread_mutex_unlock(&p->mu);
    for (size_t t = 0; t < p->nthreads; t++)
        pthread_join(p->tid[t], NULL);
    for (size_t t = 0; t < p->nthreads + 1; t++)
        worker_release(&p->w[t]);
    free(p->w);
    free(p->tid);
    free(p->args);
    pthread_mutex_destroy(&p->mu);
    pthread_cond_destroy(&p->go);
    pthread_cond_destroy(&p->done);
}

/* ---- batches ---- */

void predict_batch_init(struct batch *b, size_t ncols, size_t K)
{
    memset(b, 0, sizeof *b);
    b->cells = xcalloc(xmul(BATCH, ncols), sizeof *b->cells);
    b->cell_off = xcalloc(xmul(BATCH, ncols), sizeof *b->cell_off);
    b->label = xcalloc(BATCH, sizeof *b->label);
    b->prob = xcalloc(xmul(BATCH, K), sizeof *b->prob);
    b->empty = xcalloc(BATCH, sizeof *b->empty);
    b->why = xcalloc(BATCH, sizeof *b->why);
}

/* Forget the rows (and their explanations), keep the memory. */
void predict_batch_clear(struct batch *b)
{
    for (size_t q = 0; b->why && q < b->n; q++) {
        free(b->why[q]);
        b->why[q] = NULL;
    }
    b->n = 0;
    b->tlen = 0;
}

void predict_batch_release(struct batch *b)
{
    predict_batch_clear(b);
    free(b->cells);
    free(b->cell_off);
    free(b->text);
    free(b->label);
    free(b->prob);
    free(b->empty);
    free(b->why);
}

/* Read up to BATCH rows into b (cleared first).  Returns 1 when the batch
 * is full (more rows may follow), 0 at the end of the input, -1 on error. */
int predict_batch_read(struct batch *b, csv_reader *r, size_t ncols, struct err *e)
{
    predict_batch_clear(b);
    int got = 1;
    while (b->n < BATCH && (got = csv_next(r, e)) == 1) {
        for (size_t c = 0; c < ncols; c++) {
            /* the reader refuses NUL bytes: the length is the string's */
            size_t len = csv_field_len(r, c);
            b->text = xgrow(b->text, &b->tcap, b->tlen + len + 1, 1);
            memcpy(b->text + b->tlen, csv_field(r, c), len + 1);
            b->cell_off[b->n * ncols + c] = b->tlen;
            b->tlen += len + 1;
        }
        b->n++;
    }
    if (got < 0)
        return -1;
    for (size_t q = 0; q < b->n * ncols; q++)
        b->cells[q] = b->text + b->cell_off[q];
    return got;
}

