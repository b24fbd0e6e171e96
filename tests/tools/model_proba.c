/* model_proba.c -- test-only: load a model file written by `vecsift train`
 * (model_load: validation, fingerprint check) and print, as JSON, the
 * probabilities of every row of a CSV file at full precision, where
 * `vecsift predict` rounds to 4 decimals.  The rows go through the
 * library's one prediction path (route.h), as predict's do.  For tests/ext/classifiers_vs_sklearn.py.
 * Not installed.
 *
 *   model_proba MODEL.json DATA.csv
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/dataset.h"
#include "vecsift/err.h"
#include "vecsift/model.h"
#include "vecsift/route.h"
#include "vecsift/vecset.h"

int main(int argc, char **argv)
{
    if (argc != 3) {
        fprintf(stderr, "usage: model_proba MODEL.json DATA.csv\n");
        return 2;
    }
    struct model m = MODEL_INIT;
    vecset *vs = NULL;
    struct err e = ERR_INIT;
    if (model_load(&m, argv[1], NULL, &vs, &e) < 0) {
        fprintf(stderr, "model_proba: %s\n", e.msg);
        return 2;
    }
    struct dataset_options o;
    memset(&o, 0, sizeof o);
    struct csv_options co = CSV_OPTIONS_INIT;
    o.text_cols = (const char *const *)m.text_cols;
    o.ntext = m.ntext;
    o.csv = co;
    struct dataset d;
    if (dataset_load(&d, argv[2], &o, &e) < 0) {
        fprintf(stderr, "model_proba: %s\n", e.msg);
        model_release(&m);
        vecset_close(vs);
        return 2;
    }
    size_t n = d.n, K = m.k;
    double *P = calloc(n ? n * K : 1, sizeof *P);
    struct route_result *res = calloc(n ? n : 1, sizeof *res);
    struct route_params rp = ROUTE_PARAMS_INIT;
    if (route_batch(&m, &rp, 1, (const char *const *)d.text, 1, n, P, res, NULL, &e) < 0) {
        fprintf(stderr, "model_proba: %s\n", e.msg);
        return 2;
    }
    printf("{\"labels\": [");
    for (size_t k = 0; k < K; k++)
        printf("%s\"%s\"", k ? ", " : "", m.labels[k]);
    printf("],\n\"proba\": [\n");
    for (size_t i = 0; i < n; i++) {
        printf("[");
        for (size_t k = 0; k < K; k++)
            printf("%s%.17g", k ? ", " : "", P[i * K + k]);
        printf("]%s\n", i + 1 < n ? "," : "");
    }
    printf("]}\n");
    free(res);
    free(P);
    dataset_release(&d);
    model_release(&m);
    vecset_close(vs);
    return ferror(stdout) ? 1 : 0;
}
