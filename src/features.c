/* features.c -- pooling of word vectors, sparse TF-IDF bag of words,
 * standardisation.  The formulas are in features.h.
 *
 * Every path, cross-validation (token ids) and prediction (token strings),
 * goes through one function, pool_doc(), on the document's token strings,
 * so that `features`, `evaluate` and `predict` compute exactly the same
 * numbers.
 */
#include "vecsift/features.h"

#include <assert.h>
#include <cjson/cJSON.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/err.h"
#include "vecsift/fmat.h"
#include "vecsift/jsonv.h"
#include "vecsift/vecset.h"
#include "vecsift/vocab.h"
#include "vecsift/xalloc.h"
#include "vec4.h"

/* N = training rows, V = words/terms seen in training, D = output width,
 * E = vector dimension (D = E for pooling). */
struct featurizer {
    struct features_params p;
    const vecset *vs;
    size_t n_train;
    vocab *words;       /* unigrams (pooling) or terms kept as columns (bow) */
    double *idf;        /* (V) */
    double *pw;         /* (V) sif: relative frequency */
    double idf_unseen;  /* idf of a word never seen in training: ln(1+N) + 1 */
    size_t D;
    double *mean, *sd;  /* (D) scaler, NULL for bow or when not scaling */
    double *u;          /* (D) sif component, unit length, or NULL */
    /* combined (bow+...): the two blocks, and the pooled block's weight */
    featurizer *bag, *pooled;
    double wbow, wdense;
};

/* the combined route, in its own section below */
static featurizer *combined_fit(const struct features_params *p, const struct tokdocs *d, const size_t *rows,
                                size_t n, const vecset *vs, const features_cache *cache, struct fmat *X,
                                struct features_stats *st, struct err *e);
static void combined_doc(const featurizer *f, const char *const *toks, size_t ntok, struct fmat *X,
                         struct features_stats *st);
static void combined_save(const featurizer *f, cJSON *obj);
static featurizer *combined_load(const struct jsonv_ctx *c, const cJSON *obj, enum features_pool pool,
                                 const vecset *vs);

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

/* Distinct terms of a document with their counts, in order of first
 * appearance, so every sum below runs in one fixed order.  Terms are the
 * tokens, plus "a b" for each adjacent pair when 'pairs'.  Found with a
 * small open-addressing table (FNV-1a, vocab_hash): a sort with string
 * compares cost more than the pooling it serves. */
struct bag {
    const char **term;
    uint64_t *hash;   /* vocab_hash of each term, reused for the lookups */
    double *tf;
    size_t n;
    char *pairbuf;
};

static void bag_make(struct bag *b, const char *const *toks, size_t ntok, int pairs)
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

static void bag_release(struct bag *b)
{
    free(b->tf);
    free(b->pairbuf);
}

static double tf_weight(const featurizer *f, double tf)
{
    return f->p.sublinear_tf ? 1.0 + log(tf) : tf;
}

/* What pooling needs to know of one distinct term of a document. */
struct term_facts {
    double tf;   /* occurrences in the document */
    long row;    /* its vector's row, or -1 when it has none */
    int32_t id;  /* its id among the training words, or -1 */
};

/* The facts of a term whose vocab_hash is 'h' ('tf' is left alone).  A
 * term the store has no row for, in a store with pieces, gets a vector
 * composed from its pieces (vecset_compose) into 'slab' ((k, E), grown,
 * k counted in *nslab) and row PIECE_ROW(k); slab NULL leaves it at -1. */
