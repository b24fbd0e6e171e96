/* test_folds.c -- fold assignment: partition, stratification, groups,
 * determinism, errors.  The properties checked are the definition of
 * stratified k-fold cross-validation (common practice; Kohavi 1995, "A study
 * of cross-validation and bootstrap for accuracy estimation and model
 * selection", recommends stratification).
 */
#include <criterion/criterion.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/err.h"
#include "vecsift/folds.h"
#include "vecsift/rng.h"

/* An invented, unbalanced set: 4 labels with 37, 11, 5 and 23 rows, in an
 * interleaved order. */
#define N 76
#define K 4
static int labels[N];
static void make_labels(void)
{
    int want[K] = { 37, 11, 5, 23 };
    int i = 0;
    while (i < N)
        for (int j = 0; j < K && i < N; j++)
            if (want[j] > 0) {
                want[j]--;
                labels[i++] = j;
            }
}

Test(folds, stratified_folds_partition_rows_and_keep_proportions)
{
    make_labels();
    struct rng seed;
    rng_seed(&seed, 2026);
    struct folds f = FOLDS_INIT;
    struct err e = ERR_INIT;
    const int k = 5;
    cr_assert_eq(folds_make(&f, labels, N, K, NULL, k, 3, &seed, &e), 0, "%s", e.msg);
    size_t tot[K] = { 0 };
    for (size_t i = 0; i < N; i++)
        tot[labels[i]]++;
    for (size_t r = 0; r < 3; r++) {
        const int *fr = folds_repeat(&f, r);
        size_t cnt[5][K];
        size_t size[5] = { 0 };
        memset(cnt, 0, sizeof cnt);
        for (size_t i = 0; i < N; i++) {
            cr_assert(fr[i] >= 0 && fr[i] < k);   /* every row in exactly one fold */
            cnt[fr[i]][labels[i]]++;
            size[fr[i]]++;
        }
        for (int q = 0; q < k; q++) {
            cr_assert_gt(size[q], 0);
            /* Every fold's label count is within one row of n_j/k. */
            for (int j = 0; j < K; j++)
                cr_assert_lt(fabs((double)cnt[q][j] - (double)tot[j] / k), 1.0,
                             "repeat %zu fold %d label %d: %zu rows, %zu/%d expected",
                             r, q, j, cnt[q][j], tot[j], k);
        }
    }
    folds_release(&f);
    cr_assert_null(f.fold);
}

Test(folds, same_seed_same_folds_and_repeats_differ)
{
    make_labels();
    struct rng s1, s2;
    rng_seed(&s1, 9);
    rng_seed(&s2, 9);
    struct folds a = FOLDS_INIT, b = FOLDS_INIT, c = FOLDS_INIT;
    struct err e = ERR_INIT;
    cr_assert_eq(folds_make(&a, labels, N, K, NULL, 4, 2, &s1, &e), 0);
    cr_assert_eq(folds_make(&b, labels, N, K, NULL, 4, 2, &s2, &e), 0);
    cr_assert_eq(memcmp(a.fold, b.fold, 2 * N * sizeof(int)), 0);
    cr_assert_neq(memcmp(folds_repeat(&a, 0), folds_repeat(&a, 1), N * sizeof(int)), 0);
    /* Repeat 0 does not depend on how many repeats were asked for. */
    cr_assert_eq(folds_make(&c, labels, N, K, NULL, 4, 1, &s1, &e), 0);
    cr_assert_eq(memcmp(a.fold, c.fold, N * sizeof(int)), 0);
    struct rng s3;
    rng_seed(&s3, 10);
    folds_release(&c);
    cr_assert_eq(folds_make(&c, labels, N, K, NULL, 4, 1, &s3, &e), 0);
    cr_assert_neq(memcmp(a.fold, c.fold, N * sizeof(int)), 0);
    folds_release(&a);
    folds_release(&b);
    folds_release(&c);
}

Test(folds, too_small_label_is_named_with_its_count_and_a_hint)
{
    make_labels();
    const char *names[K] = { "billing", "login", "refunds", "shipping" };
    struct rng seed;
    rng_seed(&seed, 1);
    struct folds f = FOLDS_INIT;
    struct err e = ERR_INIT;
    cr_assert_eq(folds_make(&f, labels, N, K, names, 6, 1, &seed, &e), -1);
    cr_assert_str_eq(e.msg, "label 'refunds' has 5 rows, fewer than the 6 folds");
    cr_assert_str_eq(e.hint, "lower --folds to 5 or fewer, or merge 'refunds' into another label");
    cr_assert_null(f.fold);
}

