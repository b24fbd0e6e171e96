/* features_file.c -- the model-file form of a featurizer: its fields
 * written into, and read back and validated from, the model's JSON
 * (features_save, features_load).  A damaged file is bad input (jsonv.h),
 * never a crash. */
#include "vecsift/features.h"

#include <cjson/cJSON.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/err.h"
#include "vecsift/jsonv.h"
#include "vecsift/vecset.h"
#include "vecsift/vocab.h"
#include "vecsift/xalloc.h"
#include "features_impl.h"

/* A combined featurizer's fields: its pooling, width and block weights,
 * and each block's own fields in an object of its own. */
static void combined_save(const featurizer *f, cJSON *obj)
{
    cJSON_AddStringToObject(obj, "pool", features_pool_name(f->p.pool));
    cJSON_AddNumberToObject(obj, "training_rows", (double)f->n_train);
    cJSON_AddNumberToObject(obj, "dimensions", (double)f->D);
    cJSON_AddItemToObject(obj, "bow_weight", jsonv_number_new(f->wbow));
    cJSON_AddItemToObject(obj, "pooled_weight", jsonv_number_new(f->wdense));
    features_save(f->bag, cJSON_AddObjectToObject(obj, "bag_of_words"));
    features_save(f->pooled, cJSON_AddObjectToObject(obj, "pooled"));
}

static featurizer *combined_load(const struct jsonv_ctx *c, const cJSON *obj, enum features_pool pool,
                                 const vecset *vs)
{
    if (!vs) {
        jsonv_fail(c, "pool", "'%s' needs a vector set", features_pool_name(pool));
        return NULL;
    }
    size_t dims, ntrain;
    double w, wb;
    if (jsonv_size(c, obj, "training_rows", 1, (size_t)1 << 40, &ntrain) < 0 ||
        jsonv_size(c, obj, "dimensions", 2, (size_t)UINT32_MAX - 1, &dims) < 0 ||
        jsonv_num(c, obj, "bow_weight", 1e-300, 1e300, &wb) < 0 ||
        jsonv_num(c, obj, "pooled_weight", 1e-300, 1e300, &w) < 0)
        return NULL;
    const cJSON *bo = jsonv_get(c, obj, "bag_of_words");
    const cJSON *po = bo ? jsonv_get(c, obj, "pooled") : NULL;
    if (!po)
        return NULL;
    char pathb[200], pathd[200];
    snprintf(pathb, sizeof pathb, "%s%sbag_of_words", c->path, *c->path ? "." : "");
    snprintf(pathd, sizeof pathd, "%s%spooled", c->path, *c->path ? "." : "");
    struct jsonv_ctx cb = *c, cd = *c;
    cb.path = pathb;
    cd.path = pathd;
    featurizer *bag = features_load(&cb, bo, NULL);
    featurizer *pooled = bag ? features_load(&cd, po, vs) : NULL;
    if (!pooled) {
        features_free(bag);
        return NULL;
    }
    int bad = 0;
    if (bag->p.pool != POOL_BOW)
        bad = jsonv_fail(&cb, "pool", "is '%s', not bow", features_pool_name(bag->p.pool));
    else if (pooled->p.pool != features_pool_dense(pool))
        bad = jsonv_fail(&cd, "pool", "is '%s', but the route is '%s'", features_pool_name(pooled->p.pool),
                         features_pool_name(pool));
    else if (dims != bag->D + pooled->D)
        bad = jsonv_fail(c, "dimensions", "is %zu but the blocks have %zu and %zu", dims, bag->D, pooled->D);
    if (bad) {
        features_free(bag);
        features_free(pooled);
        return NULL;
    }
    featurizer *f = xcalloc(1, sizeof *f);
    f->p = pooled->p;
    f->p.pool = pool;
    f->p.bigrams = bag->p.bigrams;
    f->p.min_df = bag->p.min_df;
    f->vs = vs;
    f->n_train = ntrain;
    f->bag = bag;
    f->pooled = pooled;
    f->D = dims;
    f->wbow = wb;
    f->wdense = w;
    return f;
}

/* ---- persistence ---- */

void features_save(const featurizer *f, cJSON *obj)
{
    if (f->bag) {
        combined_save(f, obj);
        return;
    }
    cJSON_AddStringToObject(obj, "pool", features_pool_name(f->p.pool));
    cJSON_AddBoolToObject(obj, "sublinear_tf", f->p.sublinear_tf);
    cJSON_AddItemToObject(obj, "sif_a", jsonv_number_new(f->p.sif_a));
    cJSON_AddBoolToObject(obj, "bigrams", f->p.bigrams);
    cJSON_AddNumberToObject(obj, "min_df", (double)f->p.min_df);
    cJSON_AddBoolToObject(obj, "scale", f->p.scale);
    cJSON_AddNumberToObject(obj, "training_rows", (double)f->n_train);
    cJSON_AddNumberToObject(obj, "dimensions", (double)f->D);
    size_t V = vocab_size(f->words);
    cJSON *w = cJSON_CreateArray();
    for (size_t i = 0; i < V; i++)
        cJSON_AddItemToArray(w, cJSON_CreateString(vocab_word(f->words, (int32_t)i)));
    cJSON_AddItemToObject(obj, "words", w);
    cJSON_AddItemToObject(obj, "idf", jsonv_doubles_new(f->idf, V));
    if (f->p.pool == POOL_SIF)
        cJSON_AddItemToObject(obj, "word_probability", jsonv_doubles_new(f->pw, V));
    if (f->u)
        cJSON_AddItemToObject(obj, "sif_component", jsonv_doubles_new(f->u, f->D));
    if (f->mean) {
        cJSON_AddItemToObject(obj, "scale_mean", jsonv_doubles_new(f->mean, f->D));
        cJSON_AddItemToObject(obj, "scale_sd", jsonv_doubles_new(f->sd, f->D));
    }
}

