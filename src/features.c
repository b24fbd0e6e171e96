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
#include <stdlib.h>
#include <string.h>

#include "vecsift/err.h"
#include "vecsift/fmat.h"
#include "vecsift/jsonv.h"
#include "vecsift/vecset.h"
#include "vecsift/vocab.h"
#include "vecsift/xalloc.h"

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
};

int features_pool_parse(const char *name, enum features_pool *out)
{
    static const char *names[] = { "mean", "tfidf", "sif", "bow" };
    for (int i = 0; i < 4; i++)
        if (strcmp(name, names[i]) == 0) {
            *out = (enum features_pool)i;
            return 0;
        }
    return -1;
}

const char *features_pool_name(enum features_pool p)
{
    switch (p) {
    case POOL_MEAN: return "mean";
    case POOL_TFIDF: return "tfidf";
    case POOL_SIF: return "sif";
    case POOL_BOW: return "bow";
    }
    return "?";
}

size_t features_dim(const featurizer *f) { return f->D; }
int features_sparse(const featurizer *f) { return f->p.pool == POOL_BOW; }
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

/* Per distinct word: its coefficient in the pooled (unscaled, before SIF
 * component removal) vector, and its vector row; returns how many words
 * have a vector.  Writes the token count and with-vector count to 'st'. */
static size_t word_coefs(const featurizer *f, const struct bag *b, const char **w, double *c, long *row,
                         struct features_stats *st)
{
    size_t m = 0;
    double total = 0;
    for (size_t i = 0; i < b->n; i++) {
        long r = vecset_find_hashed(f->vs, b->term[i], b->hash[i]);
        if (st) {
            st->tokens += (uint64_t)b->tf[i];
            st->with_vector += r >= 0 ? (uint64_t)b->tf[i] : 0;
        }
        if (r < 0)
            continue;
        int32_t id = vocab_find_hashed(f->words, b->term[i], b->hash[i]);
        double weight;
        switch (f->p.pool) {
        case POOL_TFIDF:
            weight = tf_weight(f, b->tf[i]) * (id >= 0 ? f->idf[id] : f->idf_unseen);
            total += weight;
            break;
        case POOL_SIF:
            weight = b->tf[i] * f->p.sif_a / (f->p.sif_a + (id >= 0 ? f->pw[id] : 0.0));
            total += b->tf[i];
            break;
        default: /* mean */
            weight = b->tf[i];
            total += b->tf[i];
            break;
        }
        w[m] = b->term[i];
        c[m] = weight;
        row[m++] = r;
    }
    for (size_t j = 0; j < m; j++)
        c[j] = total > 0 ? c[j] / total : 0;
    return m;
}

/* Pooled vector of one document into x (E), before scaling.  Returns 0 when
 * no token had a vector (x is then zero). */
/* x = sum_j c[j] * v_j over the m word rows, each element summed over j in
 * order.  The loop runs over blocks of four dimensions with the partial
 * sums in registers, instead of sweeping x once per word: the same
 * additions in the same order (0 + p == p exactly), so the result is
 * bit-identical to the plain double loop, at a fraction of the loads and
 * stores. */
static void weighted_sum(const vecset *vs, const long *row, const double *c, size_t m, size_t E, double *x)
{
    const float *stackv[64];
    const float **v = m <= 64 ? stackv : xcalloc(m, sizeof *v);
    for (size_t j = 0; j < m; j++)
        v[j] = vecset_row(vs, (size_t)row[j]);
    size_t d = 0;
    for (; d + 4 <= E; d += 4) {
        double a0 = 0, a1 = 0, a2 = 0, a3 = 0;
        for (size_t j = 0; j < m; j++) {
            const float *q = v[j] + d;
            const double cj = c[j];
            a0 += cj * (double)q[0];
            a1 += cj * (double)q[1];
            a2 += cj * (double)q[2];
            a3 += cj * (double)q[3];
        }
        x[d] = a0;
        x[d + 1] = a1;
        x[d + 2] = a2;
        x[d + 3] = a3;
    }
    for (; d < E; d++) {
        double a = 0;
        for (size_t j = 0; j < m; j++)
            a += c[j] * (double)v[j][d];
        x[d] = a;
    }
    if (v != stackv)
        free(v);
}

static int pool_doc(const featurizer *f, const char *const *toks, size_t ntok, double *x, struct features_stats *st)
{
    size_t E = f->D;
    struct bag b;
    bag_make(&b, toks, ntok, 0);
    /* One block for the three per-word arrays: this runs once per row of
     * a prediction, where malloc and free showed up in the profile. */
    size_t nw = b.n ? b.n : 1;
    double *c = xmalloc(xmul(nw, sizeof(double) + sizeof(long) + sizeof(const char *)));
    long *row = (long *)(void *)(c + nw);
    const char **w = (const char **)(void *)(row + nw);
    size_t m = word_coefs(f, &b, w, c, row, st);
    weighted_sum(f->vs, row, c, m, E, x);
    if (f->u) {
        double dot = 0;
        for (size_t d = 0; d < E; d++)
            dot += f->u[d] * x[d];
        for (size_t d = 0; d < E; d++)
            x[d] -= dot * f->u[d];
    }
    free(c);
    bag_release(&b);
    return m > 0;
}

static void scale_row(const featurizer *f, double *x)
{
    if (!f->mean)
        return;
    for (size_t d = 0; d < f->D; d++)
        x[d] = (x[d] - f->mean[d]) / f->sd[d];
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

/* First right singular vector of X (n x E, uncentred, as in Arora et al.)
 * by power iteration on X^T X from a fixed start, so results repeat. */
static double *first_component(const double *X, size_t n, size_t E)
{
    double *u = xcalloc(E, sizeof *u), *t = xcalloc(E, sizeof *t), *xu = xcalloc(n ? n : 1, sizeof *xu);
    for (size_t d = 0; d < E; d++)
        u[d] = 1.0 / sqrt((double)E) * (1.0 + 1e-3 * (double)(d % 7));
    for (int it = 0; it < 500; it++) {
        for (size_t i = 0; i < n; i++) {
            double s = 0;
            for (size_t d = 0; d < E; d++)
                s += X[i * E + d] * u[d];
            xu[i] = s;
        }
        memset(t, 0, E * sizeof *t);
        for (size_t i = 0; i < n; i++)
            for (size_t d = 0; d < E; d++)
                t[d] += X[i * E + d] * xu[i];
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
    f->words = vocab_new();
    for (size_t id = 0; id < V; id++) {
        if (p->pool == POOL_BOW && df[id] < (double)p->min_df)
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
        bow_doc(f, toks, ntok, X, st);
        return;
    }
    assert(!X->sparse && i < X->n && X->d == f->D);
    double *x = X->x + i * f->D;
    if (!pool_doc(f, toks, ntok, x, st) && st)
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

features_cache *features_cache_new(const struct features_params *p, const struct tokdocs *d, const vecset *vs)
{
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
    long *row = xcalloc(b.n ? b.n : 1, sizeof *row);
    const char **w = xcalloc(b.n ? b.n : 1, sizeof *w);
    size_t m = word_coefs(f, &b, w, coef, row, NULL);
    /* bag terms point into 'toks' (no pairs), so they stay valid */
    for (size_t j = 0; j < m; j++)
        words[j] = w[j];
    free(w);
    free(row);
    bag_release(&b);
    return m;
}

/* ---- persistence ---- */

void features_save(const featurizer *f, cJSON *obj)
{
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
        jsonv_fail(c, "pool", "is '%s', not one of mean, tfidf, sif, bow", pool);
        goto fail;
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
