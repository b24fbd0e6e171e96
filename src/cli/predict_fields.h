/* predict_fields.h -- predict's columns for a routed text that need more
 * than a number: labels in order of probability (--top) and the evidence
 * text (--explain).  serve answers with the same fields through these, so
 * both say the same.
 * Private to src/cli.
 */
#ifndef VECSIFT_CLI_PREDICT_FIELDS_H
#define VECSIFT_CLI_PREDICT_FIELDS_H

#include <stddef.h>

struct route_result;

/* order[0..K): label indices by probability, highest first, ties in label
 * order. */
void predict_label_order(const double *prob, size_t K, int *order);

/* "word (+0.123); word (+0.045)" for r's top words into *buf (grown with
 * xgrow, NUL-terminated; "" when there are none).  Returns its length. */
size_t predict_evidence(const struct route_result *r, char **buf, size_t *cap);

#endif
