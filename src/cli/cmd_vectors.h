/* cmd_vectors.h -- the verbs of 'vecsift vectors' and what they share.
 * Private to src/cli: each verb lives in a cmd_vectors_*.c file. */
#ifndef VECSIFT_CMD_VECTORS_H
#define VECSIFT_CMD_VECTORS_H

#include <stddef.h>

#include "cli.h"

struct err;
typedef struct vecset vecset;

#define VECTORS_VERB(x) \
    extern const struct cli_cmd vectors_##x##_info; \
    int vectors_##x(int argc, char **argv)

VECTORS_VERB(analogy);
VECTORS_VERB(coverage);
VECTORS_VERB(export);
VECTORS_VERB(info);
VECTORS_VERB(map);
VECTORS_VERB(near);
VECTORS_VERB(pack);

/* Default for --threads: the processors online, 1 to 64. */
int vectors_default_threads(void);

/* Look up each of words[0..n) (normalised as running text is) in 'v' and
 * store its row in rows[].  Words that are not found are all named in one
 * ERR_INPUT error.  Returns 0 or -1. */
int vectors_find_words(const vecset *v, char **words, size_t n, int keep_accents, size_t *rows, struct err *e);

/* Print hits as a table of rank, word, cosine (%.6f). */
struct vecset_hit;
void vectors_print_hits(const vecset *v, const struct vecset_hit *hits, size_t n);

#endif
