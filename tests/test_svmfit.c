/* test_svmfit.c -- the libsvm adapter: label order, sign convention,
 * persistence, validation of damaged model fields, training errors.  The
 * comparison with scikit-learn's SVC lives in
 * tests/ext/classifiers_vs_sklearn.py. */
#define _DEFAULT_SOURCE /* glibc's random_r, the reference for svmfit's rand() */
#include <criterion/criterion.h>
#include <limits.h>
#include <math.h>
#include <pthread.h>
#include <stdlib.h>
#include <string.h>

#include "fixtures.h"
#include "vecsift/fmat.h"
#include "vecsift/rng.h"
#include "vecsift/svmfit.h"

/* N rows, D = 4 normal features; label = the largest of three noisy
 * scores, so the classes overlap a little. */
static void problem(size_t n, uint64_t seed, struct fmat *X, int *y)
{
    struct rng r;
    rng_seed(&r, seed);
    fmat_dense(X, n, 4);
    for (size_t i = 0; i < n; i++) {
        for (size_t j = 0; j < 4; j++)
            X->x[i * 4 + j] = rng_normal(&r);
        double s[3] = { X->x[i * 4] + 0.3 * rng_normal(&r), X->x[i * 4 + 1] + 0.3 * rng_normal(&r),
                        -X->x[i * 4] - X->x[i * 4 + 1] + 0.3 * rng_normal(&r) };
        y[i] = s[0] > s[1] ? (s[0] > s[2] ? 0 : 2) : (s[1] > s[2] ? 1 : 2);
    }
}

static svmfit_model *train(const struct fmat *X, const int *y, size_t k, enum svmfit_kernel kern)
{
    struct svmfit_params p = SVMFIT_PARAMS_INIT;
    p.kernel = kern;
    struct err e = ERR_INIT;
    svmfit_model *m = svmfit_train(X, y, k, &p, NULL, &e);
    cr_assert_not_null(m, "%s", e.msg);
    return m;
}

/* Label 1 comes first in the rows, so libsvm's class slots are (1, 0):
 * the adapter must still report probabilities and decision values in our
 * order.  Points below 0 are label 0; a decision value for the pair (0, 1)
 * is positive for label 0 (svmfit.h). */
Test(svmfit, label_order_and_sign_follow_our_labels)
{
    static const double xs[] = { 2, 3, 1.5, 2.5, 4, -2, -3, -1.5, -2.5, -4 };
    int y[10] = { 1, 1, 1, 1, 1, 0, 0, 0, 0, 0 };
    struct fmat X = FMAT_INIT;
    fmat_dense(&X, 10, 1);
    memcpy(X.x, xs, sizeof xs);
    svmfit_model *m = train(&X, y, 2, SVMFIT_LINEAR);
    for (size_t i = 0; i < 10; i++) {
        double dec, p[2];
        svmfit_decision(m, &X, i, &dec);
        svmfit_proba(m, &X, i, p);
        cr_assert(y[i] == 0 ? dec > 0 : dec < 0, "row %zu: decision %g", i, dec);
        cr_assert(p[y[i]] > 0.5, "row %zu: p(own label) = %g", i, p[y[i]]);
        cr_assert_float_eq(p[0] + p[1], 1.0, 1e-12);
    }
    svmfit_free(m);
    fmat_release(&X);
}

