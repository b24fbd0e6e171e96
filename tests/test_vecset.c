/* test_vecset.c -- packed vector sets: writing, opening, lookup, damage
 * checks, neighbours, text import and export. */
#include <criterion/criterion.h>
#include <math.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "vecsift/err.h"
#include "vecsift/rng.h"
#include "vecsift/text.h"
#include "vecsift/vecset.h"

static char dir[] = "/tmp/vecset-test-XXXXXX";
static char pathbuf[4][256];

static void setup(void)
{
    cr_assert_not_null(mkdtemp(dir));
}

static void teardown(void)
{
    char cmd[300];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
    if (system(cmd) != 0) { /* best effort */ }
}

TestSuite(vecset, .init = setup, .fini = teardown);

static const char *tmp(int i, const char *name)
{
    snprintf(pathbuf[i], sizeof pathbuf[i], "%s/%s", dir, name);
    return pathbuf[i];
}

static void write_text(const char *path, const char *s)
{
    FILE *fp = fopen(path, "wb");
    cr_assert_not_null(fp);
    fputs(s, fp);
    fclose(fp);
}

/* A 4-word, 2-dimension store: cosines are known by hand (common practice:
 * cos(a,b) = a.b / (|a||b|)). */
static const char *const W4[] = { "east", "north", "northeast", "west" };
static const float R4[] = { 1, 0, 0, 2, 3, 3, -0.5f, 0 };

static vecset *four(struct err *e)
{
    const char *p = tmp(0, "four.vecs");
    cr_assert_eq(vecset_write(p, W4, R4, 4, 2, e), 0, "%s", e->msg);
    vecset *v = vecset_open(p, e);
    cr_assert_not_null(v, "%s", e->msg);
    return v;
}

Test(vecset, write_open_lookup)
{
    struct err e = ERR_INIT;
    vecset *v = four(&e);
    cr_assert_eq(vecset_count(v), 4);
    cr_assert_eq(vecset_dim(v), 2);
    for (size_t i = 0; i < 4; i++) {
        cr_assert_eq(vecset_find(v, W4[i]), (long)i);
        cr_assert_str_eq(vecset_word(v, i), W4[i]);
        cr_assert_eq(memcmp(vecset_row(v, i), R4 + 2 * i, 8), 0);
        cr_assert_float_eq(vecset_norm(v, i), hypot(R4[2 * i], R4[2 * i + 1]), 1e-6);
    }
    cr_assert_eq(vecset_find(v, "south"), -1);
    cr_assert_eq(vecset_find(v, ""), -1);
    cr_assert_null(vecset_row(v, 4));
    cr_assert_eq(vecset_verify(v, &e), 0, "%s", e.msg);
    vecset_close(v);
}

Test(vecset, nearest_by_hand)
{
    struct err e = ERR_INIT;
    vecset *v = four(&e);
    struct vecset_hit h[4];
    float q[2] = { 1, 0 };
    size_t ex = 0;
    long n = vecset_nearest(v, q, 4, &ex, 1, 2, h, &e);
    /* east excluded; northeast cos 1/sqrt(2); north 0; west -1 */
    cr_assert_eq(n, 3);
    cr_assert_eq(h[0].row, 2);
    cr_assert_float_eq(h[0].cos, 1 / sqrt(2.0), 1e-7);
    cr_assert_eq(h[1].row, 1);
    cr_assert_float_eq(h[1].cos, 0, 1e-12);
    cr_assert_eq(h[2].row, 3);
    cr_assert_float_eq(h[2].cos, -1, 1e-12);
    vecset_close(v);
}

Test(vecset, fingerprint_follows_content)
{
    struct err e = ERR_INIT;
    vecset *v = four(&e);
    uint64_t f1 = vecset_fingerprint(v);
    vecset_close(v);
    float r[8];
    memcpy(r, R4, sizeof r);
    r[5] = nextafterf(r[5], 10); /* one float, one ulp */
    const char *p = tmp(1, "other.vecs");
    cr_assert_eq(vecset_write(p, W4, r, 4, 2, &e), 0);
    v = vecset_open(p, &e);
    cr_assert_neq(vecset_fingerprint(v), f1);
    vecset_close(v);
    v = four(&e);
    cr_assert_eq(vecset_fingerprint(v), f1, "same content, same fingerprint");
    char hex[17];
    vecset_fingerprint_hex(0x00ab, hex);
    cr_assert_str_eq(hex, "00000000000000ab");
    vecset_close(v);
}

/* tmp(0, "rand.vecs"): N x D normal draws (seeded), words w0, w1, ...;
 * returns the rows. */
enum { N = 5000, D = 16 };
static const float *rand_store(uint64_t seed, struct err *e)
{
    static float rows[N * D];
    static char names[N][8];
    static const char *words[N];
    struct rng r;
    rng_seed(&r, seed);
    for (size_t i = 0; i < N * D; i++)
        rows[i] = (float)rng_normal(&r);
    for (int i = 0; i < N; i++) {
        snprintf(names[i], sizeof names[i], "w%d", i);
        words[i] = names[i];
    }
    cr_assert_eq(vecset_write(tmp(0, "rand.vecs"), words, rows, N, D, e), 0);
    return rows;
}