#define PIECE_ROW(k) (-2 - (long)(k))
static void look_up_pieces(const featurizer *f, const char *term, uint64_t h, struct term_facts *t, float **slab,
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
static size_t word_coefs(const featurizer *f, const struct term_facts *t, size_t n, size_t *keep, double *c,
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
static void pool_rows(const featurizer *f, const long *row, const float *composed, const double *c, size_t m,
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
        look_up_pieces(f, b->term[i], b->hash[i], &t[i], composed, &nc, &ccap);
    }
    return t;
}

/* Pooled vector of one document into x (E), before scaling.  Returns 0 when
 * no token had a vector (x is then zero). */
static int pool_doc(const featurizer *f, const char *const *toks, size_t ntok, double *x, struct features_stats *st)
{
    struct bag b;
    bag_make(&b, toks, ntok, 0);
    double *c;
    long *row;
    size_t *keep;
    float *composed;
    struct term_facts *t = bag_facts(f, &b, &c, &row, &keep, &composed);
    size_t m = word_coefs(f, t, b.n, keep, c, row, st);
    pool_rows(f, row, composed, c, m, x);
    free(composed);
    free(c);
    bag_release(&b);
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

static void scale_row(const featurizer *f, double *x)
{
    if (f->mean)
        scale_vec(x, f->mean, f->sd, f->D);
}

/* Sparse tf-idf row of one document, unit length. */
static void bow_doc(const featurizer *f, const char *const *toks, size_t ntok, struct fmat *X,
                    struct features_stats *st)
{
    struct bag b;
    bag_make(&b, toks, ntok, f->p.bigrams);
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
    bag_release(&b);
}

/* ---- fitting ---- */

/* The token strings of document r of 'd' into 'buf' (grown as needed). */
static const char **doc_tokens(const struct tokdocs *d, size_t r, const char **buf, size_t *cap, size_t *n)
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

/* Rows pooled once for many fits over subsets of the same documents: see
 * features.h.  Only pooling without fitted state (mean) is kept. */
struct features_cache {
    size_t n, E;
    double *x;                    /* (N, E) unscaled pooled rows, or NULL */
    struct features_stats *st;    /* (N) what pooling each row saw */
    /* Pooling (not bow): each document's distinct tokens, as ids of the
     * documents' vocabulary, in order of first appearance, with counts:
     * what bag_make finds, so fit() counts df without hashing strings. */
    size_t *boff;                 /* (N+1), or NULL */
    int32_t *btok;                /* (boff[N]) */
    double *btf;                  /* (boff[N]) */
};

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
        buf = doc_tokens(d, rows[i], buf, &cap, &ntok);
        struct bag b;
        bag_make(&b, buf, ntok, p->pool == POOL_BOW && p->bigrams);
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
        bag_release(&b);
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
        buf = doc_tokens(d, rows[i], buf, &cap, &ntok);
        empty += !pool_doc(f, buf, ntok, X + i * E, st);
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
    if (!pool_doc(f, toks, ntok, x, st) && st)
        st->empty_rows++;
    scale_row(f, x);
}

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
    look_up_pieces(mm->f, tok, h, &t, &mm->composed, &mm->ncomposed, &mm->ccap);
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
    size_t m = word_coefs(f, mm->doc, nd, mm->keep, mm->c, mm->row, st);
    pool_rows(f, mm->row, mm->composed, mm->c, m, x);
    if (m == 0 && st)
        st->empty_rows++;
    scale_row(f, x);
}

void features_transform(const featurizer *f, const struct tokdocs *d, const size_t *rows, size_t n, struct fmat *X,
                        struct features_stats *st)
{
    features_alloc(f, n, X);
    const char **buf = NULL;
    size_t cap = 0, ntok;
    for (size_t i = 0; i < n; i++) {
        buf = doc_tokens(d, rows[i], buf, &cap, &ntok);
        features_transform_tokens(f, buf, ntok, X, i, st);
    }
    free(buf);
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
            buf = doc_tokens(d, r, buf, &cap, &ntok);
            struct bag b;
            bag_make(&b, buf, ntok, 0);
            for (size_t j = 0; j < b.n; j++) {
                c->btok[m] = vocab_find_hashed(d->v, b.term[j], b.hash[j]);
                c->btf[m++] = b.tf[j];
            }
            c->boff[r + 1] = m;
            bag_release(&b);
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
        buf = doc_tokens(d, r, buf, &cap, &ntok);
        c->st[r].empty_rows = !pool_doc(&f0, buf, ntok, c->x + r * c->E, &c->st[r]);
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
        scale_row(f, X->x + i * f->D);
    return f;
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
        scale_row(f, x);
    }
}

