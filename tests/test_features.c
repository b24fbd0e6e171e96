/* test_features.c -- pooling, sparse tf-idf, scaling, counts, persistence.
 * The comparison with scikit-learn's TfidfVectorizer and StandardScaler on
 * open data lives in tests/ext/features_vs_sklearn.py. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>

#include "fixtures.h"
#include "vecsift/features.h"
#include "vecsift/fmat.h"
#include "vecsift/xalloc.h"

/* Four words with 3-d vectors; "hen" and "owl" have none. */
static const char *const WORDS[] = { "cat", "sat", "ran", "dog" };
static const float VECS[] = { 1, 0, 2, /* cat */
                              3, 0, 4, /* sat */
                              5, 0, 0, /* ran */
                              10, 1, 1 /* dog */ };

static vecset *four_words(void)
{
    return fx_vectors(fx_tmpdir(), "v.vecs", WORDS, VECS, 4, 3);
}

static featurizer *fit(enum features_pool pool, int scale, const struct tokdocs *d, const size_t *rows, size_t n,
                       const vecset *vs)
{
    struct features_params p = FEATURES_PARAMS_INIT;
    p.pool = pool;
    p.scale = scale;
    struct err e = ERR_INIT;
    featurizer *f = features_fit(&p, d, rows, n, vs, &e);
    cr_assert_not_null(f, "%s", e.msg);
    return f;
}

/* Value of term 'name' in sparse row i (0 when absent). */
static double bow_value(const featurizer *f, const struct fmat *X, size_t i, const char *name)
{
    for (size_t q = X->rowptr[i]; q < X->rowptr[i + 1]; q++)
        if (strcmp(features_term(f, X->col[q]), name) == 0)
            return X->val[q];
    return 0;
}

/* Worked by hand with the smoothed idf of features.h (Manning, Raghavan and
 * Schuetze 2008, ch. 6.2; the form scikit-learn uses), N = 3 documents:
 *   d1 "cat sat", d2 "cat ran", d3 "cat cat sat"
 *   df: cat 3, sat 2, ran 1
 *   idf(cat) = ln(4/4) + 1 = 1
 *   idf(sat) = ln(4/3) + 1 = 1.2876820724517809
 *   idf(ran) = ln(4/2) + 1 = 1.6931471805599454
 *   d1: (cat 1, sat 1.28768207), length sqrt(1 + 1.65812512) = 1.63037576
 *       -> cat 0.61335553702497170, sat 0.78980692906609051
 *   d2: (cat 1, ran 1.69314718), length 1.96640468
 *       -> cat 0.50854232037832670, ran 0.86103699594397642
 *   d3: (cat 2, sat 1.28768207), length 2.37868138
 *       -> cat 0.84080197317211114, sat 0.54134281366790538 */
Test(features, bow_three_documents_worked_by_hand)
{
    static const char *const texts[] = { "cat sat", "cat ran", "cat cat sat" };
    struct tokdocs d;
    fx_docs(&d, texts, 3);
    size_t rows[] = { 0, 1, 2 };
    struct features_params p = FEATURES_PARAMS_INIT;
    p.pool = POOL_BOW;
    p.bigrams = 0;
    p.min_df = 1; /* keep "ran", seen once */
    struct err e = ERR_INIT;
    featurizer *f = features_fit(&p, &d, rows, 3, NULL, &e);
    cr_assert_not_null(f, "%s", e.msg);
    cr_assert_eq(features_dim(f), 3);
    cr_assert(features_sparse(f));
    struct fmat X = FMAT_INIT;
    features_transform(f, &d, rows, 3, &X, NULL);
    static const struct {
        size_t row;
        const char *term;
        double want;
    } cells[] = {
        { 0, "cat", 0.61335553702497170 }, { 0, "sat", 0.78980692906609051 }, { 0, "ran", 0 },
        { 1, "cat", 0.50854232037832670 }, { 1, "ran", 0.86103699594397642 }, { 1, "sat", 0 },
        { 2, "cat", 0.84080197317211114 }, { 2, "sat", 0.54134281366790538 }, { 2, "ran", 0 },
    };
    for (size_t c = 0; c < sizeof cells / sizeof cells[0]; c++)
        cr_assert_float_eq(bow_value(f, &X, cells[c].row, cells[c].term), cells[c].want, 1e-15, "row %zu term %s",
                           cells[c].row, cells[c].term);
    fmat_release(&X);
    features_free(f);
    tokdocs_release(&d);
}

/* Default bow (features.h): words of a single training row are dropped
 * (TfidfVectorizer's min_df=2), unless no word would be left. */
