/* serve_model.h -- the model `vecsift serve` answers with: loaded and
 * validated once, shared by every request through a reference count, so
 * a reload (SIGHUP) can swap in a new one while requests that started on
 * the old one finish on it.  Routing itself is the library's (route.h).
 * Private to src/cli.
 */
#ifndef VECSIFT_CLI_SERVE_MODEL_H
#define VECSIFT_CLI_SERVE_MODEL_H

#include <pthread.h>
#include <stdatomic.h>
#include <stddef.h>

#include "vecsift/model.h"

struct err;
struct vecset;

/* One loaded model.  Read-only once published; freed by the last put. */
struct served {
    struct model m;
    struct vecset *vs;
    char fingerprint[17];   /* FNV-1a 64 of the model file's bytes, hex */
    char loaded[24];        /* UTC time of loading, ISO 8601 */
    double cut;             /* review cut-off in use */
    atomic_long refs;
};

/* The model slot every request reads.  'cur' changes only under 'mu'. */
struct serve_slot {
    pthread_mutex_t mu;
    struct served *cur;
};

/* Settings that stay for the whole run. */
struct serve_settings {
    const char *model_path;
    const char *vectors;    /* --vectors or NULL */
    double cut;             /* --review-below, or -1: the model's */
    size_t top, explain;    /* predict's --top and --explain */
};

/* Load and validate the model file (and its vector set): refuses a file
 * that changed while it was read, and an SVM model when explanations are
 * asked for.  Returns a model holding one reference, or NULL with 'e' set. */
struct served *serve_model_load(const struct serve_settings *st, struct err *e);

/* Take a reference to the slot's current model; drop one (the last frees
 * it).  serve_model_put(NULL) does nothing. */
struct served *serve_model_get(struct serve_slot *s);
void serve_model_put(struct served *m);

/* Publish 'm' (its reference moves to the slot) and drop the slot's
 * reference to the one it replaces. */
void serve_model_swap(struct serve_slot *s, struct served *m);

#endif
