/* test_metrics.c -- scores against worked examples, the 0/0 rule, log loss
 * and Brier conventions, spread over folds, confidence cut-offs.  The
 * comparison with scikit-learn on random data is tests/ext/metrics_vs_sklearn.py.
 */
#include <criterion/criterion.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/err.h"
#include "vecsift/metrics.h"

static void add_n(metrics *m, int gold, int pred, int times)
{
    struct err e = ERR_INIT;
    for (int t = 0; t < times; t++)
        cr_assert_eq(metrics_add(m, gold, pred, NULL, &e), 0);
}

/* Two-label table from tp, fp, fn, tn: label 0 is the class, 1 the rest. */
static metrics *binary_table(int tp, int fp, int fn, int tn)
{
    metrics *m = metrics_new(2);
    add_n(m, 0, 0, tp);
    add_n(m, 1, 0, fp);
    add_n(m, 0, 1, fn);
    add_n(m, 1, 1, tn);
    return m;
}

/* Manning, Raghavan and Schuetze, Introduction to Information Retrieval
 * (2008), section 13.6, Table 13.8 (micro- vs macro-averaging), counts from
 * memory: class 1 tp 10 fp 10 fn 10 tn 970; class 2 tp 90 fp 10 fn 10 tn 890;
 * pooled tp 100 fp 20 fn 20 tn 1860.  The book gives precision 0.5 and 0.9,
 * macro-averaged precision 0.7 and micro-averaged precision 0.83. */
Test(metrics, textbook_micro_and_macro_averaging_example)
{
    metrics *c1 = binary_table(10, 10, 10, 970);
    metrics *c2 = binary_table(90, 10, 10, 890);
    metrics *pool = binary_table(100, 20, 20, 1860);
    struct metrics_report r1 = METRICS_REPORT_INIT, r2 = METRICS_REPORT_INIT, rp = METRICS_REPORT_INIT;
    metrics_compute(c1, &r1);
    metrics_compute(c2, &r2);
    metrics_compute(pool, &rp);
    cr_assert_float_eq(r1.label[0].precision, 0.5, 1e-15);
    cr_assert_float_eq(r2.label[0].precision, 0.9, 1e-15);
    cr_assert_float_eq((r1.label[0].precision + r2.label[0].precision) / 2, 0.7, 1e-15);
    cr_assert_float_eq(rp.label[0].precision, 100.0 / 120.0, 1e-15);
    cr_assert_eq(fabs(rp.label[0].precision - 0.83) < 0.005, 1);
    cr_assert_eq(r1.label[0].support, 20);
    cr_assert_eq(r1.label[0].predicted, 20);
    cr_assert_float_eq(r1.accuracy, 980.0 / 1000.0, 1e-15);
    metrics_report_release(&r1);
    metrics_report_release(&r2);
    metrics_report_release(&rp);
    metrics_free(c1);
    metrics_free(c2);
    metrics_free(pool);
}

/* An invented confusion matrix (rows gold, columns predicted) for three
 * queues of a fictional support inbox, worked by hand:
 *
 *               billing login shipping | support
 *   billing        8      2      0     |   10
 *   login          2      5      0     |    7
 *   shipping       0      3      0     |    3
 *   predicted     10     10      0         20
 *
 *   precision: billing 8/10 = 0.8, login 5/10 = 0.5, shipping 0/0 -> 0 (rule)
 *   recall:    billing 8/10 = 0.8, login 5/7,        shipping 0/3 = 0
 *   F1:        billing 0.8, login 2*0.5*(5/7)/(0.5+5/7) = 10/17, shipping 0
 *   macro F1    = (0.8 + 10/17 + 0)/3 = 118/255
 *   weighted F1 = (0.8*10 + 10/17*7 + 0*3)/20 = 103/170
 *   accuracy    = 13/20
 *   mistaken for: billing -> login (2), login -> billing (2), shipping -> login (3)
 */
