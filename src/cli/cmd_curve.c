/* cmd_curve.c -- `vecsift curve`: a learning curve.  The same pipeline is
 * cross-validated on the same folds with a growing stratified share of each
 * fold's training rows (the held-out folds stay whole), and an inverse
 * power law fitted to the error says, cautiously, what more labels might
 * bring. */
#include <cjson/cJSON.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "commands.h"
#include "common.h"
#include "compare_out.h"
#include "curve_out.h"
#include "evaluate_out.h"
#include "vecsift/err.h"
#include "vecsift/ofile.h"
#include "vecsift/vecset.h"
#include "vecsift/xalloc.h"

#define MAX_SIZES 32

/* The shares of --sizes, ascending, without repeats. */
struct shares {
    double x[MAX_SIZES];
    size_t n;
};

struct curve_args {
    struct common_cv cv;
    struct shares sizes;
    const char *plot, *report, *json;
};

static cli_take_fn take_sizes;

#define A struct curve_args
static const struct cli_opt opts[] = {
    COMMON_FIT_OPTIONS(A, cv.fa),
    COMMON_OPT_FOLDS(A, cv.cp),
    COMMON_OPT_REPEATS("repeats with fresh shuffles (default: 3)", A, cv.cp),
    CLI_OPT_FN("sizes", 0, "<list>", "shares of each fold's training rows, in (0, 1] (default: 0.1,0.2,0.4,0.7,1)", A,
               sizes, struct shares, take_sizes),
    CLI_OPT_STR("plot", 0, "<file>", "write the curve as an SVG image", A, plot),
    CLI_OPT_STR("report", 0, "<file>", "write a self-contained HTML page", A, report),
    CLI_OPT_STR("json", 'j', "<file>", "write the points and the estimate as JSON", A, json),
    COMMON_CV_LAST_OPTIONS(A, cv)
};
#undef A

const struct cli_cmd cmd_curve_info = {
    "curve", "[options] DATA.csv",
    "learning curve: macro-F1 against training rows, and whether more labels would pay",
    opts,
    "Each size cross-validates the pipeline on the same folds, fitting on a\n"
    "stratified share of each fold's training rows and scoring on the whole\n"
    "held-out fold.  An inverse power law, error = a n^-b + c, fitted to\n"
    "1 - macro-F1 (Figueroa et al. 2012) extrapolates to twice the rows; the\n"
    "estimate is withheld when the curve is too flat or noisy to tell."
};

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return x < y ? -1 : x > y;
}

/* --sizes: a comma-separated list of shares into struct shares. */
static int take_sizes(const struct cli_cmd *cmd, const struct cli_opt *o, const char *val, void *dst)
{
    (void)o;
    struct shares *a = dst;
    char *copy = xstrdup(val), *save = NULL;
    int rc = 0;
    a->n = 0;
    for (char *tok = strtok_r(copy, ",", &save); tok && rc == 0; tok = strtok_r(NULL, ",", &save)) {
        double x;
        if (a->n == MAX_SIZES)
            rc = cli_usage(cmd, "option '--sizes' takes at most %d shares", MAX_SIZES);
        else if (cli_double(cmd, "sizes", tok, 1e-6, 1.0, &x) < 0)
            rc = -1;
        else
            a->x[a->n++] = x;
    }
    free(copy);
    if (rc == 0 && a->n == 0)
        rc = cli_usage(cmd, "option '--sizes' needs at least one share in (0, 1]");
    qsort(a->x, a->n, sizeof a->x[0], cmp_double);
    size_t m = 0; /* drop repeats */
    for (size_t i = 0; i < a->n; i++)
        if (m == 0 || a->x[i] != a->x[m - 1])
            a->x[m++] = a->x[i];
    a->n = m;
    return rc ? -1 : 0;
}

int cmd_curve(int argc, char **argv)
{
    struct curve_args a;
    memset(&a, 0, sizeof a);
    common_keep_freed_memory();
    common_cv_init(&a.cv, 3);
    static const double defaults[] = { 0.1, 0.2, 0.4, 0.7, 1.0 };
    memcpy(a.sizes.x, defaults, sizeof defaults);
    a.sizes.n = sizeof defaults / sizeof defaults[0];
    const char *data = NULL;
    int rc = cli_parse_exact(&cmd_curve_info, argc, argv, &a, 1, &data, "curve takes one data file");
    if (rc != CLI_END)
        return rc;
    rc = ERR_OK;
    common_cv_ready(&a.cv);
    struct common_cv *cv = &a.cv;

    struct err e = ERR_INIT;
    struct corpus c;
    memset(&c, 0, sizeof c);
    struct vecset *vs = NULL;
    struct curve_point *pt = NULL;
    cJSON *js = NULL;
    const char *ins[] = { data, cv->fa.vectors };
    const char *outs[] = { a.plot, a.report, a.json };
    for (size_t q = 0; q < 3; q++)
        if (outs[q] && ofile_check_distinct(outs[q], ins, 2, &e) < 0)
            goto fail;
    if (common_open_vectors(&cv->fa, &vs, &e) < 0)
        goto fail;
    if (common_load_labelled(&c, data, &cv->da, &e) < 0)
        goto fail;
    cli_warn_too_long(data, c.too_long_line, c.too_long);

    pt = xcalloc(a.sizes.n, sizeof *pt);
    int tiny = 0, unconverged = 0;
    for (size_t q = 0; q < a.sizes.n; q++) {
        struct cv_params cp = cv->cp;
        struct cv_result r = CV_RESULT_INIT;
        cp.train_fraction = a.sizes.x[q];
        if (!cli_quiet)
            fprintf(stderr, "curve: share %.2f of the training rows (%zu of %zu)\n", a.sizes.x[q], q + 1, a.sizes.n);
        if (cv_run(&r, &cv->fa.spec, &c, vs, &cp, &e) < 0)
            goto fail;
        pt[q].fraction = a.sizes.x[q];
        /* the mean over fits (folds differ by a row or so), rounded by cv */
        pt[q].train_rows = (double)r.train_rows;
        pt[q].macro_f1 = r.spread.macro_f1;
        pt[q].accuracy = r.spread.accuracy;
        tiny |= r.tiny_label;
        unconverged += r.unconverged;
        cv_release(&r);
    }
    if (tiny)
        cli_warn("a label had fewer than 3 training rows at the smallest sizes: SVM probabilities for it are "
                 "unreliable there");
    if (unconverged)
        cli_warn("%d fits stopped at the iteration cap; raise --max-iter or lower --C", unconverged);

    struct curve_setup s = { data, &cv->fa, &cv->cp, c.ds.n, c.ds.nlabels };
    struct curve_estimate est;
    curve_estimate(pt, a.sizes.n, &s, &est);
    curve_terminal(stdout, pt, a.sizes.n, &s, &est);
    if (a.plot && curve_svg(a.plot, pt, a.sizes.n, &e) < 0)
        goto fail;
    if (a.report && curve_html(a.report, pt, a.sizes.n, &s, &est, &e) < 0)
        goto fail;
    if (a.json) {
        js = curve_json(pt, a.sizes.n, &s, &est);
        if (evaluate_write_json(a.json, js, &e) < 0)
            goto fail;
    }
    goto done;
fail:
    rc = cli_fail(&e);
done:
    cJSON_Delete(js);
    free(pt);
    vecset_close(vs);
    corpus_release(&c);
    return rc;
}
