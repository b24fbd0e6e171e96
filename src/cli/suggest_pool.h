/* suggest_pool.h -- the rows of a CSV file scored by a saved model, held in
 * memory with their features: what `suggest` ranks.  Private to src/cli. */
#ifndef VECSIFT_CLI_SUGGEST_POOL_H
#define VECSIFT_CLI_SUGGEST_POOL_H

#include <stddef.h>

#include "common.h"
#include "vecsift/fmat.h"

struct err;
struct model;

struct suggest_pool {
    size_t n, ncols;
    char **cells;       /* (n, ncols), owned */
    char **header;      /* (ncols), owned */
    double *P;          /* (n, K) */
    int *empty;         /* (n) no token had a vector or column */
    struct fmat X;      /* (n, D) the model's features */
    double *norm;       /* (n) Euclidean norms of the rows of X */
};

/* Read every row of 'path' (text columns from 'da', else the model's) and
 * route each (route_batch, keeping the feature rows).  The header may
 * not hold a column named in 'reserved' (nreserved names): the output adds
 * them.  Returns 0, or -1 with 'e' set (file:line). */
int suggest_pool_load(struct suggest_pool *pl, const char *path, const struct model *m, const struct data_args *da,
                const char *const *reserved, size_t nreserved, struct err *e);
void suggest_pool_release(struct suggest_pool *pl);

/* Row i of X dotted with row j (dense, or sparse with ascending columns). */
double suggest_pool_dot(const struct fmat *X, size_t i, size_t j);

#endif