Test(features, bow_keeps_words_of_two_training_rows)
{
    static const char *const texts[] = { "cat sat", "cat ran", "dog sat" };
    struct tokdocs d;
    fx_docs(&d, texts, 3);
    size_t rows[] = { 0, 1, 2 };
    struct features_params p = FEATURES_PARAMS_INIT;
    p.pool = POOL_BOW;
    struct err e = ERR_INIT;
    featurizer *f = features_fit(&p, &d, rows, 3, NULL, &e);
    cr_assert_not_null(f, "%s", e.msg);
    cr_assert_eq(features_dim(f), 2);
    cr_assert_str_eq(features_term(f, 0), "cat");
    cr_assert_str_eq(features_term(f, 1), "sat");
    features_free(f);
    tokdocs_release(&d);

    static const char *const apart[] = { "apple", "pear plum" };
    fx_docs(&d, apart, 2);
    f = features_fit(&p, &d, rows, 2, NULL, &e);
    cr_assert_not_null(f, "%s", e.msg);
    cr_assert_eq(features_dim(f), 3, "no word in two rows: all are kept");
    features_free(f);
    tokdocs_release(&d);
}

Test(features, mean_of_two_words_is_their_average)
{
    vecset *vs = four_words();
    static const char *const texts[] = { "cat sat", "ran dog" };
    struct tokdocs d;
    fx_docs(&d, texts, 2);
    size_t rows[] = { 0, 1 };
    featurizer *f = fit(POOL_MEAN, 0, &d, rows, 2, vs);
    const char *toks[] = { "sat", "cat" };
    struct fmat X = FMAT_INIT;
    features_alloc(f, 1, &X);
    features_transform_tokens(f, toks, 2, &X, 0, NULL);
    for (size_t q = 0; q < 3; q++)
        cr_assert_float_eq(X.x[q], ((double)VECS[q] + VECS[3 + q]) / 2, 1e-15, "dim %zu", q);
    fmat_release(&X);
    features_free(f);
    tokdocs_release(&d);
    vecset_close(vs);
}

/* The pooled row is sum_j c_j v_j with each element summed over the words
 * in order of first appearance (features.h); the blocked loops that compute
 * it must give exactly the bits of that plain double loop (common
 * practice: an optimised loop is checked against the plain one).  29
 * dimensions exercise two 12-wide blocks and a 5-wide tail; 70 words exceed
 * the 64 row pointers kept on the stack.  Words appear 1, 2 or 3 times, so
 * the coefficients tf / total are not all equal. */
Test(features, pooled_sum_is_bit_identical_to_the_plain_loop)
{
    enum { NW = 70, DIM = 29 };
    static char names[NW][8];
    const char *words[NW];
    static float vecs[NW * DIM];
    uint64_t st = 88172645463325252u; /* xorshift64 (Marsaglia 2003), any fixed seed */
    for (size_t w = 0; w < NW; w++) {
        snprintf(names[w], sizeof names[w], "w%02zux", w);
        words[w] = names[w];
        for (size_t q = 0; q < DIM; q++) {
            st ^= st << 13;
            st ^= st >> 7;
            st ^= st << 17;
            vecs[w * DIM + q] = (float)((double)(st >> 11) / 9007199254740992.0 * 2.0 - 1.0);
        }
    }
    vecset *vs = fx_vectors(fx_tmpdir(), "wide.vecs", words, vecs, NW, DIM);
    const char *toks[3 * NW];
    size_t ntok = 0;
    for (size_t w = 0; w < NW; w++)
        for (size_t r = 0; r <= w % 3; r++)
            toks[ntok++] = words[(w * 37) % NW]; /* a fixed shuffle: 37 is prime to 70 */
    static char text[3 * NW * 5];
    size_t len = 0;
    for (size_t i = 0; i < ntok; i++)
        len += (size_t)snprintf(text + len, sizeof text - len, "%s ", toks[i]);
    const char *texts[] = { text };
    struct tokdocs d;
    fx_docs(&d, texts, 1);
    size_t rows[] = { 0 };
    featurizer *f = fit(POOL_MEAN, 0, &d, rows, 1, vs);
    struct fmat X = FMAT_INIT;
    features_alloc(f, 1, &X);
    features_transform_tokens(f, toks, ntok, &X, 0, NULL);
    for (size_t q = 0; q < DIM; q++) {
        double want = 0;
        for (size_t w = 0; w < NW; w++) {
            size_t id = (w * 37) % NW;
            want += (double)(w % 3 + 1) / (double)ntok * (double)vecs[id * DIM + q];
        }
        cr_assert(memcmp(&want, &X.x[q], sizeof want) == 0, "dim %zu: %.17g, plain loop %.17g", q, X.x[q], want);
    }
    fmat_release(&X);
    features_free(f);
    tokdocs_release(&d);
    vecset_close(vs);
}

/* The memo used by streaming prediction must give the bits and counts of
 * the plain path, for every pooling, with repeated words, words without a
 * vector, words unseen in training, an empty text, and one memo serving
 * many texts in turn (common practice: a cache must not change results). */
