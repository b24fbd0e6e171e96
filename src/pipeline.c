/* pipeline.c -- featurizer + classifier: fit, predict, explain, persist. */
#include "vecsift/pipeline.h"

#include <cjson/cJSON.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/err.h"
#include "vecsift/fmat.h"
#include "vecsift/jsonv.h"
#include "vecsift/linear.h"
#include "vecsift/svmfit.h"
#include "vecsift/vecset.h"
#include "vecsift/vocab.h"
#include "vecsift/xalloc.h"

/* K = labels, D = feature width, E = vector dimension. */
struct pipeline {
    struct pipeline_spec s;
    size_t k;
    featurizer *f;
    struct linear_model lin;    /* CLF_LOGREG */
    svmfit_model *svm;          /* CLF_SVM_* */
};

int pipeline_classifier_parse(const char *name, enum pipeline_classifier *out)
{
    if (strcmp(name, "logreg") == 0)
        *out = CLF_LOGREG;
    else if (strcmp(name, "svm-linear") == 0)
        *out = CLF_SVM_LINEAR;
    else if (strcmp(name, "svm-rbf") == 0)
        *out = CLF_SVM_RBF;
    else
        return -1;
    return 0;
}

const char *pipeline_classifier_name(enum pipeline_classifier c)
{
    switch (c) {
    case CLF_LOGREG: return "logreg";
    case CLF_SVM_LINEAR: return "svm-linear";
    case CLF_SVM_RBF: return "svm-rbf";
    }
    return "?";
}

size_t pipeline_labels(const pipeline *p) { return p->k; }
const featurizer *pipeline_featurizer(const pipeline *p) { return p->f; }
const struct pipeline_spec *pipeline_spec(const pipeline *p) { return &p->s; }

void pipeline_free(pipeline *p)
{
    if (!p)
        return;
    features_free(p->f);
    linear_release(&p->lin);
    svmfit_free(p->svm);
    free(p);
}

static int fit_classifier(pipeline *p, const struct fmat *X, const int *y, struct pipeline_fit_info *info,
                          struct err *e)
{
    if (p->s.clf == CLF_LOGREG) {
        struct linear_params lp = LINEAR_PARAMS_INIT;
        lp.C = p->s.C;
        lp.max_iter = p->s.max_iter;
        lp.tol = p->s.tol;
        lp.balanced = p->s.balanced;
        if (linear_fit(&p->lin, X, y, p->k, &lp, e) < 0)
            return -1;
        if (info) {
            info->converged = p->lin.converged;
            info->iters = p->lin.iters;
        }
        return 0;
    }
    struct svmfit_params sp = SVMFIT_PARAMS_INIT;
    sp.kernel = p->s.clf == CLF_SVM_RBF ? SVMFIT_RBF : SVMFIT_LINEAR;
    sp.C = p->s.C;
    sp.gamma = p->s.gamma;
    sp.balanced = p->s.balanced;
    sp.seed = p->s.seed;
    int tiny = 0;
    p->svm = svmfit_train(X, y, p->k, &sp, &tiny, e);
    if (!p->svm)
        return -1;
    if (info) {
        info->converged = 1;
        info->tiny_label = tiny;
    }
    return 0;
}

double pipeline_default_C(enum features_pool pool, enum pipeline_classifier clf)
{
    if (clf != CLF_LOGREG)
        return 1.0;
    if (pool == POOL_BOW)
        return PIPELINE_C_BOW;
    if (pool == POOL_BOW_MEAN || pool == POOL_BOW_TFIDF || pool == POOL_BOW_SIF)
        return PIPELINE_C_BOW_POOLED;
    return 1.0;
}

double pipeline_spec_C(const struct pipeline_spec *s)
{
    return s->C > 0 ? s->C : pipeline_default_C(s->feat.pool, s->clf);
}

pipeline *pipeline_fit(const struct pipeline_spec *s, const struct tokdocs *d, const int *y, size_t k,
                       const size_t *rows, size_t n, const vecset *vs, struct pipeline_fit_info *info,
                       struct err *e)
{
    return pipeline_fit_cached(s, d, y, k, rows, n, vs, NULL, info, e);
}

