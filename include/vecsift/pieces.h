/* pieces.h -- character n-gram pieces of a word, hashed into buckets.
 *
 * Bojanowski, Grave, Joulin and Mikolov (2017), "Enriching Word Vectors with
 * Subword Information" (TACL 5), section 3.2: a word w is written with
 * boundary marks, "<" w ">", and its pieces are the distinct character
 * n-grams of that string for n from 'min_len' to 'max_len' (the paper uses
 * 3 to 6), the whole bounded word excepted (it is the word's own row).  For
 * "where" and n = 3 that is <wh, whe, her, ere, re>.  A piece is mapped to
 * one of 'buckets' rows by the FNV-1a hash (32 bits) of its UTF-8 bytes,
 * modulo 'buckets' (the paper: FNV-1a, K = 2 million).  Characters are
 * Unicode code points, not bytes.
 *
 * Used by vector learning (embed.c) and by the packed store (vecset.c),
 * which composes a vector for a word it does not hold.  Pure functions:
 * no allocation that outlives a call, safe on any number of threads.
 */
#ifndef VECSIFT_PIECES_H
#define VECSIFT_PIECES_H

#include <stddef.h>
#include <stdint.h>

#define PIECES_MIN_LEN 3           /* default shortest piece, in characters */
#define PIECES_MAX_LEN 6           /* default longest piece */
#define PIECES_LONGEST 16          /* the largest max_len accepted */
#define PIECES_BUCKETS 2000000u    /* default bucket count (the paper's K) */

struct pieces_params {
    unsigned min_len, max_len;     /* 1 <= min_len <= max_len <= PIECES_LONGEST */
    uint32_t buckets;              /* K >= 1 */
};
#define PIECES_PARAMS_INIT { PIECES_MIN_LEN, PIECES_MAX_LEN, PIECES_BUCKETS }

/* FNV-1a, 32 bits (Fowler, Noll, Vo): start 2166136261, for each byte xor
 * it in, then multiply by 16777619 modulo 2^32. */
uint32_t pieces_fnv1a32(const char *s, size_t len);

/* Call fn(ud, piece, len) for each distinct piece of tok[0..len) (UTF-8,
 * already normalised), in order of starting character, shorter first at
 * each start; a lone boundary mark ("<" or ">", for min_len 1) is not a
 * piece.  Returns how many pieces there were. */
size_t pieces_each(const char *tok, size_t len, unsigned min_len, unsigned max_len,
                   void (*fn)(void *ud, const char *piece, size_t len), void *ud);

/* The bucket of each distinct piece of tok[0..len), in pieces_each's order,
 * into ids[0..cap).  Returns the number of pieces, which may exceed cap
 * (then only the first cap are written).  Two pieces may share a bucket. */
size_t pieces_buckets(const char *tok, size_t len, const struct pieces_params *p, uint32_t *ids, size_t cap);

#endif
