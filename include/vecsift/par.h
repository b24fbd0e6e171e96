/* par.h -- the one parallel engine: independent tasks on a few threads,
 * and streams of chunks handed on in input order.
 *
 * par_for: tasks are handed out one at a time from a shared counter, so
 * uneven tasks balance themselves.  Each task must write only its own
 * results; then the outcome does not depend on the number of threads or
 * the order tasks ran.
 *
 * par_stream: a reader produces chunks in order, workers process them
 * (any chunk on any thread), a writer consumes them in input order.  The
 * same rule makes the output independent of the number of threads: the
 * work on a chunk may depend on that chunk alone.
 */
#ifndef VECSIFT_PAR_H
#define VECSIFT_PAR_H

#include <stddef.h>

/* Call fn(ctx, i) for every i in [0, n), on up to 'threads' threads (the
 * calling thread is one of them).  Returns when all are done. */
void par_for(int threads, size_t n, void (*fn)(void *ctx, size_t i), void *ctx);

/* A stream over the caller's chunk buffers slot[0..nslots) (nslots >= 2),
 * reused in turn; more slots than threads keep every thread busy.
 *   read(ctx, chunk): fill the chunk with the next part of the input.
 *     Returns 1 when more may follow, 0 when this was the last chunk (it
 *     may be empty; it is still worked and written), -1 on an error (the
 *     chunk is dropped and the stream stops).  Calls are one at a time, in
 *     input order, but not always on the same thread.
 *   work(ctx, chunk, worker): process one chunk; 'worker' in [0, threads)
 *     names the thread (for per-thread memory); chunks run in parallel.
 *   write(ctx, chunk) (may be NULL): consume chunks one at a time in input
 *     order; returns 0, or -1 to stop the stream.  A chunk is written only
 *     once the next one has been read (or the input has ended), so when
 *     reading chunk j fails no chunk from j-1 on has been written: with a
 *     first chunk of a few rows a bad row early in the input leaves
 *     nothing written at all. */
struct par_stream {
    void **slot;
    size_t nslots;
    int (*read)(void *ctx, void *chunk);
    void (*work)(void *ctx, void *chunk, size_t worker);
    int (*write)(void *ctx, void *chunk);
    void *ctx;
};

/* Run the stream on up to 'threads' threads (the calling thread is worker
 * 0; if the system refuses a thread the others do its share).  Returns 0
 * when every chunk was read, worked and written, or -1 when read or write
 * stopped it (no callback runs after that; the callbacks keep their own
 * error).  Returns once every thread has finished. */
int par_stream_run(int threads, const struct par_stream *s);

#endif
