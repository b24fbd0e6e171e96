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

enum {
    O_OUTPUT, O_DIM, O_WINDOW, O_NEG, O_EPOCHS, O_MIN_FREQ, O_SUBSAMPLE, O_LR, O_START, O_TOKENS,
    O_PIECES, O_PIECE_LENGTHS, O_PIECE_BUCKETS
};

/* Text, CSV and run options are parsed by common.c's data_args, so the
 * tokeniser settings mean exactly what they mean for classification. */
static const struct cli_opt opts[] = {
    [O_OUTPUT] = { "output", 'o', "<file>", "packed vector set to write (.vecs); required" },
    [O_DIM] = { "dimensions", 0, "<n>", "numbers per word vector, 1..10000 (default: 100)" },
    [O_WINDOW] = { "window", 0, "<n>", "widest distance to a context word (default: 5)" },
    [O_NEG] = { "negatives", 0, "<n>", "noise words drawn per context word (default: 5)" },
    [O_EPOCHS] = { "epochs", 0, "<n>", "passes over the corpus (default: 5)" },
    [O_MIN_FREQ] = { "min-freq", 0, "<n>", "ignore words seen fewer times (default: 5)" },
    [O_SUBSAMPLE] = { "subsample", 0, "<t>", "thin out words more frequent than t; 0 = off (default: 1e-4)" },
    [O_LR] = { "learning-rate", 0, "<r>", "starting step size, decays linearly (default: 0.025)" },
    [O_START] = { "start-from", 0, "<file>", "begin known words at their vectors in this .vecs" },
    [O_TOKENS] = { "write-tokens", 0, "<file>", "also write the corpus as training sees it, one document a line" },
    [O_PIECES] = { "pieces", 0, NULL, "also learn vectors of character pieces, so misspelt and unseen words get one (default: off)" },
    [O_PIECE_LENGTHS] = { "piece-lengths", 0, "<a-b>", "with --pieces: piece lengths in characters, 1..16 (default: 3-6)" },
    [O_PIECE_BUCKETS] = { "piece-buckets", 0, "<n>", "with --pieces: rows pieces are hashed into (default: 2000000)" },
    { "text-col", 0, "<name>", "CSV column holding text; repeat to join several (default: text)" },
    { "encoding", 0, "<name>", "CSV input: utf-8 | windows-1252 | latin-1 (default: utf-8)" },
    { "replace-invalid", 0, NULL, "CSV input: replace invalid UTF-8 by U+FFFD instead of stopping" },
    { "keep-accents", 0, NULL, "keep accents on Latin letters (default: cafe = café)" },
    { "mask-numbers", 0, NULL, "replace numbers by a placeholder token (default: keep them)" },
    { "keep-emails", 0, NULL, "keep e-mail addresses and URLs (default: masked: personal data)" },
    { "seed", 's', "<n>", "random seed (default: 1)" },
    { "threads", 't', "<n>", "training threads, 1 to 256 (default: 1, which repeats exactly)" },
    { "quiet", 'q', NULL, "no progress or summary on stderr" },
    { NULL, 0, NULL, NULL },
};

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
    "speed) and results differ slightly from run to run.\n"
    "\n"
    "With --pieces each word is learned together with its character pieces\n"
    "(Bojanowski et al. 2017): the store then also keeps the pieces, and a\n"
    "word it does not hold, misspelt or new, gets the mean of its pieces'\n"
    "vectors wherever the store is used.  Training takes about three times as\n"
    "long; docs/vecs-format.md says why it is off by default.  A composed\n"
    "vector is a guess from spelling: a misspelt urgent word may still land\n"
    "near the wrong queue, so keep a person on the review route.",
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
    struct embed_params p = EMBED_PARAMS_INIT;
    struct embed_corpus c = EMBED_CORPUS_INIT;
    struct data_args da;
    struct err e = ERR_INIT;
    struct cli_parser ps;
    const char *out = NULL, *start = NULL, *tokens = NULL, *piece_opt = NULL;
    struct pieces_params pp = PIECES_PARAMS_INIT;
    struct embed_pieces pc = EMBED_PIECES_INIT;
    float *pvec = NULL;
    int pieces = 0;
    long min_freq = 5;
    float *vec = NULL;
    unsigned char *known = NULL;
    vecset *from = NULL;
    int status = ERR_INPUT, opt, took;
    const char *val;
    long n;

    cli_quiet = 0;
    data_args_init(&da);
    da.threads = 1; /* repeatable unless asked otherwise */
    cli_parser_init(&ps, cmd, argc, argv);
    while ((opt = cli_next(&ps, &val)) >= 0) {
        if ((took = data_args_option(&da, cmd, opt_name(cmd, opt), val)) < 0)
            goto out;
        if (took)
            continue;
        switch (opt) {
        case O_OUTPUT: out = val; break;
        case O_START: start = val; break;
        case O_TOKENS: tokens = val; break;
        case O_PIECES: pieces = 1; break;
        case O_PIECE_LENGTHS: {
            unsigned a, b;
            char tail;
            piece_opt = "--piece-lengths";
            if (sscanf(val, "%u-%u%c", &a, &b, &tail) != 2 || a < 1 || a > b || b > PIECES_LONGEST) {
                cli_usage(cmd, "--piece-lengths must be two lengths a-b with 1 <= a <= b <= %d, not '%s'",
                          PIECES_LONGEST, val);
                goto out;
            }
            pp.min_len = a;
            pp.max_len = b;
            break;
        }
        case O_PIECE_BUCKETS:
            piece_opt = "--piece-buckets";
            if (cli_long(cmd, opts[opt].name, val, 1, 4294967295L, &n) < 0)
                goto out;
            pp.buckets = (uint32_t)n;
            break;
        case O_SUBSAMPLE:
            if (cli_double(cmd, opts[opt].name, val, 0, 0.999, &p.subsample) < 0)
                goto out;
            break;
        case O_LR:
            if (cli_double(cmd, opts[opt].name, val, 1e-9, 10, &p.learning_rate) < 0)
                goto out;
            break;
        case O_MIN_FREQ:
            if (cli_long(cmd, opts[opt].name, val, 1, LONG_MAX, &min_freq) < 0)
                goto out;
            break;
        default: {
            /* the whole-number options, each with its range */
            static const struct { int opt; long lo, hi; } range[] = {
                { O_DIM, 1, EMBED_MAX_DIM }, { O_WINDOW, 1, 1000 }, { O_NEG, 1, 1000 },
                { O_EPOCHS, 1, 100000 },
            };
            for (size_t i = 0; i < sizeof range / sizeof range[0]; i++)
                if (range[i].opt == opt &&
                    cli_long(cmd, opts[opt].name, val, range[i].lo, range[i].hi, &n) < 0)
                    goto out;
            if (opt == O_DIM)
                p.dim = (size_t)n;
            else if (opt == O_WINDOW)
                p.window = (int)n;
            else if (opt == O_NEG)
                p.negatives = (int)n;
            else if (opt == O_EPOCHS)
                p.epochs = (int)n;
        }
        }
    }
    p.seed = da.seed;
    p.threads = da.threads;
    if (opt == CLI_HELP) {
        status = ERR_OK;
        goto out;
    }
    if (opt == CLI_FAIL)
        goto out;
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
    if (piece_opt && !pieces) {
        cli_usage(cmd, "%s only applies with --pieces", piece_opt);
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
    if (pieces) {
        embed_pieces_build(&pc, &c, &pp);
        pvec = xcalloc(pc.nrows ? pc.nrows : 1, xmul(p.dim, sizeof *pvec));
        if (embed_train_pieces(&c, &p, &pc, vec, pvec, known, show ? show_progress : NULL, &pr, &e) < 0)
            goto fail;
    } else if (embed_train(&c, &p, vec, known, show ? show_progress : NULL, &pr, &e) < 0) {
        goto fail;
    }
    if (pr.shown)
        fputc('\n', stderr);
    double secs = since(&pr.start);
    if (tokens && write_tokens(&c, tokens, &e) < 0)
        goto fail;
    struct vecset_pieces vp = { pp, pc.nrows, pc.bucket, pvec };
    if (vecset_write_pieces(out, (const char *const *)c.words, vec, c.nwords, p.dim, pieces ? &vp : NULL, &e) < 0)
        goto fail;
    if (pieces)
        cli_note("vecsift: %zu piece rows (%u to %u characters, %lu buckets) kept for words not in the set",
                 pc.nrows, pp.min_len, pp.max_len, (unsigned long)pp.buckets);
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
    embed_pieces_release(&pc);
    free(pvec);
    free(vec);
    free(known);
    embed_corpus_release(&c);
    cli_parser_release(&ps);
    return status;
}
