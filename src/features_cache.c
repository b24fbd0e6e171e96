/* features_cache.c -- the caches of features.h: a per-thread memo of the
 * words a stream of texts has seen (prediction), and pooled rows kept for
 * many fits over subsets of the same documents (cross-validation).
 * Nothing fitted is cached.  Pooling itself is features.c's. */
#include "vecsift/features.h"

#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/fmat.h"
#include "vecsift/vecset.h"
#include "vecsift/vocab.h"
#include "vecsift/xalloc.h"
#include "features_impl.h"

/* ---- a memo for streams of texts ---- */

/* Words a memo holds before it starts afresh, and bytes of their text. */
#define MEMO_WORDS 65536
#define MEMO_BYTES ((size_t)1 << 21)

/* Words up to this many bytes are kept inside their entry, which is then
 * one 64-byte cache line: a probe that finds a word touches one slot and
 * one line (the profile showed the memo waiting on memory). */
#define MEMO_INLINE 24

struct memo_word {
    uint64_t hash;        /* vocab_hash */
    long row;             /* vector row or -1 */
    int32_t id;           /* training id or -1 */
    uint32_t len;
    uint32_t seen;        /* 'stamp' of the last document it was in */
    uint32_t at;          /* its index among that document's distinct words */
    size_t off;           /* the word in 'text' when longer than MEMO_INLINE */
    char inl[MEMO_INLINE]; /* the word itself otherwise */
};

struct features_memo {
    const featurizer *f;   /* the featurizer whose facts are held (borrowed) */
    uint64_t *slot;        /* (nslots) 0 empty, else the hash's top 32 bits
                              above the word index + 1 */
    size_t nslots;
    struct memo_word *w;
    size_t n, cap;
    char *text;
    size_t tlen, tcap;
    uint32_t stamp;
    /* one document: its distinct words (in order of first appearance) and
     * the per-word arrays of word_coefs, in one block owned through 'doc' */
    struct term_facts *doc;
    double *c;
    long *row;
    size_t *keep;
    size_t dcap;
    float *composed;       /* (ncomposed, E) vectors of words from their pieces */
    size_t ncomposed, ccap;
};

/* Room for 'need' distinct words in the document arrays, keeping doc[0..n). */
static void memo_doc_room(features_memo *mm, size_t need, size_t n)
{
    if (need <= mm->dcap)
        return;
    size_t cap = mm->dcap ? 2 * mm->dcap : 256;
    while (cap < need)
        cap *= 2;
    struct term_facts *doc = xmalloc(xmul(cap, sizeof *doc + sizeof(double) + sizeof(long) + sizeof(size_t)));
    if (n)
        memcpy(doc, mm->doc, n * sizeof *doc);
    free(mm->doc);
    mm->doc = doc;
    mm->c = (double *)(void *)(doc + cap);
    mm->row = (long *)(void *)(mm->c + cap);
    mm->keep = (size_t *)(void *)(mm->row + cap);
    mm->dcap = cap;
}

features_memo *features_memo_new(const featurizer *f)
{
    features_memo *mm = xcalloc(1, sizeof *mm);
    mm->f = f;
    return mm;
}

void features_memo_free(features_memo *mm)
{
    if (!mm)
        return;
    free(mm->slot);
    free(mm->w);
    free(mm->text);
    free(mm->doc);
    free(mm->composed);
    free(mm);
}

static void memo_clear(features_memo *mm)
{
    mm->n = 0;
    mm->tlen = 0;
    mm->stamp = 0;
    mm->ncomposed = 0;
    if (mm->slot)
        memset(mm->slot, 0, mm->nslots * sizeof *mm->slot);
}

/* Slots at most half full: double them and put every word back. */
static void memo_grow(features_memo *mm)
{
    free(mm->slot);
    mm->nslots = mm->nslots ? 2 * mm->nslots : 1024;
    mm->slot = xcalloc(mm->nslots, sizeof *mm->slot);
    size_t mask = mm->nslots - 1;
    for (size_t i = 0; i < mm->n; i++) {
        size_t q = (size_t)mm->w[i].hash & mask;
        while (mm->slot[q])
            q = (q + 1) & mask;
        mm->slot[q] = (mm->w[i].hash & ~(uint64_t)0xffffffffu) | (uint64_t)(i + 1);
    }
}

/* memcmp(a, b, n) == 0 for the few bytes of a word, without the call
 * (memcmp showed in the profile; the hashes already agree, so this
 * almost always runs to the end). */
static int same_bytes(const char *a, const char *b, size_t n)
{
    for (size_t i = 0; i < n; i++)
        if (a[i] != b[i])
            return 0;
    return 1;
}

/* The memo's entry for token tok[0..len), looked up in the packed store
 * and the training words the first time it is seen. */
static struct memo_word *memo_get(features_memo *mm, const char *tok, size_t len)
{
    uint64_t h = vocab_hash(tok, len), tag = h & ~(uint64_t)0xffffffffu;
    size_t mask = mm->nslots - 1, q = (size_t)h & mask;
    for (uint64_t sl; (sl = mm->slot[q]) != 0; q = (q + 1) & mask) {
        if ((sl & ~(uint64_t)0xffffffffu) != tag)
            continue;
        struct memo_word *w = &mm->w[(sl & 0xffffffffu) - 1];
        if (w->hash == h && w->len == len &&
            same_bytes(len <= MEMO_INLINE ? w->inl : mm->text + w->off, tok, len))
            return w;
    }
    mm->w = xgrow(mm->w, &mm->cap, mm->n + 1, sizeof *mm->w);
    struct memo_word *w = &mm->w[mm->n];
    w->hash = h;
    w->len = (uint32_t)len;
    w->seen = 0;
    w->at = 0;
    struct term_facts t;
    features_look_up_pieces(mm->f, tok, h, &t, &mm->composed, &mm->ncomposed, &mm->ccap);
    w->row = t.row;
    w->id = t.id;
    if (len <= MEMO_INLINE) {
        memcpy(w->inl, tok, len);
    } else {
        mm->text = xgrow(mm->text, &mm->tcap, mm->tlen + len, 1);
        w->off = mm->tlen;
        memcpy(mm->text + mm->tlen, tok, len);
        mm->tlen += len;
    }
    mm->slot[q] = tag | (uint64_t)++mm->n;
    if (2 * mm->n > mm->nslots) {
        memo_grow(mm);
        w = &mm->w[mm->n - 1];
    }
    return w;
}

