/* route.c -- raw text in, routing out (see route.h). */
#include "vecsift/route.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/dataset.h"
#include "vecsift/err.h"
#include "vecsift/features.h"
#include "vecsift/fmat.h"
#include "vecsift/model.h"
#include "vecsift/par.h"
#include "vecsift/pipeline.h"
#include "vecsift/text.h"
#include "vecsift/xalloc.h"

struct route_worker {
    const struct model *m;
    struct route_params p;
    struct text_tokens tt;
    features_memo *memo;
    struct fmat X;          /* one row, when the caller keeps no features */
    const char **ptr;       /* token pointers, lens: their lengths */
    size_t *lens;
    size_t cap;
    char *text;             /* the joined text */
    size_t tcap;
    const char **words;     /* (explain) */
    double *push;
};

void route_result_release(struct route_result *r)
{
    if (!r)
        return;
    for (size_t q = 0; q < r->nwords; q++)
        free(r->words[q]);
    free(r->words);
    free(r->push);
    r->words = NULL;
    r->push = NULL;
    r->nwords = 0;
}

void route_worker_set(route_worker *w, const struct route_params *p)
{
    struct route_params none = ROUTE_PARAMS_INIT;
    if (!p)
        p = &none;
    if (p->explain != w->p.explain) {
        free(w->words);
        free(w->push);
        w->words = p->explain ? xcalloc(p->explain, sizeof *w->words) : NULL;
        w->push = p->explain ? xcalloc(p->explain, sizeof *w->push) : NULL;
    }
    w->p = *p;
}

route_worker *route_worker_new(const struct model *m, const struct route_params *p)
{
    route_worker *w = xcalloc(1, sizeof *w);
    w->m = m;
    route_worker_set(w, p);
    text_tokens_clear(&w->tt);
    const featurizer *f = pipeline_featurizer(m->pipe);
    w->memo = features_memo_new(f);
    features_alloc(f, 1, &w->X);
    return w;
}

void route_worker_free(route_worker *w)
{
    if (!w)
        return;
    features_memo_free(w->memo);
    fmat_release(&w->X);
    text_tokens_release(&w->tt);
    free(w->ptr);
    free(w->lens);
    free(w->text);
    free(w->words);
    free(w->push);
    free(w);
}

int route_text(route_worker *w, const char *const *parts, size_t nparts, double *prob, struct route_result *res,
               struct fmat *X, size_t row, struct err *e)
{
    const struct model *m = w->m;
    const featurizer *f = pipeline_featurizer(m->pipe);
    size_t K = m->k;
    route_result_release(res);
    /* the text columns joined as the training rows were */
    size_t tlen = dataset_join_text(&w->text, &w->tcap, parts, nparts);
    text_tokens_clear(&w->tt);
    int rc = 0;
    if (text_tokenize(w->text, tlen, &m->text, &w->tt, e) < 0) {
        text_tokens_clear(&w->tt); /* routed as a text with no words */
        rc = -1;
    }
    size_t nt = w->tt.n, cap = w->cap;
    w->ptr = xgrow(w->ptr, &cap, nt + 1, sizeof *w->ptr);
    w->lens = xreallocarray(w->lens, cap, sizeof *w->lens);
    w->cap = cap;
    for (size_t q = 0; q < nt; q++) {
        w->ptr[q] = text_token(&w->tt, q);
        w->lens[q] = (q + 1 < nt ? w->tt.off[q + 1] : w->tt.len) - w->tt.off[q] - 1;
    }
    if (!X) {
        /* A dense row is overwritten whole by each transform; a sparse one
         * is appended to and starts afresh. */
        X = &w->X;
        row = 0;
        if (features_sparse(f))
            features_alloc(f, 1, X);
    }
    struct features_stats st = { 0, 0, 0 };
    features_transform_memo(f, w->memo, w->ptr, w->lens, nt, X, row, &st);
    pipeline_proba_row(m->pipe, X, row, prob);
    int best = 0;
    for (size_t k = 1; k < K; k++)
        if (prob[k] > prob[best])
            best = (int)k;
    res->label = best;
    res->confidence = prob[best];
    res->empty = st.with_vector == 0;
    /* A probability that is not a finite number (a damaged vector set: open
     * reads no row) compares false with the cut-off; such a text always
     * goes to a person.  predict refuses the whole run instead. */
    int finite = 1;
    for (size_t k = 0; k < K; k++)
        finite &= isfinite(prob[k]) != 0;
    res->review = res->empty || !finite || prob[best] < w->p.cut || rc < 0;
    if (w->p.explain && rc == 0) {
        size_t nw = pipeline_explain(m->pipe, w->ptr, nt, prob, best, w->p.explain, w->words, w->push);
        if (nw) {
            res->words = xcalloc(nw, sizeof *res->words);
            res->push = xcalloc(nw, sizeof *res->push);
            for (size_t q = 0; q < nw; q++) {
                res->words[q] = xstrdup(w->words[q]);
                res->push[q] = w->push[q];
            }
            res->nwords = nw;
        }
    }
    return rc;
}