Test(svmfit, save_and_load_give_identical_outputs)
{
    struct fmat X = FMAT_INIT;
    int y[60];
    problem(60, 3, &X, y);
    for (int kern = SVMFIT_LINEAR; kern <= SVMFIT_RBF; kern++) {
        svmfit_model *m = train(&X, y, 3, (enum svmfit_kernel)kern);
        cJSON *obj = cJSON_CreateObject();
        svmfit_save(m, obj);
        obj = fx_reparse(obj);
        struct err e = ERR_INIT;
        struct jsonv_ctx c = { "m.json", "classifier", &e };
        svmfit_model *g = svmfit_load(&c, obj, 4, 3);
        cr_assert_not_null(g, "%s", e.msg);
        cr_assert_eq(svmfit_support_vectors(g), svmfit_support_vectors(m));
        cr_assert_eq(svmfit_gamma(g), svmfit_gamma(m));
        for (size_t i = 0; i < 60; i++) {
            double p1[3], p2[3], d1[3], d2[3];
            svmfit_proba(m, &X, i, p1);
            svmfit_proba(g, &X, i, p2);
            svmfit_decision(m, &X, i, d1);
            svmfit_decision(g, &X, i, d2);
            cr_assert(memcmp(p1, p2, sizeof p1) == 0, "kernel %d row %zu: probabilities differ", kern, i);
            cr_assert(memcmp(d1, d2, sizeof d1) == 0, "kernel %d row %zu: decision values differ", kern, i);
        }
        svmfit_free(m);
        svmfit_free(g);
        cJSON_Delete(obj);
    }
    fmat_release(&X);
}

/* Replace field 'key' of a saved model by 'json' (or, when 'sv' is set, the
 * first support vector's "at" array) and expect load to fail saying 'says'. */
static void expect_rejected(const svmfit_model *m, const char *key, const char *json, int sv, const char *says)
{
    cJSON *obj = cJSON_CreateObject();
    svmfit_save(m, obj);
    if (sv) {
        cJSON *first = cJSON_GetArrayItem(cJSON_GetObjectItem(obj, "support_vectors"), 0);
        cJSON_ReplaceItemInObjectCaseSensitive(first, key, cJSON_Parse(json));
    } else {
        cJSON_ReplaceItemInObjectCaseSensitive(obj, key, cJSON_Parse(json));
    }
    obj = fx_reparse(obj);
    struct err e = ERR_INIT;
    struct jsonv_ctx c = { "m.json", "classifier", &e };
    svmfit_model *g = svmfit_load(&c, obj, 4, 3);
    cr_assert_null(g, "%s = %s was accepted", key, json);
    cr_assert(strstr(e.msg, says), "%s = %s: %s", key, json, e.msg);
    cr_assert(strncmp(e.msg, "m.json", 6) == 0, "no file name: %s", e.msg);
    cJSON_Delete(obj);
}

Test(svmfit, load_rejects_damaged_fields)
{
    struct fmat X = FMAT_INIT;
    int y[60];
    problem(60, 3, &X, y);
    svmfit_model *m = train(&X, y, 3, SVMFIT_RBF);
    expect_rejected(m, "gamma", "-0.5", 0, "field 'classifier.gamma' is -0.5, outside");
    expect_rejected(m, "gamma", "\"wide\"", 0, "field 'classifier.gamma' is not a number");
    expect_rejected(m, "kernel", "\"poly\"", 0, "field 'classifier.kernel' is 'poly'");
    expect_rejected(m, "rho", "[0.1, 0.2]", 0, "field 'classifier.rho' has 2 entries, expected 3");
    expect_rejected(m, "platt_a", "[0.1, 0.2, 1e999]", 0, "field 'classifier.platt_a' entry 2 is not a finite number");
    expect_rejected(m, "dual_coef", "[1, 2, 3]", 0, "field 'classifier.dual_coef' has 3 entries");
    expect_rejected(m, "slot_label", "[0, 0, 1]", 0, "field 'classifier.slot_label' repeats a label");
    expect_rejected(m, "slot_label", "[0, 1, 3]", 0, "field 'classifier.slot_label' entry 2 is not a whole number in [0, 2]");
    expect_rejected(m, "slot_label", "[0, 0.5, 2]", 0, "entry 1 is not a whole number");
    expect_rejected(m, "slot_support", "[1, 1, 1]", 0, "field 'classifier.support_vectors' must be an array of 3 vectors");
    expect_rejected(m, "slot_support", "[-1, 1, 1]", 0, "field 'classifier.slot_support' entry 0 is not a whole number");
    expect_rejected(m, "support_vectors", "{}", 0, "field 'classifier.support_vectors' must be an array");
    expect_rejected(m, "at", "[2, 1, 0, 3]", 1, "has a feature index out of order or outside [0, 4)");
    expect_rejected(m, "at", "[0, 1, 2, 4]", 1, "has a feature index out of order or outside [0, 4)");
    expect_rejected(m, "at", "[0, 0, 1, 2]", 1, "has a feature index out of order");
    expect_rejected(m, "at", "[0, 1]", 1, "field 'classifier.support_vectors[].value' has 4 entries, expected 2");
    expect_rejected(m, "at", "7", 1, "has an entry without an 'at' array");
    svmfit_free(m);
    fmat_release(&X);
}