Test(metrics, hand_worked_confusion_matrix_with_a_label_never_predicted)
{
    metrics *m = metrics_new(3);
    add_n(m, 0, 0, 8);
    add_n(m, 0, 1, 2);
    add_n(m, 1, 0, 2);
    add_n(m, 1, 1, 5);
    add_n(m, 2, 1, 3);
    struct metrics_report r = METRICS_REPORT_INIT;
    metrics_compute(m, &r);
    size_t want[9] = { 8, 2, 0, 2, 5, 0, 0, 3, 0 };
    for (int t = 0; t < 9; t++)
        cr_assert_eq(r.conf[t], want[t]);
    cr_assert_float_eq(r.label[0].precision, 0.8, 1e-15);
    cr_assert_float_eq(r.label[1].precision, 0.5, 1e-15);
    cr_assert_eq(r.label[2].precision, 0.0);
    cr_assert_float_eq(r.label[1].recall, 5.0 / 7.0, 1e-15);
    cr_assert_eq(r.label[2].recall, 0.0);
    cr_assert_float_eq(r.label[1].f1, 10.0 / 17.0, 1e-15);
    cr_assert_eq(r.label[2].f1, 0.0);
    cr_assert_float_eq(r.macro_f1, 118.0 / 255.0, 1e-15);
    cr_assert_float_eq(r.weighted_f1, 103.0 / 170.0, 1e-15);
    cr_assert_float_eq(r.accuracy, 0.65, 1e-15);
    cr_assert_eq(r.label[0].mistaken_for, 1);
    cr_assert_eq(r.label[1].mistaken_for, 0);
    cr_assert_eq(r.label[2].mistaken_for, 1);
    cr_assert_eq(r.label[2].mistaken_count, 3);
    cr_assert(isnan(r.log_loss), "no probabilities were given");
    cr_assert(strstr(METRICS_ZERO_DIVISION_RULE, "never predicted"));
    metrics_report_release(&r);
    metrics_free(m);
}

Test(metrics, label_absent_from_the_rows_keeps_its_row)
{
    metrics *m = metrics_new(4);
    add_n(m, 0, 0, 3);
    add_n(m, 1, 1, 1);
    struct metrics_report r = METRICS_REPORT_INIT;
    metrics_compute(m, &r);
    cr_assert_eq(r.label[3].support, 0);
    cr_assert_eq(r.label[3].mistaken_for, -1);
    /* macro F1 averages all 4 labels, the absent ones scoring 0 (rule). */
    cr_assert_float_eq(r.macro_f1, 0.5, 1e-15);
    cr_assert_float_eq(r.weighted_f1, 1.0, 1e-15);
    metrics_report_release(&r);
    metrics_free(m);
}

/* Log loss with clipping at 1e-15 and renormalisation (scikit-learn 1.2's
 * log_loss procedure, read from its source), and the multiclass Brier score
 * (Brier 1950), worked by hand:
 *   row 1: gold 0, p = (0.7, 0.2, 0.1): -ln 0.7; Brier 0.09 + 0.04 + 0.01 = 0.14
 *   row 2: gold 2, p = (0.5, 0.5, 0):   p[2] -> 1e-15 / (1 + 1e-15);
 *          Brier 0.25 + 0.25 + 1 = 1.5
 */
Test(metrics, log_loss_clips_and_brier_sums_over_labels)
{
    metrics *m = metrics_new(3);
    struct err e = ERR_INIT;
    double p1[3] = { 0.7, 0.2, 0.1 }, p2[3] = { 0.5, 0.5, 0.0 };
    cr_assert_eq(metrics_add(m, 0, 0, p1, &e), 0);
    cr_assert_eq(metrics_add(m, 2, 0, p2, &e), 0);
    struct metrics_report r = METRICS_REPORT_INIT;
    metrics_compute(m, &r);
    double want = (-log(0.7) - log(1e-15 / (1 + 1e-15))) / 2;
    cr_assert_float_eq(r.log_loss, want, 1e-12);
    cr_assert_float_eq(r.log_loss, 17.4477, 1e-4);   /* (0.356675 + 34.538776) / 2 */
    cr_assert_float_eq(r.brier, 0.82, 1e-15);
    metrics_report_release(&r);
    double bad[3] = { 0.5, NAN, 0.5 };
    cr_assert_eq(metrics_add(m, 0, 0, bad, &e), -1);
    cr_assert_str_eq(e.msg, "row 3: probability 1 is nan, not a finite non-negative number");
    err_clear(&e);
    cr_assert_eq(metrics_add(m, 3, 0, p1, &e), -1);
    cr_assert_str_eq(e.msg, "row 3: label index outside [0, 3) (gold 3, predicted 0)");
    cr_assert_eq(metrics_rows(m), 2);
    metrics_free(m);
}

