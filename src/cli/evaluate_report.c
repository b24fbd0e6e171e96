/* evaluate_report.c -- evaluate's HTML page (see evaluate_report.h). */
#include "evaluate_report.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/chart.h"
#include "vecsift/err.h"
#include "vecsift/metrics.h"
#include "vecsift/ofile.h"
#include "vecsift/report.h"
#include "vecsift/xalloc.h"

static const char *CAUTION =
    "A classifier will misroute some tickets. Keep a person on the 'review' route, watch each queue's "
    "precision once the router is on, and re-evaluate when the kinds of tickets change. Word vectors and "
    "models learned from text carry the associations of that text, including social biases; do not use "
    "them to make decisions about people. Tickets hold personal data: models and vector files store words "
    "from them, so handle those files under the applicable law and your organisation's policy.";

int evaluate_html(const char *path, const struct cv_result *r, const struct corpus *c, const struct evaluate_setup *s,
                 struct err *e)
{
    ofile *o = ofile_open(path, e);
    if (!o)
        return -1;
    FILE *fp = ofile_fp(o);
    size_t K = r->k, T = r->repeats * (size_t)r->folds;
    char what[512], sub[1024], buf[128];
    evaluate_describe(s->fa, what, sizeof what);
    snprintf(sub, sizeof sub, "%s: %zu rows, %zu labels, %d folds x %zu repeats, seed %llu; vecsift %s", s->data,
             r->n, K, r->folds, r->repeats, (unsigned long long)s->cp->seed, VECSIFT_VERSION);
    report_html_begin(fp, "Cross-validated evaluation", sub);

    /* Summary table */
    struct evaluate_advice cut;
    evaluate_cut(r, s->target, &cut);
    char p1[64], p2[64], p3[64], p4[64], p5[64];
    report_fmt_mean_sd(p1, sizeof p1, r->pooled.accuracy, r->spread.accuracy.sd, 3);
    report_fmt_mean_sd(p2, sizeof p2, r->pooled.macro_f1, r->spread.macro_f1.sd, 3);
    report_fmt_mean_sd(p3, sizeof p3, r->pooled.weighted_f1, r->spread.weighted_f1.sd, 3);
    report_fmt_mean_sd(p4, sizeof p4, r->pooled.log_loss, r->spread.log_loss.sd, 3);
    report_fmt_mean_sd(p5, sizeof p5, r->pooled.brier, r->spread.brier.sd, 3);
    char para[2048], cval[64];
    if (r->chosen_C)
        snprintf(cval, sizeof cval, "C chosen in each fold");
    else
        snprintf(cval, sizeof cval, "C %g", pipeline_spec_C(&s->fa->spec));
    snprintf(para, sizeof para, "%s, %s, class weight %s.", what, cval, s->fa->spec.balanced ? "balanced" : "none");
    report_html_section(fp, "Summary", para);
    /* the overall figures as a small table, so they stand out */
    const char *sum_hdr[] = { "overall", "pooled \xC2\xB1 sd over folds" };
    const char *sum_cells[] = { "accuracy", p1, "macro F1", p2, "weighted F1", p3, "log loss", p4, "Brier", p5 };
    static const int sum_numeric[] = { 0, 1 };
    report_html_table(fp, sum_hdr, 2, sum_cells, 5, sum_numeric);
    snprintf(para, sizeof para,
             "Figures are pooled over all out-of-fold predictions; \xC2\xB1 is the standard deviation over the "
             "%zu folds. %s.",
             T, METRICS_ZERO_DIVISION_RULE);
    report_html_paragraph(fp, para);
    if (r->chosen_C) {
        /* what the nested search chose, fold by fold */
        size_t len = (size_t)snprintf(para, sizeof para, "The parameter search chose, fold by fold: C =");
        for (size_t t = 0; t < T && len < sizeof para; t++)
            len += (size_t)snprintf(para + len, sizeof para - len, " %g", r->chosen_C[t]);
        for (size_t t = 0; r->chosen_gamma && t < T && len < sizeof para; t++)
            len += (size_t)snprintf(para + len, sizeof para - len, "%s %g", t ? "" : "; gamma factor =",
                                    r->chosen_gamma[t]);
        if (len < sizeof para)
            snprintf(para + len, sizeof para - len, ".");
        report_html_paragraph(fp, para);
    }
    if (r->unconverged) {
        snprintf(para, sizeof para, "%d of %zu fits stopped at the iteration cap.", r->unconverged, T);
        report_html_paragraph(fp, para);
    }

