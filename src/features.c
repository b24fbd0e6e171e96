/* features.c -- fitting and pooling: pooling of word vectors, sparse TF-IDF
 * bag of words, standardisation, the combined route.  The formulas are in
 * features.h.  The caches (a memo for streams, pooled rows for
 * cross-validation) are in features_cache.c, the model-file form in
 * features_file.c; features_impl.h is what the three share.
 *
 * Every path, cross-validation (token ids) and prediction (token strings),
 * goes through one function, features_pool_doc(), on the document's token strings,
 * so that `features`, `evaluate` and `predict` compute exactly the same
 * numbers.
 */
#include "vecsift/features.h"

#include <assert.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/err.h"
#include "vecsift/fmat.h"
#include "vecsift/vecset.h"
#include "vecsift/vocab.h"
#include "vecsift/xalloc.h"
#include "features_impl.h"
#include "vec4.h"

/* the combined route, in its own section below */
static featurizer *combined_fit(const struct features_params *p, const struct tokdocs *d, const size_t *rows,
                                size_t n, const vecset *vs, const features_cache *cache, struct fmat *X,
                                struct features_stats *st, struct err *e);
static void combined_doc(const featurizer *f, const char *const *toks, size_t ntok, struct fmat *X,
                         struct features_stats *st);

static const char *const pool_names[FEATURES_POOLS] = { "mean", "tfidf", "sif", "bow", "bow+mean", "bow+tfidf",
                                                        "bow+sif" };

int features_pool_parse(const char *name, enum features_pool *out)
{
    for (int i = 0; i < FEATURES_POOLS; i++)
        if (strcmp(name, pool_names[i]) == 0) {
            *out = (enum features_pool)i;
            return 0;
        }
    return -1;
}

const char *features_pool_name(enum features_pool p)
{
    return (unsigned)p < FEATURES_POOLS ? pool_names[p] : "?";
}

int features_pool_combined(enum features_pool p)
{
    return p == POOL_BOW_MEAN || p == POOL_BOW_TFIDF || p == POOL_BOW_SIF;
}

enum features_pool features_pool_dense(enum features_pool p)
{
    switch (p) {
    case POOL_BOW_MEAN: return POOL_MEAN;
    case POOL_BOW_TFIDF: return POOL_TFIDF;
    case POOL_BOW_SIF: return POOL_SIF;
    default: return p;
    }
}

int features_pool_needs_vectors(enum features_pool p) { return p != POOL_BOW; }

size_t features_dim(const featurizer *f) { return f->D; }
int features_sparse(const featurizer *f) { return f->p.pool == POOL_BOW || features_pool_combined(f->p.pool); }
const struct features_params *features_params(const featurizer *f) { return &f->p; }
const double *features_sif_component(const featurizer *f) { return f->u; }
const struct vecset *features_vectors(const featurizer *f) { return f->p.pool == POOL_BOW ? NULL : f->vs; }

void features_scaler(const featurizer *f, const double **mean, const double **sd)
{
    *mean = f->mean;
    *sd = f->sd;
}

const char *features_term(const featurizer *f, size_t j)
{
    if (f->bag)
        return features_term(f->bag, j);
    return f->p.pool == POOL_BOW && j < f->D ? vocab_word(f->words, (int32_t)j) : NULL;
}

void features_free(featurizer *f)
{
    if (!f)
        return;
    vocab_free(f->words);
    free(f->idf);
    free(f->pw);
    free(f->mean);
    free(f->sd);
    free(f->u);
    features_free(f->bag);
    features_free(f->pooled);
    free(f);
}

/* ---- one document ---- */

