/* cmd_vectors_near.c -- 'vectors near' and 'vectors analogy': queries by
 * cosine similarity over a packed store (exact scan, see vecset_nearest). */
#include "cmd_vectors.h"

#include <stdio.h>
#include <stdlib.h>

#include "vecsift/err.h"
#include "vecsift/vecset.h"
#include "vecsift/xalloc.h"

static const struct cli_opt near_opts[] = {
    { "count", 'k', "<n>", "how many neighbours (default: 10)" },
    { "threads", 0, "<n>", "scanning threads, 1 to 256 (default: processors online)" },
    { "keep-accents", 0, NULL, "the store was packed with --keep-accents" },
    { NULL, 0, NULL, NULL },
};

const struct cli_cmd vectors_near_info = {
    "vectors near", "<vectors.vecs> <word>... [-k N]",
    "nearest words by cosine similarity",
    near_opts,
    "With several words the query is the mean of their unit vectors.  The\n"
    "words asked about are left out of the answer.  Words are normalised as\n"
    "running text is, so 'Printer' finds 'printer'.",
};

const struct cli_cmd vectors_analogy_info = {
    "vectors analogy", "<vectors.vecs> <a> <b> <c> [-k N]",
    "a is to b as c is to ? (3CosAdd)",
    near_opts,
    "Ranks words by cosine similarity to b - a + c, on unit vectors, leaving\n"
    "out a, b and c (3CosAdd: Mikolov, Yih and Zweig 2013, \"Linguistic\n"
    "Regularities in Continuous Space Word Representations\").  Default -k 1\n"
    "would be the analogy's answer; -k shows the runners-up too.",
};

/* Shared by both verbs: the query is sum_i sign[i] * unit(row[i]).  For
 * 'near' all signs are +1 (the mean has the same direction as the sum, and
 * cosine ignores length); for 'analogy' they are -1, +1, +1 for a, b, c:
 * 3CosAdd, argmax over x not in {a, b, c} of cos(x, b - a + c) on unit
 * vectors, as in Mikolov, Yih and Zweig (2013), "Linguistic Regularities
 * in Continuous Space Word Representations", NAACL-HLT. */
static int query(const struct cli_cmd *cmd, int argc, char **argv, size_t nwords_min, size_t nwords_max,
                 const int *sign)
{
    struct cli_parser p;
    struct err e = ERR_INIT;
    const char *val;
    long k = 10;
    int threads = vectors_default_threads();
    int keep_accents = 0, rc = ERR_INPUT, o;
    vecset *v = NULL;
    size_t *rows = NULL;
    float *q = NULL;
    struct vecset_hit *hits = NULL;
    cli_parser_init(&p, cmd, argc, argv);
    while ((o = cli_next(&p, &val)) >= 0) {
        switch (o) {
        case 0: if (cli_long(cmd, "count", val, 1, 100000, &k) < 0) goto out; break;
        case 1: if (cli_threads(cmd, val, &threads) < 0) goto out; break;
        case 2: keep_accents = 1; break;
        }
    }
    if (o == CLI_HELP) {
        rc = ERR_OK;
        goto out;
    }
    if (o == CLI_FAIL)
        goto out;
    size_t nw = p.npos > 0 ? (size_t)p.npos - 1 : 0;
    if (nw < nwords_min || nw > nwords_max) {
        if (nwords_min == nwords_max)
            rc = cli_usage(cmd, "'%s' needs a packed store and %zu words, got %d arguments", cmd->name, nwords_min,
                           p.npos);
        else
            rc = cli_usage(cmd, "'%s' needs a packed store and at least one word", cmd->name);
        goto out;
    }
    if (!(v = vecset_open(p.pos[0], &e)))
        goto fail;
    rows = xcalloc(nw, sizeof *rows);
    if (vectors_find_words(v, p.pos + 1, nw, keep_accents, rows, &e) < 0)
        goto fail;
    size_t dim = vecset_dim(v);
    q = xcalloc(dim, sizeof *q);
    for (size_t i = 0; i < nw; i++) {
        const float *r = vecset_row(v, rows[i]);
        float n = vecset_norm(v, rows[i]);
        if (vecset_check_row(v, rows[i], &e) < 0)
            goto fail; /* damage, not a zero vector */
        if (!(n > 0)) {
            err_set(&e, vecset_path(v), 0, "'%s' has the zero vector: no direction to compare", p.pos[1 + i]);
            goto fail;
        }
        double s = (sign ? sign[i] : 1) / (double)n;
        for (size_t j = 0; j < dim; j++)
            q[j] += (float)(s * r[j]);
    }
    hits = xcalloc((size_t)k, sizeof *hits);
    long n = vecset_nearest(v, q, (size_t)k, rows, nw, threads, hits, &e);
    if (n < 0)
        goto fail;
    vectors_print_hits(v, hits, (size_t)n);
    rc = ERR_OK;
    goto out;
fail:
    rc = cli_fail(&e);
out:
    free(hits);
    free(q);
    free(rows);
    vecset_close(v);
    cli_parser_release(&p);
    return rc;
}

int vectors_near(int argc, char **argv)
{
    return query(&vectors_near_info, argc, argv, 1, (size_t)-1, NULL);
}

int vectors_analogy(int argc, char **argv)
{
    static const int sign[3] = { -1, +1, +1 };
    return query(&vectors_analogy_info, argc, argv, 3, 3, sign);
}