/* Mean and sample standard deviation (n - 1), the usual definition. */
Test(metrics, fold_summary_gives_mean_and_sample_sd)
{
    metrics *a = metrics_new(2), *b = metrics_new(2);
    add_n(a, 0, 0, 1);
    add_n(a, 1, 0, 1);      /* accuracy 0.5 */
    add_n(b, 0, 0, 2);
    add_n(b, 1, 1, 2);      /* accuracy 1.0 */
    struct metrics_report f[2] = { METRICS_REPORT_INIT, METRICS_REPORT_INIT };
    metrics_compute(a, &f[0]);
    metrics_compute(b, &f[1]);
    struct metrics_fold_summary s;
    struct err e = ERR_INIT;
    cr_assert_eq(metrics_summarize(f, 2, &s, &e), 0);
    cr_assert_float_eq(s.accuracy.mean, 0.75, 1e-15);
    cr_assert_float_eq(s.accuracy.sd, sqrt(0.125), 1e-15);
    /* label 0 precision: 1/2 then 1 */
    cr_assert_float_eq(s.precision[0].mean, 0.75, 1e-15);
    /* label 1 recall: 0 then 1 -> sd sqrt(0.5) */
    cr_assert_float_eq(s.recall[1].sd, sqrt(0.5), 1e-15);
    cr_assert(isnan(s.log_loss.mean));
    metrics_fold_summary_release(&s);
    cr_assert_eq(metrics_summarize(f, 0, &s, &e), -1);
    cr_assert_str_eq(e.msg, "no folds to summarize");
    metrics_report_release(&f[0]);
    metrics_report_release(&f[1]);
    metrics_free(a);
    metrics_free(b);
}

/* Cut-off table worked by hand.  Confidences and correctness:
 *   0.9 right, 0.9 wrong, 0.8 right, 0.6 right, 0.55 wrong
 *   t = 0.9: kept 2, precision 1/2, coverage 0.4
 *   t = 0.8: kept 3, precision 2/3, coverage 0.6
 *   t = 0.6: kept 4, precision 3/4, coverage 0.8
 *   t = 0.55: kept 5, precision 3/5, coverage 1
 * Target 0.7 is first reached (lowest threshold) at 0.6; 0.8 never is. */
Test(metrics, cutoff_table_and_smallest_cutoff_for_a_target)
{
    metrics *m = metrics_new(2);
    struct err e = ERR_INIT;
    double p[5][2] = { { 0.9, 0.1 }, { 0.1, 0.9 }, { 0.8, 0.2 }, { 0.4, 0.6 }, { 0.55, 0.45 } };
    int gold[5] = { 0, 0, 0, 1, 1 };
    int pred[5] = { 0, 1, 0, 1, 0 };
    for (int i = 0; i < 5; i++)
        cr_assert_eq(metrics_add(m, gold[i], pred[i], p[i], &e), 0);
    size_t n = 0;
    struct metrics_cutoff *c = metrics_cutoffs(m, &n);
    cr_assert_eq(n, 4);
    double th[4] = { 0.9, 0.8, 0.6, 0.55 }, pr[4] = { 0.5, 2.0 / 3, 0.75, 0.6 };
    double cov[4] = { 0.4, 0.6, 0.8, 1.0 };
    for (int t = 0; t < 4; t++) {
        cr_assert_float_eq(c[t].threshold, th[t], 1e-15);
        cr_assert_float_eq(c[t].precision, pr[t], 1e-15);
        cr_assert_float_eq(c[t].coverage, cov[t], 1e-15);
    }
    cr_assert_eq(metrics_cutoff_for_precision(c, n, 0.7), 2);
    cr_assert_eq(metrics_cutoff_for_precision(c, n, 0.8), -1);
    cr_assert_eq(metrics_cutoff_for_precision(c, n, 0.5), 3);
    free(c);
    /* A row without probabilities: no table. */
    cr_assert_eq(metrics_add(m, 0, 0, NULL, &e), 0);
    cr_assert_null(metrics_cutoffs(m, &n));
    cr_assert_eq(n, 0);
    metrics_free(m);
}
