/* corpus.h -- a CSV dataset with every text tokenised: what the commands
 * that fit or evaluate work on.
 *
 * dataset.h reads the rows; text.h makes the tokens; vocab.h interns them.
 * The vocabulary here is only an interning table: it holds no statistics
 * that could leak from held-out rows (document frequencies are counted
 * inside each fit, see features.h).
 */
#ifndef VECSIFT_CORPUS_H
#define VECSIFT_CORPUS_H

#include <stddef.h>

#include "vecsift/dataset.h"
#include "vecsift/text.h"
#include "vecsift/vocab.h"

struct err;

struct corpus {
    struct dataset ds;
    struct tokdocs docs;        /* docs.n == ds.n */
    struct text_options text;
    size_t empty_docs;          /* rows with no token at all */
    size_t too_long;            /* tokens over TEXT_MAX_TOKEN bytes skipped */
    long too_long_line;         /* the line of the first of them, 0 if none */
};

/* Load 'path' with 'o' and tokenise every row with 't'.  Returns 0, or -1
 * with 'e' set (file:line for the row at fault). */
int corpus_load(struct corpus *c, const char *path, const struct dataset_options *o, const struct text_options *t,
                struct err *e);
void corpus_release(struct corpus *c);

/* Rows whose token sequences are identical to an earlier row's (after
 * normalisation: "Refund, please!" repeats "refund please"); rows with no
 * token are not counted.  Returns how many rows repeat an earlier one, and
 * in '*conflicting' how many of those carry another label than the
 * nearest earlier row they repeat (0 for unlabelled data). */
size_t corpus_duplicates(const struct corpus *c, size_t *conflicting);

#endif
