/* lbfgs.h -- limited-memory BFGS minimisation of a smooth function.
 *
 * L-BFGS as in Nocedal and Wright, "Numerical Optimization", 2nd ed.
 * (Springer, 2006): the two-loop recursion (Algorithm 7.4) inside
 * Algorithm 7.5, with a line search that enforces the strong Wolfe
 * conditions (Algorithms 3.5 and 3.6; near the minimum, where rounding
 * hides any decrease of f, the approximate Wolfe conditions of Hager and
 * Zhang, 2005).  Unconstrained, dense, double
 * precision, single-threaded; the caller supplies f and its gradient.
 * It knows nothing about models: see linear.h for a user.
 */
#ifndef VECSIFT_LBFGS_H
#define VECSIFT_LBFGS_H

#include <stddef.h>

/* Value of f at x (length n); fills grad (length n) with its gradient. */
typedef double (*lbfgs_eval)(void *ctx, const double *x, double *grad);

/* One accepted step x_{k+1} = x_k + alpha p_k, for a caller watching the
 * progress (tests check the Wolfe conditions through it).  phi(a) =
 * f(x_k + a p_k); dphi = its derivative along p_k. */
struct lbfgs_step {
    int iter;        /* 1 for the first step */
    double alpha;    /* accepted step length */
    double f0, dphi0;  /* phi(0), phi'(0) (< 0) */
    double f1, dphi1;  /* phi(alpha), phi'(alpha) */
    double gnorm;    /* infinity norm of the gradient at x_{k+1} */
    int approx;      /* 1: phi(alpha) - phi(0) was within rounding noise, and
                      * the step met the curvature condition and
                      * phi(alpha) <= phi(0) + 1e-12 |phi(0)| instead of the
                      * sufficient decrease condition (see lbfgs.c) */
};
typedef void (*lbfgs_watch)(void *ctx, const struct lbfgs_step *s);

struct lbfgs_params {
    int m;           /* pairs (s, y) remembered, >= 1 (default 10) */
    int max_iter;    /* iterations (accepted steps) at most (default 1000) */
    double gtol;     /* stop when ||grad||_inf <= gtol (default 1e-6) */
    double ftol;     /* or when (f_k - f_{k+1}) / max(|f_k|, |f_{k+1}|, 1) <= ftol
                      * (default 1e-12); 0 turns the test off */
    lbfgs_watch watch; /* called after each accepted step, or NULL */
    void *watch_ctx;
};
#define LBFGS_PARAMS_INIT { 10, 1000, 1e-6, 1e-12, NULL, NULL }

/* Why lbfgs_minimize stopped. */
enum lbfgs_status {
    LBFGS_GRADIENT = 0,   /* ||grad||_inf <= gtol: converged */
    LBFGS_DECREASE = 1,   /* relative decrease <= ftol: converged */
    LBFGS_MAX_ITER = 2,   /* max_iter steps taken: not converged */
    LBFGS_NO_STEP = 3     /* no step satisfying the Wolfe conditions could
                           * be found along steepest descent either: the
                           * usual sign of rounding at the optimum, or of a
                           * gradient that does not match f */
};

struct lbfgs_result {
    int iters;       /* accepted steps */
    int evals;       /* calls of fn */
    int converged;   /* 1 for LBFGS_GRADIENT or LBFGS_DECREASE */
    int status;      /* enum lbfgs_status */
    double f;        /* f at the returned x */
    double gnorm;    /* ||grad||_inf at the returned x */
};

/* Minimise fn from the start point x (length n > 0), overwriting x with the
 * best point found.  'p' may be NULL for LBFGS_PARAMS_INIT; 'r' may be
 * NULL.  Returns the status (enum lbfgs_status): 0 or 1 when converged;
 * callers should warn on LBFGS_MAX_ITER.  Non-finite values from fn are
 * treated as "step too long" inside the line search; a non-finite f at the
 * start point returns LBFGS_NO_STEP at once.  Allocates O(m n) scratch. */
int lbfgs_minimize(size_t n, double *x, lbfgs_eval fn, void *ctx,
                   const struct lbfgs_params *p, struct lbfgs_result *r);

#endif
