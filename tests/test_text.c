/* test_text.c -- normalisation, masking and tokenising.
 *
 * Example phrases are invented support-ticket text.  E-mail addresses use
 * only the example domains reserved by RFC 2606.  Expected normal forms come
 * from the Unicode Character Database (UnicodeData.txt decompositions and
 * CaseFolding.txt, Unicode 15.0) unless marked otherwise; the full
 * conformance checks against NormalizationTest.txt and CaseFolding.txt are
 * in tests/test_text_ucd.c.
 */
#include <criterion/criterion.h>
#include <pthread.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <utf8proc.h>

#include "vecsift/err.h"
#include "vecsift/rng.h"
#include "vecsift/text.h"

/* Tokenise 's' with 'o' and compare with the NULL-terminated list of
 * expected tokens. */
static void expect_tokens(const struct text_options *o, const char *s, ...)
{
    struct text_tokens t = TEXT_TOKENS_INIT;
    struct err e = ERR_INIT;
    long n = text_tokenize(s, strlen(s), o, &t, &e);
    cr_assert_geq(n, 0, "'%s': %s", s, e.msg);
    va_list ap;
    va_start(ap, s);
    size_t i = 0;
    const char *want;
    while ((want = va_arg(ap, const char *)) != NULL) {
        cr_assert_lt(i, t.n, "'%s': only %zu tokens, wanted '%s' next", s, t.n, want);
        cr_assert_str_eq(text_token(&t, i), want, "'%s': token %zu", s, i);
        i++;
    }
    va_end(ap);
    cr_assert_eq(t.n, i, "'%s': %zu tokens, expected %zu (extra '%s')", s, t.n, i,
                 t.n > i ? text_token(&t, i) : "");
    cr_assert_eq((size_t)n, i);
    text_tokens_release(&t);
}

static const struct text_options dflt = TEXT_OPTIONS_INIT;

Test(text, splits_support_phrase_and_folds_case)
{
    expect_tokens(&dflt, "Printer on 3rd floor is OFFLINE again!!", "printer", "on", "3rd", "floor", "is",
                  "offline", "again", NULL);
    expect_tokens(&dflt, "Refund: order #4412 (charged twice)", "refund", "order", "4412", "charged", "twice",
                  NULL);
    expect_tokens(&dflt, "", NULL);
    expect_tokens(&dflt, "  ...  ", NULL);
}

Test(text, apostrophes_join_between_word_characters)
{
    /* U+2019 and U+02BC become U+0027 */
    expect_tokens(&dflt, "I don't know; it won\xE2\x80\x99t start", "i", "don't", "know", "it", "won't", "start",
                  NULL);
    expect_tokens(&dflt, "can\xCA\xBCt", "can't", NULL);
    expect_tokens(&dflt, "'quoted' users' tickets", "quoted", "users", "tickets", NULL);
}

Test(text, hyphens_join_between_word_characters)
{
    /* U+2010 HYPHEN, U+2011 NON-BREAKING HYPHEN become '-' */
    expect_tokens(&dflt, "e-mail wi\xE2\x80\x90" "fi re\xE2\x80\x91set", "e-mail", "wi-fi", "re-set", NULL);
    expect_tokens(&dflt, "- login -- fails - ", "login", "fails", NULL);
    expect_tokens(&dflt, "pre--paid", "pre", "paid", NULL);
    /* U+2013 EN DASH is Pd but not a hyphen: it separates */
    expect_tokens(&dflt, "9\xE2\x80\x93" "5", "9", "5", NULL);
}

Test(text, underscore_symbols_and_line_separators_split)
{
    expect_tokens(&dflt, "user_name", "user", "name", NULL);
    /* U+2028 LINE SEPARATOR, U+2029 PARAGRAPH SEPARATOR */
    expect_tokens(&dflt, "first\xE2\x80\xA8second\xE2\x80\xA9third", "first", "second", "third", NULL);
    /* emoji (So) and euro sign (Sc) separate */
    expect_tokens(&dflt, "thanks\xF0\x9F\x99\x82" "bye 20\xE2\x82\xAC", "thanks", "bye", "20", NULL);
    expect_tokens(&dflt, "tab\tnew\nline\r\nend", "tab", "new", "line", "end", NULL);
}

