/* compare_out.c -- compare's ranking, test and outputs (see compare_out.h). */
#include "compare_out.h"

#include <cjson/cJSON.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/chart.h"
#include "vecsift/err.h"
#include "vecsift/jsonv.h"
#include "vecsift/ofile.h"
#include "vecsift/report.h"
#include "vecsift/xalloc.h"

void compare_wrap(FILE *fp, const char *text, size_t width)
{
    /* greedy: break at the last space that keeps a line within 'width'
     * bytes (the texts here are ASCII but for the odd ± sign) */
    const char *p = text;
    while (*p) {
        const char *nl = strchr(p, '\n');
        size_t len = nl ? (size_t)(nl - p) : strlen(p);
        if (len > width) {
            const char *cut = p + width;
            while (cut > p && *cut != ' ')
                cut--;
            if (cut > p)
                len = (size_t)(cut - p);
        }
        fprintf(fp, "%.*s\n", (int)len, p);
        p += len;
        if (*p == ' ' || *p == '\n')
            p++;
    }
}

/* ---- ranking and the test ---- */

int compare_rank(struct compare_row *rows, size_t n, const struct compare_setup *s, size_t *order, struct err *e)
{
    /* insertion sort: stable, best first */
    for (size_t i = 0; i < n; i++) {
        size_t j = i;
        for (; j > 0 && rows[i].r.spread.macro_f1.mean > rows[order[j - 1]].r.spread.macro_f1.mean; j--)
            order[j] = order[j - 1];
        order[j] = i;
    }
    if (n == 0)
        return 0;
    struct compare_row *b = &rows[order[0]];
    size_t J = b->r.repeats * (size_t)b->r.folds;
    double *d = xcalloc(J, sizeof *d);
    int rc = 0;
    b->best = 1;
    b->not_worse = 1;
    b->t_vs_best = b->p_vs_best = NAN;
    for (size_t q = 1; q < n && rc == 0; q++) {
        struct compare_row *o = &rows[order[q]];
        /* d_j = best - other on fold j: the same rows held out in both */
        for (size_t j = 0; j < J; j++)
            d[j] = b->f1[j] - o->f1[j];
        struct stats_ttest t;
        rc = stats_corrected_ttest(d, J, s->n_test, s->n_train, &t, e);
        o->t_vs_best = t.t;
        o->p_vs_best = t.p_greater; /* H1: the best is better */
        o->not_worse = t.p_greater >= s->alpha;
    }
    free(d);
    return rc;
}

static const char *base_name(const char *path)
{
    const char *s = strrchr(path, '/');
    return s ? s + 1 : path;
}

void compare_row_name(const struct compare_row *row, char *buf, size_t n)
{
    if (row->pool == POOL_BOW)
        snprintf(buf, n, "bag of words, %s", pipeline_classifier_name(row->clf));
    else
        snprintf(buf, n, "%s %s, %s", base_name(row->vectors), features_pool_name(row->pool),
                 pipeline_classifier_name(row->clf));
}

static const char *verdict(const struct compare_row *row, int brief)
{
    return row->best ? "best" : !row->not_worse ? "worse" : brief ? "not sig. worse" : "not significantly worse";
}

static const char *ASSUMPTIONS =
    "The test is the corrected resampled t-test of Nadeau and Bengio (2003, \"Inference for the "
    "Generalization Error\", Machine Learning 52:239-281), one-sided at 5%%: H0 says a set-up is no worse "
    "than the best. It pairs the macro-F1 scores fold by fold (every set-up was scored on the same folds). "
    "Training sets of different folds share rows, so fold scores are not independent; the correction "
    "inflates the variance of the mean difference from 1/J to 1/J + n_test/n_train (here 1/%zu + %.0f/%.0f). "
    "It assumes the per-fold differences are roughly normal. \"Not significantly worse\" means these rows "
    "cannot tell the two apart, not that they are equal.";

static void assumptions(char *buf, size_t n, const struct compare_setup *s)
{
    snprintf(buf, n, ASSUMPTIONS, (size_t)s->cp->folds * s->cp->repeats, s->n_test, s->n_train);
}

