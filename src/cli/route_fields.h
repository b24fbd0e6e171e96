/* route_fields.h -- the fields a routed text gets in predict's columns and
 * serve's answers, formatted in one place so both say the same: labels in
 * order of probability (--top), and the evidence text (--explain).
 * Private to src/cli.
 */
#ifndef VECSIFT_CLI_ROUTE_FIELDS_H
#define VECSIFT_CLI_ROUTE_FIELDS_H

#include <stddef.h>

struct route_result;

/* order[0..K): label indices by probability, highest first, ties in label
 * order. */
void route_order(const double *prob, size_t K, int *order);

/* "word (+0.123); word (+0.045)" for r's top words into *buf (grown with
 * xgrow, NUL-terminated; "" when there are none).  Returns its length. */
size_t route_evidence(const struct route_result *r, char **buf, size_t *cap);

#endif
