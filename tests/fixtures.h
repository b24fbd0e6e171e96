/* fixtures.h -- small builders shared by the unit tests of features,
 * pipeline, svmfit and model: a temporary directory, a packed vector set
 * made from numbers in the test, documents from space-separated strings, and
 * a JSON round trip through text.  Header-only and test-only: every
 * function is static inline so a test file that skips one does not warn. */
#ifndef VECSIFT_TESTS_FIXTURES_H
#define VECSIFT_TESTS_FIXTURES_H

#include <cjson/cJSON.h>
#include <criterion/criterion.h>
#include <dirent.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "vecsift/err.h"
#include "vecsift/jsonv.h"
#include "vecsift/model.h"
#include "vecsift/vecset.h"
#include "vecsift/vocab.h"

static char fx_dir[64];

/* A small labelled set (invented) shared by the pipeline, route and
 * library tests: six words with 3-d vectors, eleven texts over them (one
 * with a word that has no vector) and their labels in [0, 3). */
enum { FX_NWORDS = 6, FX_DIM = 3, FX_N = 11, FX_K = 3 };
static const char *const fx_words[FX_NWORDS] = { "cat", "sat", "ran", "dog", "hen", "owl" };
static const float fx_vecs[FX_NWORDS * FX_DIM] = { 1, 0, 2, 3, 0, 4, 5, 1, 0, 10, 1, 1, -2, 3, 1, 0.5f, -1, 2 };
static const char *const fx_texts[FX_N] = { "cat sat sat", "sat cat cat owl", "ran dog",   "dog dog ran hen",
                                            "hen cat owl", "hen hen sat",     "owl owl",   "cat dog",
                                            "ran ran sat", "hen fox",         "dog owl cat" };
static const int fx_y[FX_N] = { 0, 0, 1, 1, 2, 2, 2, 0, 1, 2, 1 };

/* Remove fx_dir and the files in it (the tests make no subdirectories). */
static inline void fx_cleanup(void)
{
    DIR *d = opendir(fx_dir);
    if (!d)
        return;
    char path[512];
    for (struct dirent *de; (de = readdir(d));) {
        if (strcmp(de->d_name, ".") == 0 || strcmp(de->d_name, "..") == 0)
            continue;
        snprintf(path, sizeof path, "%s/%s", fx_dir, de->d_name);
        unlink(path);
    }
    closedir(d);
    rmdir(fx_dir);
}

/* A fresh directory under /tmp, removed when the test process exits;
 * Criterion runs each test in its own process, so one is enough. */
static inline const char *fx_tmpdir(void)
{
    strcpy(fx_dir, "/tmp/vecsift-test-XXXXXX");
    cr_assert_not_null(mkdtemp(fx_dir));
    atexit(fx_cleanup);
    return fx_dir;
}

/* dir/name holding n words with rows (n x dim), opened. */
static inline vecset *fx_vectors(const char *dir, const char *name, const char *const *words, const float *rows,
                                 size_t n, size_t dim)
{
    char path[256];
    snprintf(path, sizeof path, "%s/%s", dir, name);
    struct err e = ERR_INIT;
    cr_assert_eq(vecset_write(path, words, rows, n, dim, &e), 0, "%s", e.msg);
    vecset *v = vecset_open(path, &e);
    cr_assert_not_null(v, "%s", e.msg);
    return v;
}

/* Documents from strings of space-separated tokens ("" has none). */
static inline void fx_docs(struct tokdocs *d, const char *const *texts, size_t n)
{
    memset(d, 0, sizeof *d);
    for (size_t i = 0; i < n; i++) {
        char *copy = strdup(texts[i]);
        const char *tok[64];
        size_t m = 0;
        for (char *s = strtok(copy, " "); s && m < 64; s = strtok(NULL, " "))
            tok[m++] = s;
        tokdocs_add(d, tok, m);
        free(copy);
    }
}

/* 'obj' printed and parsed back (what a file does to it); deletes 'obj'. */
static inline cJSON *fx_reparse(cJSON *obj)
{
    char *text = cJSON_PrintUnformatted(obj);
    cJSON_Delete(obj);
    struct err e = ERR_INIT;
    cJSON *back = jsonv_parse("mem.json", text, strlen(text), &e);
    cr_assert_not_null(back, "%s", e.msg);
    cJSON_free(text);
    return back;
}

static inline void fx_write(const char *path, const char *text, size_t len)
{
    FILE *fp = fopen(path, "wb");
    cr_assert_not_null(fp);
    cr_assert_eq(fwrite(text, 1, len, fp), len);
    cr_assert_eq(fclose(fp), 0);
}

/* A model around the fitted pipeline 'p' (owned by 'm' from now on): K
 * labels "alpha", "beta", "gamma", default tokeniser settings, one text
 * column "text", the vector set 'vs' at 'vec_path' (NULL for bow), the
 * label counts of y[0..n), and the suggested cut-off 'review_below'. */
static inline void fx_model(struct model *m, pipeline *p, size_t k, const vecset *vs, const char *vec_path,
                            const int *y, size_t n, double review_below)
{
    static const char *const names[] = { "alpha", "beta", "gamma" };
    cr_assert_leq(k, 3);
    memset(m, 0, sizeof *m);
    m->pipe = p;
    m->k = k;
    m->labels = calloc(k, sizeof *m->labels);
    for (size_t j = 0; j < k; j++)
        m->labels[j] = strdup(names[j]);
    struct text_options to = TEXT_OPTIONS_INIT;
    m->text = to;
    m->ntext = 1;
    m->text_cols = calloc(1, sizeof *m->text_cols);
    m->text_cols[0] = strdup("text");
    m->label_col = strdup("label");
    m->vectors_path = vec_path ? strdup(vec_path) : NULL;
    m->vectors_fp = vs ? vecset_fingerprint(vs) : 0;
    m->data_path = strdup("train.csv");
    m->rows = n;
    m->label_rows = calloc(k, sizeof *m->label_rows);
    for (size_t i = 0; i < n; i++)
        m->label_rows[y[i]]++;
    m->review_below = review_below;
}

#endif
