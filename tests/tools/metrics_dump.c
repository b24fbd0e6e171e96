/* metrics_dump.c -- test-only: read "gold,predicted,p0,...,pK-1" rows (no
 * header, label indices, K from argv) and print every pooled score as JSON,
 * for tests/ext/metrics_vs_sklearn.py.  Not installed.
 *
 *   metrics_dump K FILE          pooled scores
 *   metrics_dump K FILE folds    rows start with a fold number (0..63): also
 *                                the mean and sd over folds ("per_fold")
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/err.h"
#include "vecsift/metrics.h"
#include "vecsift/xalloc.h"

static void num(const char *key, double v, const char *sep)
{
    if (isnan(v))
        printf("\"%s\": null%s", key, sep);
    else
        printf("\"%s\": %.17g%s", key, v, sep);
}

int main(int argc, char **argv)
{
    int by_fold = argc == 4 && !strcmp(argv[3], "folds");
    if (argc != 3 && !by_fold) {
        fprintf(stderr, "usage: metrics_dump K FILE [folds]\n");
        return 2;
    }
    int K = (int)strtol(argv[1], NULL, 10);
    FILE *fp = fopen(argv[2], "r");
    if (K < 1 || !fp) {
        fprintf(stderr, "metrics_dump: bad K or cannot open %s\n", argv[2]);
        return 2;
    }
    metrics *m = metrics_new(K);
    enum { MAX_FOLDS = 64 };
    metrics *fm[MAX_FOLDS] = { NULL };
    int n_folds = 0;
    double *p = xmalloc((size_t)K * sizeof *p);
    char *line = NULL;
    size_t cap = 0;
    long ln = 0;
    struct err e = ERR_INIT;
    while (getline(&line, &cap, fp) != -1) {
        ln++;
        char *s = line, *end;
        int fold = 0;
        if (by_fold) {
            fold = (int)strtol(s, &end, 10);
            if (*end != ',' || fold < 0 || fold >= MAX_FOLDS)
                goto bad;
            s = end + 1;
            if (fold >= n_folds)
                n_folds = fold + 1;
            if (!fm[fold])
                fm[fold] = metrics_new(K);
        }
        int gold = (int)strtol(s, &end, 10);
        if (*end != ',')
            goto bad;
        int pred = (int)strtol(end + 1, &end, 10);
        for (int j = 0; j < K; j++) {
            if (*end != ',')
                goto bad;
            p[j] = strtod(end + 1, &end);
        }
        if (metrics_add(m, gold, pred, p, &e) < 0 ||
            (by_fold && metrics_add(fm[fold], gold, pred, p, &e) < 0)) {
            fprintf(stderr, "metrics_dump: %s:%ld: %s\n", argv[2], ln, e.msg);
            return 2;
        }
    }
    fclose(fp);
    struct metrics_report r = METRICS_REPORT_INIT;
    metrics_compute(m, &r);
    printf("{");
    num("accuracy", r.accuracy, ", ");
    num("macro_f1", r.macro_f1, ", ");
    num("weighted_f1", r.weighted_f1, ", ");
    num("log_loss", r.log_loss, ", ");
    num("brier", r.brier, ", ");
    printf("\"labels\": [");
    for (int j = 0; j < K; j++) {
        const struct metrics_label *L = &r.label[j];
        printf("{");
        num("precision", L->precision, ", ");
        num("recall", L->recall, ", ");
        num("f1", L->f1, ", ");
        printf("\"support\": %zu, \"predicted\": %zu, \"mistaken_for\": %d}%s",
               L->support, L->predicted, L->mistaken_for, j + 1 < K ? ", " : "");
    }
    printf("], \"confusion\": [");
    for (size_t t = 0; t < (size_t)K * K; t++)
        printf("%zu%s", r.conf[t], t + 1 < (size_t)K * K ? ", " : "");
    printf("], \"cutoffs\": [");
    size_t nc = 0;
    struct metrics_cutoff *c = metrics_cutoffs(m, &nc);
    for (size_t t = 0; t < nc; t++)
        printf("[%.17g, %.17g, %.17g]%s", c[t].threshold, c[t].precision, c[t].coverage,
               t + 1 < nc ? ", " : "");
    long at = metrics_cutoff_for_precision(c, nc, 0.9);
    printf("], \"cutoff_for_0.9\": %ld", at);
    if (by_fold) {
        struct metrics_report *fr = xcalloc((size_t)n_folds, sizeof *fr);
        for (int q = 0; q < n_folds; q++) {
            if (!fm[q]) {
                fprintf(stderr, "metrics_dump: fold %d has no rows\n", q);
                return 2;
            }
            metrics_compute(fm[q], &fr[q]);
        }
        struct metrics_fold_summary sm;
        if (metrics_summarize(fr, (size_t)n_folds, &sm, &e) < 0) {
            fprintf(stderr, "metrics_dump: %s\n", e.msg);
            return 2;
        }
        printf(", \"per_fold\": {");
        const struct metrics_spread *sp[5] = { &sm.accuracy, &sm.macro_f1, &sm.weighted_f1,
                                               &sm.log_loss, &sm.brier };
        const char *key[5] = { "accuracy", "macro_f1", "weighted_f1", "log_loss", "brier" };
        for (int t = 0; t < 5; t++)
            printf("\"%s\": [%.17g, %.17g], ", key[t], sp[t]->mean, sp[t]->sd);
        printf("\"f1\": [");
        for (int j = 0; j < K; j++)
            printf("[%.17g, %.17g]%s", sm.f1[j].mean, sm.f1[j].sd, j + 1 < K ? ", " : "");
        printf("]}");
        metrics_fold_summary_release(&sm);
        for (int q = 0; q < n_folds; q++) {
            metrics_report_release(&fr[q]);
            metrics_free(fm[q]);
        }
        free(fr);
    }
    printf("}\n");
    free(c);
    free(p);
    free(line);
    metrics_report_release(&r);
    metrics_free(m);
    return 0;
bad:
    fprintf(stderr, "metrics_dump: %s:%ld: expected gold,predicted,%d probabilities\n", argv[2], ln, K);
    return 2;
}