Test(text, email_is_masked_before_splitting)
{
    expect_tokens(&dflt, "Please reply to anna.k@example.com today", "please", "reply", "to", TEXT_MASK_EMAIL,
                  "today", NULL);
    expect_tokens(&dflt, "(Ops-Team+billing@mail.example.org).", TEXT_MASK_EMAIL, NULL);
    /* FULLWIDTH COMMERCIAL AT U+FF20 becomes '@' under NFKC first */
    expect_tokens(&dflt, "anna\xEF\xBC\xA0" "example.net", TEXT_MASK_EMAIL, NULL);
    /* not addresses */
    expect_tokens(&dflt, "meet @ noon", "meet", "noon", NULL);
    expect_tokens(&dflt, "user@localhost", "user", "localhost", NULL);
    struct text_options o = TEXT_OPTIONS_INIT;
    o.mask_email = 0;
    expect_tokens(&o, "anna.k@example.com", "anna", "k", "example", "com", NULL);
}

Test(text, urls_are_masked)
{
    expect_tokens(&dflt, "see https://portal.example.com/reset?token=ab_12, then retry", "see", TEXT_MASK_URL,
                  "then", "retry", NULL);
    expect_tokens(&dflt, "HTTP://example.org/x.", TEXT_MASK_URL, NULL);
    expect_tokens(&dflt, "Go to www.example.com/help)", "go", "to", TEXT_MASK_URL, NULL);
    expect_tokens(&dflt, "\"http://example.net/a b\"", TEXT_MASK_URL, "b", NULL);
    /* a bare scheme is no URL */
    expect_tokens(&dflt, "http:// nothing", "http", "nothing", NULL);
    struct text_options o = TEXT_OPTIONS_INIT;
    o.mask_url = 0;
    expect_tokens(&o, "http://example.org/x", "http", "example", "org", "x", NULL);
}

Test(text, numbers_masked_only_when_asked)
{
    expect_tokens(&dflt, "ticket 88123 error E42", "ticket", "88123", "error", "e42", NULL);
    struct text_options o = TEXT_OPTIONS_INIT;
    o.mask_number = 1;
    expect_tokens(&o, "ticket 88123 error E42 on 2024-05-01", "ticket", TEXT_MASK_NUMBER, "error", "e42", "on",
                  TEXT_MASK_NUMBER, NULL);
    /* U+0663 ARABIC-INDIC DIGIT THREE is Nd; U+00B2 SUPERSCRIPT TWO is NFKC "2" */
    expect_tokens(&o, "\xD9\xA3 x\xC2\xB2 \xC2\xB2", TEXT_MASK_NUMBER, "x2", TEXT_MASK_NUMBER, NULL);
}

/* Accents on Latin letters go: café/cafe, naïve/naive, Ærøskøbing keeps æ
 * and ø (they are letters, not letter + mark in UnicodeData.txt). */
Test(text, latin_accents_removed_unless_kept)
{
    expect_tokens(&dflt, "Caf\xC3\xA9 na\xC3\xAFve cafe\xCC\x81 \xC3\x86r\xC3\xB8sk\xC3\xB8" "bing", "cafe",
                  "naive", "cafe", "\xC3\xA6r\xC3\xB8sk\xC3\xB8" "bing", NULL);
    /* Vietnamese: U+1EC7 LATIN SMALL LETTER E WITH CIRCUMFLEX AND DOT BELOW */
    expect_tokens(&dflt, "Vi\xE1\xBB\x87t", "viet", NULL);
    /* U+0130 LATIN CAPITAL LETTER I WITH DOT ABOVE folds to i + U+0307 */
    expect_tokens(&dflt, "\xC4\xB0stanbul", "istanbul", NULL);
    struct text_options o = TEXT_OPTIONS_INIT;
    o.keep_accents = 1;
    /* kept and recomposed to NFC form: U+00E9 */
    expect_tokens(&o, "CAFE\xCC\x81", "caf\xC3\xA9", NULL);
}

/* Devanagari vowel signs (U+093F DEVANAGARI VOWEL SIGN I is Mc, U+0947
 * VOWEL SIGN E and U+0941 VOWEL SIGN U are Mn, UnicodeData.txt) must stay:
 * "हिंदी" (Hindi) and "सुनें" keep every code point. */