/* The answer must not depend on the thread count (DESIGN.md conventions). */
Test(vecset, nearest_same_for_any_thread_count)
{
    struct err e = ERR_INIT;
    const float *rows = rand_store(3, &e);
    const char *p = tmp(0, "rand.vecs");
    vecset *v = vecset_open(p, &e);
    struct vecset_hit a[20], b[20];
    long na = vecset_nearest(v, rows, 20, NULL, 0, 1, a, &e);
    long nb = vecset_nearest(v, rows, 20, NULL, 0, 7, b, &e);
    cr_assert_eq(na, 20);
    cr_assert_eq(nb, 20);
    cr_assert_eq(memcmp(a, b, sizeof a), 0);
    cr_assert_eq(a[0].row, 0);
    cr_assert_float_eq(a[0].cos, 1.0, 1e-6);
    vecset_close(v);
}

static int pack(const char *text, const char *out, int threads, struct vecset_pack_stats *st, struct err *e)
{
    const char *in = tmp(2, "in.txt");
    write_text(in, text);
    struct text_options to = TEXT_OPTIONS_INIT;
    return vecset_pack_text(in, out, &to, threads, st, e);
}

Test(vecset, pack_header_crlf_tabs_and_merges)
{
    struct err e = ERR_INIT;
    struct vecset_pack_stats st;
    const char *out = tmp(1, "p.vecs");
    cr_assert_eq(pack("3 2\r\nalpha 1 2\r\nbeta\t3\t4 \r\nalpha 5 6\r\n", out, 2, &st, &e), 0, "%s", e.msg);
    cr_assert_eq(st.rows, 2);
    cr_assert_eq(st.merged, 1);
    cr_assert_eq(st.lines, 4);
    vecset *v = vecset_open(out, &e);
    cr_assert_eq(vecset_find(v, "alpha"), 0);
    cr_assert_eq(vecset_row(v, 0)[1], 2.0f, "the first entry wins");
    cr_assert_eq(vecset_row(v, 1)[1], 4.0f);
    vecset_close(v);
}

/* Every bad input: error names file and line, no output file. */
Test(vecset, pack_bad_inputs)
{
    static const struct {
        const char *text, *want;
    } cases[] = {
        { "a 1 2\nb 1 2 3\n", "in.txt:2: line has 3 numbers after the token, expected 2" },
        { "a 1 2\nb 1\n", "in.txt:2: line has 1 numbers after the token, expected 2" },
        { "a 1 2\n\nb 1 x2\n", "in.txt:3: number 2, 'x2', is not a number" },
        { "a 1 nan\n", "in.txt:1: number 2 is 'nan'; vector values must be finite" },
        { "a 1 2\nb -inf 2\n", "in.txt:2: number 1 is '-inf'; vector values must be finite" },
        { "a 1 1e39\n", "in.txt:1: number 2, '1e39', is too large for a 32-bit float" },
        { "3 2\na 1 2\nb 3 4\n", "in.txt:1: header line says 3 vectors but the file has 2" },
        { "2 3\na 1 2\nb 3 4\n", "in.txt:2: line has 2 numbers after the token, expected 3" },
        { "", "in.txt: empty file" },
        { "\n \r\n", "in.txt: empty file" },
        { "2 2\n", "in.txt: empty file: a header line but no vectors" },
        { "lonely\n", "in.txt:1: line has a token but no numbers" },
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        struct err e = ERR_INIT;
        struct vecset_pack_stats st;
        const char *out = tmp(1, "bad.vecs");
        cr_assert_eq(pack(cases[i].text, out, 2, &st, &e), -1, "case %zu accepted", i);
        cr_assert_eq(e.code, ERR_INPUT);
        cr_assert(strstr(e.msg, cases[i].want), "case %zu: '%s' lacks '%s'", i, e.msg, cases[i].want);
        cr_assert_eq(access(out, F_OK), -1, "case %zu left an output file", i);
    }
}

static char *slurp(const char *path, size_t *len)
{
    FILE *fp = fopen(path, "rb");
    cr_assert_not_null(fp, "%s", path);
    fseek(fp, 0, SEEK_END);
    *len = (size_t)ftell(fp);
    rewind(fp);
    char *b = malloc(*len + 1);
    cr_assert_eq(fread(b, 1, *len, fp), *len);
    fclose(fp);
    return b;
}

/* A text of 'lines' entries of 'dim' random numbers, printed in a few
 * shapes, with every 30th token repeated (first wins) and a few tokens that
 * normalise (upper case, accents) onto earlier ones. */
static char *big_text(int lines, int dim, size_t *len)
{
    struct rng r;
    rng_seed(&r, 11);
    size_t cap = (size_t)lines * (size_t)(dim * 16 + 32) + 1;
    char *text = malloc(cap);
    *len = 0;
    for (int i = 0; i < lines; i++) {
        if (i % 97 == 5)
            *len += (size_t)snprintf(text + *len, cap - *len, "W%d", i - 3); /* upper case: merges */
        else
            *len += (size_t)snprintf(text + *len, cap - *len, "w%d", i % 30 == 29 ? i - 7 : i);
        for (int j = 0; j < dim; j++) {
            double x = 0.4 * rng_normal(&r);
            const char *fmt = (i + j) % 5 == 0 ? "\t%.7g" : (i + j) % 5 == 1 ? " %.9g" : " %.6f";
            *len += (size_t)snprintf(text + *len, cap - *len, fmt, x);
        }
        text[(*len)++] = i % 11 == 0 ? '\r' : '\n';
        if (text[*len - 1] == '\r')
            text[(*len)++] = '\n';
    }
    text[*len] = '\0';
    return text;
}

