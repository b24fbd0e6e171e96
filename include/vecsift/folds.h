/* folds.h -- which rows are held out when: stratified and group-stratified
 * k-fold assignment, repeated with fresh shuffles, and stratified subsamples
 * for learning curves.
 *
 * Rows are numbered 0..N-1 and carry a label index in [0, K).  An assignment
 * for R repeats is one (R, N) table: fold[r*N + i] in [0, k) is the fold in
 * which row i is held out during repeat r.  Nothing here fits a model or
 * prints; bad settings come back through struct err (STYLE C7).
 */
#ifndef VECSIFT_FOLDS_H
#define VECSIFT_FOLDS_H

#include <stddef.h>

struct err;
struct rng;

struct folds {
    size_t n_rows;      /* N */
    size_t n_repeats;   /* R */
    int k;              /* folds per repeat */
    int *fold;          /* (R, N) row-major, fold[r*N + i] in [0, k) */
};

#define FOLDS_INIT { 0, 0, 0, NULL }

/* Stratified k-fold, repeated 'repeats' times.  'label' (N) holds label
 * indices in [0, n_labels); 'names' (n_labels, may be NULL) names labels in
 * error messages.  Repeat r shuffles with rng_child(seed, r), so the folds of
 * one repeat do not depend on how many repeats are asked for.
 *
 * Within a repeat each label's rows are shuffled and dealt round the folds,
 * the dealing continuing where the previous label stopped: every fold holds
 * floor or ceil of n_j/k rows of label j, and fold sizes differ by at most 1.
 *
 * Returns 0 and fills 'f' (release with folds_release), or -1 with 'e' set:
 * k < 2, k > N, fewer than two labels with rows, a label index out of range,
 * or a label with fewer rows than folds (the message names the label and its
 * count; the hint suggests fewer folds or merging the label). */
int folds_make(struct folds *f, const int *label, size_t n, int n_labels,
               const char *const *names, int k, size_t repeats,
               const struct rng *seed, struct err *e);

/* Stratified group k-fold: rows sharing a group id ('group' (N), values in
 * [0, n_groups)) always fall in the same fold.  Greedy assignment: groups are
 * visited largest first (equal sizes in an order shuffled by the repeat's
 * child rng) and each goes to the fold where adding it increases least the sum
 * over folds and labels of (count - n_j/k)^2, i.e. keeps the label counts of
 * the folds nearest to the whole set's proportions; ties go to the smaller
 * fold, then the lower fold index.  Balance is as good as the groups allow,
 * not guaranteed within one row.  Errors as folds_make, plus k > number of
 * non-empty groups and a group id out of range. */
int folds_make_grouped(struct folds *f, const int *label, const int *group,
                       size_t n, int n_labels, int n_groups,
                       const char *const *names, int k, size_t repeats,
                       const struct rng *seed, struct err *e);

/* The N fold numbers of repeat r (r < f->n_repeats).  Borrowed. */
const int *folds_repeat(const struct folds *f, size_t r);

/* Free the table; 'f' becomes FOLDS_INIT.  NULL-safe. */
void folds_release(struct folds *f);

/* Stratified subsample of the training rows 'rows' (n entries, indices into
 * 'label'): for each label present, round(fraction * n_j) of its rows (at
 * least 1) chosen at random with 'r'.  'fraction' in (0, 1].  Writes the
 * chosen row indices, ascending, to 'out' (room for n) and returns how many;
 * returns 0 with 'e' set when fraction is out of range. */
size_t folds_subsample(const size_t *rows, size_t n, const int *label, int n_labels,
                       double fraction, struct rng *r, size_t *out, struct err *e);

#endif
