/* curve_out.c -- the learning curve's estimate and outputs (see
 * curve_out.h): table, SVG plot, HTML page, JSON. */
#include "curve_out.h"

#include <cjson/cJSON.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "compare_out.h"
#include "evaluate_out.h"
#include "vecsift/chart.h"
#include "vecsift/err.h"
#include "vecsift/jsonv.h"
#include "vecsift/ofile.h"
#include "vecsift/report.h"
#include "vecsift/xalloc.h"

static const char *CITATION = "Figueroa, Zeng-Treitler, Kandula and Ngo (2012), \"Predicting sample size required "
                              "for classification performance\", BMC Medical Informatics and Decision Making 12:8";

void curve_estimate(const struct curve_point *pt, size_t m, const struct curve_setup *s, struct curve_estimate *est)
{
    memset(est, 0, sizeof *est);
    est->f1_now = est->f1_2n = est->se = NAN;
    double *n = xcalloc(m ? m : 1, sizeof *n), *y = xcalloc(m ? m : 1, sizeof *y);
    for (size_t i = 0; i < m; i++) {
        n[i] = pt[i].train_rows;
        y[i] = 1.0 - pt[i].macro_f1.mean;
    }
    struct err e = ERR_INIT;
    if (stats_powerlaw_fit(n, y, m, &est->fit, &e) < 0) {
        snprintf(est->why, sizeof est->why, "no curve could be fitted (%s)", e.msg);
        goto out;
    }
    est->fitted = 1;
    const struct curve_point *last = &pt[m - 1];
    double J = (double)s->cp->folds * (double)s->cp->repeats;
    double nte = (double)s->n_rows / (double)s->cp->folds;
    /* The uncertainty of the largest size's mean macro-F1: the fold sd with
     * the Nadeau and Bengio (2003) correction for overlapping training sets,
     * sd * sqrt(1/J + n_test/n_train). */
    est->se = last->macro_f1.sd * sqrt(1.0 / J + nte / (last->train_rows > 0 ? last->train_rows : 1));
    est->f1_now = 1.0 - stats_powerlaw_eval(&est->fit, est->fit.n_max);
    est->f1_2n = 1.0 - est->fit.at_2n;
    double gain = est->f1_2n - est->f1_now;
    if (!est->fit.reliable)
        snprintf(est->why, sizeof est->why, "the power law fit is not to be trusted: %s", est->fit.why);
    else if (!(est->se >= 0))
        snprintf(est->why, sizeof est->why, "one fold gives no spread to judge the noise by");
    else if (gain <= est->se)
        snprintf(est->why, sizeof est->why,
                 "the curve is too flat or noisy to tell: the fit predicts %+.3f macro F1 at twice the rows, no more "
                 "than the uncertainty of the present figure (%.3f, corrected standard error)",
                 gain, est->se);
    else
        est->tell = 1;
out:
    free(n);
    free(y);
}

static void estimate_text(char *buf, size_t size, const struct curve_estimate *est)
{
    if (est->tell)
        snprintf(buf, size,
                 "Doubling the labelled rows (from about %.0f to %.0f training rows per fit) might raise macro F1 "
                 "from about %.3f to about %.3f; the fitted curve levels off near %.3f. This extrapolates an "
                 "inverse power law, error = a n^-b + c with a = %.3g, b = %.3g, c = %.3g, fitted to 1 - macro F1 "
                 "(%s): a rough guide, not a promise. The present figure is uncertain by about %.3f.",
                 est->fit.n_max, 2 * est->fit.n_max, est->f1_now, est->f1_2n, 1 - est->fit.c, est->fit.a, est->fit.b,
                 est->fit.c, CITATION, est->se);
    else
        snprintf(buf, size,
                 "What more labels would bring cannot be told from this curve: %s. (Inverse power law fitted to "
                 "1 - macro F1, %s.)",
                 est->why, CITATION);
}