Test(features, memo_gives_the_same_rows_as_the_plain_path)
{
    vecset *vs = four_words();
    static const char *const texts[] = { "cat sat", "ran dog dog", "cat ran", "sat sat dog", "dog hen" };
    struct tokdocs d;
    fx_docs(&d, texts, 5);
    size_t rows[] = { 0, 1, 2, 3 };
    static const char *const held[][6] = {
        { "dog", "cat", "dog", "hen", "owl", "dog" }, { "hen" }, { "sat" }, { "cat", "cat", "ran", "sat", "owl", "cat" },
        { "dog", "cat", "dog", "hen", "owl", "dog" },
    };
    static const size_t nheld[] = { 6, 1, 0, 6, 6 };
    for (int pool = POOL_MEAN; pool <= POOL_SIF; pool++)
        for (int scale = 0; scale <= 1; scale++) {
            featurizer *f = fit((enum features_pool)pool, scale, &d, rows, 4, vs);
            features_memo *mm = features_memo_new(f);
            struct fmat A = FMAT_INIT, B = FMAT_INIT;
            features_alloc(f, 5, &A);
            features_alloc(f, 5, &B);
            struct features_stats sa = { 0, 0, 0 }, sb = { 0, 0, 0 };
            for (size_t i = 0; i < 5; i++) {
                features_transform_tokens(f, held[i], nheld[i], &A, i, &sa);
                features_transform_memo(f, mm, held[i], i % 2 ? NULL : (const size_t[]){ 3, 3, 3, 3, 3, 3 },
                                        nheld[i], &B, i, &sb);
            }
            cr_assert(memcmp(A.x, B.x, 5 * 3 * sizeof *A.x) == 0, "pool %d scale %d: rows differ", pool, scale);
            cr_assert(sa.tokens == sb.tokens && sa.with_vector == sb.with_vector && sa.empty_rows == sb.empty_rows,
                      "pool %d scale %d: counts differ", pool, scale);
            cr_assert_eq(sa.empty_rows, 2, "'hen' alone and no token at all are empty");
            fmat_release(&A);
            fmat_release(&B);
            features_memo_free(mm);
            features_free(f);
        }
    tokdocs_release(&d);
    vecset_close(vs);
}

/* A memo that fills up (a text of 70,000 distinct words) starts afresh
 * before the next text; the rows stay those of the plain path. */
Test(features, memo_that_fills_up_starts_afresh)
{
    vecset *vs = four_words();
    static const char *const texts[] = { "cat sat", "ran dog dog", "cat ran" };
    struct tokdocs d;
    fx_docs(&d, texts, 3);
    size_t rows[] = { 0, 1, 2 };
    featurizer *f = fit(POOL_TFIDF, 1, &d, rows, 3, vs);
    enum { BIG = 70000 };
    char(*names)[8] = xcalloc(BIG, sizeof *names);
    const char **big = xcalloc(BIG + 2, sizeof *big);
    for (size_t i = 0; i < BIG; i++) {
        snprintf(names[i], sizeof names[i], "u%06zu", i);
        big[i] = names[i];
    }
    big[BIG] = "cat";
    big[BIG + 1] = "dog";
    const char *small[] = { "dog", "sat", "dog" };
    features_memo *mm = features_memo_new(f);
    struct fmat A = FMAT_INIT, B = FMAT_INIT;
    features_alloc(f, 3, &A);
    features_alloc(f, 3, &B);
    for (size_t i = 0; i < 3; i++) {
        const char *const *t = i == 1 ? big : small;
        size_t n = i == 1 ? BIG + 2 : 3;
        features_transform_tokens(f, t, n, &A, i, NULL);
        features_transform_memo(f, mm, t, NULL, n, &B, i, NULL);
    }
    cr_assert(memcmp(A.x, B.x, 3 * 3 * sizeof *A.x) == 0, "rows differ");
    fmat_release(&A);
    fmat_release(&B);
    features_memo_free(mm);
    free(big);
    free(names);
    features_free(f);
    tokdocs_release(&d);
    vecset_close(vs);
}

/* Arora, Liang and Ma (2017): after removing the first component u, every
 * pooled row is orthogonal to u, training rows and new rows alike. */
