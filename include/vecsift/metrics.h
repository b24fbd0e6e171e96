/* metrics.h -- scores of a classifier from (gold, predicted, probabilities)
 * rows: per-label precision, recall, F1 and support, macro and weighted F1,
 * accuracy, log loss, Brier score, confusion matrix, the label each label is
 * most often mistaken for, spread over folds, and a confidence cut-off table.
 *
 * The label set (K labels, indices 0..K-1) is fixed when the accumulator is
 * made, so a label absent from a fold still has its row of zeros.  It does not
 * format anything; the report module prints what is computed here.
 *
 * Conventions (stated once, printed by report and JSON):
 *   - METRICS_ZERO_DIVISION_RULE below for 0/0.
 *   - Log loss: mean over rows of -ln p[gold], natural log.  As scikit-learn's
 *     log_loss (1.2) does, each probability is first clipped to
 *     [eps, 1 - eps] with eps = METRICS_LOG_LOSS_EPS = 1e-15 and the row is
 *     renormalised to sum 1, so a zero probability costs ln(1e15) ~ 34.5, not
 *     infinity.  (scikit-learn 1.2's default eps is "auto", the dtype's
 *     machine epsilon; 1e-15 was its default before 1.2.)
 *   - Brier score (multiclass, Brier 1950, "Verification of forecasts
 *     expressed in terms of probability"): mean over rows of
 *     sum over labels of (p[j] - [j == gold])^2, range [0, 2].  For two labels
 *     this is twice what scikit-learn's brier_score_loss returns, which scores
 *     only the positive label's probability: mean of (p_pos - y)^2.
 */
#ifndef VECSIFT_METRICS_H
#define VECSIFT_METRICS_H

#include <stddef.h>

struct err;

#define METRICS_ZERO_DIVISION_RULE \
    "0/0 counts as 0: precision of a label never predicted, recall of a label " \
    "with no rows, and F1 when precision and recall are both 0 are reported as " \
    "0 (as scikit-learn's zero_division=0)"

#define METRICS_LOG_LOSS_EPS 1e-15

/* Accumulator of rows.  Opaque. */
typedef struct metrics metrics;

/* A new, empty accumulator for 'n_labels' >= 1 labels (caller frees with
 * metrics_free). */
metrics *metrics_new(int n_labels);
void metrics_free(metrics *m);

/* Add one row: gold and predicted label indices in [0, K), and 'prob' (K
 * probabilities, copied) or NULL when the classifier gives none.  The
 * confidence of the row is max(prob).  Returns 0, or -1 with 'e' set when an
 * index is out of range or a probability is not finite or negative. */
int metrics_add(metrics *m, int gold, int pred, const double *prob, struct err *e);

/* Rows added so far. */
size_t metrics_rows(const metrics *m);

struct metrics_label {
    double precision, recall, f1;
    size_t support;         /* rows whose gold label is this one */
    size_t predicted;       /* rows predicted as this one */
    int mistaken_for;       /* the wrong label most often predicted for rows of
                             * this label (lowest index on ties), -1 if none */
    size_t mistaken_count;  /* how many rows went there */
};

struct metrics_report {
    int n_labels;           /* K */
    size_t n_rows;
    double accuracy, macro_f1, weighted_f1;
    double log_loss, brier; /* NAN unless every row came with probabilities */
    struct metrics_label *label;    /* (K) */
    size_t *conf;           /* (K, K), conf[gold*K + pred] */
};

#define METRICS_REPORT_INIT { 0, 0, 0, 0, 0, 0, 0, NULL, NULL }

/* Compute every score from the rows added.  Fills 'out' (release with
 * metrics_report_release).  With no rows, all rates are 0 and log loss and
 * Brier are NAN. */
void metrics_compute(const metrics *m, struct metrics_report *out);
void metrics_report_release(struct metrics_report *r);

/* ---- spread over folds ---- */

struct metrics_spread {
    double mean, sd;        /* sd: sample standard deviation (n - 1); NAN for one fold */
};

struct metrics_fold_summary {
    int n_labels;
    size_t n_folds;
    struct metrics_spread accuracy, macro_f1, weighted_f1, log_loss, brier;
    struct metrics_spread *precision, *recall, *f1;     /* (K) each */
};

/* Mean and sample sd of every score over 'n' fold reports (all with the same
 * K).  A score that is NAN in any fold (log loss without probabilities) is NAN.
 * Fills 'out' (release with metrics_fold_summary_release).  Returns 0, or -1
 * with 'e' set when n == 0 or the label counts differ. */
int metrics_summarize(const struct metrics_report *folds, size_t n,
                      struct metrics_fold_summary *out, struct err *e);
void metrics_fold_summary_release(struct metrics_fold_summary *s);

/* ---- confidence cut-offs ---- */

struct metrics_cutoff {
    double threshold;       /* a confidence value seen in the data */
    double precision;       /* share correct among rows with confidence >= threshold */
    double coverage;        /* share of all rows with confidence >= threshold */
    size_t kept;            /* rows with confidence >= threshold */
};

/* One entry per distinct confidence value, highest threshold first.  Returns
 * a new array (caller frees) and its length in '*n_out'; NULL and 0 when
 * there are no rows or some row came without probabilities. */
struct metrics_cutoff *metrics_cutoffs(const metrics *m, size_t *n_out);

/* The smallest threshold in 'c' (n entries, as from metrics_cutoffs) whose
 * precision is >= 'target', i.e. the one that keeps the most rows.  Returns
 * its index, or -1 when no cut-off reaches the target ("not reachable"). */
long metrics_cutoff_for_precision(const struct metrics_cutoff *c, size_t n, double target);

#endif
