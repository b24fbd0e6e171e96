/* predict_fields.c -- predict's (and serve's) label order and evidence
 * text (predict_fields.h).
 */
#include "predict_fields.h"

#include <stdio.h>
#include <string.h>

#include "vecsift/route.h"
#include "vecsift/xalloc.h"

void predict_label_order(const double *prob, size_t K, int *order)
{
    for (size_t k = 0; k < K; k++)
        order[k] = (int)k;
    /* insertion sort: stable, so equal probabilities keep label order */
    for (size_t a = 1; a < K; a++)
        for (size_t b = a; b > 0 && prob[order[b]] > prob[order[b - 1]]; b--) {
            int t = order[b];
            order[b] = order[b - 1];
            order[b - 1] = t;
        }
}

size_t predict_evidence(const struct route_result *r, char **buf, size_t *cap)
{
    size_t len = 0;
    *buf = xgrow(*buf, cap, 1, 1);
    (*buf)[0] = '\0';
    for (size_t q = 0; q < r->nwords; q++) {
        char item[256];
        int il = snprintf(item, sizeof item, "%s%.80s (%+.3f)", q ? "; " : "", r->words[q], r->push[q]);
        *buf = xgrow(*buf, cap, len + (size_t)il + 1, 1);
        memcpy(*buf + len, item, (size_t)il + 1);
        len += (size_t)il;
    }
    return len;
}
