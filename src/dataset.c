/* dataset.c -- a labelled CSV file read whole into memory (see dataset.h).
 * It reads through csv.h and neither tokenises nor checks texts for
 * emptiness beyond counting; commands decide what an empty text means.
 */
#include "vecsift/dataset.h"

#include <stdlib.h>
#include <string.h>

#include "vecsift/csv.h"
#include "vecsift/err.h"
#include "vecsift/xalloc.h"

static int blank(const char *s)
{
    for (; *s; s++)
        if (*s != ' ' && *s != '\t' && *s != '\r' && *s != '\n')
            return 0;
    return 1;
}

static int cmp_str(const void *a, const void *b)
{
    return strcmp(*(char *const *)a, *(char *const *)b);
}

int dataset_label_index(const struct dataset *d, const char *label)
{
    size_t lo = 0, hi = d->nlabels;
    while (lo < hi) {
        size_t mid = lo + (hi - lo) / 2;
        int c = strcmp(d->labels[mid], label);
        if (c == 0)
            return (int)mid;
        if (c < 0)
            lo = mid + 1;
        else
            hi = mid;
    }
    return -1;
}

/* Sorted distinct labels, and y for every row. */
static void index_labels(struct dataset *d)
{
    char **tmp = xmalloc(xmul(d->n, sizeof *tmp));
    memcpy(tmp, d->label, d->n * sizeof *tmp);
    qsort(tmp, d->n, sizeof *tmp, cmp_str);
    d->labels = xmalloc(xmul(d->n, sizeof *d->labels));
    for (size_t i = 0; i < d->n; i++)
        if (d->nlabels == 0 || strcmp(d->labels[d->nlabels - 1], tmp[i]))
            d->labels[d->nlabels++] = xstrdup(tmp[i]);
    free(tmp);
    d->y = xmalloc(xmul(d->n, sizeof *d->y));
    for (size_t i = 0; i < d->n; i++)
        d->y[i] = dataset_label_index(d, d->label[i]);
}

size_t dataset_join_text(char **buf, size_t *cap, const char *const *parts, size_t n)
{
    size_t len = 0;
    *buf = xgrow(*buf, cap, 1, 1);
    for (size_t t = 0; t < n; t++) {
        size_t l = strlen(parts[t]);
        *buf = xgrow(*buf, cap, len + l + 2, 1);
        if (t)
            (*buf)[len++] = ' ';
        memcpy(*buf + len, parts[t], l);
        len += l;
    }
    (*buf)[len] = '\0';
    return len;
}

int dataset_load(struct dataset *d, const char *path, const struct dataset_options *o, struct err *e)
{
    memset(d, 0, sizeof *d);
    csv_reader *r = NULL;
    long *tc = NULL;            /* (ntext) column indices */
    const char **parts = NULL;  /* (ntext) the row's text cells */
    long lc = -1, gc = -1;
    size_t cap = 0;
    char *join = NULL;
    size_t jcap = 0;

    if (o->ntext == 0) {
        err_set(e, NULL, 0, "no text column given");
        goto fail;
    }
    r = csv_open(path, &o->csv, e);
    if (!r)
        goto fail;
    d->path = xstrdup(csv_path(r));
    tc = xmalloc(xmul(o->ntext, sizeof *tc));
    parts = xcalloc(o->ntext, sizeof *parts);
    for (size_t k = 0; k < o->ntext; k++)
        if ((tc[k] = csv_require_col(r, o->text_cols[k], e)) < 0)
            goto fail;
    if (o->label_col && (lc = csv_require_col(r, o->label_col, e)) < 0)
        goto fail;
    if (o->group_col && (gc = csv_require_col(r, o->group_col, e)) < 0)
        goto fail;

    int k;
    while ((k = csv_next(r, e)) == 1) {
        if (d->n == cap) {
            size_t c = cap;
            d->text = xgrow(d->text, &c, d->n + 1, sizeof *d->text);
            c = cap;
            d->line = xgrow(d->line, &c, d->n + 1, sizeof *d->line);
            if (lc >= 0) {
                c = cap;
                d->label = xgrow(d->label, &c, d->n + 1, sizeof *d->label);
            }
            if (gc >= 0) {
                c = cap;
                d->group = xgrow(d->group, &c, d->n + 1, sizeof *d->group);
            }
            cap = c;
        }
        size_t i = d->n;
        if (lc >= 0) {
            const char *lab = csv_field(r, (size_t)lc);
            if (blank(lab)) {
                err_set(e, d->path, csv_line(r), "row has no label in column '%s'", o->label_col);
                goto fail;
            }
            d->label[i] = xstrdup(lab);
        }
        if (gc >= 0)
            d->group[i] = xstrdup(csv_field(r, (size_t)gc));
        for (size_t t = 0; t < o->ntext; t++)
            parts[t] = csv_field(r, (size_t)tc[t]);
        size_t jl = dataset_join_text(&join, &jcap, parts, o->ntext);
        d->text[i] = xstrndup(join, jl);
        d->line[i] = csv_line(r);
        if (blank(d->text[i]))
            d->empty_text++;
        d->n++;
    }
    if (k < 0)
        goto fail;
    if (d->n == 0) {
        err_set(e, d->path, 0, "no data rows after the header");
        goto fail;
    }
    d->replaced = csv_replaced(r);
    if (lc >= 0)
        index_labels(d);
    csv_close(r);
    free(tc);
    free(join);
    free(parts);
    return 0;
fail:
    csv_close(r);
    free(tc);
    free(join);
    free(parts);
    dataset_release(d);
    return -1;
}

void dataset_release(struct dataset *d)
{
    if (!d)
        return;
    for (size_t i = 0; i < d->n; i++) {
        free(d->text[i]);
        if (d->label)
            free(d->label[i]);
        if (d->group)
            free(d->group[i]);
    }
    for (size_t i = 0; i < d->nlabels; i++)
        free(d->labels[i]);
    free(d->text);
    free(d->label);
    free(d->group);
    free(d->line);
    free(d->labels);
    free(d->y);
    free(d->path);
    memset(d, 0, sizeof *d);
}
