/* vecset.h -- vector sets: text import, the packed store (.vecs), lookup,
 * neighbours.
 *
 * A packed store is opened with mmap in constant time: nothing is built at
 * open, lookups go through the stored hash index, and only the rows touched
 * cost memory.  The format is documented in docs/vecs-format.md.  Tokens in
 * a store are already normalised by text.h, so a token of running text is
 * looked up as it is.
 */
#ifndef VECSIFT_VECSET_H
#define VECSIFT_VECSET_H

#include <stddef.h>
#include <stdint.h>

#include "vecsift/pieces.h"

struct err;
struct text_options;
typedef struct vecset vecset;

/* ---- open and look up ---- */

/* Map 'path'.  Checks magic, version and every size against the file length
 * before touching anything else; a truncated or foreign file is an
 * ERR_INPUT error naming the file.  Returns a handle owned by the caller. */
vecset *vecset_open(const char *path, struct err *e);
void vecset_close(vecset *v); /* NULL-safe */

size_t vecset_count(const vecset *v);
size_t vecset_dim(const vecset *v);
/* Content fingerprint (dimension, tokens and every float, in order). */
uint64_t vecset_fingerprint(const vecset *v);
/* As 16 lowercase hex digits plus NUL. */
void vecset_fingerprint_hex(uint64_t fp, char out[17]);
const char *vecset_path(const vecset *v);

/* Row index of 'tok' or -1.  Index entries are bounds-checked: a damaged
 * entry reads as "not there", never as an access outside the file. */
long vecset_find(const vecset *v, const char *tok);
/* vecset_find with h = vocab_hash(tok, strlen(tok)) already computed, for
 * callers that hash each token once for several tables. */
long vecset_find_hashed(const vecset *v, const char *tok, uint64_t h);
/* Borrowed pointers into the mapping, valid until vecset_close.  For i >=
 * count: vecset_row gives NULL, vecset_norm 0, vecset_word "" (also "" for
 * a damaged string entry). */
const float *vecset_row(const vecset *v, size_t i);   /* (D) as imported */
float vecset_norm(const vecset *v, size_t i);         /* Euclidean norm of row i */
const char *vecset_word(const vecset *v, size_t i);

/* ---- pieces: vectors for words the store does not hold ---- */

/* A store learned with character n-gram pieces (pieces.h; format 1.1,
 * docs/vecs-format.md) keeps, besides its words, one row for each bucket
 * its training saw.  Stores without pieces (every packed text file) answer
 * NULL and 0 here. */
const struct pieces_params *vecset_pieces(const vecset *v); /* NULL: no pieces */
size_t vecset_piece_count(const vecset *v);                 /* P, bucket rows kept */
/* For i < P: the bucket of row i (ascending in i) and its D floats
 * (borrowed, valid until vecset_close); 0 and NULL beyond. */
uint32_t vecset_piece_bucket(const vecset *v, size_t i);
const float *vecset_piece_row(const vecset *v, size_t i);
/* Row index of 'bucket' among the piece rows, or -1 (binary search). */
long vecset_piece_find(const vecset *v, uint32_t bucket);

/* A vector for tok[0..len) (normalised, like any token) composed from its
 * pieces: the rows of the buckets of its distinct pieces that the store
 * holds, summed in double, divided by the number of its pieces (held or
 * not) and rounded to float.  A piece whose bucket training never saw
 * counts as a zero row, as an untrained bucket would be near zero in a
 * store that kept every bucket; so a word few of whose pieces are known
 * gets a short vector and weighs little once pooled (docs/vecs-format.md
 * gives the measurement behind this).  Writes D floats into the caller's
 * 'out' and returns how many rows were summed; returns 0 and leaves 'out'
 * alone when the store has no pieces or none of tok's.  It does not look
 * at the whole-word rows: callers try vecset_find first.  Reads only the
 * mapping, so any number of threads may call it at once. */
size_t vecset_compose(const vecset *v, const char *tok, size_t len, float *out);

/* The piece rows as text: a first line "P D MIN MAX K", then per row its
 * bucket id and D numbers (shortest form, as vecset_export_text).  An
 * ERR_INPUT error when the store has no pieces. */
int vecset_export_pieces(const vecset *v, const char *out, struct err *e);

/* ---- writing ---- */

struct vecset_pack_stats {
    size_t lines;       /* lines read (header line included) */
    size_t rows;        /* rows written */
    size_t merged;      /* entries dropped because their normalised token came earlier */
    size_t unusable;    /* entries that normalise to no token or to several */
};

