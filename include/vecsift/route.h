/* route.h -- raw text in, routing out: the one prediction path.
 *
 * A saved model (model.h) applied to the texts of new tickets.  For each
 * text: the text columns are joined as training joined them
 * (dataset_join_text), tokenised with the model's settings (text.h),
 * featurized by the fitted featurizer through a per-thread word memo
 * (features.h), scored (pipeline.h); then the route is decided and, when
 * asked, the words that pushed the text most toward its label are listed.
 * predict, suggest, the installed library (vecsift.h) and the tests all
 * come through here, so a change to preprocessing is made in one place.
 *
 * The route: the most probable label, or review (a person decides) when
 * its probability is below the cut-off or no token of the text had a
 * vector (pooling) or a column (bag of words).  A classifier misroutes
 * some texts whatever the cut-off: keep a person on the review route.
 */
#ifndef VECSIFT_ROUTE_H
#define VECSIFT_ROUTE_H

#include <stddef.h>

struct err;
struct fmat;
struct model;

struct route_params {
    double cut;         /* confidence below it goes to review; 0: never by confidence */
    size_t explain;     /* top words per text (logreg models; others give none); 0: none */
};
#define ROUTE_PARAMS_INIT { 0.0, 0 }

/* What one text got.  'prob' (K label probabilities, in the model's label
 * order) is the caller's array, passed beside it. */
struct route_result {
    int label;          /* the most probable label (the first of equals) */
    double confidence;  /* its probability */
    int review;         /* 1: goes to a person (below the cut-off, empty, or a
                         * probability that is not a finite number) */
    int empty;          /* no token had a vector or a column */
    size_t nwords;      /* top words written, <= explain */
    char **words;       /* (nwords) owned; route_result_release frees them */
    double *push;       /* (nwords) each word's push toward 'label' (pipeline_explain) */
};
#define ROUTE_RESULT_INIT { 0, 0.0, 0, 0, 0, NULL, NULL }
void route_result_release(struct route_result *r); /* forget the words; NULL-safe */

/* One thread's reusable memory (tokens, word memo, feature row, buffers),
 * for a model 'm' that it borrows (keep it loaded).  Not thread-safe: one
 * worker per thread; the model may be shared by any number of workers. */
typedef struct route_worker route_worker;
route_worker *route_worker_new(const struct model *m, const struct route_params *p);
void route_worker_free(route_worker *w); /* NULL-safe */
/* Change the worker's settings (for a pool of workers serving calls that
 * ask for different numbers of top words). */
void route_worker_set(route_worker *w, const struct route_params *p);

/* Route one text given as 'nparts' column values (joined with one space,
 * as training joined the model's text columns).  Writes K probabilities
 * to 'prob' and the rest to 'res' (its old words are released first).
 * 'X' NULL: the features stay in the worker; else row 'row' of X (made by
 * features_alloc for the model's featurizer) receives them; a sparse X
 * must be filled in row order.  Returns 0, or -1 with 'e' set when the
 * text is not valid UTF-8 ("invalid UTF-8 at byte N"; the caller adds
 * where the text came from); 'res' then routes it to review. */
int route_text(route_worker *w, const char *const *parts, size_t nparts, double *prob, struct route_result *res,
               struct fmat *X, size_t row, struct err *e);

/* Route n texts, text i given by parts[i * nparts .. + nparts), on up to
 * 'threads' threads (par.h; the numbers do not depend on 'threads').
 * prob is (n x K), res (n) initialised results.  'X' NULL, or a matrix
 * that receives every text's features (n x D; with a sparse featurizer
 * the texts are then routed on the calling thread, in order).  Returns 0,
 * or -1 with 'e' set for the first text (lowest i) that is not valid
 * UTF-8 ("text I: invalid UTF-8 at byte N", I 1-based); every other text
 * is still routed. */
int route_batch(const struct model *m, const struct route_params *p, int threads, const char *const *parts,
                size_t nparts, size_t n, double *prob, struct route_result *res, struct fmat *X, struct err *e);

#endif
