/* labelcheck.c -- confident-learning label audit: thresholds, confident
 * joint, suspects ranked by normalised margin or self-confidence.  The method and its citation
 * are in labelcheck.h.
 */
#include "vecsift/labelcheck.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/err.h"
#include "vecsift/xalloc.h"

static int by_score_desc(const void *a, const void *b)
{
    const struct labelcheck_suspect *x = a, *y = b;
    if (x->score != y->score)
        return x->score > y->score ? -1 : 1;
    return (x->row > y->row) - (x->row < y->row);
}

/* The ranking key of row 'p' given label 'g' (labelcheck.h, step 4). */
static double rank_score(const double *p, int g, int K, enum labelcheck_rank rank)
{
    if (rank == LABELCHECK_BY_CONFIDENCE)
        return 1.0 - p[g];
    double other = -1.0;
    for (int j = 0; j < K; j++)
        if (j != g && p[j] > other)
            other = p[j];
    return other - p[g];
}

int labelcheck_run(const double *P, const int *given, size_t N, int K, enum labelcheck_rank rank,
                   struct labelcheck_result *out, struct err *e)
{
    *out = (struct labelcheck_result)LABELCHECK_RESULT_INIT;
    if (K < 2)
        return err_set(e, NULL, 0, "a label audit needs at least 2 labels, got %d", K);
    for (size_t i = 0; i < N; i++) {
        if (given[i] < 0 || given[i] >= K)
            return err_set(e, NULL, 0, "row %zu: label index %d is outside [0, %d)", i + 1, given[i], K);
        for (int j = 0; j < K; j++) {
            double p = P[i * (size_t)K + j];
            if (!isfinite(p) || p < 0)
                return err_set(e, NULL, 0, "row %zu: probability %d is %g, not a finite non-negative number",
                               i + 1, j, p);
        }
    }
    out->n_labels = K;
    out->threshold = xmalloc((size_t)K * sizeof *out->threshold);
    out->joint = xcalloc(xmul((size_t)K, (size_t)K), sizeof *out->joint);
    size_t *cnt = xcalloc((size_t)K, sizeof *cnt);
    double *sum = xcalloc((size_t)K, sizeof *sum);
    for (size_t i = 0; i < N; i++) {
        cnt[given[i]]++;
        sum[given[i]] += P[i * (size_t)K + given[i]];
    }
    for (int j = 0; j < K; j++)
        out->threshold[j] = cnt[j] ? sum[j] / (double)cnt[j] : NAN;

    size_t cap = 0;
    for (size_t i = 0; i < N; i++) {
        const double *p = P + i * (size_t)K;
        int best = -1;
        for (int j = 0; j < K; j++)
            if (cnt[j] && p[j] >= out->threshold[j] && (best < 0 || p[j] > p[best]))
                best = j;
        if (best < 0)
            continue;
        out->joint[(size_t)given[i] * K + best]++;
        if (best == given[i])
            continue;
        out->suspect = xgrow(out->suspect, &cap, out->n_suspects + 1, sizeof *out->suspect);
        out->suspect[out->n_suspects++] = (struct labelcheck_suspect){
            i, given[i], best, rank_score(p, given[i], K, rank) };
    }
    if (out->n_suspects > 1)
        qsort(out->suspect, out->n_suspects, sizeof *out->suspect, by_score_desc);
    free(cnt);
    free(sum);
    return 0;
}

void labelcheck_release(struct labelcheck_result *r)
{
    if (!r)
        return;
    free(r->threshold);
    free(r->joint);
    free(r->suspect);
    *r = (struct labelcheck_result)LABELCHECK_RESULT_INIT;
}