Test(text, devanagari_keeps_vowel_signs)
{
    const char *hindi = "\xE0\xA4\xB9\xE0\xA4\xBF\xE0\xA4\x82\xE0\xA4\xA6\xE0\xA5\x80";
    const char *sune = "\xE0\xA4\xB8\xE0\xA5\x81\xE0\xA4\xA8\xE0\xA5\x87\xE0\xA4\x82";
    expect_tokens(&dflt, "\xE0\xA4\xB9\xE0\xA4\xBF\xE0\xA4\x82\xE0\xA4\xA6\xE0\xA5\x80 "
                         "\xE0\xA4\xB8\xE0\xA5\x81\xE0\xA4\xA8\xE0\xA5\x87\xE0\xA4\x82",
                  hindi, sune, NULL);
    /* Thai: U+0E34 THAI CHARACTER SARA I (Mn) kept */
    expect_tokens(&dflt, "\xE0\xB8\x94\xE0\xB8\xB4", "\xE0\xB8\x94\xE0\xB8\xB4", NULL);
    /* A mixed Latin word next to it still loses its accent */
    expect_tokens(&dflt, "r\xC3\xA9sum\xC3\xA9 \xE0\xA4\xB9\xE0\xA4\xBF", "resume", "\xE0\xA4\xB9\xE0\xA4\xBF",
                  NULL);
}

Test(text, compatibility_forms_fold)
{
    /* U+FB01 LATIN SMALL LIGATURE FI -> "fi"; U+FF21 FULLWIDTH A -> "a";
     * U+00DF sharp s folds to "ss" (CaseFolding.txt status F); U+212A KELVIN
     * SIGN -> "k" */
    expect_tokens(&dflt, "\xEF\xAC\x81le \xEF\xBC\xA1" "BC Stra\xC3\x9F" "e \xE2\x84\xAA", "file", "abc", "strasse",
                  "k", NULL);
    /* U+00AD SOFT HYPHEN and U+200B ZERO WIDTH SPACE are default-ignorable:
     * removed, so the word stays whole */
    expect_tokens(&dflt, "pass\xC2\xAD" "word re\xE2\x80\x8Bset", "password", "reset", NULL);
}

Test(text, invalid_utf8_names_the_byte)
{
    struct text_tokens t = TEXT_TOKENS_INIT;
    struct err e = ERR_INIT;
    const char s[] = "ok caf\xC3 x";
    cr_assert_eq(text_tokenize(s, sizeof s - 1, &dflt, &t, &e), -1);
    cr_assert_str_eq(e.msg, "invalid UTF-8 at byte 6");
    cr_assert_eq(e.code, ERR_INPUT);
    /* surrogate encoded in UTF-8 (ED A0 80) and overlong '/' (C0 AF) are
     * invalid by RFC 3629 */
    struct err e2 = ERR_INIT;
    cr_assert_eq(text_tokenize("a\xED\xA0\x80", 4, &dflt, &t, &e2), -1);
    cr_assert_str_eq(e2.msg, "invalid UTF-8 at byte 1");
    struct err e3 = ERR_INIT;
    cr_assert_eq(text_tokenize("\xC0\xAF", 2, &dflt, &t, &e3), -1);
    cr_assert_str_eq(e3.msg, "invalid UTF-8 at byte 0");
    cr_assert_null(text_normalize("\xFF", 1, NULL, NULL));
    cr_assert_null(text_nfkc("\xFF", 1, NULL));
    text_tokens_release(&t);
}

Test(text, tokens_append_and_buffers_are_reused)
{
    struct text_tokens t = TEXT_TOKENS_INIT;
    struct err e = ERR_INIT;
    cr_assert_eq(text_tokenize("vpn down", 8, NULL, &t, &e), 2);
    cr_assert_eq(text_tokenize("still down", 10, NULL, &t, &e), 2);
    cr_assert_eq(t.n, 4);
    cr_assert_str_eq(text_token(&t, 0), "vpn");
    cr_assert_str_eq(text_token(&t, 3), "down");
    char *buf = t.buf;
    text_tokens_clear(&t);
    cr_assert_eq(t.n, 0);
    cr_assert_eq(text_tokenize("vpn", 3, NULL, &t, &e), 1);
    cr_assert_eq(t.buf, buf);
    text_tokens_release(&t);
    text_tokens_release(NULL);
}

/* The ASCII fast path must agree with utf8proc_map's NFKC + casefold +
 * ignorable removal on every ASCII character (utf8proc is the reference). */
