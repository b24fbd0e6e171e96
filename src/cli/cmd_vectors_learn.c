/* cmd_vectors_learn.c -- "vecsift vectors learn": word vectors from a team's
 * own unlabelled text, written as a packed store.
 *
 * Reads the corpus through the classification tokeniser (same text_options),
 * trains skip-gram with negative sampling (embed.h) and writes the vectors
 * with vecset_write, most frequent word first.  The training itself is in
 * src/embed.c; this file parses options, shows progress and writes files.
 */
#include <limits.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "commands.h"
#include "common.h"
#include "vecsift/embed.h"
#include "vecsift/err.h"
#include "vecsift/ofile.h"
#include "vecsift/text.h"
#include "vecsift/vecset.h"
#include "vecsift/xalloc.h"

struct learn_args {
    struct embed_params p;
    struct common_data da;
    const char *out, *start, *tokens;
    long min_freq;
};

/* Text, CSV and run options are common.c's, so the tokeniser settings mean
 * exactly what they mean for classification. */
#define A struct learn_args
static const struct cli_opt opts[] = {
    CLI_OPT_STR("output", 'o', "<file>", "packed vector set to write (.vecs); required", A, out),
    CLI_OPT_SIZE("dimensions", 0, "<n>", "numbers per word vector, 1..10000 (default: 100)", A, p.dim, 1,
                 EMBED_MAX_DIM),
    CLI_OPT_INT("window", 0, "<n>", "widest distance to a context word (default: 5)", A, p.window, 1, 1000),
    CLI_OPT_INT("negatives", 0, "<n>", "noise words drawn per context word (default: 5)", A, p.negatives, 1, 1000),
    CLI_OPT_INT("epochs", 0, "<n>", "passes over the corpus (default: 5)", A, p.epochs, 1, 100000),
    CLI_OPT_LONG("min-freq", 0, "<n>", "ignore words seen fewer times (default: 5)", A, min_freq, 1, LONG_MAX),
    CLI_OPT_DOUBLE("subsample", 0, "<t>", "thin out words more frequent than t; 0 = off (default: 1e-4)", A,
                   p.subsample, 0, 0.999),
    CLI_OPT_DOUBLE("learning-rate", 0, "<r>", "starting step size, decays linearly (default: 0.025)", A,
                   p.learning_rate, 1e-9, 10),
    CLI_OPT_STR("start-from", 0, "<file>", "begin known words at their vectors in this .vecs", A, start),
    CLI_OPT_STR("write-tokens", 0, "<file>", "also write the corpus as training sees it, one document a line", A,
                tokens),
    COMMON_OPT_TEXT_COL("CSV column holding text; repeat to join several (default: text)", A, da),
    COMMON_OPT_ENCODING("CSV input: utf-8 | windows-1252 | latin-1 (default: utf-8)", A, da),
    COMMON_OPT_REPLACE_INVALID("CSV input: replace invalid UTF-8 by U+FFFD instead of stopping", A, da),
    COMMON_OPT_KEEP_ACCENTS("keep accents on Latin letters (default: cafe = café)", A, da),
    COMMON_OPT_MASK_NUMBERS("replace numbers by a placeholder token (default: keep them)", A, da),
    COMMON_OPT_KEEP_EMAILS("keep e-mail addresses and URLs (default: masked: personal data)", A, da),
    COMMON_OPT_SEED("random seed (default: 1)", A, da),
    COMMON_OPT_THREADS("training threads (default: 1, which repeats exactly)", A, da),
    CLI_OPT_QUIET("no progress or summary on stderr"),
    CLI_OPT_END,
};
#undef A

const struct cli_cmd cmd_vectors_learn_info = {
    "vectors learn",
    "[options] <corpus> -o <vectors.vecs>",
    "learn word vectors from unlabelled text (skip-gram, negative sampling)",
    opts,
    "The corpus is plain text, one document a line, or CSV (when --text-col is\n"
    "given or the name ends in .csv).  Text is tokenised exactly as for\n"
    "classification, so give both the same text options.  Words are\n"
    "written most frequent first.  With --threads 1 the same --seed gives the\n"
    "same file byte for byte; with more threads updates race (by design, for\n"
    "speed) and results differ slightly from run to run.",
};

/* ---- progress ---- */

struct progress {
    struct timespec start;
    double last;
    int shown;
};

static double since(const struct timespec *t0)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)(t.tv_sec - t0->tv_sec) + (double)(t.tv_nsec - t0->tv_nsec) * 1e-9;
}

