/* embed.h -- learning word vectors from unlabelled text: skip-gram with
 * negative sampling.
 *
 * Mikolov, Sutskever, Chen, Corrado and Dean (2013), "Distributed
 * Representations of Words and Phrases and their Compositionality" (NIPS).
 * Two steps: read a corpus into token ids (embed_corpus_read: the same
 * tokeniser as classification, pruning by --min-freq, words ordered by
 * descending frequency), then train (embed_train) into a (V, D) slab of
 * float32 input vectors that the caller writes with vecset_write.
 * It does not write files and never prints; progress goes to a callback.
 */
#ifndef VECSIFT_EMBED_H
#define VECSIFT_EMBED_H

#include <stddef.h>
#include <stdint.h>

#include "vecsift/pieces.h"

struct err;
struct text_options;
struct csv_options;
typedef struct vecset vecset;

#define EMBED_MAX_DIM 10000

struct embed_params {
    size_t dim;             /* D, 1 .. EMBED_MAX_DIM */
    int window;             /* largest distance to a context word, >= 1 */
    int negatives;          /* noise words drawn per (word, context) pair, >= 1 */
    int epochs;             /* passes over the corpus, >= 1 */
    double subsample;       /* threshold t of the paper; 0 keeps every word */
    double learning_rate;   /* starting rate, decays linearly to 1e-4 of it */
    int threads;            /* >= 1; 1 gives byte-identical runs for a seed */
    uint64_t seed;
};
#define EMBED_PARAMS_INIT { 100, 5, 5, 5, 1e-4, 0.025, 1, 1 }

/* Check every field; returns 0 or -1 with 'e' set (ERR_INPUT) naming the
 * option ("--dimensions must be 1..10000, not 0"). */
int embed_params_check(const struct embed_params *p, struct err *e);

/* A corpus as training reads it: documents of word ids.  Words are ordered
 * by descending count, ties by token bytes (strcmp), so id 0 is the most
 * frequent word and the output order is deterministic. */
struct embed_corpus {
    size_t nwords;          /* V */
    char **words;           /* (V) tokens, owned; NULL when built by hand from ids */
    uint64_t *count;        /* (V) occurrences in the corpus */
    size_t ndocs;
    size_t *off;            /* (ndocs+1): tokens of document i are tok[off[i] .. off[i+1]) */
    int32_t *tok;           /* (off[ndocs]) ids in [0, V): pruned words are already removed */
    uint64_t tokens_read;   /* tokens before pruning */
    size_t lines;           /* documents read (lines or CSV rows), empty ones included */
};
#define EMBED_CORPUS_INIT { 0, NULL, NULL, 0, NULL, NULL, 0, 0 }

void embed_corpus_release(struct embed_corpus *c);

/* Where a corpus comes from.  Plain text is one document a line; CSV (when
 * 'ncols' > 0 or 'path' ends in ".csv") takes the named columns of each row,
 * joined by a space; with no column named, the only column or else the one
 * called "text".  "-" reads standard input. */
struct embed_source {
    const char *path;
    const char *const *cols;    /* (ncols) column names, for CSV */
    size_t ncols;
    const struct text_options *text;
    const struct csv_options *csv;  /* encoding, replacement; NULL for the defaults */
    uint64_t min_freq;          /* words seen fewer times are dropped, >= 1 */
};

/* Read and tokenise 'src' into 'c' (which must be EMBED_CORPUS_INIT).
 * Errors (ERR_INPUT, "FILE:LINE: ..."): invalid UTF-8, CSV errors, a missing
 * column, no token at all, no word reaching min_freq; ERR_IO when the file
 * cannot be read.  On failure 'c' is released. */
int embed_corpus_read(struct embed_corpus *c, const struct embed_source *src, struct err *e);

/* Build 'c' from documents already given as token strings: docs[i] holds
 * lens[i] tokens.  Prunes and orders as embed_corpus_read does; 'name' is
 * used in error messages.  Returns 0 or -1 with 'e' set. */
int embed_corpus_from_tokens(struct embed_corpus *c, const char *const *const *docs,
                             const size_t *lens, size_t ndocs, uint64_t min_freq, const char *name,
                             struct err *e);