    /* Per-label table, worst F1 first */
    const char *hdr[] = { "label", "rows", "precision", "recall", "F1", "most often taken for" };
    char **cells = xcalloc(K * 6, sizeof *cells);
    size_t *ord = xcalloc(K, sizeof *ord);
    for (size_t k = 0; k < K; k++)
        ord[k] = k;
    for (size_t i = 1; i < K; i++)
        for (size_t j = i; j > 0 && r->pooled.label[ord[j]].f1 < r->pooled.label[ord[j - 1]].f1; j--) {
            size_t t = ord[j];
            ord[j] = ord[j - 1];
            ord[j - 1] = t;
        }
    for (size_t q = 0; q < K; q++) {
        size_t k = ord[q];
        const struct metrics_label *L = &r->pooled.label[k];
        cells[q * 6 + 0] = xstrdup(c->ds.labels[k]);
        snprintf(buf, sizeof buf, "%zu", L->support / r->repeats);
        cells[q * 6 + 1] = xstrdup(buf);
        report_fmt_mean_sd(buf, sizeof buf, L->precision, r->spread.precision[k].sd, 3);
        cells[q * 6 + 2] = xstrdup(buf);
        report_fmt_mean_sd(buf, sizeof buf, L->recall, r->spread.recall[k].sd, 3);
        cells[q * 6 + 3] = xstrdup(buf);
        report_fmt_mean_sd(buf, sizeof buf, L->f1, r->spread.f1[k].sd, 3);
        cells[q * 6 + 4] = xstrdup(buf);
        if (L->mistaken_for >= 0)
            snprintf(buf, sizeof buf, "%.60s (%.0f%%)", c->ds.labels[L->mistaken_for],
                     100.0 * (double)L->mistaken_count / (double)L->support);
        else
            snprintf(buf, sizeof buf, "-");
        cells[q * 6 + 5] = xstrdup(buf);
    }
    static const int numeric[] = { 0, 1, 1, 1, 1, 0 };
    report_html_section(fp, "Per queue, worst first", NULL);
    report_html_table(fp, hdr, 6, (const char *const *)cells, K, numeric);

    /* Bars with spread */
    double *pm = xcalloc(K, sizeof *pm), *ps = xcalloc(K, sizeof *ps), *rm = xcalloc(K, sizeof *rm),
           *rs = xcalloc(K, sizeof *rs), *fm = xcalloc(K, sizeof *fm), *fs = xcalloc(K, sizeof *fs);
    const char **names = xcalloc(K, sizeof *names);
    for (size_t q = 0; q < K; q++) {
        size_t k = ord[q];
        names[q] = c->ds.labels[k];
        pm[q] = r->pooled.label[k].precision;
        ps[q] = r->spread.precision[k].sd;
        rm[q] = r->pooled.label[k].recall;
        rs[q] = r->spread.recall[k].sd;
        fm[q] = r->pooled.label[k].f1;
        fs[q] = r->spread.f1[k].sd;
    }
    struct chart_group groups[] = { { "precision", pm, ps }, { "recall", rm, rs }, { "F1", fm, fs } };
    chart_bars_noted(fp, "Precision, recall and F1 per queue", names, K, groups, 3, "score",
                     "bar: pooled figure; whisker: \xC2\xB1 1 sd over folds");

    /* Confusion heat map */
    double *conf = xcalloc(K * K, sizeof *conf);
    for (size_t i = 0; i < K * K; i++)
        conf[i] = (double)r->pooled.conf[i];
    /* Whole counts over all repeats (as in the JSON), not averages: thirds
     * such as 0.333 next to 79.3 were hard to read. */
    snprintf(para, sizeof para,
             "Rows are the given label, columns the predicted one. Counts are over all %zu repeats (each row is "
             "predicted once per repeat, so a label's row sums to %zu times its rows); shading is each row's share.",
             r->repeats, r->repeats);
    report_html_section(fp, "Confusion", para);
    chart_heatmap(fp, "Confusion (given x predicted label)", (const char *const *)c->ds.labels,
                  (const char *const *)c->ds.labels, K, conf, "given label", "predicted label");

    /* Precision-coverage curve */
    size_t n = 0;
    struct metrics_cutoff *cc = metrics_cutoffs(r->all, &n);
    double *x = xcalloc(n ? n : 1, sizeof *x), *y = xcalloc(n ? n : 1, sizeof *y);
    for (size_t i = 0; i < n; i++) {
        x[i] = cc[i].coverage;
        y[i] = cc[i].precision;
    }
    char mark_label[128];
    struct chart_mark mark = { cut.coverage, cut.precision, mark_label };
    snprintf(mark_label, sizeof mark_label, "cut-off %s", cut.advice);
    if (cut.reachable)
        snprintf(para, sizeof para,
                 "Routing automatically only when the confidence is at least %s kept %.1f%% of rows at precision "
                 "%.3f out of fold (target %.2f); the rest go to a person. Use: vecsift predict --review-below %s.",
                 cut.advice, 100 * cut.coverage, cut.precision, s->target, cut.advice);
    else
        snprintf(para, sizeof para, "No confidence cut-off reaches precision %.2f on these rows.", s->target);
    report_html_section(fp, "Confidence cut-off", para);
    /* precision stays high over most of the curve: zoom the y axis on it */
    chart_curve_ranged(fp, "Precision against the share of rows routed automatically", x, y, n, "coverage",
                       "precision", NULL, NULL, cut.reachable ? &mark : NULL, CHART_Y_DATA);
    report_html_note(fp, CAUTION);
    report_html_end(fp);

    free(cc);
    free(x);
    free(y);
    free(conf);
    free(pm);
    free(ps);
    free(rm);
    free(rs);
    free(fm);
    free(fs);
    free(names);
    for (size_t i = 0; i < K * 6; i++)
        free(cells[i]);
    free(cells);
    free(ord);
    return ofile_commit(o, e);
}