Test(svmfit, training_errors_and_tiny_labels)
{
    struct fmat X = FMAT_INIT;
    int y[60];
    problem(60, 5, &X, y);
    struct svmfit_params p = SVMFIT_PARAMS_INIT;
    struct err e = ERR_INIT;
    cr_assert_null(svmfit_train(&X, y, 1, &p, NULL, &e));
    cr_assert(strstr(e.msg, "at least two labels"), "%s", e.msg);
    err_clear(&e);
    cr_assert_null(svmfit_train(&X, y, 4, &p, NULL, &e)); /* label 3 has no row */
    cr_assert(strstr(e.msg, "label 3 has no training rows"), "%s", e.msg);
    err_clear(&e);
    p.C = -1;
    cr_assert_null(svmfit_train(&X, y, 3, &p, NULL, &e));
    cr_assert(strstr(e.msg, "SVM settings rejected"), "%s", e.msg);
    p.C = 1;
    /* two rows of label 2 only: flagged as tiny */
    int yt[60];
    size_t seen2 = 0;
    for (size_t i = 0; i < 60; i++)
        yt[i] = y[i] == 2 && seen2++ >= 2 ? (int)(i % 2) : y[i];
    int tiny = 0;
    svmfit_model *m = svmfit_train(&X, yt, 3, &p, &tiny, &e);
    cr_assert_not_null(m, "%s", e.msg);
    cr_assert_eq(tiny, 1);
    svmfit_free(m);
    m = svmfit_train(&X, y, 3, &p, &tiny, &e);
    cr_assert_not_null(m, "%s", e.msg);
    cr_assert_eq(tiny, 0);
    svmfit_free(m);
    fmat_release(&X);
}

/* Same seed, same probabilities: libsvm's Platt step draws from rand(),
 * which svmfit seeds. */
Test(svmfit, same_seed_same_probabilities)
{
    struct fmat X = FMAT_INIT;
    int y[60];
    problem(60, 9, &X, y);
    svmfit_model *a = train(&X, y, 3, SVMFIT_RBF), *b = train(&X, y, 3, SVMFIT_RBF);
    for (size_t i = 0; i < 60; i++) {
        double p1[3], p2[3];
        svmfit_proba(a, &X, i, p1);
        svmfit_proba(b, &X, i, p2);
        cr_assert(memcmp(p1, p2, sizeof p1) == 0, "row %zu", i);
    }
    svmfit_free(a);
    svmfit_free(b);
    fmat_release(&X);
}

/* ---- svmfit's per-thread rand() (svmfit.c explains the mechanism) ---- */

/* The sequence equals glibc's: srandom_r/random_r on a 128-byte state
 * (TYPE_3, the state rand() uses; glibc stdlib/random_r.c), for seeds that
 * cover 0 (taken as 1), small, large and above INT_MAX. */
