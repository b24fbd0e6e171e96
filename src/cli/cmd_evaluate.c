/* cmd_evaluate.c -- `vecsift evaluate`: repeated stratified k-fold
 * cross-validation with per-label figures, their spread, and a confidence
 * cut-off for a precision target. */
#include <cjson/cJSON.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#ifdef __GLIBC__ /* defined by the libc headers above */
#endif

#include "commands.h"
#include "common.h"
#include "evaluate_out.h"
#include "evaluate_report.h"
#include "vecsift/err.h"
#include "vecsift/ofile.h"
#include "vecsift/vecset.h"
#include "vecsift/vocab.h"
#include "vecsift/xalloc.h"

static const struct cli_opt opts[] = {
    PIPELINE_OPTIONS,
    { "folds", 'k', "<n>", "folds, >= 2 (default: 5)" },
    { "repeats", 'R', "<n>", "repeats with fresh shuffles (default: 3)" },
    { "group-col", 'g', "<name>", "keep rows sharing this column's value (a customer, a thread) in one fold" },
    { "search", 0, NULL, "choose C (and gamma) by an inner cross-validation inside each fold" },
    { "target-precision", 'P', "<p>", "precision the confidence cut-off must reach (default: 0.95)" },
    { "json", 'j', "<file>", "write every figure as JSON" },
    { "predictions", 0, "<file>", "write the out-of-fold predictions as CSV" },
    { "report", 0, "<file>", "write a self-contained HTML report" },
    DATA_OPTIONS,
    RUN_OPTIONS,
    { NULL, 0, NULL, NULL }
};

const struct cli_cmd cmd_evaluate_info = {
    "evaluate", "[options] DATA.csv",
    "cross-validate: per-label precision, recall, F1 with spread, and a cut-off",
    opts,
    "Every fold fits a fresh pipeline (idf, SIF component, scaler, classifier)\n"
    "on its training rows only; held-out rows never inform their own prediction.\n"
    "Figures are pooled over all out-of-fold predictions, with the standard\n"
    "deviation over folds.  The cut-off is the smallest confidence at which\n"
    "automatic routing reaches the target precision out of fold.  When one of\n"
    "--json, --predictions, --report is '-' (stdout), the label table and the\n"
    "summary go to stderr."
};

struct eval_args {
    struct data_args da;
    struct fit_args fa;
    struct cv_params cp;
    double target;
    const char *json, *preds, *report;
};

static int parse(int argc, char **argv, struct eval_args *a, const char **data)
{
    const struct cli_cmd *cmd = &cmd_evaluate_info;
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
        if (strcmp(name, "target-precision") == 0) {
            if (cli_double(cmd, name, val, 0.0, 1.0, &a->target) < 0)
                break;
        } else if (strcmp(name, "json") == 0) {
            a->json = val;
        } else if (strcmp(name, "predictions") == 0) {
            a->preds = val;
        } else if (strcmp(name, "report") == 0) {
            a->report = val;
        }
    }
    int rc = i == CLI_HELP ? -1 : i != CLI_END ? ERR_INPUT : 0;
    if (rc == 0 && p.npos != 1)
        rc = cli_usage(cmd, "evaluate takes one data file");
    if (rc == 0)
        *data = p.pos[0];
    cli_parser_release(&p);
    return rc;
}

/* With --group-col, a label whose rows lie in fewer groups than folds is
 * missing from some folds: its per-fold figures count those folds as 0 (the
 * 0/0 rule).  Say so; the pooled figures are unaffected. */
static void warn_few_groups(const struct corpus *c, const char *col, const int *g, int ngroups, int folds)
{
    size_t K = c->ds.nlabels;
    unsigned char *seen = xcalloc(xmul(K, (size_t)(ngroups ? ngroups : 1)), 1);
    size_t *n = xcalloc(K ? K : 1, sizeof *n);
    for (size_t i = 0; i < c->ds.n; i++) {
        unsigned char *s = &seen[(size_t)c->ds.y[i] * (size_t)ngroups + (size_t)g[i]];
        n[c->ds.y[i]] += !*s;
        *s = 1;
    }
    for (size_t k = 0; k < K; k++)
        if (n[k] && n[k] < (size_t)folds)
            cli_warn("%s: label '%s' spans only %zu values of '%s', fewer than the %d folds: some folds hold none of "
                     "its rows, and its per-fold figures count them as 0",
                     c->ds.path, c->ds.labels[k], n[k], col, folds);
    free(n);
    free(seen);
}

