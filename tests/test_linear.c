/* test_linear.c -- multinomial logistic regression: gradient, optimality,
 * layouts, class weights, errors.  The comparison with scikit-learn on open
 * datasets lives in tests/ext/linear_vs_sklearn.py. */
#include <criterion/criterion.h>
#include <math.h>
#include <signal.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/err.h"
#include "vecsift/fmat.h"
#include "vecsift/expv.h"
#include "vecsift/linear.h"
#include "vecsift/rng.h"

/* N rows of D standard-normal features, about a third of them zeroed (so
 * the sparse copy is really sparse), labels from a noisy linear rule over K
 * classes; the dense matrix and its CSR copy hold the same numbers. */
static void random_problem(size_t n, size_t d, size_t k, uint64_t seed,
                           struct fmat *dense, struct fmat *sparse, int *y)
{
    struct rng r;
    rng_seed(&r, seed);
    fmat_dense(dense, n, d);
    fmat_sparse(sparse, d);
    uint32_t *cols = calloc(d, sizeof *cols);
    double *vals = calloc(d, sizeof *vals);
    for (size_t i = 0; i < n; i++) {
        size_t nz = 0;
        for (size_t j = 0; j < d; j++) {
            double v = rng_uniform(&r) < 0.33 ? 0 : rng_normal(&r);
            dense->x[i * d + j] = v;
            if (v != 0) {
                cols[nz] = (uint32_t)j;
                vals[nz++] = v;
            }
        }
        fmat_push_row(sparse, cols, vals, nz);
        double best = -INFINITY;
        for (size_t c = 0; c < k; c++) {
            double s = dense->x[i * d + c % d] * (c % 2 ? 1.5 : -1.0) + rng_normal(&r);
            if (s > best) {
                best = s;
                y[i] = (int)c;
            }
        }
    }
    free(cols);
    free(vals);
}

/* Four points per class on either side of the line x1 + x2 = 0. */
Test(linear, separable_two_class_points_are_predicted_right)
{
    static const double pts[8][2] = { { -2, -1 }, { -1, -2 }, { -1.5, -1.5 }, { -3, 0.5 },
                                      { 2, 1 },   { 1, 2 },   { 1.5, 1.5 },   { 0.5, -3 + 3.5 } };
    int y[8] = { 0, 0, 0, 0, 1, 1, 1, 1 };
    struct fmat X = FMAT_INIT;
    fmat_dense(&X, 8, 2);
    memcpy(X.x, pts, sizeof pts);
    struct linear_model m = LINEAR_MODEL_INIT;
    struct linear_params p = LINEAR_PARAMS_INIT;
    p.tol = 1e-10;
    struct err e = ERR_INIT;
    cr_assert_eq(linear_fit(&m, &X, y, 2, &p, &e), 0, "%s", e.msg);
    cr_assert(m.converged);
    for (size_t i = 0; i < 8; i++) {
        double pr[2];
        linear_proba(&m, &X, i, pr);
        cr_assert_float_eq(pr[0] + pr[1], 1.0, 1e-15);
        cr_assert_gt(pr[y[i]], 0.5, "row %zu: p = %g", i, pr[y[i]]);
    }
    /* With K = 2 and both rows penalised, the optimum is symmetric
     * (w_0 = -w_1, b_0 = -b_1 from a start whose intercepts sum to zero,
     * which linear_fit's does): derived in linear.h. */
    for (size_t j = 0; j < 2; j++)
        cr_assert_float_eq(m.W[j], -m.W[2 + j], 1e-9);
    cr_assert_float_eq(m.b[0], -m.b[1], 1e-9);
    cr_assert_float_eq(m.objective, linear_objective(&m, &X, y, &p), 1e-12);
    linear_release(&m);
    fmat_release(&X);
}

/* A model with weights 'scale' times standard normal and standard-normal
 * intercepts (release with linear_release). */
static struct linear_model random_model(size_t k, size_t d, double scale, uint64_t seed)
{
    struct rng r;
    rng_seed(&r, seed);
    struct linear_model m = { k, d, calloc(k * d, sizeof(double)), calloc(k, sizeof(double)), 0, 0, 0 };
    for (size_t j = 0; j < k * d; j++)
        m.W[j] = scale * rng_normal(&r);
    for (size_t c = 0; c < k; c++)
        m.b[c] = rng_normal(&r);
    return m;
}

