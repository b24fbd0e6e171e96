/* suggest_pool.c -- the pool rows suggest ranks, scored by a saved model
 * (see suggest_pool.h),
 * through the library's one prediction path (route.h). */
#include "suggest_pool.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/csv.h"
#include "vecsift/err.h"
#include "vecsift/model.h"
#include "vecsift/route.h"
#include "vecsift/xalloc.h"

int suggest_pool_load(struct suggest_pool *pl, const char *path, const struct model *m, const struct data_args *da,
                const char *const *reserved, size_t nreserved, struct err *e)
{
    csv_reader *r = csv_open(path, &da->csv, e);
    if (!r)
        return -1;
    int rc = -1;
    size_t ntext = da->ntext ? da->ntext : m->ntext, cap = 0;
    long *tc = xcalloc(ntext, sizeof *tc);
    const char **parts = NULL;
    struct route_result *res = NULL;
    for (size_t t = 0; t < ntext; t++)
        if ((tc[t] = csv_require_col(r, da->ntext ? da->text_cols[t] : m->text_cols[t], e)) < 0)
            goto out;
    pl->ncols = csv_ncols(r);
    pl->header = xcalloc(pl->ncols, sizeof *pl->header);
    for (size_t c = 0; c < pl->ncols; c++) {
        pl->header[c] = xstrdup(csv_colname(r, c));
        for (size_t q = 0; q < nreserved; q++)
            if (strcmp(pl->header[c], reserved[q]) == 0) {
                err_set(e, csv_path(r), 1, "the input already has a column '%s'", reserved[q]);
                err_hint(e, strcmp(reserved[q], m->label_col) == 0
                                ? "the rows should be unlabelled: drop the label column first"
                                : "rename or drop that column first");
                goto out;
            }
    }
    int got;
    while ((got = csv_next(r, e)) == 1) {
        pl->cells = xgrow(pl->cells, &cap, (pl->n + 1) * pl->ncols, sizeof *pl->cells);
        for (size_t c = 0; c < pl->ncols; c++)
            pl->cells[pl->n * pl->ncols + c] = xstrndup(csv_field(r, c), csv_field_len(r, c));
        pl->n++;
    }
    if (got < 0)
        goto out;
    if (pl->n == 0) {
        err_set(e, csv_path(r), 0, "no data rows after the header");
        goto out;
    }
    pl->P = xcalloc(xmul(pl->n, m->k), sizeof *pl->P);
    pl->empty = xcalloc(pl->n, sizeof *pl->empty);
    pl->norm = xcalloc(pl->n, sizeof *pl->norm);
    res = xcalloc(pl->n, sizeof *res);
    parts = xcalloc(xmul(pl->n, ntext ? ntext : 1), sizeof *parts);
    for (size_t i = 0; i < pl->n; i++)
        for (size_t t = 0; t < ntext; t++)
            parts[i * ntext + t] = pl->cells[i * pl->ncols + (size_t)tc[t]];
    /* The reader has checked the UTF-8: route_batch cannot fail here. */
    struct route_params rp = ROUTE_PARAMS_INIT;
    (void)route_batch(m, &rp, da->threads, parts, ntext, pl->n, pl->P, res, &pl->X, e);
    for (size_t i = 0; i < pl->n; i++) {
        pl->empty[i] = res[i].empty;
        pl->norm[i] = sqrt(suggest_pool_dot(&pl->X, i, i));
    }
    rc = 0;
out:
    free(res);
    free(parts);
    free(tc);
    csv_close(r);
    return rc;
}

void suggest_pool_release(struct suggest_pool *pl)
{
    for (size_t q = 0; pl->cells && q < pl->n * pl->ncols; q++)
        free(pl->cells[q]);
    for (size_t c = 0; pl->header && c < pl->ncols; c++)
        free(pl->header[c]);
    free(pl->cells);
    free(pl->header);
    free(pl->P);
    free(pl->empty);
    free(pl->norm);
    fmat_release(&pl->X);
}

double suggest_pool_dot(const struct fmat *X, size_t i, size_t j)
{
    double s = 0;
    if (!X->sparse) {
        const double *a = X->x + i * X->d, *b = X->x + j * X->d;
        for (size_t k = 0; k < X->d; k++)
            s += a[k] * b[k];
        return s;
    }
    size_t p = X->rowptr[i], pe = X->rowptr[i + 1], q = X->rowptr[j], qe = X->rowptr[j + 1];
    while (p < pe && q < qe) {
        if (X->col[p] == X->col[q])
            s += X->val[p++] * X->val[q++];
        else if (X->col[p] < X->col[q])
            p++;
        else
            q++;
    }
    return s;
}
