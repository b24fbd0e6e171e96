/* cmd_train.c -- `vecsift train`: fit a pipeline on every labelled row and
 * write the model file. */
#include <cjson/cJSON.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "commands.h"
#include "common.h"
#include "compare_grid.h"
#include "vecsift/cv.h"
#include "vecsift/err.h"
#include "vecsift/jsonv.h"
#include "vecsift/model.h"
#include "vecsift/ofile.h"
#include "vecsift/pipeline.h"
#include "vecsift/vecset.h"
#include "vecsift/xalloc.h"

struct train_args {
    struct common_cv cv; /* folds and repeats: for --choose */
    const char *out, *evaluation;
    double review;
    int search, choose;
};

#define A struct train_args
static const struct cli_opt opts[] = {
    CLI_OPT_STR("output", 'o', "<file>", "where to write the model (required; JSON)", A, out),
    COMMON_FIT_OPTIONS(A, cv.fa),
    COMMON_DATA_OPTIONS(A, cv.da),
    CLI_OPT_DOUBLE("review-below", 0, "<p>", "store this confidence cut-off in the model for predict\n"
                   "                              (default: the --evaluation file's cut-off, else none)", A, review,
                   0, 1),
    CLI_OPT_STR("evaluation", 'e', "<file>", "an 'evaluate --json' file of these settings: its summary is stored in the model",
                A, evaluation),
    CLI_OPT_FLAG("search", 0, "choose C (and gamma) by 3-fold cross-validation on all rows, as evaluate --search does",
                 A, search),
    CLI_OPT_FLAG("choose", 0, "pick --pool and --classifier: cross-validate compare's grid on all rows, keep the best\n"
                 "                              or a simpler set-up not significantly worse (table in the model)", A,
                 choose),
    CLI_OPT_INT("folds", 'k', "<n>", "with --choose: folds, >= 2 (default: 5)", A, cv.cp.folds, 2, 1000),
    COMMON_OPT_REPEATS("with --choose: repeats with fresh shuffles (default: 3)", A, cv.cp),
    CLI_OPT_STR("group-col", 'g', "<name>", "with --choose: keep rows sharing this column's value (a customer, a thread,\n"
                "                              passages of one document) in one fold", A, cv.da.group_col),
    COMMON_RUN_OPTIONS(A, cv.da),
    CLI_OPT_END
};
#undef A

const struct cli_cmd cmd_train_info = {
    "train", "[options] DATA.csv -o MODEL.json",
    "fit a classifier on every labelled row and write the model file",
    opts,
    "The model stores the tokeniser settings, the fitted features (idf table,\n"
    "scaler, SIF component), the classifier, the labels and the fingerprint of\n"
    "the vector set; predict refuses other vectors.  It also stores words from\n"
    "the training texts: treat the model file as personal data wherever those\n"
    "texts are, under the applicable law and your organisation's policy.\n"
    "Measure before you deploy: 'vecsift evaluate' with the same options.\n"
    "\n"
    "--choose cross-validates, on the same folds, the bag of words and (with\n"
    "--vectors) every pooling and combined route, each with logreg and\n"
    "svm-rbf, as compare does.  Of the set-ups not significantly worse than\n"
    "the best (corrected resampled t-test, one-sided at 5%), it keeps the\n"
    "simpler kind (a linear classifier, whose top words explain each\n"
    "prediction, before the RBF kernel) and within it the highest mean\n"
    "macro-F1; then it fits that set-up on every row.  The table and the\n"
    "choice are printed and stored in the model.  The choice is only as good\n"
    "as the labelled rows are like the texts to come."
};

/* The summary of an `evaluate --json` file, checked to describe the same
 * pooling and classifier; its cut-off becomes the default review cut-off. */