Test(svmfit, rand_repeats_glibc_random_r)
{
    static const unsigned seeds[] = { 0, 1, 2, 42, 123456789u, 0x80000005u, UINT_MAX };
    for (size_t s = 0; s < sizeof seeds / sizeof seeds[0]; s++) {
        struct random_data rd;
        char st[128];
        memset(&rd, 0, sizeof rd);
        memset(st, 0, sizeof st);
        cr_assert_eq(initstate_r(seeds[s], st, sizeof st, &rd), 0);
        srand(seeds[s]);
        uint64_t d0 = svmfit_rand_draws();
        for (int i = 0; i < 2000; i++) {
            int32_t want;
            random_r(&rd, &want);
            int got = rand();
            cr_assert_eq(got, want, "seed %u, draw %d: %d, glibc %d", seeds[s], i, got, (int)want);
        }
        cr_assert_eq(svmfit_rand_draws() - d0, 2000);
    }
}

/* libsvm really calls svmfit's rand(): its probability estimate
 * (svm_binary_svc_probability in libsvm 3.24's svm.cpp) shuffles each pair
 * of classes' rows with one rand() per row, so a fit on N rows and K labels
 * (every pair of labels once) draws (K - 1) * N times.  Had the call gone to
 * the C library, the count would not move. */
Test(svmfit, libsvm_draws_from_our_rand)
{
    struct fmat X = FMAT_INIT;
    int y[60];
    problem(60, 4, &X, y);
    uint64_t before = svmfit_rand_draws();
    svmfit_model *m = train(&X, y, 3, SVMFIT_RBF);
    cr_assert_eq(svmfit_rand_draws() - before, 2 * 60, "libsvm drew %llu times",
                 (unsigned long long)(svmfit_rand_draws() - before));
    svmfit_free(m);
    fmat_release(&X);
}

/* A thread's srand() leaves other threads' sequences alone.  Thread A seeds,
 * then thread B seeds, then both draw: with one process-wide state A would
 * get B's sequence, so this fails for certain without per-thread state. */
struct seeded {
    pthread_barrier_t *bar;
    unsigned seed;
    int order;          /* 0 seeds first, 1 second */
    int got[50];
};

static void *seed_then_draw(void *arg)
{
    struct seeded *s = arg;
    if (s->order == 0)
        srand(s->seed);
    pthread_barrier_wait(s->bar);
    if (s->order == 1)
        srand(s->seed);
    pthread_barrier_wait(s->bar);
    for (int i = 0; i < 50; i++)
        s->got[i] = rand();
    return NULL;
}

Test(svmfit, srand_on_one_thread_leaves_others_alone)
{
    pthread_barrier_t bar;
    pthread_barrier_init(&bar, NULL, 2);
    struct seeded a = { &bar, 7, 0, { 0 } }, b = { &bar, 8, 1, { 0 } };
    pthread_t ta, tb;
    pthread_create(&ta, NULL, seed_then_draw, &a);
    pthread_create(&tb, NULL, seed_then_draw, &b);
    pthread_join(ta, NULL);
    pthread_join(tb, NULL);
    pthread_barrier_destroy(&bar);
    struct seeded *both[2] = { &a, &b };
    for (int t = 0; t < 2; t++) {
        srand(both[t]->seed);
        for (int i = 0; i < 50; i++)
            cr_assert_eq(both[t]->got[i], rand(), "thread seeded %u, draw %d", both[t]->seed, i);
    }
}

/* Fits with probability on four threads at once give bit-identical models
 * (every saved field, numbers printed exactly) to the same fits one after
 * another.  The seeds differ per fit and a different seed gives a different
 * model, so interleaved draws would show. */
#define NFIT 4

struct fitjob {
    pthread_barrier_t *bar;
    const struct fmat *X;
    const int *y;
    uint64_t seed;
    char *json;
};

static char *fit_json(const struct fmat *X, const int *y, uint64_t seed)
{
    struct svmfit_params p = SVMFIT_PARAMS_INIT;
    p.seed = seed;
    struct err e = ERR_INIT;
    svmfit_model *m = svmfit_train(X, y, 3, &p, NULL, &e);
    if (!m)
        return NULL;
    cJSON *obj = cJSON_CreateObject();
    svmfit_save(m, obj);
    char *s = cJSON_PrintUnformatted(obj);
    cJSON_Delete(obj);
    svmfit_free(m);
    return s;
}

