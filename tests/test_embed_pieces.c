/* test_embed_pieces.c -- learning with character n-gram pieces (embed.h,
 * Bojanowski et al. 2017): which rows each word trains, repeatability, that
 * the planted structure is still learned, and that a misspelt word composed
 * from the learned pieces (vecset_compose) lands by its correct spelling. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "vecsift/embed.h"
#include "vecsift/err.h"
#include "vecsift/pieces.h"
#include "vecsift/rng.h"
#include "vecsift/vecset.h"

#define NW 20

/* Twenty made-up words of seven random letters, and 400 documents, each
 * drawn from the first ten words or the last ten: a group structure that
 * has nothing to do with spelling. */
static char words[NW][8];

static void make_corpus(struct embed_corpus *c)
{
    struct rng r;
    rng_seed(&r, 7);
    for (int i = 0; i < NW; i++) {
        for (int k = 0; k < 7; k++)
            words[i][k] = (char)('a' + rng_below(&r, 26));
        words[i][7] = '\0';
    }
    enum { NDOCS = 400, LEN = 20 };
    static const char *docs[NDOCS][LEN];
    static const char *const *dp[NDOCS];
    static size_t lens[NDOCS];
    for (int d = 0; d < NDOCS; d++) {
        for (int i = 0; i < LEN; i++)
            docs[d][i] = words[(d % 2) * 10 + (int)rng_below(&r, 10)];
        dp[d] = docs[d];
        lens[d] = LEN;
    }
    struct err e = ERR_INIT;
    cr_assert_eq(embed_corpus_from_tokens(c, dp, lens, NDOCS, 1, "planted", &e), 0, "%s", e.msg);
    cr_assert_eq(c->nwords, NW);
}

static int by_u32(const void *a, const void *b)
{
    uint32_t x = *(const uint32_t *)a, y = *(const uint32_t *)b;
    return (x > y) - (x < y);
}

/* Each word trains the rows of exactly the distinct buckets of its pieces. */
Test(embed_pieces, rows_are_the_buckets_of_each_words_pieces)
{
    struct embed_corpus c = EMBED_CORPUS_INIT;
    make_corpus(&c);
    struct pieces_params pp = { 3, 6, 5000 };
    struct embed_pieces pc;
    embed_pieces_build(&pc, &c, &pp);
    for (size_t i = 1; i < pc.nrows; i++)
        cr_assert_lt(pc.bucket[i - 1], pc.bucket[i]);
    for (size_t w = 0; w < c.nwords; w++) {
        uint32_t ids[64];
        size_t n = pieces_buckets(c.words[w], strlen(c.words[w]), &pp, ids, 64);
        /* <abcdefg> is 9 characters: 7 + 6 + 5 + 4 pieces, fewer if one repeats */
        cr_assert(n <= 22 && n >= 18, "%s has %zu pieces", c.words[w], n);
        qsort(ids, n, sizeof *ids, by_u32);
        size_t u = 0;
        for (size_t j = 0; j < n; j++)
            if (u == 0 || ids[j] != ids[u - 1])
                ids[u++] = ids[j];
        cr_assert_eq(pc.off[w + 1] - pc.off[w], u);
        for (size_t j = 0; j < u; j++)
            cr_assert_eq(pc.bucket[pc.row[pc.off[w] + j]], ids[j]);
    }
    embed_pieces_release(&pc);
    embed_corpus_release(&c);
}

static double cosine(const float *a, const float *b, size_t D)
{
    double ab = 0, aa = 0, bb = 0;
    for (size_t i = 0; i < D; i++) {
        ab += (double)a[i] * b[i];
        aa += (double)a[i] * a[i];
        bb += (double)b[i] * b[i];
    }
    return ab / sqrt(aa * bb);
}

static void train(const struct embed_corpus *c, const struct embed_pieces *pc, float *vec, float *pvec)
{
    struct embed_params p = EMBED_PARAMS_INIT;
    p.dim = 16;
    p.epochs = 3;
    p.subsample = 0; /* twenty words of 5% each: subsampling would drop nearly all */
    struct err e = ERR_INIT;
    cr_assert_eq(embed_train_pieces(c, &p, pc, vec, pvec, NULL, NULL, NULL, &e), 0, "%s", e.msg);
}