pipeline *pipeline_fit_cached(const struct pipeline_spec *s, const struct tokdocs *d, const int *y, size_t k,
                              const size_t *rows, size_t n, const vecset *vs, const features_cache *cache,
                              struct pipeline_fit_info *info, struct err *e)
{
    if (!(s->C >= 0)) {
        err_set(e, NULL, 0, "C must be positive");
        return NULL;
    }
    pipeline *p = xcalloc(1, sizeof *p);
    p->s = *s;
    p->s.C = pipeline_spec_C(s); /* the model stores the C it was fitted with */
    p->k = k;
    struct fmat X = FMAT_INIT;
    int *yy = xcalloc(n ? n : 1, sizeof *yy);
    if (info)
        memset(info, 0, sizeof *info);
    p->f = features_fit_transform(&s->feat, d, rows, n, vs, cache, &X, info ? &info->stats : NULL, e);
    if (!p->f)
        goto fail;
    for (size_t i = 0; i < n; i++)
        yy[i] = y[rows[i]];
    if (fit_classifier(p, &X, yy, info, e) < 0)
        goto fail;
    fmat_release(&X);
    free(yy);
    return p;
fail:
    fmat_release(&X);
    free(yy);
    pipeline_free(p);
    return NULL;
}

int pipeline_fit_proba_featurized(const struct pipeline_spec *s, size_t k, const struct fmat *X, const int *y,
                                  const struct fmat *Xte, double *P, struct pipeline_fit_info *info, struct err *e)
{
    if (!(s->C >= 0)) {
        err_set(e, NULL, 0, "C must be positive");
        return -1;
    }
    pipeline p;
    memset(&p, 0, sizeof p);
    p.s = *s;
    p.s.C = pipeline_spec_C(s);
    p.k = k;
    int rc = fit_classifier(&p, X, y, info, e);
    for (size_t i = 0; rc == 0 && i < Xte->n; i++)
        pipeline_proba_row(&p, Xte, i, P + i * k);
    linear_release(&p.lin);
    svmfit_free(p.svm);
    return rc;
}

void pipeline_proba_row(const pipeline *p, const struct fmat *X, size_t i, double *prob)
{
    if (p->s.clf == CLF_LOGREG)
        linear_proba(&p->lin, X, i, prob);
    else
        svmfit_proba(p->svm, X, i, prob);
}

void pipeline_proba(const pipeline *p, const struct tokdocs *d, const size_t *rows, size_t n, double *P,
                    struct features_stats *st)
{
    pipeline_proba_cached(p, NULL, d, rows, n, P, st);
}

void pipeline_proba_cached(const pipeline *p, const features_cache *cache, const struct tokdocs *d,
                           const size_t *rows, size_t n, double *P, struct features_stats *st)
{
    struct fmat X = FMAT_INIT;
    features_transform_cached(p->f, cache, d, rows, n, &X, st);
    for (size_t i = 0; i < n; i++)
        pipeline_proba_row(p, &X, i, P + i * p->k);
    fmat_release(&X);
}

/* ---- explanation ---- */

struct push {
    const char *w;
    double v;
};

static int by_push(const void *a, const void *b)
{
    const struct push *x = a, *y = b;
    if (x->v != y->v)
        return x->v < y->v ? 1 : -1;
    return strcmp(x->w, y->w);
}

/* Sort pu[0..m) by push, largest first, and copy out the first 'top'. */
static size_t top_pushes(struct push *pu, size_t m, size_t top, const char **words, double *push)
{
    qsort(pu, m, sizeof *pu, by_push);
    size_t out = m < top ? m : top;
    for (size_t j = 0; j < out; j++) {
        words[j] = pu[j].w;
        push[j] = pu[j].v;
    }
    return out;
}

/* bow: z_j = b_j + sum_t W[j][t] x_t over the row's non-zero terms, so the
 * same split holds per term. */
static size_t explain_bow(const pipeline *p, const char *const *toks, size_t ntok, const double *prob, int label,
                          size_t top, const char **words, double *push)
{
    size_t K = p->k, D = features_dim(p->f);
    struct fmat X = FMAT_INIT;
    features_alloc(p->f, 1, &X);
    features_transform_tokens(p->f, toks, ntok, &X, 0, NULL);
    size_t nnz = X.rowptr[1];
    struct push *pu = xcalloc(nnz ? nnz : 1, sizeof *pu);
    for (size_t q = 0; q < nnz; q++) {
        size_t t = X.col[q];
        double mix = 0;
        for (size_t kk = 0; kk < K; kk++)
            mix += prob[kk] * p->lin.W[kk * D + t] * X.val[q];
        pu[q].w = features_term(p->f, t);
        pu[q].v = p->lin.W[(size_t)label * D + t] * X.val[q] - mix;
    }
    size_t out = top_pushes(pu, nnz, top, words, push);
    free(pu);
    fmat_release(&X);
    return out;
}