static int read_evaluation(const char *path, const struct common_fit *fa, cJSON **summary, double *review,
                           struct err *e)
{
    cJSON *root = jsonv_load(path, "evaluation", (size_t)1 << 30, e);
    if (!root)
        return -1;
    struct jsonv_ctx c = { path, "settings", e };
    const cJSON *st = cJSON_IsObject(root) ? cJSON_GetObjectItemCaseSensitive(root, "settings") : NULL;
    const char *pool = st ? jsonv_str(&c, st, "pool") : NULL;
    const char *clf = pool ? jsonv_str(&c, st, "classifier") : NULL;
    int rc = 0;
    if (!st || !clf) {
        err_clear(e);
        rc = err_set(e, path, 0, "not an 'evaluate --json' file");
    } else if (strcmp(pool, features_pool_name(fa->spec.feat.pool)) != 0 ||
               strcmp(clf, pipeline_classifier_name(fa->spec.clf)) != 0) {
        rc = err_set(e, path, 0, "evaluated %s with pooling %s, but this model is %s with pooling %s", clf, pool,
                     pipeline_classifier_name(fa->spec.clf), features_pool_name(fa->spec.feat.pool));
        err_hint(e, "train with the settings that were evaluated, or evaluate these settings");
    }
    if (rc == 0) {
        *summary = cJSON_CreateObject();
        static const char *keep[] = { "labels", "pooled", "per_fold", "settings" };
        for (size_t i = 0; i < sizeof keep / sizeof keep[0]; i++) {
            const cJSON *it = cJSON_GetObjectItemCaseSensitive(root, keep[i]);
            if (it)
                cJSON_AddItemToObject(*summary, keep[i], cJSON_Duplicate(it, 1));
        }
        const cJSON *th = cJSON_GetObjectItemCaseSensitive(root, "threshold");
        /* the cut-off evaluate advised (review_below: the shortest decimal
         * that keeps the same out-of-fold rows), so the model, predict and
         * demo print the number evaluate printed; older files: cutoff */
        const cJSON *cut = th ? cJSON_GetObjectItemCaseSensitive(th, "review_below") : NULL;
        if (!cut || !cJSON_IsNumber(cut))
            cut = th ? cJSON_GetObjectItemCaseSensitive(th, "cutoff") : NULL;
        if (th) {
            cJSON *t = cJSON_Duplicate(th, 1);
            cJSON_DeleteItemFromObjectCaseSensitive(t, "curve"); /* the curve stays in the evaluation file */
            cJSON_AddItemToObject(*summary, "threshold", t);
        }
        if (*review < 0 && cut && cJSON_IsNumber(cut) && cut->valuedouble >= 0 && cut->valuedouble <= 1)
            *review = cut->valuedouble;
        else if (*review < 0 && th && cut && cJSON_IsNull(cut))
            *review = 1.0; /* no cut-off reached the target: a person decides every row */
    }
    cJSON_Delete(root);
    return rc;
}

/* Labels with a single row cannot be learned (nor evaluated): refuse. */
static int check_labels(const struct corpus *c, size_t *rows_per, struct err *e)
{
    for (size_t i = 0; i < c->ds.n; i++)
        rows_per[c->ds.y[i]]++;
    if (c->ds.nlabels < 2) {
        err_set(e, c->ds.path, 0, "only one label ('%s'); a classifier needs two or more",
                c->ds.nlabels ? c->ds.labels[0] : "");
        return -1;
    }
    for (size_t k = 0; k < c->ds.nlabels; k++)
        if (rows_per[k] < 2) {
            err_set(e, c->ds.path, 0, "label '%s' has only %zu row; a classifier cannot learn it from one example",
                    c->ds.labels[k], rows_per[k]);
            return err_hint(e, "label more examples of it, or merge it into a related label");
        }
    return 0;
}

/* The first label whose rows all share one group, or nlabels if none does
 * (or there are no groups). */
static size_t one_group_label(const struct corpus *c, const int *groups)
{
    if (!groups)
        return c->ds.nlabels;
    int *first = xcalloc(c->ds.nlabels ? c->ds.nlabels : 1, sizeof *first);
    char *many = xcalloc(c->ds.nlabels ? c->ds.nlabels : 1, 1);
    for (size_t k = 0; k < c->ds.nlabels; k++)
        first[k] = -1;
    for (size_t i = 0; i < c->ds.n; i++) {
        int k = c->ds.y[i];
        if (first[k] < 0)
            first[k] = groups[i];
        else if (first[k] != groups[i])
            many[k] = 1;
    }
    size_t lone = c->ds.nlabels;
    for (size_t k = 0; k < c->ds.nlabels && lone == c->ds.nlabels; k++)
        if (!many[k])
            lone = k;
    free(first);
    free(many);
    return lone;
}