/* A file of several chunks (about 7 MB; chunks are 1 MB) packed with 1,
 * 2, 3 and 5 threads: the same bytes, the same counts.  Rows, first-wins
 * dedupe and the fingerprint follow file order whatever thread parsed
 * what. */
Test(vecset, pack_same_bytes_for_any_thread_count, .timeout = 60)
{
    struct err e = ERR_INIT;
    struct vecset_pack_stats st, st1;
    size_t len;
    char *text = big_text(12000, 50, &len);
    cr_assert_gt(len, 5u << 20);
    const char *a = tmp(0, "t1.vecs"), *b = tmp(1, "tn.vecs");
    cr_assert_eq(pack(text, a, 1, &st1, &e), 0, "%s", e.msg);
    /* which lines repeat a token (after case folding) that came before */
    static char seen[12000];
    size_t want = 0;
    for (int i = 0; i < 12000; i++) {
        int id = i % 97 == 5 ? i - 3 : i % 30 == 29 ? i - 7 : i;
        want += seen[id];
        seen[id] = 1;
    }
    cr_assert_eq(st1.merged, want, "merged %zu, expected %zu", st1.merged, want);
    cr_assert_eq(st1.rows + st1.merged, 12000);
    size_t la, lb;
    char *ba = slurp(a, &la);
    int counts[] = { 2, 3, 5 };
    for (int k = 0; k < 3; k++) {
        cr_assert_eq(pack(text, b, counts[k], &st, &e), 0, "%s", e.msg);
        char *bb = slurp(b, &lb);
        cr_assert_eq(lb, la, "%d threads: %zu bytes, 1 thread %zu", counts[k], lb, la);
        cr_assert_eq(memcmp(ba, bb, la), 0, "%d threads: different bytes", counts[k]);
        cr_assert_eq(st.rows, st1.rows);
        cr_assert_eq(st.merged, st1.merged);
        cr_assert_eq(st.lines, st1.lines);
        free(bb);
    }
    free(ba);
    free(text);
}

/* Two bad lines in different chunks: every thread count names the first. */
Test(vecset, pack_first_error_for_any_thread_count, .timeout = 60)
{
    size_t len;
    char *text = big_text(12000, 50, &len);
    /* line 2001 (in the second or third chunk) gets a word for a number,
     * line 9001 (a later chunk) a missing number */
    char *l2001 = text, *l9001;
    for (int i = 0; i < 2000; i++)
        l2001 = strchr(l2001, '\n') + 1;
    l9001 = l2001;
    for (int i = 2000; i < 9000; i++)
        l9001 = strchr(l9001, '\n') + 1;
    char *nl = strchr(l9001, '\n');
    char *sp = nl;
    while (*sp != ' ' && *sp != '\t')
        sp--;
    memset(sp, ' ', (size_t)(nl - sp)); /* the last number blanked */
    char *f = strchr(l2001, ' ') ? strchr(l2001, ' ') : strchr(l2001, '\t');
    char *g = strchr(l2001, '\t');
    if (g && g < f)
        f = g;
    memcpy(f + 1, "abc", 3);
    for (int t = 1; t <= 4; t++) {
        struct err e = ERR_INIT;
        struct vecset_pack_stats st;
        const char *out = tmp(1, "bad.vecs");
        cr_assert_eq(pack(text, out, t, &st, &e), -1);
        cr_assert(strstr(e.msg, "in.txt:2001: number 1, 'abc"), "%d threads: %s", t, e.msg);
        cr_assert_eq(access(out, F_OK), -1);
    }
    free(text);
}

Test(vecset, export_then_pack_keeps_fingerprint)
{
    struct err e = ERR_INIT;
    struct vecset_pack_stats st;
    const char *out = tmp(1, "e.vecs"), *txt = tmp(3, "e.txt");
    cr_assert_eq(pack("x 0.1 -2.5e-7 3\ny 1e-40 123456.79 0\n", out, 1, &st, &e), 0, "%s", e.msg);
    vecset *v = vecset_open(out, &e);
    uint64_t f = vecset_fingerprint(v);
    cr_assert_eq(vecset_export_text(v, txt, &e), 0);
    vecset_close(v);
    struct text_options to = TEXT_OPTIONS_INIT;
    const char *again = tmp(0, "again.vecs");
    cr_assert_eq(vecset_pack_text(txt, again, &to, 2, &st, &e), 0, "%s", e.msg);
    v = vecset_open(again, &e);
    cr_assert_eq(vecset_fingerprint(v), f);
    vecset_close(v);
}

/* Truncated, foreign and too-new files are refused at open, whatever the
 * length they are cut to. */
