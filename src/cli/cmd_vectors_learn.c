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
    struct pieces_params pp;
    struct common_data da;
    const char *out, *start, *tokens;
    long min_freq;
    int pieces;
};

static cli_take_fn take_lengths, take_buckets;

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
    CLI_OPT_FLAG("pieces", 0, "also learn vectors of character pieces, so misspelt and unseen words get one (default: off)",
                 A, pieces),
    CLI_OPT_FN("piece-lengths", 0, "<a-b>", "with --pieces: piece lengths in characters, 1..16 (default: 3-6)", A, pp,
               struct pieces_params, take_lengths),
    CLI_OPT_FN("piece-buckets", 0, "<n>", "with --pieces: rows pieces are hashed into (default: 2000000)", A,
               pp.buckets, uint32_t, take_buckets),
    COMMON_OPT_TEXT_COL("CSV column holding text; repeat to join several (default: text)", A, da),
    COMMON_OPT_ENCODING("CSV input: utf-8 | windows-1252 | latin-1 (default: utf-8)", A, da),
    COMMON_OPT_REPLACE_INVALID("CSV input: replace invalid UTF-8 by U+FFFD instead of stopping", A, da),
    COMMON_OPT_KEEP_ACCENTS("keep accents on Latin letters (default: cafe = café)", A, da),
    COMMON_OPT_MASK_NUMBERS("replace numbers by a placeholder token (default: keep them)", A, da),
    COMMON_OPT_KEEP_EMAILS("keep e-mail addresses and URLs (default: masked: personal data)", A, da),
    COMMON_OPT_SEED("random seed (default: 1)", A, da),
    COMMON_OPT_THREADS("training threads, 1 to 256 (default: 1, which repeats exactly)", A, da),
    CLI_OPT_QUIET("no progress or summary on stderr"),
    CLI_OPT_END,
};
#undef A

static int take_lengths(const struct cli_cmd *cmd, const struct cli_opt *o, const char *val, void *dst)
{
    (void)o;
    struct pieces_params *pp = dst;
    unsigned a, b;
    char tail;
    if (sscanf(val, "%u-%u%c", &a, &b, &tail) != 2 || a < 1 || a > b || b > PIECES_LONGEST) {
        cli_usage(cmd, "--piece-lengths must be two lengths a-b with 1 <= a <= b <= %d, not '%s'", PIECES_LONGEST,
                  val);
        return -1;
    }
    pp->min_len = a;
    pp->max_len = b;
    return 0;
}

static int take_buckets(const struct cli_cmd *cmd, const struct cli_opt *o, const char *val, void *dst)
{
    long n;
    if (cli_long(cmd, o->name, val, 1, 4294967295L, &n) < 0)
        return -1;
    *(uint32_t *)dst = (uint32_t)n;
    return 0;
}

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
    struct embed_params pinit = EMBED_PARAMS_INIT;
    struct pieces_params ppinit = PIECES_PARAMS_INIT;
    struct embed_corpus c = EMBED_CORPUS_INIT;
    struct learn_args a;
    struct err e = ERR_INIT;
    struct cli_parser ps;
    struct embed_pieces pc = EMBED_PIECES_INIT;
    float *pvec = NULL;
    float *vec = NULL;
    unsigned char *known = NULL;
    vecset *from = NULL;
    int status = ERR_INPUT;

    cli_quiet = 0;
    memset(&a, 0, sizeof a);
    a.p = pinit;
    a.pp = ppinit;
    a.min_freq = 5;
    common_data_init(&a.da);
    a.da.threads = 1; /* repeatable unless asked otherwise */
    int r = cli_parse(&ps, cmd, argc, argv, &a);
    struct embed_params p = a.p;
    struct pieces_params pp = a.pp;
    struct common_data da = a.da;
    const char *out = a.out, *start = a.start, *tokens = a.tokens;
    long min_freq = a.min_freq;
    int pieces = a.pieces, by_len = cli_seen(&ps, "piece-lengths"), by_buckets = cli_seen(&ps, "piece-buckets");
    const char *piece_opt = by_len || by_buckets ? (by_len > by_buckets ? "--piece-lengths" : "--piece-buckets") : NULL;
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
