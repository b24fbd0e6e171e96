/* metrics.c -- classification scores from accumulated rows; spread over
 * folds; confidence cut-off table.  Conventions (0/0, log loss clipping,
 * Brier) are stated in metrics.h.  It prints nothing.
 */
#include "vecsift/metrics.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/err.h"
#include "vecsift/xalloc.h"

struct metrics {
    int K;
    size_t n, cap;
    int *gold, *pred;       /* (n) */
    double *prob;           /* (n, K) row-major; unused rows when !has_prob */
    size_t n_prob;          /* rows that came with probabilities */
};

/* ---- accumulation ---- */

metrics *metrics_new(int n_labels)
{
    metrics *m = xcalloc(1, sizeof *m);
    m->K = n_labels;
    return m;
}

void metrics_free(metrics *m)
{
    if (!m)
        return;
    free(m->gold);
    free(m->pred);
    free(m->prob);
    free(m);
}

int metrics_add(metrics *m, int gold, int pred, const double *prob, struct err *e)
{
    const int K = m->K;
    if (gold < 0 || gold >= K || pred < 0 || pred >= K)
        return err_set(e, NULL, 0, "row %zu: label index outside [0, %d) (gold %d, predicted %d)",
                       m->n + 1, K, gold, pred);
    if (prob)
        for (int j = 0; j < K; j++)
            if (!isfinite(prob[j]) || prob[j] < 0)
                return err_set(e, NULL, 0, "row %zu: probability %d is %g, not a finite non-negative number",
                               m->n + 1, j, prob[j]);
    if (m->n == m->cap) {
        size_t cap = m->cap;
        m->gold = xgrow(m->gold, &cap, m->n + 1, sizeof *m->gold);
        cap = m->cap;
        m->pred = xgrow(m->pred, &cap, m->n + 1, sizeof *m->pred);
        m->prob = xreallocarray(m->prob, xmul(cap, (size_t)K), sizeof *m->prob);
        m->cap = cap;
    }
    m->gold[m->n] = gold;
    m->pred[m->n] = pred;
    double *p = m->prob + m->n * (size_t)K;
    if (prob) {
        memcpy(p, prob, (size_t)K * sizeof *p);
        m->n_prob++;
    } else {
        for (int j = 0; j < K; j++)
            p[j] = NAN;
    }
    m->n++;
    return 0;
}

size_t metrics_rows(const metrics *m)
{
    return m->n;
}

/* ---- scores ---- */

static double ratio(double num, double den)
{
    return den > 0 ? num / den : 0.0;   /* METRICS_ZERO_DIVISION_RULE */
}

void metrics_compute(const metrics *m, struct metrics_report *out)
{
    const int K = m->K;
    const size_t N = m->n;
    out->n_labels = K;
    out->n_rows = N;
    out->label = xcalloc((size_t)K, sizeof *out->label);
    out->conf = xcalloc(xmul((size_t)K, (size_t)K), sizeof *out->conf);
    size_t *conf = out->conf;
    size_t correct = 0;
    for (size_t i = 0; i < N; i++) {
        conf[(size_t)m->gold[i] * K + m->pred[i]]++;
        correct += m->gold[i] == m->pred[i];
    }
    out->accuracy = ratio((double)correct, (double)N);
    double macro = 0, weighted = 0;
    for (int j = 0; j < K; j++) {
        struct metrics_label *L = &out->label[j];
        size_t tp = conf[(size_t)j * K + j], support = 0, predicted = 0;
        L->mistaken_for = -1;
        for (int q = 0; q < K; q++) {
            size_t row = conf[(size_t)j * K + q];
            support += row;
            predicted += conf[(size_t)q * K + j];
            if (q != j && row > 0 && row > L->mistaken_count) {
                L->mistaken_for = q;
                L->mistaken_count = row;
            }
        }
        L->support = support;
        L->predicted = predicted;
        L->precision = ratio((double)tp, (double)predicted);
        L->recall = ratio((double)tp, (double)support);
        L->f1 = ratio(2 * L->precision * L->recall, L->precision + L->recall);
        macro += L->f1;
        weighted += L->f1 * (double)support;
    }
    out->macro_f1 = macro / K;
    out->weighted_f1 = ratio(weighted, (double)N);

    out->log_loss = out->brier = NAN;
    if (N > 0 && m->n_prob == N) {
        const double eps = METRICS_LOG_LOSS_EPS;
        double ll = 0, br = 0;
        for (size_t i = 0; i < N; i++) {
            const double *p = m->prob + i * (size_t)K;
            double s = 0;
            for (int j = 0; j < K; j++)
                s += fmin(fmax(p[j], eps), 1 - eps);
            double pg = fmin(fmax(p[m->gold[i]], eps), 1 - eps) / s;
            ll -= log(pg);
            for (int j = 0; j < K; j++) {
                double d = p[j] - (j == m->gold[i] ? 1.0 : 0.0);
                br += d * d;
            }
        }
        out->log_loss = ll / (double)N;
        out->brier = br / (double)N;
    }
}

