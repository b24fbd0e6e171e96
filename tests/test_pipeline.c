/* test_pipeline.c -- featurizer + classifier: explanation adds up, held-out
 * rows do not leak into the fit, persistence, errors. */
#include <criterion/criterion.h>
#include <math.h>
#include <string.h>

#include "fixtures.h"
#include "vecsift/fmat.h"
#include "vecsift/pipeline.h"

static const char *const *const WORDS = fx_words; /* fixtures.h's small set */
static const float *const VECS = fx_vecs;
static const char *const *const TEXTS = fx_texts;
static const int *const Y = fx_y;
enum { N = 11, K = 3 };
static const size_t ALL[N] = { 0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10 };

static pipeline *fit(enum features_pool pool, enum pipeline_classifier clf, const struct tokdocs *d,
                     const size_t *rows, size_t n, const vecset *vs)
{
    struct pipeline_spec s = PIPELINE_SPEC_INIT;
    s.feat.pool = pool;
    s.clf = clf;
    s.tol = 1e-10;
    struct err e = ERR_INIT;
    pipeline *p = pipeline_fit(&s, d, Y, K, rows, n, vs, NULL, &e);
    cr_assert_not_null(p, "%s", e.msg);
    return p;
}

/* W (K x D) and b (K) of a logreg pipeline, through its saved form. */
static cJSON *weights(const pipeline *p, const double **W, const double **b, double *buf)
{
    cJSON *obj = cJSON_CreateObject();
    pipeline_save(p, obj);
    obj = fx_reparse(obj);
    struct err e = ERR_INIT;
    struct jsonv_ctx c = { "mem", "classifier", &e };
    const cJSON *clf = cJSON_GetObjectItem(obj, "classifier");
    size_t D = features_dim(pipeline_featurizer(p));
    double *w = jsonv_doubles(&c, clf, "W", K * D, NULL), *bb = jsonv_doubles(&c, clf, "b", K, NULL);
    cr_assert(w && bb, "%s", e.msg);
    memcpy(buf, w, K * D * sizeof *buf);
    memcpy(buf + K * D, bb, K * sizeof *buf);
    free(w);
    free(bb);
    *W = buf;
    *b = buf + K * D;
    return obj;
}

/* pipeline.h: z_j = c_j + sum_w a_w(j) and push_w = a_w(label) -
 * sum_j p_j a_w(j), so over all words
 *   sum_w push_w + (c_label - sum_j p_j c_j) = z_label - sum_j p_j z_j
 *                                            = log p_label - sum_j p_j log p_j
 * (softmax: log p_j = z_j - logsumexp(z), and the p_j sum to 1).  c_j is
 * b_j - sum_q W_jq mean_q / sd_q for pooled vectors, b_j for bow. */
static void check_explanation_adds_up(enum features_pool pool)
{
    vecset *vs = fx_vectors(fx_tmpdir(), "v.vecs", WORDS, VECS, 6, 3);
    struct tokdocs d;
    fx_docs(&d, TEXTS, N);
    const size_t *rows = ALL;
    pipeline *p = fit(pool, CLF_LOGREG, &d, rows, 8, vs);
    const featurizer *f = pipeline_featurizer(p);
    size_t D = features_dim(f);
    double buf[K * 128 + K];
    cr_assert(D <= 128);
    const double *W, *b;
    cJSON *obj = weights(p, &W, &b, buf);
    const double *mean, *sd;
    /* combined: the pooled block sits at columns [off, D), times wt */
    const featurizer *fb, *fd;
    double wts[2] = { 1, 1 };
    size_t off = 0;
    if (features_blocks(f, &fb, &fd, wts) == 0) {
        off = features_dim(fb);
        features_scaler(fd, &mean, &sd);
    } else {
        features_scaler(f, &mean, &sd);
    }
    double c[K];
    for (size_t j = 0; j < K; j++) {
        c[j] = b[j];
        for (size_t q = 0; mean && off + q < D; q++)
            c[j] -= W[j * D + off + q] * wts[1] * mean[q] / sd[q];
    }
    for (size_t i = 0; i < N; i++) {
        const char *toks[8];
        size_t nt = 0;
        for (size_t t = d.off[i]; t < d.off[i + 1]; t++)
            toks[nt++] = vocab_word(d.v, d.tok[t]);
        double prob[K];
        pipeline_proba(p, &d, &rows[i], 1, prob, NULL);
        for (int label = 0; label < K; label++) {
            const char *words[32];
            double push[32], total = 0;
            size_t m = pipeline_explain(p, toks, nt, prob, label, 32, words, push);
            cr_assert_gt(m, 0);
            for (size_t w = 0; w < m; w++) {
                total += push[w];
                if (w)
                    cr_assert_geq(push[w - 1], push[w], "not sorted by push");
            }
            double want = log(prob[label]), cmix = 0;
            for (size_t j = 0; j < K; j++) {
                want -= prob[j] * log(prob[j]);
                cmix += prob[j] * c[j];
            }
            cr_assert_float_eq(total + c[label] - cmix, want, 1e-9, "pool %s row %zu label %d",
                               features_pool_name(pool), i, label);
            size_t top = pipeline_explain(p, toks, nt, prob, label, 1, words, push);
            cr_assert_eq(top, 1);
        }
    }
    cJSON_Delete(obj);
    pipeline_free(p);
    tokdocs_release(&d);
    vecset_close(vs);
}

