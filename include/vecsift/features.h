/* features.h -- texts to rows of numbers: pooled word vectors or a sparse
 * TF-IDF bag of words, then standardisation.
 *
 * A featurizer is FITTED on training rows only (idf table, word
 * probabilities, SIF component, scaler) and then applied to any rows, so
 * cross-validation can fit one per fold without leaking held-out rows.  It
 * works on tokens (text.h has made them); it does not read files.
 *
 * Pooling, for a text with tokens t (occurrences) that have a vector v_t:
 *   mean   x = (1/n) sum_t v_t
 *   tfidf  x = sum_w tfidf(w) v_w / sum_w tfidf(w), over distinct words w,
 *          tfidf(w) = tf(w) * idf(w), idf(w) = ln((1+N)/(1+df(w))) + 1
 *          (smoothed idf; Manning, Raghavan and Schuetze, Introduction to
 *          Information Retrieval, 2008, ch. 6.2), tf optionally 1 + ln tf
 *   sif    x = (1/n) sum_t a/(a + p(t)) v_t, then x -= u (u . x) with u the
 *          first principal component of the training rows' x (Arora, Liang
 *          and Ma 2017, "A Simple but Tough-to-Beat Baseline for Sentence
 *          Embeddings", ICLR), p(t) the word's relative frequency in the
 *          training rows
 *   bow    sparse tf-idf over the words of at least min_df (2) training
 *          rows (word pairs too when 'bigrams' is set), each row scaled to
 *          unit length (no vectors); TfidfVectorizer(min_df=2) on our
 *          tokens
 *   bow+mean, bow+tfidf, bow+sif
 *          the combined route: the bow row and the pooled row side by side
 *          in one sparse row, columns [0, V) the bow block and [V, V+E)
 *          the pooled block, each block multiplied by its weight so that
 *          its mean squared row length over the training rows is E:
 *            bow     w_b = sqrt(E)        (every bow row has length 1)
 *            pooled  w_p = sqrt(E / mean_i ||z_i||^2), z_i the training
 *                    rows' pooled rows after standardisation (w_p = 1 when
 *                    every column varies: the block is then exactly what
 *                    the pooled route alone gives the classifier)
 *          Why equal energy: a standardised E-column block has squared
 *          length about E (300 against the bow row's 1), so an
 *          L2-penalised classifier, which charges every weight alike, would
 *          reach its fit almost only through the pooled block; with equal
 *          energy the data decide which block earns weight.  Why E and not
 *          1: the pooled block keeps the scale at which --C was tuned for
 *          pooling (C = 1 means the same for it as in the pooled route);
 *          scaling both blocks to 1 is the same as dividing C by E, which
 *          cost 2 to 4.5 points of macro-F1 on tests/bench/bench_accuracy's
 *          spam and sotu sets (0.928 against 0.948, 0.592 against 0.637).
 * Dense features are then standardised: (x - mean) / sd per column, fitted
 * on the training rows (sd 0 -> 1).  A text with no token that has a vector
 * becomes the zero vector before scaling, and is counted.
 */
#ifndef VECSIFT_FEATURES_H
#define VECSIFT_FEATURES_H

#include <stddef.h>
#include <stdint.h>

struct err;
struct fmat;
struct tokdocs;
struct vecset;
struct cJSON;
struct jsonv_ctx;

enum features_pool { POOL_MEAN = 0, POOL_TFIDF, POOL_SIF, POOL_BOW, POOL_BOW_MEAN, POOL_BOW_TFIDF, POOL_BOW_SIF };
#define FEATURES_POOLS 7
/* Every pooling name, as --pool and the model file spell them. */
#define FEATURES_POOL_NAMES "mean, tfidf, sif, bow, bow+mean, bow+tfidf, bow+sif"

struct features_params {
    enum features_pool pool;
    int sublinear_tf;   /* tf -> 1 + ln(tf) in tfidf and bow */
    double sif_a;       /* SIF's a; the paper recommends 1e-3 */
    int bigrams;        /* bow: add word pairs (default 0) */
    size_t min_df;      /* bow: keep terms in at least this many training rows
                         * (default 2; 1 when no term would be left) */
    int scale;          /* standardise dense features */
};
/* bow's defaults (unigrams seen in at least 2 training rows, raw tf) won
 * on every dataset of tests/bench/bench_accuracy.py: docs/accuracy.md. */
#define FEATURES_PARAMS_INIT { POOL_TFIDF, 0, 1e-3, 0, 2, 1 }

/* "mean" "tfidf" "sif" "bow" "bow+mean" "bow+tfidf" "bow+sif" <-> enum.
 * Returns 0, or -1 for an unknown name. */
int features_pool_parse(const char *name, enum features_pool *out);
const char *features_pool_name(enum features_pool p);
/* Whether 'p' is a combined route (bow+...), and the pooling of its dense
 * block (the pooling itself for the others; POOL_BOW for bow). */
int features_pool_combined(enum features_pool p);
enum features_pool features_pool_dense(enum features_pool p);
/* Whether 'p' needs a vector set (every pooling but bow). */
int features_pool_needs_vectors(enum features_pool p);

typedef struct featurizer featurizer;

/* What a transform saw. */
struct features_stats {
    uint64_t tokens;        /* token occurrences */
    uint64_t with_vector;   /* of which had a vector (pooling, combined) or a column (bow) */
    size_t empty_rows;      /* rows that became the zero vector */
};

/* Fit on documents rows[0..n) of 'd'.  'vs' is required for every pooling
 * but bow and ignored for bow; the featurizer borrows it (keep it open).  Returns a
 * featurizer owned by the caller (features_free), or NULL with 'e' set. */