static void *fit_thread(void *arg)
{
    struct fitjob *j = arg;
    pthread_barrier_wait(j->bar);
    j->json = fit_json(j->X, j->y, j->seed);
    return NULL;
}

Test(svmfit, concurrent_fits_equal_sequential_fits)
{
    struct fmat X[NFIT];
    int y[NFIT][80];
    char *seq[NFIT];
    for (int t = 0; t < NFIT; t++) {
        X[t] = (struct fmat)FMAT_INIT;
        problem(80, 20 + (uint64_t)t, &X[t], y[t]);
        seq[t] = fit_json(&X[t], y[t], 100 + (uint64_t)t);
        cr_assert_not_null(seq[t]);
    }
    char *other = fit_json(&X[0], y[0], 999);
    cr_assert(strcmp(other, seq[0]) != 0, "the seed should change the probability estimate");
    cJSON_free(other);
    pthread_barrier_t bar;
    pthread_barrier_init(&bar, NULL, NFIT);
    for (int round = 0; round < 3; round++) {
        struct fitjob jobs[NFIT];
        pthread_t th[NFIT];
        for (int t = 0; t < NFIT; t++) {
            jobs[t] = (struct fitjob){ &bar, &X[t], y[t], 100 + (uint64_t)t, NULL };
            pthread_create(&th[t], NULL, fit_thread, &jobs[t]);
        }
        for (int t = 0; t < NFIT; t++) {
            pthread_join(th[t], NULL);
            cr_assert_not_null(jobs[t].json);
            cr_assert_str_eq(jobs[t].json, seq[t], "round %d, fit %d differs from the sequential fit", round, t);
            cJSON_free(jobs[t].json);
        }
    }
    pthread_barrier_destroy(&bar);
    for (int t = 0; t < NFIT; t++) {
        cJSON_free(seq[t]);
        fmat_release(&X[t]);
    }
}

/* ---- training on a precomputed kernel matrix (svmfit.c) ---- */

static cJSON *fit_obj(const struct fmat *X, const int *y, enum svmfit_kernel kern, int nodes_only)
{
    struct svmfit_params p = SVMFIT_PARAMS_INIT;
    p.kernel = kern;
    p.nodes_only = nodes_only;
    struct err e = ERR_INIT;
    svmfit_model *m = svmfit_train(X, y, 3, &p, NULL, &e);
    cr_assert_not_null(m, "%s", e.msg);
    cJSON *obj = cJSON_CreateObject();
    svmfit_save(m, obj);
    svmfit_free(m);
    return obj;
}

static void expect_same_field(const cJSON *a, const cJSON *b, const char *key, const char *what)
{
    char *sa = cJSON_PrintUnformatted(cJSON_GetObjectItemCaseSensitive(a, key));
    char *sb = cJSON_PrintUnformatted(cJSON_GetObjectItemCaseSensitive(b, key));
    cr_assert_str_eq(sa, sb, "%s: field %s differs", what, key);
    cJSON_free(sa);
    cJSON_free(sb);
}

/* The matrix holds libsvm's own kernel values, so the trained model (support
 * vectors, dual coefficients, rho) is bit for bit what libsvm makes from the
 * nodes; Platt's A and B too for the linear kernel.  For RBF, libsvm's
 * held-out predictions inside the probability estimate use its other form
 * of the kernel, exp(-gamma |x - y|^2), which rounds differently: A and B
 * agree to 1e-12 relative (svmfit.c).  Dense rows, sparse rows (some
 * zero, some columns absent), and dense rows mixed with rows holding zeros
 * (the matrix takes two routes to a dot product there). */