Test(text, ascii_fast_path_matches_utf8proc)
{
    char all[128];
    for (int i = 0; i < 128; i++)
        all[i] = (char)i;
    utf8proc_uint8_t *ref = NULL;
    utf8proc_ssize_t n = utf8proc_map((const utf8proc_uint8_t *)all, 128, &ref,
                                      UTF8PROC_STABLE | UTF8PROC_COMPOSE | UTF8PROC_COMPAT | UTF8PROC_CASEFOLD
                                          | UTF8PROC_IGNORE);
    cr_assert_eq(n, 128);
    size_t m = 0;
    char *got = text_normalize(all, 128, NULL, &m);
    cr_assert_eq(m, 128);
    cr_assert(memcmp(got, ref, 128) == 0);
    free(got);
    free(ref);
    char *k = text_nfkc("MiXeD", 5, &m);
    cr_assert_str_eq(k, "MiXeD");
    free(k);
}

Test(text, normalize_token_for_vector_entries)
{
    char *s = text_normalize_token("Caf\xC3\xA9", 5, NULL);
    cr_assert_str_eq(s, "cafe");
    free(s);
    s = text_normalize_token("don\xE2\x80\x99t", 7, NULL);
    cr_assert_str_eq(s, "don't");
    free(s);
    cr_assert_null(text_normalize_token("new york", 8, NULL));
    cr_assert_null(text_normalize_token("...", 3, NULL));
    cr_assert_null(text_normalize_token("a@example.com", 13, NULL));
    cr_assert_null(text_normalize_token("\xFF", 1, NULL));
    /* placeholders from a vector set learned on masked text stay themselves */
    s = text_normalize_token(TEXT_MASK_EMAIL, strlen(TEXT_MASK_EMAIL), NULL);
    cr_assert_str_eq(s, TEXT_MASK_EMAIL);
    free(s);
    s = text_normalize_token("_number_", 8, NULL);
    cr_assert_str_eq(s, TEXT_MASK_NUMBER);
    free(s);
}

Test(text, options_description_is_stable)
{
    char buf[128];
    text_options_describe(&dflt, buf, sizeof buf);
    cr_assert_str_eq(buf, "nfkc,casefold,strip-latin-marks,mask=email+url");
    struct text_options o = { 1, 0, 0, 1 };
    text_options_describe(&o, buf, sizeof buf);
    cr_assert_str_eq(buf, "nfkc,casefold,keep-marks,mask=number");
    struct text_options z = { 0, 0, 0, 0 };
    text_options_describe(&z, buf, sizeof buf);
    cr_assert_str_eq(buf, "nfkc,casefold,strip-latin-marks,mask=none");
}

/* A long run of "a.a.a..." with an '@' at the end: masking must stay linear
 * (no time limit here; the count checks the result). */
Test(text, long_dotted_run)
{
    size_t n = 200000;
    char *s = malloc(n + 16);
    for (size_t i = 0; i < n; i += 2) {
        s[i] = 'a';
        s[i + 1] = '.';
    }
    memcpy(s + n, "@x", 3);
    struct text_tokens t = TEXT_TOKENS_INIT;
    struct err e = ERR_INIT;
    cr_assert_eq(text_tokenize(s, n + 2, NULL, &t, &e), (long)(n / 2 + 1));
    text_tokens_release(&t);
    free(s);
}

/* The stretch-wise normalisation (ASCII fast path between utf8proc calls)
 * must equal utf8proc_map() on the whole string.  Random strings from a pool
 * of code points that interact across stretch boundaries: ASCII bases and
 * combining marks (composition and canonical reordering), Hangul jamo
 * (L+V+T composition), compatibility forms, case pairs whose folding expands,
 * ignorables.  Reference: utf8proc_map with NFKC + CASEFOLD + IGNORE for
 * text_normalize() with marks kept, and NFKC alone for text_nfkc(). */
