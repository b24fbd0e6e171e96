/* evaluate_report.h -- evaluate's HTML page (evaluate_report.c), drawn
 * with report.h and chart.h.  Private to src/cli. */
#ifndef VECSIFT_CLI_EVALUATE_REPORT_H
#define VECSIFT_CLI_EVALUATE_REPORT_H

#include "evaluate_out.h"

struct err;

/* The self-contained HTML report: confusion heat map, per-label bars with
 * spread, precision-coverage curve with the chosen cut-off, cautions. */
int evaluate_html(const char *path, const struct cv_result *r, const struct corpus *c, const struct evaluate_setup *s,
                 struct err *e);

#endif
