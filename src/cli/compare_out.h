/* compare_out.h -- what `compare` and `curve` write: the ranked table of
 * set-ups with the corrected resampled t-test against the best, the Compare
 * JSON of DESIGN.md and the HTML page; the helpers curve_out.h shares.
 * The command runs the cross-validations; this file only presents them
 * (and computes the test it presents).
 */
#ifndef VECSIFT_CLI_COMPARE_OUT_H
#define VECSIFT_CLI_COMPARE_OUT_H

#include <stdio.h>

#include "common.h"
#include "vecsift/cv.h"
#include "vecsift/stats.h"

struct cJSON;
struct err;

/* One set-up of compare: a vector set (NULL for bow), a pooling, a
 * classifier, and its cross-validation on the shared folds. */
struct compare_row {
    const char *vectors;
    enum features_pool pool;
    enum pipeline_classifier clf;
    struct cv_result r;
    double *f1;             /* (J) per-fold macro-F1, in fold order */
    double coverage;        /* held-out tokens with a vector (bow: seen in training); NAN if none */
    int best;
    double t_vs_best, p_vs_best; /* one-sided; NAN on the best row */
    int not_worse;          /* p_vs_best >= alpha (or the best row) */
};

struct compare_setup {
    const char *data;
    const struct data_args *da;
    const struct pipeline_spec *base;   /* C, gamma, class weights... shared by all */
    const struct cv_params *cp;
    size_t n_rows, n_labels;
    double n_test, n_train;             /* mean rows per test and training fold */
    double alpha;                       /* 0.05 */
    double wall;                        /* seconds for the whole comparison */
    int threads;
};

/* Rank rows[0..n) by mean per-fold macro-F1 (ties keep the given order),
 * writing the ranking to 'order' (n), mark the best, and test every other
 * row against it (Nadeau and Bengio 2003, on the per-fold macro-F1 paired
 * by fold).  Returns 0, or -1 with 'e' set when the test cannot be run
 * (fewer than 2 folds in all). */
int compare_rank(struct compare_row *rows, size_t n, const struct compare_setup *s, size_t *order, struct err *e);

/* "name" of a row for tables: "VECTORS-BASENAME pool classifier". */
void compare_row_name(const struct compare_row *row, char *buf, size_t n);

void compare_terminal(FILE *fp, const struct compare_row *rows, const size_t *order, size_t n,
                      const struct compare_setup *s);
struct cJSON *compare_json(const struct compare_row *rows, const size_t *order, size_t n,
                           const struct compare_setup *s);
int compare_html(const char *path, const struct compare_row *rows, const size_t *order, size_t n,
                 const struct compare_setup *s, struct err *e);

/* A JSON number, or null when not finite. */
struct cJSON *compare_num(double x);
/* {"mean": ..., "sd": ...} */
struct cJSON *compare_spread_json(struct metrics_spread sp);

/* Print 'text' with its lines broken at spaces to at most 'width' bytes. */
void compare_wrap(FILE *fp, const char *text, size_t width);

#endif