void features_bag_make(struct bag *b, const char *const *toks, size_t ntok, int pairs)
{
    size_t cap = ntok + (pairs && ntok > 1 ? ntok - 1 : 0);
    const char **all = xcalloc(cap ? cap : 1, sizeof *all);
    size_t m = 0, plen = 0;
    for (size_t i = 0; i < ntok; i++)
        all[m++] = toks[i];
    b->pairbuf = NULL;
    if (pairs && ntok > 1) {
        for (size_t i = 0; i + 1 < ntok; i++)
            plen += strlen(toks[i]) + strlen(toks[i + 1]) + 2;
        b->pairbuf = xmalloc(plen);
        char *w = b->pairbuf;
        for (size_t i = 0; i + 1 < ntok; i++) {
            size_t la = strlen(toks[i]), lb = strlen(toks[i + 1]);
            all[m++] = w;
            memcpy(w, toks[i], la);
            w[la] = ' ';
            memcpy(w + la + 1, toks[i + 1], lb + 1);
            w += la + lb + 2;
        }
    }
    size_t slots = 16;
    while (slots < 2 * m)
        slots *= 2;
    uint32_t *slot = xcalloc(slots, sizeof *slot); /* 0 empty, else index into term + 1 */
    /* tf, hash and term share one block (bag_release frees it through tf):
     * bags are made once per row of a prediction, where malloc and free
     * showed up in the profile.  Only the first b->n entries are read. */
    size_t nt = m ? m : 1;
    b->tf = xmalloc(xmul(nt, sizeof(double) + sizeof(uint64_t) + sizeof(const char *)));
    uint64_t *hash = (uint64_t *)(void *)(b->tf + nt);
    b->hash = hash;
    b->term = (const char **)(void *)(hash + nt);
    b->n = 0;
    for (size_t i = 0; i < m; i++) {
        uint64_t h = vocab_hash(all[i], strlen(all[i]));
        size_t q = (size_t)h & (slots - 1);
        for (;; q = (q + 1) & (slots - 1)) {
            uint32_t at = slot[q];
            if (at == 0) {
                slot[q] = (uint32_t)b->n + 1;
                hash[b->n] = h;
                b->term[b->n] = all[i];
                b->tf[b->n++] = 1;
                break;
            }
            if (hash[at - 1] == h && strcmp(b->term[at - 1], all[i]) == 0) {
                b->tf[at - 1] += 1;
                break;
            }
        }
    }
    free(slot);
    free(all);
}

void features_bag_release(struct bag *b)
{
    free(b->tf);
    free(b->pairbuf);
}

static double tf_weight(const featurizer *f, double tf)
{
    return f->p.sublinear_tf ? 1.0 + log(tf) : tf;
}

/* The facts of a term whose vocab_hash is 'h' ('tf' is left alone).  A
 * term the store has no row for, in a store with pieces, gets a vector
 * composed from its pieces (vecset_compose) into 'slab' ((k, E), grown,
 * k counted in *nslab) and row PIECE_ROW(k); slab NULL leaves it at -1. */
void features_look_up_pieces(const featurizer *f, const char *term, uint64_t h, struct term_facts *t, float **slab,
                             size_t *nslab, size_t *cap)
{
    t->row = vecset_find_hashed(f->vs, term, h);
    if (t->row < 0 && slab && vecset_pieces(f->vs)) {
        size_t E = vecset_dim(f->vs);
        if ((*nslab + 1) * E > *cap)
            *slab = xgrow(*slab, cap, (*nslab + 1) * E, sizeof **slab);
        if (vecset_compose(f->vs, term, strlen(term), *slab + *nslab * E) > 0)
            t->row = PIECE_ROW((*nslab)++);
    }
    t->id = t->row != -1 ? vocab_find_hashed(f->words, term, h) : -1;
}


/* Per distinct term t[0..n) (in order of first appearance): its
 * coefficient in the pooled (unscaled, before SIF component removal)
 * vector and its vector row, for the terms that have a vector; keep[j] is
 * the index in 't' of the j-th such term.  Returns how many have a vector.
 * Adds the token count and with-vector count to 'st'. */
size_t features_word_coefs(const featurizer *f, const struct term_facts *t, size_t n, size_t *keep, double *c,
                           long *row, struct features_stats *st)
{
    size_t m = 0;
    double total = 0;
    for (size_t i = 0; i < n; i++) {
        double tf = t[i].tf;
        long r = t[i].row;
        if (st) {
            st->tokens += (uint64_t)tf;
            st->with_vector += r != -1 ? (uint64_t)tf : 0;
        }
        if (r == -1)
            continue; /* no vector, neither whole nor from pieces */
        int32_t id = t[i].id;
        double weight;
        switch (f->p.pool) {
        case POOL_TFIDF:
            weight = tf_weight(f, tf) * (id >= 0 ? f->idf[id] : f->idf_unseen);
            total += weight;
            break;
        case POOL_SIF:
            weight = tf * f->p.sif_a / (f->p.sif_a + (id >= 0 ? f->pw[id] : 0.0));
            total += tf;
            break;
        default: /* mean */
            weight = tf;
            total += tf;
            break;
        }
        keep[m] = i;
        c[m] = weight;
        row[m++] = r;
    }
    for (size_t j = 0; j < m; j++)
        c[j] = total > 0 ? c[j] / total : 0;
    return m;
}