void features_transform_memo(const featurizer *f, features_memo *mm, const char *const *toks, const size_t *lens,
                             size_t ntok, struct fmat *X, size_t i, struct features_stats *st)
{
    if (features_sparse(f)) {
        features_transform_tokens(f, toks, ntok, X, i, st);
        return;
    }
    assert(!X->sparse && i < X->n && X->d == f->D);
    assert(mm->f == f);
    /* Start afresh when full (between documents only: the document's
     * words are referred to by index), or before the stamp wraps. */
    if (mm->n > MEMO_WORDS || mm->tlen > MEMO_BYTES || mm->stamp == UINT32_MAX)
        memo_clear(mm);
    if (!mm->slot)
        memo_grow(mm);
    uint32_t stamp = ++mm->stamp;
    size_t nd = 0;
    for (size_t q = 0; q < ntok; q++) {
        struct memo_word *w = memo_get(mm, toks[q], lens ? lens[q] : strlen(toks[q]));
        if (w->seen == stamp) {
            mm->doc[w->at].tf += 1;
            continue;
        }
        memo_doc_room(mm, nd + 1, nd);
        w->seen = stamp;
        w->at = (uint32_t)nd;
        mm->doc[nd].tf = 1;
        mm->doc[nd].row = w->row;
        mm->doc[nd++].id = w->id;
    }
    double *x = X->x + i * f->D;
    size_t m = features_word_coefs(f, mm->doc, nd, mm->keep, mm->c, mm->row, st);
    features_pool_rows(f, mm->row, mm->composed, mm->c, m, x);
    if (m == 0 && st)
        st->empty_rows++;
    features_scale_row(f, x);
}

/* ---- fitting and transforming at once ---- */

features_cache *features_cache_new(const struct features_params *pin, const struct tokdocs *d, const vecset *vs)
{
    /* a combined route caches what its pooled block needs */
    struct features_params pq = *pin;
    pq.pool = features_pool_dense(pin->pool);
    const struct features_params *p = &pq;
    features_cache *c = xcalloc(1, sizeof *c);
    c->n = d->n;
    if (p->pool == POOL_BOW || !vs || d->n == 0)
        return c;
    c->boff = xcalloc(d->n + 1, sizeof *c->boff);
    c->btok = xcalloc(d->off[d->n] ? d->off[d->n] : 1, sizeof *c->btok);
    c->btf = xcalloc(d->off[d->n] ? d->off[d->n] : 1, sizeof *c->btf);
    {
        const char **buf = NULL;
        size_t cap = 0, ntok, m = 0;
        for (size_t r = 0; r < d->n; r++) {
            buf = features_doc_tokens(d, r, buf, &cap, &ntok);
            struct bag b;
            features_bag_make(&b, buf, ntok, 0);
            for (size_t j = 0; j < b.n; j++) {
                c->btok[m] = vocab_find_hashed(d->v, b.term[j], b.hash[j]);
                c->btf[m++] = b.tf[j];
            }
            c->boff[r + 1] = m;
            features_bag_release(&b);
        }
        free(buf);
    }
    if (p->pool != POOL_MEAN)
        return c;
    /* Mean pooling reads nothing fitted (word_coefs looks a word up in
     * f->words but ignores the answer), so an empty featurizer pools
     * every row as any fitted one would. */
    featurizer f0 = { 0 };
    f0.p = *p;
    f0.vs = vs;
    f0.words = vocab_new();
    f0.D = c->E = vecset_dim(vs);
    c->x = xcalloc(xmul(d->n, c->E), sizeof *c->x);
    c->st = xcalloc(d->n, sizeof *c->st);
    const char **buf = NULL;
    size_t cap = 0, ntok;
    for (size_t r = 0; r < d->n; r++) {
        buf = features_doc_tokens(d, r, buf, &cap, &ntok);
        c->st[r].empty_rows = !features_pool_doc(&f0, buf, ntok, c->x + r * c->E, &c->st[r]);
    }
    free(buf);
    vocab_free(f0.words);
    return c;
}

void features_cache_free(features_cache *c)
{
    if (!c)
        return;
    free(c->x);
    free(c->st);
    free(c->boff);
    free(c->btok);
    free(c->btf);
    free(c);
}

void features_transform_cached(const featurizer *f, const features_cache *cache, const struct tokdocs *d,
                               const size_t *rows, size_t n, struct fmat *X, struct features_stats *st)
{
    if (!cache || !cache->x || f->p.pool != POOL_MEAN) {
        features_transform(f, d, rows, n, X, st);
        return;
    }
    assert(cache->n == d->n && cache->E == f->D);
    features_alloc(f, n, X);
    for (size_t i = 0; i < n; i++) {
        const struct features_stats *cs = &cache->st[rows[i]];
        double *x = X->x + i * f->D;
        memcpy(x, cache->x + rows[i] * f->D, f->D * sizeof *x);
        if (st) {
            st->tokens += cs->tokens;
            st->with_vector += cs->with_vector;
            st->empty_rows += cs->empty_rows;
        }
        features_scale_row(f, x);
    }
}
