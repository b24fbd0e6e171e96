/* test_par.c -- the parallel engine: par_for runs every task once, and
 * par_stream hands chunks to the writer in input order whatever the
 * number of threads and however long each chunk's work takes; a failed
 * read or write stops the stream with nothing written after it.
 * (The expectations are the interface's own, par.h; common practice for an
 * ordered pipeline.) */
#include <criterion/criterion.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "vecsift/par.h"

static void count_task(void *ctx, size_t i)
{
    unsigned *hits = ctx;
    __atomic_add_fetch(&hits[i], 1, __ATOMIC_RELAXED);
}

Test(par, for_runs_every_task_once)
{
    for (int t = 1; t <= 6; t++) {
        unsigned hits[37] = { 0 };
        par_for(t, 37, count_task, hits);
        for (size_t i = 0; i < 37; i++)
            cr_assert_eq(hits[i], 1, "threads %d: task %zu ran %u times", t, i, hits[i]);
    }
}

struct chunk {
    size_t seq;     /* the chunk's number, set by the reader */
    size_t value;   /* set by the worker: a function of seq alone */
    size_t worker;
};

struct feed {
    size_t n, next;         /* chunks to make, next to read */
    size_t fail_read;       /* read of this chunk fails (n: never) */
    size_t fail_write;      /* write of this chunk fails (n: never) */
    size_t threads;
    size_t written[200];    /* seq of each chunk written, in order */
    size_t nwritten;
    size_t maxread_at_write[200]; /* chunks read when each was written */
    int bad_worker;
};

static int feed_read(void *ctx, void *chunk)
{
    struct feed *f = ctx;
    struct chunk *c = chunk;
    size_t next = __atomic_load_n(&f->next, __ATOMIC_SEQ_CST);
    if (next == f->fail_read)
        return -1;
    c->seq = next;
    c->value = 0;
    __atomic_store_n(&f->next, next + 1, __ATOMIC_SEQ_CST);
    return next + 1 < f->n;
}

static void feed_work(void *ctx, void *chunk, size_t worker)
{
    struct feed *f = ctx;
    struct chunk *c = chunk;
    if (worker >= f->threads)
        f->bad_worker = 1;
    /* uneven work, so chunks finish out of order */
    struct timespec ts = { 0, (long)((c->seq * 7919) % 5) * 200000L };
    nanosleep(&ts, NULL);
    c->value = c->seq * c->seq + 1;
    c->worker = worker;
}

static int feed_write(void *ctx, void *chunk)
{
    struct feed *f = ctx;
    struct chunk *c = chunk;
    if (c->seq == f->fail_write)
        return -1;
    cr_assert_eq(c->value, c->seq * c->seq + 1, "chunk %zu written before its work was done", c->seq);
    f->maxread_at_write[f->nwritten] = __atomic_load_n(&f->next, __ATOMIC_SEQ_CST);
    f->written[f->nwritten++] = c->seq;
    return 0;
}

/* A feed of n chunks whose read of chunk fail_read and write of chunk
 * fail_write fail (beyond n: never). */
static void feed_init(struct feed *f, size_t n, size_t fail_read, size_t fail_write)
{
    memset(f, 0, sizeof *f);
    f->n = n;
    f->fail_read = fail_read;
    f->fail_write = fail_write;
}

static int run_feed(struct feed *f, size_t threads, size_t nslots)
{
    struct chunk *chunks = calloc(nslots, sizeof *chunks);
    void **slot = calloc(nslots, sizeof *slot);
    for (size_t q = 0; q < nslots; q++)
        slot[q] = &chunks[q];
    f->threads = threads;
    struct par_stream s = { slot, nslots, feed_read, feed_work, feed_write, f };
    int rc = par_stream_run((int)threads, &s);
    free(slot);
    free(chunks);
    return rc;
}

Test(par, stream_writes_in_input_order_for_any_threads)
{
    for (size_t t = 1; t <= 5; t++)
        for (size_t S = 2; S <= 7; S += 5) {
            struct feed f;
            feed_init(&f, 60, 1000, 1000);
            cr_assert_eq(run_feed(&f, t, S), 0);
            cr_assert_eq(f.nwritten, 60, "threads %zu, slots %zu: %zu chunks written", t, S, f.nwritten);
            for (size_t i = 0; i < 60; i++)
                cr_assert_eq(f.written[i], i, "threads %zu: chunk %zu written at place %zu", t, f.written[i], i);
            cr_assert_eq(f.bad_worker, 0, "a worker index was outside [0, threads)");
        }
}

Test(par, stream_writes_a_chunk_only_after_the_next_is_read)
{
    struct feed f;
    feed_init(&f, 20, 1000, 1000);
    cr_assert_eq(run_feed(&f, 3, 4), 0);
    for (size_t i = 0; i + 1 < f.nwritten; i++)
        cr_assert_geq(f.maxread_at_write[i], i + 2, "chunk %zu written when only %zu were read", i,
                      f.maxread_at_write[i]);
}

Test(par, stream_one_empty_last_chunk_is_still_written)
{
    struct feed f;
    feed_init(&f, 1, 1000, 1000);
    cr_assert_eq(run_feed(&f, 4, 2), 0);
    cr_assert_eq(f.nwritten, 1);
}

Test(par, stream_stops_at_a_failed_read)
{
    for (size_t t = 1; t <= 4; t++)
        for (size_t j = 0; j < 6; j++) {
            struct feed f;
            feed_init(&f, 50, j, 1000);
            cr_assert_eq(run_feed(&f, t, 2 * t + 2), -1);
            /* nothing from chunk j-1 on: it waited for chunk j */
            cr_assert_leq(f.nwritten + 1, j ? j : 1, "threads %zu, read %zu failed: %zu chunks written", t, j,
                          f.nwritten);
            for (size_t i = 0; i < f.nwritten; i++)
                cr_assert_eq(f.written[i], i);
        }
}

Test(par, stream_stops_at_a_failed_write)
{
    for (size_t t = 1; t <= 4; t++) {
        struct feed f;
        feed_init(&f, 50, 1000, 7);
        cr_assert_eq(run_feed(&f, t, 3), -1);
        cr_assert_eq(f.nwritten, 7, "threads %zu: %zu chunks written before the failed one", t, f.nwritten);
    }
}
