/* test_embed.c -- skip-gram with negative sampling: its pieces against the
 * paper's formulas (Mikolov et al. 2013), corpus ordering and pruning,
 * repeatability, and that training recovers planted co-occurrence structure. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/wait.h>
#include <unistd.h>

#include "vecsift/embed.h"
#include "vecsift/err.h"
#include "vecsift/rng.h"
#include "vecsift/text.h"
#include "vecsift/vecset.h"

/* ---- parameters ---- */

Test(embed, params_reject_bad_dimensions_and_window)
{
    struct embed_params p = EMBED_PARAMS_INIT;
    struct err e = ERR_INIT;
    cr_assert_eq(embed_params_check(&p, &e), 0);
    p.dim = 0;
    cr_assert_eq(embed_params_check(&p, &e), -1);
    cr_assert_eq(e.code, ERR_INPUT);
    cr_assert(strstr(e.msg, "--dimensions"), "%s", e.msg);
    err_clear(&e);
    p.dim = 10001;
    cr_assert_eq(embed_params_check(&p, &e), -1);
    cr_assert(strstr(e.msg, "10001"), "%s", e.msg);
    err_clear(&e);
    p.dim = 10000;
    p.window = 0;
    cr_assert_eq(embed_params_check(&p, &e), -1);
    cr_assert(strstr(e.msg, "--window"), "%s", e.msg);
}

/* ---- subsampling: keep probability sqrt(t/f) + t/f, capped at 1 (the
 * paper's sqrt(t/f), section 2.3, plus the t/f term Levy, Goldberg and Dagan
 * 2015 describe in the authors' code; from memory) ---- */

Test(embed, keep_probability_formula)
{
    /* f = t: kept */
    cr_assert_float_eq(embed_keep_prob(100, 10000, 1e-2), 1.0, 1e-12);
    /* f = 100 t: sqrt(1/100) + 1/100 = 0.11 */
    cr_assert_float_eq(embed_keep_prob(1000, 100000, 1e-4), 0.11, 1e-12);
    /* f = 4 t: 0.5 + 0.25 */
    cr_assert_float_eq(embed_keep_prob(4, 10000, 1e-4), 0.75, 1e-12);
    /* rarer than t: always kept; t = 0: subsampling off */
    cr_assert_float_eq(embed_keep_prob(1, 1000000, 1e-4), 1.0, 1e-12);
    cr_assert_float_eq(embed_keep_prob(900, 1000, 0), 1.0, 1e-12);
}

/* ---- noise distribution: P(w) proportional to U(w)^(3/4) (paper, section
 * 2.2).  Counts 1, 16, 81, 256 give weights 1, 8, 27, 64 (sum 100). ---- */

Test(embed, noise_follows_unigram_to_three_quarters)
{
    const uint64_t count[4] = { 1, 16, 81, 256 };
    const double want[4] = { 0.01, 0.08, 0.27, 0.64 };
    embed_noise *q = embed_noise_new(count, 4, 0.75);
    struct rng r;
    rng_seed(&r, 11);
    long got[4] = { 0 };
    const long n = 1000000;
    for (long i = 0; i < n; i++) {
        int32_t w = embed_noise_draw(q, rng_next(&r));
        cr_assert(w >= 0 && w < 4);
        got[w]++;
    }
    /* chi-square, 3 degrees of freedom: 0.999 quantile 16.27 (standard tables) */
    double chi = 0;
    for (int i = 0; i < 4; i++) {
        double ex = want[i] * (double)n;
        chi += (got[i] - ex) * (got[i] - ex) / ex;
    }
    cr_assert_lt(chi, 16.27, "chi-square %g; counts %ld %ld %ld %ld", chi, got[0], got[1], got[2], got[3]);
    embed_noise_free(q);
    embed_noise_free(NULL);
}

/* ---- corpus ---- */

