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

static const struct cli_opt opts[] = {
    PIPELINE_OPTIONS,
    { "folds", 'k', "<n>", "folds, >= 2 (default: 5)" },
    { "repeats", 'R', "<n>", "repeats with fresh shuffles (default: 3)" },
    { "sizes", 0, "<list>", "shares of each fold's training rows, in (0, 1] (default: 0.1,0.2,0.4,0.7,1)" },
    { "plot", 0, "<file>", "write the curve as an SVG image" },
    { "report", 0, "<file>", "write a self-contained HTML page" },
    { "json", 'j', "<file>", "write the points and the estimate as JSON" },
    DATA_OPTIONS,
    RUN_OPTIONS,
    { NULL, 0, NULL, NULL }
};

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

struct curve_args {
    struct data_args da;
    struct fit_args fa;
    struct cv_params cp;
    double sizes[MAX_SIZES];
    size_t nsizes;
    const char *plot, *report, *json;
};

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return x < y ? -1 : x > y;
}

static int parse_sizes(const struct cli_cmd *cmd, const char *val, struct curve_args *a)
{
    char *copy = xstrdup(val), *save = NULL;
    int rc = 0;
    a->nsizes = 0;
    for (char *tok = strtok_r(copy, ",", &save); tok && rc == 0; tok = strtok_r(NULL, ",", &save)) {
        double x;
        if (a->nsizes == MAX_SIZES)
            rc = cli_usage(cmd, "option '--sizes' takes at most %d shares", MAX_SIZES);
        else if (cli_double(cmd, "sizes", tok, 1e-6, 1.0, &x) < 0)
            rc = -1;
        else
            a->sizes[a->nsizes++] = x;
    }
    free(copy);
    if (rc == 0 && a->nsizes == 0)
        rc = cli_usage(cmd, "option '--sizes' needs at least one share in (0, 1]");
    qsort(a->sizes, a->nsizes, sizeof a->sizes[0], cmp_double);
    size_t m = 0; /* drop repeats */
    for (size_t i = 0; i < a->nsizes; i++)
        if (m == 0 || a->sizes[i] != a->sizes[m - 1])
            a->sizes[m++] = a->sizes[i];
    a->nsizes = m;
    return rc ? -1 : 0;
}

static int parse(int argc, char **argv, struct curve_args *a, const char **data)
{
    const struct cli_cmd *cmd = &cmd_curve_info;
    struct cli_parser p;
    cli_parser_init(&p, cmd, argc, argv);
    int i;
    const char *val;
    while ((i = cli_next(&p, &val)) >= 0) {
        const char *name = opt_name(cmd, i);
        int t = cv_command_option(&a->da, &a->fa, &a->cp, cmd, name, val);
        if (t < 0)
            break;
        if (t > 0)
            continue;
        if (strcmp(name, "sizes") == 0) {
            if (parse_sizes(cmd, val, a) < 0)
                break;
        } else if (strcmp(name, "plot") == 0) {
            a->plot = val;
        } else if (strcmp(name, "report") == 0) {
            a->report = val;
        } else if (strcmp(name, "json") == 0) {
            a->json = val;
        }
    }
    int rc = i == CLI_HELP ? -1 : i != CLI_END ? ERR_INPUT : 0;
    if (rc == 0 && p.npos != 1)
        rc = cli_usage(cmd, "curve takes one data file");
    if (rc == 0)
        *data = p.pos[0];
    cli_parser_release(&p);
    return rc;
}

int cmd_curve(int argc, char **argv)
{
    struct curve_args a;
    memset(&a, 0, sizeof a);
    cli_keep_freed_memory();
    data_args_init(&a.da);
    fit_args_init(&a.fa);
    struct cv_params cp0 = CV_PARAMS_INIT;
    a.cp = cp0;
    static const double defaults[] = { 0.1, 0.2, 0.4, 0.7, 1.0 };
    memcpy(a.sizes, defaults, sizeof defaults);
    a.nsizes = sizeof defaults / sizeof defaults[0];
    const char *data = NULL;
    int rc = parse(argc, argv, &a, &data);
    if (rc != 0)
        return rc < 0 ? ERR_OK : rc;
    a.cp.seed = a.da.seed;
    a.cp.threads = a.da.threads;
    a.fa.spec.seed = a.da.seed;

    struct err e = ERR_INIT;
    struct corpus c;
    memset(&c, 0, sizeof c);
    struct vecset *vs = NULL;
    struct curve_point *pt = NULL;
    cJSON *js = NULL;
    const char *ins[] = { data, a.fa.vectors };
    const char *outs[] = { a.plot, a.report, a.json };
    for (size_t q = 0; q < 3; q++)
        if (outs[q] && ofile_check_distinct(outs[q], ins, 2, &e) < 0)
            goto fail;
    if (fit_args_open_vectors(&a.fa, &vs, &e) < 0)
        goto fail;
    struct dataset_options dopt;
    data_args_dataset(&a.da, 1, &dopt);
    if (corpus_load(&c, data, &dopt, &a.da.text, &e) < 0)
        goto fail;
    cli_warn_too_long(data, c.too_long_line, c.too_long);

    pt = xcalloc(a.nsizes, sizeof *pt);
    int tiny = 0, unconverged = 0;
    for (size_t q = 0; q < a.nsizes; q++) {
        struct cv_params cp = a.cp;
        struct cv_result r = CV_RESULT_INIT;
        cp.train_fraction = a.sizes[q];
        if (!cli_quiet)
            fprintf(stderr, "curve: share %.2f of the training rows (%zu of %zu)\n", a.sizes[q], q + 1, a.nsizes);
        if (cv_run(&r, &a.fa.spec, &c, vs, &cp, &e) < 0)
            goto fail;
        pt[q].fraction = a.sizes[q];
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

    struct curve_setup s = { data, &a.fa, &a.cp, c.ds.n, c.ds.nlabels };
    struct curve_estimate est;
    curve_estimate(pt, a.nsizes, &s, &est);
    curve_terminal(stdout, pt, a.nsizes, &s, &est);
    if (a.plot && curve_svg(a.plot, pt, a.nsizes, &e) < 0)
        goto fail;
    if (a.report && curve_html(a.report, pt, a.nsizes, &s, &est, &e) < 0)
        goto fail;
    if (a.json) {
        js = curve_json(pt, a.nsizes, &s, &est);
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
