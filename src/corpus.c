/* corpus.c -- load a CSV dataset and tokenise it (see corpus.h). */
#include "vecsift/corpus.h"

#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/err.h"
#include "vecsift/xalloc.h"

int corpus_load(struct corpus *c, const char *path, const struct dataset_options *o, const struct text_options *t,
                struct err *e)
{
    memset(c, 0, sizeof *c);
    c->text = *t;
    if (dataset_load(&c->ds, path, o, e) < 0)
        return -1;
    struct text_tokens tt = TEXT_TOKENS_INIT;
    const char **ptr = NULL;
    size_t cap = 0;
    for (size_t i = 0; i < c->ds.n; i++) {
        text_tokens_clear(&tt);
        if (text_tokenize(c->ds.text[i], strlen(c->ds.text[i]), t, &tt, e) < 0) {
            /* the CSV reader validated UTF-8 already; keep the location anyway */
            struct err inner = *e;
            err_clear(e);
            err_set(e, c->ds.path, c->ds.line[i], "%s", inner.msg);
            goto fail;
        }
        ptr = xgrow(ptr, &cap, tt.n + 1, sizeof *ptr);
        for (size_t j = 0; j < tt.n; j++)
            ptr[j] = text_token(&tt, j);
        tokdocs_add(&c->docs, ptr, tt.n);
        c->empty_docs += tt.n == 0;
        if (tt.too_long > c->too_long && !c->too_long_line)
            c->too_long_line = c->ds.line[i];
        c->too_long = tt.too_long;
    }
    free(ptr);
    text_tokens_release(&tt);
    return 0;
fail:
    free(ptr);
    text_tokens_release(&tt);
    corpus_release(c);
    return -1;
}

void corpus_release(struct corpus *c)
{
    dataset_release(&c->ds);
    tokdocs_release(&c->docs);
    memset(c, 0, sizeof *c);
}

/* ---- rows that repeat ---- */

struct row_hash {
    uint64_t h;
    size_t i;
};

static int by_hash_then_row(const void *a, const void *b)
{
    const struct row_hash *x = a, *y = b;
    if (x->h != y->h)
        return x->h < y->h ? -1 : 1;
    return (x->i > y->i) - (x->i < y->i);
}

size_t corpus_duplicates(const struct corpus *c, size_t *conflicting)
{
    /* Hash each row's token-id sequence; rows with equal hashes are
     * compared exactly, each with the rows before it in (hash, row) order. */
    const struct tokdocs *d = &c->docs;
    size_t n = d->n, dup = 0;
    *conflicting = 0;
    struct row_hash *r = xcalloc(n ? n : 1, sizeof *r);
    for (size_t i = 0; i < n; i++) {
        size_t a = d->off[i], z = d->off[i + 1];
        r[i].h = vocab_hash((const char *)(d->tok + a), (z - a) * sizeof *d->tok) ^ (uint64_t)(z - a);
        r[i].i = i;
    }
    qsort(r, n, sizeof *r, by_hash_then_row);
    for (size_t q = 1; q < n; q++) {
        size_t i = r[q].i, la = d->off[i + 1] - d->off[i];
        if (la == 0)
            continue; /* empty texts are reported elsewhere */
        for (size_t p = q; p-- > 0 && r[p].h == r[q].h;) {
            size_t j = r[p].i, lb = d->off[j + 1] - d->off[j];
            if (la == lb && memcmp(d->tok + d->off[i], d->tok + d->off[j], la * sizeof *d->tok) == 0) {
                dup++;
                *conflicting += c->ds.y && c->ds.y[i] != c->ds.y[j];
                break;
            }
        }
    }
    free(r);
    return dup;
}