size_t features_word_weights(const featurizer *f, const char *const *toks, size_t ntok, const char **words,
                             double *coef)
{
    if (features_sparse(f))
        return 0;
    struct bag b;
    bag_make(&b, toks, ntok, 0);
    double *c;
    long *row;
    size_t *keep;
    float *composed;
    struct term_facts *t = bag_facts(f, &b, &c, &row, &keep, &composed);
    size_t m = word_coefs(f, t, b.n, keep, c, row, NULL);
    free(composed);
    /* bag terms point into 'toks' (no pairs), so they stay valid */
    for (size_t j = 0; j < m; j++) {
        words[j] = b.term[keep[j]];
        coef[j] = c[j];
    }
    free(c);
    bag_release(&b);
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
        scale_row(pooled, Z.x + i * E);
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
    if (!pool_doc(f->pooled, toks, ntok, z, st) && st)
        st->empty_rows++;
    scale_row(f->pooled, z);
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

/* A combined featurizer's fields: its pooling, width and block weights,
 * and each block's own fields in an object of its own. */
static void combined_save(const featurizer *f, cJSON *obj)
{
    cJSON_AddStringToObject(obj, "pool", features_pool_name(f->p.pool));
    cJSON_AddNumberToObject(obj, "training_rows", (double)f->n_train);
    cJSON_AddNumberToObject(obj, "dimensions", (double)f->D);
    cJSON_AddItemToObject(obj, "bow_weight", jsonv_number_new(f->wbow));
    cJSON_AddItemToObject(obj, "pooled_weight", jsonv_number_new(f->wdense));
    features_save(f->bag, cJSON_AddObjectToObject(obj, "bag_of_words"));
    features_save(f->pooled, cJSON_AddObjectToObject(obj, "pooled"));
}

static featurizer *combined_load(const struct jsonv_ctx *c, const cJSON *obj, enum features_pool pool,
                                 const vecset *vs)
{
    if (!vs) {
        jsonv_fail(c, "pool", "'%s' needs a vector set", features_pool_name(pool));
        return NULL;
    }
    size_t dims, ntrain;
    double w, wb;
    if (jsonv_size(c, obj, "training_rows", 1, (size_t)1 << 40, &ntrain) < 0 ||
        jsonv_size(c, obj, "dimensions", 2, (size_t)UINT32_MAX - 1, &dims) < 0 ||
        jsonv_num(c, obj, "bow_weight", 1e-300, 1e300, &wb) < 0 ||
        jsonv_num(c, obj, "pooled_weight", 1e-300, 1e300, &w) < 0)
        return NULL;
    const cJSON *bo = jsonv_get(c, obj, "bag_of_words");
    const cJSON *po = bo ? jsonv_get(c, obj, "pooled") : NULL;
    if (!po)
        return NULL;
    char pathb[200], pathd[200];
    snprintf(pathb, sizeof pathb, "%s%sbag_of_words", c->path, *c->path ? "." : "");
    snprintf(pathd, sizeof pathd, "%s%spooled", c->path, *c->path ? "." : "");
    struct jsonv_ctx cb = *c, cd = *c;
    cb.path = pathb;
    cd.path = pathd;
    featurizer *bag = features_load(&cb, bo, NULL);
    featurizer *pooled = bag ? features_load(&cd, po, vs) : NULL;
    if (!pooled) {
        features_free(bag);
        return NULL;
    }
    int bad = 0;
    if (bag->p.pool != POOL_BOW)
        bad = jsonv_fail(&cb, "pool", "is '%s', not bow", features_pool_name(bag->p.pool));
    else if (pooled->p.pool != features_pool_dense(pool))
        bad = jsonv_fail(&cd, "pool", "is '%s', but the route is '%s'", features_pool_name(pooled->p.pool),
                         features_pool_name(pool));
    else if (dims != bag->D + pooled->D)
        bad = jsonv_fail(c, "dimensions", "is %zu but the blocks have %zu and %zu", dims, bag->D, pooled->D);
    if (bad) {
        features_free(bag);
        features_free(pooled);
        return NULL;
    }
    featurizer *f = xcalloc(1, sizeof *f);
    f->p = pooled->p;
    f->p.pool = pool;
    f->p.bigrams = bag->p.bigrams;
    f->p.min_df = bag->p.min_df;
    f->vs = vs;
    f->n_train = ntrain;
    f->bag = bag;
    f->pooled = pooled;
    f->D = dims;
    f->wbow = wb;
    f->wdense = w;
    return f;
}

/* ---- persistence ---- */

void features_save(const featurizer *f, cJSON *obj)
{
    if (f->bag) {
        combined_save(f, obj);
        return;
    }
    cJSON_AddStringToObject(obj, "pool", features_pool_name(f->p.pool));
    cJSON_AddBoolToObject(obj, "sublinear_tf", f->p.sublinear_tf);
    cJSON_AddItemToObject(obj, "sif_a", jsonv_number_new(f->p.sif_a));
    cJSON_AddBoolToObject(obj, "bigrams", f->p.bigrams);
    cJSON_AddNumberToObject(obj, "min_df", (double)f->p.min_df);
    cJSON_AddBoolToObject(obj, "scale", f->p.scale);
    cJSON_AddNumberToObject(obj, "training_rows", (double)f->n_train);
    cJSON_AddNumberToObject(obj, "dimensions", (double)f->D);
    size_t V = vocab_size(f->words);
    cJSON *w = cJSON_CreateArray();
    for (size_t i = 0; i < V; i++)
        cJSON_AddItemToArray(w, cJSON_CreateString(vocab_word(f->words, (int32_t)i)));
    cJSON_AddItemToObject(obj, "words", w);
    cJSON_AddItemToObject(obj, "idf", jsonv_doubles_new(f->idf, V));
    if (f->p.pool == POOL_SIF)
        cJSON_AddItemToObject(obj, "word_probability", jsonv_doubles_new(f->pw, V));
    if (f->u)
        cJSON_AddItemToObject(obj, "sif_component", jsonv_doubles_new(f->u, f->D));
    if (f->mean) {
        cJSON_AddItemToObject(obj, "scale_mean", jsonv_doubles_new(f->mean, f->D));
        cJSON_AddItemToObject(obj, "scale_sd", jsonv_doubles_new(f->sd, f->D));
    }
}

static int get_bool(const struct jsonv_ctx *c, const cJSON *obj, const char *key, int *out)
{
    const cJSON *v = jsonv_get(c, obj, key);
    if (!v)
        return -1;
    if (!cJSON_IsBool(v))
        return jsonv_fail(c, key, "is not true or false");
    *out = cJSON_IsTrue(v);
    return 0;
}

featurizer *features_load(const struct jsonv_ctx *c, const cJSON *obj, const vecset *vs)
{
    featurizer *f = xcalloc(1, sizeof *f);
    char **words = NULL;
    size_t V = 0;
    const char *pool = jsonv_str(c, obj, "pool");
    if (!pool)
        goto fail;
    if (features_pool_parse(pool, &f->p.pool) < 0) {
        jsonv_fail(c, "pool", "is '%s', not one of " FEATURES_POOL_NAMES, pool);
        goto fail;
    }
    if (features_pool_combined(f->p.pool)) {
        enum features_pool pp = f->p.pool;
        features_free(f);
        return combined_load(c, obj, pp, vs);
    }
    size_t dims, min_df, ntrain;
    if (get_bool(c, obj, "sublinear_tf", &f->p.sublinear_tf) < 0 || get_bool(c, obj, "bigrams", &f->p.bigrams) < 0 ||
        get_bool(c, obj, "scale", &f->p.scale) < 0 ||
        jsonv_size(c, obj, "min_df", 1, 1u << 30, &min_df) < 0 ||
        jsonv_size(c, obj, "training_rows", 1, (size_t)1 << 40, &ntrain) < 0 ||
        jsonv_size(c, obj, "dimensions", 1, (size_t)1 << 26, &dims) < 0)
        goto fail;
    f->p.min_df = min_df;
    f->n_train = ntrain;
    f->D = dims;
    f->idf_unseen = log(1.0 + (double)ntrain) + 1.0;
    if (jsonv_num(c, obj, "sif_a", 1e-300, 1e300, &f->p.sif_a) < 0)
        goto fail;
    words = jsonv_strings(c, obj, "words", SIZE_MAX, &V);
    if (!words)
        goto fail;
    f->words = vocab_new();
    for (size_t i = 0; i < V; i++) {
        if ((size_t)vocab_add(f->words, words[i]) != i) {
            jsonv_fail(c, "words", "repeats '%.40s'", words[i]);
            goto fail;
        }
    }
    if (!(f->idf = jsonv_doubles(c, obj, "idf", V, NULL)))
        goto fail;
    for (size_t i = 0; i < V; i++)
        if (!(f->idf[i] >= 1.0)) {
            jsonv_fail(c, "idf", "entry %zu is below 1, which smoothed idf never is", i);
            goto fail;
        }
    if (f->p.pool == POOL_BOW) {
        if (dims != V) {
            jsonv_fail(c, "dimensions", "is %zu but there are %zu words", dims, V);
            goto fail;
        }
    } else {
        if (!vs) {
            jsonv_fail(c, "pool", "'%s' needs a vector set", pool);
            goto fail;
        }
        if (vecset_dim(vs) != dims) {
            jsonv_fail(c, "dimensions", "is %zu but the vector set has %zu", dims, vecset_dim(vs));
            goto fail;
        }
        f->vs = vs;
    }
    if (f->p.pool == POOL_SIF) {
        if (!(f->pw = jsonv_doubles(c, obj, "word_probability", V, NULL)) ||
            !(f->u = jsonv_doubles(c, obj, "sif_component", dims, NULL)))
            goto fail;
    }
    if (f->p.scale && f->p.pool != POOL_BOW) {
        if (!(f->mean = jsonv_doubles(c, obj, "scale_mean", dims, NULL)) ||
            !(f->sd = jsonv_doubles(c, obj, "scale_sd", dims, NULL)))
            goto fail;
        for (size_t i = 0; i < dims; i++)
            if (!(f->sd[i] > 0)) {
                jsonv_fail(c, "scale_sd", "entry %zu is not positive", i);
                goto fail;
            }
    }
    for (size_t i = 0; i < V; i++)
        free(words[i]);
    free(words);
    return f;
fail:
    for (size_t i = 0; i < V && words; i++)
        free(words[i]);
    free(words);
    features_free(f);
    return NULL;
}