/* x = sum_j c[j] * v_j over the m word rows, each element summed over j in
 * order: x[d] = (((0 + c_0 v_0d) + c_1 v_1d) + ...), a product then a sum,
 * both rounded to double.  The loops run over blocks of dimensions with the
 * partial sums in registers instead of sweeping x once per word: the same
 * operations in the same order, so the result is bit-identical to the plain
 * double loop.  Twelve dimensions per block: six two-lane SSE2 sums hide the
 * adder's latency (four, the earlier block, left it waiting on each sum)
 * and still fit the sixteen registers with the loads (sixteen spilled);
 * 300, the usual width, is 25 blocks.  On x86-64 Linux, GCC also builds an
 * AVX2 clone, picked at load time by the CPU: four-lane products and sums
 * round exactly as two-lane ones.  The clone must not fuse a product and a
 * sum (FMA rounds once, changing the bits): AVX2 alone does not enable FMA,
 * and GCC does not contract under -std=c11 (-ffp-contract=off).  Measured
 * in-process on random 300-d rows and 30 words: 4-wide 0.60-1.35 s, 12-wide
 * 0.43-0.62 s (SSE2), 0.27-0.49 s (AVX2), on a loaded machine. */
#if defined(__GNUC__) && !defined(__clang__) && defined(__x86_64__) && defined(__linux__)
#define POOL_CLONES __attribute__((target_clones("avx2", "default")))
#else
#define POOL_CLONES
#endif

POOL_CLONES
static void sum_rows(const float *const *v, const double *c, size_t m, size_t E, double *x)
{
    size_t d = 0;
    for (; d + 12 <= E; d += 12) {
        double a0 = 0, a1 = 0, a2 = 0, a3 = 0, a4 = 0, a5 = 0, a6 = 0, a7 = 0, a8 = 0, a9 = 0, a10 = 0, a11 = 0;
        for (size_t j = 0; j < m; j++) {
            const float *q = v[j] + d;
            const double cj = c[j];
            a0 += cj * (double)q[0];
            a1 += cj * (double)q[1];
            a2 += cj * (double)q[2];
            a3 += cj * (double)q[3];
            a4 += cj * (double)q[4];
            a5 += cj * (double)q[5];
            a6 += cj * (double)q[6];
            a7 += cj * (double)q[7];
            a8 += cj * (double)q[8];
            a9 += cj * (double)q[9];
            a10 += cj * (double)q[10];
            a11 += cj * (double)q[11];
        }
        x[d] = a0;
        x[d + 1] = a1;
        x[d + 2] = a2;
        x[d + 3] = a3;
        x[d + 4] = a4;
        x[d + 5] = a5;
        x[d + 6] = a6;
        x[d + 7] = a7;
        x[d + 8] = a8;
        x[d + 9] = a9;
        x[d + 10] = a10;
        x[d + 11] = a11;
    }
    /* the last E mod 12 dimensions: word by word over them, each element
     * still summed over j in order */
    size_t t0 = d;
    for (d = t0; d < E; d++)
        x[d] = 0;
    for (size_t j = 0; j < m; j++)
        for (d = t0; d < E; d++)
            x[d] += c[j] * (double)v[j][d];
}

/* 'composed' holds the vectors of rows PIECE_ROW(k), (k, E). */
static void weighted_sum(const vecset *vs, const long *row, const float *composed, const double *c, size_t m,
                         size_t E, double *x)
{
    const float *stackv[64] = { NULL }; /* zeroed: GCC cannot see that sum_rows reads only v[0..m) */
    const float **v = m <= 64 ? stackv : xcalloc(m, sizeof *v);
    for (size_t j = 0; j < m; j++)
        v[j] = row[j] >= 0 ? vecset_row(vs, (size_t)row[j]) : composed + (size_t)(-2 - row[j]) * E;
    sum_rows(v, c, m, E, x);
    if (v != stackv)
        free(v);
}

/* x = sum_j c[j] v_j, then for sif the component removed: the pooled row
 * before scaling. */
void features_pool_rows(const featurizer *f, const long *row, const float *composed, const double *c, size_t m,
                        double *x)
{
    size_t E = f->D;
    weighted_sum(f->vs, row, composed, c, m, E, x);
    if (f->u) {
        double dot = 0;
        for (size_t d = 0; d < E; d++)
            dot += f->u[d] * x[d];
        for (size_t d = 0; d < E; d++)
            x[d] -= dot * f->u[d];
    }
}

/* The bag's distinct terms looked up, and the per-word arrays of
 * word_coefs, in one block ('c' owns it: free(c)): this runs once per row,
 * where malloc and free showed up in the profile. */