Test(features, sif_rows_are_orthogonal_to_the_removed_component)
{
    vecset *vs = four_words();
    static const char *const texts[] = { "cat sat", "ran dog dog", "cat ran", "sat sat dog", "dog" };
    struct tokdocs d;
    fx_docs(&d, texts, 5);
    size_t rows[] = { 0, 1, 2, 3, 4 };
    featurizer *f = fit(POOL_SIF, 0, &d, rows, 5, vs);
    const double *u = features_sif_component(f);
    cr_assert_not_null(u);
    double len = 0;
    for (size_t q = 0; q < 3; q++)
        len += u[q] * u[q];
    cr_assert_float_eq(len, 1.0, 1e-12);
    struct fmat X = FMAT_INIT;
    features_transform(f, &d, rows, 5, &X, NULL);
    for (size_t i = 0; i < 5; i++) {
        double dot = 0, nrm = 0;
        for (size_t q = 0; q < 3; q++) {
            dot += u[q] * X.x[i * 3 + q];
            nrm += X.x[i * 3 + q] * X.x[i * 3 + q];
        }
        cr_assert(fabs(dot) <= 1e-12 * (1 + sqrt(nrm)), "row %zu: u . x = %g", i, dot);
    }
    const char *held_out[] = { "cat", "dog", "hen" };
    features_alloc(f, 1, &X);
    features_transform_tokens(f, held_out, 3, &X, 0, NULL);
    double dot = 0;
    for (size_t q = 0; q < 3; q++)
        dot += u[q] * X.x[q];
    cr_assert(fabs(dot) <= 1e-12, "held-out row: u . x = %g", dot);
    fmat_release(&X);
    features_free(f);
    tokdocs_release(&d);
    vecset_close(vs);
}

/* Training rows cat, sat, ran (one word each, so the pooled row is the
 * vector); the held-out row dog must be scaled with the training mean
 * (3, 0, 2) and sd (sqrt(8/3), 1 for the constant column, sqrt(8/3)), sd
 * with divisor N as scikit-learn's StandardScaler: (10-3)/1.6329931618554521
 * = 4.2866070498705620, (1-0)/1 = 1, (1-2)/1.6329931618554521 = -0.61237243569579447. */
Test(features, scaler_is_fitted_on_training_rows_only)
{
    vecset *vs = four_words();
    static const char *const texts[] = { "cat", "sat", "ran", "dog" };
    struct tokdocs d;
    fx_docs(&d, texts, 4);
    size_t train[] = { 0, 1, 2 }, held[] = { 3 };
    featurizer *f = fit(POOL_MEAN, 1, &d, train, 3, vs);
    const double *mean, *sd;
    features_scaler(f, &mean, &sd);
    cr_assert_not_null(mean);
    const double want_mean[] = { 3, 0, 2 }, want_sd[] = { 1.6329931618554521, 1, 1.6329931618554521 };
    for (size_t q = 0; q < 3; q++) {
        cr_assert_float_eq(mean[q], want_mean[q], 1e-15);
        cr_assert_float_eq(sd[q], want_sd[q], 1e-15);
    }
    struct fmat X = FMAT_INIT;
    features_transform(f, &d, held, 1, &X, NULL);
    cr_assert_float_eq(X.x[0], 4.2866070498705620, 1e-14);
    cr_assert_float_eq(X.x[1], 1.0, 1e-15);
    cr_assert_float_eq(X.x[2], -0.61237243569579447, 1e-15);
    fmat_release(&X);
    features_free(f);
    tokdocs_release(&d);
    vecset_close(vs);
}

Test(features, tokens_without_a_vector_are_skipped_and_counted)
{
    vecset *vs = four_words();
    static const char *const texts[] = { "cat sat", "ran dog" };
    struct tokdocs d;
    fx_docs(&d, texts, 2);
    size_t rows[] = { 0, 1 };
    featurizer *f = fit(POOL_MEAN, 0, &d, rows, 2, vs);
    const char *toks[] = { "hen", "cat", "hen", "sat", "owl" };
    struct fmat X = FMAT_INIT;
    features_alloc(f, 1, &X);
    struct features_stats st = { 0, 0, 0 };
    features_transform_tokens(f, toks, 5, &X, 0, &st);
    cr_assert_eq(st.tokens, 5);
    cr_assert_eq(st.with_vector, 2);
    cr_assert_eq(st.empty_rows, 0);
    for (size_t q = 0; q < 3; q++)
        cr_assert_float_eq(X.x[q], ((double)VECS[q] + VECS[3 + q]) / 2, 1e-15);
    fmat_release(&X);
    features_free(f);
    tokdocs_release(&d);
    vecset_close(vs);
}

Test(features, a_text_without_known_words_becomes_zero_and_is_counted)
{
    vecset *vs = four_words();
    static const char *const texts[] = { "cat sat", "ran dog", "hen owl", "" };
    struct tokdocs d;
    fx_docs(&d, texts, 4);
    size_t rows[] = { 0, 1, 2, 3 };
    for (int pool = POOL_MEAN; pool <= POOL_SIF; pool++) {
        featurizer *f = fit((enum features_pool)pool, 0, &d, rows, 4, vs);
        struct fmat X = FMAT_INIT;
        struct features_stats st = { 0, 0, 0 };
        features_transform(f, &d, rows, 4, &X, &st);
        cr_assert_eq(st.empty_rows, 2, "pool %s", features_pool_name((enum features_pool)pool));
        cr_assert_eq(st.tokens, 6);
        cr_assert_eq(st.with_vector, 4);
        for (size_t i = 2; i < 4; i++)
            for (size_t q = 0; q < 3; q++)
                cr_assert_eq(X.x[i * 3 + q], 0.0, "pool %s row %zu", features_pool_name((enum features_pool)pool), i);
        fmat_release(&X);
        features_free(f);
    }
    tokdocs_release(&d);
    vecset_close(vs);
}

