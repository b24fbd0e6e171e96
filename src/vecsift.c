/* vecsift.c -- the installed library's public surface (vecsift.h), a thin
 * layer over model.h and route.h.  A model keeps a pool of route workers
 * (tokens, word memo, buffers) that calls borrow one at a time, so routing
 * from many threads at once allocates nothing after the first calls. */
#include "vecsift/vecsift.h"

#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/err.h"
#include "vecsift/model.h"
#include "vecsift/route.h"
#include "vecsift/vecset.h"
#include "vecsift/xalloc.h"

struct vecsift_model {
    struct model m;
    struct vecset *vs;
    double cut;
    pthread_mutex_t lock;
    route_worker **idle;    /* workers not in use */
    size_t nidle, cap;
};

struct vecsift_result {
    const vecsift_model *m;
    double *prob;           /* (K) */
    struct route_result r;
};

const char *vecsift_version(void) { return VECSIFT_VERSION; }

static void fill(vecsift_error *out, const struct err *e)
{
    if (!out)
        return;
    out->status = e->code ? e->code : VECSIFT_EIO;
    snprintf(out->message, sizeof out->message, "%s", e->msg);
    snprintf(out->hint, sizeof out->hint, "%s", e->hint);
}

static void ok(vecsift_error *out)
{
    if (out) {
        out->status = VECSIFT_OK;
        out->message[0] = out->hint[0] = '\0';
    }
}

static void fail(vecsift_error *out, const char *what)
{
    struct err e = ERR_INIT;
    err_set(&e, NULL, 0, "%s", what);
    fill(out, &e);
}

vecsift_model *vecsift_open(const char *model_path, const char *vectors_path, vecsift_error *err)
{
    if (!model_path) {
        fail(err, "vecsift_open: no model file given");
        return NULL;
    }
    vecsift_model *vm = xcalloc(1, sizeof *vm);
    struct err e = ERR_INIT;
    if (model_load(&vm->m, model_path, vectors_path, &vm->vs, &e) < 0) {
        fill(err, &e);
        free(vm);
        return NULL;
    }
    vm->cut = vm->m.review_below >= 0 ? vm->m.review_below : 0;
    pthread_mutex_init(&vm->lock, NULL);
    ok(err);
    return vm;
}

void vecsift_close(vecsift_model *vm)
{
    if (!vm)
        return;
    for (size_t q = 0; q < vm->nidle; q++)
        route_worker_free(vm->idle[q]);
    free(vm->idle);
    pthread_mutex_destroy(&vm->lock);
    model_release(&vm->m);
    vecset_close(vm->vs);
    free(vm);
}

size_t vecsift_labels(const vecsift_model *vm) { return vm ? vm->m.k : 0; }

const char *vecsift_label(const vecsift_model *vm, size_t i)
{
    return vm && i < vm->m.k ? vm->m.labels[i] : NULL;
}

double vecsift_cutoff(const vecsift_model *vm) { return vm ? vm->cut : 0; }

int vecsift_set_cutoff(vecsift_model *vm, double cutoff, vecsift_error *err)
{
    if (!vm || !(cutoff >= 0 && cutoff <= 1)) {
        fail(err, "vecsift_set_cutoff: the cut-off must be in [0, 1]");
        return -1;
    }
    vm->cut = cutoff;
    ok(err);
    return 0;
}

vecsift_result *vecsift_route(vecsift_model *vm, const char *text, size_t words, vecsift_error *err)
{
    if (!vm || !text) {
        fail(err, "vecsift_route: no model or no text given");
        return NULL;
    }
    struct route_params rp = { vm->cut, words };
    pthread_mutex_lock(&vm->lock);
    route_worker *w = vm->nidle ? vm->idle[--vm->nidle] : NULL;
    pthread_mutex_unlock(&vm->lock);
    if (w)
        route_worker_set(w, &rp);
    else
        w = route_worker_new(&vm->m, &rp);
    vecsift_result *r = xcalloc(1, sizeof *r);
    r->m = vm;
    r->prob = xcalloc(vm->m.k, sizeof *r->prob);
    struct err e = ERR_INIT;
    int rc = route_text(w, &text, 1, r->prob, &r->r, NULL, 0, &e);
    pthread_mutex_lock(&vm->lock);
    vm->idle = xgrow(vm->idle, &vm->cap, vm->nidle + 1, sizeof *vm->idle);
    vm->idle[vm->nidle++] = w;
    pthread_mutex_unlock(&vm->lock);
    if (rc < 0) {
        fill(err, &e);
        vecsift_result_free(r);
        return NULL;
    }
    ok(err);
    return r;
}

void vecsift_result_free(vecsift_result *r)
{
    if (!r)
        return;
    route_result_release(&r->r);
    free(r->prob);
    free(r);
}

const char *vecsift_result_label(const vecsift_result *r) { return r->m->m.labels[r->r.label]; }
double vecsift_result_confidence(const vecsift_result *r) { return r->r.confidence; }
int vecsift_result_review(const vecsift_result *r) { return r->r.review; }

const char *vecsift_result_route(const vecsift_result *r)
{
    return r->r.review ? "review" : vecsift_result_label(r);
}

double vecsift_result_probability(const vecsift_result *r, size_t label)
{
    return label < r->m->m.k ? r->prob[label] : 0;
}

size_t vecsift_result_words(const vecsift_result *r) { return r->r.nwords; }

const char *vecsift_result_word(const vecsift_result *r, size_t i, double *push)
{
    if (i >= r->r.nwords)
        return NULL;
    if (push)
        *push = r->r.push[i];
    return r->r.words[i];
}