/* Progress: called from the first training thread about every 10,000 words
 * with the words processed so far (all threads) and the total to process
 * (epochs x corpus words).  Must be quick; may print. */
typedef void (*embed_progress_fn)(void *ud, uint64_t done, uint64_t total);

/* Train skip-gram with negative sampling on 'c' and leave the input vectors
 * in 'vec' ((V, D) row-major, caller owned).  Rows with known[i] != 0 start
 * from the values already in 'vec' (continued training); the others, or all
 * when 'known' is NULL, start uniform in [-0.5/D, 0.5/D).  'progress' may be
 * NULL.  Returns 0, or -1 with 'e' set for bad parameters or an empty corpus. */
int embed_train(const struct embed_corpus *c, const struct embed_params *p, float *vec,
                const unsigned char *known, embed_progress_fn progress, void *ud,
                struct err *e);

/* Copy into 'vec' ((V, D)) the rows of 'from' for words of 'c' found there
 * and mark them in 'known' ((V)).  Returns how many were found, or -1 with
 * 'e' set when the dimensions differ. */
long embed_start_from(const struct embed_corpus *c, const vecset *from, size_t dim, float *vec,
                      unsigned char *known, struct err *e);

/* ---- learning with pieces ---- */

/* Bojanowski, Grave, Joulin and Mikolov (2017), "Enriching Word Vectors with
 * Subword Information": a word's input vector is the mean of its own row
 * and the rows of its character n-gram pieces (pieces.h), so words that
 * share pieces share what is learned, and a word never seen gets a vector
 * from its pieces alone (vecset_compose).  Only the buckets the corpus's
 * words reach get a row (P of them, in ascending bucket order), so memory
 * follows the vocabulary, not the bucket count. */
struct embed_pieces {
    struct pieces_params p;
    size_t nrows;           /* P */
    uint32_t *bucket;       /* (P) bucket of each piece row, ascending */
    size_t *off;            /* (V+1): word i's piece rows are row[off[i] .. off[i+1]) */
    uint32_t *row;          /* piece row indices in [0, P), each word's distinct, ascending */
};
#define EMBED_PIECES_INIT { PIECES_PARAMS_INIT, 0, NULL, NULL, NULL }

/* The pieces of every word of 'c' under 'p' (checked by the caller). */
void embed_pieces_build(struct embed_pieces *pc, const struct embed_corpus *c, const struct pieces_params *p);
void embed_pieces_release(struct embed_pieces *pc);

/* embed_train with pieces: 'pvec' ((P, D), caller owned) gets the piece
 * rows, and on return each row of 'vec' holds its word's vector, the mean
 * of its own row and its pieces' rows.  Rows marked known start from
 * 'vec' as in embed_train; piece rows always start at random. */
int embed_train_pieces(const struct embed_corpus *c, const struct embed_params *p, const struct embed_pieces *pc,
                       float *vec, float *pvec, const unsigned char *known, embed_progress_fn progress, void *ud,
                       struct err *e);

/* ---- pieces, exposed for tests ---- */

/* Probability of keeping one occurrence of a word seen 'count' times among
 * 'total' tokens, threshold 't': min(1, sqrt(t/f) + t/f) with
 * f = count/total (the paper's sqrt(t/f) plus the t/f term of the authors'
 * released code; embed.c says why).  1 when t is 0. */
double embed_keep_prob(uint64_t count, uint64_t total, double t);

/* 1 / (1 + e^-x) as training computes it: plain float arithmetic, the same
 * bits on every CPU (embed.c says how); within a few ulp of the true value. */
float embed_sigmoid(float x);

/* The noise distribution: P(w) proportional to count(w)^power (the paper
 * uses 3/4), sampled in O(1) with Walker's alias method. */
typedef struct embed_noise embed_noise;
embed_noise *embed_noise_new(const uint64_t *count, size_t n, double power);
void embed_noise_free(embed_noise *q); /* NULL-safe */
/* A word id in [0, n) drawn from one 64-bit random value 'bits'. */
int32_t embed_noise_draw(const embed_noise *q, uint64_t bits);

#endif