Test(vecset, open_refuses_damaged_files)
{
    struct err e = ERR_INIT;
    vecset *v = four(&e);
    vecset_close(v);
    FILE *fp = fopen(tmp(0, "four.vecs"), "rb");
    unsigned char buf[4096];
    size_t len = fread(buf, 1, sizeof buf, fp);
    fclose(fp);
    const char *p = tmp(1, "cut.vecs");
    for (size_t cut = 0; cut < len; cut++) {
        FILE *o = fopen(p, "wb");
        fwrite(buf, 1, cut, o);
        fclose(o);
        err_clear(&e);
        cr_assert_null(vecset_open(p, &e), "cut at %zu opened", cut);
        cr_assert_eq(e.code, ERR_INPUT, "cut at %zu: %s", cut, e.msg);
        cr_assert(strstr(e.msg, "cut.vecs"), "%s", e.msg);
    }
    /* a newer major version */
    unsigned char b2[4096];
    memcpy(b2, buf, len);
    b2[8] = 2;
    FILE *o = fopen(p, "wb");
    fwrite(b2, 1, len, o);
    fclose(o);
    err_clear(&e);
    cr_assert_null(vecset_open(p, &e));
    cr_assert(strstr(e.msg, "version 2.0 is newer"), "%s", e.msg);
    /* a section pointing past the end (rows offset) */
    memcpy(b2, buf, len);
    b2[48 + 7] = 0x40;
    o = fopen(p, "wb");
    fwrite(b2, 1, len, o);
    fclose(o);
    err_clear(&e);
    cr_assert_null(vecset_open(p, &e));
    /* a text file */
    write_text(p, "east 1 0\n");
    err_clear(&e);
    cr_assert_null(vecset_open(p, &e));
    cr_assert(strstr(e.msg, "not a packed vector store"), "%s", e.msg);
}

/* Index entries are never trusted: a row id past the end reads as absent. */
Test(vecset, damaged_index_entry_is_not_followed)
{
    struct err e = ERR_INIT;
    vecset *v = four(&e);
    vecset_close(v);
    const char *p = tmp(0, "four.vecs");
    FILE *fp = fopen(p, "r+b");
    uint64_t hdr[16];
    cr_assert_eq(fread(hdr, 8, 16, fp), 16);
    uint64_t index_off = hdr[14], index_size = hdr[15];
    for (uint64_t s = 0; s < index_size / 4; s++) {
        uint32_t bad = 1000;
        fseek(fp, (long)(index_off + 4 * s), SEEK_SET);
        fwrite(&bad, 4, 1, fp);
    }
    fclose(fp);
    v = vecset_open(p, &e);
    cr_assert_not_null(v, "%s", e.msg);
    cr_assert_eq(vecset_find(v, "east"), -1);
    vecset_close(v);
}

/* The import's fast path for plain ASCII tokens must give exactly what
 * text_normalize_token gives (text.h is the reference). */
Test(vecset, plain_tokens_normalise_as_text_does)
{
    static const char *const toks[] = { "printer", "abc123", "x9", "2024", "router", "wifi", "vpn" };
    char body[1024] = "";
    for (size_t i = 0; i < 7; i++) {
        strcat(body, toks[i]);
        strcat(body, " 1 2\n");
    }
    struct err e = ERR_INIT;
    struct vecset_pack_stats st;
    const char *out = tmp(1, "plain.vecs");
    cr_assert_eq(pack(body, out, 1, &st, &e), 0, "%s", e.msg);
    vecset *v = vecset_open(out, &e);
    struct text_options to = TEXT_OPTIONS_INIT;
    size_t row = 0;
    for (size_t i = 0; i < 7; i++) {
        char *n = text_normalize_token(toks[i], strlen(toks[i]), &to);
        if (!n)
            continue;
        cr_assert_str_eq(vecset_word(v, row), n);
        row++;
        free(n);
    }
    cr_assert_eq(row, vecset_count(v));
    vecset_close(v);
}

/* The same on 3000 random tokens of lowercase letters and digits (all-digit
 * ones included), with numbers kept and with numbers masked. */
Test(vecset, random_plain_tokens_normalise_as_text_does)
{
    struct rng r;
    rng_seed(&r, 5);
    static const char alnum[] = "abcdefghijklmnopqrstuvwxyz0123456789";
    size_t cap = 1 << 16, len = 0;
    char *body = malloc(cap);
    char toks[3000][12];
    for (int i = 0; i < 3000; i++) {
        size_t n = 1 + rng_below(&r, 10);
        int digits = rng_below(&r, 4) == 0;
        for (size_t k = 0; k < n; k++)
            toks[i][k] = digits ? (char)('0' + rng_below(&r, 10)) : alnum[rng_below(&r, 36)];
        toks[i][n] = '\0';
        len += (size_t)snprintf(body + len, cap - len, "%s 1\n", toks[i]);
    }
    for (int mask = 0; mask <= 1; mask++) {
        struct text_options to = TEXT_OPTIONS_INIT;
        to.mask_number = mask;
        const char *in = tmp(2, "plain.txt"), *out = tmp(1, "rplain.vecs");
        write_text(in, body);
        struct err e = ERR_INIT;
        struct vecset_pack_stats st;
        cr_assert_eq(vecset_pack_text(in, out, &to, 2, &st, &e), 0, "%s", e.msg);
        vecset *v = vecset_open(out, &e);
        size_t row = 0;
        for (int i = 0; i < 3000; i++) {
            char *n = text_normalize_token(toks[i], strlen(toks[i]), &to);
            if (n && vecset_find(v, n) == (long)row) {
                cr_assert_str_eq(vecset_word(v, row), n);
                row++;
            } else if (n) {
                cr_assert_geq(vecset_find(v, n), 0, "'%s' -> '%s' missing", toks[i], n);
            }
            free(n);
        }
        cr_assert_eq(row, vecset_count(v), "mask %d: %zu rows, %zu matched", mask, vecset_count(v), row);
        cr_assert_eq(st.rows + st.merged + st.unusable, 3000);
        vecset_close(v);
    }
    free(body);
}