Test(text, stretchwise_normalisation_matches_utf8proc_on_whole_strings)
{
    static const int32_t pool[] = {
        'a', 'A', 'e', 'D', 'i', 'I', 's', 'K', ' ', '-', '\'', '1',
        0x0301, 0x0307, 0x0323, 0x0345, 0x0308, 0x031B, 0x0334, /* marks, various classes */
        0x00C5, 0x00E9, 0x1E0A, 0x0130, 0x00DF, 0x1E9E, 0x212B, 0x212A, /* precomposed, singletons */
        0x1100, 0x1161, 0x11A8, 0xAC00, /* Hangul L, V, T, LV */
        0xFB01, 0xFF21, 0x2460, 0x00BD, 0x3392, /* compatibility */
        0x00AD, 0x200B, 0x200D, 0x034F, /* default-ignorable */
        0x0915, 0x093F, 0x094D, 0x093C, 0x0958, /* Devanagari, nukta composition exclusion */
        0x03A3, 0x03C2, 0x0399, 0x0390, /* Greek */
        0x1F00, 0x1F80, 0x0CCB, 0x0CC6, 0x0CC2, 0x0CD5, /* more composition */
    };
    struct rng r;
    rng_seed(&r, 20261201);
    char s[256];
    struct text_options keep = TEXT_OPTIONS_INIT;
    keep.keep_accents = 1;
    const utf8proc_option_t base = UTF8PROC_STABLE | UTF8PROC_COMPOSE | UTF8PROC_COMPAT;
    for (int it = 0; it < 20000; it++) {
        size_t n = 0, k = 1 + rng_below(&r, 12);
        for (size_t j = 0; j < k; j++)
            n += (size_t)utf8proc_encode_char(pool[rng_below(&r, sizeof pool / sizeof pool[0])],
                                              (utf8proc_uint8_t *)s + n);
        for (int mode = 0; mode < 2; mode++) {
            utf8proc_uint8_t *ref = NULL;
            utf8proc_ssize_t rn = utf8proc_map((const utf8proc_uint8_t *)s, (utf8proc_ssize_t)n, &ref,
                                               mode ? base | UTF8PROC_CASEFOLD | UTF8PROC_IGNORE : base);
            cr_assert_geq(rn, 0);
            size_t gn = 0;
            char *got = mode ? text_normalize(s, n, &keep, &gn) : text_nfkc(s, n, &gn);
            cr_assert_not_null(got);
            cr_assert(gn == (size_t)rn && memcmp(got, ref, gn) == 0, "iteration %d mode %d: '%.*s'", it, mode,
                      (int)n, s);
            free(got);
            free(ref);
        }
    }
}

/* Thread safety: four threads tokenising the same mixed rows at once, each
 * with its own text_tokens, give exactly the single-threaded tokens. */

static const char *const mt_rows[] = {
    "Caf\xC3\xA9 terminal error E42, contact anna.k@example.com",
    "\xE0\xA4\xB9\xE0\xA4\xBF\xE0\xA4\x82\xE0\xA4\xA6\xE0\xA5\x80 keyboard missing",
    "Reset via https://portal.example.org/r?x=1 didn\xE2\x80\x99t work",
    "STRASSE Stra\xC3\x9F" "e \xEF\xAC\x81le wi-fi",
};

static void join_tokens(const struct text_tokens *t, char *out, size_t cap)
{
    size_t n = 0;
    for (size_t i = 0; i < t->n && n + 1 < cap; i++)
        n += (size_t)snprintf(out + n, cap - n, "%s|", text_token(t, i));
}

static void *mt_worker(void *arg)
{
    const char *const *want = arg;
    struct text_tokens t = TEXT_TOKENS_INIT;
    struct err e = ERR_INIT;
    char got[512];
    long bad = 0;
    for (int it = 0; it < 2000; it++) {
        size_t k = (size_t)it % 4;
        text_tokens_clear(&t);
        if (text_tokenize(mt_rows[k], strlen(mt_rows[k]), NULL, &t, &e) < 0)
            bad++;
        join_tokens(&t, got, sizeof got);
        bad += strcmp(got, want[k]) != 0;
    }
    text_tokens_release(&t);
    return (void *)(intptr_t)bad;
}

Test(text, concurrent_tokenising_matches_serial)
{
    static char want[4][512];
    static const char *wantp[4];
    for (int k = 0; k < 4; k++) {
        struct text_tokens t = TEXT_TOKENS_INIT;
        struct err e = ERR_INIT;
        cr_assert_gt(text_tokenize(mt_rows[k], strlen(mt_rows[k]), NULL, &t, &e), 0);
        join_tokens(&t, want[k], sizeof want[k]);
        wantp[k] = want[k];
        text_tokens_release(&t);
    }
    cr_assert_str_eq(want[1], "\xE0\xA4\xB9\xE0\xA4\xBF\xE0\xA4\x82\xE0\xA4\xA6\xE0\xA5\x80|keyboard|missing|");
    pthread_t th[4];
    for (int i = 0; i < 4; i++)
        cr_assert_eq(pthread_create(&th[i], NULL, mt_worker, wantp), 0);
    for (int i = 0; i < 4; i++) {
        void *r;
        pthread_join(th[i], &r);
        cr_assert_eq((intptr_t)r, 0, "thread %d: %ld mismatches", i, (long)(intptr_t)r);
    }
}

