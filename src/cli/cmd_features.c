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

struct features_args {
    struct common_data da;
    struct common_fit fa;
    const char *out, *model;
    int term_names;
};

#define A struct features_args
static const struct cli_opt opts[] = {
    CLI_OPT_STR("output", 'o', "<file>", "where to write the features (default: - for stdout)", A, out),
    CLI_OPT_STR("model", 'm', "<file>", "apply this trained model's featurizer instead of fitting one", A, model),
    CLI_OPT_FLAG("term-names", 0, "bow: name columns by their word or word pair instead of x1..xD", A, term_names),
    COMMON_OPT_VECTORS("packed vector set (.vecs); needed unless --pool bow", A, fa),
    COMMON_OPT_POOL("mean | tfidf | sif | bow (default: tfidf)", A, fa),
    COMMON_OPT_SUBLINEAR_TF(A, fa),
    CLI_OPT_UNSET("no-scale", 0, "do not standardise pooled features", A, fa.spec.feat.scale),
    COMMON_DATA_OPTIONS(A, da),
    COMMON_RUN_OPTIONS(A, da),
    CLI_OPT_END
};
#undef A

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

int cmd_features(int argc, char **argv)
{
    struct features_args a;
    memset(&a, 0, sizeof a);
    common_data_init(&a.da);
    common_fit_init(&a.fa);
    a.out = "-";
    const char *data = NULL;
    int rc = cli_parse_exact(&cmd_features_info, argc, argv, &a, 1, &data, "features takes one data file");
    if (rc != CLI_END)
        return rc;
    rc = ERR_OK;
    struct common_data *da = &a.da;
    const char *model_path = a.model;

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
    const char *ins[] = { data, model_path, a.fa.vectors };
    if (ofile_check_distinct(a.out, ins, 3, &e) < 0)
        goto fail;
    /* only a label column the user named must exist: the model's own is
     * a default, and new data to featurize usually has no labels */
    const char *asked_label = da->label_col;
    if (model_path) {
        if (model_load(&m, model_path, a.fa.vectors, &vs, &e) < 0)
            goto fail;
        da->text = m.text;
        if (!da->ntext)
            for (size_t t = 0; t < m.ntext && t < COMMON_MAX_TEXT_COLS; t++)
                da->text_cols[da->ntext++] = m.text_cols[t];
        if (!da->label_col)
            da->label_col = m.label_col;
    }
    int labelled = 0;
    if (common_load_maybe_labelled(&c, data, da, asked_label, &labelled, &e) < 0)
        goto fail;
    cli_warn_too_long(data, c.too_long_line, c.too_long);
    rows = common_all_rows(&c);
    if (model_path) {
        f = pipeline_featurizer(m.pipe);
    } else {
        if (common_open_vectors(&a.fa, &vs, &e) < 0)
            goto fail;
        if (!(own = features_fit(&a.fa.spec.feat, &c.docs, rows, c.ds.n, vs, &e))) {
            common_name_file(&e, data);
            goto fail;
        }
        f = own;
    }
    struct features_stats st = { 0, 0, 0 };
    features_transform(f, &c.docs, rows, c.ds.n, &X, &st);

    if (!(o = ofile_open(a.out, &e)))
        goto fail;
    FILE *fp = ofile_fp(o);
    size_t D = features_dim(f);
    fputs(labelled ? "row,label" : "row", fp);
    for (size_t d = 0; d < D; d++) {
        fputc(',', fp);
        const char *term = a.term_names ? features_term(f, d) : NULL;
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
    return rc;
}