Test(pipeline, explanation_adds_up_mean) { check_explanation_adds_up(POOL_MEAN); }
Test(pipeline, explanation_adds_up_tfidf) { check_explanation_adds_up(POOL_TFIDF); }
Test(pipeline, explanation_adds_up_sif) { check_explanation_adds_up(POOL_SIF); }
Test(pipeline, explanation_adds_up_bow) { check_explanation_adds_up(POOL_BOW); }
Test(pipeline, explanation_adds_up_bow_mean) { check_explanation_adds_up(POOL_BOW_MEAN); }
Test(pipeline, explanation_adds_up_bow_tfidf) { check_explanation_adds_up(POOL_BOW_TFIDF); }
Test(pipeline, explanation_adds_up_bow_sif) { check_explanation_adds_up(POOL_BOW_SIF); }

Test(pipeline, svm_has_no_word_explanation)
{
    struct tokdocs d;
    fx_docs(&d, TEXTS, N);
    const size_t *rows = ALL;
    pipeline *p = fit(POOL_BOW, CLF_SVM_LINEAR, &d, rows, N, NULL);
    const char *toks[] = { "cat", "sat" }, *words[4];
    double prob[K] = { 0.2, 0.3, 0.5 }, push[4];
    cr_assert_eq(pipeline_explain(p, toks, 2, prob, 0, 4, words, push), 0);
    pipeline_free(p);
    tokdocs_release(&d);
}

/* Fitting on rows 0..7 must not look at rows 8..10: change their words and
 * every probability stays the same, bit for bit. */
Test(pipeline, held_out_rows_do_not_leak_into_the_fit)
{
    vecset *vs = fx_vectors(fx_tmpdir(), "v.vecs", WORDS, VECS, 6, 3);
    static const char *const OTHER[] = { "cat sat sat", "sat cat cat owl", "ran dog",  "dog dog ran hen",
                                         "hen cat owl", "hen hen sat",     "owl owl",  "cat dog",
                                         "dog dog dog", "sat",             "owl fox fox" };
    struct tokdocs a, b;
    fx_docs(&a, TEXTS, N);
    fx_docs(&b, OTHER, N);
    const size_t *rows = ALL;
    for (int pool = POOL_MEAN; pool < FEATURES_POOLS; pool++) {
        pipeline *pa = fit((enum features_pool)pool, CLF_LOGREG, &a, rows, 8, vs);
        pipeline *pb = fit((enum features_pool)pool, CLF_LOGREG, &b, rows, 8, vs);
        double P1[N * K], P2[N * K];
        pipeline_proba(pa, &a, rows, N, P1, NULL);
        pipeline_proba(pb, &a, rows, N, P2, NULL);
        cr_assert(memcmp(P1, P2, sizeof P1) == 0, "pool %s", features_pool_name((enum features_pool)pool));
        for (size_t i = 0; i < N; i++) {
            double s = 0;
            for (size_t k = 0; k < K; k++)
                s += P1[i * K + k];
            cr_assert_float_eq(s, 1.0, 1e-12);
        }
        pipeline_free(pa);
        pipeline_free(pb);
    }
    tokdocs_release(&a);
    tokdocs_release(&b);
    vecset_close(vs);
}

