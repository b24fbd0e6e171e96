/* test_features_pieces.c -- pooling with a store that keeps pieces: a word
 * without a whole-word vector takes the one vecset_compose gives, the same
 * on the document path and the memo path (prediction). */
#include <criterion/criterion.h>
#include <string.h>

#include "fixtures.h"
#include "vecsift/features.h"
#include "vecsift/fmat.h"
#include "vecsift/pieces.h"

static const char *const WORDS[] = { "where", "here" };
static const float ROWS[] = { 1, 2, 3, -1, 0, 1 };

/* Pieces of 3 characters in 64 buckets; rows for <wh whe her ere. */
static vecset *store(int with_pieces)
{
    static const char *const g[] = { "<wh", "whe", "her", "ere" };
    static uint32_t ids[4];
    static float prow[12];
    int n = 0;
    for (int i = 0; i < 4; i++) {
        uint32_t b = pieces_fnv1a32(g[i], 3) % 64u;
        int k = n;
        while (k > 0 && ids[k - 1] > b) {
            ids[k] = ids[k - 1];
            k--;
        }
        if (k > 0 && ids[k - 1] == b)
            continue;
        ids[k] = b;
        n++;
    }
    for (int i = 0; i < 12; i++)
        prow[i] = 0.5f - (float)i * 0.125f;
    struct vecset_pieces pc = { { 3, 3, 64 }, (size_t)n, ids, prow };
    const char *dir = fx_tmpdir();
    char path[256];
    snprintf(path, sizeof path, "%s/%s", dir, with_pieces ? "p.vecs" : "w.vecs");
    struct err e = ERR_INIT;
    cr_assert_eq(vecset_write_pieces(path, WORDS, ROWS, 2, 3, with_pieces ? &pc : NULL, &e), 0, "%s", e.msg);
    vecset *v = vecset_open(path, &e);
    cr_assert_not_null(v, "%s", e.msg);
    return v;
}

static featurizer *fit_mean(vecset *vs, struct tokdocs *d)
{
    static const char *const texts[] = { "where here", "here" };
    fx_docs(d, texts, 2);
    size_t rows[] = { 0, 1 };
    struct features_params p = FEATURES_PARAMS_INIT;
    p.pool = POOL_MEAN;
    p.scale = 0;
    struct err e = ERR_INIT;
    featurizer *f = features_fit(&p, d, rows, 2, vs, &e);
    cr_assert_not_null(f, "%s", e.msg);
    return f;
}

Test(features_pieces, word_without_a_row_takes_its_composed_vector)
{
    vecset *vs = store(1);
    struct tokdocs d;
    featurizer *f = fit_mean(vs, &d);
    float comp[3];
    cr_assert_gt(vecset_compose(vs, "wherever", 8, comp), 0);
    const char *toks[] = { "wherever", "where", "zz" };
    struct fmat X = FMAT_INIT;
    features_alloc(f, 2, &X);
    struct features_stats st = { 0, 0, 0 };
    features_transform_tokens(f, toks, 3, &X, 0, &st);
    features_memo *mm = features_memo_new(f);
    size_t lens[] = { 8, 5, 2 };
    features_transform_memo(f, mm, toks, lens, 3, &X, 1, NULL);
    features_transform_memo(f, mm, toks, lens, 3, &X, 1, NULL); /* again, from the memo */
    for (size_t q = 0; q < 3; q++) {
        /* mean pooling: c = 1/2 each, summed in order of first appearance */
        double want = 0.5 * (double)comp[q] + 0.5 * (double)ROWS[q];
        cr_assert_eq(X.x[q], want, "dim %zu: %.17g, expected %.17g", q, X.x[q], want);
        cr_assert_eq(X.x[3 + q], want, "memo dim %zu", q);
    }
    cr_assert_eq(st.tokens, 3);
    cr_assert_eq(st.with_vector, 2, "'zz' has no piece held; 'wherever' has");
    features_memo_free(mm);
    fmat_release(&X);
    features_free(f);
    tokdocs_release(&d);
    vecset_close(vs);
    fx_cleanup();
}

/* Without pieces the unknown word is skipped, as always. */
Test(features_pieces, store_without_pieces_skips_unknown_words)
{
    vecset *vs = store(0);
    struct tokdocs d;
    featurizer *f = fit_mean(vs, &d);
    const char *toks[] = { "wherever", "where" };
    struct fmat X = FMAT_INIT;
    features_alloc(f, 1, &X);
    features_transform_tokens(f, toks, 2, &X, 0, NULL);
    for (size_t q = 0; q < 3; q++)
        cr_assert_eq(X.x[q], (double)ROWS[q]);
    fmat_release(&X);
    features_free(f);
    tokdocs_release(&d);
    vecset_close(vs);
    fx_cleanup();
}
