/* fmat.c -- feature matrices, dense (one row-major slab) or sparse (CSR).
 *
 * The two row operations a linear model needs, dot and axpy, are the hot
 * loops of fitting and prediction; both touch only the stored entries of a
 * sparse row.  This file does not scale, pool or read features: see
 * features.h for that.
 */
#include "vecsift/fmat.h"

#include <assert.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/xalloc.h"

void fmat_release(struct fmat *m)
{
    if (!m)
        return;
    free(m->x);
    free(m->rowptr);
    free(m->col);
    free(m->val);
    *m = (struct fmat)FMAT_INIT;
}

void fmat_dense(struct fmat *m, size_t n, size_t d)
{
    fmat_release(m);
    m->n = n;
    m->d = d;
    m->x = xcalloc(xmul(n, d), sizeof *m->x);
}

void fmat_sparse(struct fmat *m, size_t d)
{
    fmat_release(m);
    m->d = d;
    m->sparse = 1;
    m->rowptr = xcalloc(1, sizeof *m->rowptr);
}

void fmat_push_row(struct fmat *m, const uint32_t *cols, const double *vals, size_t nnz)
{
    assert(m->sparse);
    size_t at = m->rowptr[m->n];
    if (at + nnz > m->nnz_cap) {
        size_t cap = m->nnz_cap;
        m->col = xgrow(m->col, &cap, at + nnz, sizeof *m->col);
        m->val = xreallocarray(m->val, cap, sizeof *m->val);
        m->nnz_cap = cap;
    }
    for (size_t j = 0; j < nnz; j++) {
        assert(cols[j] < m->d);
        assert(j == 0 || cols[j] > cols[j - 1]);
        m->col[at + j] = cols[j];
        m->val[at + j] = vals[j];
    }
    /* rowptr holds n+1 entries in a power-of-two capacity (the struct keeps
     * no field for it): it is full exactly when n+1 is a power of two. */
    size_t used = m->n + 1;
    if ((used & (used - 1)) == 0)
        m->rowptr = xreallocarray(m->rowptr, xmul(used, 2), sizeof *m->rowptr);
    m->rowptr[m->n + 1] = at + nnz;
    m->n++;
}

double fmat_dot(const struct fmat *m, size_t i, const double *w)
{
    assert(i < m->n);
    double s = 0;
    if (m->sparse) {
        for (size_t p = m->rowptr[i]; p < m->rowptr[i + 1]; p++)
            s += m->val[p] * w[m->col[p]];
    } else {
        /* Four partial sums: without -ffast-math the compiler may not
         * reorder one running sum, and the add latency would bound the
         * loop.  Measured about 2x faster on 300 columns. */
        const double *x = m->x + i * m->d;
        double s1 = 0, s2 = 0, s3 = 0;
        size_t j = 0;
        for (; j + 4 <= m->d; j += 4) {
            s += x[j] * w[j];
            s1 += x[j + 1] * w[j + 1];
            s2 += x[j + 2] * w[j + 2];
            s3 += x[j + 3] * w[j + 3];
        }
        for (; j < m->d; j++)
            s += x[j] * w[j];
        s += s1 + s2 + s3;
    }
    return s;
}

void fmat_axpy(const struct fmat *m, size_t i, double a, double *y)
{
    assert(i < m->n);
    if (m->sparse) {
        for (size_t p = m->rowptr[i]; p < m->rowptr[i + 1]; p++)
            y[m->col[p]] += a * m->val[p];
    } else {
        const double *x = m->x + i * m->d;
        for (size_t j = 0; j < m->d; j++)
            y[j] += a * x[j];
    }
}

/* ---- K-row kernels ---- */

/* The K-row kernels below exist because a linear model over K classes
 * called fmat_dot and fmat_axpy K times per row, reading the row K times;
 * there the two calls took over half of a logistic regression fit.  Each
 * output element still receives the same additions in the same order as
 * the one-row calls, so results are bit-identical to them.
 *
 * They use two-lane vectors (GCC/Clang vector extension, SSE2 on x86-64,
 * lowered to scalar code elsewhere): at -O2 GCC 12 left the plain loops
 * scalar, even unrolled with restrict pointers.  Lane-wise IEEE operations
 * give the same results as the scalar ones; lanes 0..3 of a four-wide step
 * are fmat_dot's four partial sums. */
