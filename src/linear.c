/* linear.c -- multinomial logistic regression with an L2 penalty.
 *
 * The model is the multinomial logit (softmax) regression; see e.g.
 * C. M. Bishop, "Pattern Recognition and Machine Learning" (Springer,
 * 2006), section 4.3.4, for the gradient used here:
 *     dJ/dw_k = w_k + C sum_i s_i (p_ik - [y_i = k]) x_i   (2 w_k when K = 2),
 *     dJ/db_k =       C sum_i s_i (p_ik - [y_i = k]).
 * The objective is written out in linear.h.  Minimisation is L-BFGS
 * (lbfgs.c).  One pass over the rows computes the value and the gradient
 * together; sparse rows cost only their stored entries (fmat.h).
 */
#include "vecsift/linear.h"

#include <assert.h>
#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/err.h"
#include "vecsift/expv.h"
#include "vecsift/fmat.h"
#include "vecsift/lbfgs.h"
#include "vecsift/xalloc.h"
#include "vec4.h"

/* ---- the objective ---- */

/* Per-row weights s_i (N): 1, or N / (K_present N_{y_i}) when balanced
 * (the "balanced" heuristic of King and Zeng, 2001, "Logistic Regression
 * in Rare Events Data", as scikit-learn defines it). */
static double *row_weights(const int *y, size_t n, size_t k, int balanced)
{
    double *s = xcalloc(n, sizeof *s);
    if (!balanced) {
        for (size_t i = 0; i < n; i++)
            s[i] = 1;
        return s;
    }
    size_t *cnt = xcalloc(k, sizeof *cnt), present = 0;
    for (size_t i = 0; i < n; i++) {
        assert(y[i] >= 0 && (size_t)y[i] < k);
        cnt[y[i]]++;
    }
    for (size_t c = 0; c < k; c++)
        present += cnt[c] > 0;
    for (size_t i = 0; i < n; i++)
        s[i] = (double)n / ((double)present * (double)cnt[y[i]]);
    free(cnt);
    return s;
}

/* z[c] -= max_c z[c] (K), so exp() of the result cannot overflow;
 * returns the maximum. */
static double shift_by_max(double *z, size_t k)
{
    double mx = z[0];
    for (size_t c = 1; c < k; c++)
        if (z[c] > mx)
            mx = z[c];
    for (size_t c = 0; c < k; c++)
        z[c] -= mx;
    return mx;
}

/* z <- softmax(z) in place (K), shifted by the largest score first;
 * returns log sum_c exp(z_c) of the input scores.  The exponentials are
 * expv's (the same bits on every CPU), as in the objective's batched
 * softmax below, so a model's probabilities are the ones it was trained
 * with. */
static double softmax_inplace(double *z, size_t k)
{
    double mx = shift_by_max(z, k);
    expv(z, k);
    double se = 0;
    for (size_t c = 0; c < k; c++)
        se += z[c];
    for (size_t c = 0; c < k; c++)
        z[c] /= se;
    return mx + log(se);
}

/* ---- dense kernels ----
 *
 * For a dense X with at most KMAX classes, the two products of the
 * objective, Z = X W^T and G = R^T X, each read X once with all K classes
 * at once; fmat_dot_k and fmat_gemm_tn block classes by four, so K = 7
 * reads X four times (a block of four and three single classes), and the
 * single-class passes took half of their time in the profile of
 * `evaluate`.  Each output element gets the same operations in the same
 * order as in those fmat functions, so results are bit-identical to them
 * (test_linear.c checks this): a score is fmat_dot's four partial sums
 * over columns j mod 4 (the four lanes), finished as s0 + tail +
 * (s1 + s2 + s3); a gradient element is summed over the rows in order.
 *
 * Four-lane vectors from vec4.h; the AVX2 and plain copies give the same
 * bits. */
#define KMAX 8

/* z[c] = x . W_c for c < K (K a constant once inlined, so acc[] lives in
 * registers). */
static inline __attribute__((always_inline)) void scores_row(const double *x, const double *W, size_t d,
                                                             size_t K, double *z)
{
    v4d acc[KMAX];
    VEC4_UNROLL
    for (size_t c = 0; c < K; c++)
        acc[c] = (v4d){ 0, 0, 0, 0 };
    size_t j = 0;
    for (; j + 4 <= d; j += 4) {
        v4d xv, wv;
        VEC4_LOAD(xv, x + j);
        VEC4_UNROLL
        for (size_t c = 0; c < K; c++) {
            VEC4_LOAD(wv, W + c * d + j);
            acc[c] += xv * wv;
        }
    }
    VEC4_UNROLL
    for (size_t c = 0; c < K; c++) {
        double s = acc[c][0];
        for (size_t t = j; t < d; t++)
            s += x[t] * W[c * d + t];
        z[c] = s + (acc[c][1] + acc[c][2] + acc[c][3]);
    }
}

