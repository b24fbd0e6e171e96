/* linear.h -- multinomial logistic regression with an L2 penalty.
 *
 * K classes, D features.  A model holds one weight vector per class (K full
 * rows, also when K = 2) and an intercept per class; the probability of
 * class k for a row x is softmax(W x + b)_k.  Fitting minimises
 *
 *     J(W, b) = a * ||W||_F^2  +  C * sum_i s_i * ( -log softmax(W x_i + b)_{y_i} )
 *
 * over W (K x D) and b (K) with L-BFGS (lbfgs.h), with a = 0.5 for K > 2
 * and a = 1 for K = 2.  The intercept b is not penalised.  s_i = 1, or with
 * balanced class weights s_i = N / (K_present * N_{y_i}), where N_c counts
 * the rows of class c and K_present the classes that have rows.  For K > 2
 * this is the objective scikit-learn's LogisticRegression minimises with
 * multi_class='multinomial'.
 *
 * For K = 2 the optimum is symmetric, w_1 = -w_0 (from a start whose
 * intercepts sum to zero), so with delta = w_1 - w_0, ||W||^2 = 0.5
 * |delta|^2 and J = 0.5 |delta|^2 + C sum_i s_i logloss(delta): the binary
 * (sigmoid) logistic regression that scikit-learn's LogisticRegression()
 * fits by default on two classes, so C means the same there as here for
 * any K.  (With a = 0.5 for K = 2 the fit would be scikit-learn's binary
 * one at 2C: issue 14 found probabilities up to 0.19 apart on mail.)
 *
 * A class in [0, K) with no rows has no finite optimum (its intercept falls
 * without bound); the fit still ends, by L-BFGS's relative-decrease test,
 * with that class's probabilities near 0 (about 1e-10 in a measured case).
 *
 * This module does not choose C or build features; see folds.h and
 * features.h.
 */
#ifndef VECSIFT_LINEAR_H
#define VECSIFT_LINEAR_H

#include <stddef.h>

struct err;
struct fmat;

struct linear_params {
    double C;         /* inverse penalty strength, > 0 (default 1) */
    int max_iter;     /* L-BFGS iterations at most (default 1000) */
    double tol;       /* stop when the largest gradient entry of J / (C sum_i s_i)
                       * is <= tol: a scale that does not grow with N or C
                       * (default 1e-6); the fit also stops once J no longer
                       * falls by more than 64 ulps relative per step */
    int balanced;     /* 1: class weights N / (K_present N_c) (default 0) */
};
#define LINEAR_PARAMS_INIT { 1.0, 1000, 1e-6, 0 }

struct linear_model {
    size_t k, d;
    double *W;        /* (K, D) row-major */
    double *b;        /* (K) */
    int iters;        /* L-BFGS iterations used */
    int converged;    /* 0 when max_iter was hit or no step could be made */
    double objective; /* J at the returned W, b */
};
#define LINEAR_MODEL_INIT { 0, 0, NULL, NULL, 0, 0, 0 }

/* Fit a model to the rows of X (N x D) with labels y[i] in [0, k), which
 * is asserted (a label outside is the caller's bug).  'p' may be NULL for
 * LINEAR_PARAMS_INIT.  Replaces whatever 'm' held; the caller releases it
 * with linear_release().  Starts from W = 0 and the intercepts of the
 * model without features (centred: they sum to zero, as from b = 0), so
 * results repeat exactly.  Returns 0 (check m->converged and warn when it is 0), or -1
 * with 'e' set when k < 2, N = 0, C <= 0 or a feature is not finite. */
int linear_fit(struct linear_model *m, const struct fmat *X, const int *y, size_t k,
               const struct linear_params *p, struct err *e);

/* Scores z = W x_i + b of row i (X->d must equal m->d) into z (K). */
void linear_scores(const struct linear_model *m, const struct fmat *X, size_t i, double *z);
/* Class probabilities softmax(W x_i + b) of row i into p (K); they sum to 1. */
void linear_proba(const struct linear_model *m, const struct fmat *X, size_t i, double *p);
/* J(W, b) of the model on the rows of X, weights from p->C and p->balanced. */
double linear_objective(const struct linear_model *m, const struct fmat *X, const int *y,
                        const struct linear_params *p);
/* Gradient of J at the model's W, b into grad, laid out as W (K*D) then b
 * (K); returns J.  For checks against finite differences. */
double linear_gradient(const struct linear_model *m, const struct fmat *X, const int *y,
                       const struct linear_params *p, double *grad);
void linear_release(struct linear_model *m);

#endif