static char **cells_of(const struct curve_point *pt, size_t m)
{
    char **cells = xcalloc(m * 4, sizeof *cells);
    char buf[128];
    for (size_t i = 0; i < m; i++) {
        snprintf(buf, sizeof buf, "%.2f", pt[i].fraction);
        cells[i * 4] = xstrdup(buf);
        snprintf(buf, sizeof buf, "%.0f", pt[i].train_rows);
        cells[i * 4 + 1] = xstrdup(buf);
        report_fmt_mean_sd(buf, sizeof buf, pt[i].macro_f1.mean, pt[i].macro_f1.sd, 3);
        cells[i * 4 + 2] = xstrdup(buf);
        report_fmt_mean_sd(buf, sizeof buf, pt[i].accuracy.mean, pt[i].accuracy.sd, 3);
        cells[i * 4 + 3] = xstrdup(buf);
    }
    return cells;
}

static void free_cells(char **cells, size_t n)
{
    for (size_t i = 0; i < n; i++)
        free(cells[i]);
    free(cells);
}

static const char *const HEADER[] = { "share", "training rows", "macro F1", "accuracy" };

void curve_terminal(FILE *fp, const struct curve_point *pt, size_t m, const struct curve_setup *s,
                    const struct curve_estimate *est)
{
    char what[512], text[2048];
    evaluate_describe(s->fa, what, sizeof what);
    fprintf(fp, "\nLearning curve: %s\n%zu rows, %zu labels, %d folds x %zu repeats (seed %llu); each fit uses a "
                "stratified share of its fold's training rows and is scored on the whole held-out fold\n\n",
            what, s->n_rows, s->n_labels, s->cp->folds, s->cp->repeats, (unsigned long long)s->cp->seed);
    char **cells = cells_of(pt, m);
    report_table_print(fp, HEADER, 4, (const char *const *)cells, m, "rrrr");
    free_cells(cells, m * 4);
    estimate_text(text, sizeof text, est);
    fprintf(fp, "\nmacro F1 and accuracy: mean ± sd over the %zu folds.\n", (size_t)s->cp->folds * s->cp->repeats);
    compare_wrap(fp, text, 100);
}

/* The chart itself, for the SVG file and the page. */
static void draw(FILE *fp, const struct curve_point *pt, size_t m)
{
    double *x = xcalloc(m, sizeof *x), *y = xcalloc(m, sizeof *y), *lo = xcalloc(m, sizeof *lo),
           *hi = xcalloc(m, sizeof *hi);
    for (size_t i = 0; i < m; i++) {
        x[i] = pt[i].train_rows;
        y[i] = pt[i].macro_f1.mean;
        double sd = isnan(pt[i].macro_f1.sd) ? 0 : pt[i].macro_f1.sd;
        lo[i] = y[i] - sd;
        hi[i] = y[i] + sd;
    }
    chart_curve(fp, "Macro F1 against training rows (band: \xC2\xB1 1 sd over folds)", x, y, m,
                "training rows per fit", "macro F1", lo, hi, NULL);
    free(x);
    free(y);
    free(lo);
    free(hi);
}

int curve_svg(const char *path, const struct curve_point *pt, size_t m, struct err *e)
{
    ofile *o = ofile_open(path, e);
    if (!o)
        return -1;
    fputs("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n", ofile_fp(o));
    draw(ofile_fp(o), pt, m);
    return ofile_commit(o, e);
}