Test(features, fit_errors_are_reported)
{
    vecset *vs = four_words();
    static const char *const texts[] = { "hen owl", "" };
    struct tokdocs d;
    fx_docs(&d, texts, 2);
    size_t rows[] = { 0, 1 };
    struct features_params p = FEATURES_PARAMS_INIT;
    struct err e = ERR_INIT;
    cr_assert_null(features_fit(&p, &d, rows, 2, NULL, &e));
    cr_assert(strstr(e.msg, "needs a vector set"), "%s", e.msg);
    err_clear(&e);
    cr_assert_null(features_fit(&p, &d, rows, 2, vs, &e));
    cr_assert(strstr(e.msg, "no training row has a single word with a vector"), "%s", e.msg);
    err_clear(&e);
    cr_assert_null(features_fit(&p, &d, rows, 0, vs, &e));
    cr_assert(strstr(e.msg, "no training rows"), "%s", e.msg);
    err_clear(&e);
    p.pool = POOL_BOW;
    size_t empty[] = { 1 };
    cr_assert_null(features_fit(&p, &d, empty, 1, NULL, &e));
    cr_assert(strstr(e.msg, "no words"), "%s", e.msg);
    tokdocs_release(&d);
    vecset_close(vs);
}

/* Every pooling, saved, printed, parsed and loaded, gives the same numbers
 * bit for bit, also for a word never seen in training ("dog" below). */
Test(features, save_and_load_give_identical_features)
{
    vecset *vs = four_words();
    static const char *const texts[] = { "cat sat sat", "ran cat hen", "sat ran", "dog owl", "cat dog ran" };
    struct tokdocs d;
    fx_docs(&d, texts, 5);
    size_t train[] = { 0, 1, 2 }, all[] = { 0, 1, 2, 3, 4 };
    for (int pool = POOL_MEAN; pool < FEATURES_POOLS; pool++) {
        for (int sub = 0; sub <= 1; sub++) {
            struct features_params p = FEATURES_PARAMS_INIT;
            p.pool = (enum features_pool)pool;
            p.sublinear_tf = sub;
            struct err e = ERR_INIT;
            featurizer *f = features_fit(&p, &d, train, 3, vs, &e);
            cr_assert_not_null(f, "%s", e.msg);
            cJSON *obj = cJSON_CreateObject();
            features_save(f, obj);
            obj = fx_reparse(obj);
            struct jsonv_ctx c = { "mem.json", "features", &e };
            featurizer *g = features_load(&c, obj, vs);
            cr_assert_not_null(g, "%s", e.msg);
            cr_assert_eq(features_dim(g), features_dim(f));
            struct fmat A = FMAT_INIT, B = FMAT_INIT;
            features_transform(f, &d, all, 5, &A, NULL);
            features_transform(g, &d, all, 5, &B, NULL);
            for (size_t i = 0; i < 5; i++) {
                size_t n = fmat_nnz_row(&A, i);
                cr_assert_eq(fmat_nnz_row(&B, i), n);
                cr_assert(memcmp(fmat_row_values(&A, i), fmat_row_values(&B, i), n * sizeof(double)) == 0,
                          "pool %s sublinear %d row %zu differs", features_pool_name(p.pool), sub, i);
            }
            fmat_release(&A);
            fmat_release(&B);
            features_free(f);
            features_free(g);
            cJSON_Delete(obj);
        }
    }
    tokdocs_release(&d);
    vecset_close(vs);
}

