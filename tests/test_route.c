/* test_route.c -- the one prediction path: raw text in, label
 * probabilities, confidence, route and top words out.  Its numbers must be
 * the pipeline's own, bit for bit (pipeline_proba over the same texts
 * tokenised, pipeline_explain over the same tokens), whatever the number of
 * threads; the route follows the rule of route.h (review below the cut-off
 * or with no known word); text that is not UTF-8 is named, not routed.
 * The expected behaviour is the interface's own (route.h, DESIGN.md). */
#include <criterion/criterion.h>
#include <stdlib.h>
#include <string.h>

#include "fixtures.h"
#include "vecsift/fmat.h"
#include "vecsift/model.h"
#include "vecsift/pipeline.h"
#include "vecsift/route.h"

enum { N = FX_N, K = FX_K };
static const size_t ALL[N] = { 0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10 };

/* Texts to route: the training texts written as a user would (capitals,
 * punctuation: the tokeniser folds them away), a text with no known word
 * and an empty one. */
static const char *const NEW[] = { "Cat, sat!", "DOG ran ran.", "hen owl owl cat", "zebra yak", "", "owl dog sat hen",
                                   "cat cat cat", "ran, hen; dog" };
static const char *const NEW_TOKENS[] = { "cat sat", "dog ran ran", "hen owl owl cat", "zebra yak", "",
                                          "owl dog sat hen", "cat cat cat", "ran hen dog" };
enum { M = 8 };

static vecset *vs;
static struct model m;

static void make_model(enum features_pool pool)
{
    const char *dir = fx_tmpdir();
    vs = fx_vectors(dir, "v.vecs", fx_words, fx_vecs, FX_NWORDS, FX_DIM);
    struct tokdocs d;
    fx_docs(&d, fx_texts, N);
    struct pipeline_spec s = PIPELINE_SPEC_INIT;
    s.feat.pool = pool;
    s.tol = 1e-10;
    struct err e = ERR_INIT;
    pipeline *p = pipeline_fit(&s, &d, fx_y, K, ALL, N, vs, NULL, &e);
    cr_assert_not_null(p, "%s", e.msg);
    tokdocs_release(&d);
    fx_model(&m, p, K, vs, NULL, fx_y, N, -1);
}

static void drop_model(void)
{
    model_release(&m);
    vecset_close(vs);
}

/* pipeline_proba over NEW_TOKENS: the reference numbers. */
static void reference(double *P)
{
    struct tokdocs d;
    fx_docs(&d, NEW_TOKENS, M);
    size_t rows[M];
    for (size_t i = 0; i < M; i++)
        rows[i] = i;
    pipeline_proba(m.pipe, &d, rows, M, P, NULL);
    tokdocs_release(&d);
}

static void same_as_pipeline(enum features_pool pool)
{
    make_model(pool);
    double want[M * K], got[M * K];
    reference(want);
    struct route_params rp = { 0.5, 0 };
    route_worker *w = route_worker_new(&m, &rp);
    for (size_t i = 0; i < M; i++) {
        struct route_result r = ROUTE_RESULT_INIT;
        struct err e = ERR_INIT;
        cr_assert_eq(route_text(w, &NEW[i], 1, got + i * K, &r, NULL, 0, &e), 0, "%s", e.msg);
        cr_assert(memcmp(got + i * K, want + i * K, K * sizeof *got) == 0, "text %zu: probabilities differ", i);
        int best = 0;
        for (int k = 1; k < K; k++)
            if (want[i * K + (size_t)k] > want[i * K + (size_t)best])
                best = k;
        cr_assert_eq(r.label, best);
        cr_assert(r.confidence == want[i * K + (size_t)best]);
        int empty = i == 3 || i == 4; /* no known word */
        cr_assert_eq(r.empty, empty, "text %zu: empty %d", i, r.empty);
        cr_assert_eq(r.review, empty || r.confidence < 0.5, "text %zu: review %d", i, r.review);
        cr_assert_eq(r.nwords, 0);
        route_result_release(&r);
    }
    route_worker_free(w);
    drop_model();
}

Test(route, same_numbers_as_the_pipeline_mean) { same_as_pipeline(POOL_MEAN); }
Test(route, same_numbers_as_the_pipeline_tfidf) { same_as_pipeline(POOL_TFIDF); }
Test(route, same_numbers_as_the_pipeline_sif) { same_as_pipeline(POOL_SIF); }
Test(route, same_numbers_as_the_pipeline_bow) { same_as_pipeline(POOL_BOW); }

/* Two columns are joined with one space, as training joined them. */
Test(route, columns_are_joined_as_in_training)
{
    make_model(POOL_TFIDF);
    route_worker *w = route_worker_new(&m, NULL);
    const char *parts[] = { "hen owl", "owl cat" };
    const char *whole[] = { "hen owl owl cat" };
    double a[K], b[K];
    struct route_result r = ROUTE_RESULT_INIT;
    struct err e = ERR_INIT;
    cr_assert_eq(route_text(w, parts, 2, a, &r, NULL, 0, &e), 0);
    cr_assert_eq(route_text(w, whole, 1, b, &r, NULL, 0, &e), 0);
    cr_assert(memcmp(a, b, sizeof a) == 0);
    route_result_release(&r);
    route_worker_free(w);
    drop_model();
}

