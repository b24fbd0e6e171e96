/* serve_model.c -- the shared, reference-counted model of `vecsift serve`
 * (serve_model.h), and routing one ticket with it.
 *
 * NEEDSWORK: route_text repeats the steps of predict_run.c's per-row work
 * (join, tokenise, featurize through a memo, probabilities, explanation)
 * until the library's one routing call lands; then both use that call.
 */
#include "serve_model.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "vecsift/err.h"
#include "vecsift/features.h"
#include "vecsift/fmat.h"
#include "vecsift/pipeline.h"
#include "vecsift/text.h"
#include "vecsift/vecset.h"
#include "vecsift/vocab.h"
#include "vecsift/xalloc.h"

/* FNV-1a 64 over the file's bytes, read in pieces. */
static int file_hash(const char *path, uint64_t *out, struct err *e)
{
    FILE *fp = fopen(path, "rb");
    if (!fp)
        return err_set(e, path, 0, "cannot open: %s", strerror(errno));
    uint64_t h = 0xcbf29ce484222325ULL;
    unsigned char buf[1 << 16];
    size_t n;
    while ((n = fread(buf, 1, sizeof buf, fp)) > 0)
        for (size_t i = 0; i < n; i++)
            h = (h ^ buf[i]) * 0x100000001b3ULL;
    int bad = ferror(fp);
    fclose(fp);
    if (bad)
        return err_io(e, path, 0, "read failed");
    *out = h;
    return 0;
}

struct served *served_load(const struct serve_settings *st, struct err *e)
{
    uint64_t before, after;
    if (file_hash(st->model_path, &before, e) < 0)
        return NULL;
    struct served *m = xcalloc(1, sizeof *m);
    if (model_load(&m->m, st->model_path, st->vectors, &m->vs, e) < 0)
        goto fail;
    if (file_hash(st->model_path, &after, e) < 0)
        goto fail;
    if (after != before) {
        err_set(e, st->model_path, 0, "the file changed while it was being read");
        err_hint(e, "write the new model under another name and rename it into place, then reload");
        goto fail;
    }
    if (st->explain && pipeline_spec(m->m.pipe)->clf != CLF_LOGREG) {
        err_set(e, st->model_path, 0, "--explain needs a logreg model: an SVM's scores do not split into "
                                      "per-word parts");
        goto fail;
    }
    vecset_fingerprint_hex(after, m->fingerprint);
    time_t now = time(NULL);
    struct tm tm;
    gmtime_r(&now, &tm);
    strftime(m->loaded, sizeof m->loaded, "%Y-%m-%dT%H:%M:%SZ", &tm);
    m->cut = st->cut >= 0 ? st->cut : m->m.review_below >= 0 ? m->m.review_below : 0;
    atomic_init(&m->refs, 1);
    return m;
fail:
    model_release(&m->m);
    vecset_close(m->vs);
    free(m);
    return NULL;
}

void served_put(struct served *m)
{
    if (!m || atomic_fetch_sub(&m->refs, 1) != 1)
        return;
    model_release(&m->m);
    vecset_close(m->vs);
    free(m);
}

struct served *served_get(struct serve_slot *s)
{
    pthread_mutex_lock(&s->mu);
    struct served *m = s->cur;
    atomic_fetch_add(&m->refs, 1);
    pthread_mutex_unlock(&s->mu);
    return m;
}

void served_swap(struct serve_slot *s, struct served *m)
{
    pthread_mutex_lock(&s->mu);
    struct served *old = s->cur;
    s->cur = m;
    pthread_mutex_unlock(&s->mu);
    served_put(old);
}

/* ---- routing one text ---- */

struct route_scratch {
    const struct served *m;
    size_t explain;
    struct text_tokens tt;
    features_memo *memo;
    struct fmat X;
    const char **ptr;
    size_t *lens;
    size_t cap;
    const char **words;
    double *push;
};

route_scratch *route_scratch_new(const struct served *m, const struct serve_settings *st)
{
    route_scratch *w = xcalloc(1, sizeof *w);
    w->m = m;
    w->explain = st->explain;
    text_tokens_clear(&w->tt);
    w->memo = features_memo_new(pipeline_featurizer(m->m.pipe));
    features_alloc(pipeline_featurizer(m->m.pipe), 1, &w->X);
    if (w->explain) {
        w->words = xcalloc(w->explain, sizeof *w->words);
        w->push = xcalloc(w->explain, sizeof *w->push);
    }
    return w;
}

void route_scratch_free(route_scratch *w)
{
    if (!w)
        return;
    features_memo_free(w->memo);
    fmat_release(&w->X);
    text_tokens_release(&w->tt);
    free(w->ptr);
    free(w->lens);
    free(w->words);
    free(w->push);
    free(w);
}

int route_text(route_scratch *w, const char *text, size_t len, struct routed *out, struct err *e)
{
    const pipeline *pipe = w->m->m.pipe;
    const featurizer *f = pipeline_featurizer(pipe);
    size_t K = w->m->m.k;
    text_tokens_clear(&w->tt);
    if (text_tokenize(text, len, &w->m->m.text, &w->tt, e) < 0)
        return -1;
    size_t nt = w->tt.n, cap = w->cap;
    w->ptr = xgrow(w->ptr, &cap, nt + 1, sizeof *w->ptr);
    w->lens = xreallocarray(w->lens, cap, sizeof *w->lens);
    w->cap = cap;
    for (size_t q = 0; q < nt; q++) {
        w->ptr[q] = text_token(&w->tt, q);
        w->lens[q] = (q + 1 < nt ? w->tt.off[q + 1] : w->tt.len) - w->tt.off[q] - 1;
    }
    if (features_sparse(f))
        features_alloc(f, 1, &w->X);
    struct features_stats fs = { 0, 0, 0 };
    features_transform_memo(f, w->memo, w->ptr, w->lens, nt, &w->X, 0, &fs);
    pipeline_proba_row(pipe, &w->X, 0, out->prob);
    int best = 0;
    for (size_t k = 1; k < K; k++)
        if (out->prob[k] > out->prob[best])
            best = (int)k;
    out->best = best;
    out->empty = fs.with_vector == 0;
    out->why = NULL;
    if (w->explain) {
        size_t nw = pipeline_explain(pipe, w->ptr, nt, out->prob, best, w->explain, w->words, w->push);
        size_t blen = 0, bcap = 0;
        char *s = NULL;
        for (size_t q = 0; q < nw; q++) {
            char item[256];
            int il = snprintf(item, sizeof item, "%s%.80s (%+.3f)", q ? "; " : "", w->words[q], w->push[q]);
            s = xgrow(s, &bcap, blen + (size_t)il + 1, 1);
            memcpy(s + blen, item, (size_t)il + 1);
            blen += (size_t)il;
        }
        out->why = s ? s : xstrdup("");
    }
    return 0;
}
