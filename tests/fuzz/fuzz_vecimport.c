/* fuzz_vecimport.c -- libFuzzer harness for the text vector importer
 * (src/vecpack.c, src/fparse.c): import the input as a text vector file into
 * a packed store in a private temporary directory; when the import succeeds,
 * open the store it wrote and read every row back (the writer and the reader
 * must agree on every store the importer can produce). */
#include "fuzz_common.h"

#include <string.h>

#include "vecsift/err.h"
#include "vecsift/text.h"
#include "vecsift/vecset.h"

static char out_path[4096];

int LLVMFuzzerInitialize(int *argc, char ***argv)
{
    (void)argc;
    (void)argv;
    const char *tmp = getenv("TMPDIR");
    char dir[4000];
    snprintf(dir, sizeof dir, "%s/vecsift-fuzz-XXXXXX", tmp ? tmp : "/tmp");
    if (!mkdtemp(dir)) {
        perror("mkdtemp");
        abort();
    }
    snprintf(out_path, sizeof out_path, "%s/out.vecs", dir);
    return 0;
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    char path[64];
    int fd = fuzz_memfd(data, size, path);
    struct text_options to = TEXT_OPTIONS_INIT;
    struct vecset_pack_stats st;
    struct err e = ERR_INIT;
    if (vecset_pack_text(path, out_path, &to, 1, &st, &e) == 0) {
        vecset *v = vecset_open(out_path, &e);
        if (!v)
            abort(); /* the importer wrote a store the reader refuses */
        volatile float sink = 0;
        for (size_t i = 0; i < vecset_count(v); i++) {
            const float *r = vecset_row(v, i);
            for (size_t j = 0; j < vecset_dim(v); j++)
                sink += r[j];
            if (vecset_find(v, vecset_word(v, i)) != (long)i)
                abort();
        }
        (void)sink;
        vecset_close(v);
        unlink(out_path);
    }
    close(fd);
    return 0;
}