/* G += R^T X for X given as 'XP', its whole four-column blocks packed
 * one after the other ((d / 4, n, 4): block b holds X[i][4b .. 4b+4) for
 * every row in turn), plus the row-major X for the d mod 4 columns left.
 * Per block, the K accumulators stay in registers over all rows, and the
 * block is read front to back: on the row-major slab the same loop read
 * 32 bytes per 2400-byte row and waited on memory for most of its time.
 * Every element receives the rows in order. */
static inline __attribute__((always_inline)) void gemm_tn_packed(const double *XP, const double *X, size_t n,
                                                                 size_t d, const double *R, size_t K, double *G)
{
    size_t j = 0;
    for (; j + 4 <= d; j += 4) {
        const double *xb = XP + j * n;
        v4d acc[KMAX];
        VEC4_UNROLL
        for (size_t c = 0; c < K; c++)
            VEC4_LOAD(acc[c], G + c * d + j);
        for (size_t i = 0; i < n; i++) {
            v4d xv;
            VEC4_LOAD(xv, xb + 4 * i);
            const double *r = R + i * K;
            VEC4_UNROLL
            for (size_t c = 0; c < K; c++)
                acc[c] += VEC4_SPLAT(r[c]) * xv;
        }
        VEC4_UNROLL
        for (size_t c = 0; c < K; c++)
            VEC4_STORE(G + c * d + j, acc[c]);
    }
    for (size_t i = 0; i < n && j < d; i++)
        for (size_t c = 0; c < K; c++)
            for (size_t t = j; t < d; t++)
                G[c * d + t] += R[i * K + c] * X[i * d + t];
}

/* The packed copy of X that gemm_tn_packed reads: (d / 4) * n * 4
 * doubles, owned by the caller. */
static double *pack_blocks(const double *X, size_t n, size_t d)
{
    size_t nb = d / 4;
    double *XP = xmalloc(xmul(xmul(nb ? nb : 1, n), 4 * sizeof *XP));
    for (size_t b = 0; b < nb; b++)
        for (size_t i = 0; i < n; i++)
            memcpy(XP + (b * n + i) * 4, X + i * d + 4 * b, 4 * sizeof *XP);
    return XP;
}

/* One case per K in [2, KMAX], so each kernel sees K as a constant. */
#define K_CASES(CALL) \
    case 2: CALL(2); break; \
    case 3: CALL(3); break; \
    case 4: CALL(4); break; \
    case 5: CALL(5); break; \
    case 6: CALL(6); break; \
    case 7: CALL(7); break; \
    case 8: CALL(8); break

/* Z (n, K) = X W^T, row by row. */
VEC4_CLONES static void dense_scores(const double *X, size_t n, size_t d, const double *W, size_t k, double *Z)
{
#define SCORES(K) for (size_t i = 0; i < n; i++) scores_row(X + i * d, W, d, K, Z + i * (K))
    switch (k) {
        K_CASES(SCORES);
    default: assert(0);
    }
#undef SCORES
}

VEC4_CLONES static void dense_gemm_tn(const double *XP, const double *X, size_t n, size_t d, const double *R,
                                      size_t k, double *G)
{
#define GEMM(K) gemm_tn_packed(XP, X, n, d, R, K, G)
    switch (k) {
        K_CASES(GEMM);
    default: assert(0);
    }
#undef GEMM
}

struct problem {
    const struct fmat *X;
    const int *y;
    const double *s;   /* (N) row weights */
    size_t k, d;
    double C;
    double pen;        /* J's penalty is pen * ||W||^2: 0.5, or 1 when K = 2 (linear.h) */
    double scale;      /* L-BFGS sees J * scale */
    double *mx, *zy;   /* (N) scratch: each row's largest score, its label's score */
    double *R;         /* (N, K) scratch: s_i (p_ik - [y_i = k]) */
    double *XP;        /* dense X with K <= KMAX: its packed copy, else NULL */
};

/* The factor of ||W||^2 in J (linear.h): 0.5, and 1 for K = 2, where the
 * two rows' optimum is w_1 = -w_0, so ||W||^2 = 0.5 |w_1 - w_0|^2 and J is
 * the binary (sigmoid) objective 0.5 |delta|^2 + C sum loss. */
static double penalty_factor(size_t k)
{
    return k == 2 ? 1.0 : 0.5;
}

