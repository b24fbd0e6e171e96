/* vecsift.h -- the installed library's public surface: open a model made
 * by `vecsift train`, route texts with it, read what each text got.
 *
 *     #include <vecsift/vecsift.h>
 *     cc app.c $(pkg-config --cflags --libs vecsift)
 *
 * Everything here is an opaque handle or a plain value; the layout of the
 * structures behind the handles is not part of the interface, so a new
 * release of the library does not break a program built against an older
 * one with the same major version.  The rest of the headers under
 * include/vecsift/ in the source tree are the project's internal modules:
 * they are not installed and their names are not exported by the shared
 * library.
 *
 * Routing is the same as `vecsift predict`'s, to the bit: the same
 * tokeniser settings (stored in the model), features, probabilities and
 * route.  A text is routed to review -- a person decides -- when the
 * confidence is below the model's cut-off or no word of the text is known
 * to the model.  A classifier misroutes some texts whatever the cut-off:
 * keep a person on the review route, and treat the texts and the model
 * (which holds words of its training texts) as the personal data they may
 * be, under your local law and policy.
 *
 * Memory: like the vecsift program, the library ends the process when an
 * allocation fails (it never returns half a result).
 *
 * Thread safety: a vecsift_model may be shared by any number of threads
 * routing at once; each vecsift_result belongs to the caller.  The shared
 * library does not train models; it does not call rand() and does not
 * replace it.  (The static library does, like the vecsift program: see
 * the project's DEVELOPERS.md on libsvm and rand().)
 */
#ifndef VECSIFT_VECSIFT_H
#define VECSIFT_VECSIFT_H

#include <stddef.h>

#ifdef __cplusplus
extern "C" {
#endif

/* The version of this header; vecsift_version() gives the library's. */
#define VECSIFT_VERSION_MAJOR 0
#define VECSIFT_VERSION_MINOR 1
#define VECSIFT_VERSION_PATCH 0
#define VECSIFT_VERSION_STRING "0.1.0"

/* "MAJOR.MINOR.PATCH" of the library in use. */
const char *vecsift_version(void);

/* The error type: a status with the same values as the vecsift program's
 * exit statuses, and a message "FILE:LINE: what is wrong" (plus an
 * optional hint).  The layout of this structure is fixed. */
enum vecsift_status {
    VECSIFT_OK = 0,         /* success */
    VECSIFT_EIO = 1,        /* a file could not be read; an internal failure */
    VECSIFT_EINPUT = 2      /* bad input: a damaged model, text that is not UTF-8, a bad argument */
};
typedef struct vecsift_error {
    int status;             /* enum vecsift_status */
    char message[1024];     /* "" on success */
    char hint[512];         /* a suggestion, or "" */
} vecsift_error;

typedef struct vecsift_model vecsift_model;
typedef struct vecsift_result vecsift_result;

/* Open the model file 'model_path' and its vector set: 'vectors_path', or
 * when NULL the path stored in the model (bag-of-words models need none).
 * The vector set's fingerprint must match the model's.  Returns the model,
 * or NULL with 'err' filled ('err' may be NULL). */
vecsift_model *vecsift_open(const char *model_path, const char *vectors_path, vecsift_error *err);
/* Close a model; NULL-safe.  No routing may be running on it. */
void vecsift_close(vecsift_model *m);

/* The model's labels, in the order of vecsift_result_probability. */
size_t vecsift_labels(const vecsift_model *m);
const char *vecsift_label(const vecsift_model *m, size_t i); /* NULL when i is out of range */

/* The confidence cut-off: below it a text goes to review.  It starts as
 * the model's stored suggestion (or 0 when it has none); set one in
 * [0, 1] before routing.  Returns 0, or -1 with 'err' filled. */
double vecsift_cutoff(const vecsift_model *m);
int vecsift_set_cutoff(vecsift_model *m, double cutoff, vecsift_error *err);

/* Route one NUL-terminated UTF-8 text (a model trained on several text
 * columns saw them joined by one space: join them the same way).  'words'
 * asks for up to that many top words (logistic-regression models; other
 * models give none).  Returns a result the caller frees, or NULL with
 * 'err' filled when the text is not valid UTF-8 or an argument is NULL. */
vecsift_result *vecsift_route(vecsift_model *m, const char *text, size_t words, vecsift_error *err);
void vecsift_result_free(vecsift_result *r); /* NULL-safe */

/* What a text got.  The strings belong to the result (or to its model,
 * which must outlive it). */
const char *vecsift_result_label(const vecsift_result *r);       /* the most probable label */
double vecsift_result_confidence(const vecsift_result *r);       /* its probability */
const char *vecsift_result_route(const vecsift_result *r);       /* the label, or "review" */
int vecsift_result_review(const vecsift_result *r);              /* 1 when routed to review */
double vecsift_result_probability(const vecsift_result *r, size_t label); /* 0 when out of range */
/* The top words, the strongest push toward the label first: how many,
 * and word i with its push (may be NULL), or NULL when i is out of range. */
size_t vecsift_result_words(const vecsift_result *r);
const char *vecsift_result_word(const vecsift_result *r, size_t i, double *push);

#ifdef __cplusplus
}
#endif

#endif