int curve_html(const char *path, const struct curve_point *pt, size_t m, const struct curve_setup *s,
               const struct curve_estimate *est, struct err *e)
{
    ofile *o = ofile_open(path, e);
    if (!o)
        return -1;
    FILE *fp = ofile_fp(o);
    char what[512], sub[1024], text[2048];
    evaluate_describe(s->fa, what, sizeof what);
    snprintf(sub, sizeof sub, "%s: %s; %zu rows, %zu labels, %d folds x %zu repeats, seed %llu; vecsift %s", s->data,
             what, s->n_rows, s->n_labels, s->cp->folds, s->cp->repeats, (unsigned long long)s->cp->seed,
             VECSIFT_VERSION);
    report_html_begin(fp, "Learning curve", sub);
    report_html_section(fp, "Would more labels pay?", NULL);
    estimate_text(text, sizeof text, est);
    report_html_paragraph(fp, text);
    draw(fp, pt, m);
    report_html_section(fp, "Points",
                        "Each fit uses a stratified share of its fold's training rows and is scored on the whole "
                        "held-out fold, the same folds at every size. Mean \xC2\xB1 sd over folds.");
    char **cells = cells_of(pt, m);
    static const int numeric[] = { 1, 1, 1, 1 };
    report_html_table(fp, HEADER, 4, (const char *const *)cells, m, numeric);
    free_cells(cells, m * 4);
    report_html_note(fp, "The smallest sizes may miss rare queues almost entirely; their scores say little about "
                         "those queues. The curve describes tickets like these: new kinds of tickets need new "
                         "labels whatever the curve says.");
    report_html_end(fp);
    return ofile_commit(o, e);
}

cJSON *curve_json(const struct curve_point *pt, size_t m, const struct curve_setup *s,
                  const struct curve_estimate *est)
{
    cJSON *root = cJSON_CreateObject();
    cJSON *st = cJSON_AddObjectToObject(root, "settings");
    cJSON_AddStringToObject(st, "data", s->data);
    const struct pipeline_spec *sp = &s->fa->spec;
    if (s->fa->vectors && sp->feat.pool != POOL_BOW)
        cJSON_AddStringToObject(st, "vectors", s->fa->vectors);
    else
        cJSON_AddNullToObject(st, "vectors");
    cJSON_AddStringToObject(st, "pool", features_pool_name(sp->feat.pool));
    cJSON_AddStringToObject(st, "classifier", pipeline_classifier_name(sp->clf));
    cJSON_AddNumberToObject(st, "rows", (double)s->n_rows);
    cJSON_AddNumberToObject(st, "folds", s->cp->folds);
    cJSON_AddNumberToObject(st, "repeats", (double)s->cp->repeats);
    cJSON_AddNumberToObject(st, "seed", (double)s->cp->seed);
    cJSON_AddStringToObject(st, "version", VECSIFT_VERSION);
    cJSON *pts = cJSON_AddArrayToObject(root, "points");
    for (size_t i = 0; i < m; i++) {
        cJSON *o = cJSON_CreateObject();
        cJSON_AddItemToObject(o, "fraction", jsonv_number_new(pt[i].fraction));
        cJSON_AddItemToObject(o, "train_rows", jsonv_number_new(pt[i].train_rows));
        cJSON_AddItemToObject(o, "macro_f1", compare_spread_json(pt[i].macro_f1));
        cJSON_AddItemToObject(o, "accuracy", compare_spread_json(pt[i].accuracy));
        cJSON_AddItemToArray(pts, o);
    }
    cJSON *es = cJSON_AddObjectToObject(root, "estimate");
    cJSON_AddBoolToObject(es, "fitted", est->fitted);
    cJSON_AddBoolToObject(es, "tell", est->tell);
    if (est->fitted) {
        cJSON_AddItemToObject(es, "a", compare_num(est->fit.a));
        cJSON_AddItemToObject(es, "b", compare_num(est->fit.b));
        cJSON_AddItemToObject(es, "c", compare_num(est->fit.c));
        cJSON_AddBoolToObject(es, "reliable", est->fit.reliable);
        cJSON_AddItemToObject(es, "macro_f1_now", compare_num(est->f1_now));
        cJSON_AddItemToObject(es, "macro_f1_at_twice", compare_num(est->f1_2n));
        cJSON_AddItemToObject(es, "standard_error", compare_num(est->se));
    }
    cJSON_AddStringToObject(es, "why_not", est->why);
    return root;
}
