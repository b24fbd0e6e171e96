/* serve_model.c -- the shared, reference-counted model of `vecsift serve`
 * (serve_model.h).
 */
#include "serve_model.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "vecsift/err.h"
#include "vecsift/pipeline.h"
#include "vecsift/vecset.h"
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

struct served *serve_model_load(const struct serve_settings *st, struct err *e)
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

void serve_model_put(struct served *m)
{
    if (!m || atomic_fetch_sub(&m->refs, 1) != 1)
        return;
    model_release(&m->m);
    vecset_close(m->vs);
    free(m);
}

struct served *serve_model_get(struct serve_slot *s)
{
    pthread_mutex_lock(&s->mu);
    struct served *m = s->cur;
    atomic_fetch_add(&m->refs, 1);
    pthread_mutex_unlock(&s->mu);
    return m;
}

void serve_model_swap(struct serve_slot *s, struct served *m)
{
    pthread_mutex_lock(&s->mu);
    struct served *old = s->cur;
    s->cur = m;
    pthread_mutex_unlock(&s->mu);
    serve_model_put(old);
}
