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

/* A row given i and its P[j] - P[i]: sorted largest first, ties by row. */
struct gap_row {
    double gap;
    size_t row;
};

static int by_gap_desc(const void *a, const void *b)
{
    const struct gap_row *x = a, *y = b;
    if (x->gap != y->gap)
        return x->gap > y->gap ? -1 : 1;
    return (x->row > y->row) - (x->row < y->row);
}

/* Prune by noise rate (the paper's section 3.3): calibrate the confident
 * joint so that each row sums to the number of rows given that label,
 * normalise it to the joint distribution Q, and for every off-diagonal cell
 * (i, j) flag the floor(N Q[i][j] + 0.5) rows given i with the largest
 * P[j] - P[i].  'pick' (N) gets the suggested label of each flagged row
 * (the cell's j of highest P[j] when several cells flag it), -1 elsewhere. */
static void noise_rate_pick(const double *P, const int *given, size_t N, int K, const size_t *joint,
                            const size_t *cnt, int *pick)
{
    size_t KK = (size_t)K * (size_t)K;
    double *Q = xcalloc(KK, sizeof *Q), total = 0;
    for (int i = 0; i < K; i++) {
        size_t row = 0;
        for (int j = 0; j < K; j++)
            row += joint[(size_t)i * K + j];
        for (int j = 0; j < K && row; j++)
            Q[(size_t)i * K + j] = (double)joint[(size_t)i * K + j] / (double)row * (double)cnt[i];
    }
    for (size_t t = 0; t < KK; t++)
        total += Q[t];
    size_t *rows = xmalloc((N ? N : 1) * sizeof *rows);
    struct gap_row *gr = xmalloc((N ? N : 1) * sizeof *gr);
    for (size_t r = 0; r < N; r++)
        pick[r] = -1;
    for (int i = 0; i < K && total > 0; i++) {
        size_t n = 0;
        for (size_t r = 0; r < N; r++)
            if (given[r] == i)
                rows[n++] = r;
        for (int j = 0; j < K; j++) {
            if (j == i)
                continue;
            double want = floor((double)N * (Q[(size_t)i * K + j] / total) + 0.5);
            size_t m = want < (double)n ? (size_t)want : n;
            if (m == 0)
                continue;
            for (size_t t = 0; t < n; t++) {
                const double *p = P + rows[t] * (size_t)K;
                gr[t] = (struct gap_row){ p[j] - p[i], rows[t] };
            }
            qsort(gr, n, sizeof *gr, by_gap_desc);
            for (size_t t = 0; t < m; t++) {
                const double *p = P + gr[t].row * (size_t)K;
                if (pick[gr[t].row] < 0 || p[j] > p[pick[gr[t].row]])
                    pick[gr[t].row] = j;
            }
        }
    }
    free(gr);
    free(rows);
    free(Q);
}

int labelcheck_run(const double *P, const int *given, size_t N, int K, const struct labelcheck_opts *opt,
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

    int *pick = xmalloc((N ? N : 1) * sizeof *pick);
    for (size_t i = 0; i < N; i++) {
        const double *p = P + i * (size_t)K;
        int best = -1;
        for (int j = 0; j < K; j++)
            if (cnt[j] && p[j] >= out->threshold[j] && (best < 0 || p[j] > p[best]))
                best = j;
        pick[i] = best < 0 || best == given[i] ? -1 : best;
        if (best >= 0)
            out->joint[(size_t)given[i] * K + best]++;
    }
    if (opt->select == LABELCHECK_NOISE_RATE)
        noise_rate_pick(P, given, N, K, out->joint, cnt, pick);
    size_t cap = 0;
    for (size_t i = 0; i < N; i++) {
        if (pick[i] < 0)
            continue;
        out->suspect = xgrow(out->suspect, &cap, out->n_suspects + 1, sizeof *out->suspect);
        out->suspect[out->n_suspects++] = (struct labelcheck_suspect){
            i, given[i], pick[i], rank_score(P + i * (size_t)K, given[i], K, opt->rank) };
    }
    if (out->n_suspects > 1)
        qsort(out->suspect, out->n_suspects, sizeof *out->suspect, by_score_desc);
    free(pick);
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
