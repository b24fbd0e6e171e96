/* model.h -- the model file: everything predict needs but the vectors.
 *
 * JSON (cJSON), versioned: format "vecsift-model", version 1.  Holds the
 * tokeniser settings, labels, the fitted pipeline (featurizer state and
 * classifier), the vector set's fingerprint and path, the training data's
 * fingerprint and counts, the cross-validated summary when there is one and
 * the suggested review cut-off, and for `train --choose` the table of
 * set-ups it chose from.  Loading validates every field and refuses
 * a vector set whose fingerprint differs.  A model stores vocabulary from
 * the training texts: it is personal data wherever those texts are.
 */
#ifndef VECSIFT_MODEL_H
#define VECSIFT_MODEL_H

#include <stddef.h>
#include <stdint.h>

#include "vecsift/text.h"

struct err;
struct cJSON;
struct vecset;
typedef struct pipeline pipeline;

#define MODEL_FORMAT "vecsift-model"
#define MODEL_VERSION 1

struct model {
    pipeline *pipe;             /* owned */
    size_t k;
    char **labels;              /* (K) sorted, owned */
    struct text_options text;
    char **text_cols;           /* columns the texts came from, owned */
    size_t ntext;
    char *label_col;            /* owned */
    char *vectors_path;         /* NULL for bow */
    uint64_t vectors_fp;
    char *data_path;            /* training CSV */
    uint64_t data_fp;           /* fingerprint of the training rows (text and label) */
    size_t rows;                /* training rows */
    size_t *label_rows;         /* (K) rows per label */
    struct cJSON *evaluation;   /* cross-validated summary or NULL; owned */
    struct cJSON *choice;       /* train --choose: the rule, the table and the
                                 * choice (docs/formats.md), or NULL; owned */
    double review_below;        /* suggested cut-off, or -1 */
};
#define MODEL_INIT { 0 }

/* Write 'm' to 'path' (through ofile: all or nothing). */
int model_save(const struct model *m, const char *path, struct err *e);

/* Read and validate 'path'.  The vector set is opened from 'vectors' when
 * given, else from the path stored in the model; its fingerprint must match.
 * On success fills 'm' and '*vs' (caller closes it after model_release). */
int model_load(struct model *m, const char *path, const char *vectors, struct vecset **vs, struct err *e);

void model_release(struct model *m);

/* Fingerprint of labelled rows: a 64-bit hash of every (text, label) in order. */
uint64_t model_data_fingerprint(char *const *text, char *const *label, size_t n);

#endif
