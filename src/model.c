/* model.c -- save and load the model file (see model.h). */
#include "vecsift/model.h"

#include <cjson/cJSON.h>
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/err.h"
#include "vecsift/jsonv.h"
#include "vecsift/ofile.h"
#include "vecsift/pipeline.h"
#include "vecsift/vecset.h"
#include "vecsift/vocab.h"
#include "vecsift/xalloc.h"

/* Models larger than this are refused before reading (a hostile file must
 * not make us allocate without bound). */
#define MODEL_MAX_BYTES ((size_t)4 << 30)

static const char *NOTICE =
    "This model contains words from the texts it was trained on. Treat it as personal data "
    "wherever those texts are, under the applicable law and your organisation's policy.";

uint64_t model_data_fingerprint(char *const *text, char *const *label, size_t n)
{
    uint64_t h = 0x6a09e667f3bcc908ULL;
    for (size_t i = 0; i < n; i++) {
        h = (h ^ vocab_hash(text[i], strlen(text[i]))) * 0x100000001b3ULL;
        if (label)
            h = (h ^ vocab_hash(label[i], strlen(label[i]))) * 0x100000001b3ULL;
        h ^= h >> 29;
    }
    return h;
}

void model_release(struct model *m)
{
    pipeline_free(m->pipe);
    for (size_t i = 0; i < m->k && m->labels; i++)
        free(m->labels[i]);
    free(m->labels);
    for (size_t i = 0; i < m->ntext && m->text_cols; i++)
        free(m->text_cols[i]);
    free(m->text_cols);
    free(m->label_col);
    free(m->vectors_path);
    free(m->data_path);
    free(m->label_rows);
    cJSON_Delete(m->evaluation);
    cJSON_Delete(m->choice);
    memset(m, 0, sizeof *m);
}

static void hex64(uint64_t x, char out[17])
{
    snprintf(out, 17, "%016llx", (unsigned long long)x);
}

static int parse_hex64(const char *s, uint64_t *out)
{
    if (strlen(s) != 16)
        return -1;
    char *end;
    errno = 0;
    unsigned long long v = strtoull(s, &end, 16);
    if (*end || errno)
        return -1;
    *out = v;
    return 0;
}