int cmd_evaluate(int argc, char **argv)
{
    struct eval_args a;
    memset(&a, 0, sizeof a);
    data_args_init(&a.da);
    fit_args_init(&a.fa);
    struct cv_params cp0 = CV_PARAMS_INIT;
    a.cp = cp0;
    a.target = 0.95;
    const char *data = NULL;
    int rc = parse(argc, argv, &a, &data);
    if (rc != 0)
        return rc < 0 ? ERR_OK : rc;
    cli_keep_freed_memory();
    a.cp.seed = a.da.seed;
    a.cp.threads = a.da.threads;
    a.fa.spec.seed = a.da.seed;

    struct err e = ERR_INIT;
    struct corpus c;
    memset(&c, 0, sizeof c);
    struct vecset *vs = NULL;
    struct cv_result r = CV_RESULT_INIT;
    int *groups = NULL;
    cJSON *js = NULL;
    const char *ins[] = { data, a.fa.vectors };
    const char *outs[] = { a.json, a.preds, a.report };
    /* An output written to stdout ("-") takes stdout alone: the label table
     * and the summary then go to stderr, so the file stays parseable. */
    FILE *term = stdout;
    for (size_t q = 0; q < 3; q++) {
        if (outs[q] && ofile_check_distinct(outs[q], ins, 2, &e) < 0)
            goto fail;
        if (outs[q] && strcmp(outs[q], "-") == 0) {
            if (term == stderr) {
                rc = cli_usage(&cmd_evaluate_info, "only one of --json, --predictions, --report can be '-'");
                goto done;
            }
            term = stderr;
        }
    }
    struct dataset_options dopt;
    data_args_dataset(&a.da, 1, &dopt);
    if (corpus_load(&c, data, &dopt, &a.da.text, &e) < 0)
        goto fail;
    cli_warn_too_long(data, c.too_long_line, c.too_long);
    if (fit_args_open_vectors(&a.fa, &vs, &e) < 0)
        goto fail;
    if (!cli_quiet) {
        evaluate_label_table(term, &c, a.cp.folds);
        fflush(term);
        size_t conflicting, dup = corpus_duplicates(&c, &conflicting);
        if (dup)
            cli_note("%zu %s another row word for word after normalisation (%zu of them with another "
                     "label); duplicates split across folds flatter the scores: remove them or use --group-col",
                     dup, dup == 1 ? "row repeats" : "rows repeat", conflicting);
        if (c.empty_docs)
            cli_warn("%s: %zu rows have no words in the text columns", data, c.empty_docs);
    }
    groups = cv_args_groups(&a.cp, &c);
    if (groups && !cli_quiet)
        warn_few_groups(&c, a.da.group_col, groups, a.cp.n_groups, a.cp.folds);
    if (cv_run(&r, &a.fa.spec, &c, vs, &a.cp, &e) < 0)
        goto fail;
    if (r.unconverged)
        cli_warn("%d of %zu fits stopped at the iteration cap; raise --max-iter or lower --C", r.unconverged,
                 r.repeats * (size_t)r.folds);
    if (r.tiny_label)
        cli_warn("a label had fewer than 3 training rows in some fold: SVM probabilities for it are unreliable");

    struct evaluate_setup s = { data, &a.da, &a.fa, &a.cp, a.target };
    evaluate_terminal(term, &r, &c, &s);
    fflush(term);
    if (a.json || a.report)
        js = evaluate_json(&r, &c, &s);
    if (a.json && evaluate_write_json(a.json, js, &e) < 0)
        goto fail;
    if (a.preds && evaluate_predictions(a.preds, &r, &c, &e) < 0)
        goto fail;
    if (a.report && evaluate_html(a.report, &r, &c, &s, &e) < 0)
        goto fail;
    if (!cli_quiet)
        fprintf(stderr, "cross-validation took %.2f s on %d threads\n", r.seconds, a.cp.threads);
    goto done;
fail:
    rc = cli_fail(&e);
done:
    cJSON_Delete(js);
    free(groups);
    cv_release(&r);
    vecset_close(vs);
    corpus_release(&c);
    return rc;
}