Test(svmfit, precomputed_kernel_gives_libsvms_model)
{
    struct fmat D = FMAT_INIT, S = FMAT_INIT;
    int y[90];
    problem(90, 31, &D, y);
    fmat_sparse(&S, 12);
    for (size_t i = 0; i < 90; i++) { /* the dense row spread over 12 columns, every third left out */
        uint32_t cols[4];
        double vals[4];
        size_t nz = 0;
        for (size_t j = 0; j < 4; j++)
            if ((i + j) % 3 != 0) {
                cols[nz] = (uint32_t)(3 * j + i % 3);
                vals[nz++] = D.x[i * 4 + j];
            }
        fmat_push_row(&S, cols, vals, nz);
    }
    /* Mixed: dense rows, every seventh with a zero feature, one all zero. */
    struct fmat M = FMAT_INIT;
    fmat_dense(&M, 90, 4);
    memcpy(M.x, D.x, 90 * 4 * sizeof *M.x);
    for (size_t i = 0; i < 90; i += 7)
        M.x[i * 4 + i % 4] = 0;
    memset(M.x + 40 * 4, 0, 4 * sizeof *M.x);
    const struct fmat *mats[3] = { &D, &S, &M };
    static const char *const names[3] = { "dense", "sparse", "mixed" };
    static const char *const exact[] = { "gamma", "slot_label", "slot_support", "rho", "dual_coef", "support_vectors" };
    for (int mi = 0; mi < 3; mi++)
        for (int kern = SVMFIT_LINEAR; kern <= SVMFIT_RBF; kern++) {
            char what[64];
            snprintf(what, sizeof what, "%s rows, %s kernel", names[mi], kern ? "rbf" : "linear");
            cJSON *a = fit_obj(mats[mi], y, (enum svmfit_kernel)kern, 1);
            cJSON *b = fit_obj(mats[mi], y, (enum svmfit_kernel)kern, 0);
            for (size_t f = 0; f < sizeof exact / sizeof exact[0]; f++)
                expect_same_field(a, b, exact[f], what);
            static const char *const platt[] = { "platt_a", "platt_b" };
            for (int q = 0; q < 2; q++) {
                const cJSON *pa = cJSON_GetObjectItemCaseSensitive(a, platt[q]);
                const cJSON *pb = cJSON_GetObjectItemCaseSensitive(b, platt[q]);
                cr_assert_eq(cJSON_GetArraySize(pa), 3);
                if (kern == SVMFIT_LINEAR)
                    expect_same_field(a, b, platt[q], what);
                for (int t = 0; t < 3; t++) {
                    double u = cJSON_GetArrayItem(pa, t)->valuedouble, v = cJSON_GetArrayItem(pb, t)->valuedouble;
                    cr_assert(fabs(u - v) <= 1e-12 * fabs(u), "%s: %s[%d] %.17g vs %.17g", what, platt[q], t, u, v);
                }
            }
            cJSON_Delete(a);
            cJSON_Delete(b);
        }
    fmat_release(&D);
    fmat_release(&S);
    fmat_release(&M);
}

/* ---- prediction on kernel values computed densely (svmfit.c) ---- */

/* Query rows for the prediction checks, dense (D columns): normal values
 * with some entries exactly 0 or -0, an all-zero row, rows scaled far out
 * (RBF values underflow to 0) and far in (squares below the normal range),
 * and the training rows themselves (K(x, x) = exp(0) = 1 for a support
 * vector). */
static void query_rows(const struct fmat *train, size_t n, uint64_t seed, struct fmat *Q)
{
    size_t d = train->d;
    struct rng r;
    rng_seed(&r, seed);
    fmat_dense(Q, n + train->n, d);
    for (size_t i = 0; i < n; i++) {
        double scale = i % 17 == 5 ? 1e3 : i % 17 == 9 ? 1e-160 : 1.0;
        for (size_t j = 0; j < d; j++) {
            double u = rng_uniform(&r);
            Q->x[i * d + j] = u < 0.15 ? 0.0 : u < 0.2 ? -0.0 : scale * rng_normal(&r);
        }
        if (i == 3)
            memset(Q->x + i * d, 0, d * sizeof *Q->x);
    }
    for (size_t i = 0; i < train->n; i++)
        for (size_t j = 0; j < d; j++) {
            double v = 0;
            if (train->sparse) {
                for (size_t t = train->rowptr[i]; t < train->rowptr[i + 1]; t++)
                    if (train->col[t] == j)
                        v = train->val[t];
            } else {
                v = train->x[i * d + j];
            }
            Q->x[(n + i) * d + j] = v;
        }
}