int model_save(const struct model *m, const char *path, struct err *e)
{
    char hex[17];
    cJSON *root = cJSON_CreateObject();
    cJSON_AddStringToObject(root, "format", MODEL_FORMAT);
    cJSON_AddNumberToObject(root, "version", MODEL_VERSION);
    cJSON_AddStringToObject(root, "written_by", "vecsift " VECSIFT_VERSION);
    cJSON_AddStringToObject(root, "notice", NOTICE);

    cJSON *t = cJSON_AddObjectToObject(root, "text");
    cJSON_AddBoolToObject(t, "keep_accents", m->text.keep_accents);
    cJSON_AddBoolToObject(t, "mask_email", m->text.mask_email);
    cJSON_AddBoolToObject(t, "mask_url", m->text.mask_url);
    cJSON_AddBoolToObject(t, "mask_number", m->text.mask_number);
    cJSON *cols = cJSON_AddArrayToObject(t, "columns");
    for (size_t i = 0; i < m->ntext; i++)
        cJSON_AddItemToArray(cols, cJSON_CreateString(m->text_cols[i]));
    cJSON_AddStringToObject(t, "label_column", m->label_col ? m->label_col : "");

    cJSON *labs = cJSON_AddArrayToObject(root, "labels");
    for (size_t i = 0; i < m->k; i++)
        cJSON_AddItemToArray(labs, cJSON_CreateString(m->labels[i]));

    if (m->vectors_path) {
        cJSON *v = cJSON_AddObjectToObject(root, "vectors");
        cJSON_AddStringToObject(v, "path", m->vectors_path);
        hex64(m->vectors_fp, hex);
        cJSON_AddStringToObject(v, "fingerprint", hex);
    } else {
        cJSON_AddNullToObject(root, "vectors");
    }

    cJSON *tr = cJSON_AddObjectToObject(root, "training");
    cJSON_AddStringToObject(tr, "path", m->data_path ? m->data_path : "");
    hex64(m->data_fp, hex);
    cJSON_AddStringToObject(tr, "fingerprint", hex);
    cJSON_AddNumberToObject(tr, "rows", (double)m->rows);
    cJSON *lr = cJSON_AddObjectToObject(tr, "rows_per_label");
    for (size_t i = 0; i < m->k && m->label_rows; i++)
        cJSON_AddNumberToObject(lr, m->labels[i], (double)m->label_rows[i]);

    if (m->review_below >= 0)
        cJSON_AddItemToObject(root, "review_below", jsonv_number_new(m->review_below));
    else
        cJSON_AddNullToObject(root, "review_below");
    if (m->evaluation)
        cJSON_AddItemToObject(root, "evaluation", cJSON_Duplicate(m->evaluation, 1));
    else
        cJSON_AddNullToObject(root, "evaluation");
    if (m->choice)
        cJSON_AddItemToObject(root, "choice", cJSON_Duplicate(m->choice, 1));

    pipeline_save(m->pipe, cJSON_AddObjectToObject(root, "pipeline"));

    char *text = cJSON_Print(root);
    cJSON_Delete(root);
    ofile *o = ofile_open(path, e);
    if (!o) {
        cJSON_free(text);
        return -1;
    }
    fputs(text, ofile_fp(o));
    fputc('\n', ofile_fp(o));
    cJSON_free(text);
    return ofile_commit(o, e);
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

int model_load(struct model *m, const char *path, const char *vectors, vecset **vs, struct err *e)
{
    memset(m, 0, sizeof *m);
    m->review_below = -1;
    *vs = NULL;
    cJSON *root = jsonv_load(path, "model", MODEL_MAX_BYTES, e);
    if (!root) {
        err_hint(e, "a model file is written by 'vecsift train'");
        return -1;
    }
    struct jsonv_ctx c = { path, "", e }, ct = { path, "text", e }, cv = { path, "vectors", e },
                     ctr = { path, "training", e };
    const char *fmt = cJSON_IsObject(root) ? jsonv_str(&c, root, "format") : NULL;
    if (!fmt || strcmp(fmt, MODEL_FORMAT) != 0) {
        err_clear(e);
        err_set(e, path, 0, "not a vecsift model file");
        err_hint(e, "a model file is written by 'vecsift train'");
        goto fail;
    }
    size_t version;
    if (jsonv_size(&c, root, "version", 1, 1000000, &version) < 0)
        goto fail;
    if (version != MODEL_VERSION) {
        err_set(e, path, 0, "model format version %zu, this vecsift reads version %d", version, MODEL_VERSION);
        err_hint(e, "retrain the model with this version of vecsift");
        goto fail;
    }
    const cJSON *t = jsonv_get(&c, root, "text");
    if (!t || get_bool(&ct, t, "keep_accents", &m->text.keep_accents) < 0 ||
        get_bool(&ct, t, "mask_email", &m->text.mask_email) < 0 || get_bool(&ct, t, "mask_url", &m->text.mask_url) < 0 ||
        get_bool(&ct, t, "mask_number", &m->text.mask_number) < 0)
        goto fail;
    if (!(m->text_cols = jsonv_strings(&ct, t, "columns", SIZE_MAX, &m->ntext)))
        goto fail;
    const char *lc = jsonv_str(&ct, t, "label_column");
    if (!lc)
        goto fail;
    m->label_col = xstrdup(lc);

    if (!(m->labels = jsonv_strings(&c, root, "labels", SIZE_MAX, &m->k)))
        goto fail;
    if (m->k < 2 || m->k > 100000) {
        jsonv_fail(&c, "labels", "has %zu labels; a model has 2 or more", m->k);
        goto fail;
    }
    for (size_t i = 1; i < m->k; i++)
        if (strcmp(m->labels[i - 1], m->labels[i]) >= 0) {
            jsonv_fail(&c, "labels", "are not distinct and sorted");
            goto fail;
        }

    const cJSON *v = jsonv_get(&c, root, "vectors");
    if (!v)
        goto fail;
    if (!cJSON_IsNull(v)) {
        const char *vp = jsonv_str(&cv, v, "path");
        const char *fp = vp ? jsonv_str(&cv, v, "fingerprint") : NULL;
        if (!fp)
            goto fail;
        if (parse_hex64(fp, &m->vectors_fp) < 0) {
            jsonv_fail(&cv, "fingerprint", "is not 16 hexadecimal digits");
            goto fail;
        }
        m->vectors_path = xstrdup(vp);
        *vs = vecset_open(vectors ? vectors : vp, e);
        if (!*vs) {
            err_hint(e, "the model was trained with the vectors in '%s'; pass --vectors FILE when they moved", vp);
            goto fail;
        }
        if (vecset_fingerprint(*vs) != m->vectors_fp) {
            char got[17];
            hex64(vecset_fingerprint(*vs), got);
            err_set(e, vectors ? vectors : vp, 0, "vector set fingerprint %s differs from the model's %s", got, fp);
            err_hint(e, "this model was trained with other vectors; pass the same --vectors, or retrain");
            goto fail;
        }
    }

    const cJSON *tr = jsonv_get(&c, root, "training");
    if (!tr)
        goto fail;
    const char *dp = jsonv_str(&ctr, tr, "path"), *dfp = dp ? jsonv_str(&ctr, tr, "fingerprint") : NULL;
    if (!dfp || parse_hex64(dfp, &m->data_fp) < 0) {
        if (dfp)
            jsonv_fail(&ctr, "fingerprint", "is not 16 hexadecimal digits");
        goto fail;
    }
    m->data_path = xstrdup(dp);
    if (jsonv_size(&ctr, tr, "rows", 2, (size_t)1 << 40, &m->rows) < 0)
        goto fail;
    const cJSON *lr = jsonv_get(&ctr, tr, "rows_per_label");
    if (!lr)
        goto fail;
    m->label_rows = xcalloc(m->k, sizeof *m->label_rows);
    {
        struct jsonv_ctx cl = { path, "training.rows_per_label", e };
        for (size_t i = 0; i < m->k; i++)
            if (jsonv_size(&cl, lr, m->labels[i], 1, (size_t)1 << 40, &m->label_rows[i]) < 0)
                goto fail;
    }

    const cJSON *rb = jsonv_get(&c, root, "review_below");
    if (!rb)
        goto fail;
    if (!cJSON_IsNull(rb) && jsonv_num(&c, root, "review_below", 0.0, 1.0, &m->review_below) < 0)
        goto fail;
    const cJSON *ev = cJSON_GetObjectItemCaseSensitive(root, "evaluation");
    if (ev && cJSON_IsObject(ev))
        m->evaluation = cJSON_Duplicate(ev, 1);
    /* optional: only `train --choose` writes it; shown, never acted on */
    const cJSON *ch = cJSON_GetObjectItemCaseSensitive(root, "choice");
    if (ch && !cJSON_IsObject(ch)) {
        jsonv_fail(&c, "choice", "is not an object");
        goto fail;
    }
    if (ch)
        m->choice = cJSON_Duplicate(ch, 1);

    const cJSON *pl = jsonv_get(&c, root, "pipeline");
    if (!pl)
        goto fail;
    struct jsonv_ctx cp = { path, "pipeline", e };
    m->pipe = pipeline_load(&cp, pl, *vs, m->k);
    if (!m->pipe)
        goto fail;
    if ((features_vectors(pipeline_featurizer(m->pipe)) == NULL) != (m->vectors_path == NULL)) {
        err_set(e, path, 0, "field 'vectors' disagrees with the pipeline's pooling");
        goto fail;
    }
    cJSON_Delete(root);
    return 0;
fail:
    cJSON_Delete(root);
    model_release(m);
    vecset_close(*vs);
    *vs = NULL;
    return -1;
}
