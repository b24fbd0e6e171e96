/* cmd_vectors_pack.c -- 'vectors pack': a text vector file imported into
 * the packed store (vecset.h), its tokens normalised as running text is.
 * 'vectors export' (cmd_vectors_export.c) writes the text form back. */
#include "cmd_vectors.h"

#include <stdio.h>
#include <string.h>

#include "common.h"
#include "vecsift/err.h"
#include "vecsift/ofile.h"
#include "vecsift/text.h"
#include "vecsift/vecset.h"

struct pack_args {
    struct common_data da; /* its text options only */
    const char *out;
    int threads;
};

#define A struct pack_args
static const struct cli_opt pack_opts[] = {
    CLI_OPT_STR("output", 'o', "<file>", "packed store to write (required)", A, out),
    CLI_OPT_INT("threads", 0, "<n>", "parsing threads, 1 to 256 (default: processors online)", A, threads, 1,
                CLI_MAX_THREADS),
    COMMON_OPT_KEEP_ACCENTS("keep accents on Latin letters (default: strip them, as text is)", A, da),
    CLI_OPT_QUIET("no summary on stderr"),
    COMMON_OPT_MASK_NUMBERS("as the data will be read: number tokens become a placeholder (default: kept)", A, da),
    COMMON_OPT_KEEP_EMAILS("as the data will be read: e-mail addresses and URLs kept (default: masked)", A, da),
    CLI_OPT_END,
};
#undef A

const struct cli_cmd vectors_pack_info = {
    "vectors pack", "<vectors.txt> -o <vectors.vecs>",
    "import a text vector file into a packed store",
    pack_opts,
    "The text form has a token then its numbers on each line, separated by\n"
    "spaces or tabs, and an optional first line \"COUNT DIMENSIONS\".  Tokens are\n"
    "normalised as running text is; when two entries become the same token the\n"
    "first is kept.  Entries that normalise to no token or to several are\n"
    "dropped.  Both are counted in the summary.  '-' reads standard input.",
};

int vectors_pack(int argc, char **argv)
{
    const struct cli_cmd *cmd = &vectors_pack_info;
    struct err e = ERR_INIT;
    struct pack_args a;
    memset(&a, 0, sizeof a);
    common_data_init(&a.da);
    a.threads = vectors_default_threads();
    const char *in = NULL;
    int rc = cli_parse_exact(cmd, argc, argv, &a, 1, &in, "'vectors pack' needs one text vector file, got %d");
    if (rc != CLI_END)
        return rc;
    if (!a.out)
        return cli_usage(cmd, "'vectors pack' needs -o <file> for the packed store");
    const char *out = a.out;
    struct vecset_pack_stats st;
    if (ofile_check_distinct(out, &in, 1, &e) < 0 || vecset_pack_text(in, out, &a.da.text, a.threads, &st, &e) < 0)
        return cli_fail(&e);
    vecset *v = vecset_open(out, &e);
    if (!v)
        return cli_fail(&e);
    char hex[17];
    vecset_fingerprint_hex(vecset_fingerprint(v), hex);
    cli_note("packed %zu vectors of dimension %zu into %s; fingerprint %s", st.rows, vecset_dim(v), out, hex);
    if (st.merged)
        cli_note("%zu entries merged: their token, once normalised, came earlier (the first is kept)", st.merged);
    if (st.unusable)
        cli_note("%zu entries dropped: their token normalises to no token or to several", st.unusable);
    vecset_close(v);
    return ERR_OK;
}
