/* test_vecsift.c -- the installed library's public surface (vecsift.h):
 * open a saved model, route texts, read the results; errors come back as
 * the documented statuses with the file named; one model serves many
 * threads at once with the same answers.  The numbers must be route.h's
 * (which test_route.c ties to the pipeline); the behaviour expected is the
 * header's own. */
#include <criterion/criterion.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "fixtures.h"
#include "vecsift/model.h"
#include "vecsift/pipeline.h"
#include "vecsift/route.h"
#include "vecsift/vecsift.h"

static const char *const NEW[] = { "Cat, sat!", "DOG ran ran.", "hen owl owl cat", "zebra yak", "owl dog sat hen" };
enum { N = FX_N, K = FX_K, M = 5 };

static char model_path[128];

/* A tfidf + logreg model saved with a stored cut-off of 0.45. */
static void setup(void)
{
    const char *dir = fx_tmpdir();
    vecset *vs = fx_vectors(dir, "v.vecs", fx_words, fx_vecs, FX_NWORDS, FX_DIM);
    char vec_path[128];
    snprintf(vec_path, sizeof vec_path, "%s/v.vecs", dir);
    snprintf(model_path, sizeof model_path, "%s/m.json", dir);
    struct tokdocs d;
    fx_docs(&d, fx_texts, N);
    struct pipeline_spec s = PIPELINE_SPEC_INIT;
    size_t rows[N];
    for (size_t i = 0; i < N; i++)
        rows[i] = i;
    struct err e = ERR_INIT;
    pipeline *p = pipeline_fit(&s, &d, fx_y, K, rows, N, vs, NULL, &e);
    cr_assert_not_null(p, "%s", e.msg);
    tokdocs_release(&d);
    struct model m;
    fx_model(&m, p, K, vs, vec_path, fx_y, N, 0.45);
    cr_assert_eq(model_save(&m, model_path, &e), 0, "%s", e.msg);
    model_release(&m);
    vecset_close(vs);
}

TestSuite(vecsift, .init = setup);

Test(vecsift, version_of_header_and_library_agree)
{
    char want[32];
    snprintf(want, sizeof want, "%d.%d.%d", VECSIFT_VERSION_MAJOR, VECSIFT_VERSION_MINOR, VECSIFT_VERSION_PATCH);
    cr_assert_str_eq(VECSIFT_VERSION_STRING, want);
    cr_assert_str_eq(vecsift_version(), want);
}

Test(vecsift, routes_as_the_prediction_path_does)
{
    vecsift_error err;
    vecsift_model *vm = vecsift_open(model_path, NULL, &err);
    cr_assert_not_null(vm, "%s", err.message);
    cr_assert_eq(err.status, VECSIFT_OK);
    cr_assert_eq(vecsift_labels(vm), K);
    cr_assert_str_eq(vecsift_label(vm, 2), "gamma");
    cr_assert_null(vecsift_label(vm, 3));
    cr_assert(vecsift_cutoff(vm) == 0.45);
    /* the reference: route.h over the same model file */
    struct model m;
    vecset *vs;
    struct err e = ERR_INIT;
    cr_assert_eq(model_load(&m, model_path, NULL, &vs, &e), 0, "%s", e.msg);
    struct route_params rp = { 0.45, 2 };
    route_worker *w = route_worker_new(&m, &rp);
    for (size_t i = 0; i < M; i++) {
        double P[K];
        struct route_result want = ROUTE_RESULT_INIT;
        cr_assert_eq(route_text(w, &NEW[i], 1, P, &want, NULL, 0, &e), 0);
        vecsift_result *r = vecsift_route(vm, NEW[i], 2, &err);
        cr_assert_not_null(r, "%s", err.message);
        cr_assert_str_eq(vecsift_result_label(r), m.labels[want.label]);
        cr_assert(vecsift_result_confidence(r) == want.confidence);
        cr_assert_eq(vecsift_result_review(r), want.review);
        cr_assert_str_eq(vecsift_result_route(r), want.review ? "review" : m.labels[want.label]);
        for (size_t k = 0; k < K; k++)
            cr_assert(vecsift_result_probability(r, k) == P[k]);
        cr_assert(vecsift_result_probability(r, K) == 0);
        cr_assert_eq(vecsift_result_words(r), want.nwords);
        for (size_t q = 0; q < want.nwords; q++) {
            double push;
            cr_assert_str_eq(vecsift_result_word(r, q, &push), want.words[q]);
            cr_assert(push == want.push[q]);
        }
        cr_assert_null(vecsift_result_word(r, want.nwords, NULL));
        route_result_release(&want);
        vecsift_result_free(r);
    }
    /* "zebra yak": no known word, so a person decides */
    vecsift_result *r = vecsift_route(vm, NEW[3], 0, &err);
    cr_assert_str_eq(vecsift_result_route(r), "review");
    vecsift_result_free(r);
    route_worker_free(w);
    model_release(&m);
    vecset_close(vs);
    vecsift_close(vm);
}

