/* par.c -- a counter-fed worker pool for independent tasks, and ordered
 * streams of chunks (see par.h). */
#include "vecsift/par.h"

#include <pthread.h>

#include <assert.h>
#include <stdlib.h>

#include "vecsift/xalloc.h"

struct pool {
    pthread_mutex_t lock;
    size_t next, n;
    void (*fn)(void *, size_t);
    void *ctx;
};

static void *worker(void *arg)
{
    struct pool *p = arg;
    for (;;) {
        pthread_mutex_lock(&p->lock);
        size_t i = p->next < p->n ? p->next++ : p->n;
        pthread_mutex_unlock(&p->lock);
        if (i >= p->n)
            return NULL;
        p->fn(p->ctx, i);
    }
}

void par_for(int threads, size_t n, void (*fn)(void *ctx, size_t i), void *ctx)
{
    struct pool p = { PTHREAD_MUTEX_INITIALIZER, 0, n, fn, ctx };
    size_t t = threads < 1 ? 1 : (size_t)threads;
    if (t > n)
        t = n ? n : 1;
    pthread_t *tid = xcalloc(t, sizeof *tid);
    int *started = xcalloc(t, sizeof *started);
    for (size_t i = 1; i < t; i++)
        started[i] = pthread_create(&tid[i], NULL, worker, &p) == 0;
    worker(&p); /* if a thread could not start, the others take its share */
    for (size_t i = 1; i < t; i++)
        if (started[i])
            pthread_join(tid[i], NULL);
    free(started);
    free(tid);
    pthread_mutex_destroy(&p.lock);
}

/* ---- streams ----
 *
 * Chunk number c lives in slot c % nslots.  Chunks [0, nwritten) are
 * written, [nwritten, nread) read, of which those below next_work have
 * been handed to a worker and those with done[] set are finished.  Every
 * thread runs the same loop: under the lock it takes the most useful step
 * open to it -- write the next chunk in order (frees a slot), read into a
 * free slot (keeps the workers fed), work on the oldest unclaimed chunk --
 * does it without the lock, records it and wakes the others.  Reading and
 * writing are one at a time each; a chunk's done flag is set by the thread
 * that worked it and read by the writer under the lock. */
struct stream {
    const struct par_stream *s;
    pthread_mutex_t lock;
    pthread_cond_t change;
    size_t nread, nwritten, next_work, active;
    int reading, writing, eof, failed;
    unsigned char *done;    /* (nslots) */
};

struct stream_arg {
    struct stream *st;
    size_t id;
};

enum step { STEP_NONE, STEP_WRITE, STEP_READ, STEP_WORK, STEP_QUIT };

/* The step open to a thread now (called with the lock held). */
static enum step pick(struct stream *st, size_t *chunk)
{
    size_t S = st->s->nslots;
    if (st->failed || (st->eof && st->nwritten == st->nread))
        return STEP_QUIT;
    if (!st->writing && st->nwritten < st->nread && st->done[st->nwritten % S] &&
        (st->nwritten + 1 < st->nread || st->eof)) {
        *chunk = st->nwritten;
        return STEP_WRITE;
    }
    if (!st->reading && !st->eof && st->nread < st->nwritten + S) {
        *chunk = st->nread;
        return STEP_READ;
    }
    if (st->next_work < st->nread) {
        *chunk = st->next_work++;
        return STEP_WORK;
    }
    return STEP_NONE;
}

static void stream_loop(struct stream *st, size_t id)
{
    const struct par_stream *s = st->s;
    size_t S = s->nslots;
    pthread_mutex_lock(&st->lock);
    for (;;) {
        size_t c = 0;
        enum step k = pick(st, &c);
        if (k == STEP_QUIT)
            break;
        if (k == STEP_NONE) {
            pthread_cond_wait(&st->change, &st->lock);
            continue;
        }
        void *chunk = s->slot[c % S];
        if (k == STEP_READ)
            st->reading = 1;
        else if (k == STEP_WRITE)
            st->writing = 1;
        st->active++;
        pthread_mutex_unlock(&st->lock);
        int rc = 0;
        if (k == STEP_READ)
            rc = s->read(s->ctx, chunk);
        else if (k == STEP_WORK)
            s->work(s->ctx, chunk, id);
        else if (s->write)
            rc = s->write(s->ctx, chunk) < 0 ? -1 : 0;
        pthread_mutex_lock(&st->lock);
        st->active--;
        if (k == STEP_READ) {
            st->reading = 0;
            if (rc < 0) {
                st->failed = 1;
            } else {
                st->done[c % S] = 0;
                st->nread++;
                st->eof = rc == 0;
            }
        } else if (k == STEP_WORK) {
            st->done[c % S] = 1;
        } else {
            st->writing = 0;
            if (rc < 0)
                st->failed = 1;
            else
                st->nwritten++;
        }
        pthread_cond_broadcast(&st->change);
    }
    /* Leave only when no step of this stream is still running: the caller
     * may free the chunks as soon as par_stream_run returns. */
    while (st->active > 0)
        pthread_cond_wait(&st->change, &st->lock);
    pthread_mutex_unlock(&st->lock);
}

static void *stream_thread(void *arg)
{
    struct stream_arg *a = arg;
    stream_loop(a->st, a->id);
    return NULL;
}

int par_stream_run(int threads, const struct par_stream *s)
{
    assert(s->nslots >= 2); /* a chunk waits for the next one to be read */
    struct stream st = { 0 };
    st.s = s;
    pthread_mutex_init(&st.lock, NULL);
    pthread_cond_init(&st.change, NULL);
    st.done = xcalloc(s->nslots ? s->nslots : 1, 1);
    size_t T = threads > 1 ? (size_t)threads : 1;
    pthread_t *tid = xcalloc(T, sizeof *tid);
    struct stream_arg *args = xcalloc(T, sizeof *args);
    size_t started = 0;
    for (size_t t = 1; t < T; t++) {
        args[started].st = &st;
        args[started].id = started + 1;
        if (pthread_create(&tid[started], NULL, stream_thread, &args[started]) != 0)
            break; /* fewer threads: the others do the work */
        started++;
    }
    stream_loop(&st, 0);
    for (size_t t = 0; t < started; t++)
        pthread_join(tid[t], NULL);
    int rc = st.failed ? -1 : 0;
    free(args);
    free(tid);
    free(st.done);
    pthread_cond_destroy(&st.change);
    pthread_mutex_destroy(&st.lock);
    return rc;
}
