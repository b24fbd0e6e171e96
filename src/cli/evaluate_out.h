/* evaluate_out.h -- what evaluate writes: the terminal summary, the JSON of
 * DESIGN.md ("Evaluate JSON"), the out-of-fold predictions CSV, and the
 * cut-off advice.  Shared by evaluate, train (summary stored in the model)
 * and demo.  The HTML page is evaluate_report.h's.
 */
#ifndef VECSIFT_CLI_EVALUATE_OUT_H
#define VECSIFT_CLI_EVALUATE_OUT_H

#include <stdio.h>

#include "common.h"
#include "vecsift/cv.h"

struct cJSON;
struct err;

/* What was run, for headers and the JSON's "settings". */
struct evaluate_setup {
    const char *data;
    const struct data_args *da;
    const struct fit_args *fa;
    const struct cv_params *cp;
    double target;          /* precision target for the cut-off advice */
};

struct evaluate_advice {
    int reachable;
    double threshold, precision, coverage;
    char advice[40];        /* the shortest decimal that keeps exactly the same
                             * out-of-fold rows as 'threshold': the value to
                             * pass to predict --review-below */
};

/* The smallest confidence cut-off whose pooled out-of-fold precision
 * reaches 'target', and the share of rows it routes automatically. */
void evaluate_cut(const struct cv_result *r, double target, struct evaluate_advice *out);

/* The evaluation as a JSON object (caller deletes). */
struct cJSON *evaluate_json(const struct cv_result *r, const struct corpus *c, const struct evaluate_setup *s);

/* The terminal summary. */
void evaluate_terminal(FILE *fp, const struct cv_result *r, const struct corpus *c, const struct evaluate_setup *s);

/* Label counts before any fitting, with the rare-label policy. */
void evaluate_label_table(FILE *fp, const struct corpus *c, int folds);

/* Out-of-fold predictions CSV: row, repeat, fold, label, predicted,
 * confidence, prob:LABEL for every label. */
int evaluate_predictions(const char *path, const struct cv_result *r, const struct corpus *c, struct err *e);

/* Write a JSON object to 'path' through ofile. */
int evaluate_write_json(const char *path, const struct cJSON *obj, struct err *e);

/* "logreg on tfidf-pooled vectors (FILE)" and similar. */
void evaluate_describe(const struct fit_args *fa, char *buf, size_t n);



#endif