static struct term_facts *bag_facts(const featurizer *f, const struct bag *b, double **c, long **row, size_t **keep,
                                    float **composed)
{
    size_t nw = b->n ? b->n : 1;
    *c = xmalloc(xmul(nw, sizeof(double) + sizeof(long) + sizeof(size_t) + sizeof(struct term_facts)));
    *row = (long *)(void *)(*c + nw);
    *keep = (size_t *)(void *)(*row + nw);
    struct term_facts *t = (struct term_facts *)(void *)(*keep + nw);
    size_t nc = 0, ccap = 0;
    *composed = NULL;
    for (size_t i = 0; i < b->n; i++) {
        t[i].tf = b->tf[i];
        features_look_up_pieces(f, b->term[i], b->hash[i], &t[i], composed, &nc, &ccap);
    }
    return t;
}

/* Pooled vector of one document into x (E), before scaling.  Returns 0 when
 * no token had a vector (x is then zero). */
int features_pool_doc(const featurizer *f, const char *const *toks, size_t ntok, double *x, struct features_stats *st)
{
    struct bag b;
    features_bag_make(&b, toks, ntok, 0);
    double *c;
    long *row;
    size_t *keep;
    float *composed;
    struct term_facts *t = bag_facts(f, &b, &c, &row, &keep, &composed);
    size_t m = features_word_coefs(f, t, b.n, keep, c, row, st);
    features_pool_rows(f, row, composed, c, m, x);
    free(composed);
    free(c);
    features_bag_release(&b);
    return m > 0;
}

/* x = (x - mean) / sd, four elements per step so that the compiler pairs
 * them into vector subtractions and divisions (two or, in the AVX2 clone,
 * four lanes): each lane rounds exactly as the scalar operation, so the
 * bits do not change.  A product by 1/sd would be faster but not exact. */
POOL_CLONES
static void scale_vec(double *restrict x, const double *restrict mean, const double *restrict sd, size_t D)
{
    size_t d = 0;
    for (; d + 4 <= D; d += 4) {
        x[d] = (x[d] - mean[d]) / sd[d];
        x[d + 1] = (x[d + 1] - mean[d + 1]) / sd[d + 1];
        x[d + 2] = (x[d + 2] - mean[d + 2]) / sd[d + 2];
        x[d + 3] = (x[d + 3] - mean[d + 3]) / sd[d + 3];
    }
    for (; d < D; d++)
        x[d] = (x[d] - mean[d]) / sd[d];
}

void features_scale_row(const featurizer *f, double *x)
{
    if (f->mean)
        scale_vec(x, f->mean, f->sd, f->D);
}

/* Sparse tf-idf row of one document, unit length. */
static void bow_doc(const featurizer *f, const char *const *toks, size_t ntok, struct fmat *X,
                    struct features_stats *st)
{
    struct bag b;
    features_bag_make(&b, toks, ntok, f->p.bigrams);
    uint32_t *cols = xcalloc(b.n ? b.n : 1, sizeof *cols);
    double *vals = xcalloc(b.n ? b.n : 1, sizeof *vals);
    size_t m = 0;
    double norm = 0;
    for (size_t i = 0; i < b.n; i++) {
        int32_t id = vocab_find_hashed(f->words, b.term[i], b.hash[i]);
        int unigram = strchr(b.term[i], ' ') == NULL;
        if (st && unigram) {
            st->tokens += (uint64_t)b.tf[i];
            st->with_vector += id >= 0 ? (uint64_t)b.tf[i] : 0;
        }
        if (id < 0)
            continue;
        cols[m] = (uint32_t)id;
        vals[m] = tf_weight(f, b.tf[i]) * f->idf[id];
        norm += vals[m] * vals[m];
        m++;
    }
    /* columns ascending for CSR: sort (col, val) pairs by col (insertion
     * sort: rows are short) */
    for (size_t i = 1; i < m; i++) {
        uint32_t cc = cols[i];
        double vv = vals[i];
        size_t j = i;
        for (; j > 0 && cols[j - 1] > cc; j--) {
            cols[j] = cols[j - 1];
            vals[j] = vals[j - 1];
        }
        cols[j] = cc;
        vals[j] = vv;
    }
    norm = sqrt(norm);
    for (size_t i = 0; i < m; i++)
        vals[i] /= norm;
    if (m == 0 && st)
        st->empty_rows++;
    fmat_push_row(X, cols, vals, m);
    free(cols);
    free(vals);
    features_bag_release(&b);
}

/* ---- fitting ---- */

