/* fmat.h -- a feature matrix, dense or sparse: what a classifier sees.
 *
 * N rows (texts) by D columns (features), doubles.  Dense: one row-major
 * slab.  Sparse: compressed rows (CSR) with sorted column indices, so the
 * bag-of-words baseline stays sparse end to end.  Plain struct: its fields
 * are the interface (STYLE C3).
 */
#ifndef VECSIFT_FMAT_H
#define VECSIFT_FMAT_H

#include <stddef.h>
#include <stdint.h>

struct fmat {
    size_t n, d;
    int sparse;
    double *x;        /* dense: (n, d) row-major */
    size_t *rowptr;   /* sparse: (n+1) */
    uint32_t *col;    /* sparse: (rowptr[n]) ascending within a row */
    double *val;      /* sparse: (rowptr[n]) */
    size_t nnz_cap;
};
#define FMAT_INIT { 0, 0, 0, NULL, NULL, NULL, NULL, 0 }

/* Allocate a zeroed dense n x d matrix (previous contents released). */
void fmat_dense(struct fmat *m, size_t n, size_t d);
/* Start an empty sparse matrix with d columns; add rows with fmat_push_row. */
void fmat_sparse(struct fmat *m, size_t d);
/* Append a sparse row (cols ascending). */
void fmat_push_row(struct fmat *m, const uint32_t *cols, const double *vals, size_t nnz);
void fmat_release(struct fmat *m);

/* Row i dotted with w (length d). */
double fmat_dot(const struct fmat *m, size_t i, const double *w);
/* y += a * row i (y has length d). */
void fmat_axpy(const struct fmat *m, size_t i, double a, double *y);
/* Row i against K weight rows at once, reading the row once:
 * z[c] = row i . W[c*d .. c*d+d) for c < k (W is (k, d) row-major).
 * Bit-identical to k calls of fmat_dot. */
void fmat_dot_k(const struct fmat *m, size_t i, const double *W, size_t k, double *z);
/* G[c*d .. c*d+d) += a[c] * row i for c < k (G is (k, d) row-major).
 * Bit-identical to k calls of fmat_axpy. */
void fmat_axpy_k(const struct fmat *m, size_t i, const double *a, size_t k, double *G);
/* G += R^T m: G[c*d + j] += sum_i R[i*k + c] * m[i][j], for R (n, k) and
 * G (k, d) row-major.  Each element receives the row terms in row order,
 * so it is bit-identical to fmat_axpy_k over the rows in turn. */
void fmat_gemm_tn(const struct fmat *m, const double *R, size_t k, double *G);
/* A new matrix holding rows[0..k) of 'src', in that order. */
void fmat_select(struct fmat *dst, const struct fmat *src, const size_t *rows, size_t k);

/* Stored entries of row i: its nnz when sparse, d when dense. */
size_t fmat_nnz_row(const struct fmat *m, size_t i);
/* Borrowed pointer to the fmat_nnz_row(m, i) stored values of row i (no
 * column indices): enough to check values without caring about the layout. */
const double *fmat_row_values(const struct fmat *m, size_t i);

#endif