Test(features, load_rejects_damaged_fields)
{
    vecset *vs = four_words();
    static const char *const texts[] = { "cat sat", "ran dog" };
    struct tokdocs d;
    fx_docs(&d, texts, 2);
    size_t rows[] = { 0, 1 };
    featurizer *f = fit(POOL_TFIDF, 1, &d, rows, 2, vs);
    static const struct {
        const char *key, *json, *says;
    } cases[] = {
        { "idf", "[0.5, 1, 1, 1]", "field 'features.idf' entry 0 is below 1" },
        { "idf", "[1, 1]", "field 'features.idf' has 2 entries, expected 4" },
        { "scale_sd", "[1, 0, 1]", "field 'features.scale_sd' entry 1 is not positive" },
        { "scale_mean", "[1, 1e999, 1]", "field 'features.scale_mean' entry 1 is not a finite number" },
        { "dimensions", "7", "field 'features.dimensions' is 7 but the vector set has 3" },
        { "pool", "\"max\"", "field 'features.pool' is 'max'" },
        { "words", "[\"cat\", \"cat\", \"ran\", \"dog\"]", "field 'features.words' repeats 'cat'" },
        { "sublinear_tf", "1", "field 'features.sublinear_tf' is not true or false" },
    };
    for (size_t k = 0; k < sizeof cases / sizeof cases[0]; k++) {
        cJSON *obj = cJSON_CreateObject();
        features_save(f, obj);
        cJSON_ReplaceItemInObjectCaseSensitive(obj, cases[k].key, cJSON_Parse(cases[k].json));
        obj = fx_reparse(obj);
        struct err e = ERR_INIT;
        struct jsonv_ctx c = { "m.json", "features", &e };
        cr_assert_null(features_load(&c, obj, vs), "case %zu loaded", k);
        cr_assert(strstr(e.msg, cases[k].says), "case %zu: %s", k, e.msg);
        cr_assert(strncmp(e.msg, "m.json", 6) == 0, "no file name: %s", e.msg);
        cJSON_Delete(obj);
    }
    features_free(f);
    tokdocs_release(&d);
    vecset_close(vs);
}

/* features_fit_transform (with and without the pooled-row cache) promises
 * exactly what features_fit then features_transform of the same rows give:
 * same bits in X, same counts, same scaler; features_transform_cached the
 * same as features_transform for held-out rows.  Rows picked out of order and
 * leaving some out, as a fold does; texts with unknown words, repeats and
 * no words at all. */
Test(features, fit_transform_equals_fit_then_transform)
{
    vecset *vs = four_words();
    static const char *const texts[] = { "cat sat cat", "ran dog hen", "hen owl", "", "dog dog sat ran",
                                         "sat", "cat ran owl sat" };
    struct tokdocs d;
    fx_docs(&d, texts, 7);
    size_t rows[] = { 6, 0, 3, 4, 2, 1 };
    for (int pool = POOL_MEAN; pool < FEATURES_POOLS; pool++)
        for (int scale = 0; scale < 2; scale++) {
            struct features_params p = FEATURES_PARAMS_INIT;
            p.pool = (enum features_pool)pool;
            p.scale = scale;
            const char *name = features_pool_name(p.pool);
            featurizer *f = fit(p.pool, scale, &d, rows, 6, vs);
            struct fmat want = FMAT_INIT;
            struct features_stats sw = { 0, 0, 0 };
            features_transform(f, &d, rows, 6, &want, &sw);
            features_cache *cache = features_cache_new(&p, &d, vs);
            for (int cached = 0; cached < 2; cached++) {
                struct fmat X = FMAT_INIT;
                struct features_stats st = { 0, 0, 0 };
                struct err e = ERR_INIT;
                featurizer *g = features_fit_transform(&p, &d, rows, 6, vs, cached ? cache : NULL, &X, &st, &e);
                cr_assert_not_null(g, "%s", e.msg);
                cr_assert(st.tokens == sw.tokens && st.with_vector == sw.with_vector &&
                              st.empty_rows == sw.empty_rows,
                          "pool %s scale %d cached %d: counts differ", name, scale, cached);
                cr_assert(X.n == want.n && X.d == want.d && X.sparse == want.sparse);
                if (X.sparse) {
                    size_t nnz = want.rowptr[want.n];
                    cr_assert(memcmp(X.rowptr, want.rowptr, (want.n + 1) * sizeof *X.rowptr) == 0);
                    cr_assert(memcmp(X.col, want.col, nnz * sizeof *X.col) == 0);
                    cr_assert(memcmp(X.val, want.val, nnz * sizeof *X.val) == 0);
                } else {
                    cr_assert(memcmp(X.x, want.x, X.n * X.d * sizeof *X.x) == 0,
                              "pool %s scale %d cached %d: rows differ", name, scale, cached);
                }
                const double *m0, *s0, *m1, *s1;
                features_scaler(f, &m0, &s0);
                features_scaler(g, &m1, &s1);
                cr_assert((m0 == NULL) == (m1 == NULL));
                if (m0)
                    cr_assert(memcmp(m0, m1, 3 * sizeof *m0) == 0 && memcmp(s0, s1, 3 * sizeof *s0) == 0);
                /* everything a model file keeps (words, idf, word
                 * probabilities, component, scaler), printed exactly */
                cJSON *jf = cJSON_CreateObject(), *jg = cJSON_CreateObject();
                features_save(f, jf);
                features_save(g, jg);
                char *tf = cJSON_PrintUnformatted(jf), *tg = cJSON_PrintUnformatted(jg);
                cr_assert_str_eq(tg, tf, "pool %s scale %d cached %d: saved featurizers differ", name, scale, cached);
                cJSON_free(tf);
                cJSON_free(tg);
                cJSON_Delete(jf);
                cJSON_Delete(jg);
                /* the rows the fit left out, through the cache */
                size_t held[] = { 5, 3 };
                struct fmat H = FMAT_INIT, Hw = FMAT_INIT;
                struct features_stats sh = { 0, 0, 0 }, shw = { 0, 0, 0 };
                features_transform(f, &d, held, 2, &Hw, &shw);
                features_transform_cached(f, cached ? cache : NULL, &d, held, 2, &H, &sh);
                cr_assert(sh.tokens == shw.tokens && sh.with_vector == shw.with_vector &&
                          sh.empty_rows == shw.empty_rows);
                if (!H.sparse)
                    cr_assert(memcmp(H.x, Hw.x, 2 * H.d * sizeof *H.x) == 0,
                              "pool %s scale %d cached %d: held-out rows differ", name, scale, cached);
                fmat_release(&H);
                fmat_release(&Hw);
                fmat_release(&X);
                features_free(g);
            }
            features_cache_free(cache);
            fmat_release(&want);
            features_free(f);
        }
    tokdocs_release(&d);
    vecset_close(vs);
}