/* Central differences (common practice: error O(h^2)) against the
 * analytic gradient at a random point. */
static void gradient_case(const struct fmat *X, const int *y, size_t k, int balanced)
{
    size_t d = X->d, n = k * d + k;
    struct linear_model m = random_model(k, d, 0.5, 99);
    struct linear_params p = LINEAR_PARAMS_INIT;
    p.C = 2.5;
    p.balanced = balanced;
    double *g = calloc(n, sizeof *g), *fd = calloc(n, sizeof *fd);
    double f = linear_gradient(&m, X, y, &p, g);
    cr_assert_float_eq(f, linear_objective(&m, X, y, &p), 1e-12 * fabs(f));
    const double h = 1e-5;
    for (size_t j = 0; j < n; j++) {
        double *t = j < k * d ? &m.W[j] : &m.b[j - k * d];
        double keep = *t;
        *t = keep + h;
        double fp = linear_objective(&m, X, y, &p);
        *t = keep - h;
        double fm = linear_objective(&m, X, y, &p);
        *t = keep;
        fd[j] = (fp - fm) / (2 * h);
    }
    double num = 0, den = 0;
    for (size_t j = 0; j < n; j++) {
        num += (fd[j] - g[j]) * (fd[j] - g[j]);
        den += g[j] * g[j];
    }
    cr_assert_lt(sqrt(num / den), 1e-6, "relative error %g (sparse=%d balanced=%d)",
                 sqrt(num / den), X->sparse, balanced);
    free(g);
    free(fd);
    linear_release(&m);
}

Test(linear, gradient_matches_central_differences_dense_and_sparse)
{
    /* K = 3, and K = 2, whose penalty is ||W||^2 (linear.h) */
    static const size_t ks[] = { 3, 2 };
    for (size_t a = 0; a < 2; a++) {
        struct fmat D = FMAT_INIT, S = FMAT_INIT;
        int y[40];
        random_problem(40, 6, ks[a], 5 + a, &D, &S, y);
        for (int bal = 0; bal < 2; bal++) {
            gradient_case(&D, y, ks[a], bal);
            gradient_case(&S, y, ks[a], bal);
        }
        fmat_release(&D);
        fmat_release(&S);
    }
}

Test(linear, sparse_and_dense_give_the_same_model)
{
    struct fmat D = FMAT_INIT, S = FMAT_INIT;
    int y[120];
    random_problem(120, 10, 4, 17, &D, &S, y);
    struct linear_model a = LINEAR_MODEL_INIT, b = LINEAR_MODEL_INIT;
    struct linear_params p = LINEAR_PARAMS_INIT;
    p.C = 0.7;
    struct err e = ERR_INIT;
    cr_assert_eq(linear_fit(&a, &D, y, 4, &p, &e), 0);
    cr_assert_eq(linear_fit(&b, &S, y, 4, &p, &e), 0);
    cr_assert(a.converged && b.converged);
    cr_assert_eq(a.iters, b.iters);
    for (size_t j = 0; j < 40; j++)
        cr_assert_float_eq(a.W[j], b.W[j], 1e-12);
    for (size_t c = 0; c < 4; c++)
        cr_assert_float_eq(a.b[c], b.b[c], 1e-12);
    linear_release(&a);
    linear_release(&b);
    fmat_release(&D);
    fmat_release(&S);
}

/* At the optimum dJ/db_k = C sum_i s_i (p_ik - [y_i = k]) = 0, so the
 * weighted mean probability of each class equals its weighted share:
 * 0.1 for a 10% class unweighted, 1/K = 0.5 with balanced weights.  And
 * dJ/dW = 0 gives sum_k w_k = 0.  (Both derived from the gradient in
 * linear.c; the usual calibration-in-the-large property of logistic
 * regression with an intercept.) */
