/* bench_open.c -- helper for bench_pack.sh (not part of the test suite).
 *
 *   bench_open make N DIM OUT     write an invented N x DIM packed store
 *                                 (tokens w0000000..., seeded normal values)
 *   bench_open lookup STORE M     open STORE, look up M of its tokens spread
 *                                 over the store, print seconds for the open
 *                                 and for the lookups
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "vecsift/err.h"
#include "vecsift/rng.h"
#include "vecsift/vecset.h"

static double now(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return t.tv_sec + t.tv_nsec * 1e-9;
}

int main(int argc, char **argv)
{
    struct err e = ERR_INIT;
    if (argc == 5 && strcmp(argv[1], "make") == 0) {
        size_t n = strtoul(argv[2], NULL, 10), dim = strtoul(argv[3], NULL, 10);
        vecset_writer *w = vecset_writer_new(argv[4], dim, &e);
        if (!w)
            goto fail;
        struct rng r;
        rng_seed(&r, 1);
        float *row = malloc(dim * sizeof *row);
        char tok[32];
        for (size_t i = 0; i < n; i++) {
            for (size_t j = 0; j < dim; j++)
                row[j] = (float)(0.4 * rng_normal(&r));
            int len = snprintf(tok, sizeof tok, "w%07zu", i);
            vecset_writer_add(w, tok, (size_t)len, row);
        }
        free(row);
        if (vecset_writer_commit(w, &e) < 0)
            goto fail;
        return 0;
    }
    if (argc == 4 && strcmp(argv[1], "lookup") == 0) {
        size_t m = strtoul(argv[3], NULL, 10);
        double t0 = now();
        vecset *v = vecset_open(argv[2], &e);
        if (!v)
            goto fail;
        double t1 = now();
        size_t n = vecset_count(v), found = 0;
        char tok[32];
        for (size_t i = 0; i < m; i++) {
            snprintf(tok, sizeof tok, "w%07zu", (i * 2654435761u) % n);
            found += vecset_find(v, tok) >= 0;
        }
        double t2 = now();
        vecset_close(v);
        if (found != m) {
            fprintf(stderr, "bench_open: only %zu of %zu tokens found\n", found, m);
            return 1;
        }
        printf("%.6f %.6f\n", t1 - t0, t2 - t1);
        return 0;
    }
    fprintf(stderr, "usage: bench_open make N DIM OUT | lookup STORE M\n");
    return 2;
fail:
    fprintf(stderr, "bench_open: %s\n", e.msg);
    return 1;
}