int cmd_train(int argc, char **argv)
{
    const struct cli_cmd *cmd = &cmd_train_info;
    struct train_args a;
    memset(&a, 0, sizeof a);
    common_cv_init(&a.cv, 3);
    a.review = -1;
    struct cli_parser p;
    int rc = cli_parse(&p, cmd, argc, argv, &a);
    const char *data = p.npos == 1 ? p.pos[0] : NULL;
    int npos = p.npos, by_pool = cli_seen(&p, "pool"), by_clf = cli_seen(&p, "classifier");
    int folds_given = cli_seen(&p, "folds") > 0;
    /* --pool or --classifier (the later one), which --choose picks */
    const char *fixed = by_pool || by_clf ? (by_pool > by_clf ? "pool" : "classifier") : NULL;
    cli_parser_release(&p);
    if (rc != CLI_END)
        return cli_parse_status(rc);
    if (npos != 1)
        return cli_usage(cmd, "train takes one data file");
    if (!a.out)
        return cli_usage(cmd, "train needs -o MODEL.json");
    if (a.choose && fixed)
        return cli_usage(cmd, "--choose picks the pooling and classifier: leave out --%s", fixed);
    rc = ERR_OK;
    struct common_data *da = &a.cv.da;
    struct common_fit *fa = &a.cv.fa;
    struct cv_params cp = a.cv.cp;
    const char *out = a.out, *evaluation = a.evaluation;
    double review = a.review;
    int choose = a.choose;
    fa->spec.seed = da->seed;

    struct err e = ERR_INIT;
    struct corpus c;
    memset(&c, 0, sizeof c);
    struct vecset *vs = NULL;
    struct model m = MODEL_INIT;
    size_t *rows_per = NULL, *rows = NULL;
    const char *ins[] = { data, fa->vectors, evaluation };
    if (ofile_check_distinct(out, ins, 3, &e) < 0)
        goto fail;
    if (!choose && evaluation && read_evaluation(evaluation, fa, &m.evaluation, &review, &e) < 0)
        goto fail;
    struct dataset_options dopt;
    common_data_options(da, 1, &dopt);
    if (corpus_load(&c, data, &dopt, &da->text, &e) < 0)
        goto fail;
    cli_warn_too_long(data, c.too_long_line, c.too_long);
    rows_per = xcalloc(c.ds.nlabels ? c.ds.nlabels : 1, sizeof *rows_per);
    if (check_labels(&c, rows_per, &e) < 0)
        goto fail;
    if (choose && fa->vectors) /* --pool's default needs vectors; the grid uses them when given */
        fa->spec.feat.pool = POOL_TFIDF;
    else if (choose)
        fa->spec.feat.pool = POOL_BOW;
    if (common_open_vectors(fa, &vs, &e) < 0)
        goto fail;
    if (c.ds.replaced)
        cli_warn("%s: %zu invalid UTF-8 sequences replaced by U+FFFD", data, c.ds.replaced);
    if (c.empty_docs == c.ds.n) {
        err_set(&e, data, 0, "no row has a word in the text column%s ('%s'%s)", dopt.ntext > 1 ? "s" : "",
                dopt.text_cols[0], dopt.ntext > 1 ? ", ..." : "");
        err_hint(&e, "check --text-col: is the text in another column?");
        goto fail;
    }
    if (c.empty_docs)
        cli_warn("%s: %zu rows have no words in the text columns", data, c.empty_docs);

    rows = xcalloc(c.ds.n, sizeof *rows);
    for (size_t r = 0; r < c.ds.n; r++)
        rows[r] = r;
    if (choose) {
        /* Stratified folds need a row of every label in each: unless told
         * otherwise, use no more folds than the smallest label has rows
         * (check_labels made sure it has two). */
        size_t small = 0;
        for (size_t k = 1; k < c.ds.nlabels; k++)
            if (rows_per[k] < rows_per[small])
                small = k;
        if (!folds_given && rows_per[small] < (size_t)cp.folds) {
            cp.folds = (int)rows_per[small];
            if (!cli_quiet)
                fprintf(stderr, "note: label '%s' has %zu rows, so the choice cross-validates with %d folds\n",
                        c.ds.labels[small], rows_per[small], cp.folds);
        }
        cp.seed = da->seed;
        cp.threads = da->threads;
        int *groups = common_cv_groups(&cp, &c);
        size_t lone = one_group_label(&c, groups);
        if (groups && lone < c.ds.nlabels) {
            /* a fold would hold all of that label's rows and leave none to train on */
            cli_warn("label '%s' lies in one value of '%s': the choice cross-validates rows, not groups",
                     c.ds.labels[lone], da->group_col);
            free(groups);
            groups = NULL;
            cp.group = NULL;
            cp.n_groups = 0;
        }
        if (groups && !folds_given && cp.n_groups < cp.folds) {
            cp.folds = cp.n_groups < 2 ? 2 : cp.n_groups;
            if (!cli_quiet)
                fprintf(stderr, "note: column '%s' has %d values, so the choice cross-validates with %d folds\n",
                        da->group_col, cp.n_groups, cp.folds);
        }
        struct pipeline_spec pick;
        int crc = compare_grid_choose(&c, data, da, fa, vs, &cp,
                                      cli_quiet ? NULL : strcmp(out, "-") ? stdout : stderr, &pick, &m.choice, &e);
        free(groups);
        cp.group = NULL;
        if (crc < 0)
            goto fail;
        fa->spec = pick;
        if (!features_pool_needs_vectors(pick.feat.pool)) { /* the model then holds no vectors */
            vecset_close(vs);
            vs = NULL;
        }
        if (evaluation && read_evaluation(evaluation, fa, &m.evaluation, &review, &e) < 0)
            goto fail;
    }
    if (a.search) {
        /* The grid and inner folds of evaluate --search, on every row. */
        struct pipeline_spec best;
        if (cv_search(&fa->spec, &c, vs, rows, c.ds.n, 3, da->seed, &best, &e) < 0)
            goto fail;
        fa->spec = best;
        if (!cli_quiet) {
            fprintf(stderr, "parameter search (3-fold, macro F1) chose C = %g", best.C);
            if (best.clf == CLF_SVM_RBF)
                fprintf(stderr, ", gamma = %g x the default", best.gamma < 0 ? -best.gamma : 1.0);
            fputc('\n', stderr);
        }
    }
    struct pipeline_fit_info info;
    fa->spec.tol = PIPELINE_FINAL_TOL; /* the one fit users keep: near the exact optimum (pipeline.h) */
    m.pipe = pipeline_fit(&fa->spec, &c.docs, c.ds.y, c.ds.nlabels, rows, c.ds.n, vs, &info, &e);
    if (!m.pipe) {
        common_name_file(&e, data);
        goto fail;
    }
    if (!info.converged)
        cli_warn("logistic regression stopped at the iteration cap (%d) before reaching its tolerance; "
                 "raise --max-iter or lower --C", info.iters);
    if (info.tiny_label)
        cli_warn("a label has fewer than 3 rows: the SVM's probabilities for it are unreliable");

    m.k = c.ds.nlabels;
    m.labels = xcalloc(m.k, sizeof *m.labels);
    for (size_t k = 0; k < m.k; k++)
        m.labels[k] = xstrdup(c.ds.labels[k]);
    m.text = da->text;
    m.ntext = dopt.ntext;
    m.text_cols = xcalloc(m.ntext, sizeof *m.text_cols);
    for (size_t t = 0; t < m.ntext; t++)
        m.text_cols[t] = xstrdup(dopt.text_cols[t]);
    m.label_col = xstrdup(dopt.label_col);
    if (vs) {
        m.vectors_path = xstrdup(fa->vectors);
        m.vectors_fp = vecset_fingerprint(vs);
    }
    m.data_path = xstrdup(data);
    m.data_fp = model_data_fingerprint(c.ds.text, c.ds.label, c.ds.n);
    m.rows = c.ds.n;
    m.label_rows = rows_per;
    rows_per = NULL;
    m.review_below = review;
    if (model_save(&m, out, &e) < 0)
        goto fail;

    if (!cli_quiet) {
        fprintf(stderr, "trained %s (C %g) on %zu rows, %zu labels, pooling %s",
                pipeline_classifier_name(fa->spec.clf), pipeline_spec(m.pipe)->C, c.ds.n, m.k,
                features_pool_name(fa->spec.feat.pool));
        if (info.stats.tokens)
            fprintf(stderr, "; %.1f%% of tokens %s", 100.0 * (double)info.stats.with_vector / (double)info.stats.tokens,
                    vs ? "had a vector" : "were in the vocabulary");
        fprintf(stderr, "\nmodel written to %s\n", out);
        fprintf(stderr, "note: the model holds words from the training texts; treat it as personal data under "
                        "the applicable law and your policy\n");
    }
    goto done;
fail:
    rc = cli_fail(&e);
done:
    free(rows);
    free(rows_per);
    model_release(&m);
    vecset_close(vs);
    corpus_release(&c);
    return rc;
}