/* ---- damage found where rows are read (open reads no row) ---- */

/* Overwrite the float at 'index' of the section whose offset the header
 * keeps at byte 'field' (48: rows, 64: norms; docs/vecs-format.md). */
static void poke_float(const char *path, int field, size_t index, float value)
{
    FILE *fp = fopen(path, "r+b");
    cr_assert_not_null(fp);
    uint64_t off = 0;
    cr_assert_eq(fseek(fp, field, SEEK_SET), 0);
    cr_assert_eq(fread(&off, 8, 1, fp), 1);
    cr_assert_eq(fseek(fp, (long)(off + 4 * index), SEEK_SET), 0);
    cr_assert_eq(fwrite(&value, 4, 1, fp), 1);
    fclose(fp);
}

static vecset *four_poked(int field, size_t index, float value, struct err *e)
{
    const char *p = tmp(0, "four.vecs");
    cr_assert_eq(vecset_write(p, W4, R4, 4, 2, e), 0, "%s", e->msg);
    poke_float(p, field, index, value);
    vecset *v = vecset_open(p, e);
    cr_assert_not_null(v, "open stays flat and reads no row: %s", e->msg);
    return v;
}

Test(vecset, nan_in_a_row_is_damage_where_read)
{
    struct err e = ERR_INIT;
    vecset *v = four_poked(48, 3, NAN, &e); /* north = (0, NaN) */
    cr_assert_eq(vecset_check_row(v, 0, &e), 0, "east is intact");
    cr_assert_eq(vecset_check_row(v, 1, &e), -1);
    cr_assert_eq(e.code, ERR_INPUT);
    cr_assert(strstr(e.msg, "damaged packed store: the vector of 'north' (row 2) holds NaN at position 2"), "%s",
              e.msg);
    struct vecset_hit h[4];
    float q[2] = { 1, 0 };
    struct err e2 = ERR_INIT;
    cr_assert_eq(vecset_nearest(v, q, 4, NULL, 0, 1, h, &e2), -1, "near must not rank a NaN");
    cr_assert_str_eq(e2.msg, e.msg);
    struct err e3 = ERR_INIT;
    cr_assert_eq(vecset_verify(v, &e3), -1);
    cr_assert(strstr(e3.msg, "'north' (row 2) holds NaN"), "%s", e3.msg);
    vecset_close(v);
    err_clear(&e);
    v = four_poked(48, 6, -INFINITY, &e); /* west */
    cr_assert_eq(vecset_check_row(v, 3, &e), -1);
    cr_assert(strstr(e.msg, "'west' (row 4) holds an infinity at position 1"), "%s", e.msg);
    cr_assert_eq(vecset_nearest(v, q, 4, NULL, 0, 1, h, &e), -1);
    vecset_close(v);
}

/* A damaged norm used to pass for "the zero vector". */
Test(vecset, damaged_norm_is_damage_not_a_zero_vector)
{
    struct err e = ERR_INIT;
    struct vecset_hit h[4];
    float q[2] = { 0, 1 };
    const float bad[] = { 0, NAN, -2, INFINITY, 1 }; /* north's norm is 2 */
    for (size_t b = 0; b < sizeof bad / sizeof bad[0]; b++) {
        err_clear(&e);
        vecset *v = four_poked(64, 1, bad[b], &e);
        cr_assert_eq(vecset_check_row(v, 1, &e), -1, "norm %g", bad[b]);
        cr_assert(strstr(e.msg, "damaged packed store: the stored length of 'north' (row 2) is "), "%s", e.msg);
        cr_assert(strstr(e.msg, "its vector's is 2"), "%s", e.msg);
        struct err e2 = ERR_INIT;
        /* 1: cos 2 > 1, caught by the Cauchy-Schwarz bound */
        cr_assert_eq(vecset_nearest(v, q, 4, NULL, 0, 1, h, &e2), -1, "norm %g", bad[b]);
        cr_assert(strstr(e2.msg, "'north' (row 2)"), "%s", e2.msg);
        vecset_close(v);
    }
}