static void fmt_p(char *buf, size_t n, double p)
{
    if (isnan(p))
        snprintf(buf, n, "-");
    else if (p < 0.001)
        snprintf(buf, n, "< 0.001");
    else
        snprintf(buf, n, "%.3f", p);
}

static void fmt_cov(char *buf, size_t n, double c)
{
    if (isnan(c))
        snprintf(buf, n, "n/a");
    else
        snprintf(buf, n, "%.1f%%", 100 * c);
}

/* The table's cells, ranked; 'brief' shortens the verdict.  Caller frees each. */
static char **table_cells(const struct compare_row *rows, const size_t *order, size_t n, size_t ncols, int brief)
{
    char **cells = xcalloc(n * ncols, sizeof *cells);
    char buf[256];
    for (size_t q = 0; q < n; q++) {
        const struct compare_row *r = &rows[order[q]];
        char **c = cells + q * ncols;
        snprintf(buf, sizeof buf, "%zu", q + 1);
        c[0] = xstrdup(buf);
        c[1] = xstrdup(r->vectors ? base_name(r->vectors) : "-");
        c[2] = xstrdup(features_pool_name(r->pool));
        c[3] = xstrdup(pipeline_classifier_name(r->clf));
        report_fmt_mean_sd(buf, sizeof buf, r->r.spread.macro_f1.mean, r->r.spread.macro_f1.sd, 3);
        c[4] = xstrdup(buf);
        report_fmt_mean_sd(buf, sizeof buf, r->r.spread.accuracy.mean, r->r.spread.accuracy.sd, 3);
        c[5] = xstrdup(buf);
        report_fmt_mean_sd(buf, sizeof buf, r->r.spread.log_loss.mean, r->r.spread.log_loss.sd, 3);
        c[6] = xstrdup(buf);
        fmt_cov(buf, sizeof buf, r->coverage);
        c[7] = xstrdup(buf);
        snprintf(buf, sizeof buf, "%.2f", r->r.seconds);
        c[8] = xstrdup(buf);
        fmt_p(buf, sizeof buf, r->p_vs_best);
        c[9] = xstrdup(buf);
        c[10] = xstrdup(verdict(r, brief));
    }
    return cells;
}

static const char *const HEADER[] = { "rank", "vectors", "pool", "classifier", "macro F1", "accuracy",
                                      "log loss", "coverage", "seconds", "p vs best", "verdict" };
#define NCOLS 11

static void free_cells(char **cells, size_t n)
{
    for (size_t i = 0; i < n; i++)
        free(cells[i]);
    free(cells);
}

void compare_terminal(FILE *fp, const struct compare_row *rows, const size_t *order, size_t n,
                      const struct compare_setup *s)
{
    size_t J = (size_t)s->cp->folds * s->cp->repeats;
    fprintf(fp, "\nCompared %zu set-up%s on %s: %zu rows, %zu labels, %d folds x %zu repeats (seed %llu), "
                "the same folds for every set-up\n\n",
            n, n == 1 ? "" : "s", s->data, s->n_rows, s->n_labels, s->cp->folds, s->cp->repeats,
            (unsigned long long)s->cp->seed);
    char **cells = table_cells(rows, order, n, NCOLS, 0);
    report_table_print(fp, HEADER, NCOLS, (const char *const *)cells, n, "rlllrrrrrrl");
    free_cells(cells, n * NCOLS);
    char text[2048];
    assumptions(text, sizeof text, s);
    char all[4096];
    snprintf(all, sizeof all,
             "\nmacro F1, accuracy, log loss: mean ± sd over the %zu folds. coverage: share of held-out tokens with "
             "a vector (bow: seen in the training rows). seconds: each set-up's cross-validation; set-ups ran side "
             "by side on %d thread%s, %.2f s in all.\n\np vs best: %s",
             J, s->threads, s->threads == 1 ? "" : "s", s->wall, text);
    compare_wrap(fp, all, 100);
}

/* ---- JSON ---- */

cJSON *compare_num(double x)
{
    return isfinite(x) ? jsonv_number_new(x) : cJSON_CreateNull();
}