/* The token strings of document r of 'd' into 'buf' (grown as needed). */
const char **features_doc_tokens(const struct tokdocs *d, size_t r, const char **buf, size_t *cap, size_t *n)
{
    size_t a = d->off[r], z = d->off[r + 1];
    buf = xgrow(buf, cap, z - a + 1, sizeof *buf);
    for (size_t i = a; i < z; i++)
        buf[i - a] = vocab_word(d->v, d->tok[i]);
    *n = z - a;
    return buf;
}

/* xu = X u (X: n x E), each row's dot product in vec4_dot's fixed order. */
VEC4_CLONES static void rows_dot(const double *X, size_t n, size_t E, const double *u, double *xu)
{
    for (size_t i = 0; i < n; i++)
        xu[i] = vec4_dot(E, X + i * E, u);
}

/* t = X^T xu: each t[d] sums its rows in order (the same bits as the
 * plain double loop). */
VEC4_CLONES static void cols_dot(const double *X, size_t n, size_t E, const double *xu, double *t)
{
    memset(t, 0, E * sizeof *t);
    for (size_t i = 0; i < n; i++)
        vec4_axpy(E, xu[i], X + i * E, t, t);
}

/* First right singular vector of X (n x E, uncentred, as in Arora et al.)
 * by power iteration on X^T X from a fixed start, so results repeat. */
static double *first_component(const double *X, size_t n, size_t E)
{
    double *u = xcalloc(E, sizeof *u), *t = xcalloc(E, sizeof *t), *xu = xcalloc(n ? n : 1, sizeof *xu);
    for (size_t d = 0; d < E; d++)
        u[d] = 1.0 / sqrt((double)E) * (1.0 + 1e-3 * (double)(d % 7));
    for (int it = 0; it < 500; it++) {
        rows_dot(X, n, E, u, xu);
        cols_dot(X, n, E, xu, t);
        double nrm = 0, diff = 0;
        for (size_t d = 0; d < E; d++)
            nrm += t[d] * t[d];
        nrm = sqrt(nrm);
        if (nrm == 0)
            break;
        for (size_t d = 0; d < E; d++) {
            double nu = t[d] / nrm;
            diff += fabs(nu - u[d]);
            u[d] = nu;
        }
        if (diff < 1e-13 * (double)E)
            break;
    }
    free(t);
    free(xu);
    return u;
}

/* features_fit, and with 'Xout' the training rows pooled (and SIF's
 * component removed, but not scaled) into Xout, with what they saw added
 * to 'st'; with 'cache', pooled rows come from it. */
static featurizer *fit(const struct features_params *p, const struct tokdocs *d, const size_t *rows, size_t n,
                       const vecset *vs, const features_cache *cache, struct fmat *Xout, struct features_stats *st,
                       struct err *e)
{
    if (n == 0) {
        err_set(e, NULL, 0, "no training rows to fit features on");
        return NULL;
    }
    if (p->pool != POOL_BOW && !vs) {
        err_set(e, NULL, 0, "pooling '%s' needs a vector set", features_pool_name(p->pool));
        err_hint(e, "pass --vectors FILE.vecs, or use --pool bow");
        return NULL;
    }
    featurizer *f = xcalloc(1, sizeof *f);
    f->p = *p;
    f->vs = p->pool == POOL_BOW ? NULL : vs;
    f->n_train = n;
    f->idf_unseen = log((1.0 + (double)n) / 1.0) + 1.0;

    /* Document frequencies and counts over the training rows.  Ids of 'all'
     * are dense, so df/cnt grow with them. */
    vocab *all = vocab_new();
    size_t cap = 0, capd = 0, ntok;
    double *df = NULL, *cnt = NULL;
    const char **buf = NULL;
    double total = 0;
    int32_t *order = NULL;  /* with cached bags: id in 'all' -> token id */
    size_t V = 0;
    if (cache && cache->boff) {
        /* The same first-appearance order and sums as the loop below, by
         * token id: 'all' gets its words in that order afterwards. */
        size_t nv = vocab_size(d->v);
        int32_t *map = xmalloc(xmul(nv ? nv : 1, sizeof *map));
        for (size_t t = 0; t < nv; t++)
            map[t] = -1;
        order = xmalloc(xmul(nv ? nv : 1, sizeof *order));
        df = xcalloc(nv ? nv : 1, sizeof *df);
        cnt = xcalloc(nv ? nv : 1, sizeof *cnt);
        for (size_t i = 0; i < n; i++)
            for (size_t q = cache->boff[rows[i]]; q < cache->boff[rows[i] + 1]; q++) {
                int32_t t = cache->btok[q];
                if (map[t] < 0) {
                    map[t] = (int32_t)V;
                    order[V++] = t;
                }
                df[map[t]] += 1;
                cnt[map[t]] += cache->btf[q];
                total += cache->btf[q];
            }
        for (size_t id = 0; id < V; id++)
            vocab_add(all, vocab_word(d->v, order[id]));
        free(map);
        free(order);
    }
    for (size_t i = 0; i < n && !(cache && cache->boff); i++) {
        buf = features_doc_tokens(d, rows[i], buf, &cap, &ntok);
        struct bag b;
        features_bag_make(&b, buf, ntok, p->pool == POOL_BOW && p->bigrams);
        for (size_t j = 0; j < b.n; j++) {
            size_t id = (size_t)vocab_add(all, b.term[j]);
            if (id >= capd) {
                size_t old = capd;
                capd = 2 * id + 64;
                df = xreallocarray(df, capd, sizeof *df);
                cnt = xreallocarray(cnt, capd, sizeof *cnt);
                memset(df + old, 0, (capd - old) * sizeof *df);
                memset(cnt + old, 0, (capd - old) * sizeof *cnt);
            }
            df[id] += 1;
            cnt[id] += b.tf[j];
            if (strchr(b.term[j], ' ') == NULL)
                total += b.tf[j];
        }
        features_bag_release(&b);
    }