/* P's scratch (mx, zy, R, and XP for a dense X with K <= KMAX), from its
 * X and k; problem_release frees it. */
static void problem_scratch(struct problem *P)
{
    const struct fmat *X = P->X;
    P->mx = xcalloc(X->n ? X->n : 1, sizeof *P->mx);
    P->zy = xcalloc(X->n ? X->n : 1, sizeof *P->zy);
    P->R = xcalloc(xmul(X->n, P->k), sizeof *P->R);
    if (!X->sparse && P->k <= KMAX)
        P->XP = pack_blocks(X->x, X->n, P->d);
}

static void problem_release(struct problem *P)
{
    free(P->R);
    free(P->XP);
    free(P->mx);
    free(P->zy);
}

/* J at theta = [W (K*D), b (K)]; grad (same layout) is filled. */
static double objective(struct problem *P, const double *theta, double *grad)
{
    size_t k = P->k, d = P->d, kd = k * d;
    const double *W = theta, *b = theta + kd;
    double *gW = grad, *gb = grad + kd;
    memset(grad, 0, (kd + k) * sizeof *grad);
    double loss = 0;
    const struct fmat *X = P->X;
    size_t n = X->n;
    int fast = P->XP != NULL;
    /* The softmax of every row at once: all scores into R, each row less
     * its largest score, then one expv over the whole of R (the calls to
     * exp() one at a time were a tenth of `evaluate`'s time). */
    if (fast)
        dense_scores(X->x, n, d, W, k, P->R);
    for (size_t i = 0; i < n; i++) {
        double *z = P->R + i * k;
        if (!fast) /* all K scores per pass over row i */
            fmat_dot_k(X, i, W, k, z);
        int yi = P->y[i];
        assert(yi >= 0 && (size_t)yi < k);
        for (size_t c = 0; c < k; c++)
            z[c] += b[c];
        P->zy[i] = z[yi];
        P->mx[i] = shift_by_max(z, k);
    }
    expv(P->R, n * k);
    for (size_t i = 0; i < n; i++) {
        double *r = P->R + i * k, se = 0;
        for (size_t c = 0; c < k; c++)
            se += r[c];
        int yi = P->y[i];
        loss += P->s[i] * ((P->mx[i] + log(se)) - P->zy[i]);
        for (size_t c = 0; c < k; c++) {
            r[c] = P->s[i] * (r[c] / se - (c == (size_t)yi));
            gb[c] += r[c];
        }
    }
    /* The residuals first, then G = R^T X in one blocked pass: the same
     * sums in the same order as adding each row's K gradient rows in turn,
     * with the gradient block held in registers. */
    if (fast)
        dense_gemm_tn(P->XP, X->x, X->n, d, P->R, k, gW);
    else
        fmat_gemm_tn(X, P->R, k, gW);
    double ww = 0, pen2 = 2 * P->pen; /* 1 for K > 2: the same bits as W[j] */
    for (size_t j = 0; j < kd; j++) {
        ww += W[j] * W[j];
        gW[j] = pen2 * W[j] + P->C * gW[j];
    }
    for (size_t c = 0; c < k; c++)
        gb[c] *= P->C;
    return P->pen * ww + P->C * loss;
}

static double objective_scaled(void *ctx, const double *theta, double *grad)
{
    struct problem *P = ctx;
    double f = objective(P, theta, grad);
    size_t n = P->k * P->d + P->k;
    for (size_t j = 0; j < n; j++)
        grad[j] *= P->scale;
    return f * P->scale;
}

/* The intercepts of the model without features, into b (K): b_c the log
 * of class c's (weighted, by s) share of the n rows, less their mean.
 * They minimise J over b alone since the penalty leaves b free, and
 * linear_fit starts there with W = 0 (starting a likelihood fit at the
 * null model is common practice for generalised linear models).  They sum
 * to zero, as b = 0 does: the gradient's b part sums to zero over the
 * classes, so the sum stays where it starts, and softmax ignores it.
 * Only the fit's own rows count, so nothing from held-out rows enters;
 * the minimum is the same, reached in about 5% fewer evaluations on the
 * demo inbox than from b = 0.  A class without rows gets 0. */
static void null_intercepts(const int *y, const double *s, size_t n, size_t k, double ssum, double *b)
{
    double *share = xcalloc(k, sizeof *share), lsum = 0;
    size_t present = 0;
    for (size_t i = 0; i < n; i++)
        share[y[i]] += s[i];
    for (size_t c = 0; c < k; c++)
        if (share[c] > 0) {
            lsum += log(share[c] / ssum);
            present++;
        }
    for (size_t c = 0; c < k; c++)
        b[c] = share[c] > 0 ? log(share[c] / ssum) - lsum / (double)present : 0;
    free(share);
}

