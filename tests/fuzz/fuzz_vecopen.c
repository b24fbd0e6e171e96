/* fuzz_vecopen.c -- libFuzzer harness for opening a packed store
 * (src/vecset.c): map the input as a .vecs file; when it opens, touch every
 * row, word and norm, look each word up, verify the fingerprint and ask for
 * neighbours; with pieces (format 1.1), touch every piece row, find each
 * bucket and compose vectors for words the store lacks.  A lying header
 * must be refused at open, never read past the mapping. */
#include "fuzz_common.h"

#include <stdlib.h>
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
        for (size_t i = 0; i < vecset_piece_count(v); i++) {
            const float *r = vecset_piece_row(v, i);
            for (size_t j = 0; j < d; j++)
                sink += r[j];
            (void)vecset_piece_find(v, vecset_piece_bucket(v, i));
        }
        if (vecset_pieces(v)) {
            float *q = calloc(d, sizeof *q);
            static const char *const probe[] = { "acount", "refnud", "\xc3\xa9t\xc3\xa9", "x", "" };
            for (size_t k = 0; q && k < sizeof probe / sizeof probe[0]; k++)
                sink += (double)vecset_compose(v, probe[k], strlen(probe[k]), q);
            free(q);
        }
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