/* 1 when s is entirely valid UTF-8. */
static int all_valid_utf8(const char *s)
{
    size_t len = strlen(s), i = 0;
    while (i < len) {
        int32_t c;
        utf8proc_ssize_t k = utf8proc_iterate((const utf8proc_uint8_t *)s + i, (utf8proc_ssize_t)(len - i), &c);
        if (k < 0)
            return 0;
        i += (size_t)k;
    }
    return 1;
}

/* Random bytes (mostly ASCII with UTF-8 lead and continuation bytes mixed
 * in): no crash, -1 exactly when the text is invalid, the reported offset is
 * the length of the longest valid prefix (RFC 3629: a decoder stops at the
 * first ill-formed sequence), and every token is non-empty valid UTF-8. */
Test(text, random_bytes_are_handled)
{
    static const unsigned char bytes[] = { 'a', 'Z', ' ', '@', '.', '-', '\'', '_', '1', 0x00, 0x80, 0xBF, 0xC3,
                                           0xA9, 0xE2, 0x80, 0x99, 0xED, 0xF0, 0x9F, 0xF4, 0x90, 0xFF, 0xC0 };
    struct rng r;
    rng_seed(&r, 7);
    struct text_tokens t = TEXT_TOKENS_INIT;
    char s[64];
    long invalid = 0;
    for (int it = 0; it < 50000; it++) {
        size_t n = rng_below(&r, sizeof s);
        for (size_t j = 0; j < n; j++)
            s[j] = (char)bytes[rng_below(&r, sizeof bytes)];
        /* longest valid prefix, by utf8proc_iterate called directly */
        size_t ok = 0;
        while (ok < n) {
            int32_t c;
            utf8proc_ssize_t k = utf8proc_iterate((const utf8proc_uint8_t *)s + ok, (utf8proc_ssize_t)(n - ok), &c);
            if (k < 0)
                break;
            ok += (size_t)k;
        }
        struct err e = ERR_INIT;
        text_tokens_clear(&t);
        long got = text_tokenize(s, n, &dflt, &t, &e);
        if (ok < n) {
            char want[64];
            snprintf(want, sizeof want, "invalid UTF-8 at byte %zu", ok);
            cr_assert_eq(got, -1);
            cr_assert_str_eq(e.msg, want);
            invalid++;
        } else {
            cr_assert_geq(got, 0);
            for (size_t i = 0; i < t.n; i++) {
                const char *tok = text_token(&t, i);
                cr_assert_gt(strlen(tok), 0);
                cr_assert_eq(all_valid_utf8(tok), 1);
            }
        }
    }
    cr_assert_gt(invalid, 1000);
    text_tokens_release(&t);
}

/* ---- splitting against a plain reading of its rules ---- */

/* The splitting rules of text.h, one code point at a time and nothing
 * else (no run copying, no ASCII shortcut): word characters are letters,
 * marks (L*, M*) and numbers (N*), by utf8proc_category (Unicode
 * UnicodeData.txt general categories); ' U+2019 U+02BC and - U+2010 U+2011
 * join two word characters and are written as ' or -; anything else
 * separates; a token of numbers only becomes TEXT_MASK_NUMBER when asked.
 * Writes "tok|tok|..." of the normalised text n[0..len) to out. */