/* The same rows stored sparsely, explicit zeros kept where the dense row
 * has 0 or -0 in an odd column. */
static void as_sparse(const struct fmat *Q, struct fmat *S)
{
    uint32_t *cols = calloc(Q->d, sizeof *cols);
    double *vals = calloc(Q->d, sizeof *vals);
    fmat_sparse(S, Q->d);
    for (size_t i = 0; i < Q->n; i++) {
        size_t nz = 0;
        for (size_t j = 0; j < Q->d; j++) {
            double v = Q->x[i * Q->d + j];
            if (v != 0.0 || j % 2 == 1) {
                cols[nz] = (uint32_t)j;
                vals[nz++] = v;
            }
        }
        fmat_push_row(S, cols, vals, nz);
    }
    free(cols);
    free(vals);
}

/* Every row of Q (dense and sparse copies): probabilities and decision
 * values through the dense kernel equal those from libsvm's own kernel
 * evaluation over the nodes, byte for byte.  The reference is libsvm 3.24
 * itself (Debian's libsvm3): svmfit_predict_on_nodes(m, 1) hands it the
 * feature nodes as before this path existed. */
static void expect_paths_agree(svmfit_model *m, const struct fmat *Q, const char *what)
{
    struct fmat S = FMAT_INIT;
    as_sparse(Q, &S);
    size_t k = svmfit_labels(m), np = k * (k - 1) / 2;
    double p1[8], p2[8], d1[28], d2[28];
    cr_assert(k <= 8);
    const struct fmat *both[2] = { Q, &S };
    for (int s = 0; s < 2; s++)
        for (size_t i = 0; i < Q->n; i++) {
            cr_assert_eq(svmfit_predict_on_nodes(m, 1), 0);
            svmfit_proba(m, both[s], i, p1);
            svmfit_decision(m, both[s], i, d1);
            cr_assert_eq(svmfit_predict_on_nodes(m, 0), 1, "%s: the dense path is off", what);
            svmfit_proba(m, both[s], i, p2);
            svmfit_decision(m, both[s], i, d2);
            cr_assert(memcmp(p1, p2, k * sizeof *p1) == 0, "%s, %s row %zu: probabilities differ (%.17g vs %.17g)",
                      what, s ? "sparse" : "dense", i, p1[0], p2[0]);
            cr_assert(memcmp(d1, d2, np * sizeof *d1) == 0, "%s, %s row %zu: decision values differ (%.17g vs %.17g)",
                      what, s ? "sparse" : "dense", i, d1[0], d2[0]);
        }
    fmat_release(&S);
}

