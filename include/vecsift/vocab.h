/* vocab.h -- token interning: string <-> dense id, with counts.
 *
 * An open-addressing hash table over token strings.  Ids are dense and given
 * in order of first appearance.  Also a compact store for tokenised
 * documents (struct tokdocs).  It does not tokenise; see text.h.
 */
#ifndef VECSIFT_VOCAB_H
#define VECSIFT_VOCAB_H

#include <stddef.h>
#include <stdint.h>

typedef struct vocab vocab;

vocab *vocab_new(void);
void vocab_free(vocab *v); /* NULL-safe */

/* Id of 'tok', adding it when new (the string is copied).  Increments its
 * count by one. */
int32_t vocab_add(vocab *v, const char *tok);
/* Id of 'tok' or -1.  Does not change counts. */
int32_t vocab_find(const vocab *v, const char *tok);
/* vocab_find with h = vocab_hash(tok, strlen(tok)) already computed. */
int32_t vocab_find_hashed(const vocab *v, const char *tok, uint64_t h);
size_t vocab_size(const vocab *v);
/* Borrowed; valid until vocab_free. */
const char *vocab_word(const vocab *v, int32_t id);
uint64_t vocab_count(const vocab *v, int32_t id);
/* Total of all counts. */
uint64_t vocab_total(const vocab *v);

/* 64-bit FNV-1a of a string: the hash this module uses; exported for
 * modules that need the same hash (vecset's index). */
uint64_t vocab_hash(const char *s, size_t len);

/* Tokenised documents: tokens of document i are tok[off[i] .. off[i+1]). */
struct tokdocs {
    size_t n;        /* documents */
    size_t *off;     /* (n+1) */
    int32_t *tok;    /* (off[n]) ids into 'v' */
    vocab *v;        /* owned */
    size_t cap_docs, cap_tok;
};
#define TOKDOCS_INIT { 0, NULL, NULL, NULL, 0, 0 }

/* Append a document given as token strings (interned into d->v, which is
 * created on first use). */
void tokdocs_add(struct tokdocs *d, const char *const *toks, size_t n);
void tokdocs_release(struct tokdocs *d);

#endif
