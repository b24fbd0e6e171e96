/* report_demo.c -- test-only program: writes a sample report page that uses
 * every chart and every HTML piece, to the path given on the command line,
 * and prints the per-label table to stdout as the terminal would show it.
 *
 * All numbers are INVENTED for a fictional company's support inbox; they
 * were typed in to exercise the layout and come from no model or dataset.
 * Used by tests/ext/report_page_check.py and tests/cli/report_screenshot.py.
 *
 * usage: report_demo OUT.html
 */
#include <stdio.h>

#include "vecsift/chart.h"
#include "vecsift/err.h"
#include "vecsift/ofile.h"
#include "vecsift/report.h"

#define K 6

/* Queue names: an ampersand, accents and a long name on purpose, to show
 * escaping, width handling and shortening. */
static const char *const queues[K] = {
    "billing", "delivery", "returns & refunds", "account access",
    "Rückfragen Geschäftskunden", "technical fault in the mobile app (iOS and Android)",
};

/* confusion[true*K + predicted], invented */
static const double confusion[K * K] = {
    118, 4, 6, 2, 1, 1,
    3, 96, 9, 0, 2, 0,
    7, 11, 74, 1, 3, 0,
    2, 0, 1, 61, 0, 6,
    4, 3, 2, 0, 22, 1,
    1, 0, 0, 9, 0, 40,
};

static const double prec[K] = { 0.874, 0.839, 0.804, 0.836, 0.786, 0.833 };
static const double prec_sd[K] = { 0.031, 0.042, 0.055, 0.048, 0.091, 0.067 };
static const double rec[K] = { 0.894, 0.873, 0.771, 0.871, 0.688, 0.800 };
static const double rec_sd[K] = { 0.027, 0.036, 0.061, 0.052, 0.118, 0.072 };
static const double f1[K] = { 0.884, 0.855, 0.787, 0.853, 0.733, 0.816 };
static const double f1_sd[K] = { 0.021, 0.030, 0.044, 0.041, 0.089, 0.058 };

static void write_page(FILE *fp)
{
    report_html_begin(fp, "Example report: support inbox routing",
                      "INVENTED EXAMPLE NUMBERS for a fictional company's support inbox; "
                      "they show the layout and come from no real data.");
    report_html_note(fp, "The queue \"Rückfragen Geschäftskunden\" has only 32 examples; "
                         "its figures vary widely between folds.");

    report_html_section(fp, "Where tickets go",
                        "Rows are the true queue, columns the predicted one. Shading is the "
                        "share of the row; the number is the count of tickets.");
    chart_heatmap(fp, "Confusion (all out-of-fold predictions)", queues, queues, K, confusion,
                  "true queue", "predicted queue");

    report_html_section(fp, "Per queue", "Mean over 5 folds \xC3\x97 2 repeats, with sd.");
    const struct chart_group groups[3] = {
        { "precision", prec, prec_sd }, { "recall", rec, rec_sd }, { "F1", f1, f1_sd },
    };
    chart_bars(fp, "Precision, recall and F1 per queue", queues, K, groups, 3, "score");
    char cells[K][4][80];
    const char *rows[K * 4];
    for (int i = 0; i < K; i++) {
        snprintf(cells[i][0], sizeof cells[i][0], "%s", queues[i]);
        report_fmt_mean_sd(cells[i][1], sizeof cells[i][1], prec[i], prec_sd[i], 3);
        report_fmt_mean_sd(cells[i][2], sizeof cells[i][2], rec[i], rec_sd[i], 3);
        report_fmt_mean_sd(cells[i][3], sizeof cells[i][3], f1[i], f1_sd[i], 3);
        for (int j = 0; j < 4; j++)
            rows[i * 4 + j] = cells[i][j];
    }
    static const char *const head[4] = { "queue", "precision", "recall", "F1" };
    static const int numeric[4] = { 0, 1, 1, 1 };
    report_html_table(fp, head, 4, rows, K, numeric);
    report_table_print(stdout, head, 4, rows, K, "lrrr");

    report_html_section(fp, "Confidence cut-off",
                        "Tickets below the cut-off go to a person. Higher cut-offs route "
                        "fewer tickets automatically, more precisely.");
    static const double cov[11] = { 1.00, 0.97, 0.93, 0.89, 0.84, 0.78, 0.71, 0.62, 0.51, 0.37, 0.20 };
    static const double pr[11] = { 0.846, 0.861, 0.879, 0.897, 0.912, 0.928, 0.941, 0.955, 0.968, 0.979, 0.990 };
    static const double lo[11] = { 0.829, 0.843, 0.861, 0.879, 0.893, 0.909, 0.921, 0.934, 0.946, 0.955, 0.962 };
    static const double hi[11] = { 0.862, 0.877, 0.895, 0.914, 0.929, 0.945, 0.958, 0.972, 0.984, 0.994, 1.000 };
    const struct chart_mark cut = { 0.71, 0.941, "cut-off 0.60: 71% routed, precision 0.94" };
    chart_curve(fp, "Precision against coverage", cov, pr, 11, "coverage (share routed automatically)",
                "precision", lo, hi, &cut);

    report_html_section(fp, "Settings compared", "Macro-F1 with 95% interval over folds.");
    static const char *const combos[5] = {
        "inbox-vectors / sif / logreg", "inbox-vectors / tfidf / logreg",
        "bag of words / svm-linear", "inbox-vectors / mean / svm-rbf", "public-vectors / mean / logreg",
    };
    static const double mf[5] = { 0.821, 0.814, 0.806, 0.779, 0.742 };
    static const double mlo[5] = { 0.801, 0.793, 0.784, 0.755, 0.716 };
    static const double mhi[5] = { 0.841, 0.835, 0.828, 0.803, 0.768 };
    static const char *const flags[5] = { "best", "not significantly worse", "not significantly worse",
                                          NULL, NULL };
    chart_intervals(fp, "Macro-F1 per setting", combos, 5, mf, mlo, mhi, 0, flags, "macro-F1");

    report_html_section(fp, "More labels", "Macro-F1 at several training-set sizes (mean \xC2\xB1 sd).");
    static const double size[6] = { 50, 100, 200, 300, 400, 530 };
    static const double lm[6] = { 0.512, 0.634, 0.731, 0.778, 0.804, 0.821 };
    static const double llo[6] = { 0.451, 0.597, 0.705, 0.757, 0.787, 0.806 };
    static const double lhi[6] = { 0.573, 0.671, 0.757, 0.799, 0.821, 0.836 };
    chart_curve(fp, "Learning curve", size, lm, 6, "labelled tickets used for training", "macro-F1",
                llo, lhi, NULL);
    report_html_end(fp);
}

int main(int argc, char **argv)
{
    struct err e = ERR_INIT;
    if (argc != 2) {
        fprintf(stderr, "usage: report_demo OUT.html\n");
        return 2;
    }
    ofile *o = ofile_open(argv[1], &e);
    if (!o) {
        fprintf(stderr, "report_demo: %s\n", e.msg);
        return 1;
    }
    write_page(ofile_fp(o));
    if (ofile_commit(o, &e) < 0) {
        fprintf(stderr, "report_demo: %s\n", e.msg);
        return 1;
    }
    return 0;
}
