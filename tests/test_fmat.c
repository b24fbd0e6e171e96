/* test_fmat.c -- dense and sparse feature matrices agree on every operation.
 * Values are small hand-computed fixtures (worked by hand here). */
#include <criterion/criterion.h>
#include <stdint.h>

#include "vecsift/fmat.h"

/* The 3 x 4 matrix
 *     [1 0 2 0]
 *     [0 0 0 0]
 *     [0 3 0 -4]
 * in both layouts. */
static void build(struct fmat *dense, struct fmat *sparse)
{
    static const double full[3][4] = { { 1, 0, 2, 0 }, { 0, 0, 0, 0 }, { 0, 3, 0, -4 } };
    fmat_dense(dense, 3, 4);
    fmat_sparse(sparse, 4);
    for (size_t i = 0; i < 3; i++) {
        uint32_t cols[4];
        double vals[4];
        size_t nz = 0;
        for (size_t j = 0; j < 4; j++) {
            dense->x[i * 4 + j] = full[i][j];
            if (full[i][j] != 0) {
                cols[nz] = (uint32_t)j;
                vals[nz++] = full[i][j];
            }
        }
        fmat_push_row(sparse, cols, vals, nz);
    }
}

Test(fmat, dense_is_zeroed_and_shaped)
{
    struct fmat m = FMAT_INIT;
    fmat_dense(&m, 5, 7);
    cr_assert_eq(m.n, 5);
    cr_assert_eq(m.d, 7);
    cr_assert_eq(m.sparse, 0);
    for (size_t j = 0; j < 35; j++)
        cr_assert_eq(m.x[j], 0.0);
    fmat_release(&m);
    cr_assert_null(m.x);
    fmat_release(&m); /* twice is harmless */
}

Test(fmat, dot_and_axpy_by_hand_in_both_layouts)
{
    struct fmat d = FMAT_INIT, s = FMAT_INIT;
    build(&d, &s);
    const double w[4] = { 0.5, -1, 2, 0.25 };
    /* row 0: 1*0.5 + 2*2 = 4.5; row 1: 0; row 2: 3*(-1) + (-4)*0.25 = -4 */
    const double want[3] = { 4.5, 0, -4 };
    for (size_t i = 0; i < 3; i++) {
        cr_assert_float_eq(fmat_dot(&d, i, w), want[i], 1e-15);
        cr_assert_float_eq(fmat_dot(&s, i, w), want[i], 1e-15);
    }
    double yd[4] = { 1, 1, 1, 1 }, ys[4] = { 1, 1, 1, 1 };
    fmat_axpy(&d, 2, -0.5, yd);
    fmat_axpy(&s, 2, -0.5, ys);
    const double ywant[4] = { 1, -0.5, 1, 3 };
    for (size_t j = 0; j < 4; j++) {
        cr_assert_eq(yd[j], ywant[j]);
        cr_assert_eq(ys[j], ywant[j]);
    }
    cr_assert_eq(s.rowptr[3], 4);
    cr_assert_eq(fmat_nnz_row(&s, 1), 0);
    cr_assert_eq(fmat_nnz_row(&s, 2), 2);
    cr_assert_eq(fmat_row_values(&s, 2)[1], -4);
    cr_assert_eq(fmat_nnz_row(&d, 1), 4);
    cr_assert_eq(fmat_row_values(&d, 2)[3], -4);
    fmat_release(&d);
    fmat_release(&s);
}

Test(fmat, select_keeps_the_given_order_and_repeats)
{
    struct fmat d = FMAT_INIT, s = FMAT_INIT, d2 = FMAT_INIT, s2 = FMAT_INIT;
    build(&d, &s);
    const size_t rows[4] = { 2, 0, 2, 1 };
    fmat_select(&d2, &d, rows, 4);
    fmat_select(&s2, &s, rows, 4);
    cr_assert_eq(d2.n, 4);
    cr_assert_eq(s2.n, 4);
    cr_assert(s2.sparse);
    const double w[4] = { 1, 10, 100, 1000 };
    /* rows 2, 0, 2, 1 dotted with w: 30 - 4000, 1 + 200, 30 - 4000, 0 */
    const double want[4] = { -3970, 201, -3970, 0 };
    for (size_t i = 0; i < 4; i++) {
        cr_assert_eq(fmat_dot(&d2, i, w), want[i]);
        cr_assert_eq(fmat_dot(&s2, i, w), want[i]);
    }
    fmat_select(&s2, &s, rows, 0); /* replaces the old contents */
    cr_assert_eq(s2.n, 0);
    fmat_release(&d);
    fmat_release(&s);
    fmat_release(&d2);
    fmat_release(&s2);
}

Test(fmat, many_pushed_rows_keep_their_entries)
{
    struct fmat s = FMAT_INIT;
    fmat_sparse(&s, 1000);
    for (uint32_t i = 0; i < 3000; i++) {
        uint32_t cols[3] = { i % 997, i % 997 + 1, 999 };
        double vals[3] = { i, 1, -(double)i };
        fmat_push_row(&s, cols, vals, i % 4 == 0 ? 0 : 3);
    }
    cr_assert_eq(s.n, 3000);
    double w[1000];
    for (size_t j = 0; j < 1000; j++)
        w[j] = (double)j;
    for (uint32_t i = 0; i < 3000; i++) {
        double want = i % 4 == 0 ? 0 : (double)i * (i % 997) + (i % 997 + 1) - 999.0 * i;
        cr_assert_eq(fmat_dot(&s, i, w), want, "row %u", i);
    }
    fmat_release(&s);
}