/* ---- the combined route (bow+mean, bow+tfidf, bow+sif) ---- */

/* Row i of the combined matrix is w_b times the bow featurizer's row i in
 * columns [0, Vb), then w_p times the pooled featurizer's row i in
 * [Vb, Vb+E), every pooled column stored; the bow and pooled featurizers
 * fitted alone on the same rows give the blocks; and the weights make each
 * block's mean squared length over the training rows E (the rule in
 * features.h). */
Test(features, combined_row_is_bow_beside_weighted_pooled)
{
    vecset *vs = four_words();
    static const char *const texts[] = { "cat sat cat", "ran dog hen", "hen owl", "dog dog sat ran",
                                         "sat", "cat ran owl sat", "sat sat dog" };
    struct tokdocs d;
    fx_docs(&d, texts, 7);
    size_t rows[] = { 0, 1, 3, 4, 5, 6 }, all[] = { 0, 1, 2, 3, 4, 5, 6 };
    static const enum features_pool pools[] = { POOL_BOW_MEAN, POOL_BOW_TFIDF, POOL_BOW_SIF };
    for (size_t c = 0; c < 3; c++) {
        cr_assert(features_pool_combined(pools[c]));
        featurizer *f = fit(pools[c], 1, &d, rows, 6, vs);
        featurizer *fb = fit(POOL_BOW, 1, &d, rows, 6, vs);
        featurizer *fd = fit(features_pool_dense(pools[c]), 1, &d, rows, 6, vs);
        const featurizer *b, *q;
        double wt[2];
        cr_assert_eq(features_blocks(f, &b, &q, wt), 0);
        cr_assert_eq(features_blocks(fb, &b, &q, wt), -1);
        features_blocks(f, &b, &q, wt);
        double w = wt[1];
        size_t Vb = features_dim(fb), E = features_dim(fd);
        cr_assert_eq(features_dim(f), Vb + E);
        cr_assert(features_sparse(f));
        cr_assert_eq(features_vectors(f), vs);
        cr_assert_str_eq(features_term(f, 0), features_term(fb, 0));
        cr_assert_null(features_term(f, Vb));
        struct fmat X = FMAT_INIT, XB = FMAT_INIT, XD = FMAT_INIT;
        features_transform(f, &d, all, 7, &X, NULL);
        features_transform(fb, &d, all, 7, &XB, NULL);
        features_transform(fd, &d, all, 7, &XD, NULL);
        cr_assert(X.sparse && X.n == 7 && X.d == Vb + E);
        double sq = 0, sqb = 0;
        for (size_t i = 0; i < 7; i++) {
            size_t a = X.rowptr[i], nb = XB.rowptr[i + 1] - XB.rowptr[i];
            cr_assert_eq(X.rowptr[i + 1] - a, nb + E, "row %zu has %zu entries", i, X.rowptr[i + 1] - a);
            for (size_t k = 0; k < nb; k++) {
                cr_assert_eq(X.col[a + k], XB.col[XB.rowptr[i] + k]);
                cr_assert(X.val[a + k] == wt[0] * XB.val[XB.rowptr[i] + k], "row %zu bow entry %zu", i, k);
                if (i != 2)
                    sqb += X.val[a + k] * X.val[a + k];
            }
            for (size_t k = 0; k < E; k++) {
                cr_assert_eq(X.col[a + nb + k], Vb + k);
                cr_assert(X.val[a + nb + k] == w * XD.x[i * E + k], "row %zu pooled entry %zu", i, k);
                if (i != 2) /* row 2 was held out of the fit */
                    sq += XD.x[i * E + k] * XD.x[i * E + k];
            }
        }
        cr_assert_float_eq(w, sqrt(3.0 / (sq / 6.0)), 1e-15);
        cr_assert_float_eq(w * w * sq / 6.0, 3.0, 1e-12, "pooled block's mean squared length");
        cr_assert_float_eq(sqb / 6.0, 3.0, 1e-12, "bow block's mean squared length (every training row has words)");
        cr_assert_float_eq(wt[0], sqrt(3.0), 1e-15);
        /* three standardised columns that all vary have mean squares of 1
         * each (common practice): the pooled block is left as it is */
        cr_assert_float_eq(w, 1.0, 1e-12);
        fmat_release(&X);
        fmat_release(&XB);
        fmat_release(&XD);
        features_free(f);
        features_free(fb);
        features_free(fd);
    }
    tokdocs_release(&d);
    vecset_close(vs);
}

