/* cmd_vectors_coverage.c -- 'vectors coverage': how much of a data set's
 * text a vector set covers (share of tokens and of distinct tokens with a
 * vector) and which frequent tokens have none.  Texts are tokenised as
 * every other command tokenises them (text.h), so the figures are the ones
 * features will see. */
#include "cmd_vectors.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "common.h"
#include "vecsift/dataset.h"
#include "vecsift/err.h"
#include "vecsift/text.h"
#include "vecsift/vecset.h"
#include "vecsift/vocab.h"
#include "vecsift/xalloc.h"

static const struct cli_opt coverage_opts[] = {
    DATA_OPTIONS,
    { "top", 'k', "<n>", "how many missing tokens to list (default: 20)" },
    { "quiet", 'q', NULL, "no notes on stderr" },
    { NULL, 0, NULL, NULL },
};

const struct cli_cmd vectors_coverage_info = {
    "vectors coverage", "<vectors.vecs> <data.csv> [--text-col NAME]...",
    "share of a data set's tokens that have a vector",
    coverage_opts,
    "Counts every token of the text columns (running tokens) and every\n"
    "distinct token, and how many of each have a vector; then lists the most\n"
    "frequent tokens without one (ties in order of first appearance).  Use the\n"
    "same text options as when packing the vectors.  For a set learned with\n"
    "--pieces, tokens without a vector of their own but with pieces the set\n"
    "knows are counted apart ('from pieces'): they get a composed vector, a\n"
    "guess from spelling; the list then shows only tokens with neither.",
};

struct miss {
    int32_t id;
    uint64_t count;
};

static int by_count(const void *a, const void *b)
{
    const struct miss *x = a, *y = b;
    if (x->count != y->count)
        return x->count > y->count ? -1 : 1;
    return (x->id > y->id) - (x->id < y->id);
}

static double pct(uint64_t a, uint64_t b)
{
    return b ? 100.0 * (double)a / (double)b : 0.0;
}

int vectors_coverage(int argc, char **argv)
{
    const struct cli_cmd *cmd = &vectors_coverage_info;
    struct cli_parser p;
    struct err e = ERR_INIT;
    struct data_args a;
    struct dataset d = DATASET_INIT;
    struct dataset_options dopt;
    struct text_tokens t = TEXT_TOKENS_INIT;
    const char *val;
    long top = 20;
    int rc = ERR_INPUT, o;
    vecset *v = NULL;
    vocab *voc = NULL;
    float *scratch = NULL;
    struct miss *miss = NULL;
    data_args_init(&a);
    cli_parser_init(&p, cmd, argc, argv);
    while ((o = cli_next(&p, &val)) >= 0) {
        const char *name = opt_name(cmd, o);
        int taken = data_args_option(&a, cmd, name, val);
        if (taken < 0)
            goto out;
        if (taken)
            continue;
        if (strcmp(name, "top") == 0 && cli_long(cmd, "top", val, 0, 1000000, &top) < 0)
            goto out;
    }
    if (o == CLI_HELP) {
        rc = ERR_OK;
        goto out;
    }
    if (o == CLI_FAIL)
        goto out;
    if (p.npos != 2) {
        rc = cli_usage(cmd, "'vectors coverage' needs a packed store and a CSV file, got %d arguments", p.npos);
        goto out;
    }
    if (!(v = vecset_open(p.pos[0], &e)))
        goto fail;
    data_args_dataset(&a, 0, &dopt);
    if (dataset_load(&d, p.pos[1], &dopt, &e) < 0)
        goto fail;
    voc = vocab_new();
    for (size_t i = 0; i < d.n; i++) {
        text_tokens_clear(&t);
        if (text_tokenize(d.text[i], strlen(d.text[i]), &a.text, &t, &e) < 0) {
            /* the reader has checked the UTF-8 already; say where anyway */
            struct err e2 = ERR_INIT;
            err_set(&e2, d.path, d.line[i], "%s", e.msg);
            e = e2;
            goto fail;
        }
        for (size_t j = 0; j < t.n; j++)
            vocab_add(voc, text_token(&t, j));
    }
    size_t nd = vocab_size(voc), nmiss = 0;
    uint64_t total = vocab_total(voc), found = 0, dfound = 0, pfound = 0, dpfound = 0;
    int pieces = vecset_pieces(v) != NULL;
    scratch = xcalloc(vecset_dim(v), sizeof *scratch);
    miss = xcalloc(nd ? nd : 1, sizeof *miss);
    for (size_t id = 0; id < nd; id++) {
        uint64_t c = vocab_count(voc, (int32_t)id);
        const char *w = vocab_word(voc, (int32_t)id);
        if (vecset_find(v, w) >= 0) {
            found += c;
            dfound++;
        } else if (pieces && vecset_compose(v, w, strlen(w), scratch) > 0) {
            pfound += c;
            dpfound++;
        } else {
            miss[nmiss++] = (struct miss){ (int32_t)id, c };
        }
    }
    qsort(miss, nmiss, sizeof *miss, by_count);
    printf("%-16s %s (%zu vectors, dimension %zu)\n", "vectors", p.pos[0], vecset_count(v), vecset_dim(v));
    printf("%-16s %s (%zu rows)\n", "data", p.pos[1], d.n);
    printf("%-16s %10llu  with a vector %10llu  (%.1f%%)\n", "tokens", (unsigned long long)total,
           (unsigned long long)found, pct(found, total));
    printf("%-16s %10zu  with a vector %10llu  (%.1f%%)\n", "distinct tokens", nd, (unsigned long long)dfound,
           pct(dfound, nd));
    if (pieces) {
        printf("%-16s %10s  from pieces   %10llu  (%.1f%%)\n", "tokens", "", (unsigned long long)pfound,
               pct(pfound, total));
        printf("%-16s %10s  from pieces   %10llu  (%.1f%%)\n", "distinct tokens", "", (unsigned long long)dpfound,
               pct(dpfound, nd));
    }
    size_t show = nmiss < (size_t)top ? nmiss : (size_t)top;
    if (show) {
        printf("\nmost frequent tokens without a vector%s:\n%8s  %s\n", pieces ? " (whole or from pieces)" : "",
               "count", "token");
        for (size_t i = 0; i < show; i++)
            printf("%8llu  %s\n", (unsigned long long)miss[i].count, vocab_word(voc, miss[i].id));
    }
    rc = ERR_OK;
    goto out;
fail:
    rc = cli_fail(&e);
out:
    free(miss);
    free(scratch);
    vocab_free(voc);
    text_tokens_release(&t);
    dataset_release(&d);
    vecset_close(v);
    cli_parser_release(&p);
    return rc;
}