Test(embed_pieces, one_thread_repeats_and_groups_are_learned)
{
    struct embed_corpus c = EMBED_CORPUS_INIT;
    make_corpus(&c);
    struct pieces_params pp = PIECES_PARAMS_INIT;
    struct embed_pieces pc;
    embed_pieces_build(&pc, &c, &pp);
    const size_t D = 16;
    float *v1 = calloc(NW * D, sizeof *v1), *v2 = calloc(NW * D, sizeof *v2);
    float *p1 = calloc(pc.nrows * D, sizeof *p1), *p2 = calloc(pc.nrows * D, sizeof *p2);
    train(&c, &pc, v1, p1);
    train(&c, &pc, v2, p2);
    cr_assert_eq(memcmp(v1, v2, NW * D * sizeof *v1), 0);
    cr_assert_eq(memcmp(p1, p2, pc.nrows * D * sizeof *p1), 0);
    /* each word's nearest other word is from its own group (the planted
     * structure, as test_embed.c checks for whole words) */
    int group[NW] = { 0 };
    for (size_t i = 0; i < NW; i++)
        for (int k = 0; k < NW; k++)
            if (strcmp(c.words[i], words[k]) == 0)
                group[i] = k >= 10;
    for (size_t i = 0; i < NW; i++) {
        size_t best = i;
        double bc = -2;
        for (size_t j = 0; j < NW; j++)
            if (j != i && cosine(v1 + i * D, v1 + j * D, D) > bc) {
                bc = cosine(v1 + i * D, v1 + j * D, D);
                best = j;
            }
        cr_assert_eq(group[i], group[best], "'%s' is nearest to '%s' of the other group", c.words[i],
                     c.words[best]);
    }
    free(v2);
    free(p2);

    /* Through the store: a misspelling (two letters swapped) composed from
     * the pieces is nearest to its correct spelling among all words. */
    char path[] = "/tmp/embed-pieces-XXXXXX";
    int fd = mkstemp(path);
    cr_assert_geq(fd, 0);
    close(fd);
    struct vecset_pieces vp = { pp, pc.nrows, pc.bucket, p1 };
    struct err e = ERR_INIT;
    cr_assert_eq(vecset_write_pieces(path, (const char *const *)c.words, v1, NW, D, &vp, &e), 0, "%s", e.msg);
    vecset *vs = vecset_open(path, &e);
    cr_assert_not_null(vs, "%s", e.msg);
    cr_assert_eq(vecset_verify(vs, &e), 0, "%s", e.msg);
    int right = 0, same_group = 0;
    for (size_t i = 0; i < NW; i++) {
        char typo[8];
        memcpy(typo, c.words[i], 8);
        char t = typo[3];
        typo[3] = typo[4];
        typo[4] = t;
        if (vecset_find(vs, typo) >= 0)
            continue;
        float q[16];
        cr_assert_gt(vecset_compose(vs, typo, 7, q), 0);
        size_t best = 0;
        double bc = -2;
        for (size_t j = 0; j < NW; j++)
            if (cosine(q, vecset_row(vs, j), D) > bc) {
                bc = cosine(q, vecset_row(vs, j), D);
                best = j;
            }
        right += best == i;
        same_group += group[best] == group[i];
    }
    /* Swapping letters 4 and 5 of 7 leaves about a third of the pieces
     * (<ab abc ..g>): seen 18 of 20 nearest their own word, 20 in its group. */
    cr_assert_geq(right, 16, "only %d of %d misspellings are nearest to their word", right, NW);
    cr_assert_geq(same_group, NW - 1, "only %d of %d misspellings are nearest to their word's group", same_group, NW);
    vecset_close(vs);
    unlink(path);
    free(v1);
    free(p1);
    embed_pieces_release(&pc);
    embed_corpus_release(&c);
}