static void top_words(enum features_pool pool)
{
    make_model(pool);
    struct route_params rp = { 0, 2 };
    route_worker *w = route_worker_new(&m, &rp);
    double P[K];
    struct route_result r = ROUTE_RESULT_INIT;
    struct err e = ERR_INIT;
    const char *text[] = { "Hen, owl; owl cat!" };
    cr_assert_eq(route_text(w, text, 1, P, &r, NULL, 0, &e), 0);
    const char *toks[] = { "hen", "owl", "owl", "cat" };
    const char *words[2];
    double push[2];
    size_t nw = pipeline_explain(m.pipe, toks, 4, P, r.label, 2, words, push);
    cr_assert_eq(r.nwords, nw);
    cr_assert_gt(nw, 0);
    for (size_t q = 0; q < nw; q++) {
        cr_assert_str_eq(r.words[q], words[q]);
        cr_assert(r.push[q] == push[q]);
    }
    route_result_release(&r);
    cr_assert_eq(r.nwords, 0);
    route_worker_free(w);
    drop_model();
}

Test(route, top_words_are_the_pipelines_tfidf) { top_words(POOL_TFIDF); }
Test(route, top_words_are_the_pipelines_bow) { top_words(POOL_BOW); }

static void batch_any_threads(enum features_pool pool)
{
    make_model(pool);
    /* many texts, so the batch spans several chunks */
    enum { R = 300 };
    const char *parts[R];
    for (size_t i = 0; i < R; i++)
        parts[i] = NEW[(i * 5) % M];
    double one[M * K];
    reference(one);
    struct route_params rp = { 0.6, 3 };
    double *P1 = calloc(R * K, sizeof *P1);
    struct route_result *r1 = calloc(R, sizeof *r1);
    struct fmat X1 = FMAT_INIT;
    struct err e = ERR_INIT;
    cr_assert_eq(route_batch(&m, &rp, 1, parts, 1, R, P1, r1, &X1, &e), 0, "%s", e.msg);
    for (size_t i = 0; i < R; i++)
        cr_assert(memcmp(P1 + i * K, one + ((i * 5) % M) * K, K * sizeof *P1) == 0, "text %zu", i);
    for (int t = 2; t <= 5; t += 3) {
        double *P2 = calloc(R * K, sizeof *P2);
        struct route_result *r2 = calloc(R, sizeof *r2);
        struct fmat X2 = FMAT_INIT;
        cr_assert_eq(route_batch(&m, &rp, t, parts, 1, R, P2, r2, &X2, &e), 0, "%s", e.msg);
        cr_assert(memcmp(P1, P2, R * K * sizeof *P1) == 0, "threads %d: probabilities differ", t);
        cr_assert_eq(X1.n, X2.n);
        for (size_t i = 0; i < R; i++) {
            cr_assert_eq(r1[i].label, r2[i].label);
            cr_assert_eq(r1[i].review, r2[i].review);
            cr_assert_eq(r1[i].nwords, r2[i].nwords);
            for (size_t q = 0; q < r1[i].nwords; q++)
                cr_assert_str_eq(r1[i].words[q], r2[i].words[q]);
            size_t nz = fmat_nnz_row(&X1, i);
            cr_assert_eq(nz, fmat_nnz_row(&X2, i));
            cr_assert(memcmp(fmat_row_values(&X1, i), fmat_row_values(&X2, i), nz * sizeof(double)) == 0,
                      "threads %d: feature row %zu differs", t, i);
            route_result_release(&r2[i]);
        }
        fmat_release(&X2);
        free(P2);
        free(r2);
    }
    for (size_t i = 0; i < R; i++)
        route_result_release(&r1[i]);
    fmat_release(&X1);
    free(P1);
    free(r1);
    drop_model();
}

Test(route, batch_gives_the_same_for_any_threads_tfidf) { batch_any_threads(POOL_TFIDF); }
Test(route, batch_gives_the_same_for_any_threads_bow) { batch_any_threads(POOL_BOW); }

Test(route, invalid_utf8_is_named_and_routed_to_review)
{
    make_model(POOL_MEAN);
    const char *parts[] = { "cat sat", "caf\xe9 dog", "dog ran", "\xff" };
    double P[4 * K];
    struct route_result r[4];
    memset(r, 0, sizeof r);
    struct err e = ERR_INIT;
    struct route_params rp = ROUTE_PARAMS_INIT;
    cr_assert_eq(route_batch(&m, &rp, 2, parts, 1, 4, P, r, NULL, &e), -1);
    cr_assert(strstr(e.msg, "text 2: invalid UTF-8 at byte 3") != NULL, "message: %s", e.msg);
    cr_assert_eq(r[1].review, 1);
    cr_assert_eq(r[3].review, 1);
    cr_assert_eq(r[0].empty, 0);
    cr_assert_eq(r[2].empty, 0);
    drop_model();
}