    V = vocab_size(all);
    /* bow: terms of fewer than min_df training rows are dropped, unless
     * that would drop every term (a handful of rows sharing no word): then
     * all are kept, and the model records min_df 1. */
    if (p->pool == POOL_BOW && f->p.min_df > 1) {
        size_t kept = 0;
        for (size_t id = 0; id < V; id++)
            kept += df[id] >= (double)f->p.min_df;
        if (kept == 0)
            f->p.min_df = 1;
    }
    f->words = vocab_new();
    for (size_t id = 0; id < V; id++) {
        if (p->pool == POOL_BOW && df[id] < (double)f->p.min_df)
            continue;
        int32_t nid = vocab_add(f->words, vocab_word(all, (int32_t)id));
        f->idf = xreallocarray(f->idf, (size_t)nid + 1, sizeof *f->idf);
        f->pw = xreallocarray(f->pw, (size_t)nid + 1, sizeof *f->pw);
        f->idf[nid] = log((1.0 + (double)n) / (1.0 + df[id])) + 1.0;
        f->pw[nid] = total > 0 ? cnt[id] / total : 0;
    }
    vocab_free(all);
    free(df);
    free(cnt);

    if (p->pool == POOL_BOW) {
        f->D = vocab_size(f->words);
        if (f->D == 0) {
            free(buf);
            features_free(f);
            err_set(e, NULL, 0, "the training rows have no words");
            return NULL;
        }
        free(buf);
        return f;
    }

    /* Pooling: the training rows' pooled vectors, for SIF's component and
     * the scaler. */
    f->D = vecset_dim(vs);
    size_t E = f->D;
    struct fmat Xlocal = FMAT_INIT, *Xm = Xout ? Xout : &Xlocal;
    fmat_dense(Xm, n, E);
    double *X = Xm->x;
    size_t empty = 0;
    for (size_t i = 0; i < n; i++) {
        if (cache && cache->x) {
            const struct features_stats *cs = &cache->st[rows[i]];
            memcpy(X + i * E, cache->x + rows[i] * E, E * sizeof *X);
            empty += cs->empty_rows;
            if (st) {
                st->tokens += cs->tokens;
                st->with_vector += cs->with_vector;
            }
            continue;
        }
        buf = features_doc_tokens(d, rows[i], buf, &cap, &ntok);
        empty += !features_pool_doc(f, buf, ntok, X + i * E, st);
    }
    free(buf);
    if (st)
        st->empty_rows += empty;
    if (empty == n) {
        fmat_release(Xm);
        features_free(f);
        err_set(e, NULL, 0, "no training row has a single word with a vector");
        err_hint(e, "check the vector set's coverage with 'vecsift vectors coverage'");
        return NULL;
    }
    if (p->pool == POOL_SIF) {
        f->u = first_component(X, n, E);
        for (size_t i = 0; i < n; i++) {
            double dot = 0;
            for (size_t q = 0; q < E; q++)
                dot += f->u[q] * X[i * E + q];
            for (size_t q = 0; q < E; q++)
                X[i * E + q] -= dot * f->u[q];
        }
    }
    if (p->scale) {
        f->mean = xcalloc(E, sizeof *f->mean);
        f->sd = xcalloc(E, sizeof *f->sd);
        for (size_t i = 0; i < n; i++)
            for (size_t q = 0; q < E; q++)
                f->mean[q] += X[i * E + q];
        for (size_t q = 0; q < E; q++)
            f->mean[q] /= (double)n;
        for (size_t i = 0; i < n; i++)
            for (size_t q = 0; q < E; q++) {
                double t = X[i * E + q] - f->mean[q];
                f->sd[q] += t * t;
            }
        for (size_t q = 0; q < E; q++) {
            f->sd[q] = sqrt(f->sd[q] / (double)n);
            if (!(f->sd[q] > 1e-12))
                f->sd[q] = 1.0;
        }
    }
    fmat_release(&Xlocal);
    return f;
}