/* Import a text vector file (token then D numbers per line; spaces or tabs;
 * optional first line "COUNT DIM"; CRLF tolerated) into a packed store at
 * 'out' (written through ofile: all or nothing).  Tokens are normalised
 * with 'to'.  'threads' >= 1.  Returns 0 or -1 with 'e' set to
 * "FILE:LINE: ...". */
int vecset_pack_text(const char *in, const char *out, const struct text_options *to, int threads,
                     struct vecset_pack_stats *st, struct err *e);

/* Write a packed store from memory: 'words' (n distinct normalised tokens)
 * and 'rows' (n x dim, row-major).  Used by vector learning. */
int vecset_write(const char *out, const char *const *words, const float *rows, size_t n, size_t dim,
                 struct err *e);

/* Pieces for vecset_write_pieces: 'count' bucket rows ('rows', count x
 * dim) for strictly ascending bucket ids below p.buckets. */
struct vecset_pieces {
    struct pieces_params p;
    size_t count;
    const uint32_t *bucket;     /* (count) */
    const float *rows;          /* (count, dim) */
};

/* vecset_write with pieces (format 1.1); 'pieces' NULL is vecset_write.
 * The whole-word rows are the caller's (learning writes each word's
 * composed vector there).  The fingerprint then also covers the pieces. */
int vecset_write_pieces(const char *out, const char *const *words, const float *rows, size_t n, size_t dim,
                        const struct vecset_pieces *pieces, struct err *e);

/* Write the text form ("COUNT DIM" first line, then token and numbers).
 * Each number is the shortest of %.6g .. %.9g that reads back as the same
 * float, so packing the export again gives the same fingerprint, and an
 * input written in shortest form comes back as it was. */
int vecset_export_text(const vecset *v, const char *out, struct err *e);

/* A packed store written row by row (vector import and learning use it):
 * rows go straight to the output file; tokens, norms and the index are kept
 * in memory (about 30 bytes a row plus the token bytes) and written at
 * commit.  'out' must be a file, not "-". */
typedef struct vecset_writer vecset_writer;
vecset_writer *vecset_writer_new(const char *out, size_t dim, struct err *e);
/* Add token tok[0..len) (already normalised, no NUL inside) with its 'dim'
 * floats.  Returns 1 when added, 0 when the token is already there (the row
 * is dropped: first wins). */
int vecset_writer_add(vecset_writer *w, const char *tok, size_t len, const float *row);
/* vecset_writer_add with the work that does not depend on earlier rows
 * done by the caller (an importer does it on several threads): 'hash' must
 * be vocab_hash(tok, len) and 'norm' vecset_row_norm(row, dim). */
int vecset_writer_add_prepared(vecset_writer *w, const char *tok, size_t len, uint64_t hash, float norm,
                               const float *row);
/* The Euclidean norm stored for a row: summed in double, rounded to float. */
float vecset_row_norm(const float *row, size_t dim);
size_t vecset_writer_count(const vecset_writer *w);
/* Finish the file and move it into place.  Frees 'w'.  Returns 0 or -1
 * with 'e' set (ERR_IO), leaving no output. */
int vecset_writer_commit(vecset_writer *w, struct err *e);
/* Drop everything written; no output file remains.  NULL-safe. */
void vecset_writer_abort(vecset_writer *w);

/* Recompute the fingerprint over every row (a full scan, unlike open) and
 * compare it with the header's, checking every row as vecset_check_row does.
 * Returns 0, or -1 with 'e' set (ERR_INPUT) when the content does not match,
 * a row is damaged or a string entry is damaged. */
int vecset_verify(const vecset *v, struct err *e);

/* Open reads no row (it stays as fast for a million rows as for ten), so
 * the code that takes a row as a query checks it first: every value finite,
 * and the stored norm the row's own (relative 1e-5).  Returns 0, or -1 with
 * 'e' set (ERR_INPUT, "damaged packed store: ...", naming word and row). */
int vecset_check_row(const vecset *v, size_t i, struct err *e);

/* ---- neighbours ---- */

struct vecset_hit {
    size_t row;
    double cos;
};

/* The k rows most cosine-similar to 'query' (D floats), best first, ties by
 * row; rows in 'exclude' (nexclude of them) are skipped; zero rows never
 * match.  Exact scan over 'threads' threads; the result does not depend on
 * the thread count.  'hits' must hold k entries; returns how many were
 * filled.  The scan reads every row, so it also finds damage (a row holding
 * NaN or an infinity, a stored norm that is not finite or positive, zero for
 * a non-zero row, or too small for its row): then it returns -1 with 'e' set
 * (ERR_INPUT) naming the first damaged row, the same for any thread count. */
long vecset_nearest(const vecset *v, const float *query, size_t k, const size_t *exclude, size_t nexclude,
                    int threads, struct vecset_hit *hits, struct err *e);

#endif