Test(linear, balanced_weights_move_the_fit_as_the_optimality_conditions_say)
{
    const size_t n = 200;
    struct fmat D = FMAT_INIT;
    fmat_dense(&D, n, 2);
    int y[200];
    struct rng r;
    rng_seed(&r, 3);
    for (size_t i = 0; i < n; i++) {
        y[i] = i % 10 == 0;   /* class 1 is 10% of the rows */
        D.x[2 * i] = rng_normal(&r) + (y[i] ? 1.0 : 0.0);
        D.x[2 * i + 1] = rng_normal(&r);
    }
    struct linear_params p = LINEAR_PARAMS_INIT;
    p.tol = 1e-9;
    struct err e = ERR_INIT;
    double mean1[2];
    int hits1[2];
    for (int bal = 0; bal < 2; bal++) {
        p.balanced = bal;
        struct linear_model m = LINEAR_MODEL_INIT;
        cr_assert_eq(linear_fit(&m, &D, y, 2, &p, &e), 0);
        cr_assert(m.converged);
        double s1 = 0, wsum = 0;
        hits1[bal] = 0;
        for (size_t i = 0; i < n; i++) {
            double pr[2];
            linear_proba(&m, &D, i, pr);
            double w = bal ? (double)n / (2.0 * (y[i] ? 20 : 180)) : 1.0;
            s1 += w * pr[1];
            wsum += w;
            hits1[bal] += y[i] && pr[1] > 0.5;
        }
        mean1[bal] = s1 / wsum;
        cr_assert_float_eq(wsum, (double)n, 1e-9);
        for (size_t j = 0; j < 2; j++)
            cr_assert_float_eq(m.W[j] + m.W[2 + j], 0.0, 1e-7);
        linear_release(&m);
    }
    cr_assert_float_eq(mean1[0], 0.1, 1e-6, "unweighted mean p1 %g", mean1[0]);
    cr_assert_float_eq(mean1[1], 0.5, 1e-6, "balanced weighted mean p1 %g", mean1[1]);
    /* Up-weighting the rare class makes the model find more of it. */
    cr_assert_gt(hits1[1], hits1[0]);
    fmat_release(&D);
}

Test(linear, probabilities_stay_finite_for_huge_scores)
{
    double W[6] = { 1000, 0, 0, 0, -1000, 0 }, b[3] = { 0, 0, 0 };
    struct linear_model m = { 3, 2, W, b, 0, 1, 0 };
    struct fmat X = FMAT_INIT;
    fmat_dense(&X, 1, 2);
    X.x[0] = 1;
    double pr[3];
    linear_proba(&m, &X, 0, pr);
    cr_assert_eq(pr[0], 1.0);
    cr_assert_eq(pr[1], exp(-1000.0));
    cr_assert_eq(pr[2], 0.0);
    int y = 2;
    struct linear_params p = LINEAR_PARAMS_INIT;
    /* -log p_2 = 2000 + log(1 + e^-1000 + e^-2000), 0.5 ||W||^2 = 1e6 */
    cr_assert_float_eq(linear_objective(&m, &X, &y, &p), 1e6 + 2000.0, 1e-6);
    fmat_release(&X);
}

Test(linear, bad_input_is_an_error_not_a_crash)
{
    struct fmat X = FMAT_INIT;
    fmat_dense(&X, 3, 2);
    int y[3] = { 0, 1, 0 };
    struct linear_model m = LINEAR_MODEL_INIT;
    struct err e = ERR_INIT;
    cr_assert_eq(linear_fit(&m, &X, y, 1, NULL, &e), -1);
    cr_assert_eq(e.code, ERR_INPUT);
    cr_assert_str_eq(e.msg, "logistic regression needs at least 2 classes, got 1");

    err_clear(&e);
    X.x[3] = NAN;
    cr_assert_eq(linear_fit(&m, &X, y, 2, NULL, &e), -1);
    cr_assert(strstr(e.msg, "training row 2 ") != NULL, "%s", e.msg);
    X.x[3] = 0;

    err_clear(&e);
    struct linear_params p = LINEAR_PARAMS_INIT;
    p.C = 0;
    cr_assert_eq(linear_fit(&m, &X, y, 2, &p, &e), -1);
    cr_assert(strstr(e.msg, "C must be") != NULL, "%s", e.msg);
    cr_assert_null(m.W);
    fmat_release(&X);
}