Test(vecset, true_zero_vector_is_not_damage)
{
    struct err e = ERR_INIT;
    static const char *const w[] = { "a", "nothing", "b" };
    static const float r[] = { 1, 0, 0, 0, 0, 1 };
    const char *p = tmp(0, "zero.vecs");
    cr_assert_eq(vecset_write(p, w, r, 3, 2, &e), 0);
    vecset *v = vecset_open(p, &e);
    cr_assert_eq(vecset_check_row(v, 1, &e), 0, "%s", e.msg);
    cr_assert_eq(vecset_norm(v, 1), 0.0f);
    struct vecset_hit h[3];
    float q[2] = { 1, 1 };
    cr_assert_eq(vecset_nearest(v, q, 3, NULL, 0, 1, h, &e), 2, "the zero row never matches: %s", e.msg);
    cr_assert_eq(vecset_verify(v, &e), 0, "%s", e.msg);
    vecset_close(v);
}

/* The first damaged row is named whatever the thread count (each thread
 * stops at the first in its part; parts are taken in row order). */
Test(vecset, damage_named_the_same_for_any_thread_count)
{
    struct err e = ERR_INIT;
    const float *rows = rand_store(4, &e);
    const char *p = tmp(0, "rand.vecs");
    poke_float(p, 48, (size_t)4000 * D + 5, NAN);
    poke_float(p, 48, (size_t)1200 * D + 3, NAN);
    vecset *v = vecset_open(p, &e);
    cr_assert_not_null(v);
    struct vecset_hit h[5];
    for (int t = 1; t <= 7; t++) {
        struct err et = ERR_INIT;
        cr_assert_eq(vecset_nearest(v, rows, 5, NULL, 0, t, h, &et), -1);
        cr_assert(strstr(et.msg, "'w1200' (row 1201) holds NaN at position 4"), "threads %d: %s", t, et.msg);
    }
    vecset_close(v);
}

/* ---- pieces (format 1.1) ---- */

/* A 2-word, 3-dimension store with pieces of 3 characters in 64 buckets:
 * rows for the buckets of four pieces of "where" (<wh whe her ere). */
static const char *const WP[] = { "where", "here" };
static const float RP[] = { 1, 2, 3, -1, 0, 1 };
static uint32_t PB[4];
static float PR[12];

static struct vecset_pieces make_pieces(void)
{
    static const char *const g[] = { "<wh", "whe", "her", "ere" };
    uint32_t ids[4];
    for (int i = 0; i < 4; i++)
        ids[i] = pieces_fnv1a32(g[i], 3) % 64u;
    /* ascending, as the store wants; the four differ for these pieces */
    for (int i = 0; i < 4; i++) {
        int r = 0;
        for (int j = 0; j < 4; j++)
            r += ids[j] < ids[i];
        PB[r] = ids[i];
    }
    for (int i = 0; i < 12; i++)
        PR[i] = (float)(i + 1) * 0.25f;
    struct vecset_pieces pc = { { 3, 3, 64 }, 4, PB, PR };
    return pc;
}

static vecset *with_pieces(struct err *e)
{
    struct vecset_pieces pc = make_pieces();
    const char *p = tmp(2, "pieces.vecs");
    cr_assert_eq(vecset_write_pieces(p, WP, RP, 2, 3, &pc, e), 0, "%s", e->msg);
    vecset *v = vecset_open(p, e);
    cr_assert_not_null(v, "%s", e->msg);
    return v;
}

static uint32_t header_u32(const char *path, long off)
{
    FILE *fp = fopen(path, "rb");
    uint32_t x = 0;
    fseek(fp, off, SEEK_SET);
    cr_assert_eq(fread(&x, 4, 1, fp), 1);
    fclose(fp);
    return x;
}

Test(vecset, pieces_round_trip)
{
    struct err e = ERR_INIT;
    vecset *v = with_pieces(&e);
    const struct pieces_params *pp = vecset_pieces(v);
    cr_assert_not_null(pp);
    cr_assert_eq(pp->min_len, 3);
    cr_assert_eq(pp->max_len, 3);
    cr_assert_eq(pp->buckets, 64);
    cr_assert_eq(vecset_piece_count(v), 4);
    for (size_t i = 0; i < 4; i++) {
        cr_assert_eq(vecset_piece_bucket(v, i), PB[i]);
        cr_assert_eq(memcmp(vecset_piece_row(v, i), PR + 3 * i, 12), 0);
        cr_assert_eq(vecset_piece_find(v, PB[i]), (long)i);
    }
    cr_assert_null(vecset_piece_row(v, 4));
    cr_assert_eq(vecset_find(v, "where"), 0);
    cr_assert_eq(memcmp(vecset_row(v, 1), RP + 3, 12), 0);
    cr_assert_eq(vecset_verify(v, &e), 0, "%s", e.msg);
    cr_assert_eq(header_u32(tmp(2, "pieces.vecs"), 12), 1, "minor version 1.1");
    cr_assert_eq(header_u32(tmp(2, "pieces.vecs"), 16), 192, "header size");
    /* the fingerprint covers the pieces: the same words without them differ */
    uint64_t f = vecset_fingerprint(v);
    vecset_close(v);
    cr_assert_eq(vecset_write(tmp(3, "plain.vecs"), WP, RP, 2, 3, &e), 0);
    v = vecset_open(tmp(3, "plain.vecs"), &e);
    cr_assert_neq(vecset_fingerprint(v), f);
    vecset_close(v);
}

