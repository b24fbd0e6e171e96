/* tokens_dump.c -- test-only: print the tokens vecsift makes of each row of
 * a CSV file, one row a line, tokens separated by TAB (a token never holds
 * one), so a reference library can be handed exactly our tokens
 * (tests/ext/features_vs_sklearn.py).  Default text options, as the
 * commands use them.  Not installed.
 *
 *   tokens_dump DATA.csv TEXTCOL [TEXTCOL...]
 */
#include <stdio.h>
#include <string.h>

#include "vecsift/corpus.h"
#include "vecsift/err.h"

int main(int argc, char **argv)
{
    if (argc < 3) {
        fprintf(stderr, "usage: tokens_dump DATA.csv TEXTCOL [TEXTCOL...]\n");
        return 2;
    }
    struct dataset_options o;
    memset(&o, 0, sizeof o);
    struct csv_options co = CSV_OPTIONS_INIT;
    struct text_options to = TEXT_OPTIONS_INIT;
    o.text_cols = (const char *const *)(argv + 2);
    o.ntext = (size_t)(argc - 2);
    o.csv = co;
    struct corpus c;
    struct err e = ERR_INIT;
    if (corpus_load(&c, argv[1], &o, &to, &e) < 0) {
        fprintf(stderr, "tokens_dump: %s\n", e.msg);
        return 2;
    }
    for (size_t i = 0; i < c.docs.n; i++) {
        for (size_t j = c.docs.off[i]; j < c.docs.off[i + 1]; j++)
            printf("%s%s", j > c.docs.off[i] ? "\t" : "", vocab_word(c.docs.v, c.docs.tok[j]));
        putchar('\n');
    }
    corpus_release(&c);
    return ferror(stdout) ? 1 : 0;
}
