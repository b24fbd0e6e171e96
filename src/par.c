/* par.c -- a counter-fed worker pool for independent tasks (see par.h). */
#include "vecsift/par.h"

#include <pthread.h>

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
