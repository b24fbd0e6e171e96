/* fuzz_model.c -- libFuzzer harness for loading a model file (src/model.c,
 * src/jsonv.c, src/pipeline.c, src/features_file.c, src/svmfit.c): the input is
 * the model JSON.  Models that name vectors are checked against a small
 * packed store built once from tests/fuzz/vectors.txt (path in the
 * environment variable VECSIFT_FUZZ_VECTORS, default beside the corpus run
 * directory), so seeds trained with those vectors pass the fingerprint
 * check and reach the pipeline's validation. */
#include "fuzz_common.h"

#include <string.h>

#include "vecsift/err.h"
#include "vecsift/model.h"
#include "vecsift/text.h"
#include "vecsift/vecset.h"

static char vecs_path[4096];

int LLVMFuzzerInitialize(int *argc, char ***argv)
{
    (void)argc;
    (void)argv;
    const char *txt = getenv("VECSIFT_FUZZ_VECTORS");
    if (!txt)
        txt = "tests/fuzz/vectors.txt";
    const char *tmp = getenv("TMPDIR");
    char dir[4000];
    snprintf(dir, sizeof dir, "%s/vecsift-fuzz-XXXXXX", tmp ? tmp : "/tmp");
    if (!mkdtemp(dir)) {
        perror("mkdtemp");
        abort();
    }
    snprintf(vecs_path, sizeof vecs_path, "%s/seed.vecs", dir);
    struct text_options to = TEXT_OPTIONS_INIT;
    struct vecset_pack_stats st;
    struct err e = ERR_INIT;
    if (vecset_pack_text(txt, vecs_path, &to, 1, &st, &e) < 0) {
        fprintf(stderr, "fuzz_model: %s\n", e.msg);
        abort();
    }
    return 0;
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    char path[64];
    int fd = fuzz_memfd(data, size, path);
    struct model m = MODEL_INIT;
    vecset *vs = NULL;
    struct err e = ERR_INIT;
    if (model_load(&m, path, vecs_path, &vs, &e) == 0) {
        volatile size_t sink = 0;
        for (size_t i = 0; i < m.k; i++)
            sink += strlen(m.labels[i]);
        (void)sink;
    }
    model_release(&m);
    vecset_close(vs);
    close(fd);
    return 0;
}
