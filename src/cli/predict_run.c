/* predict_run.c -- predict's chunks of rows (predict_run.h): reading them
 * and routing them.  No threads here (par.h runs the stream) and no
 * output (cmd_predict.c writes). */
#include "predict_run.h"

#include <stdlib.h>
#include <string.h>

#include "vecsift/err.h"
#include "vecsift/xalloc.h"

void predict_batch_init(struct batch *b, size_t ncols, size_t ntext, size_t K)
{
    memset(b, 0, sizeof *b);
    b->cells = xcalloc(xmul(PREDICT_CHUNK, ncols), sizeof *b->cells);
    b->cell_off = xcalloc(xmul(PREDICT_CHUNK, ncols), sizeof *b->cell_off);
    b->parts = xcalloc(xmul(PREDICT_CHUNK, ntext ? ntext : 1), sizeof *b->parts);
    b->prob = xcalloc(xmul(PREDICT_CHUNK, K), sizeof *b->prob);
    b->res = xcalloc(PREDICT_CHUNK, sizeof *b->res);
}

/* Forget the rows (and their top words), keep the memory. */
void predict_batch_clear(struct batch *b)
{
    for (size_t q = 0; b->res && q < b->n; q++)
        route_result_release(&b->res[q]);
    b->n = 0;
    b->tlen = 0;
}

void predict_batch_release(struct batch *b)
{
    predict_batch_clear(b);
    free(b->cells);
    free(b->cell_off);
    free(b->parts);
    free(b->text);
    free(b->prob);
    free(b->res);
    memset(b, 0, sizeof *b);
}

int predict_batch_read(struct batch *b, csv_reader *r, size_t ncols, const long *textcol, size_t ntext,
                       struct err *e)
{
    predict_batch_clear(b);
    int got = 1;
    while (b->n < PREDICT_CHUNK && (got = csv_next(r, e)) == 1) {
        for (size_t c = 0; c < ncols; c++) {
            /* the reader refuses NUL bytes: the length is the string's */
            size_t len = csv_field_len(r, c);
            b->text = xgrow(b->text, &b->tcap, b->tlen + len + 1, 1);
            memcpy(b->text + b->tlen, csv_field(r, c), len + 1);
            b->cell_off[b->n * ncols + c] = b->tlen;
            b->tlen += len + 1;
        }
        b->n++;
    }
    if (got < 0)
        return -1;
    for (size_t q = 0; q < b->n * ncols; q++)
        b->cells[q] = b->text + b->cell_off[q];
    for (size_t i = 0; i < b->n; i++)
        for (size_t t = 0; t < ntext; t++)
            b->parts[i * ntext + t] = b->cells[i * ncols + (size_t)textcol[t]];
    return got;
}

void predict_batch_route(struct batch *b, route_worker *w, size_t ntext, size_t K)
{
    for (size_t i = 0; i < b->n; i++) {
        struct err e = ERR_INIT;
        /* The reader has checked the UTF-8: route_text cannot fail here. */
        (void)route_text(w, b->parts + i * ntext, ntext, b->prob + i * K, &b->res[i], NULL, 0, &e);
    }
}