/* One pooled word's share of every label's score: a_w(j) = wt * c_w *
 * sum_q W[j][off+q] v_q / sd_q, v the word's vector (the SIF component
 * removal is linear: applied per word), c_w its pooling coefficient; the
 * scaler's mean goes into the constant.  Pooling alone: fd is the
 * pipeline's featurizer, off 0, wt 1; combined: fd the pooled block, off
 * the bow block's width, wt the block weight.  Writes a (K); v is scratch
 * (E). */
static void pooled_word_scores(const pipeline *p, const featurizer *fd, size_t off, double wt, const char *word,
                               double cw, double *v, double *a)
{
    size_t K = p->k, D = features_dim(p->f), E = features_dim(fd);
    const vecset *vs = features_vectors(fd);
    const double *mean, *sd, *u = features_sif_component(fd);
    features_scaler(fd, &mean, &sd);
    long r = vecset_find(vs, word);
    float *composed = NULL;
    const float *row;
    if (r >= 0) {
        row = vecset_row(vs, (size_t)r);
    } else {
        /* a word pooled with the vector composed from its pieces
         * (features_word_weights keeps only words with a vector) */
        composed = xcalloc(E, sizeof *composed);
        if (vecset_compose(vs, word, strlen(word), composed) == 0)
            memset(composed, 0, E * sizeof *composed); /* cannot happen: kept words have one */
        row = composed;
    }
    for (size_t q = 0; q < E; q++)
        v[q] = row[q];
    free(composed);
    if (u) {
        double dot = 0;
        for (size_t q = 0; q < E; q++)
            dot += u[q] * v[q];
        for (size_t q = 0; q < E; q++)
            v[q] -= dot * u[q];
    }
    for (size_t kk = 0; kk < K; kk++) {
        double s = 0;
        for (size_t q = 0; q < E; q++)
            s += p->lin.W[kk * D + off + q] * v[q] / (sd ? sd[q] : 1.0);
        a[kk] = wt * cw * s;
    }
}

/* combined: z_j = b_j + sum_t W[j][t] w_b x_t (bow block) + the pooled
 * block's terms, linear in the words as for pooling alone (its scaler's
 * mean goes into the constant).  A word's share is its bow term's plus its
 * pooled share; word pairs count on their own. */
static size_t explain_combined(const pipeline *p, const char *const *toks, size_t ntok, const double *prob,
                               int label, size_t top, const char **words, double *push)
{
    const featurizer *fb, *fd;
    double wt[2];
    features_blocks(p->f, &fb, &fd, wt);
    size_t K = p->k, D = features_dim(p->f), Vb = features_dim(fb), E = features_dim(fd);
    struct fmat X = FMAT_INIT;
    features_alloc(fb, 1, &X);
    features_transform_tokens(fb, toks, ntok, &X, 0, NULL);
    size_t nnz = X.rowptr[1];
    const char **dw = xcalloc(ntok, sizeof *dw);
    double *c = xcalloc(ntok, sizeof *c);
    size_t m = features_word_weights(fd, toks, ntok, dw, c);
    size_t cap = nnz + m ? nnz + m : 1;
    const char **name = xcalloc(cap, sizeof *name);
    double *A = xcalloc(xmul(cap, K), sizeof *A), *v = xcalloc(E, sizeof *v), *a = xcalloc(K, sizeof *a);
    size_t ni = 0;
    for (size_t q = 0; q < nnz; q++, ni++) {
        name[ni] = features_term(fb, X.col[q]);
        for (size_t kk = 0; kk < K; kk++)
            A[ni * K + kk] = p->lin.W[kk * D + X.col[q]] * (wt[0] * X.val[q]);
    }
    for (size_t j = 0; j < m; j++) {
        pooled_word_scores(p, fd, Vb, wt[1], dw[j], c[j], v, a);
        size_t at = 0;
        while (at < nnz && strcmp(name[at], dw[j]) != 0)
            at++;
        if (at == nnz)
            name[at = ni++] = dw[j];
        for (size_t kk = 0; kk < K; kk++)
            A[at * K + kk] += a[kk];
    }
    struct push *pu = xcalloc(ni ? ni : 1, sizeof *pu);
    for (size_t i = 0; i < ni; i++) {
        double mix = 0;
        for (size_t kk = 0; kk < K; kk++)
            mix += prob[kk] * A[i * K + kk];
        pu[i].w = name[i];
        pu[i].v = A[i * K + (size_t)label] - mix;
    }
    size_t out = top_pushes(pu, ni, top, words, push);
    free(pu);
    free(name);
    free(A);
    free(v);
    free(a);
    free(dw);
    free(c);
    fmat_release(&X);
    return out;
}

