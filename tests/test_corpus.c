/* test_corpus.c -- a CSV dataset tokenised: rows that repeat another row
 * word for word after normalisation (evaluate warns about them, since
 * copies split across folds flatter the scores; common practice).  The
 * count is checked on a hand-made file and against a plain all-pairs
 * count written here. */
#include <criterion/criterion.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "fixtures.h"
#include "vecsift/corpus.h"
#include "vecsift/err.h"

static char path[128];

/* 'content' as a file in a fresh directory (fixtures.h removes both) */
static void put_file(const char *content)
{
    snprintf(path, sizeof path, "%s/rows.csv", fx_tmpdir());
    fx_write(path, content, strlen(content));
}

static const char *text_col[] = { "text" };

static void load(struct corpus *c, const char *label)
{
    struct dataset_options o = { text_col, 1, label, NULL, CSV_OPTIONS_INIT };
    struct text_options t = TEXT_OPTIONS_INIT;
    struct err e = ERR_INIT;
    cr_assert_eq(corpus_load(c, path, &o, &t, &e), 0, "%s", e.msg);
}

/* Invented tickets: case and punctuation fold away, word order does not. */
Test(corpus, duplicates_after_normalisation)
{
    put_file("text,queue\n"
             "refund please,billing\n"
             "\"Refund, please!\",billing\n"      /* repeats row 1 */
             "please refund,billing\n"            /* other order: not a copy */
             "REFUND PLEASE,delivery\n"           /* repeats row 1, other label */
             "my parcel is late,delivery\n"
             ",delivery\n"                        /* no words: not counted */
             "\"  \",billing\n"
             "my parcel is late,delivery\n");     /* repeats row 5 */
    struct corpus c;
    load(&c, "queue");
    size_t conflicting = 99;
    cr_assert_eq(corpus_duplicates(&c, &conflicting), 3);
    cr_assert_eq(conflicting, 1);
    corpus_release(&c);
}

Test(corpus, unlabelled_rows_have_no_conflicts)
{
    put_file("text\nhello there\n\"Hello, there!\"\nbye\n");
    struct corpus c;
    load(&c, NULL);
    size_t conflicting = 99;
    cr_assert_eq(corpus_duplicates(&c, &conflicting), 1);
    cr_assert_eq(conflicting, 0);
    corpus_release(&c);
}

/* Many rows over few words, so copies are common: the count equals a
 * plain all-pairs comparison of the token sequences. */
Test(corpus, same_count_as_all_pairs)
{
    static const char *const words[] = { "late", "parcel", "refund", "login" };
    size_t cap = 1 << 16, len = 0;
    char *csv = malloc(cap);
    len += (size_t)snprintf(csv + len, cap - len, "text,queue\n");
    unsigned s = 12345;
    for (int r = 0; r < 600; r++) {
        int nw = (int)((s = s * 1103515245u + 12345u) >> 16) % 3 + 1;
        for (int w = 0; w < nw; w++) {
            s = s * 1103515245u + 12345u;
            len += (size_t)snprintf(csv + len, cap - len, "%s%s", w ? " " : "", words[(s >> 16) % 4]);
        }
        s = s * 1103515245u + 12345u;
        len += (size_t)snprintf(csv + len, cap - len, ",%s\n", (s >> 16) % 2 ? "billing" : "delivery");
    }
    put_file(csv);
    free(csv);
    struct corpus c;
    load(&c, "queue");
    size_t want = 0, want_conf = 0;
    const struct tokdocs *d = &c.docs;
    for (size_t i = 0; i < d->n; i++) {
        size_t la = d->off[i + 1] - d->off[i];
        if (la == 0)
            continue;
        /* the nearest earlier copy decides the conflict (corpus.h) */
        for (size_t j = i; j-- > 0;) {
            size_t lb = d->off[j + 1] - d->off[j];
            if (la == lb && memcmp(d->tok + d->off[i], d->tok + d->off[j], la * sizeof *d->tok) == 0) {
                want++;
                want_conf += c.ds.y[i] != c.ds.y[j];
                break;
            }
        }
    }
    size_t conflicting;
    cr_assert_eq(corpus_duplicates(&c, &conflicting), want);
    cr_assert_eq(conflicting, want_conf);
    cr_assert_gt(want, 500);
    cr_assert_gt(want_conf, 100);
    corpus_release(&c);
}
