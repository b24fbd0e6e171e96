/* test_vocab.c -- token interning and the tokenised-document store. */
#include <criterion/criterion.h>
#include <stdio.h>
#include <string.h>

#include "vecsift/vocab.h"

/* FNV-1a 64 test vectors from the FNV reference test suite (Fowler, Noll, Vo;
 * values recalled from memory, also listed in draft-eastlake-fnv). */
Test(vocab, hash_is_fnv1a_64)
{
    cr_assert_eq(vocab_hash("", 0), 0xcbf29ce484222325ULL);
    cr_assert_eq(vocab_hash("a", 1), 0xaf63dc4c8601ec8cULL);
    cr_assert_eq(vocab_hash("foobar", 6), 0x85944171f73967e8ULL);
}

Test(vocab, ids_follow_first_appearance_and_are_stable)
{
    vocab *v = vocab_new();
    /* invented support-inbox words */
    const char *w[] = { "refund", "invoice", "refund", "login", "invoice", "refund" };
    int32_t want[] = { 0, 1, 0, 2, 1, 0 };
    for (int i = 0; i < 6; i++)
        cr_assert_eq(vocab_add(v, w[i]), want[i], "token %d", i);
    cr_assert_eq(vocab_size(v), 3);
    cr_assert_str_eq(vocab_word(v, 0), "refund");
    cr_assert_str_eq(vocab_word(v, 2), "login");
    cr_assert_eq(vocab_count(v, 0), 3);
    cr_assert_eq(vocab_count(v, 1), 2);
    cr_assert_eq(vocab_count(v, 2), 1);
    cr_assert_eq(vocab_total(v), 6);
    vocab_free(v);
}

Test(vocab, find_does_not_add_or_count)
{
    vocab *v = vocab_new();
    vocab_add(v, "password");
    cr_assert_eq(vocab_find(v, "passwort"), -1);
    cr_assert_eq(vocab_find(v, ""), -1);
    cr_assert_eq(vocab_find(v, "password"), 0);
    cr_assert_eq(vocab_size(v), 1);
    cr_assert_eq(vocab_count(v, 0), 1);
    cr_assert_eq(vocab_total(v), 1);
    vocab_free(v);
    vocab_free(NULL);
}

/* Growth through many doublings: every id still found, every pointer returned
 * before growth still valid and unchanged. */
Test(vocab, grows_to_100k_entries)
{
    vocab *v = vocab_new();
    char buf[32];
    const char *first = NULL;
    for (int i = 0; i < 100000; i++) {
        snprintf(buf, sizeof buf, "tok%d", i);
        cr_assert_eq(vocab_add(v, buf), i);
        if (i == 0)
            first = vocab_word(v, 0);
    }
    for (int i = 0; i < 100000; i += 7) {
        snprintf(buf, sizeof buf, "tok%d", i);
        cr_assert_eq(vocab_add(v, buf), i);
    }
    cr_assert_eq(vocab_size(v), 100000);
    for (int i = 0; i < 100000; i++) {
        snprintf(buf, sizeof buf, "tok%d", i);
        cr_assert_eq(vocab_find(v, buf), i);
        cr_assert_str_eq(vocab_word(v, i), buf);
        cr_assert_eq(vocab_count(v, i), i % 7 == 0 ? 2u : 1u);
    }
    cr_assert_eq(vocab_find(v, "tok100000"), -1);
    cr_assert_str_eq(first, "tok0");
    cr_assert_eq(vocab_total(v), 100000 + (100000 + 6) / 7);
    vocab_free(v);
}

/* A token longer than an arena block still interns. */
Test(vocab, long_token)
{
    vocab *v = vocab_new();
    size_t n = 200000;
    char *big = malloc(n + 1);
    memset(big, 'x', n);
    big[n] = '\0';
    vocab_add(v, "short");
    cr_assert_eq(vocab_add(v, big), 1);
    cr_assert_eq(vocab_find(v, big), 1);
    cr_assert_eq(strlen(vocab_word(v, 1)), n);
    cr_assert_eq(vocab_add(v, "after"), 2);
    free(big);
    vocab_free(v);
}

Test(vocab, tokdocs_offsets_and_ids)
{
    struct tokdocs d = TOKDOCS_INIT;
    const char *a[] = { "printer", "offline", "again" };
    const char *b[] = { "printer", "jam" };
    tokdocs_add(&d, a, 3);
    tokdocs_add(&d, NULL, 0); /* an empty document keeps its place */
    tokdocs_add(&d, b, 2);
    cr_assert_eq(d.n, 3);
    size_t off[] = { 0, 3, 3, 5 };
    for (int i = 0; i < 4; i++)
        cr_assert_eq(d.off[i], off[i]);
    int32_t ids[] = { 0, 1, 2, 0, 3 };
    for (int i = 0; i < 5; i++)
        cr_assert_eq(d.tok[i], ids[i]);
    cr_assert_eq(vocab_count(d.v, 0), 2);
    cr_assert_str_eq(vocab_word(d.v, 3), "jam");
    tokdocs_release(&d);
    cr_assert_null(d.v);
    cr_assert_eq(d.n, 0);
}

Test(vocab, tokdocs_many_documents)
{
    struct tokdocs d = TOKDOCS_INIT;
    char w[16];
    for (int i = 0; i < 5000; i++) {
        snprintf(w, sizeof w, "w%d", i % 100);
        const char *t[] = { w, "ticket" };
        tokdocs_add(&d, t, (size_t)(i % 3));
    }
    cr_assert_eq(d.n, 5000);
    size_t total = 0;
    for (int i = 0; i < 5000; i++) {
        cr_assert_eq(d.off[i + 1] - d.off[i], (size_t)(i % 3));
        total += (size_t)(i % 3);
    }
    cr_assert_eq(d.off[5000], total);
    cr_assert_eq(vocab_total(d.v), total);
    tokdocs_release(&d);
}
