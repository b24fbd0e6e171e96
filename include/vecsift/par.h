/* par.h -- run n independent tasks on a few threads.
 *
 * Tasks are handed out one at a time from a shared counter, so uneven tasks
 * balance themselves.  Each task must write only its own results; then the
 * outcome does not depend on the number of threads or the order tasks ran.
 */
#ifndef VECSIFT_PAR_H
#define VECSIFT_PAR_H

#include <stddef.h>

/* Call fn(ctx, i) for every i in [0, n), on up to 'threads' threads (the
 * calling thread is one of them).  Returns when all are done. */
void par_for(int threads, size_t n, void (*fn)(void *ctx, size_t i), void *ctx);

#endif
