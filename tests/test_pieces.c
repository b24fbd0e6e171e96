/* test_pieces.c -- character n-gram pieces and their buckets, against the
 * definition in Bojanowski, Grave, Joulin and Mikolov (2017), "Enriching
 * Word Vectors with Subword Information", TACL 5, section 3.2, and FNV-1a's
 * published test values. */
#include <criterion/criterion.h>
#include <stdio.h>
#include <string.h>

#include "vecsift/pieces.h"

struct list {
    char s[64][32];
    size_t n;
};

static void collect(void *ud, const char *p, size_t len)
{
    struct list *l = ud;
    cr_assert_lt(l->n, 64);
    cr_assert_lt(len, 32);
    memcpy(l->s[l->n], p, len);
    l->s[l->n][len] = '\0';
    l->n++;
}

static void assert_pieces(const char *word, unsigned lo, unsigned hi, const char *const *want, size_t nwant)
{
    struct list l = { .n = 0 };
    size_t n = pieces_each(word, strlen(word), lo, hi, collect, &l);
    cr_assert_eq(n, nwant, "%s: %zu pieces, expected %zu", word, n, nwant);
    cr_assert_eq(l.n, nwant);
    for (size_t i = 0; i < nwant; i++)
        cr_assert_str_eq(l.s[i], want[i], "%s: piece %zu is '%s', expected '%s'", word, i, l.s[i], want[i]);
}

/* The paper's worked example (section 3.2): "where" with n = 3 is
 * <wh, whe, her, ere, re> (and the special sequence <where>, which is the
 * word's own row here, not a piece). */
Test(pieces, paper_example_where_n3)
{
    static const char *const want[] = { "<wh", "whe", "her", "ere", "re>" };
    assert_pieces("where", 3, 3, want, 5);
}

/* n from 3 to 6 (the paper's range): <where> has 7 characters, so 5 + 4 +
 * 3 + 2 pieces, by starting character, shorter first. */
Test(pieces, where_3_to_6)
{
    static const char *const want[] = {
        "<wh", "<whe", "<wher", "<where", "whe", "wher", "where", "where>", "her", "here", "here>",
        "ere", "ere>", "re>",
    };
    assert_pieces("where", 3, 6, want, 14);
}

/* G_w is a set: "ana" occurs twice in <banana> and counts once. */
Test(pieces, repeated_piece_counts_once)
{
    static const char *const want[] = { "<ba", "ban", "ana", "nan", "na>" };
    assert_pieces("banana", 3, 3, want, 5);
}

/* Characters are code points: "é" (2 bytes) is one character. */
Test(pieces, characters_not_bytes)
{
    static const char *const want[] = { "<ca", "caf", "af\xc3\xa9", "f\xc3\xa9>" };
    assert_pieces("caf\xc3\xa9", 3, 3, want, 4);
}

/* A word as short as "a": <a> is the word itself, and lone marks are no
 * pieces, so with lengths 1-2 only a, <a and a> remain. */
Test(pieces, short_word_and_lone_marks)
{
    static const char *const want[] = { "<a", "a", "a>" };
    assert_pieces("a", 1, 2, want, 3);
    assert_pieces("a", 3, 6, NULL, 0);
}

/* Long tokens go through the heap buffers. */
Test(pieces, long_token)
{
    char w[400];
    memset(w, 'x', sizeof w - 1);
    w[sizeof w - 1] = '\0';
    memcpy(w, "ab", 2);
    /* <abxxx...x>: distinct 3-grams <ab, abx, bxx, xxx, xx> */
    struct list l = { .n = 0 };
    cr_assert_eq(pieces_each(w, strlen(w), 3, 3, collect, &l), 5);
    cr_assert_str_eq(l.s[4], "xx>");
}

/* FNV-1a 32-bit test values from the FNV authors' reference test suite
 * (from memory): "" 0x811c9dc5 (the offset basis), "a" 0xe40c292c,
 * "foobar" 0xbf9cf968.  tests/ext/pieces_vs_gensim.py checks pieces'
 * hashes against gensim's own FNV-1a too. */
Test(pieces, fnv1a32_test_values)
{
    cr_assert_eq(pieces_fnv1a32("", 0), 0x811c9dc5u);
    cr_assert_eq(pieces_fnv1a32("a", 1), 0xe40c292cu);
    cr_assert_eq(pieces_fnv1a32("foobar", 6), 0xbf9cf968u);
}

Test(pieces, buckets_are_hash_mod_k)
{
    struct pieces_params p = { 3, 3, 1000 };
    uint32_t ids[8];
    static const char *const want[] = { "<wh", "whe", "her", "ere", "re>" };
    cr_assert_eq(pieces_buckets("where", 5, &p, ids, 8), 5);
    for (int i = 0; i < 5; i++)
        cr_assert_eq(ids[i], pieces_fnv1a32(want[i], 3) % 1000u);
    /* too small a buffer: the count, and only the first entries written */
    uint32_t two[2] = { 7, 7 };
    cr_assert_eq(pieces_buckets("where", 5, &p, two, 1), 5);
    cr_assert_eq(two[0], ids[0]);
    cr_assert_eq(two[1], 7);
}
