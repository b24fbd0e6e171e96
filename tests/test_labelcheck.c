/* test_labelcheck.c -- the confident-learning audit (Northcutt, Jiang and
 * Chuang 2021, JAIR 70) on hand-made probabilities, worked by hand below.
 */
#include <criterion/criterion.h>
#include <math.h>

#include "vecsift/err.h"
#include "vecsift/labelcheck.h"

static const struct labelcheck_opts diag_margin = { LABELCHECK_OFF_DIAGONAL, LABELCHECK_BY_MARGIN };
static const struct labelcheck_opts diag_confidence = { LABELCHECK_OFF_DIAGONAL, LABELCHECK_BY_CONFIDENCE };

/* Invented out-of-fold probabilities for three queues (0 billing, 1 login,
 * 2 shipping).  Rows 3 and 9 are clearly mislabelled; row 12 is a milder case.
 *
 *   thresholds (mean own-label probability over rows given the label):
 *     t0 = (0.8 + 0.7 + 0.9 + 0.05) / 4        = 0.6125
 *     t1 = (0.8 + 0.7 + 0.85 + 0.4 + 0.35) / 5 = 0.62
 *     t2 = (0.8 + 0.8 + 0.10 + 0.6) / 4        = 0.575
 *   row 3  (given 0): only p1 = 0.9 >= t1        -> counted at [0][1], margin 0.9 - 0.05 = 0.85
 *   row 9  (given 2): only p0 = 0.85 >= t0       -> [2][0], margin 0.85 - 0.10 = 0.75
 *   row 12 (given 1): only p0 = 0.62 >= t0       -> [1][0], margin 0.62 - 0.35 = 0.27
 *   row 10 (given 1): no label reaches its threshold -> not counted
 *   every other row is counted on the diagonal.
 *   joint = [[3 1 0] [1 3 0] [1 0 3]]
 */
static const double P[13][3] = {
    { 0.80, 0.10, 0.10 }, { 0.70, 0.20, 0.10 }, { 0.90, 0.05, 0.05 }, { 0.05, 0.90, 0.05 },
    { 0.10, 0.80, 0.10 }, { 0.20, 0.70, 0.10 }, { 0.10, 0.85, 0.05 },
    { 0.10, 0.10, 0.80 }, { 0.05, 0.15, 0.80 }, { 0.85, 0.05, 0.10 },
    { 0.30, 0.40, 0.30 }, { 0.20, 0.20, 0.60 }, { 0.62, 0.35, 0.03 },
};
static const int given[13] = { 0, 0, 0, 0, 1, 1, 1, 2, 2, 2, 1, 2, 1 };

Test(labelcheck, clearly_mislabelled_rows_come_first)
{
    struct labelcheck_result r = LABELCHECK_RESULT_INIT;
    struct err e = ERR_INIT;
    cr_assert_eq(labelcheck_run(&P[0][0], given, 13, 3, &diag_margin, &r, &e), 0, "%s", e.msg);
    cr_assert_float_eq(r.threshold[0], 0.6125, 1e-15);
    cr_assert_float_eq(r.threshold[1], 0.62, 1e-15);
    cr_assert_float_eq(r.threshold[2], 0.575, 1e-15);
    size_t joint[9] = { 3, 1, 0, 1, 3, 0, 1, 0, 3 };
    for (int t = 0; t < 9; t++)
        cr_assert_eq(r.joint[t], joint[t], "joint[%d]", t);
    cr_assert_eq(r.n_suspects, 3);
    cr_assert_eq(r.suspect[0].row, 3);
    cr_assert_eq(r.suspect[0].given, 0);
    cr_assert_eq(r.suspect[0].suggested, 1);
    cr_assert_float_eq(r.suspect[0].score, 0.85, 1e-15);
    cr_assert_eq(r.suspect[1].row, 9);
    cr_assert_eq(r.suspect[1].suggested, 0);
    cr_assert_float_eq(r.suspect[1].score, 0.75, 1e-15);
    cr_assert_eq(r.suspect[2].row, 12);
    cr_assert_float_eq(r.suspect[2].score, 0.27, 1e-15);
    labelcheck_release(&r);
    cr_assert_null(r.suspect);
}

Test(labelcheck, clean_probabilities_give_no_suspects)
{
    double Q[9][3];
    int g[9];
    for (int i = 0; i < 9; i++) {
        g[i] = i % 3;
        double own = 0.7 + 0.02 * i;
        for (int j = 0; j < 3; j++)
            Q[i][j] = j == g[i] ? own : (1 - own) / 2;
    }
    struct labelcheck_result r = LABELCHECK_RESULT_INIT;
    struct err e = ERR_INIT;
    cr_assert_eq(labelcheck_run(&Q[0][0], g, 9, 3, &diag_margin, &r, &e), 0);
    cr_assert_eq(r.n_suspects, 0);
    size_t diag = r.joint[0] + r.joint[4] + r.joint[8], all = 0;
    for (int t = 0; t < 9; t++)
        all += r.joint[t];
    cr_assert_eq(diag, all);
    cr_assert_gt(all, 0);
    labelcheck_release(&r);
}

