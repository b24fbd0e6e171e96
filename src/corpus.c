/* corpus.c -- load a CSV dataset and tokenise it (see corpus.h). */
#include "vecsift/corpus.h"

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