static void reference_split(const char *n, size_t len, int mask_number, char *out, size_t cap)
{
    static int32_t cp[4096];
    cr_assert_lt(len, sizeof cp / sizeof cp[0]);
    size_t m = 0, o = 0;
    for (size_t i = 0; i < len;) {
        utf8proc_ssize_t k = utf8proc_iterate((const utf8proc_uint8_t *)n + i, (utf8proc_ssize_t)(len - i), &cp[m]);
        cr_assert_gt(k, 0);
        i += (size_t)k;
        m++;
    }
#define WORDC(c) (utf8proc_category(c) >= UTF8PROC_CATEGORY_LU && utf8proc_category(c) <= UTF8PROC_CATEGORY_NO)
#define JOINER(c) ((c) == '\'' || (c) == 0x2019 || (c) == 0x02BC || (c) == '-' || (c) == 0x2010 || (c) == 0x2011)
    char tok[4096];
    size_t tl = 0;
    int in = 0, digits = 0;
    for (size_t i = 0; i <= m; i++) {
        int32_t c = i < m ? cp[i] : ' ';
        if (i < m && WORDC(c)) {
            if (!in)
                in = 1, tl = 0, digits = 1;
            tl += (size_t)utf8proc_encode_char(c, (utf8proc_uint8_t *)tok + tl);
            digits &= utf8proc_category(c) >= UTF8PROC_CATEGORY_ND;
            continue;
        }
        if (in && JOINER(c) && i + 1 < m && WORDC(cp[i + 1])) {
            tok[tl++] = c == '-' || c == 0x2010 || c == 0x2011 ? '-' : '\'';
            continue;
        }
        if (in) {
            const char *w = mask_number && digits ? TEXT_MASK_NUMBER : tok;
            size_t wl = mask_number && digits ? strlen(TEXT_MASK_NUMBER) : tl;
            if (o + wl + 2 < cap) {
                memcpy(out + o, w, wl);
                o += wl;
                out[o++] = '|';
            }
            in = 0;
        }
    }
#undef WORDC
#undef JOINER
    out[o] = '\0';
}

/* Random texts over an alphabet that mixes ASCII letters, digits,
 * joiners and separators with non-ASCII letters, marks, digits, joiners
 * and spaces, so that runs of ASCII (split's shortcut) meet every other
 * case at both ends; e-mail and URL masking off (they have their own
 * tests above), number masking off and on. */
Test(text, splitting_matches_a_plain_reading_of_the_rules)
{
    static const char *const pieces[] = {
        "a", "Z", "k", "ticket", "7", "42", "9", "0", "'", "-", " ", ",", ".", "_", "@", "/", "\t", "\n",
        "\xC3\xA9",         /* U+00E9 e with acute (stripped to e) */
        "\xD0\x96",         /* U+0416 CYRILLIC CAPITAL ZHE */
        "\xD9\xA3",         /* U+0663 ARABIC-INDIC DIGIT THREE (Nd) */
        "\xE2\x80\x99",     /* U+2019 RIGHT SINGLE QUOTATION MARK */
        "\xE2\x80\x90",     /* U+2010 HYPHEN */
        "\xC2\xA0",         /* U+00A0 NO-BREAK SPACE */
        "\xE0\xA4\xBF",     /* U+093F DEVANAGARI VOWEL SIGN I (Mc) */
        "\xE2\x85\xA4",     /* U+2164 ROMAN NUMERAL FIVE (Nl; NFKC gives V) */
        "\xEF\xBC\x91",     /* U+FF11 FULLWIDTH DIGIT ONE (NFKC gives 1) */
        "\xE2\x80\xA8",     /* U+2028 LINE SEPARATOR */
    };
    size_t np = sizeof pieces / sizeof pieces[0];
    struct rng r;
    rng_seed(&r, 20261202);
    struct text_tokens t = TEXT_TOKENS_INIT;
    static char text[1024], want[4096], got[4096];
    for (int it = 0; it < 20000; it++) {
        size_t len = 0, n = 1 + rng_below(&r, 40);
        for (size_t i = 0; i < n; i++) {
            const char *p = pieces[rng_below(&r, np)];
            size_t pl = strlen(p);
            memcpy(text + len, p, pl);
            len += pl;
        }
        text[len] = '\0';
        struct text_options o = { 0, 0, 0, it % 2 };
        size_t nl;
        char *norm = text_normalize(text, len, &o, &nl);
        cr_assert_not_null(norm);
        reference_split(norm, nl, o.mask_number, want, sizeof want);
        free(norm);
        struct err e = ERR_INIT;
        text_tokens_clear(&t);
        cr_assert_geq(text_tokenize(text, len, &o, &t, &e), 0, "%s", e.msg);
        got[0] = '\0'; /* join_tokens writes nothing for no tokens */
        join_tokens(&t, got, sizeof got);
        cr_assert_str_eq(got, want, "text '%s'", text);
    }
    text_tokens_release(&t);
}

