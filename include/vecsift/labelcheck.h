/* labelcheck.h -- rows whose given label looks wrong, found by confident
 * learning (Northcutt, Jiang and Chuang (2021), "Confident Learning:
 * Estimating Uncertainty in Dataset Labels", JAIR 70).
 *
 * Input: out-of-fold probabilities P (N, K) -- each row scored by a model that
 * never saw it -- and the given labels.  Steps:
 *   1. per-label threshold t_j = mean of P[i][j] over the rows given label j
 *      (the average self-confidence of label j);
 *   2. the confident joint C[given][true] (K, K): each row is counted once, in
 *      column j = the label of highest probability among the labels whose
 *      probability reaches their threshold (P[i][j] >= t_j); a row reaching
 *      no threshold is not counted;
 *   3. suspects, one of the paper's selections (section 3.3, from memory):
 *      LABELCHECK_NOISE_RATE, prune by noise rate: the joint calibrated
 *      (row i scaled to sum to the number of rows given i), normalised to
 *      Q = C~ / sum C~, and for each off-diagonal cell (i, j) the
 *      floor(N Q[i][j] + 0.5) rows given i with the largest P[j] - P[i]; a
 *      row so picked is suggested the j of highest probability among the
 *      cells that picked it;
 *      LABELCHECK_OFF_DIAGONAL: the rows counted off the diagonal of C,
 *      suggested the column they were counted in;
 *   4. ranking (the paper's section 3.3, from memory), ties by row:
 *      LABELCHECK_BY_MARGIN, the normalised margin: score =
 *        max_{j != given} P[i][j] - P[i][given], largest first;
 *      LABELCHECK_BY_CONFIDENCE, self-confidence: score = 1 - P[i][given],
 *        largest first (lowest probability of the given label first).
 *      In both, a larger score means more suspect.  Noise-rate selection
 *      ranked by self-confidence is the default (LABELCHECK_OPTS_INIT, and
 *      `vecsift audit`'s): with two labels both rankings give the same
 *      order; with four (State of the Union eras) self-confidence put 0.5
 *      to 3.6 more of 15 planted errors in the top 30 on every route
 *      measured (docs/benchmarks.md, "Label audit").
 * Labels given to no row get no threshold and are never suggested.  This
 * module audits; it does not remove or relabel anything, and it prints nothing.
 */
#ifndef VECSIFT_LABELCHECK_H
#define VECSIFT_LABELCHECK_H

#include <stddef.h>

struct err;

struct labelcheck_suspect {
    size_t row;         /* index into the N rows */
    int given;          /* the label in the data */
    int suggested;      /* the label it was flagged for (step 3) */
    double score;       /* the ranking key, larger = more suspect: by margin,
                           max_{j != given} P[row][j] - P[row][given], in [-1, 1]
                           (negative when the given label has the higher
                           probability but falls short of its own threshold);
                           by confidence, 1 - P[row][given] */
};

enum labelcheck_rank { LABELCHECK_BY_MARGIN, LABELCHECK_BY_CONFIDENCE };
enum labelcheck_select { LABELCHECK_NOISE_RATE, LABELCHECK_OFF_DIAGONAL };

struct labelcheck_opts {
    enum labelcheck_select select;  /* which rows are suspects (step 3) */
    enum labelcheck_rank rank;      /* their order (step 4) */
};
#define LABELCHECK_OPTS_INIT { LABELCHECK_NOISE_RATE, LABELCHECK_BY_CONFIDENCE }

struct labelcheck_result {
    int n_labels;                       /* K */
    double *threshold;                  /* (K); NAN for a label given to no row */
    size_t *joint;                      /* (K, K), joint[given*K + true] */
    struct labelcheck_suspect *suspect; /* most suspect first */
    size_t n_suspects;
};

#define LABELCHECK_RESULT_INIT { 0, NULL, NULL, NULL, 0 }

/* Run the audit over N rows: 'P' (N, K) row-major probabilities, 'given' (N)
 * label indices, suspects chosen and ranked as 'opt' says.  Fills 'out' (release with labelcheck_release).  Returns 0,
 * or -1 with 'e' set when a label index is out of range or a probability is
 * not finite or is negative (naming the 1-based row). */
int labelcheck_run(const double *P, const int *given, size_t N, int K, const struct labelcheck_opts *opt,
                   struct labelcheck_result *out, struct err *e);

void labelcheck_release(struct labelcheck_result *r);

#endif