Test(folds, bad_fold_counts_and_single_label_are_errors)
{
    make_labels();
    struct rng seed;
    rng_seed(&seed, 1);
    struct folds f = FOLDS_INIT;
    struct err e = ERR_INIT;
    cr_assert_eq(folds_make(&f, labels, N, K, NULL, 1, 1, &seed, &e), -1);
    cr_assert_str_eq(e.msg, "number of folds must be at least 2, got 1");
    err_clear(&e);
    cr_assert_eq(folds_make(&f, labels, 3, K, NULL, 4, 1, &seed, &e), -1);
    cr_assert_str_eq(e.msg, "4 folds need at least 4 rows, the data has 3");
    err_clear(&e);
    int same[10] = { 0 };
    cr_assert_eq(folds_make(&f, same, 10, 2, NULL, 2, 1, &seed, &e), -1);
    cr_assert_str_eq(e.msg, "the data has only one label; cross-validation needs at least two");
    err_clear(&e);
    int bad[4] = { 0, 1, 2, 1 };
    cr_assert_eq(folds_make(&f, bad, 4, 2, NULL, 2, 1, &seed, &e), -1);
    cr_assert_str_eq(e.msg, "row 2: label index 2 is outside [0, 2)");
}

Test(folds, groups_are_never_split_and_folds_stay_balanced)
{
    /* 60 invented tickets in 17 conversation threads of 1-7 rows; a thread's
     * rows share a label except thread 3 (mixed). */
    int lab[60], grp[60];
    int sizes[17] = { 7, 6, 5, 5, 4, 4, 4, 3, 3, 3, 3, 3, 2, 2, 2, 2, 2 };
    int i = 0;
    for (int g = 0; g < 17; g++)
        for (int t = 0; t < sizes[g]; t++, i++) {
            grp[i] = g;
            lab[i] = g == 3 ? t % 2 : g % 3;
        }
    cr_assert_eq(i, 60);
    struct rng seed;
    rng_seed(&seed, 77);
    struct folds f = FOLDS_INIT;
    struct err e = ERR_INIT;
    cr_assert_eq(folds_make_grouped(&f, lab, grp, 60, 3, 17, NULL, 4, 2, &seed, &e), 0, "%s", e.msg);
    for (size_t r = 0; r < 2; r++) {
        const int *fr = folds_repeat(&f, r);
        int gf[17];
        for (int g = 0; g < 17; g++)
            gf[g] = -1;
        size_t size[4] = { 0 };
        for (int t = 0; t < 60; t++) {
            cr_assert(fr[t] >= 0 && fr[t] < 4);
            if (gf[grp[t]] < 0)
                gf[grp[t]] = fr[t];
            cr_assert_eq(gf[grp[t]], fr[t], "group %d split", grp[t]);
            size[fr[t]]++;
        }
        /* 60 rows in 4 folds: greedy balancing keeps every fold within a
         * group's size (at most 7) of 15 rows. */
        for (int q = 0; q < 4; q++)
            cr_assert(size[q] >= 8 && size[q] <= 22, "fold %d has %zu rows", q, size[q]);
    }
    folds_release(&f);
    err_clear(&e);
    cr_assert_eq(folds_make_grouped(&f, lab, grp, 60, 3, 17, NULL, 18, 1, &seed, &e), -1);
}

Test(folds, subsample_is_stratified_and_seeded)
{
    make_labels();
    size_t rows[N], out1[N], out2[N];
    for (size_t i = 0; i < N; i++)
        rows[i] = i;
    struct rng r1, r2;
    rng_seed(&r1, 4);
    rng_seed(&r2, 4);
    struct err e = ERR_INIT;
    size_t m1 = folds_subsample(rows, N, labels, K, 0.4, &r1, out1, &e);
    size_t m2 = folds_subsample(rows, N, labels, K, 0.4, &r2, out2, &e);
    /* round(0.4 * 37) + round(0.4 * 11) + round(0.4 * 5) + round(0.4 * 23) = 15 + 4 + 2 + 9 */
    cr_assert_eq(m1, 30);
    cr_assert_eq(m1, m2);
    cr_assert_eq(memcmp(out1, out2, m1 * sizeof *out1), 0);
    size_t cnt[K] = { 0 };
    for (size_t t = 0; t < m1; t++) {
        if (t)
            cr_assert_lt(out1[t - 1], out1[t]);
        cnt[labels[out1[t]]]++;
    }
    cr_assert_eq(cnt[0], 15);
    cr_assert_eq(cnt[2], 2);
    cr_assert_eq(folds_subsample(rows, N, labels, K, 1.5, &r1, out1, &e), 0);
    cr_assert_str_eq(e.msg, "subsample fraction must be in (0, 1], got 1.5");
}
