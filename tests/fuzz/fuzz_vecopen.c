/* fuzz_vecopen.c -- libFuzzer harness for opening a packed store
 * (src/vecset.c): map the input as a .vecs file; when it opens, touch every
 * row, word and norm, look each word up, verify the fingerprint and ask for
 * neighbours.  A lying header must be refused at open, never read past the
 * mapping. */
#include "fuzz_common.h"

#include <string.h>

#include "vecsift/err.h"
#include "vecsift/vecset.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    char path[64];
    int fd = fuzz_memfd(data, size, path);
    struct err e = ERR_INIT;
    vecset *v = vecset_open(path, &e);
    if (v) {
        size_t n = vecset_count(v), d = vecset_dim(v);
        volatile double sink = 0;
        for (size_t i = 0; i < n; i++) {
            const float *r = vecset_row(v, i);
            for (size_t j = 0; j < d; j++)
                sink += r[j];
            sink += vecset_norm(v, i);
            (void)vecset_check_row(v, i, &e);
            sink += (double)strlen(vecset_word(v, i));
            (void)vecset_find(v, vecset_word(v, i));
        }
        (void)vecset_find(v, "account");
        (void)vecset_verify(v, &e);
        if (n > 0) {
            struct vecset_hit hits[3];
            (void)vecset_nearest(v, vecset_row(v, 0), 3, NULL, 0, 1, hits, &e);
        }
        (void)sink;
        vecset_close(v);
    }
    close(fd);
    return 0;
}