/* ---- batches, on par's stream: chunks of texts in index order ---- */

#define ROUTE_CHUNK 64

struct batch_ctx {
    const struct model *m;
    const char *const *parts;
    size_t nparts, n, next;
    double *prob;
    struct route_result *res;
    struct fmat *X;
    route_worker **w;       /* one per thread */
    size_t *bad;            /* (threads) lowest bad text seen by each worker, or n */
    struct err *werr;       /* (threads) its error */
};

struct batch_chunk {
    size_t from, to;
};

static int batch_read(void *ctx, void *chunk)
{
    struct batch_ctx *b = ctx;
    struct batch_chunk *c = chunk;
    c->from = b->next;
    c->to = b->n - b->next > ROUTE_CHUNK ? b->next + ROUTE_CHUNK : b->n;
    b->next = c->to;
    return b->next < b->n;
}

static void batch_work(void *ctx, void *chunk, size_t id)
{
    struct batch_ctx *b = ctx;
    const struct batch_chunk *c = chunk;
    size_t K = b->m->k;
    for (size_t i = c->from; i < c->to; i++) {
        struct err e = ERR_INIT;
        if (route_text(b->w[id], b->parts + i * b->nparts, b->nparts, b->prob + i * K, &b->res[i], b->X, i,
                       &e) < 0 &&
            i < b->bad[id]) {
            b->bad[id] = i;
            b->werr[id] = e;
        }
    }
}

int route_batch(const struct model *m, const struct route_params *p, int threads, const char *const *parts,
                size_t nparts, size_t n, double *prob, struct route_result *res, struct fmat *X, struct err *e)
{
    const featurizer *f = pipeline_featurizer(m->pipe);
    size_t T = threads > 1 ? (size_t)threads : 1;
    if (X) {
        features_alloc(f, n, X);
        if (features_sparse(f))
            T = 1; /* sparse rows are appended in order */
    }
    struct batch_ctx b = { m, parts, nparts, n, 0, prob, res, X, NULL, NULL, NULL };
    b.w = xcalloc(T, sizeof *b.w);
    b.bad = xcalloc(T, sizeof *b.bad);
    b.werr = xcalloc(T, sizeof *b.werr);
    for (size_t t = 0; t < T; t++) {
        b.w[t] = route_worker_new(m, p);
        b.bad[t] = n;
    }
    size_t S = 2 * T + 2;
    struct batch_chunk *chunks = xcalloc(S, sizeof *chunks);
    void **slot = xcalloc(S, sizeof *slot);
    for (size_t q = 0; q < S; q++)
        slot[q] = &chunks[q];
    struct par_stream s = { slot, S, batch_read, batch_work, NULL, &b };
    par_stream_run((int)T, &s); /* neither read nor write can fail */
    size_t first = n, who = 0;
    for (size_t t = 0; t < T; t++) {
        if (b.bad[t] < first)
            first = b.bad[t], who = t;
        route_worker_free(b.w[t]);
    }
    int rc = 0;
    if (first < n)
        rc = err_set(e, NULL, 0, "text %zu: %s", first + 1, b.werr[who].msg);
    free(slot);
    free(chunks);
    free(b.w);
    free(b.bad);
    free(b.werr);
    return rc;
}
