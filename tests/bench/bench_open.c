/* bench_open.c -- helper for bench_pack.sh (not part of the test suite).
 *
 *   bench_open make N DIM OUT     write an invented N x DIM packed store
 *                                 (tokens w0000000..., seeded normal values)
 *   bench_open lookup STORE M [evict]
 *                                 open STORE and look up M of its tokens
 *                                 spread over the store, twice: the first
 *                                 pass on a fresh mapping, the second on
 *                                 the same mapping again.  With 'evict',
 *                                 the store's pages are first dropped from
 *                                 the page cache (posix_fadvise DONTNEED on
 *                                 this one file), so the first pass reads
 *                                 from the disk.  Prints one line:
 *     open_wall open_cpu  p1_wall p1_cpu p1_minflt p1_majflt  p2_wall p2_cpu p2_minflt p2_majflt
 *                                 (seconds, and page faults counted by
 *                                 getrusage).  The tokens are formatted
 *                                 before the clock starts: only open and
 *                                 vecset_find are timed.
 *
 * Why two passes: a lookup touches an index slot, a string offset and a
 * string, three places far apart in a large store.  On a fresh mapping a
 * touch of a page not yet mapped is a minor page fault (the kernel maps it
 * from the page cache, with its neighbours); once mapped, what remains is
 * the cost of cache and TLB misses, which also grows with the store.  CPU
 * time is shown beside wall time because the machine may be shared.
 */
#include <fcntl.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <time.h>
#include <unistd.h>

#include "vecsift/err.h"
#include "vecsift/rng.h"
#include "vecsift/vecset.h"

static double clock_s(clockid_t id)
{
    struct timespec t;
    clock_gettime(id, &t);
    return t.tv_sec + t.tv_nsec * 1e-9;
}

struct mark {
    double wall, cpu;
    long minflt, majflt;
};

static struct mark mark_now(void)
{
    struct rusage ru;
    getrusage(RUSAGE_SELF, &ru);
    return (struct mark){ clock_s(CLOCK_MONOTONIC), clock_s(CLOCK_PROCESS_CPUTIME_ID), ru.ru_minflt, ru.ru_majflt };
}

static void print_span(struct mark a, struct mark b, int faults)
{
    printf(" %.6f %.6f", b.wall - a.wall, b.cpu - a.cpu);
    if (faults)
        printf(" %ld %ld", b.minflt - a.minflt, b.majflt - a.majflt);
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
    if ((argc == 4 || (argc == 5 && strcmp(argv[4], "evict") == 0)) && strcmp(argv[1], "lookup") == 0) {
        size_t m = strtoul(argv[3], NULL, 10);
        if (argc == 5) {
            int fd = open(argv[2], O_RDONLY);
            if (fd < 0 || posix_fadvise(fd, 0, 0, POSIX_FADV_DONTNEED) != 0) {
                fprintf(stderr, "bench_open: cannot drop %s from the page cache\n", argv[2]);
                return 1;
            }
            close(fd);
        }
        /* the count, from the header, to spread the tokens; then reopen */
        vecset *v = vecset_open(argv[2], &e);
        if (!v)
            goto fail;
        size_t n = vecset_count(v);
        vecset_close(v);
        char (*tok)[24] = malloc(m * sizeof *tok);
        for (size_t i = 0; i < m; i++)
            snprintf(tok[i], sizeof tok[i], "w%07zu", (size_t)((i * 2654435761u) % n));
        struct mark t0 = mark_now();
        v = vecset_open(argv[2], &e);
        if (!v)
            goto fail;
        struct mark t1 = mark_now();
        size_t found = 0;
        for (size_t i = 0; i < m; i++)
            found += vecset_find(v, tok[i]) >= 0;
        struct mark t2 = mark_now();
        for (size_t i = 0; i < m; i++)
            found += vecset_find(v, tok[i]) >= 0;
        struct mark t3 = mark_now();
        vecset_close(v);
        free(tok);
        if (found != 2 * m) {
            fprintf(stderr, "bench_open: only %zu of %zu tokens found\n", found, 2 * m);
            return 1;
        }
        print_span(t0, t1, 0);
        print_span(t1, t2, 1);
        print_span(t2, t3, 1);
        printf("\n");
        return 0;
    }
    fprintf(stderr, "usage: bench_open make N DIM OUT | lookup STORE M [evict]\n");
    return 2;
fail:
    fprintf(stderr, "bench_open: %s\n", e.msg);
    return 1;
}
