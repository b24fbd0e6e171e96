/* cv.h -- repeated stratified k-fold cross-validation of a pipeline.
 *
 * A fresh pipeline (featurizer and classifier) is fitted inside every fold
 * on that fold's training rows only, so nothing learned from a held-out row
 * reaches its own prediction.  Fits run on worker threads; each writes only
 * its own held-out rows, and all summaries are computed afterwards in a
 * fixed order, so results are identical for any thread count.
 *
 * Optional nested search: inside each outer fold, an inner stratified
 * k-fold over the outer training rows picks C (and for svm-rbf the gamma
 * factor) by inner macro-F1; the pipeline is then refitted with the choice
 * on all the outer training rows.  The held-out fold never takes part in
 * the choice.  With groups, the inner folds keep each group together too.
 */
#ifndef VECSIFT_CV_H
#define VECSIFT_CV_H

#include <stddef.h>
#include <stdint.h>

#include "vecsift/folds.h"
#include "vecsift/metrics.h"
#include "vecsift/pipeline.h"

struct err;
struct corpus;
struct vecset;

struct cv_params {
    int folds;              /* k >= 2 */
    size_t repeats;         /* >= 1 */
    uint64_t seed;
    int threads;            /* >= 1 */
    const int *group;       /* (N) group ids for group k-fold, or NULL */
    int n_groups;
    double train_fraction;  /* (0, 1]: stratified share of each fold's training rows used (learning curves) */
    int search;             /* nested search over C (and gamma) */
    int inner_folds;        /* folds of the inner search (default 3) */
};
#define CV_PARAMS_INIT { 5, 3, 1, 1, NULL, 0, 1.0, 0, 3 }

/* The grid of the nested search. */
#define CV_GRID_C { 0.01, 0.1, 1.0, 10.0, 100.0 }
#define CV_GRID_GAMMA_FACTOR { 0.25, 1.0, 4.0 }

struct cv_result {
    size_t n, k, repeats;
    int folds;
    struct folds f;                 /* the assignment used */
    double *proba;                  /* (R, N, K) out-of-fold probabilities */
    int *pred;                      /* (R, N) most probable label (lowest index on ties) */
    double *chosen_C;               /* (R * folds) when search, else NULL */
    double *chosen_gamma;           /* (R * folds) factor of the default gamma, svm-rbf search only */
    double *chosen_score;           /* (R * folds) inner macro-F1 of the choice, search only */
    int unconverged;                /* fits that hit the iteration cap */
    int tiny_label;                 /* some fit had a label with < 3 rows (svm) */
    size_t train_rows;              /* mean training rows per fit (after train_fraction) */
    struct features_stats held_out; /* token coverage over all held-out rows, all repeats */
    struct metrics_report pooled;   /* over every out-of-fold prediction of every repeat */
    struct metrics_report *per_fold;/* (R * folds) in order repeat, fold */
    struct metrics_fold_summary spread; /* mean and sd over the R * folds folds */
    metrics *all;                   /* accumulator of every out-of-fold row (for cut-offs) */
    double seconds;                 /* wall time */
};
#define CV_RESULT_INIT { 0 }

/* Cross-validate 's' on corpus 'c' (labelled) with vector set 'vs'.
 * Returns 0 and fills 'r' (release with cv_release), or -1 with 'e' set
 * (bad fold settings: the message names the label that is too rare; a fit
 * that failed). */
int cv_run(struct cv_result *r, const struct pipeline_spec *s, const struct corpus *c, const struct vecset *vs,
           const struct cv_params *p, struct err *e);
void cv_release(struct cv_result *r);

/* cv_run for several specs s[0..ns) that differ only in their classifier
 * (the same s[j].feat; -1 with 'e' set otherwise), on the same folds: in
 * each fold the featurizer is fitted and the rows featurized once, and every
 * classifier is fitted on that one matrix.  r[j] gets exactly what
 * cv_run(&r[j], &s[j], ...) would give, except 'seconds': the run's wall
 * time split between the specs by their share of the work (featurising
 * split evenly).  With --search each spec is fitted on its own.  On failure
 * every r[j] is released and 'e' holds the first failure in spec, then
 * fold order. */
int cv_run_shared(struct cv_result *r, const struct pipeline_spec *s, size_t ns, const struct corpus *c,
                  const struct vecset *vs, const struct cv_params *p, struct err *e);

/* Per-fold values of one score, in fold order (R * folds): "macro_f1",
 * "accuracy", "log_loss", "weighted_f1".  Writes to 'out'; returns the count,
 * or 0 for an unknown name. */
size_t cv_fold_scores(const struct cv_result *r, const char *name, double *out);

/* The nested search on its own: choose C (and gamma factor) for rows
 * rows[0..n) by inner k-fold; writes the chosen spec to 'best'.  Used by
 * `train --search` on all rows. */
int cv_search(const struct pipeline_spec *s, const struct corpus *c, const struct vecset *vs, const size_t *rows,
              size_t n, int inner_folds, uint64_t seed, struct pipeline_spec *best, struct err *e);

#endif