typedef double v2d __attribute__((vector_size(2 * sizeof(double))));

static inline v2d load2(const double *p)
{
    v2d v;
    memcpy(&v, p, sizeof v);
    return v;
}

static inline void store2(double *p, v2d v)
{
    memcpy(p, &v, sizeof v);
}

/* fmat_dot's sum for one weight row, from its partial sums a01, a23 (lanes
 * s, s1 and s2, s3) and the columns j..d it left to the scalar tail. */
static double dot_finish(v2d a01, v2d a23, const double *x, const double *w, size_t j, size_t d)
{
    double s = a01[0];
    for (; j < d; j++)
        s += x[j] * w[j];
    return s + (a01[1] + a23[0] + a23[1]);
}

/* z[0..4) = x . w_c for four weight rows at once. */
static void dot4(const double *x, const double *w0, const double *w1, const double *w2,
                 const double *w3, size_t d, double *z)
{
    v2d a0 = { 0, 0 }, b0 = a0, a1 = a0, b1 = a0, a2 = a0, b2 = a0, a3 = a0, b3 = a0;
    size_t j = 0;
    for (; j + 4 <= d; j += 4) {
        v2d xl = load2(x + j), xh = load2(x + j + 2);
        a0 += xl * load2(w0 + j);
        b0 += xh * load2(w0 + j + 2);
        a1 += xl * load2(w1 + j);
        b1 += xh * load2(w1 + j + 2);
        a2 += xl * load2(w2 + j);
        b2 += xh * load2(w2 + j + 2);
        a3 += xl * load2(w3 + j);
        b3 += xh * load2(w3 + j + 2);
    }
    z[0] = dot_finish(a0, b0, x, w0, j, d);
    z[1] = dot_finish(a1, b1, x, w1, j, d);
    z[2] = dot_finish(a2, b2, x, w2, j, d);
    z[3] = dot_finish(a3, b3, x, w3, j, d);
}

static double dot1(const double *x, const double *w, size_t d)
{
    v2d a = { 0, 0 }, b = a;
    size_t j = 0;
    for (; j + 4 <= d; j += 4) {
        a += load2(x + j) * load2(w + j);
        b += load2(x + j + 2) * load2(w + j + 2);
    }
    return dot_finish(a, b, x, w, j, d);
}

void fmat_dot_k(const struct fmat *m, size_t i, const double *W, size_t k, double *z)
{
    assert(i < m->n);
    size_t d = m->d;
    if (m->sparse) {
        for (size_t c = 0; c < k; c++)
            z[c] = 0;
        for (size_t p = m->rowptr[i]; p < m->rowptr[i + 1]; p++) {
            double v = m->val[p];
            const double *w = W + m->col[p];
            for (size_t c = 0; c < k; c++)
                z[c] += v * w[c * d];
        }
        return;
    }
    /* Four classes per pass: eight vector accumulators and the row's four
     * values fit the sixteen SSE registers. */
    const double *x = m->x + i * d;
    size_t c = 0;
    for (; c + 4 <= k; c += 4) {
        const double *w = W + c * d;
        dot4(x, w, w + d, w + 2 * d, w + 3 * d, d, z + c);
    }
    for (; c < k; c++)
        z[c] = dot1(x, W + c * d, d);
}

void fmat_axpy_k(const struct fmat *m, size_t i, const double *a, size_t k, double *G)
{
    assert(i < m->n);
    size_t d = m->d;
    if (m->sparse) {
        for (size_t p = m->rowptr[i]; p < m->rowptr[i + 1]; p++) {
            double v = m->val[p];
            double *g = G + m->col[p];
            for (size_t c = 0; c < k; c++)
                g[c * d] += a[c] * v;
        }
        return;
    }
    const double *x = m->x + i * d;
    for (size_t c = 0; c < k; c++) {
        double *g = G + c * d;
        v2d r = { a[c], a[c] };
        size_t j = 0;
        for (; j + 4 <= d; j += 4) {
            store2(g + j, load2(g + j) + r * load2(x + j));
            store2(g + j + 2, load2(g + j + 2) + r * load2(x + j + 2));
        }
        for (; j < d; j++)
            g[j] += a[c] * x[j];
    }
}

