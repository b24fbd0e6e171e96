/* test_model.c -- the model file: round trip, and damaged or hostile files
 * give a clear error naming the file (never a crash, never a half-filled
 * model). */
#include <criterion/criterion.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "fixtures.h"
#include "vecsift/model.h"
#include "vecsift/pipeline.h"

static const char *const WORDS[] = { "cat", "sat", "ran", "dog", "hen" };
static const float VECS[] = { 1, 0, 2, 3, 0, 4, 5, 1, 0, 10, 1, 1, -2, 3, 1 };
static const float OTHER[] = { 1, 0, 2, 3, 0, 4, 5, 1, 0, 10, 1, 1, -2, 3, 2 }; /* one number differs */
static const char *const TEXTS[] = { "cat sat", "sat cat cat", "ran dog", "dog dog ran", "hen cat", "hen hen sat" };
static const int Y[] = { 0, 0, 1, 1, 2, 2 };

static char dir[64], model_path[128], vec_path[128], other_path[128];
static struct tokdocs docs;

/* A tfidf + logreg model on six rows, saved to model_path. */
static void setup(void)
{
    strcpy(dir, fx_tmpdir());
    vecset_close(fx_vectors(dir, "v.vecs", WORDS, VECS, 5, 3));
    vecset_close(fx_vectors(dir, "other.vecs", WORDS, OTHER, 5, 3));
    snprintf(vec_path, sizeof vec_path, "%s/v.vecs", dir);
    snprintf(other_path, sizeof other_path, "%s/other.vecs", dir);
    snprintf(model_path, sizeof model_path, "%s/m.json", dir);
    fx_docs(&docs, TEXTS, 6);
    struct err e = ERR_INIT;
    vecset *vs = vecset_open(vec_path, &e);
    cr_assert_not_null(vs, "%s", e.msg);
    struct pipeline_spec s = PIPELINE_SPEC_INIT;
    size_t rows[] = { 0, 1, 2, 3, 4, 5 };
    struct model m = MODEL_INIT;
    m.pipe = pipeline_fit(&s, &docs, Y, 3, rows, 6, vs, NULL, &e);
    cr_assert_not_null(m.pipe, "%s", e.msg);
    m.k = 3;
    m.labels = calloc(3, sizeof *m.labels);
    m.labels[0] = strdup("alpha");
    m.labels[1] = strdup("beta");
    m.labels[2] = strdup("gamma");
    struct text_options to = TEXT_OPTIONS_INIT;
    m.text = to;
    m.ntext = 1;
    m.text_cols = calloc(1, sizeof *m.text_cols);
    m.text_cols[0] = strdup("text");
    m.label_col = strdup("label");
    m.vectors_path = strdup(vec_path);
    m.vectors_fp = vecset_fingerprint(vs);
    m.data_path = strdup("train.csv");
    m.rows = 6;
    m.label_rows = calloc(3, sizeof *m.label_rows);
    for (size_t k = 0; k < 3; k++)
        m.label_rows[k] = 2;
    m.review_below = 0.4;
    cr_assert_eq(model_save(&m, model_path, &e), 0, "%s", e.msg);
    model_release(&m);
    vecset_close(vs);
}

static void teardown(void)
{
    tokdocs_release(&docs);
}

TestSuite(model, .init = setup, .fini = teardown);

static char *slurp(const char *path, size_t *len)
{
    FILE *fp = fopen(path, "rb");
    cr_assert_not_null(fp);
    fseek(fp, 0, SEEK_END);
    *len = (size_t)ftell(fp);
    rewind(fp);
    char *s = malloc(*len + 1);
    cr_assert_eq(fread(s, 1, *len, fp), *len);
    s[*len] = '\0';
    fclose(fp);
    return s;
}

/* The saved model as a cJSON tree, to damage. */
static cJSON *saved_tree(void)
{
    size_t len;
    char *s = slurp(model_path, &len);
    cJSON *root = cJSON_Parse(s);
    free(s);
    cr_assert_not_null(root);
    return root;
}

static void write_tree(cJSON *root, const char *path)
{
    char *text = cJSON_Print(root);
    fx_write(path, text, strlen(text));
    cJSON_free(text);
    cJSON_Delete(root);
}

/* model_load(path) must fail with a message starting with 'file' and
 * containing 'says', leave the model zeroed and the vector set closed. */
static void expect_refused(const char *path, const char *vectors, const char *file, const char *says)
{
    struct model m;
    memset(&m, 0xab, sizeof m);
    vecset *vs = (vecset *)&m;
    struct err e = ERR_INIT;
    cr_assert_eq(model_load(&m, path, vectors, &vs, &e), -1, "accepted: expected '%s'", says);
    cr_assert_eq(e.code, ERR_INPUT, "%s", e.msg);
    cr_assert(strncmp(e.msg, file, strlen(file)) == 0, "message does not start with %s: %s", file, e.msg);
    cr_assert(strstr(e.msg, says), "expected '%s' in: %s", says, e.msg);
    cr_assert_null(vs);
    cr_assert_null(m.pipe);
    cr_assert_null(m.labels);
}

