/* curve_out.h -- what `curve` writes (curve_out.c): the learning curve's
 * table, SVG plot, HTML page and JSON, and the estimate of what doubling
 * the labelled set might bring.  The command runs the cross-validations;
 * this file presents them (and computes the fit it presents).  Private to
 * src/cli. */
#ifndef VECSIFT_CLI_CURVE_OUT_H
#define VECSIFT_CLI_CURVE_OUT_H

#include <stdio.h>

#include "common.h"
#include "vecsift/cv.h"
#include "vecsift/metrics.h"
#include "vecsift/stats.h"

struct cJSON;
struct err;

struct curve_point {
    double fraction;
    double train_rows;      /* mean training rows per fit */
    struct metrics_spread macro_f1, accuracy;
};

struct curve_setup {
    const char *data;
    const struct fit_args *fa;
    const struct cv_params *cp;
    size_t n_rows, n_labels;
};

/* What doubling the labelled set might bring: the power law fit of error =
 * 1 - macro-F1 against training rows, and whether to say anything. */
struct curve_estimate {
    int fitted;             /* the fit ran (else 'why' says why not) */
    int tell;               /* reliable and the predicted gain exceeds the noise */
    struct stats_powerlaw fit;
    double f1_now, f1_2n;   /* fitted macro-F1 at the largest size and at twice it */
    double se;              /* corrected standard error of the largest size's mean */
    char why[1200];
};
void curve_estimate(const struct curve_point *pt, size_t m, const struct curve_setup *s, struct curve_estimate *est);

void curve_terminal(FILE *fp, const struct curve_point *pt, size_t m, const struct curve_setup *s,
                    const struct curve_estimate *est);
int curve_svg(const char *path, const struct curve_point *pt, size_t m, struct err *e);
int curve_html(const char *path, const struct curve_point *pt, size_t m, const struct curve_setup *s,
               const struct curve_estimate *est, struct err *e);
struct cJSON *curve_json(const struct curve_point *pt, size_t m, const struct curve_setup *s,
                         const struct curve_estimate *est);

#endif
