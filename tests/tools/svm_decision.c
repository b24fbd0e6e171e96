/* svm_decision.c -- test-only: train svmfit on a features CSV written by
 * `vecsift features` (row, label, x1..xD) and print, as JSON, the labels in
 * our (sorted) order, the gamma used, the number of support vectors, and per
 * row the one-vs-one decision values (svmfit_decision: pairs (a, b), a < b,
 * positive meaning a) and the probabilities (svmfit_proba).  For
 * tests/ext/classifiers_vs_sklearn.py.  Not installed.
 *
 *   svm_decision FEATURES.csv linear|rbf C GAMMA    (GAMMA <= 0: the default rule)
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/csv.h"
#include "vecsift/err.h"
#include "vecsift/fmat.h"
#include "vecsift/svmfit.h"
#include "vecsift/xalloc.h"

static int cmp_str(const void *a, const void *b)
{
    return strcmp(*(char *const *)a, *(char *const *)b);
}

int main(int argc, char **argv)
{
    if (argc != 5 || (strcmp(argv[2], "linear") && strcmp(argv[2], "rbf"))) {
        fprintf(stderr, "usage: svm_decision FEATURES.csv linear|rbf C GAMMA\n");
        return 2;
    }
    struct err e = ERR_INIT;
    struct csv_options co = CSV_OPTIONS_INIT;
    csv_reader *r = csv_open(argv[1], &co, &e);
    if (!r) {
        fprintf(stderr, "svm_decision: %s\n", e.msg);
        return 2;
    }
    size_t D = csv_ncols(r) - 2, n = 0, cap = 0;
    double *x = NULL;
    char **lab = NULL;
    size_t lcap = 0;
    int got;
    while ((got = csv_next(r, &e)) == 1) {
        x = xgrow(x, &cap, (n + 1) * D, sizeof *x);
        lab = xgrow(lab, &lcap, n + 1, sizeof *lab);
        lab[n] = xstrdup(csv_field(r, 1));
        for (size_t d = 0; d < D; d++)
            x[n * D + d] = strtod(csv_field(r, 2 + d), NULL);
        n++;
    }
    csv_close(r);
    if (got < 0) {
        fprintf(stderr, "svm_decision: %s\n", e.msg);
        return 2;
    }
    /* labels sorted bytewise, as dataset.h orders them */
    char **sorted = xcalloc(n, sizeof *sorted);
    memcpy(sorted, lab, n * sizeof *sorted);
    qsort(sorted, n, sizeof *sorted, cmp_str);
    size_t K = 0;
    for (size_t i = 0; i < n; i++)
        if (K == 0 || strcmp(sorted[K - 1], sorted[i]) != 0)
            sorted[K++] = sorted[i];
    int *y = xcalloc(n, sizeof *y);
    for (size_t i = 0; i < n; i++) {
        char **hit = bsearch(&lab[i], sorted, K, sizeof *sorted, cmp_str);
        y[i] = (int)(hit - sorted);
    }
    struct fmat X = FMAT_INIT;
    fmat_dense(&X, n, D);
    memcpy(X.x, x, n * D * sizeof *x);
    struct svmfit_params p = SVMFIT_PARAMS_INIT;
    p.kernel = strcmp(argv[2], "rbf") == 0 ? SVMFIT_RBF : SVMFIT_LINEAR;
    p.C = strtod(argv[3], NULL);
    p.gamma = strtod(argv[4], NULL);
    svmfit_model *m = svmfit_train(&X, y, K, &p, NULL, &e);
    if (!m) {
        fprintf(stderr, "svm_decision: %s\n", e.msg);
        return 2;
    }
    size_t P = K * (K - 1) / 2;
    double *dec = xcalloc(P, sizeof *dec), *pr = xcalloc(K, sizeof *pr);
    printf("{\"labels\": [");
    for (size_t k = 0; k < K; k++)
        printf("%s\"%s\"", k ? ", " : "", sorted[k]);
    printf("],\n\"gamma\": %.17g, \"support_vectors\": %zu,\n\"rows\": [\n", svmfit_gamma(m),
           svmfit_support_vectors(m));
    for (size_t i = 0; i < n; i++) {
        svmfit_decision(m, &X, i, dec);
        svmfit_proba(m, &X, i, pr);
        printf("{\"decision\": [");
        for (size_t q = 0; q < P; q++)
            printf("%s%.17g", q ? ", " : "", dec[q]);
        printf("], \"proba\": [");
        for (size_t k = 0; k < K; k++)
            printf("%s%.17g", k ? ", " : "", pr[k]);
        printf("]}%s\n", i + 1 < n ? "," : "");
    }
    printf("]}\n");
    svmfit_free(m);
    fmat_release(&X);
    for (size_t i = 0; i < n; i++)
        free(lab[i]);
    free(lab);
    free(sorted);
    free(y);
    free(x);
    free(dec);
    free(pr);
    return ferror(stdout) ? 1 : 0;
}