void metrics_report_release(struct metrics_report *r)
{
    if (!r)
        return;
    free(r->label);
    free(r->conf);
    *r = (struct metrics_report)METRICS_REPORT_INIT;
}

/* ---- spread over folds ---- */

/* Mean and sample sd of x[0], x[stride], ... (n values). */
static struct metrics_spread spread(const double *x, size_t n, size_t stride)
{
    double s = 0;
    for (size_t t = 0; t < n; t++)
        s += x[t * stride];
    double mean = s / (double)n, ss = 0;
    for (size_t t = 0; t < n; t++)
        ss += (x[t * stride] - mean) * (x[t * stride] - mean);
    return (struct metrics_spread){ mean, n > 1 ? sqrt(ss / (double)(n - 1)) : NAN };
}

int metrics_summarize(const struct metrics_report *folds, size_t n,
                      struct metrics_fold_summary *out, struct err *e)
{
    memset(out, 0, sizeof *out);
    if (n == 0)
        return err_set(e, NULL, 0, "no folds to summarize");
    const int K = folds[0].n_labels;
    for (size_t t = 1; t < n; t++)
        if (folds[t].n_labels != K)
            return err_set(e, NULL, 0, "fold %zu has %d labels, fold 1 has %d", t + 1, folds[t].n_labels, K);
    /* Gather each score into a column of x: (n, 5 + 3K). */
    const size_t W = 5 + 3 * (size_t)K;
    double *x = xmalloc(xmul(xmul(n, W), sizeof *x));
    for (size_t t = 0; t < n; t++) {
        double *row = x + t * W;
        const struct metrics_report *f = &folds[t];
        row[0] = f->accuracy;
        row[1] = f->macro_f1;
        row[2] = f->weighted_f1;
        row[3] = f->log_loss;
        row[4] = f->brier;
        for (int j = 0; j < K; j++) {
            row[5 + j] = f->label[j].precision;
            row[5 + K + j] = f->label[j].recall;
            row[5 + 2 * K + j] = f->label[j].f1;
        }
    }
    out->n_labels = K;
    out->n_folds = n;
    out->accuracy = spread(x + 0, n, W);
    out->macro_f1 = spread(x + 1, n, W);
    out->weighted_f1 = spread(x + 2, n, W);
    out->log_loss = spread(x + 3, n, W);    /* NAN propagates */
    out->brier = spread(x + 4, n, W);
    out->precision = xmalloc((size_t)K * sizeof *out->precision);
    out->recall = xmalloc((size_t)K * sizeof *out->recall);
    out->f1 = xmalloc((size_t)K * sizeof *out->f1);
    for (int j = 0; j < K; j++) {
        out->precision[j] = spread(x + 5 + j, n, W);
        out->recall[j] = spread(x + 5 + K + j, n, W);
        out->f1[j] = spread(x + 5 + 2 * K + j, n, W);
    }
    free(x);
    return 0;
}

void metrics_fold_summary_release(struct metrics_fold_summary *s)
{
    if (!s)
        return;
    free(s->precision);
    free(s->recall);
    free(s->f1);
    memset(s, 0, sizeof *s);
}

/* ---- confidence cut-offs ---- */

struct conf_row {
    double conf;
    int correct;
};

static int by_conf_desc(const void *a, const void *b)
{
    double x = ((const struct conf_row *)a)->conf, y = ((const struct conf_row *)b)->conf;
    return (x < y) - (x > y);
}

struct metrics_cutoff *metrics_cutoffs(const metrics *m, size_t *n_out)
{
    const int K = m->K;
    const size_t N = m->n;
    *n_out = 0;
    if (N == 0 || m->n_prob != N)
        return NULL;
    struct conf_row *r = xmalloc(xmul(N, sizeof *r));
    for (size_t i = 0; i < N; i++) {
        const double *p = m->prob + i * (size_t)K;
        double c = p[0];
        for (int j = 1; j < K; j++)
            c = fmax(c, p[j]);
        r[i] = (struct conf_row){ c, m->gold[i] == m->pred[i] };
    }
    qsort(r, N, sizeof *r, by_conf_desc);
    struct metrics_cutoff *c = xmalloc(xmul(N, sizeof *c));
    size_t nc = 0, kept = 0, right = 0;
    for (size_t i = 0; i < N; i++) {
        kept++;
        right += (size_t)r[i].correct;
        /* Emit once all rows tied at this confidence are in. */
        if (i + 1 == N || r[i + 1].conf != r[i].conf)
            c[nc++] = (struct metrics_cutoff){ r[i].conf, (double)right / (double)kept,
                                               (double)kept / (double)N, kept };
    }
    free(r);
    *n_out = nc;
    return c;
}

long metrics_cutoff_for_precision(const struct metrics_cutoff *c, size_t n, double target)
{
    /* Entries run from the highest threshold down: the last one reaching the
     * target has the smallest threshold and keeps the most rows. */
    for (size_t t = n; t-- > 0;)
        if (c[t].precision >= target)
            return (long)t;
    return -1;
}