Test(vecsift, cutoff_decides_the_route)
{
    vecsift_error err;
    vecsift_model *vm = vecsift_open(model_path, NULL, &err);
    cr_assert_not_null(vm, "%s", err.message);
    cr_assert_eq(vecsift_set_cutoff(vm, 0, &err), 0);
    vecsift_result *r = vecsift_route(vm, NEW[0], 0, &err);
    cr_assert_eq(vecsift_result_review(r), 0);
    cr_assert_str_eq(vecsift_result_route(r), vecsift_result_label(r));
    double c = vecsift_result_confidence(r);
    vecsift_result_free(r);
    cr_assert_lt(c, 1.0);
    cr_assert_eq(vecsift_set_cutoff(vm, 1.0, &err), 0);
    r = vecsift_route(vm, NEW[0], 0, &err);
    cr_assert_str_eq(vecsift_result_route(r), "review");
    vecsift_result_free(r);
    cr_assert_eq(vecsift_set_cutoff(vm, 1.5, &err), -1);
    cr_assert_eq(err.status, VECSIFT_EINPUT);
    cr_assert(strstr(err.message, "[0, 1]") != NULL, "%s", err.message);
    cr_assert(vecsift_cutoff(vm) == 1.0);
    vecsift_close(vm);
}

Test(vecsift, errors_name_the_file_or_the_problem)
{
    vecsift_error err;
    char missing[160];
    snprintf(missing, sizeof missing, "%s.gone", model_path);
    cr_assert_null(vecsift_open(missing, NULL, &err));
    cr_assert_neq(err.status, VECSIFT_OK);
    cr_assert(strstr(err.message, missing) != NULL, "%s", err.message);
    cr_assert_null(vecsift_open(NULL, NULL, NULL)); /* no error struct: still no crash */
    vecsift_model *vm = vecsift_open(model_path, NULL, &err);
    cr_assert_not_null(vm, "%s", err.message);
    cr_assert_null(vecsift_route(vm, "caf\xe9 dog", 0, &err));
    cr_assert_eq(err.status, VECSIFT_EINPUT);
    cr_assert(strstr(err.message, "invalid UTF-8 at byte 3") != NULL, "%s", err.message);
    cr_assert_null(vecsift_route(vm, NULL, 0, &err));
    cr_assert_eq(err.status, VECSIFT_EINPUT);
    /* the model still routes after an error */
    vecsift_result *r = vecsift_route(vm, NEW[1], 1, &err);
    cr_assert_not_null(r);
    vecsift_result_free(r);
    vecsift_result_free(NULL);
    vecsift_close(vm);
    vecsift_close(NULL);
}

struct many {
    vecsift_model *vm;
    double conf[400];
    size_t words[400];
};

static void *route_many(void *arg)
{
    struct many *a = arg;
    vecsift_error err;
    for (size_t i = 0; i < 400; i++) {
        vecsift_result *r = vecsift_route(a->vm, NEW[i % M], 1 + i % 3, &err);
        a->conf[i] = r ? vecsift_result_confidence(r) : -1;
        a->words[i] = r ? vecsift_result_words(r) : 99;
        vecsift_result_free(r);
    }
    return NULL;
}

Test(vecsift, one_model_serves_many_threads)
{
    vecsift_error err;
    vecsift_model *vm = vecsift_open(model_path, NULL, &err);
    cr_assert_not_null(vm, "%s", err.message);
    static struct many one, par[4];
    one.vm = vm;
    route_many(&one);
    pthread_t tid[4];
    for (int t = 0; t < 4; t++) {
        par[t].vm = vm;
        cr_assert_eq(pthread_create(&tid[t], NULL, route_many, &par[t]), 0);
    }
    for (int t = 0; t < 4; t++)
        pthread_join(tid[t], NULL);
    for (int t = 0; t < 4; t++)
        for (size_t i = 0; i < 400; i++) {
            cr_assert(par[t].conf[i] == one.conf[i], "thread %d, text %zu", t, i);
            cr_assert_eq(par[t].words[i], one.words[i]);
        }
    vecsift_close(vm);
}