Test(svmfit, dense_kernel_predicts_libsvms_bits)
{
    /* Several widths, so whole groups of sixteen support vectors, lone
     * blocks of four and a part-filled last block all occur, and both
     * kernels; a model trained on the nodes and one read back from JSON. */
    static const size_t widths[] = { 4, 7, 33 };
    for (size_t w = 0; w < 3; w++) {
        size_t d = widths[w], n = 70 + 23 * w;
        struct fmat X = FMAT_INIT, Q = FMAT_INIT;
        int y[200];
        struct rng r;
        rng_seed(&r, 40 + w);
        fmat_dense(&X, n, d);
        for (size_t i = 0; i < n; i++) {
            for (size_t j = 0; j < d; j++)
                X.x[i * d + j] = rng_normal(&r);
            double s0 = X.x[i * d] + 0.5 * rng_normal(&r), s1 = X.x[i * d + 1] + 0.5 * rng_normal(&r);
            y[i] = s0 > s1 ? (s0 > 0.3 ? 0 : 3) : (s1 > -0.2 ? 1 : 2);
        }
        query_rows(&X, 60, 7 + w, &Q);
        for (int kern = SVMFIT_LINEAR; kern <= SVMFIT_RBF; kern++)
            for (int nodes = 0; nodes < 2; nodes++) {
                struct svmfit_params p = SVMFIT_PARAMS_INIT;
                p.kernel = (enum svmfit_kernel)kern;
                p.nodes_only = nodes;
                p.seed = 5 + w;
                struct err e = ERR_INIT;
                svmfit_model *m = svmfit_train(&X, y, 4, &p, NULL, &e);
                cr_assert_not_null(m, "%s", e.msg);
                char what[96];
                snprintf(what, sizeof what, "D = %zu, %s kernel, %zu SVs%s", d, kern ? "rbf" : "linear",
                         svmfit_support_vectors(m), nodes ? ", trained on nodes" : "");
                expect_paths_agree(m, &Q, what);
                cJSON *obj = cJSON_CreateObject();
                svmfit_save(m, obj);
                obj = fx_reparse(obj);
                struct jsonv_ctx c = { "m.json", "classifier", &e };
                svmfit_model *g = svmfit_load(&c, obj, d, 4);
                cr_assert_not_null(g, "%s", e.msg);
                strcat(what, ", loaded");
                expect_paths_agree(g, &Q, what);
                svmfit_free(g);
                svmfit_free(m);
                cJSON_Delete(obj);
            }
        fmat_release(&X);
        fmat_release(&Q);
    }
}

/* Where the dense path would change the result or cost more, it is not
 * taken: a linear-kernel row holding inf (inf * 0 is NaN, libsvm skips the
 * absent index) goes to libsvm's node walk and gives its bits; support
 * vectors mostly zero over a wide feature space (bag of words) keep the
 * node walk for every row. */
Test(svmfit, dense_kernel_steps_aside)
{
    struct fmat X = FMAT_INIT, X5 = FMAT_INIT, Q = FMAT_INIT;
    int y[60];
    problem(60, 12, &X, y);
    fmat_dense(&X5, 60, 5); /* X with a fifth feature that is always 0 */
    for (size_t i = 0; i < 60; i++)
        memcpy(X5.x + i * 5, X.x + i * 4, 4 * sizeof *X.x);
    svmfit_model *m = train(&X5, y, 3, SVMFIT_LINEAR);
    query_rows(&X5, 4, 3, &Q);
    Q.x[4] = INFINITY;
    Q.x[5 + 4] = -INFINITY;
    Q.x[10 + 4] = NAN;
    expect_paths_agree(m, &Q, "linear kernel, rows with inf");
    for (size_t i = 0; i < 3; i++) {
        double dec[3];
        svmfit_decision(m, &Q, i, dec);
        for (size_t t = 0; t < 3; t++) /* no support vector has feature 4: libsvm never reads it */
            cr_assert(isfinite(dec[t]), "row %zu: decision value %zu is %g", i, t, dec[t]);
    }
    svmfit_free(m);
    fmat_release(&Q);
    fmat_release(&X5);

    /* 60 rows, 200 columns, 3 non-zeros per row. */
    struct fmat W = FMAT_INIT;
    fmat_sparse(&W, 200);
    for (size_t i = 0; i < 60; i++) {
        uint32_t cols[3] = { (uint32_t)(i % 50), (uint32_t)(60 + i), (uint32_t)(150 + y[i]) };
        double vals[3] = { X.x[i * 4], X.x[i * 4 + 1], 1.0 };
        fmat_push_row(&W, cols, vals, 3);
    }
    m = train(&W, y, 3, SVMFIT_RBF);
    cr_assert_eq(svmfit_predict_on_nodes(m, 0), 0, "sparse wide support vectors should keep the node walk");
    svmfit_free(m);
    fmat_release(&W);
    fmat_release(&X);
}