featurizer *features_fit(const struct features_params *p, const struct tokdocs *d, const size_t *rows, size_t n,
                         const vecset *vs, struct err *e)
{
    if (features_pool_combined(p->pool))
        return combined_fit(p, d, rows, n, vs, NULL, NULL, NULL, e);
    return fit(p, d, rows, n, vs, NULL, NULL, NULL, e);
}

/* ---- applying ---- */

void features_alloc(const featurizer *f, size_t n, struct fmat *X)
{
    if (features_sparse(f))
        fmat_sparse(X, f->D);
    else
        fmat_dense(X, n, f->D);
}

void features_transform_tokens(const featurizer *f, const char *const *toks, size_t ntok, struct fmat *X, size_t i,
                               struct features_stats *st)
{
    if (features_sparse(f)) {
        assert(X->sparse && X->n == i);
        if (f->bag)
            combined_doc(f, toks, ntok, X, st);
        else
            bow_doc(f, toks, ntok, X, st);
        return;
    }
    assert(!X->sparse && i < X->n && X->d == f->D);
    double *x = X->x + i * f->D;
    if (!features_pool_doc(f, toks, ntok, x, st) && st)
        st->empty_rows++;
    features_scale_row(f, x);
}

void features_transform(const featurizer *f, const struct tokdocs *d, const size_t *rows, size_t n, struct fmat *X,
                        struct features_stats *st)
{
    features_alloc(f, n, X);
    const char **buf = NULL;
    size_t cap = 0, ntok;
    for (size_t i = 0; i < n; i++) {
        buf = features_doc_tokens(d, rows[i], buf, &cap, &ntok);
        features_transform_tokens(f, buf, ntok, X, i, st);
    }
    free(buf);
}

featurizer *features_fit_transform(const struct features_params *p, const struct tokdocs *d, const size_t *rows,
                                   size_t n, const vecset *vs, const features_cache *cache, struct fmat *X,
                                   struct features_stats *st, struct err *e)
{
    if (features_pool_combined(p->pool))
        return combined_fit(p, d, rows, n, vs, cache, X, st, e);
    if (p->pool == POOL_BOW) {
        featurizer *f = fit(p, d, rows, n, vs, NULL, NULL, NULL, e);
        if (f)
            features_transform(f, d, rows, n, X, st);
        return f;
    }
    assert(!cache || cache->n == d->n);
    featurizer *f = fit(p, d, rows, n, vs, cache, X, st, e);
    if (!f)
        return NULL;
    for (size_t i = 0; i < n; i++)
        features_scale_row(f, X->x + i * f->D);
    return f;
}


size_t features_word_weights(const featurizer *f, const char *const *toks, size_t ntok, const char **words,
                             double *coef)
{
    if (features_sparse(f))
        return 0;
    struct bag b;
    features_bag_make(&b, toks, ntok, 0);
    double *c;
    long *row;
    size_t *keep;
    float *composed;
    struct term_facts *t = bag_facts(f, &b, &c, &row, &keep, &composed);
    size_t m = features_word_coefs(f, t, b.n, keep, c, row, NULL);
    free(composed);
    /* bag terms point into 'toks' (no pairs), so they stay valid */
    for (size_t j = 0; j < m; j++) {
        words[j] = b.term[keep[j]];
        coef[j] = c[j];
    }
    free(c);
    features_bag_release(&b);
    return m;
}

/* ---- the combined route: a bow block beside a pooled block ---- */

/* What each block of combined pooling 'p' is fitted with: the same
 * settings, with the pooling of the block. */
static void block_params(const struct features_params *p, struct features_params *pb, struct features_params *pd)
{
    *pb = *p;
    pb->pool = POOL_BOW;
    *pd = *p;
    pd->pool = features_pool_dense(p->pool);
}

/* w_p = sqrt(E / mean_i ||z_i||^2) over the n standardised pooled rows
 * Z (n x E): see features.h for why.  1 when every row is zero (no row
 * has a vector: fit() refuses that before we get here). */