/* ---- the token length cap (TEXT_MAX_TOKEN, text.h) ---- */

static char *repeat(const char *unit, size_t times, const char *before, const char *after)
{
    size_t u = strlen(unit), b = strlen(before), a = strlen(after);
    char *s = malloc(b + u * times + a + 1);
    memcpy(s, before, b);
    for (size_t i = 0; i < times; i++)
        memcpy(s + b + i * u, unit, u);
    memcpy(s + b + u * times, after, a + 1);
    return s;
}

Test(text, token_of_the_cap_is_kept_one_byte_more_is_skipped_and_counted)
{
    struct text_tokens t = TEXT_TOKENS_INIT;
    struct err e = ERR_INIT;
    char *at = repeat("k", TEXT_MAX_TOKEN, "a ", " b");
    cr_assert_eq(text_tokenize(at, strlen(at), NULL, &t, &e), 3);
    cr_assert_eq(strlen(text_token(&t, 1)), TEXT_MAX_TOKEN);
    cr_assert_eq(t.too_long, 0);
    text_tokens_clear(&t);
    char *over = repeat("k", TEXT_MAX_TOKEN + 1, "a ", " b");
    cr_assert_eq(text_tokenize(over, strlen(over), NULL, &t, &e), 2, "the long run is left out");
    cr_assert_str_eq(text_token(&t, 0), "a");
    cr_assert_str_eq(text_token(&t, 1), "b");
    cr_assert_eq(t.too_long, 1);
    text_tokens_clear(&t); /* the count adds up over rows */
    cr_assert_eq(text_tokenize(over, strlen(over), NULL, &t, &e), 2);
    cr_assert_eq(t.too_long, 2);
    text_tokens_release(&t);
    free(at);
    free(over);
}

/* The cap counts bytes of normalised UTF-8: 512 Greek alphas (2 bytes each,
 * U+03B1, UTF-8 per RFC 3629) are 1024 bytes, 513 are over. */
Test(text, cap_counts_bytes_of_the_normalised_text)
{
    struct text_tokens t = TEXT_TOKENS_INIT;
    struct err e = ERR_INIT;
    char *at = repeat("\xce\xb1", TEXT_MAX_TOKEN / 2, "", "");
    cr_assert_eq(text_tokenize(at, strlen(at), NULL, &t, &e), 1);
    text_tokens_clear(&t);
    char *over = repeat("\xce\xb1", TEXT_MAX_TOKEN / 2 + 1, "", "");
    cr_assert_eq(text_tokenize(over, strlen(over), NULL, &t, &e), 0);
    cr_assert_eq(t.too_long, 1);
    text_tokens_clear(&t);
    /* upper-case alphas fold to the same bytes: the cap applies after folding */
    char *upper = repeat("\xce\x91", TEXT_MAX_TOKEN / 2 + 1, "", "");
    cr_assert_eq(text_tokenize(upper, strlen(upper), NULL, &t, &e), 0);
    cr_assert_eq(t.too_long, 2);
    text_tokens_release(&t);
    free(at);
    free(over);
    free(upper);
}

Test(text, long_joined_word_and_long_number)
{
    struct text_tokens t = TEXT_TOKENS_INIT;
    struct err e = ERR_INIT;
    /* hyphens inside a word count towards its length */
    char *joined = repeat("ab-", TEXT_MAX_TOKEN / 3 + 1, "x ", "c");
    cr_assert_eq(text_tokenize(joined, strlen(joined), NULL, &t, &e), 1);
    cr_assert_str_eq(text_token(&t, 0), "x");
    cr_assert_eq(t.too_long, 1);
    text_tokens_clear(&t);
    /* a masked number becomes the placeholder, whatever its length */
    struct text_options o = TEXT_OPTIONS_INIT;
    o.mask_number = 1;
    char *digits = repeat("7", 5000, "", "");
    cr_assert_eq(text_tokenize(digits, strlen(digits), &o, &t, &e), 1);
    cr_assert_str_eq(text_token(&t, 0), TEXT_MASK_NUMBER);
    cr_assert_eq(t.too_long, 1, "unchanged from before");
    text_tokens_release(&t);
    /* a vector-file entry that long can never match running text */
    cr_assert_null(text_normalize_token(digits, strlen(digits), NULL));
    free(joined);
    free(digits);
}
