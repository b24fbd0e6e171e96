/* pipeline.h -- a featurizer plus a classifier, fitted together on training
 * rows only.
 *
 * Everything that fits (evaluate's folds, train, compare, curve, audit)
 * fits a pipeline, and everything that predicts applies one, so no command
 * can fit a part of it on held-out rows by accident (DESIGN.md, Data flow).
 */
#ifndef VECSIFT_PIPELINE_H
#define VECSIFT_PIPELINE_H

#include <stddef.h>
#include <stdint.h>

#include "vecsift/features.h"

struct err;
struct fmat;
struct tokdocs;
struct vecset;
struct cJSON;
struct jsonv_ctx;

enum pipeline_classifier { CLF_LOGREG = 0, CLF_SVM_LINEAR, CLF_SVM_RBF };

struct pipeline_spec {
    struct features_params feat;
    enum pipeline_classifier clf;
    double C;           /* inverse regularisation strength, > 0; 0: the route's
                         * default (pipeline_default_C) */
    double gamma;       /* svm-rbf width: > 0 this value; 0: 1 / (D * variance);
                         * < 0: |gamma| times that default */
    int balanced;       /* class weights n / (K * n_label) */
    int max_iter;       /* logreg: L-BFGS iteration cap */
    double tol;         /* logreg: gradient tolerance (linear.h); 1e-6 for the
                         * many fits of cross-validation, PIPELINE_FINAL_TOL
                         * for train's one */
    uint64_t seed;      /* svm: libsvm's probability estimate */
};
#define PIPELINE_SPEC_INIT { FEATURES_PARAMS_INIT, CLF_LOGREG, 0.0, 0.0, 0, 1000, 1e-6, 1 }

/* The C an unset --C (C = 0) takes for a pooling and classifier, chosen on
 * tests/bench/bench_accuracy's grid of C per route (docs/accuracy.md):
 * logistic regression on a bag-of-words block (bow and bow+P, whose rows
 * are unit length) underfits badly at C = 1 with a few hundred rows, so it
 * gets PIPELINE_C_BOW; standardised pooled vectors, and the SVMs (not
 * measured per route), keep 1. */
#define PIPELINE_C_BOW 30.0
#define PIPELINE_C_BOW_POOLED 10.0
#define PIPELINE_C_HELP "default: 1; logreg on bow 30, on bow+P 10"
double pipeline_default_C(enum features_pool pool, enum pipeline_classifier clf);
/* s->C when set (> 0), otherwise the default for s's pooling and classifier:
 * the value every fit uses and everything that prints or stores C shows. */
double pipeline_spec_C(const struct pipeline_spec *s);

/* The gradient tolerance of the model train writes.  Cross-validation's
 * 1e-6 leaves probabilities up to 1.3e-4 from the exact optimum (measured
 * against scikit-learn's newton-cg on bench_accuracy's mail, mean-pooled
 * learned vectors, C = 1); 1e-8 leaves 2.2e-6, for about 45% more L-BFGS
 * iterations in that one fit (55 -> 78 on the mail, 155 -> 225 on the demo
 * inbox), which evaluate's and compare's many fits need not pay: their
 * scores depend on the largest probability, not its last digits. */
#define PIPELINE_FINAL_TOL 1e-8

int pipeline_classifier_parse(const char *name, enum pipeline_classifier *out);
const char *pipeline_classifier_name(enum pipeline_classifier c);

/* What happened while fitting, for warnings. */
struct pipeline_fit_info {
    int converged;      /* logreg reached its tolerance (1 for svm) */
    int iters;
    int tiny_label;     /* svm: a label with fewer than 3 rows */
    struct features_stats stats; /* training rows' token coverage */
};

typedef struct pipeline pipeline;

/* Fit on rows[0..n) of 'd' with labels y (indexed by document, in [0,k)).
 * 'vs' is borrowed (keep it open).  Returns a pipeline owned by the caller
 * (pipeline_free), or NULL with 'e' set.  'info' may be NULL.  Thread-safe. */
pipeline *pipeline_fit(const struct pipeline_spec *s, const struct tokdocs *d, const int *y, size_t k,
                       const size_t *rows, size_t n, const struct vecset *vs, struct pipeline_fit_info *info,
                       struct err *e);
/* pipeline_fit with pooled rows from 'cache' (features_cache_new over the
 * same 'd' and 'vs'; may be NULL): the same pipeline, bit for bit, at less
 * cost when many fits share the documents (cross-validation). */
pipeline *pipeline_fit_cached(const struct pipeline_spec *s, const struct tokdocs *d, const int *y, size_t k,
                              const size_t *rows, size_t n, const struct vecset *vs, const features_cache *cache,
                              struct pipeline_fit_info *info, struct err *e);
void pipeline_free(pipeline *p); /* NULL-safe */

/* The classifier part of a fit alone, for callers that fit one featurizer
 * and try several classifiers on it (cv_run_shared): X holds the training
 * rows featurized by a featurizer fitted with s->feat on those same rows,
 * y their labels (X->n of them).  Fits s's classifier, writes the
 * probabilities (Xte->n x K) of Xte's rows to P and frees the classifier.
 * The same numbers as pipeline_fit then pipeline_proba.  'info' may be NULL;
 * its stats are left alone.  Returns 0, or -1 with 'e' set.  Thread-safe. */
int pipeline_fit_proba_featurized(const struct pipeline_spec *s, size_t k, const struct fmat *X, const int *y,
                                  const struct fmat *Xte, double *P, struct pipeline_fit_info *info, struct err *e);

size_t pipeline_labels(const pipeline *p);
const featurizer *pipeline_featurizer(const pipeline *p);
const struct pipeline_spec *pipeline_spec(const pipeline *p);

/* Probabilities (n x K, row-major) for rows[0..n) of 'd'.  'st' may be NULL. */
void pipeline_proba(const pipeline *p, const struct tokdocs *d, const size_t *rows, size_t n, double *P,
                    struct features_stats *st);
/* pipeline_proba with pooled rows from 'cache' (as for
 * pipeline_fit_cached; may be NULL): the same numbers. */
void pipeline_proba_cached(const pipeline *p, const features_cache *cache, const struct tokdocs *d,
                           const size_t *rows, size_t n, double *P, struct features_stats *st);
/* Probabilities (K) for row i of an already featurized matrix. */
void pipeline_proba_row(const pipeline *p, const struct fmat *X, size_t i, double *prob);

/* The words of one text that pushed it most toward 'label' (logreg only,
 * on any features; returns 0 otherwise).  The scores are linear in the
 * pooled vector (and the bow row), which is a weighted sum of word vectors, so the score of
 * label j splits exactly into a constant plus one term per word:
 * z_j = c_j + sum_w a_w(j).  A word's push toward 'label' is
 * a_w(label) - sum_j prob_j a_w(j): its share of z_label minus the
 * probability-weighted mean score, the quantity whose sum over words (plus
 * the constant) is the log-odds margin the softmax acts on.  Writes up to
 * 'top' words, largest push first, to words/push; returns how many.  For
 * a combined route a word's push is its bow term's plus its pooled share;
 * word pairs stand alone. */
size_t pipeline_explain(const pipeline *p, const char *const *toks, size_t ntok, const double *prob, int label,
                        size_t top, const char **words, double *push);

/* Persistence as JSON fields of 'obj' ("features", "classifier"). */
void pipeline_save(const pipeline *p, struct cJSON *obj);
pipeline *pipeline_load(const struct jsonv_ctx *c, const struct cJSON *obj, const struct vecset *vs, size_t k);

#endif
