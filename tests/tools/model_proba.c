/* model_proba.c -- test-only: load a model file written by `vecsift train`
 * (model_load: validation, fingerprint check) and print, as JSON, the
 * probabilities of every row of a CSV file at full precision, where
 * `vecsift predict` rounds to 4 decimals.  For tests/ext/classifiers_vs_sklearn.py.
 * Not installed.
 *
 *   model_proba MODEL.json DATA.csv
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/corpus.h"
#include "vecsift/err.h"
#include "vecsift/model.h"
#include "vecsift/pipeline.h"
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
    struct corpus c;
    if (corpus_load(&c, argv[2], &o, &m.text, &e) < 0) {
        fprintf(stderr, "model_proba: %s\n", e.msg);
        model_release(&m);
        vecset_close(vs);
        return 2;
    }
    size_t n = c.docs.n, K = m.k;
    size_t *rows = calloc(n ? n : 1, sizeof *rows);
    double *P = calloc(n ? n * K : 1, sizeof *P);
    for (size_t i = 0; i < n; i++)
        rows[i] = i;
    pipeline_proba(m.pipe, &c.docs, rows, n, P, NULL);
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
    free(rows);
    free(P);
    corpus_release(&c);
    model_release(&m);
    vecset_close(vs);
    return ferror(stdout) ? 1 : 0;
}