/* A store without pieces is format 1.0 as before: 128-byte header, minor 0;
 * and it answers "no pieces". */
Test(vecset, store_without_pieces_stays_1_0)
{
    struct err e = ERR_INIT;
    vecset *v = four(&e);
    cr_assert_null(vecset_pieces(v));
    cr_assert_eq(vecset_piece_count(v), 0);
    float out[2] = { 9, 9 };
    cr_assert_eq(vecset_compose(v, "northwest", 9, out), 0);
    cr_assert_eq(out[0], 9);
    vecset_close(v);
    cr_assert_eq(header_u32(tmp(0, "four.vecs"), 12), 0);
    cr_assert_eq(header_u32(tmp(0, "four.vecs"), 16), 128);
}

/* Files written before pieces existed still open: the committed fuzz seed
 * small.vecs was packed by an early 1.0 writer (its fingerprint predates
 * the current definition, so only the content is checked). */
Test(vecset, old_1_0_file_opens)
{
    struct err e = ERR_INIT;
    const char *p = VECSIFT_SOURCE_DIR "/tests/fuzz/corpus/vecopen/small.vecs";
    vecset *v = vecset_open(p, &e);
    cr_assert_not_null(v, "%s", e.msg);
    cr_assert_eq(header_u32(p, 12), 0);
    cr_assert_gt(vecset_count(v), 0);
    cr_assert_null(vecset_pieces(v));
    for (size_t i = 0; i < vecset_count(v); i++)
        cr_assert_eq(vecset_find(v, vecset_word(v, i)), (long)i);
    vecset_close(v);
}

/* Composition: the rows of the word's pieces that the store holds, summed
 * and divided by the number of its pieces (a piece not held counts as a
 * zero row).  "wherever" has the 8 pieces <wh whe her ere (held) and rev
 * eve ver er> (in buckets the store may or may not hold: counted here). */
Test(vecset, compose_is_mean_of_held_pieces)
{
    struct err e = ERR_INIT;
    vecset *v = with_pieces(&e);
    static const char *const g[] = { "<wh", "whe", "her", "ere", "rev", "eve", "ver", "er>" };
    double want[3] = { 0, 0, 0 };
    size_t n = 0;
    for (int i = 0; i < 8; i++) {
        long r = vecset_piece_find(v, pieces_fnv1a32(g[i], 3) % 64u);
        if (r < 0)
            continue;
        for (int d = 0; d < 3; d++)
            want[d] += vecset_piece_row(v, (size_t)r)[d];
        n++;
    }
    cr_assert_geq(n, 4);
    float out[3];
    cr_assert_eq(vecset_compose(v, "wherever", 8, out), n);
    for (int d = 0; d < 3; d++)
        cr_assert_eq(out[d], (float)(want[d] / 8.0));
    /* a word none of whose pieces is held leaves 'out' alone */
    float keep[3] = { 7, 7, 7 };
    size_t got = vecset_compose(v, "zq", 2, keep);
    if (got == 0)
        cr_assert_eq(keep[0], 7);
    vecset_close(v);
}

struct compose_job {
    const vecset *v;
    float out[50][3];
};

static void *compose_many(void *arg)
{
    struct compose_job *j = arg;
    char w[32];
    for (int i = 0; i < 50; i++) {
        snprintf(w, sizeof w, "where%d", i);
        memset(j->out[i], 0, sizeof j->out[i]);
        vecset_compose(j->v, w, strlen(w), j->out[i]);
    }
    return NULL;
}

/* vecset_compose on four threads at once gives what it gives on one. */
Test(vecset, compose_thread_safe)
{
    struct err e = ERR_INIT;
    vecset *v = with_pieces(&e);
    static struct compose_job one, four_[4];
    one.v = v;
    compose_many(&one);
    pthread_t t[4];
    for (int i = 0; i < 4; i++) {
        four_[i].v = v;
        cr_assert_eq(pthread_create(&t[i], NULL, compose_many, &four_[i]), 0);
    }
    for (int i = 0; i < 4; i++) {
        pthread_join(t[i], NULL);
        cr_assert_eq(memcmp(four_[i].out, one.out, sizeof one.out), 0);
    }
    vecset_close(v);
}

/* Overwrite 'size' bytes at 'off' of 'src' into 'dst'. */
static void patched(const char *src, const char *dst, long off, const void *val, size_t size)
{
    FILE *fp = fopen(src, "rb");
    unsigned char buf[8192];
    size_t len = fread(buf, 1, sizeof buf, fp);
    fclose(fp);
    cr_assert_lt(len, sizeof buf);
    memcpy(buf + off, val, size);
    fp = fopen(dst, "wb");
    fwrite(buf, 1, len, fp);
    fclose(fp);
}

static void assert_refused(const char *path, const char *what)
{
    struct err e = ERR_INIT;
    vecset *v = vecset_open(path, &e);
    cr_assert_null(v, "damaged pieces header (%s) opened", what);
    cr_assert_eq(e.code, ERR_INPUT, "%s: %s", what, e.msg);
    cr_assert(strstr(e.msg, "damaged.vecs"), "%s: %s", what, e.msg);
}