Test(labelcheck, bad_input_names_the_row)
{
    struct labelcheck_result r = LABELCHECK_RESULT_INIT;
    struct err e = ERR_INIT;
    int bad[2] = { 0, 3 };
    double Q[2][3] = { { 0.5, 0.5, 0 }, { 0.2, 0.3, 0.5 } };
    cr_assert_eq(labelcheck_run(&Q[0][0], bad, 2, 3, &diag_margin, &r, &e), -1);
    cr_assert_str_eq(e.msg, "row 2: label index 3 is outside [0, 3)");
    err_clear(&e);
    int ok[2] = { 0, 1 };
    Q[0][1] = -0.1;
    cr_assert_eq(labelcheck_run(&Q[0][0], ok, 2, 3, &diag_margin, &r, &e), -1);
    cr_assert_str_eq(e.msg, "row 1: probability 1 is -0.1, not a finite non-negative number");
    /* A label given to no row has no threshold and is never suggested. */
    err_clear(&e);
    Q[0][1] = 0.5;
    cr_assert_eq(labelcheck_run(&Q[0][0], ok, 2, 3, &diag_margin, &r, &e), 0);
    cr_assert(isnan(r.threshold[2]));
    for (size_t s = 0; s < r.n_suspects; s++)
        cr_assert_neq(r.suspect[s].suggested, 2);
    labelcheck_release(&r);
}

/* Worked by hand: t0 = (0.9 + 0.9 + 0.6)/3 = 0.8, t1 = (0.3 + 0.2)/2 = 0.25.
 *   row 2 (given 0, p = 0.6 0.4): p0 < t0, p1 >= t1 -> suggested 1, margin -0.2
 *   row 4 (given 1, p = 0.8 0.2): p0 >= t0, p1 < t1 -> suggested 0, margin 0.6
 *   row 3 (given 1, p = 0.7 0.3): only p1 >= t1     -> diagonal
 * The negative margin ranks last. */
Test(labelcheck, margin_can_be_negative_and_ranks_last)
{
    double Q[5][2] = { { 0.9, 0.1 }, { 0.9, 0.1 }, { 0.6, 0.4 }, { 0.7, 0.3 }, { 0.8, 0.2 } };
    int g[5] = { 0, 0, 0, 1, 1 };
    struct labelcheck_result r = LABELCHECK_RESULT_INIT;
    struct err e = ERR_INIT;
    cr_assert_eq(labelcheck_run(&Q[0][0], g, 5, 2, &diag_margin, &r, &e), 0);
    cr_assert_eq(r.n_suspects, 2);
    cr_assert_eq(r.suspect[0].row, 4);
    cr_assert_float_eq(r.suspect[0].score, 0.6, 1e-15);
    cr_assert_eq(r.suspect[1].row, 2);
    cr_assert_float_eq(r.suspect[1].score, -0.2, 1e-15);
    labelcheck_release(&r);
}

/* The two rankings disagree (worked by hand):
 *   t0 = (0.9 + 0.8 + 0.25 + 0.1) / 4 = 0.5125, t1 = 0.6, t2 = (0.25 + 0.25 + 0.5) / 3 = 1/3
 *   row 2 (given 0, p = 0.25 0.70 0.05): only p1 >= t1 -> suggested 1;
 *     margin 0.70 - 0.25 = 0.45, self-confidence score 1 - 0.25 = 0.75
 *   row 3 (given 0, p = 0.10 0.50 0.40): p1 < t1, p2 >= t2 -> suggested 2, yet
 *     the margin is taken against the most probable other label, 1:
 *     0.50 - 0.10 = 0.40; self-confidence score 1 - 0.10 = 0.90
 * By margin row 2 comes first, by self-confidence row 3. */
static const double Q2[10][3] = {
    { 0.90, 0.05, 0.05 }, { 0.80, 0.10, 0.10 }, { 0.25, 0.70, 0.05 }, { 0.10, 0.50, 0.40 },
    { 0.30, 0.60, 0.10 }, { 0.20, 0.60, 0.20 }, { 0.10, 0.60, 0.30 },
    { 0.375, 0.375, 0.25 }, { 0.25, 0.50, 0.25 }, { 0.25, 0.25, 0.50 },
};
static const int g2[10] = { 0, 0, 0, 0, 1, 1, 1, 2, 2, 2 };

