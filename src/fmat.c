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