/* Every way the pieces fields can lie is refused at open, naming the file;
 * the piece ids' order is checked by verify. */
Test(vecset, damaged_pieces_refused)
{
    struct err e = ERR_INIT;
    vecset_close(with_pieces(&e));
    const char *src = tmp(2, "pieces.vecs"), *dst = tmp(3, "damaged.vecs");
    uint64_t hdr[24];
    FILE *fp = fopen(src, "rb");
    cr_assert_eq(fread(hdr, 8, 24, fp), 24);
    fclose(fp);
    /* byte offsets of the 1.1 fields (docs/vecs-format.md) */
    uint32_t zero = 0, big = 17, two = 2;
    patched(src, dst, 128, &zero, 4);
    assert_refused(dst, "min length 0");
    patched(src, dst, 132, &big, 4);
    assert_refused(dst, "max length 17");
    patched(src, dst, 128, &(uint32_t){ 4 }, 4);
    assert_refused(dst, "min above max");
    patched(src, dst, 136, &(uint64_t){ 2 }, 8);
    assert_refused(dst, "more rows than buckets");
    patched(src, dst, 136, &(uint64_t){ 1ULL << 33 }, 8);
    assert_refused(dst, "buckets beyond 32 bits");
    patched(src, dst, 144, &(uint64_t){ 5 }, 8);
    assert_refused(dst, "count disagrees with sizes");
    patched(src, dst, 152, &(uint64_t){ hdr[19] + 4096 }, 8);
    assert_refused(dst, "rows past the end");
    patched(src, dst, 152, &(uint64_t){ hdr[19] + 4 }, 8);
    assert_refused(dst, "rows misaligned");
    patched(src, dst, 152, &(uint64_t){ hdr[6] }, 8);
    assert_refused(dst, "rows over the word rows");
    patched(src, dst, 168, &(uint64_t){ hdr[19] }, 8);
    assert_refused(dst, "ids over the piece rows");
    patched(src, dst, 176, &(uint64_t){ 12 }, 8);
    assert_refused(dst, "ids size wrong");
    /* ids out of order: opens (O(1) checks), verify refuses */
    patched(src, dst, (long)hdr[21], &two, 4);
    patched(dst, dst, (long)hdr[21] + 4, &two, 4);
    vecset *v = vecset_open(dst, &e);
    cr_assert_not_null(v, "%s", e.msg);
    cr_assert_eq(vecset_verify(v, &e), -1);
    cr_assert(strstr(e.msg, "piece id"), "%s", e.msg);
    vecset_close(v);
    /* cut short anywhere: refused */
    fp = fopen(src, "rb");
    unsigned char buf[8192];
    size_t len = fread(buf, 1, sizeof buf, fp);
    fclose(fp);
    for (size_t cut = 0; cut < len; cut++) {
        fp = fopen(dst, "wb");
        fwrite(buf, 1, cut, fp);
        fclose(fp);
        assert_refused(dst, "cut short");
    }
}

Test(vecset, export_pieces_text)
{
    struct err e = ERR_INIT;
    vecset *v = with_pieces(&e);
    const char *out = tmp(3, "pieces.txt");
    cr_assert_eq(vecset_export_pieces(v, out, &e), 0, "%s", e.msg);
    FILE *fp = fopen(out, "r");
    unsigned long long n, d, lo, hi, k;
    cr_assert_eq(fscanf(fp, "%llu %llu %llu %llu %llu", &n, &d, &lo, &hi, &k), 5);
    cr_assert(n == 4 && d == 3 && lo == 3 && hi == 3 && k == 64);
    for (size_t i = 0; i < 4; i++) {
        unsigned id;
        float x[3];
        cr_assert_eq(fscanf(fp, "%u %f %f %f", &id, &x[0], &x[1], &x[2]), 4);
        cr_assert_eq(id, PB[i]);
        cr_assert_eq(memcmp(x, PR + 3 * i, 12), 0);
    }
    fclose(fp);
    vecset_close(v);
    v = four(&e);
    err_clear(&e);
    cr_assert_eq(vecset_export_pieces(v, tmp(3, "none.txt"), &e), -1);
    cr_assert(access(tmp(3, "none.txt"), F_OK) != 0);
    vecset_close(v);
}

/* A piece row holding NaN (never written by vecsift: a damaged file) gives
 * no composed vector rather than a NaN one. */
Test(vecset, compose_refuses_non_finite_rows)
{
    struct err e = ERR_INIT;
    struct vecset_pieces pc = make_pieces();
    float bad[12];
    memcpy(bad, PR, sizeof bad);
    bad[0] = NAN;
    pc.rows = bad;
    const char *p = tmp(2, "nan.vecs");
    cr_assert_eq(vecset_write_pieces(p, WP, RP, 2, 3, &pc, &e), 0, "%s", e.msg);
    vecset *v = vecset_open(p, &e);
    cr_assert_not_null(v, "%s", e.msg);
    float out[3] = { 7, 7, 7 };
    /* "wherever" has all four held pieces, so the NaN row among them */
    cr_assert_eq(vecset_compose(v, "wherever", 8, out), 0);
    cr_assert_eq(out[0], 7);
    vecset_close(v);
}