static void show_progress(void *ud, uint64_t done, uint64_t total)
{
    struct progress *pr = ud;
    double s = since(&pr->start);
    if (s - pr->last < 0.25 && done < total)
        return;
    pr->last = s;
    pr->shown = 1;
    double rate = s > 0 ? (double)done / s : 0;
    double left = rate > 0 ? (double)(total - done) / rate : 0;
    fprintf(stderr, "\rlearning vectors: %3.0f%% done, %.0fk words/s, %d:%02d left ",
            total ? 100.0 * (double)done / (double)total : 100.0, rate / 1000,
            (int)(left / 60), (int)left % 60);
    fflush(stderr);
}

/* ---- work ---- */

static int write_tokens(const struct embed_corpus *c, const char *path, struct err *e)
{
    ofile *o = ofile_open(path, e);
    if (!o)
        return -1;
    FILE *fp = ofile_fp(o);
    for (size_t d = 0; d < c->ndocs; d++) {
        for (size_t i = c->off[d]; i < c->off[d + 1]; i++) {
            if (i > c->off[d])
                fputc(' ', fp);
            fputs(c->words[c->tok[i]], fp);
        }
        fputc('\n', fp);
    }
    return ofile_commit(o, e);
}

int cmd_vectors_learn(int argc, char **argv)
{
    const struct cli_cmd *cmd = &cmd_vectors_learn_info;
    struct embed_params pinit = EMBED_PARAMS_INIT;
    struct embed_corpus c = EMBED_CORPUS_INIT;
    struct learn_args a;
    struct err e = ERR_INIT;
    struct cli_parser ps;
    float *vec = NULL;
    unsigned char *known = NULL;
    vecset *from = NULL;
    int status = ERR_INPUT;

    cli_quiet = 0;
    memset(&a, 0, sizeof a);
    a.p = pinit;
    a.min_freq = 5;
    common_data_init(&a.da);
    a.da.threads = 1; /* repeatable unless asked otherwise */
    int r = cli_parse(&ps, cmd, argc, argv, &a);
    struct embed_params p = a.p;
    struct common_data da = a.da;
    const char *out = a.out, *start = a.start, *tokens = a.tokens;
    long min_freq = a.min_freq;
    p.seed = da.seed;
    p.threads = da.threads;
    if (r != CLI_END) {
        status = cli_parse_status(r);
        goto out;
    }
    if (ps.npos != 1) {
        if (ps.npos == 0)
            cli_usage(cmd, "no corpus file given");
        else
            cli_usage(cmd, "one corpus file expected, not %d", ps.npos);
        goto out;
    }
    if (!out) {
        cli_usage(cmd, "no output file given (-o FILE)");
        goto out;
    }
    const char *corpus = ps.pos[0];
    const char *inputs[2] = { corpus, start ? start : corpus };
    if (ofile_check_distinct(out, inputs, 2, &e) < 0 ||
        (tokens && ofile_check_distinct(tokens, inputs, 2, &e) < 0))
        goto fail;
    if (tokens && strcmp(tokens, out) == 0) {
        cli_usage(cmd, "--write-tokens and --output name the same file '%s'", out);
        goto out;
    }

    struct embed_source src = { corpus, da.text_cols, da.ntext, &da.text, &da.csv, (uint64_t)min_freq };
    if (embed_corpus_read(&c, &src, &e) < 0)
        goto fail;
    vec = xcalloc(c.nwords, xmul(p.dim, sizeof *vec));
    known = xcalloc(c.nwords, 1);
    if (start) {
        if (!(from = vecset_open(start, &e)))
            goto fail;
        long found = embed_start_from(&c, from, p.dim, vec, known, &e);
        if (found < 0)
            goto fail;
        cli_note("vecsift: %ld of %zu words start from '%s'", found, c.nwords, start);
    }
    struct progress pr = { .last = -1 };
    clock_gettime(CLOCK_MONOTONIC, &pr.start);
    int show = !cli_quiet && isatty(STDERR_FILENO);
    if (embed_train(&c, &p, vec, known, show ? show_progress : NULL, &pr, &e) < 0)
        goto fail;
    if (pr.shown)
        fputc('\n', stderr);
    double secs = since(&pr.start);
    if (tokens && write_tokens(&c, tokens, &e) < 0)
        goto fail;
    if (vecset_write(out, (const char *const *)c.words, vec, c.nwords, p.dim, &e) < 0)
        goto fail;
    cli_note("vecsift: %zu words x %zu dimensions from %zu documents (%llu words, %llu kept) "
             "in %.1f s -> %s",
             c.nwords, p.dim, c.lines, (unsigned long long)c.tokens_read,
             (unsigned long long)c.off[c.ndocs], secs, out);
    status = ERR_OK;
    goto out;
fail:
    status = cli_fail(&e);
out:
    vecset_close(from);
    free(vec);
    free(known);
    embed_corpus_release(&c);
    cli_parser_release(&ps);
    return status;
}