static double block_weight(const double *Z, size_t n, size_t E)
{
    double s = 0;
    for (size_t i = 0; i < n * E; i++)
        s += Z[i] * Z[i];
    s /= (double)n;
    return s > 0 ? sqrt((double)E / s) : 1.0;
}

/* Append one combined row: the bow block's row i of Xb times its weight,
 * then the pooled block's standardised row z (E) times its weight, in
 * columns Vb .. Vb+E-1.  Every pooled column is stored, zero or not, so each row
 * has the same E trailing entries. */
static void push_combined(const featurizer *f, const struct fmat *Xb, size_t i, const double *z, struct fmat *X)
{
    size_t a = Xb->rowptr[i], nb = Xb->rowptr[i + 1] - a, E = f->pooled->D, Vb = f->bag->D;
    uint32_t *cols = xmalloc(xmul(nb + E, sizeof *cols));
    double *vals = xmalloc(xmul(nb + E, sizeof *vals));
    if (nb) {
        memcpy(cols, Xb->col + a, nb * sizeof *cols);
        for (size_t q = 0; q < nb; q++)
            vals[q] = f->wbow * Xb->val[a + q];
    }
    for (size_t q = 0; q < E; q++) {
        cols[nb + q] = (uint32_t)(Vb + q);
        vals[nb + q] = f->wdense * z[q];
    }
    fmat_push_row(X, cols, vals, nb + E);
    free(cols);
    free(vals);
}

/* Fit both blocks on the same rows and the block weight; with 'X', the
 * training rows' combined features too.  Counts in 'st' are the pooled
 * block's (tokens with a vector), as for pooling alone. */
static featurizer *combined_fit(const struct features_params *p, const struct tokdocs *d, const size_t *rows,
                                size_t n, const vecset *vs, const features_cache *cache, struct fmat *X,
                                struct features_stats *st, struct err *e)
{
    if (!vs) {
        err_set(e, NULL, 0, "pooling '%s' needs a vector set", features_pool_name(p->pool));
        err_hint(e, "pass --vectors FILE.vecs, or use --pool bow");
        return NULL;
    }
    struct features_params pb, pd;
    block_params(p, &pb, &pd);
    /* the cache holds unigram bags and pooled rows: the bow block (with
     * its word pairs) counts its own */
    featurizer *bag = fit(&pb, d, rows, n, NULL, NULL, NULL, NULL, e);
    if (!bag)
        return NULL;
    struct fmat Z = FMAT_INIT;
    featurizer *pooled = fit(&pd, d, rows, n, vs, cache, &Z, st, e);
    if (!pooled) {
        features_free(bag);
        return NULL;
    }
    size_t E = pooled->D;
    assert(bag->D + E < UINT32_MAX);
    for (size_t i = 0; i < n; i++)
        features_scale_row(pooled, Z.x + i * E);
    featurizer *f = xcalloc(1, sizeof *f);
    f->p = *p;
    f->vs = vs;
    f->n_train = n;
    f->bag = bag;
    f->pooled = pooled;
    f->D = bag->D + E;
    f->wbow = sqrt((double)E);
    f->wdense = block_weight(Z.x, n, E);
    if (X) {
        struct fmat Xb = FMAT_INIT;
        features_transform(bag, d, rows, n, &Xb, NULL);
        fmat_sparse(X, f->D);
        for (size_t i = 0; i < n; i++)
            push_combined(f, &Xb, i, Z.x + i * E, X);
        fmat_release(&Xb);
    }
    fmat_release(&Z);
    return f;
}

/* One text's combined row, appended to X: the same numbers as
 * combined_fit gives a training row. */
static void combined_doc(const featurizer *f, const char *const *toks, size_t ntok, struct fmat *X,
                         struct features_stats *st)
{
    struct fmat Xb = FMAT_INIT;
    fmat_sparse(&Xb, f->bag->D);
    bow_doc(f->bag, toks, ntok, &Xb, NULL);
    size_t E = f->pooled->D;
    double *z = xcalloc(E, sizeof *z);
    if (!features_pool_doc(f->pooled, toks, ntok, z, st) && st)
        st->empty_rows++;
    features_scale_row(f->pooled, z);
    push_combined(f, &Xb, 0, z, X);
    free(z);
    fmat_release(&Xb);
}

int features_blocks(const featurizer *f, const featurizer **bow, const featurizer **pooled, double w[2])
{
    if (!f->bag)
        return -1;
    *bow = f->bag;
    *pooled = f->pooled;
    w[0] = f->wbow;
    w[1] = f->wdense;
    return 0;
}

