/* pieces.c -- character n-gram pieces and their buckets (pieces.h).
 *
 * Bojanowski, Grave, Joulin and Mikolov (2017), "Enriching Word Vectors with
 * Subword Information", TACL 5, section 3.2.  The paper's G_w is a set, so a
 * piece that occurs twice in a word ("ana" in "banana") counts once; the
 * word itself, with its boundary marks, is left out because the word has a
 * row of its own.
 */
#include "vecsift/pieces.h"

#include <stdlib.h>
#include <string.h>

#include "vecsift/xalloc.h"

uint32_t pieces_fnv1a32(const char *s, size_t len)
{
    uint32_t h = 2166136261u;
    for (size_t i = 0; i < len; i++) {
        h ^= (unsigned char)s[i];
        h *= 16777619u;
    }
    return h;
}

/* Is byte c the first byte of a UTF-8 character (not a continuation)? */
static int starts_char(unsigned char c)
{
    return (c & 0xc0) != 0x80;
}

size_t pieces_each(const char *tok, size_t len, unsigned min_len, unsigned max_len,
                   void (*fn)(void *ud, const char *piece, size_t len), void *ud)
{
    /* "<" tok ">" and the byte offset of each character in it, plus the end */
    char sbuf[256];
    size_t soff[258];
    size_t blen = len + 2;
    char *b = blen <= sizeof sbuf ? sbuf : xmalloc(blen);
    size_t *at = blen + 1 <= sizeof soff / sizeof soff[0] ? soff : xmalloc(xmul(blen + 1, sizeof *at));
    b[0] = '<';
    memcpy(b + 1, tok, len);
    b[blen - 1] = '>';
    size_t nch = 0;
    for (size_t i = 0; i < blen; i++)
        if (starts_char((unsigned char)b[i]))
            at[nch++] = i;
    at[nch] = blen;
    size_t count = 0;
    for (size_t i = 0; i < nch; i++) {
        for (unsigned n = min_len; n <= max_len && i + n <= nch; n++) {
            if (i == 0 && i + n == nch)
                continue; /* the whole bounded word: the word's own row */
            if (n == 1 && (i == 0 || i + 1 == nch))
                continue; /* a lone boundary mark */
            const char *p = b + at[i];
            size_t plen = at[i + n] - at[i];
            /* distinct pieces only: compare with the earlier ones of n characters */
            int seen = 0;
            for (size_t k = 0; k < i && !seen; k++)
                seen = at[k + n] - at[k] == plen && memcmp(b + at[k], p, plen) == 0;
            if (seen)
                continue;
            count++;
            if (fn)
                fn(ud, p, plen);
        }
    }
    if (b != sbuf)
        free(b);
    if (at != soff)
        free(at);
    return count;
}

struct bucket_sink {
    const struct pieces_params *p;
    uint32_t *ids;
    size_t cap, n;
};

static void to_bucket(void *ud, const char *piece, size_t len)
{
    struct bucket_sink *s = ud;
    if (s->n < s->cap)
        s->ids[s->n] = pieces_fnv1a32(piece, len) % s->p->buckets;
    s->n++;
}

size_t pieces_buckets(const char *tok, size_t len, const struct pieces_params *p, uint32_t *ids, size_t cap)
{
    struct bucket_sink s = { p, ids, cap, 0 };
    pieces_each(tok, len, p->min_len, p->max_len, to_bucket, &s);
    return s.n;
}