cJSON *compare_spread_json(struct metrics_spread sp)
{
    cJSON *o = cJSON_CreateObject();
    cJSON_AddItemToObject(o, "mean", compare_num(sp.mean));
    cJSON_AddItemToObject(o, "sd", compare_num(sp.sd));
    return o;
}

cJSON *compare_json(const struct compare_row *rows, const size_t *order, size_t n, const struct compare_setup *s)
{
    cJSON *root = cJSON_CreateObject();
    cJSON *st = cJSON_AddObjectToObject(root, "settings");
    cJSON_AddStringToObject(st, "data", s->data);
    struct dataset_options dopt;
    common_data_options(s->da, 1, &dopt);
    cJSON *tc = cJSON_AddArrayToObject(st, "text_columns");
    for (size_t t = 0; t < dopt.ntext; t++)
        cJSON_AddItemToArray(tc, cJSON_CreateString(dopt.text_cols[t]));
    cJSON_AddStringToObject(st, "label_column", dopt.label_col);
    cJSON_AddNumberToObject(st, "rows", (double)s->n_rows);
    cJSON_AddNumberToObject(st, "folds", s->cp->folds);
    cJSON_AddNumberToObject(st, "repeats", (double)s->cp->repeats);
    cJSON_AddNumberToObject(st, "seed", (double)s->cp->seed);
    if (s->base->C > 0)
        cJSON_AddItemToObject(st, "C", jsonv_number_new(s->base->C));
    else
        cJSON_AddStringToObject(st, "C", "each set-up's default (its result's C)");
    if (s->base->gamma > 0)
        cJSON_AddItemToObject(st, "gamma", jsonv_number_new(s->base->gamma));
    else
        cJSON_AddStringToObject(st, "gamma", "default");
    cJSON_AddStringToObject(st, "class_weight", s->base->balanced ? "balanced" : "none");
    cJSON_AddBoolToObject(st, "sublinear_tf", s->base->feat.sublinear_tf);
    cJSON_AddNumberToObject(st, "max_iter", s->base->max_iter);
    cJSON *te = cJSON_AddObjectToObject(st, "test");
    cJSON_AddStringToObject(te, "method", "corrected resampled t-test (Nadeau and Bengio 2003), one-sided, "
                                          "on per-fold macro-F1 paired by fold");
    cJSON_AddItemToObject(te, "alpha", jsonv_number_new(s->alpha));
    cJSON_AddItemToObject(te, "n_test", jsonv_number_new(s->n_test));
    cJSON_AddItemToObject(te, "n_train", jsonv_number_new(s->n_train));
    cJSON_AddStringToObject(st, "version", VECSIFT_VERSION);

    cJSON *res = cJSON_AddArrayToObject(root, "results");
    for (size_t q = 0; q < n; q++) {
        const struct compare_row *r = &rows[order[q]];
        cJSON *o = cJSON_CreateObject();
        cJSON_AddNumberToObject(o, "rank", (double)(q + 1));
        if (r->vectors)
            cJSON_AddStringToObject(o, "vectors", r->vectors);
        else
            cJSON_AddNullToObject(o, "vectors");
        cJSON_AddStringToObject(o, "pool", features_pool_name(r->pool));
        cJSON_AddStringToObject(o, "classifier", pipeline_classifier_name(r->clf));
        struct pipeline_spec rs = *s->base;
        rs.feat.pool = r->pool;
        rs.clf = r->clf;
        cJSON_AddItemToObject(o, "C", jsonv_number_new(pipeline_spec_C(&rs)));
        cJSON_AddItemToObject(o, "macro_f1", compare_spread_json(r->r.spread.macro_f1));
        cJSON_AddItemToObject(o, "accuracy", compare_spread_json(r->r.spread.accuracy));
        cJSON_AddItemToObject(o, "log_loss", compare_spread_json(r->r.spread.log_loss));
        cJSON_AddItemToObject(o, "coverage", compare_num(r->coverage));
        cJSON_AddItemToObject(o, "seconds", jsonv_number_new(r->r.seconds));
        cJSON_AddBoolToObject(o, "best", r->best);
        cJSON_AddItemToObject(o, "t_vs_best", compare_num(r->t_vs_best));
        cJSON_AddItemToObject(o, "p_vs_best", compare_num(r->p_vs_best));
        cJSON_AddBoolToObject(o, "not_significantly_worse", r->not_worse);
        cJSON_AddItemToObject(o, "fold_macro_f1", jsonv_doubles_new(r->f1, r->r.repeats * (size_t)r->r.folds));
        cJSON_AddItemToArray(res, o);
    }
    return root;
}