featurizer *features_fit(const struct features_params *p, const struct tokdocs *d, const size_t *rows, size_t n,
                         const struct vecset *vs, struct err *e);
void features_free(featurizer *f); /* NULL-safe */

/* Output width D, and whether the output is sparse (bow and combined). */
size_t features_dim(const featurizer *f);
int features_sparse(const featurizer *f);
const struct features_params *features_params(const featurizer *f);

/* Rows rows[0..n) of 'd' into 'X' (released and reallocated: n x D).
 * 'st' may be NULL; counts are added to it.  Thread-safe on a shared f. */
void features_transform(const featurizer *f, const struct tokdocs *d, const size_t *rows, size_t n, struct fmat *X,
                        struct features_stats *st);

/* Work done once for many fits over subsets of the same documents
 * (cross-validation): for every pooling but bow, each document's distinct
 * tokens with their counts (fits then count document frequencies by
 * token id, not by hashing strings); for mean pooling also every pooled
 * row, since it reads nothing fitted (each row's vector depends on that
 * row alone).  Nothing fitted is cached: idf, word probabilities, SIF
 * component and scaler are still fitted per fit, on its rows only.  For
 * bow the cache is empty and changes nothing.  Owns its memory; 'd' and
 * 'vs' are not kept.  Read-only once made: threads may share it. */
typedef struct features_cache features_cache;
features_cache *features_cache_new(const struct features_params *p, const struct tokdocs *d,
                                   const struct vecset *vs);
void features_cache_free(features_cache *c); /* NULL-safe */

/* features_fit followed by features_transform of the same rows, with
 * every training row pooled once instead of twice; 'cache' (may be NULL)
 * supplies pooled rows made by features_cache_new from the same 'd' and
 * 'vs'.  The featurizer, X and the counts added to 'st' are bit-identical
 * to the two calls'.  Returns NULL with 'e' set as features_fit does. */
featurizer *features_fit_transform(const struct features_params *p, const struct tokdocs *d, const size_t *rows,
                                   size_t n, const struct vecset *vs, const features_cache *cache, struct fmat *X,
                                   struct features_stats *st, struct err *e);

/* features_transform with pooled rows from 'cache' (made from the same
 * 'd' and vector set; may be NULL): the same X and counts, bit for bit. */
void features_transform_cached(const featurizer *f, const features_cache *cache, const struct tokdocs *d,
                               const size_t *rows, size_t n, struct fmat *X, struct features_stats *st);

/* One text given as token strings into row 'i' of a matrix made with
 * features_alloc (for streaming prediction).  Thread-safe. */
void features_alloc(const featurizer *f, size_t n, struct fmat *X);
void features_transform_tokens(const featurizer *f, const char *const *toks, size_t ntok, struct fmat *X, size_t i,
                               struct features_stats *st);

/* A memo of each word's vector row and training id for one thread's
 * stream of texts (streaming prediction): a word met again is found in one
 * small table instead of the packed store and the training vocabulary.  It
 * starts afresh once it holds about 65,000 words, so its memory does not
 * grow with the number of rows.  Owned by the caller; NULL-safe free. */
typedef struct features_memo features_memo;
features_memo *features_memo_new(const featurizer *f); /* borrows f: keep it alive */
void features_memo_free(features_memo *mm);

/* features_transform_tokens() through the memo 'mm' (made for 'f'): the
 * same numbers, bit for bit.  lens[q] is strlen(toks[q]) (NULL: measured
 * here).  One memo per thread: a memo is not thread-safe, f still is. */
void features_transform_memo(const featurizer *f, features_memo *mm, const char *const *toks, const size_t *lens,
                             size_t ntok, struct fmat *X, size_t i, struct features_stats *st);

/* The word-level decomposition used to explain a prediction (mean, tfidf,
 * sif only): the pooled, UNSCALED vector is sum_j c_j v_{w_j} (+ for sif the
 * component removal, which is linear too).  For each distinct token with a
 * vector, writes its coefficient c_j; returns the number of tokens written
 * into words/coef (borrowed pointers into 'toks'). */
size_t features_word_weights(const featurizer *f, const char *const *toks, size_t ntok, const char **words,
                             double *coef);
/* The scaler: x_scaled = (x - mean) / sd; NULL pointers when not scaled. */
void features_scaler(const featurizer *f, const double **mean, const double **sd);
/* The SIF component u (D) or NULL. */
const double *features_sif_component(const featurizer *f);
/* The vector set the featurizer uses (NULL for bow). */
const struct vecset *features_vectors(const featurizer *f);

/* bow: the term of output column j ("word" or "word word"); combined: the
 * same for the bow block's columns, NULL for the pooled block's. */
const char *features_term(const featurizer *f, size_t j);

/* The two blocks of a combined route: the bow featurizer (columns [0, Vb)),
 * the pooled one (columns [Vb, D)), and the weights their values are
 * multiplied by: w[0] the bow block's, w[1] the pooled block's (after its
 * standardisation).  Borrowed.  Returns 0, or -1 (and sets nothing) when
 * 'f' is not combined. */
int features_blocks(const featurizer *f, const featurizer **bow, const featurizer **pooled, double w[2]);

/* Persistence as JSON fields of 'obj'; load validates everything and needs
 * the same vector set (the caller checks its fingerprint). */
void features_save(const featurizer *f, struct cJSON *obj);
featurizer *features_load(const struct jsonv_ctx *c, const struct cJSON *obj, const struct vecset *vs);

#endif