Test(pipeline, save_and_load_give_identical_probabilities)
{
    vecset *vs = fx_vectors(fx_tmpdir(), "v.vecs", WORDS, VECS, 6, 3);
    struct tokdocs d;
    fx_docs(&d, TEXTS, N);
    const size_t *rows = ALL;
    static const struct {
        enum features_pool pool;
        enum pipeline_classifier clf;
    } cases[] = { { POOL_SIF, CLF_LOGREG },       { POOL_BOW, CLF_LOGREG },       { POOL_TFIDF, CLF_SVM_RBF },
                  { POOL_BOW, CLF_SVM_LINEAR },   { POOL_BOW_TFIDF, CLF_LOGREG }, { POOL_BOW_SIF, CLF_SVM_RBF },
                  { POOL_BOW_MEAN, CLF_SVM_LINEAR } };
    for (size_t c = 0; c < sizeof cases / sizeof cases[0]; c++) {
        pipeline *p = fit(cases[c].pool, cases[c].clf, &d, rows, N, vs);
        cJSON *obj = cJSON_CreateObject();
        pipeline_save(p, obj);
        obj = fx_reparse(obj);
        struct err e = ERR_INIT;
        struct jsonv_ctx ctx = { "mem.json", "pipeline", &e };
        pipeline *q = pipeline_load(&ctx, obj, vs, K);
        cr_assert_not_null(q, "%s", e.msg);
        cr_assert_eq(pipeline_spec(q)->clf, cases[c].clf);
        double P1[N * K], P2[N * K];
        pipeline_proba(p, &d, rows, N, P1, NULL);
        pipeline_proba(q, &d, rows, N, P2, NULL);
        cr_assert(memcmp(P1, P2, sizeof P1) == 0, "case %zu", c);
        pipeline_free(p);
        pipeline_free(q);
        cJSON_Delete(obj);
    }
    tokdocs_release(&d);
    vecset_close(vs);
}

Test(pipeline, classifier_kind_must_match_the_kernel)
{
    struct tokdocs d;
    fx_docs(&d, TEXTS, N);
    const size_t *rows = ALL;
    pipeline *p = fit(POOL_BOW, CLF_SVM_RBF, &d, rows, N, NULL);
    cJSON *obj = cJSON_CreateObject();
    pipeline_save(p, obj);
    cJSON_ReplaceItemInObject(cJSON_GetObjectItem(obj, "classifier"), "kind", cJSON_CreateString("svm-linear"));
    obj = fx_reparse(obj);
    struct err e = ERR_INIT;
    struct jsonv_ctx ctx = { "m.json", "pipeline", &e };
    cr_assert_null(pipeline_load(&ctx, obj, NULL, K));
    cr_assert(strstr(e.msg, "m.json: field 'classifier.kernel' does not match kind 'svm-linear'"), "%s", e.msg);
    cJSON_Delete(obj);
    pipeline_free(p);
    tokdocs_release(&d);
}

Test(pipeline, fit_errors)
{
    struct tokdocs d;
    fx_docs(&d, TEXTS, N);
    const size_t *rows = ALL;
    struct pipeline_spec s = PIPELINE_SPEC_INIT;
    struct err e = ERR_INIT;
    s.C = -1;
    cr_assert_null(pipeline_fit(&s, &d, Y, K, rows, N, NULL, NULL, &e));
    cr_assert(strstr(e.msg, "C must be positive"), "%s", e.msg);
    err_clear(&e);
    s.C = 1;
    cr_assert_null(pipeline_fit(&s, &d, Y, K, rows, N, NULL, NULL, &e)); /* tfidf without vectors */
    cr_assert(strstr(e.msg, "needs a vector set"), "%s", e.msg);
    tokdocs_release(&d);
}

/* An unset C (0) resolves per route, and the fitted pipeline (what the
 * model file stores) holds the resolved value; an explicit C wins. */
Test(pipeline, default_C_per_route)
{
    struct tokdocs d;
    fx_docs(&d, TEXTS, N);
    struct pipeline_spec s = PIPELINE_SPEC_INIT;
    struct err e = ERR_INIT;
    cr_assert_eq(s.C, 0);
    s.feat.pool = POOL_BOW;
    pipeline *p = pipeline_fit(&s, &d, Y, K, ALL, N, NULL, NULL, &e);
    cr_assert_not_null(p, "%s", e.msg);
    cr_assert_eq(pipeline_spec(p)->C, PIPELINE_C_BOW);
    pipeline_free(p);
    s.C = 2.5;
    p = pipeline_fit(&s, &d, Y, K, ALL, N, NULL, NULL, &e);
    cr_assert_not_null(p, "%s", e.msg);
    cr_assert_eq(pipeline_spec(p)->C, 2.5);
    pipeline_free(p);
    cr_assert_eq(pipeline_default_C(POOL_BOW_TFIDF, CLF_LOGREG), PIPELINE_C_BOW_POOLED);
    cr_assert_eq(pipeline_default_C(POOL_MEAN, CLF_LOGREG), 1.0);
    cr_assert_eq(pipeline_default_C(POOL_BOW, CLF_SVM_RBF), 1.0);
    tokdocs_release(&d);
}
