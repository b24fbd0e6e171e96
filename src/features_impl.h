/* features_impl.h -- what features.c (fitting and pooling), features_cache.c
 * (the caches) and features_file.c (the model-file form) share: the
 * featurizer's fields and the steps of pooling one document.  Private to
 * those three files; the interface is vecsift/features.h. */
#ifndef VECSIFT_FEATURES_IMPL_H
#define VECSIFT_FEATURES_IMPL_H

#include <stddef.h>
#include <stdint.h>

#include "vecsift/features.h"

struct cJSON;
struct jsonv_ctx;
typedef struct vocab vocab;

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


/* ---- one document, the steps features.c implements ---- */

/* Distinct terms of a document with their counts, in order of first
 * appearance, so every sum over them runs in one fixed order.  Terms are the
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

/* What pooling needs to know of one distinct term of a document. */
struct term_facts {
    double tf;   /* occurrences in the document */
    long row;    /* its vector's row, or -1 when it has none */
    int32_t id;  /* its id among the training words, or -1 */
};

/* A term with a vector composed from pieces (features_look_up_pieces). */
#define PIECE_ROW(k) (-2 - (long)(k))

/* The bag of document toks[0..ntok) (word pairs too when 'pairs');
 * release with features_bag_release. */
void features_bag_make(struct bag *b, const char *const *toks, size_t ntok, int pairs);

void features_bag_release(struct bag *b);

/* The token strings of document r of 'd' into 'buf' (grown as needed). */
const char **features_doc_tokens(const struct tokdocs *d, size_t r, const char **buf, size_t *cap, size_t *n);

/* The facts of a term whose vocab_hash is 'h' ('tf' is left alone).  A
 * term the store has no row for, in a store with pieces, gets a vector
 * composed from its pieces (vecset_compose) into 'slab' ((k, E), grown,
 * k counted in *nslab) and row PIECE_ROW(k); slab NULL leaves it at -1. */
void features_look_up_pieces(const featurizer *f, const char *term, uint64_t h, struct term_facts *t, float **slab,
                             size_t *nslab, size_t *cap);

/* Pooled vector of one document into x (E), before scaling.  Returns 0 when
 * no token had a vector (x is then zero). */
int features_pool_doc(const featurizer *f, const char *const *toks, size_t ntok, double *x, struct features_stats *st);

/* x = sum_j c[j] v_j, then for sif the component removed: the pooled row
 * before scaling. */
void features_pool_rows(const featurizer *f, const long *row, const float *composed, const double *c, size_t m,
                        double *x);

/* Standardise a pooled row with the fitted scaler (no-op without one). */
void features_scale_row(const featurizer *f, double *x);

/* Per distinct term t[0..n) (in order of first appearance): its
 * coefficient in the pooled (unscaled, before SIF component removal)
 * vector and its vector row, for the terms that have a vector; keep[j] is
 * the index in 't' of the j-th such term.  Returns how many have a vector.
 * Adds the token count and with-vector count to 'st'. */
size_t features_word_coefs(const featurizer *f, const struct term_facts *t, size_t n, size_t *keep, double *c,
                           long *row, struct features_stats *st);


#endif