/* ---- API ---- */

void linear_release(struct linear_model *m)
{
    if (!m)
        return;
    free(m->W);
    free(m->b);
    *m = (struct linear_model)LINEAR_MODEL_INIT;
}

int linear_fit(struct linear_model *m, const struct fmat *X, const int *y, size_t k,
               const struct linear_params *p, struct err *e)
{
    static const struct linear_params defaults = LINEAR_PARAMS_INIT;
    if (!p)
        p = &defaults;
    linear_release(m);
    if (k < 2)
        return err_set(e, NULL, 0, "logistic regression needs at least 2 classes, got %zu", k);
    if (X->n == 0)
        return err_set(e, NULL, 0, "no training rows");
    if (!(p->C > 0) || !isfinite(p->C))
        return err_set(e, NULL, 0, "C must be a positive number, got %g", p->C);
    for (size_t i = 0; i < X->n; i++) {
        const double *v = fmat_row_values(X, i);
        size_t nz = fmat_nnz_row(X, i);
        for (size_t j = 0; j < nz; j++)
            if (!isfinite(v[j]))
                return err_set(e, NULL, 0, "training row %zu has a feature that is not a finite number (%g)",
                               i + 1, v[j]);
    }

    /* Labels outside [0, k) are the caller's bug: asserted here, before
     * anything is allocated (an abort then leaks nothing). */
    for (size_t i = 0; i < X->n; i++)
        assert(y[i] >= 0 && (size_t)y[i] < k);
    size_t d = X->d, n = xmul(k, d) + k;
    double *theta = xcalloc(n, sizeof *theta);
    double *s = row_weights(y, X->n, k, p->balanced);
    double ssum = 0;
    for (size_t i = 0; i < X->n; i++)
        ssum += s[i];
    null_intercepts(y, s, X->n, k, ssum, theta + k * d);
    struct problem P = { X, y, s, k, d, p->C, penalty_factor(k), 1.0 / (p->C * ssum), NULL, NULL, NULL, NULL };
    problem_scratch(&P);

    /* ftol: stop once the relative decrease is a few dozen ulps, where the
     * value carries no more information (64 * DBL_EPSILON; the choice
     * scikit-learn passes to SciPy, from memory). */
    struct lbfgs_params lp = LBFGS_PARAMS_INIT;
    lp.max_iter = p->max_iter;
    lp.gtol = p->tol;
    lp.ftol = 64 * DBL_EPSILON;
    struct lbfgs_result r;
    lbfgs_minimize(n, theta, objective_scaled, &P, &lp, &r);

    m->k = k;
    m->d = d;
    m->W = xcalloc(xmul(k, d), sizeof *m->W);
    m->b = xcalloc(k, sizeof *m->b);
    memcpy(m->W, theta, k * d * sizeof *m->W);
    memcpy(m->b, theta + k * d, k * sizeof *m->b);
    m->iters = r.iters;
    m->converged = r.converged;
    m->objective = r.f / P.scale;
    problem_release(&P);
    free(s);
    free(theta);
    return 0;
}

void linear_scores(const struct linear_model *m, const struct fmat *X, size_t i, double *z)
{
    assert(X->d == m->d);
    fmat_dot_k(X, i, m->W, m->k, z);
    for (size_t c = 0; c < m->k; c++)
        z[c] += m->b[c];
}

void linear_proba(const struct linear_model *m, const struct fmat *X, size_t i, double *p)
{
    linear_scores(m, X, i, p);
    softmax_inplace(p, m->k);
}

double linear_gradient(const struct linear_model *m, const struct fmat *X, const int *y,
                       const struct linear_params *p, double *grad)
{
    assert(X->d == m->d);
    size_t k = m->k, d = m->d;
    double *theta = xcalloc(k * d + k, sizeof *theta);
    memcpy(theta, m->W, k * d * sizeof *theta);
    memcpy(theta + k * d, m->b, k * sizeof *theta);
    double *s = row_weights(y, X->n, k, p->balanced);
    struct problem P = { X, y, s, k, d, p->C, penalty_factor(k), 1, NULL, NULL, NULL, NULL };
    problem_scratch(&P);
    double f = objective(&P, theta, grad);
    problem_release(&P);
    free(s);
    free(theta);
    return f;
}

double linear_objective(const struct linear_model *m, const struct fmat *X, const int *y,
                        const struct linear_params *p)
{
    double *grad = xcalloc(m->k * m->d + m->k, sizeof *grad);
    double f = linear_gradient(m, X, y, p, grad);
    free(grad);
    return f;
}
