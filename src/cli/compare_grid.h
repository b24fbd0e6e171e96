/* compare_grid.h -- compare's grid of set-ups (vector sets x poolings x
 * classifiers, plus the bow baseline), cross-validated on shared folds,
 * and the choice among them that `train --choose` makes.  `compare`
 * presents the table (compare_out.h); `train --choose` fits the choice.
 */
#ifndef VECSIFT_CLI_COMPARE_GRID_H
#define VECSIFT_CLI_COMPARE_GRID_H

#include <stddef.h>
#include <stdio.h>

#include "compare_out.h"

struct cJSON;
struct corpus;
struct err;
struct vecset;

/* The set-ups: bow with each classifier flagged in clfs[3], then every
 * vector set x every pooling flagged in pools[FEATURES_POOLS] but bow x
 * every classifier, in that order (set-ups that differ in the classifier
 * only are neighbours).  Returns the rows (release with
 * compare_grid_free), their count in *n, and each row's vector set index
 * in *vidx (a new array; unused for bow). */
struct compare_row *compare_grid_rows(const char *const *vectors, size_t nvec, const int *pools, const int *clfs,
                                      size_t **vidx, size_t *n);

/* Cross-validate every row with 'cp' (the same folds for all) and fill its
 * result, per-fold macro-F1 and coverage; groups of neighbours that share
 * a featurizer run side by side on cp->threads threads.  'base' gives what
 * every set-up shares (C, gamma, class weights...).  Warns about fits that
 * stopped at the iteration cap.  Writes the wall time to *wall.  Returns 0,
 * or -1 with 'e' set. */
int compare_grid_run(struct compare_row *rows, size_t n, const size_t *vidx, const struct corpus *c,
                     const struct pipeline_spec *base, struct vecset *const *vs, const struct cv_params *cp,
                     double *wall, struct err *e);

void compare_grid_free(struct compare_row *rows, size_t n); /* NULL-safe */

/* How much a set-up asks for, the order `train --choose` prefers: 0 a
 * linear classifier (logreg, svm-linear) on any features, whose scores
 * split into one term per word (pipeline_explain); 1 the RBF kernel.
 * Tried first: three levels, a linear classifier on one block of features
 * below one on the combined route; on tests/bench/bench_accuracy.py that
 * kept single-block set-ups the folds could not tell from the combined
 * route, and the choice fell 2.6 points below the combined route on sotu
 * (0.638 against 0.664): the combined route is the same linear model, on
 * more columns. */
int compare_level(const struct compare_row *row);

/* The set-up `train --choose` takes from rows ranked by compare_rank: of
 * the rows not significantly worse than the best (the best included), the
 * ones of the lowest level, and of those the highest mean macro-F1 (the
 * first in 'order').  Returns its index in rows. */
size_t compare_choose(const struct compare_row *rows, const size_t *order, size_t n);

/* `train --choose`: cross-validate the grid (bow, and with fa->vectors
 * open as 'vs' every pooling and combined route; logreg and svm-rbf) on
 * every row of 'c' with 'cp', rank it (compare_rank), take
 * compare_choose's row, print the table and the choice to 'fp' (NULL:
 * quiet), and write into *chosen fa->spec with that pooling and
 * classifier.  *json receives what the model records: "rule", "chosen"
 * (its rank), and compare's "settings" and "results" (without seconds, so
 * the model repeats byte for byte), each result with its "level" and
 * whether it is "chosen".  Returns 0, or -1 with 'e' set. */
int compare_grid_choose(const struct corpus *c, const char *data, const struct data_args *da,
                        const struct fit_args *fa, struct vecset *vs, const struct cv_params *cp, FILE *fp,
                        struct pipeline_spec *chosen, struct cJSON **json, struct err *e);

#endif
