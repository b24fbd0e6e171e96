/* svmfit.h -- support vector machines through libsvm (Chang and Lin 2011,
 * "LIBSVM: A Library for Support Vector Machines", ACM TIST 2(3)).
 *
 * Our header is not called svm.h so it never shadows <libsvm/svm.h>.
 * libsvm's trained model points into the training nodes; this module copies
 * what the model needs into memory it owns, frees libsvm's model and the
 * training nodes, and rebuilds a struct svm_model over its own arrays.  The
 * same rebuild serves models loaded from our JSON files, after validation:
 * libsvm's own model reader is never used (it crashes on damaged files).
 * Probabilities are libsvm's own estimate: Platt scaling per pair of classes
 * (Platt 1999, "Probabilistic Outputs for Support Vector Machines"; Lin, Lin
 * and Weng 2007) coupled by the method of Wu, Lin and Weng (2004,
 * "Probability Estimates for Multi-class Classification by Pairwise
 * Coupling").  The label shown is always the most probable one.
 *
 * Up to 1500 training rows, libsvm trains on a kernel matrix computed once
 * per fit with libsvm's own formulas (its PRECOMPUTED kernel): the same
 * support vectors, coefficients and rho as training on the nodes, several
 * times faster; Platt's A and B of an RBF fit differ from the node-based fit
 * in the last bits only (svmfit.c explains why).  Prediction computes the
 * kernel values against all support vectors in one dense pass when they are
 * mostly non-zero, and libsvm predicts from those: the same bits as libsvm
 * evaluating the kernel itself.
 */
#ifndef VECSIFT_SVMFIT_H
#define VECSIFT_SVMFIT_H

#include <stddef.h>
#include <stdint.h>

struct err;
struct fmat;
struct cJSON;
struct jsonv_ctx;

enum svmfit_kernel { SVMFIT_LINEAR = 0, SVMFIT_RBF = 1 };

struct svmfit_params {
    enum svmfit_kernel kernel;
    double C;           /* > 0 */
    double gamma;       /* RBF width: > 0 this value; 0 the default 1 / (D * variance
                         * of X); < 0 |gamma| times that default (for searches) */
    int balanced;       /* class weights n / (K * n_label) */
    uint64_t seed;      /* seeds libsvm's rand() for its probability estimate */
    double eps;         /* stopping tolerance (libsvm's -e), default 1e-3 */
    double cache_mb;    /* kernel cache, default 100 */
    int nodes_only;     /* 1: never train on a precomputed kernel matrix (tests compare both) */
};
#define SVMFIT_PARAMS_INIT { SVMFIT_RBF, 1.0, 0.0, 0, 1, 1e-3, 100.0, 0 }

typedef struct svmfit_model svmfit_model;

/* Train on X (N x D) with labels y in [0, K).  Every label must have at
 * least one row and K >= 2.  Thread-safe and lock-free: libsvm draws from
 * rand(), which this module gives one state per thread (svmfit.c explains
 * how), so a fit's result depends only on its inputs and seed, whatever
 * runs beside it.  Returns a model owned
 * by the caller (svmfit_free), or NULL with 'e' set.  '*tiny' (may be NULL)
 * is set to 1 when a label has fewer than 3 rows: its probabilities are
 * unreliable and the caller should warn. */
svmfit_model *svmfit_train(const struct fmat *X, const int *y, size_t k, const struct svmfit_params *p,
                           int *tiny, struct err *e);
void svmfit_free(svmfit_model *m); /* NULL-safe */

size_t svmfit_labels(const svmfit_model *m);
size_t svmfit_dim(const svmfit_model *m);
/* The gamma actually used (after the default rule). */
double svmfit_gamma(const svmfit_model *m);
size_t svmfit_support_vectors(const svmfit_model *m);
enum svmfit_kernel svmfit_kernel_of(const svmfit_model *m);

/* Probabilities (K, in our label order) for row i of X.  Thread-safe. */
void svmfit_proba(const svmfit_model *m, const struct fmat *X, size_t i, double *p);
/* One-vs-one decision values (K*(K-1)/2) for row i, pairs (a, b) with a < b
 * in OUR label order, positive meaning a; for checks against other wrappers
 * of libsvm. */
void svmfit_decision(const svmfit_model *m, const struct fmat *X, size_t i, double *dec);

/* For tests: 'on' 1 makes svmfit_proba and svmfit_decision hand libsvm the
 * row's feature nodes, so libsvm evaluates the kernel itself over the
 * support vectors' nodes; 0 (every model's start) lets them compute the
 * kernel values densely and predict through libsvm's PRECOMPUTED kernel
 * where the model allows it (svmfit.c says when; the results are the same
 * bits).  Returns 1 when predictions now take the dense path.  Not
 * thread-safe against predictions running on the same model. */
int svmfit_predict_on_nodes(svmfit_model *m, int on);

/* How many times this thread has called rand() (libsvm's draws included;
 * srand's own warm-up not counted).  For tests that prove libsvm reaches
 * svmfit's per-thread rand(). */
uint64_t svmfit_rand_draws(void);

/* Store the model as JSON fields of 'obj'. */
void svmfit_save(const svmfit_model *m, struct cJSON *obj);
/* Rebuild from JSON written by svmfit_save; every field is validated (sizes,
 * ranges, finiteness, index order) against 'd' and 'k'. */
svmfit_model *svmfit_load(const struct jsonv_ctx *c, const struct cJSON *obj, size_t d, size_t k);

#endif