static int get_bool(const struct jsonv_ctx *c, const cJSON *obj, const char *key, int *out)
{
    const cJSON *v = jsonv_get(c, obj, key);
    if (!v)
        return -1;
    if (!cJSON_IsBool(v))
        return jsonv_fail(c, key, "is not true or false");
    *out = cJSON_IsTrue(v);
    return 0;
}

featurizer *features_load(const struct jsonv_ctx *c, const cJSON *obj, const vecset *vs)
{
    featurizer *f = xcalloc(1, sizeof *f);
    char **words = NULL;
    size_t V = 0;
    const char *pool = jsonv_str(c, obj, "pool");
    if (!pool)
        goto fail;
    if (features_pool_parse(pool, &f->p.pool) < 0) {
        jsonv_fail(c, "pool", "is '%s', not one of " FEATURES_POOL_NAMES, pool);
        goto fail;
    }
    if (features_pool_combined(f->p.pool)) {
        enum features_pool pp = f->p.pool;
        features_free(f);
        return combined_load(c, obj, pp, vs);
    }
    size_t dims, min_df, ntrain;
    if (get_bool(c, obj, "sublinear_tf", &f->p.sublinear_tf) < 0 || get_bool(c, obj, "bigrams", &f->p.bigrams) < 0 ||
        get_bool(c, obj, "scale", &f->p.scale) < 0 ||
        jsonv_size(c, obj, "min_df", 1, 1u << 30, &min_df) < 0 ||
        jsonv_size(c, obj, "training_rows", 1, (size_t)1 << 40, &ntrain) < 0 ||
        jsonv_size(c, obj, "dimensions", 1, (size_t)1 << 26, &dims) < 0)
        goto fail;
    f->p.min_df = min_df;
    f->n_train = ntrain;
    f->D = dims;
    f->idf_unseen = log(1.0 + (double)ntrain) + 1.0;
    if (jsonv_num(c, obj, "sif_a", 1e-300, 1e300, &f->p.sif_a) < 0)
        goto fail;
    words = jsonv_strings(c, obj, "words", SIZE_MAX, &V);
    if (!words)
        goto fail;
    f->words = vocab_new();
    for (size_t i = 0; i < V; i++) {
        if ((size_t)vocab_add(f->words, words[i]) != i) {
            jsonv_fail(c, "words", "repeats '%.40s'", words[i]);
            goto fail;
        }
    }
    if (!(f->idf = jsonv_doubles(c, obj, "idf", V, NULL)))
        goto fail;
    for (size_t i = 0; i < V; i++)
        if (!(f->idf[i] >= 1.0)) {
            jsonv_fail(c, "idf", "entry %zu is below 1, which smoothed idf never is", i);
            goto fail;
        }
    if (f->p.pool == POOL_BOW) {
        if (dims != V) {
            jsonv_fail(c, "dimensions", "is %zu but there are %zu words", dims, V);
            goto fail;
        }
    } else {
        if (!vs) {
            jsonv_fail(c, "pool", "'%s' needs a vector set", pool);
            goto fail;
        }
        if (vecset_dim(vs) != dims) {
            jsonv_fail(c, "dimensions", "is %zu but the vector set has %zu", dims, vecset_dim(vs));
            goto fail;
        }
        f->vs = vs;
    }
    if (f->p.pool == POOL_SIF) {
        if (!(f->pw = jsonv_doubles(c, obj, "word_probability", V, NULL)) ||
            !(f->u = jsonv_doubles(c, obj, "sif_component", dims, NULL)))
            goto fail;
    }
    if (f->p.scale && f->p.pool != POOL_BOW) {
        if (!(f->mean = jsonv_doubles(c, obj, "scale_mean", dims, NULL)) ||
            !(f->sd = jsonv_doubles(c, obj, "scale_sd", dims, NULL)))
            goto fail;
        for (size_t i = 0; i < dims; i++)
            if (!(f->sd[i] > 0)) {
                jsonv_fail(c, "scale_sd", "entry %zu is not positive", i);
                goto fail;
            }
    }
    for (size_t i = 0; i < V; i++)
        free(words[i]);
    free(words);
    return f;
fail:
    for (size_t i = 0; i < V && words; i++)
        free(words[i]);
    free(words);
    features_free(f);
    return NULL;
}