Test(embed, corpus_orders_by_count_then_bytes_and_prunes)
{
    const char *d1[] = { "queue", "alpha", "beta", "queue", "rare" };
    const char *d2[] = { "beta", "alpha", "queue" };
    const char *d3[] = { "rare2" };
    const char *const *docs[] = { d1, d2, d3 };
    const size_t lens[] = { 5, 3, 1 };
    struct embed_corpus c = EMBED_CORPUS_INIT;
    struct err e = ERR_INIT;
    cr_assert_eq(embed_corpus_from_tokens(&c, docs, lens, 3, 2, "t", &e), 0, "%s", e.msg);
    cr_assert_eq(c.nwords, 3);
    cr_assert_str_eq(c.words[0], "queue");
    cr_assert_str_eq(c.words[1], "alpha"); /* tie at 2 broken by bytes */
    cr_assert_str_eq(c.words[2], "beta");
    cr_assert_eq(c.count[0], 3);
    cr_assert_eq(c.tokens_read, 9);
    cr_assert_eq(c.ndocs, 3);
    /* "rare" dropped from document 1; document 3 empties */
    const int32_t want[] = { 0, 1, 2, 0, 2, 1, 0 };
    cr_assert_eq(c.off[1], 4);
    cr_assert_eq(c.off[3], 7);
    for (int i = 0; i < 7; i++)
        cr_assert_eq(c.tok[i], want[i]);
    embed_corpus_release(&c);
}

Test(embed, corpus_errors_name_the_source)
{
    const char *d1[] = { "one", "two" };
    const char *const *docs[] = { d1, d1 };
    const size_t lens[] = { 2, 0 };
    struct embed_corpus c = EMBED_CORPUS_INIT;
    struct err e = ERR_INIT;
    cr_assert_eq(embed_corpus_from_tokens(&c, docs, lens, 1, 5, "tickets.txt", &e), -1);
    cr_assert_eq(e.code, ERR_INPUT);
    cr_assert(strstr(e.msg, "tickets.txt") && strstr(e.msg, "5 times"), "%s", e.msg);
    cr_assert_null(c.words);
    err_clear(&e);
    const size_t none[] = { 0, 0 };
    cr_assert_eq(embed_corpus_from_tokens(&c, docs, none, 2, 1, "empty.txt", &e), -1);
    cr_assert(strstr(e.msg, "empty.txt") && strstr(e.msg, "no words"), "%s", e.msg);
}

/* ---- training ---- */

/* Planted structure: words 0..9 only ever appear with each other, words
 * 10..19 likewise.  Skip-gram makes words that share contexts similar (the
 * distributional hypothesis the paper builds on), so every word's nearest
 * word must come from its own group.  Invented data. */
static void two_topics(struct embed_corpus *c, uint64_t seed)
{
    const size_t ndocs = 400, len = 20, V = 20;
    struct rng r;
    rng_seed(&r, seed);
    c->nwords = V;
    c->count = calloc(V, sizeof *c->count);
    c->ndocs = ndocs;
    c->off = calloc(ndocs + 1, sizeof *c->off);
    c->tok = calloc(ndocs * len, sizeof *c->tok);
    for (size_t d = 0; d < ndocs; d++) {
        c->off[d] = d * len;
        int32_t base = (d % 2) ? 10 : 0;
        for (size_t i = 0; i < len; i++) {
            int32_t w = base + (int32_t)rng_below(&r, 10);
            c->tok[d * len + i] = w;
            c->count[w]++;
        }
    }
    c->off[ndocs] = ndocs * len;
}