Test(labelcheck, margin_and_self_confidence_rank_differently)
{
    struct labelcheck_result r = LABELCHECK_RESULT_INIT;
    struct err e = ERR_INIT;
    cr_assert_eq(labelcheck_run(&Q2[0][0], g2, 10, 3, &diag_margin, &r, &e), 0);
    cr_assert_float_eq(r.threshold[0], 0.5125, 1e-15);
    cr_assert_float_eq(r.threshold[2], 1.0 / 3, 1e-15);
    cr_assert_eq(r.n_suspects, 2);
    cr_assert_eq(r.suspect[0].row, 2);
    cr_assert_eq(r.suspect[0].suggested, 1);
    cr_assert_float_eq(r.suspect[0].score, 0.45, 1e-15);
    cr_assert_eq(r.suspect[1].row, 3);
    cr_assert_eq(r.suspect[1].suggested, 2);
    cr_assert_float_eq(r.suspect[1].score, 0.40, 1e-15);
    size_t joint[9] = { 2, 1, 1, 0, 3, 0, 0, 0, 1 };
    for (int t = 0; t < 9; t++)
        cr_assert_eq(r.joint[t], joint[t], "joint[%d]", t);
    labelcheck_release(&r);

    cr_assert_eq(labelcheck_run(&Q2[0][0], g2, 10, 3, &diag_confidence, &r, &e), 0);
    cr_assert_eq(r.n_suspects, 2);
    cr_assert_eq(r.suspect[0].row, 3);
    cr_assert_float_eq(r.suspect[0].score, 0.90, 1e-15);
    cr_assert_eq(r.suspect[1].row, 2);
    cr_assert_float_eq(r.suspect[1].score, 0.75, 1e-15);
    labelcheck_release(&r);
}

/* Prune by noise rate against the off-diagonal selection (worked by hand):
 *   t0 = (0.875 + 0.75 + 0.5625 + 0.4375 + 0.25) / 5 = 0.575,
 *   t1 = (0.875 + 0.75 + 0.875 + 0.125 + 0.625) / 5 = 0.65
 *   given 0: rows 0, 1 diagonal; rows 2, 3 reach no threshold; row 4 at [0][1]
 *   given 1: rows 5, 6, 7 diagonal; row 8 at [1][0]; row 9 reaches none
 *   joint = [[2 1] [1 3]]; calibrated: row 0 x 5/3, row 1 x 5/4 -> off-diagonal
 *   [0][1] = 5/3, [1][0] = 5/4, total 10 = N, so N Q = the same:
 *   floor(5/3 + 0.5) = 2 rows given 0 by p1 - p0 (row 4: 0.5, row 3: 0.125),
 *   floor(5/4 + 0.5) = 1 row given 1 by p0 - p1 (row 8: 0.75).
 * The off-diagonal selection has rows 8 and 4 only; noise rate adds row 3. */
static const double Q3[10][2] = {
    { 0.875, 0.125 }, { 0.75, 0.25 }, { 0.5625, 0.4375 }, { 0.4375, 0.5625 }, { 0.25, 0.75 },
    { 0.125, 0.875 }, { 0.25, 0.75 }, { 0.125, 0.875 }, { 0.875, 0.125 }, { 0.375, 0.625 },
};
static const int g3[10] = { 0, 0, 0, 0, 0, 1, 1, 1, 1, 1 };

Test(labelcheck, noise_rate_takes_as_many_rows_as_the_calibrated_joint_says)
{
    struct labelcheck_opts opt = LABELCHECK_OPTS_INIT;
    cr_assert_eq(opt.select, LABELCHECK_NOISE_RATE);
    cr_assert_eq(opt.rank, LABELCHECK_BY_CONFIDENCE);
    opt.rank = LABELCHECK_BY_MARGIN;
    struct labelcheck_result r = LABELCHECK_RESULT_INIT;
    struct err e = ERR_INIT;
    cr_assert_eq(labelcheck_run(&Q3[0][0], g3, 10, 2, &opt, &r, &e), 0);
    size_t joint[4] = { 2, 1, 1, 3 };
    for (int t = 0; t < 4; t++)
        cr_assert_eq(r.joint[t], joint[t], "joint[%d]", t);
    size_t rows[3] = { 8, 4, 3 };
    double score[3] = { 0.75, 0.5, 0.125 };
    int sugg[3] = { 0, 1, 1 };
    cr_assert_eq(r.n_suspects, 3);
    for (int s = 0; s < 3; s++) {
        cr_assert_eq(r.suspect[s].row, rows[s]);
        cr_assert_eq(r.suspect[s].suggested, sugg[s]);
        cr_assert_float_eq(r.suspect[s].score, score[s], 1e-15);
    }
    labelcheck_release(&r);
    cr_assert_eq(labelcheck_run(&Q3[0][0], g3, 10, 2, &diag_margin, &r, &e), 0);
    cr_assert_eq(r.n_suspects, 2);
    cr_assert_eq(r.suspect[0].row, 8);
    cr_assert_eq(r.suspect[1].row, 4);
    labelcheck_release(&r);
}
