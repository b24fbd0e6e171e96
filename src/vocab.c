/* vocab.c -- token interning: an open-addressing hash table from token string
 * to dense id, with counts, and the tokenised-document store (struct tokdocs).
 * It does not tokenise; see text.c.
 *
 * Layout: 'slots' is a power-of-two array probed linearly.  Each slot keeps
 * the full 64-bit hash beside the id, so a probe compares strings only when
 * the hashes agree (almost never for a different token).  The table doubles
 * when it would pass a load of 0.6 (within the 0.5-0.7 band where linear
 * probing stays short; common practice).  Token strings live in an arena of
 * fixed blocks that are never moved, so vocab_word() pointers stay valid.
 */
#include "vecsift/vocab.h"

#include <assert.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/xalloc.h"

struct slot {
    uint64_t hash;
    int32_t id; /* -1: empty */
};

/* One arena block; strings are packed back to back. */
struct block {
    struct block *next;
    size_t used, cap;
    char data[];
};

struct vocab {
    struct slot *slots;
    size_t mask;        /* number of slots - 1 */
    char **words;       /* (n) borrowed from the arena */
    uint64_t *counts;   /* (n) */
    size_t n, cap;
    uint64_t total;
    struct block *arena;
};

#define ARENA_BLOCK 65536

/* ---- hashing and the arena ---- */

uint64_t vocab_hash(const char *s, size_t len)
{
    /* FNV-1a, 64-bit: offset basis and prime from Fowler, Noll and Vo,
     * "The FNV Non-Cryptographic Hash Algorithm" (IETF draft
     * draft-eastlake-fnv). */
    uint64_t h = 0xcbf29ce484222325ULL;
    for (size_t i = 0; i < len; i++) {
        h ^= (unsigned char)s[i];
        h *= 0x100000001b3ULL;
    }
    return h;
}

static char *arena_copy(vocab *v, const char *s, size_t len)
{
    struct block *b = v->arena;
    if (!b || b->cap - b->used < len + 1) {
        size_t cap = len + 1 > ARENA_BLOCK ? len + 1 : ARENA_BLOCK;
        b = xmalloc(sizeof *b + cap);
        b->next = v->arena;
        b->used = 0;
        b->cap = cap;
        v->arena = b;
    }
    char *d = b->data + b->used;
    memcpy(d, s, len);
    d[len] = '\0';
    b->used += len + 1;
    return d;
}

/* ---- the table ---- */

static void slots_init(vocab *v, size_t nslots)
{
    v->slots = xcalloc(nslots, sizeof *v->slots);
    for (size_t i = 0; i < nslots; i++)
        v->slots[i].id = -1;
    v->mask = nslots - 1;
}

vocab *vocab_new(void)
{
    vocab *v = xcalloc(1, sizeof *v);
    slots_init(v, 64);
    return v;
}

void vocab_free(vocab *v)
{
    if (!v)
        return;
    struct block *b = v->arena;
    while (b) {
        struct block *next = b->next;
        free(b);
        b = next;
    }
    free(v->slots);
    free(v->words);
    free(v->counts);
    free(v);
}

/* Slot holding 'tok' (hash 'h'), or the empty slot where it would go. */
static struct slot *probe(const vocab *v, const char *tok, uint64_t h)
{
    size_t i = (size_t)h & v->mask;
    for (;;) {
        struct slot *s = &v->slots[i];
        if (s->id < 0 || (s->hash == h && strcmp(v->words[s->id], tok) == 0))
            return s;
        i = (i + 1) & v->mask;
    }
}

static void grow(vocab *v)
{
    struct slot *old = v->slots;
    size_t nold = v->mask + 1;
    slots_init(v, xmul(nold, 2));
    for (size_t i = 0; i < nold; i++) {
        if (old[i].id < 0)
            continue;
        size_t j = (size_t)old[i].hash & v->mask;
        while (v->slots[j].id >= 0)
            j = (j + 1) & v->mask;
        v->slots[j] = old[i];
    }
    free(old);
}

int32_t vocab_add(vocab *v, const char *tok)
{
    size_t len = strlen(tok);
    uint64_t h = vocab_hash(tok, len);
    struct slot *s = probe(v, tok, h);
    if (s->id < 0) {
        /* Ids are int32_t: refuse to wrap (a vocabulary of 2^31 tokens would
         * need far more memory than this tool is meant for). */
        assert(v->n < INT32_MAX);
        if (v->n + 1 > (v->mask + 1) * 6 / 10) {
            grow(v);
            s = probe(v, tok, h);
        }
        if (v->n == v->cap) {
            size_t cap = v->cap;
            v->words = xgrow(v->words, &cap, v->n + 1, sizeof *v->words);
            v->counts = xreallocarray(v->counts, cap, sizeof *v->counts);
            v->cap = cap;
        }
        v->words[v->n] = arena_copy(v, tok, len);
        v->counts[v->n] = 0;
        s->hash = h;
        s->id = (int32_t)v->n++;
    }
    v->counts[s->id]++;
    v->total++;
    return s->id;
}

int32_t vocab_find(const vocab *v, const char *tok)
{
    return probe(v, tok, vocab_hash(tok, strlen(tok)))->id;
}

int32_t vocab_find_hashed(const vocab *v, const char *tok, uint64_t h)
{
    return probe(v, tok, h)->id;
}

size_t vocab_size(const vocab *v)
{
    return v->n;
}

const char *vocab_word(const vocab *v, int32_t id)
{
    assert(id >= 0 && (size_t)id < v->n);
    return v->words[id];
}

uint64_t vocab_count(const vocab *v, int32_t id)
{
    assert(id >= 0 && (size_t)id < v->n);
    return v->counts[id];
}

uint64_t vocab_total(const vocab *v)
{
    return v->total;
}

/* ---- tokenised documents ---- */

void tokdocs_add(struct tokdocs *d, const char *const *toks, size_t n)
{
    if (!d->v)
        d->v = vocab_new();
    if (!d->off) {
        d->off = xgrow(NULL, &d->cap_docs, 2, sizeof *d->off);
        d->off[0] = 0;
    }
    d->off = xgrow(d->off, &d->cap_docs, d->n + 2, sizeof *d->off);
    size_t start = d->off[d->n];
    d->tok = xgrow(d->tok, &d->cap_tok, start + n, sizeof *d->tok);
    for (size_t i = 0; i < n; i++)
        d->tok[start + i] = vocab_add(d->v, toks[i]);
    d->off[++d->n] = start + n;
}

void tokdocs_release(struct tokdocs *d)
{
    if (!d)
        return;
    vocab_free(d->v);
    free(d->off);
    free(d->tok);
    memset(d, 0, sizeof *d);
}