/* One text through features_transform_tokens and features_transform_memo
 * (predict's path) gives the row the batch transform gives. */
Test(features, combined_row_by_tokens_equals_batch)
{
    vecset *vs = four_words();
    static const char *const texts[] = { "cat sat cat", "ran dog hen", "dog dog sat ran", "sat owl" };
    struct tokdocs d;
    fx_docs(&d, texts, 4);
    size_t rows[] = { 0, 1, 2, 3 };
    featurizer *f = fit(POOL_BOW_TFIDF, 1, &d, rows, 3, vs);
    struct fmat X = FMAT_INIT;
    features_transform(f, &d, rows, 4, &X, NULL);
    features_memo *mm = features_memo_new(f);
    for (size_t i = 0; i < 4; i++) {
        const char *toks[8];
        size_t nt = 0;
        for (size_t t = d.off[i]; t < d.off[i + 1]; t++)
            toks[nt++] = vocab_word(d.v, d.tok[t]);
        struct fmat Y = FMAT_INIT;
        features_alloc(f, 1, &Y);
        features_transform_memo(f, mm, toks, NULL, nt, &Y, 0, NULL);
        size_t n = fmat_nnz_row(&X, i);
        cr_assert_eq(fmat_nnz_row(&Y, 0), n);
        cr_assert(memcmp(fmat_row_values(&Y, 0), fmat_row_values(&X, i), n * sizeof(double)) == 0, "row %zu", i);
        cr_assert(memcmp(Y.col, X.col + X.rowptr[i], n * sizeof *Y.col) == 0, "row %zu columns", i);
        fmat_release(&Y);
    }
    features_memo_free(mm);
    fmat_release(&X);
    features_free(f);
    tokdocs_release(&d);
    vecset_close(vs);
}

/* A damaged combined featurizer is refused with the field named. */
Test(features, combined_load_rejects_damaged_fields)
{
    vecset *vs = four_words();
    static const char *const texts[] = { "cat sat", "ran dog", "dog cat" };
    struct tokdocs d;
    fx_docs(&d, texts, 3);
    size_t rows[] = { 0, 1, 2 };
    featurizer *f = fit(POOL_BOW_SIF, 1, &d, rows, 3, vs);
    static const struct {
        const char *block, *key, *json, *says;
    } cases[] = {
        { NULL, "dimensions", "9", "field 'features.dimensions' is 9 but the blocks have" },
        { NULL, "pooled_weight", "0", "field 'features.pooled_weight'" },
        { NULL, "bow_weight", "\"1\"", "field 'features.bow_weight'" },
        { NULL, "bag_of_words", "null", "field 'features.bag_of_words'" },
        { "pooled", "pool", "\"mean\"", "field 'features.pooled.pool' is 'mean', but the route is 'bow+sif'" },
        { "bag_of_words", "pool", "\"tfidf\"", "field 'features.bag_of_words." },
        { "pooled", "scale_sd", "[1, 0, 1]", "field 'features.pooled.scale_sd' entry 1 is not positive" },
    };
    for (size_t k = 0; k < sizeof cases / sizeof cases[0]; k++) {
        cJSON *obj = cJSON_CreateObject();
        features_save(f, obj);
        cJSON *at = cases[k].block ? cJSON_GetObjectItem(obj, cases[k].block) : obj;
        cJSON_ReplaceItemInObjectCaseSensitive(at, cases[k].key, cJSON_Parse(cases[k].json));
        obj = fx_reparse(obj);
        struct err e = ERR_INIT;
        struct jsonv_ctx c = { "m.json", "features", &e };
        cr_assert_null(features_load(&c, obj, vs), "case %zu loaded", k);
        cr_assert(strstr(e.msg, cases[k].says), "case %zu: %s", k, e.msg);
        cJSON_Delete(obj);
    }
    struct err e = ERR_INIT;
    cJSON *obj = cJSON_CreateObject();
    features_save(f, obj);
    struct jsonv_ctx c = { "m.json", "features", &e };
    cr_assert_null(features_load(&c, obj, NULL));
    cr_assert(strstr(e.msg, "'bow+sif' needs a vector set"), "%s", e.msg);
    cJSON_Delete(obj);
    features_free(f);
    tokdocs_release(&d);
    vecset_close(vs);
}