/* G[c0..c0+4) columns j..j+4 += sum_i R[i][c] X[i][j..j+4), rows in order,
 * the sixteen sums in eight vector registers. */
static void gemm_tn4(const struct fmat *m, const double *R, size_t k, size_t c0, size_t j, double *G)
{
    size_t d = m->d;
    double *g0 = G + c0 * d + j, *g1 = g0 + d, *g2 = g1 + d, *g3 = g2 + d;
    v2d l0 = load2(g0), h0 = load2(g0 + 2), l1 = load2(g1), h1 = load2(g1 + 2);
    v2d l2 = load2(g2), h2 = load2(g2 + 2), l3 = load2(g3), h3 = load2(g3 + 2);
    for (size_t i = 0; i < m->n; i++) {
        const double *x = m->x + i * d + j, *r = R + i * k + c0;
        v2d xl = load2(x), xh = load2(x + 2);
        v2d r0 = { r[0], r[0] }, r1 = { r[1], r[1] }, r2 = { r[2], r[2] }, r3 = { r[3], r[3] };
        l0 += r0 * xl;
        h0 += r0 * xh;
        l1 += r1 * xl;
        h1 += r1 * xh;
        l2 += r2 * xl;
        h2 += r2 * xh;
        l3 += r3 * xl;
        h3 += r3 * xh;
    }
    store2(g0, l0);
    store2(g0 + 2, h0);
    store2(g1, l1);
    store2(g1 + 2, h1);
    store2(g2, l2);
    store2(g2 + 2, h2);
    store2(g3, l3);
    store2(g3 + 2, h3);
}

/* As gemm_tn4 for the one class c. */
static void gemm_tn1(const struct fmat *m, const double *R, size_t k, size_t c, size_t j, double *G)
{
    size_t d = m->d;
    double *g = G + c * d + j;
    v2d l = load2(g), h = load2(g + 2);
    for (size_t i = 0; i < m->n; i++) {
        const double *x = m->x + i * d + j;
        v2d r = { R[i * k + c], R[i * k + c] };
        l += r * load2(x);
        h += r * load2(x + 2);
    }
    store2(g, l);
    store2(g + 2, h);
}

void fmat_gemm_tn(const struct fmat *m, const double *R, size_t k, double *G)
{
    if (m->sparse) {
        for (size_t i = 0; i < m->n; i++)
            fmat_axpy_k(m, i, R + i * k, k, G);
        return;
    }
    /* Blocks of four columns by four classes, each summed over all rows:
     * the row order per element is that of the row-by-row loop, but G's
     * block stays in registers instead of being loaded and stored for
     * every row.  Columns past the last whole block go row by row. */
    size_t d = m->d, j = 0;
    for (; j + 4 <= d; j += 4) {
        size_t c = 0;
        for (; c + 4 <= k; c += 4)
            gemm_tn4(m, R, k, c, j, G);
        for (; c < k; c++)
            gemm_tn1(m, R, k, c, j, G);
    }
    for (size_t i = 0; i < m->n && j < d; i++) {
        const double *x = m->x + i * d;
        for (size_t c = 0; c < k; c++)
            for (size_t jj = j; jj < d; jj++)
                G[c * d + jj] += R[i * k + c] * x[jj];
    }
}

void fmat_select(struct fmat *dst, const struct fmat *src, const size_t *rows, size_t k)
{
    assert(dst != src);
    if (!src->sparse) {
        fmat_dense(dst, k, src->d);
        for (size_t r = 0; r < k; r++) {
            assert(rows[r] < src->n);
            memcpy(dst->x + r * src->d, src->x + rows[r] * src->d, src->d * sizeof *src->x);
        }
        return;
    }
    fmat_sparse(dst, src->d);
    for (size_t r = 0; r < k; r++) {
        assert(rows[r] < src->n);
        size_t p = src->rowptr[rows[r]];
        fmat_push_row(dst, src->col + p, src->val + p, src->rowptr[rows[r] + 1] - p);
    }
}

size_t fmat_nnz_row(const struct fmat *m, size_t i)
{
    assert(i < m->n);
    return m->sparse ? m->rowptr[i + 1] - m->rowptr[i] : m->d;
}

const double *fmat_row_values(const struct fmat *m, size_t i)
{
    assert(i < m->n);
    return m->sparse ? m->val + m->rowptr[i] : m->x + i * m->d;
}