/* Apply 'edit' to the tree of the saved model, write it, expect 'says'. */
#define DAMAGED(name, says, edit)                                                                                  \
    Test(model, name)                                                                                              \
    {                                                                                                              \
        cJSON *root = saved_tree();                                                                                \
        cJSON *pl = cJSON_GetObjectItem(root, "pipeline");                                                         \
        cJSON *clf = cJSON_GetObjectItem(pl, "classifier");                                                        \
        (void)pl;                                                                                                  \
        (void)clf;                                                                                                 \
        edit;                                                                                                      \
        char bad[160];                                                                                             \
        snprintf(bad, sizeof bad, "%s/bad.json", dir);                                                             \
        write_tree(root, bad);                                                                                     \
        expect_refused(bad, NULL, bad, says);                                                                      \
    }

DAMAGED(wrong_format_string, "not a vecsift model file",
        cJSON_ReplaceItemInObject(root, "format", cJSON_CreateString("vecsift-modle")))
DAMAGED(missing_format, "not a vecsift model file", cJSON_DeleteItemFromObject(root, "format"))
DAMAGED(wrong_version, "model format version 2, this vecsift reads version 1",
        cJSON_ReplaceItemInObject(root, "version", cJSON_CreateNumber(2)))
DAMAGED(fractional_version, "field 'version' is not a whole number",
        cJSON_ReplaceItemInObject(root, "version", cJSON_CreateNumber(1.5)))
DAMAGED(w_of_wrong_length, "field 'classifier.W' has 8 entries, expected 9",
        cJSON_DeleteItemFromArray(cJSON_GetObjectItem(clf, "W"), 0))
/* JSON cannot spell NaN or infinity; 1e999 is how a file smuggles one in */
DAMAGED(w_overflowing_to_infinity, "field 'classifier.W' entry 0 is not a finite number",
        cJSON_ReplaceItemInArray(cJSON_GetObjectItem(clf, "W"), 0, cJSON_CreateRaw("1e999")))
DAMAGED(b_holding_a_string, "field 'classifier.b' entry 1 is not a finite number",
        cJSON_ReplaceItemInArray(cJSON_GetObjectItem(clf, "b"), 1, cJSON_CreateString("NaN")))
DAMAGED(labels_unsorted, "field 'labels' are not distinct and sorted",
        cJSON_ReplaceItemInArray(cJSON_GetObjectItem(root, "labels"), 0, cJSON_CreateString("zeta")))
DAMAGED(labels_repeated, "field 'labels' are not distinct and sorted",
        cJSON_ReplaceItemInArray(cJSON_GetObjectItem(root, "labels"), 1, cJSON_CreateString("alpha")))
DAMAGED(one_label, "field 'labels' has 1 labels",
        cJSON_ReplaceItemInObject(root, "labels", cJSON_Parse("[\"alpha\"]")))
DAMAGED(scale_sd_missing, "field 'features.scale_sd' is missing",
        cJSON_DeleteItemFromObject(cJSON_GetObjectItem(pl, "features"), "scale_sd"))
DAMAGED(huge_dimensions, "field 'features.dimensions' is 1e+300, outside",
        cJSON_ReplaceItemInObject(cJSON_GetObjectItem(pl, "features"), "dimensions", cJSON_CreateNumber(1e300)))
DAMAGED(unknown_classifier, "field 'classifier.kind' is 'forest'",
        cJSON_ReplaceItemInObject(clf, "kind", cJSON_CreateString("forest")))
DAMAGED(review_cut_off_above_one, "field 'review_below' is 1.5, outside [0, 1]",
        cJSON_ReplaceItemInObject(root, "review_below", cJSON_CreateNumber(1.5)))
DAMAGED(label_count_missing, "field 'training.rows_per_label.beta' is missing",
        cJSON_DeleteItemFromObject(cJSON_GetObjectItem(cJSON_GetObjectItem(root, "training"), "rows_per_label"),
                                   "beta"))
DAMAGED(fingerprint_not_hex, "field 'vectors.fingerprint' is not 16 hexadecimal digits",
        cJSON_ReplaceItemInObject(cJSON_GetObjectItem(root, "vectors"), "fingerprint",
                                  cJSON_CreateString("12345678zz345678")))
DAMAGED(pooling_without_vectors, "needs a vector set", cJSON_ReplaceItemInObject(root, "vectors", cJSON_CreateNull()))
DAMAGED(pipeline_not_an_object, "field 'pipeline' is not an object",
        cJSON_ReplaceItemInObject(root, "pipeline", cJSON_CreateNumber(3)))