Test(linear, label_outside_the_classes_is_a_programmer_error, .signal = SIGABRT)
{
    struct fmat X = FMAT_INIT;
    fmat_dense(&X, 2, 1);
    int y[2] = { 0, 2 };
    struct linear_model m = LINEAR_MODEL_INIT;
    struct err e = ERR_INIT;
    linear_fit(&m, &X, y, 2, NULL, &e);
}

Test(linear, max_iter_leaves_converged_zero)
{
    struct fmat D = FMAT_INIT, S = FMAT_INIT;
    int y[60];
    random_problem(60, 8, 3, 23, &D, &S, y);
    struct linear_model m = LINEAR_MODEL_INIT;
    struct linear_params p = LINEAR_PARAMS_INIT;
    p.max_iter = 2;
    p.C = 100;
    struct err e = ERR_INIT;
    cr_assert_eq(linear_fit(&m, &D, y, 3, &p, &e), 0);
    cr_assert_eq(m.converged, 0);
    cr_assert_eq(m.iters, 2);
    linear_release(&m);
    fmat_release(&D);
    fmat_release(&S);
}

/* The dense objective (linear.c's all-classes kernels) against the same
 * formula written with fmat_dot_k and fmat_gemm_tn: the kernels promise the
 * same operations in the same order, so the gradients must agree to the
 * last bit, for every K the kernels take (2..8), one past it (9, the
 * fmat path itself), and widths with and without a tail past a multiple
 * of four.  Unweighted, so s_i = 1. */
static void reference_gradient(const struct linear_model *m, const struct fmat *X, const int *y, double C, double *g)
{
    size_t k = m->k, d = m->d, n = X->n;
    double *R = calloc(n * k, sizeof *R), *z = calloc(k, sizeof *z);
    memset(g, 0, (k * d + k) * sizeof *g);
    for (size_t i = 0; i < n; i++) {
        fmat_dot_k(X, i, m->W, k, z);
        for (size_t c = 0; c < k; c++)
            z[c] += m->b[c];
        double mx = z[0], se = 0;
        for (size_t c = 1; c < k; c++)
            mx = z[c] > mx ? z[c] : mx;
        for (size_t c = 0; c < k; c++)
            z[c] -= mx;
        expv(z, k); /* the objective's exponential (expv.h) */
        for (size_t c = 0; c < k; c++)
            se += z[c];
        for (size_t c = 0; c < k; c++) {
            R[i * k + c] = 1.0 * (z[c] / se - (c == (size_t)y[i]));
            g[k * d + c] += R[i * k + c];
        }
    }
    fmat_gemm_tn(X, R, k, g);
    double pen2 = k == 2 ? 2.0 : 1.0; /* J's penalty is ||W||^2 for K = 2 (linear.h) */
    for (size_t j = 0; j < k * d; j++)
        g[j] = pen2 * m->W[j] + C * g[j];
    for (size_t c = 0; c < k; c++)
        g[k * d + c] *= C;
    free(R);
    free(z);
}

Test(linear, dense_kernels_match_the_fmat_products_bit_for_bit)
{
    static const size_t ks[] = { 2, 3, 5, 7, 8, 9 }, ds[] = { 4, 10, 13, 300 };
    for (size_t a = 0; a < sizeof ks / sizeof ks[0]; a++)
        for (size_t b = 0; b < sizeof ds / sizeof ds[0]; b++) {
            size_t k = ks[a], d = ds[b], n = 37;
            struct fmat D = FMAT_INIT, S = FMAT_INIT;
            int y[37];
            random_problem(n, d, k, 31 + k * d, &D, &S, y);
            struct linear_model m = random_model(k, d, 0.3, 7);
            struct linear_params p = LINEAR_PARAMS_INIT;
            p.C = 1.7;
            double *g = calloc(k * d + k, sizeof *g), *ref = calloc(k * d + k, sizeof *ref);
            linear_gradient(&m, &D, y, &p, g);
            reference_gradient(&m, &D, y, p.C, ref);
            cr_assert(memcmp(g, ref, (k * d + k) * sizeof *g) == 0, "K=%zu D=%zu: gradients differ", k, d);
            free(g);
            free(ref);
            linear_release(&m);
            fmat_release(&D);
            fmat_release(&S);
        }
}
