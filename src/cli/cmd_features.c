/* cmd_features.c -- `vecsift features`: write the numbers a classifier sees. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "commands.h"
#include "common.h"
#include "vecsift/csv.h"
#include "vecsift/err.h"
#include "vecsift/fmat.h"
#include "vecsift/jsonv.h"
#include "vecsift/model.h"
#include "vecsift/ofile.h"
#include "vecsift/pipeline.h"
#include "vecsift/vecset.h"
#include "vecsift/xalloc.h"

static const struct cli_opt opts[] = {
    { "output", 'o', "<file>", "where to write the features (default: - for stdout)" },
    { "model", 'm', "<file>", "apply this trained model's featurizer instead of fitting one" },
    { "term-names", 0, NULL, "bow: name columns by their word or word pair instead of x1..xD" },
    { "vectors", 'v', "<file>", "packed vector set (.vecs); needed unless --pool bow" },
    { "pool", 'p', "<how>", "mean | tfidf | sif | bow (default: tfidf)" },
    { "sublinear-tf", 0, NULL, "use 1 + ln(tf) instead of raw term counts" },
    { "no-scale", 0, NULL, "do not standardise pooled features" },
    DATA_OPTIONS,
    RUN_OPTIONS,
    { NULL, 0, NULL, NULL }
};

const struct cli_cmd cmd_features_info = {
    "features", "[options] DATA.csv [-o FEATURES.csv]",
    "write the numbers a classifier sees for each row",
    opts,
    "Without --model the featurizer (idf table, SIF component, scaler) is fitted\n"
    "on every row of DATA.csv; with --model the model's fitted featurizer is\n"
    "applied.  Output columns: row (1-based data row), label (when the data has\n"
    "the label column), then x1 ... xD.  Numbers are written so that they read\n"
    "back exactly."
};

static int has_column(const char *path, const struct csv_options *co, const char *name, struct err *e)
{
    csv_reader *r = csv_open(path, co, e);
    if (!r)
        return -1;
    int has = csv_col(r, name) >= 0;
    csv_close(r);
    return has;
}

int cmd_features(int argc, char **argv)
{
    const struct cli_cmd *cmd = &cmd_features_info;
    struct data_args da;
    struct fit_args fa;
    data_args_init(&da);
    fit_args_init(&fa);
    const char *out = "-", *model_path = NULL;
    int term_names = 0;
    struct cli_parser p;
    cli_parser_init(&p, cmd, argc, argv);
    int i, rc = ERR_OK;
    const char *val;
    while ((i = cli_next(&p, &val)) >= 0) {
        const char *name = opt_name(cmd, i);
        int t = data_args_option(&da, cmd, name, val);
        if (t == 0)
            t = fit_args_option(&fa, cmd, name, val);
        if (t < 0)
            break;
        if (t > 0)
            continue;
        if (strcmp(name, "output") == 0)
            out = val;
        else if (strcmp(name, "model") == 0)
            model_path = val;
        else if (strcmp(name, "term-names") == 0)
            term_names = 1;
        else if (strcmp(name, "no-scale") == 0)
            fa.spec.feat.scale = 0;
    }
    if (i != CLI_END) {
        cli_parser_release(&p);
        return i == CLI_HELP ? ERR_OK : ERR_INPUT;
    }
    if (p.npos != 1) {
        rc = cli_usage(cmd, "features takes one data file");
        cli_parser_release(&p);
        return rc;
    }
    const char *data = p.pos[0];

    struct err e = ERR_INIT;
    struct model m = MODEL_INIT;
    struct vecset *vs = NULL;
    struct corpus c;
    memset(&c, 0, sizeof c);
    featurizer *own = NULL;
    const featurizer *f = NULL;
    struct fmat X = FMAT_INIT;
    size_t *rows = NULL;
    ofile *o = NULL;
    const char *ins[] = { data, model_path, fa.vectors };
    if (ofile_check_distinct(out, ins, 3, &e) < 0)
        goto fail;
    /* only a label column the user named must exist: the model's own is
     * a default, and new data to featurize usually has no labels */
    const char *asked_label = da.label_col;
    if (model_path) {
        if (model_load(&m, model_path, fa.vectors, &vs, &e) < 0)
            goto fail;
        da.text = m.text;
        if (!da.ntext)
            for (size_t t = 0; t < m.ntext && t < MAX_TEXT_COLS; t++)
                da.text_cols[da.ntext++] = m.text_cols[t];
        if (!da.label_col)
            da.label_col = m.label_col;
    }
    struct dataset_options dopt;
    data_args_dataset(&da, 1, &dopt);
    int labelled = has_column(data, &da.csv, dopt.label_col, &e);
    if (labelled < 0)
        goto fail;
    if (!labelled && asked_label) {
        err_set(&e, data, 1, "no column '%s'", asked_label);
        goto fail;
    }
    data_args_dataset(&da, labelled, &dopt);
    if (corpus_load(&c, data, &dopt, &da.text, &e) < 0)
        goto fail;
    cli_warn_too_long(data, c.too_long_line, c.too_long);
    rows = xcalloc(c.ds.n ? c.ds.n : 1, sizeof *rows);
    for (size_t r = 0; r < c.ds.n; r++)
        rows[r] = r;
    if (model_path) {
        f = pipeline_featurizer(m.pipe);
    } else {
        if (fit_args_open_vectors(&fa, &vs, &e) < 0)
            goto fail;
        if (!(own = features_fit(&fa.spec.feat, &c.docs, rows, c.ds.n, vs, &e))) {
            err_name_file(&e, data);
            goto fail;
        }
        f = own;
    }
    struct features_stats st = { 0, 0, 0 };
    features_transform(f, &c.docs, rows, c.ds.n, &X, &st);

    if (!(o = ofile_open(out, &e)))
        goto fail;
    FILE *fp = ofile_fp(o);
    size_t D = features_dim(f);
    fputs(labelled ? "row,label" : "row", fp);
    for (size_t d = 0; d < D; d++) {
        fputc(',', fp);
        const char *term = term_names ? features_term(f, d) : NULL;
        if (term)
            csv_put(fp, term, strlen(term), 1);
        else
            fprintf(fp, "x%zu", d + 1);
    }
    fputs("\r\n", fp);
    double *dense = xcalloc(D, sizeof *dense);
    char num[40];
    for (size_t r = 0; r < c.ds.n; r++) {
        fprintf(fp, "%zu", r + 1);
        if (labelled) {
            fputc(',', fp);
            csv_put(fp, c.ds.label[r], strlen(c.ds.label[r]), 1);
        }
        memset(dense, 0, D * sizeof *dense);
        fmat_axpy(&X, r, 1.0, dense);
        for (size_t d = 0; d < D; d++) {
            jsonv_format_double(dense[d], num, sizeof num);
            fputc(',', fp);
            fputs(num, fp);
        }
        fputs("\r\n", fp);
    }
    free(dense);
    if (ofile_commit(o, &e) < 0) {
        o = NULL;
        goto fail;
    }
    o = NULL;
    if (st.tokens)
        cli_note("%zu rows x %zu features; %.1f%% of tokens %s; %zu rows became the zero vector", c.ds.n, D,
                 100.0 * (double)st.with_vector / (double)st.tokens,
                 features_sparse(f) ? "in the vocabulary" : "had a vector", st.empty_rows);
    goto done;
fail:
    rc = cli_fail(&e);
done:
    ofile_abort(o);
    fmat_release(&X);
    free(rows);
    features_free(own);
    corpus_release(&c);
    model_release(&m);
    vecset_close(vs);
    cli_parser_release(&p);
    return rc;
}