/* ---- HTML ---- */

int compare_html(const char *path, const struct compare_row *rows, const size_t *order, size_t n,
                 const struct compare_setup *s, struct err *e)
{
    ofile *o = ofile_open(path, e);
    if (!o)
        return -1;
    FILE *fp = ofile_fp(o);
    size_t J = (size_t)s->cp->folds * s->cp->repeats;
    char sub[1024], text[2048];
    snprintf(sub, sizeof sub, "%s: %zu rows, %zu labels, %d folds x %zu repeats, seed %llu, the same folds for "
                              "every set-up; vecsift %s",
             s->data, s->n_rows, s->n_labels, s->cp->folds, s->cp->repeats, (unsigned long long)s->cp->seed,
             VECSIFT_VERSION);
    report_html_begin(fp, "Comparison of set-ups", sub);

    const char **names = xcalloc(n, sizeof *names);
    const char **flags = xcalloc(n, sizeof *flags);
    char (*nbuf)[256] = xcalloc(n, sizeof *nbuf);
    double *mean = xcalloc(n, sizeof *mean), *lo = xcalloc(n, sizeof *lo), *hi = xcalloc(n, sizeof *hi);
    for (size_t q = 0; q < n; q++) {
        const struct compare_row *r = &rows[order[q]];
        compare_row_name(r, nbuf[q], sizeof nbuf[q]);
        names[q] = nbuf[q];
        flags[q] = verdict(r, 0);
        mean[q] = r->r.spread.macro_f1.mean;
        lo[q] = mean[q] - r->r.spread.macro_f1.sd;
        hi[q] = mean[q] + r->r.spread.macro_f1.sd;
    }
    snprintf(text, sizeof text,
             "Each set-up's macro F1: the dot is the mean over the %zu folds, the whisker one standard deviation "
             "either side. Whiskers show how much a single fold varies, not the uncertainty of the mean; the "
             "verdict after each row comes from the paired test below.",
             J);
    report_html_section(fp, "Macro F1 by set-up, best first", text);
    chart_intervals(fp, "Macro F1 (mean \xC2\xB1 1 sd over folds)", names, n, mean, lo, hi, n ? 0 : CHART_NO_BEST,
                    flags, "macro F1");

    char **cells = table_cells(rows, order, n, NCOLS, 1);
    static const int numeric[NCOLS] = { 1, 0, 0, 0, 1, 1, 1, 1, 1, 1, 0 };
    snprintf(text, sizeof text,
             "Mean \xC2\xB1 sd over folds. Coverage is the share of held-out tokens that have a vector (for the "
             "bag of words: that were seen in the training rows). Seconds: each set-up's cross-validation, "
             "set-ups running side by side on %d threads (%.2f s in all).",
             s->threads, s->wall);
    report_html_section(fp, "Table", text);
    /* the rank is the row order here: leave its column out to fit the page */
    const char **view = xcalloc(n * (NCOLS - 1) + 1, sizeof *view);
    for (size_t q = 0; q < n; q++)
        for (size_t j = 1; j < NCOLS; j++)
            view[q * (NCOLS - 1) + j - 1] = cells[q * NCOLS + j];
    report_html_table(fp, HEADER + 1, NCOLS - 1, view, n, numeric + 1);
    free(view);
    free_cells(cells, n * NCOLS);

    assumptions(text, sizeof text, s);
    report_html_section(fp, "What the test assumes", text);
    report_html_note(fp, "A higher score on a few hundred tickets is weak evidence on its own. Prefer the "
                         "simpler or cheaper set-up among those not significantly worse than the best, and "
                         "re-run the comparison when the kinds of tickets change. Word vectors carry the "
                         "associations of the text they were learned from, including social biases.");
    report_html_end(fp);
    free(names);
    free(flags);
    free(nbuf);
    free(mean);
    free(lo);
    free(hi);
    return ofile_commit(o, e);
}