/* The planted corpus and default parameters with 'dim' dimensions. */
static struct embed_params two_topics_setup(struct embed_corpus *c, uint64_t seed, size_t dim)
{
    two_topics(c, seed);
    struct embed_params p = EMBED_PARAMS_INIT;
    p.dim = dim;
    return p;
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

static void check_groups(const float *vec, size_t V, size_t D)
{
    double within = 0, across = 0;
    for (size_t i = 0; i < V; i++) {
        size_t best = 0;
        double bc = -2;
        for (size_t j = 0; j < V; j++) {
            if (j == i)
                continue;
            double cs = cosine(vec + i * D, vec + j * D, D);
            if (cs > bc) {
                bc = cs;
                best = j;
            }
            if ((i < 10) == (j < 10))
                within += cs;
            else
                across += cs;
        }
        cr_assert_eq(i < 10, best < 10, "word %zu's nearest word %zu is from the other group", i, best);
    }
    within /= V * 9;
    across /= V * 10;
    cr_assert_gt(within - across, 0.3, "mean cosine within %g, across %g", within, across);
}

Test(embed, training_recovers_planted_groups_one_and_two_threads)
{
    struct embed_corpus c = EMBED_CORPUS_INIT;
    struct embed_params p = two_topics_setup(&c, 5, 16);
    p.subsample = 0;
    p.epochs = 3;
    struct err e = ERR_INIT;
    float *vec = calloc(c.nwords * p.dim, sizeof *vec);
    for (int t = 1; t <= 2; t++) {
        p.threads = t;
        cr_assert_eq(embed_train(&c, &p, vec, NULL, NULL, NULL, &e), 0, "%s", e.msg);
        check_groups(vec, c.nwords, p.dim);
    }
    free(vec);
    embed_corpus_release(&c);
}

static uint64_t last_done, last_total;
static int calls;
static void count_progress(void *ud, uint64_t done, uint64_t total)
{
    (void)ud;
    cr_assert_geq(done, last_done);
    last_done = done;
    last_total = total;
    calls++;
}

Test(embed, one_thread_repeats_byte_for_byte_and_seed_matters)
{
    struct embed_corpus c = EMBED_CORPUS_INIT;
    struct embed_params p = two_topics_setup(&c, 9, 24);
    p.seed = 77;
    struct err e = ERR_INIT;
    size_t n = c.nwords * p.dim;
    float *a = calloc(n, sizeof *a), *b = calloc(n, sizeof *b);
    cr_assert_eq(embed_train(&c, &p, a, NULL, count_progress, NULL, &e), 0);
    /* progress reached the whole: epochs x corpus words */
    cr_assert_eq(last_total, 5 * 8000);
    cr_assert_eq(last_done, last_total);
    cr_assert_gt(calls, 1);
    cr_assert_eq(embed_train(&c, &p, b, NULL, NULL, NULL, &e), 0);
    cr_assert_eq(memcmp(a, b, n * sizeof *a), 0);
    p.seed = 78;
    cr_assert_eq(embed_train(&c, &p, b, NULL, NULL, NULL, &e), 0);
    cr_assert_neq(memcmp(a, b, n * sizeof *a), 0);
    free(a);
    free(b);
    embed_corpus_release(&c);
}

Test(embed, known_rows_are_the_starting_point)
{
    /* With a tiny learning rate a known row stays near where it started,
     * while an unknown row starts from small random values. */
    struct embed_corpus c = EMBED_CORPUS_INIT;
    struct embed_params p = two_topics_setup(&c, 3, 8);
    p.epochs = 1;
    p.learning_rate = 1e-6;
    struct err e = ERR_INIT;
    float *vec = calloc(c.nwords * p.dim, sizeof *vec);
    unsigned char *known = calloc(c.nwords, 1);
    for (size_t k = 0; k < p.dim; k++)
        vec[3 * p.dim + k] = 1.0f;
    known[3] = 1;
    cr_assert_eq(embed_train(&c, &p, vec, known, NULL, NULL, &e), 0);
    for (size_t k = 0; k < p.dim; k++) {
        cr_assert_float_eq(vec[3 * p.dim + k], 1.0f, 1e-3);
        cr_assert_lt(fabsf(vec[4 * p.dim + k]), 0.5f / 8 + 1e-3);
    }
    free(vec);
    free(known);
    embed_corpus_release(&c);
}

/* ---- the command (vecsift vectors learn), run as a program ---- */

static char dir[64];

static void make_dir(void)
{
    strcpy(dir, "/tmp/test_embed_XXXXXX");
    cr_assert_not_null(mkdtemp(dir));
}

static void remove_dir(void)
{
    char cmd[128];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
    cr_assert_eq(system(cmd), 0);
}

/* Run "vecsift vectors learn ARGS" in 'dir'; returns the exit status and
 * leaves stderr in dir/err. */
static int learn(const char *args)
{
    const char *bin = getenv("VECSIFT");
    cr_assert_not_null(bin, "VECSIFT is not set");
    char cmd[2048];
    snprintf(cmd, sizeof cmd, "cd '%s' && '%s' vectors learn %s 2>err >/dev/null", dir, bin, args);
    int st = system(cmd);
    cr_assert(WIFEXITED(st));
    return WEXITSTATUS(st);
}

static void write_file(const char *name, const char *text)
{
    char path[128];
    snprintf(path, sizeof path, "%s/%s", dir, name);
    FILE *fp = fopen(path, "w");
    cr_assert_not_null(fp);
    fputs(text, fp);
    fclose(fp);
}

static int exists(const char *name)
{
    char path[128];
    snprintf(path, sizeof path, "%s/%s", dir, name);
    return access(path, F_OK) == 0;
}

static int err_has(const char *s)
{
    char path[128], buf[4096] = "";
    snprintf(path, sizeof path, "%s/err", dir);
    FILE *fp = fopen(path, "r");
    cr_assert_not_null(fp);
    size_t n = fread(buf, 1, sizeof buf - 1, fp);
    buf[n] = 0;
    fclose(fp);
    return strstr(buf, s) != NULL;
}

/* Invented support-inbox lines: two kinds of ticket. */
static void write_inbox(const char *name)
{
    static const char *a[] = { "printer", "toner", "paper", "tray", "jam" };
    static const char *b[] = { "password", "login", "account", "reset", "locked" };
    struct rng r;
    rng_seed(&r, 4);
    char path[128];
    snprintf(path, sizeof path, "%s/%s", dir, name);
    FILE *fp = fopen(path, "w");
    cr_assert_not_null(fp);
    for (int i = 0; i < 300; i++) {
        const char **w = i % 2 ? a : b;
        fprintf(fp, "Ticket: the %s and the %s again, %s %s please\n", w[rng_below(&r, 5)],
                w[rng_below(&r, 5)], w[rng_below(&r, 5)], w[rng_below(&r, 5)]);
    }
    fclose(fp);
}

Test(embed_cli, one_thread_and_a_seed_give_identical_files, .init = make_dir, .fini = remove_dir)
{
    write_inbox("inbox.txt");
    cr_assert_eq(learn("inbox.txt -o a.vecs --dimensions 12 --threads 1 --seed 3 --quiet"), 0);
    cr_assert_eq(learn("inbox.txt -o b.vecs --dimensions 12 --threads 1 --seed 3 --quiet"), 0);
    cr_assert_eq(learn("inbox.txt -o c.vecs --dimensions 12 --threads 1 --seed 4 --quiet"), 0);
    char cmd[256];
    snprintf(cmd, sizeof cmd, "cmp -s '%s/a.vecs' '%s/b.vecs'", dir, dir);
    cr_assert_eq(system(cmd), 0, "same seed, different files");
    snprintf(cmd, sizeof cmd, "cmp -s '%s/a.vecs' '%s/c.vecs'", dir, dir);
    cr_assert_neq(system(cmd), 0, "another seed, same file");
}

Test(embed_cli, bad_input_exits_2_without_output, .init = make_dir, .fini = remove_dir)
{
    write_inbox("inbox.txt");
    write_file("empty.txt", "\n\n  \n");
    cr_assert_eq(learn("empty.txt -o out.vecs"), 2);
    cr_assert(err_has("vecsift: empty.txt: no words in the corpus: its 3 documents hold none"));
    cr_assert_eq(learn("inbox.txt -o out.vecs --min-freq 1000"), 2);
    cr_assert(err_has("vecsift: inbox.txt: no word occurs 1000 times"));
    cr_assert(err_has("hint: lower --min-freq"));
    cr_assert_eq(learn("inbox.txt -o out.vecs --dimensions 0"), 2);
    cr_assert(err_has("dimensions"));
    cr_assert_eq(learn("inbox.txt -o out.vecs --dimensions 10001"), 2);
    cr_assert_eq(learn("inbox.txt -o out.vecs --window 0"), 2);
    cr_assert(err_has("window"));
    cr_assert_eq(learn("missing.txt -o out.vecs"), 1);
    cr_assert(err_has("vecsift: missing.txt: cannot open"));
    cr_assert_eq(learn("inbox.txt"), 2);
    cr_assert_eq(learn("inbox.txt -o inbox.txt"), 2);
    cr_assert(!exists("out.vecs"));
}

Test(embed_cli, invalid_utf8_names_file_and_line, .init = make_dir, .fini = remove_dir)
{
    write_file("bad.txt", "the printer jams\nthe \xff tray\n");
    cr_assert_eq(learn("bad.txt -o out.vecs --min-freq 1"), 2);
    cr_assert(err_has("vecsift: bad.txt:2: invalid UTF-8"));
    cr_assert(!exists("out.vecs"));
}

/* CSV input: the named columns joined, the same tokens as plain text. */
Test(embed_cli, csv_columns_give_the_tokens_of_the_joined_text, .init = make_dir, .fini = remove_dir)
{
    write_file("t.csv", "id,subject,body\r\n1,Printer JAM,\"the tray, again\"\r\n2,Login,\"password reset\"\r\n");
    write_file("t.txt", "Printer JAM the tray, again\nLogin password reset\n");
    cr_assert_eq(learn("t.csv --text-col subject --text-col body --min-freq 1 --dimensions 4 "
                       "-o a.vecs --write-tokens a.tok --quiet"), 0);
    cr_assert_eq(learn("t.txt --min-freq 1 --dimensions 4 -o b.vecs --write-tokens b.tok --quiet"), 0);
    char cmd[256];
    snprintf(cmd, sizeof cmd, "cd '%s' && cmp -s a.tok b.tok && cmp -s a.vecs b.vecs", dir);
    cr_assert_eq(system(cmd), 0);
    snprintf(cmd, sizeof cmd, "grep -qx 'printer jam the tray again' '%s/a.tok'", dir);
    cr_assert_eq(system(cmd), 0);
    cr_assert_eq(learn("t.csv --text-col nope -o c.vecs"), 2);
    cr_assert(err_has("vecsift: t.csv:1: no column 'nope'"));
    cr_assert_eq(learn("t.csv -o c.vecs"), 2); /* three columns, none named, no 'text' */
    cr_assert(err_has("vecsift: t.csv:1: no --text-col given and no column 'text'"));
    cr_assert(!exists("c.vecs"));
    write_file("u.csv", "id,text\n1,Printer JAM the tray\n2,\"again, Login password reset\"\n");
    cr_assert_eq(learn("u.csv --min-freq 1 --dimensions 4 -o u.vecs --write-tokens u.tok --quiet"), 0);
    snprintf(cmd, sizeof cmd, "grep -qx 'again login password reset' '%s/u.tok'", dir);
    cr_assert_eq(system(cmd), 0);
}

/* --start-from: known words begin at the stored vectors; a store of another
 * dimension is refused. */
Test(embed_cli, start_from_checks_dimensions, .init = make_dir, .fini = remove_dir)
{
    write_inbox("inbox.txt");
    cr_assert_eq(learn("inbox.txt -o base.vecs --dimensions 8 --quiet"), 0);
    cr_assert_eq(learn("inbox.txt -o more.vecs --dimensions 8 --start-from base.vecs --quiet"), 0);
    cr_assert_eq(learn("inbox.txt -o bad.vecs --dimensions 9 --start-from base.vecs"), 2);
    cr_assert(err_has("vecsift: base.vecs: has 8 dimensions, but --dimensions is 9"));
    cr_assert(!exists("bad.vecs"));
}

Test(embed, start_from_copies_known_rows)
{
    make_dir();
    const char *words[] = { "printer", "tray" };
    const float rows[] = { 1, 2, 3, 4, 5, 6 };
    char path[128];
    snprintf(path, sizeof path, "%s/s.vecs", dir);
    struct err e = ERR_INIT;
    cr_assert_eq(vecset_write(path, words, rows, 2, 3, &e), 0, "%s", e.msg);
    vecset *v = vecset_open(path, &e);
    cr_assert_not_null(v, "%s", e.msg);
    const char *d1[] = { "tray", "jam", "tray", "jam", "jam" };
    const char *const *docs[] = { d1 };
    const size_t lens[] = { 5 };
    struct embed_corpus c = EMBED_CORPUS_INIT;
    cr_assert_eq(embed_corpus_from_tokens(&c, docs, lens, 1, 1, "t", &e), 0);
    float vec[6] = { 0 };
    unsigned char known[2] = { 0 };
    cr_assert_eq(embed_start_from(&c, v, 3, vec, known, &e), 1);
    /* jam (3 times) is row 0 and unknown; tray is row 1 */
    cr_assert_eq(known[0], 0);
    cr_assert_eq(known[1], 1);
    cr_assert_float_eq(vec[3], 4.0f, 0);
    cr_assert_float_eq(vec[5], 6.0f, 0);
    cr_assert_eq(embed_start_from(&c, v, 4, vec, known, &e), -1);
    cr_assert(strstr(e.msg, "3 dimensions"), "%s", e.msg);
    vecset_close(v);
    embed_corpus_release(&c);
    remove_dir();
}

/* The text options are classification's (common.c): --mask-numbers turns
 * error codes' digits into text.h's placeholder. */
Test(embed_cli, text_options_reach_the_tokeniser, .init = make_dir, .fini = remove_dir)
{
    write_file("n.txt", "error 404 again\nerror 500 again\n");
    cr_assert_eq(learn("n.txt --min-freq 1 --mask-numbers -o a.vecs --write-tokens a.tok --quiet"), 0);
    char cmd[256];
    snprintf(cmd, sizeof cmd, "grep -qx 'error " TEXT_MASK_NUMBER " again' '%s/a.tok'", dir);
    cr_assert_eq(system(cmd), 0);
    cr_assert_eq(learn("n.txt --min-freq 1 -o b.vecs --write-tokens b.tok --quiet"), 0);
    snprintf(cmd, sizeof cmd, "grep -qx 'error 404 again' '%s/b.tok'", dir);
    cr_assert_eq(system(cmd), 0);
}

/* The sigmoid against the C library's double-precision exp (the reference):
 * within 4 float ulps (relative 2.4e-7 of the true value) from -40 to 40,
 * 0 or 1 to float precision beyond, and monotone. */
Test(embed, sigmoid_matches_the_c_library_to_a_few_ulp)
{
    float prev = 0;
    double worst = 0;
    for (int i = -400000; i <= 400000; i++) {
        float x = (float)i * 1e-4f;
        double want = 1.0 / (1.0 + exp(-(double)x));
        float got = embed_sigmoid(x);
        double rel = fabs((double)got - want) / want;
        if (rel > worst)
            worst = rel;
        cr_assert(got >= prev, "not monotone at %g: %.9g < %.9g", (double)x, (double)got, (double)prev);
        prev = got;
    }
    cr_assert(worst <= 4 * 0x1p-24, "largest relative error %g", worst);
    cr_assert_eq(embed_sigmoid(200.0f), 1.0f);
    cr_assert(embed_sigmoid(-200.0f) < 1e-37f && embed_sigmoid(-200.0f) >= 0.0f);
    cr_assert_eq(embed_sigmoid(0.0f), 0.5f);
    cr_assert(embed_sigmoid(NAN) >= 0.0f && embed_sigmoid(NAN) < 1e-37f); /* defined, not a crash */
}