size_t pipeline_explain(const pipeline *p, const char *const *toks, size_t ntok, const double *prob, int label,
                        size_t top, const char **words, double *push)
{
    if (p->s.clf != CLF_LOGREG || ntok == 0)
        return 0;
    if (features_pool_combined(p->s.feat.pool))
        return explain_combined(p, toks, ntok, prob, label, top, words, push);
    if (features_sparse(p->f))
        return explain_bow(p, toks, ntok, prob, label, top, words, push);
    size_t K = p->k, E = features_dim(p->f);
    const char **w = xcalloc(ntok, sizeof *w);
    double *c = xcalloc(ntok, sizeof *c);
    size_t m = features_word_weights(p->f, toks, ntok, w, c);
    struct push *pu = xcalloc(m ? m : 1, sizeof *pu);
    double *v = xcalloc(E, sizeof *v), *a = xcalloc(K, sizeof *a);
    for (size_t j = 0; j < m; j++) {
        pooled_word_scores(p, p->f, 0, 1.0, w[j], c[j], v, a);
        double mix = 0;
        for (size_t kk = 0; kk < K; kk++)
            mix += prob[kk] * a[kk];
        pu[j].w = w[j];
        pu[j].v = a[label] - mix;
    }
    size_t out = top_pushes(pu, m, top, words, push);
    free(pu);
    free(v);
    free(a);
    free(w);
    free(c);
    return out;
}

/* ---- persistence ---- */

void pipeline_save(const pipeline *p, cJSON *obj)
{
    cJSON *f = cJSON_AddObjectToObject(obj, "features");
    features_save(p->f, f);
    cJSON *c = cJSON_AddObjectToObject(obj, "classifier");
    cJSON_AddStringToObject(c, "kind", pipeline_classifier_name(p->s.clf));
    cJSON_AddItemToObject(c, "C", jsonv_number_new(p->s.C));
    cJSON_AddBoolToObject(c, "balanced", p->s.balanced);
    if (p->s.clf == CLF_LOGREG) {
        size_t D = features_dim(p->f);
        cJSON_AddItemToObject(c, "W", jsonv_doubles_new(p->lin.W, p->k * D));
        cJSON_AddItemToObject(c, "b", jsonv_doubles_new(p->lin.b, p->k));
    } else {
        svmfit_save(p->svm, c);
    }
}

pipeline *pipeline_load(const struct jsonv_ctx *c, const cJSON *obj, const vecset *vs, size_t k)
{
    pipeline *p = xcalloc(1, sizeof *p);
    p->k = k;
    struct jsonv_ctx fc = *c, cc = *c;
    fc.path = "features";
    cc.path = "classifier";
    const cJSON *fo = jsonv_get(c, obj, "features");
    const cJSON *co = fo ? jsonv_get(c, obj, "classifier") : NULL;
    if (!co)
        goto fail;
    if (!(p->f = features_load(&fc, fo, vs)))
        goto fail;
    p->s.feat = *features_params(p->f);
    const char *kind = jsonv_str(&cc, co, "kind");
    if (!kind)
        goto fail;
    if (pipeline_classifier_parse(kind, &p->s.clf) < 0) {
        jsonv_fail(&cc, "kind", "is '%s', not one of logreg, svm-linear, svm-rbf", kind);
        goto fail;
    }
    if (jsonv_num(&cc, co, "C", 1e-300, 1e300, &p->s.C) < 0)
        goto fail;
    const cJSON *bal = jsonv_get(&cc, co, "balanced");
    if (!bal)
        goto fail;
    p->s.balanced = cJSON_IsTrue(bal);
    size_t D = features_dim(p->f);
    if (p->s.clf == CLF_LOGREG) {
        p->lin.k = k;
        p->lin.d = D;
        if (!(p->lin.W = jsonv_doubles(&cc, co, "W", xmul(k, D), NULL)) ||
            !(p->lin.b = jsonv_doubles(&cc, co, "b", k, NULL)))
            goto fail;
        p->lin.converged = 1;
    } else {
        p->svm = svmfit_load(&cc, co, D, k);
        if (!p->svm)
            goto fail;
        enum svmfit_kernel want = p->s.clf == CLF_SVM_RBF ? SVMFIT_RBF : SVMFIT_LINEAR;
        if (svmfit_kernel_of(p->svm) != want) {
            jsonv_fail(&cc, "kernel", "does not match kind '%s'", kind);
            goto fail;
        }
    }
    return p;
fail:
    pipeline_free(p);
    return NULL;
}