Test(model, round_trip_gives_identical_probabilities)
{
    struct model m;
    vecset *vs;
    struct err e = ERR_INIT;
    cr_assert_eq(model_load(&m, model_path, NULL, &vs, &e), 0, "%s", e.msg);
    cr_assert_eq(m.k, 3);
    cr_assert_str_eq(m.labels[2], "gamma");
    cr_assert_str_eq(m.vectors_path, vec_path);
    cr_assert_float_eq(m.review_below, 0.4, 0);
    /* refit: fitting repeats exactly, so the loaded model must match it */
    struct pipeline_spec s = PIPELINE_SPEC_INIT;
    size_t rows[] = { 0, 1, 2, 3, 4, 5 };
    pipeline *p = pipeline_fit(&s, &docs, Y, 3, rows, 6, vs, NULL, &e);
    cr_assert_not_null(p, "%s", e.msg);
    double P1[18], P2[18];
    pipeline_proba(p, &docs, rows, 6, P1, NULL);
    pipeline_proba(m.pipe, &docs, rows, 6, P2, NULL);
    cr_assert(memcmp(P1, P2, sizeof P1) == 0);
    pipeline_free(p);
    model_release(&m);
    vecset_close(vs);
}

Test(model, truncated_file_names_the_line)
{
    size_t len;
    char *s = slurp(model_path, &len);
    char bad[160];
    snprintf(bad, sizeof bad, "%s/cut.json", dir);
    for (size_t cut = 1; cut < len - 2; cut += len / 7) {
        fx_write(bad, s, cut);
        expect_refused(bad, NULL, bad, cut < 3 ? "" : ":");
    }
    fx_write(bad, s, len / 2);
    expect_refused(bad, NULL, bad, "not valid JSON here");
    free(s);
}

Test(model, empty_nul_and_missing_files)
{
    char bad[160];
    snprintf(bad, sizeof bad, "%s/empty.json", dir);
    fx_write(bad, "", 0);
    expect_refused(bad, NULL, bad, "empty file, not a model");
    fx_write(bad, "{\"format\"\0: 1}", 14);
    expect_refused(bad, NULL, bad, "contains NUL bytes");
    fx_write(bad, "[1, 2, 3]", 9);
    expect_refused(bad, NULL, bad, "not a vecsift model file");
    snprintf(bad, sizeof bad, "%s/none.json", dir);
    struct model m;
    vecset *vs;
    struct err e = ERR_INIT;
    cr_assert_eq(model_load(&m, bad, NULL, &vs, &e), -1);
    cr_assert(strstr(e.msg, "cannot open model"), "%s", e.msg);
    expect_refused(dir, NULL, dir, "not a regular file");
}

/* cJSON refuses nesting deeper than its limit: a parse error, not a stack
 * overflow. */
Test(model, deeply_nested_file_is_refused)
{
    enum { DEPTH = 200000 };
    char *s = malloc(2 * DEPTH + 1);
    memset(s, '[', DEPTH);
    memset(s + DEPTH, ']', DEPTH);
    char bad[160];
    snprintf(bad, sizeof bad, "%s/deep.json", dir);
    fx_write(bad, s, 2 * DEPTH);
    free(s);
    expect_refused(bad, NULL, bad, "not valid JSON here");
}

Test(model, other_vectors_are_refused_with_a_hint)
{
    struct model m;
    vecset *vs;
    struct err e = ERR_INIT;
    cr_assert_eq(model_load(&m, model_path, other_path, &vs, &e), -1);
    cr_assert(strncmp(e.msg, other_path, strlen(other_path)) == 0, "does not name the vector file: %s", e.msg);
    cr_assert(strstr(e.msg, "fingerprint"), "%s", e.msg);
    cr_assert(strstr(e.hint, "retrain") && strstr(e.hint, "--vectors"), "hint: %s", e.hint);
    cr_assert_null(vs);
}

Test(model, moved_vectors_give_a_hint)
{
    char moved[160];
    snprintf(moved, sizeof moved, "%s/moved.vecs", dir);
    cr_assert_eq(rename(vec_path, moved), 0);
    struct model m;
    vecset *vs;
    struct err e = ERR_INIT;
    cr_assert_eq(model_load(&m, model_path, NULL, &vs, &e), -1);
    cr_assert(strstr(e.msg, vec_path), "%s", e.msg);
    cr_assert(strstr(e.hint, "--vectors"), "hint: %s", e.hint);
    /* the same vectors under the new name are accepted */
    cr_assert_eq(model_load(&m, model_path, moved, &vs, &e), 0, "%s", e.msg);
    model_release(&m);
    vecset_close(vs);
}
