/* cmd_vectors_pack.c -- 'vectors pack', 'vectors export' and 'vectors info':
 * moving a vector set between its text form and the packed store. */
#include "cmd_vectors.h"

#include <inttypes.h>
#include <stdio.h>
#include <sys/stat.h>

#include "vecsift/err.h"
#include "vecsift/ofile.h"
#include "vecsift/text.h"
#include "vecsift/vecset.h"

/* ---- pack ---- */

static const struct cli_opt pack_opts[] = {
    { "output", 'o', "<file>", "packed store to write (required)" },
    { "threads", 0, "<n>", "parsing threads, 1 to 256 (default: processors online)" },
    { "keep-accents", 0, NULL, "keep accents on Latin letters (default: strip them, as text is)" },
    { "quiet", 'q', NULL, "no summary on stderr" },
    { "mask-numbers", 0, NULL, "as the data will be read: number tokens become a placeholder (default: kept)" },
    { "keep-emails", 0, NULL, "as the data will be read: e-mail addresses and URLs kept (default: masked)" },
    { NULL, 0, NULL, NULL },
};

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
    struct cli_parser p;
    struct err e = ERR_INIT;
    struct text_options to = TEXT_OPTIONS_INIT;
    const char *out = NULL, *val;
    int threads = vectors_default_threads();
    int rc = ERR_INPUT, o;
    cli_parser_init(&p, cmd, argc, argv);
    while ((o = cli_next(&p, &val)) >= 0) {
        switch (o) {
        case 0: out = val; break;
        case 1: if (cli_threads(cmd, val, &threads) < 0) goto out; break;
        case 2: to.keep_accents = 1; break;
        case 3: cli_quiet = 1; break;
        case 4: to.mask_number = 1; break;
        case 5: to.mask_email = to.mask_url = 0; break;
        }
    }
    if (o == CLI_HELP) {
        rc = ERR_OK;
        goto out;
    }
    if (o == CLI_FAIL)
        goto out;
    if (p.npos != 1) {
        rc = cli_usage(cmd, "'vectors pack' needs one text vector file, got %d", p.npos);
        goto out;
    }
    if (!out) {
        rc = cli_usage(cmd, "'vectors pack' needs -o <file> for the packed store");
        goto out;
    }
    const char *in = p.pos[0];
    struct vecset_pack_stats st;
    if (ofile_check_distinct(out, (const char *const *)&in, 1, &e) < 0 ||
        vecset_pack_text(in, out, &to, threads, &st, &e) < 0) {
        rc = cli_fail(&e);
        goto out;
    }
    vecset *v = vecset_open(out, &e);
    if (!v) {
        rc = cli_fail(&e);
        goto out;
    }
    char hex[17];
    vecset_fingerprint_hex(vecset_fingerprint(v), hex);
    cli_note("packed %zu vectors of dimension %zu into %s; fingerprint %s", st.rows, vecset_dim(v), out, hex);
    if (st.merged)
        cli_note("%zu entries merged: their token, once normalised, came earlier (the first is kept)", st.merged);
    if (st.unusable)
        cli_note("%zu entries dropped: their token normalises to no token or to several", st.unusable);
    vecset_close(v);
    rc = ERR_OK;
out:
    cli_parser_release(&p);
    return rc;
}

/* ---- export ---- */

static const struct cli_opt export_opts[] = {
    { "output", 'o', "<file>", "text file to write, '-' for standard output (required)" },
    { NULL, 0, NULL, NULL },
};

const struct cli_cmd vectors_export_info = {
    "vectors export", "<vectors.vecs> -o <vectors.txt>",
    "write a packed store back in the text form",
    export_opts,
    "The first line is \"COUNT DIMENSIONS\"; each number is written with the\n"
    "fewest digits (6 to 9) that read back as the same 32-bit float, so\n"
    "packing the export again gives the same fingerprint.",
};

int vectors_export(int argc, char **argv)
{
    const struct cli_cmd *cmd = &vectors_export_info;
    struct cli_parser p;
    struct err e = ERR_INIT;
    const char *out = NULL, *val;
    vecset *v = NULL;
    int rc = ERR_INPUT, o;
    cli_parser_init(&p, cmd, argc, argv);
    while ((o = cli_next(&p, &val)) >= 0)
        if (o == 0)
            out = val;
    if (o == CLI_HELP) {
        rc = ERR_OK;
        goto out;
    }
    if (o == CLI_FAIL)
        goto out;
    if (p.npos != 1) {
        rc = cli_usage(cmd, "'vectors export' needs one packed store, got %d", p.npos);
        goto out;
    }
    if (!out) {
        rc = cli_usage(cmd, "'vectors export' needs -o <file> ('-' for standard output)");
        goto out;
    }
    const char *in = p.pos[0];
    if (ofile_check_distinct(out, (const char *const *)&in, 1, &e) < 0 || !(v = vecset_open(in, &e)) ||
        vecset_export_text(v, out, &e) < 0) {
        rc = cli_fail(&e);
        goto out;
    }
    rc = ERR_OK;
out:
    vecset_close(v);
    cli_parser_release(&p);
    return rc;
}

/* ---- info ---- */

static const struct cli_opt info_opts[] = {
    { "verify", 0, NULL, "read every row: check values, stored lengths and the fingerprint (default: header only)" },
    { NULL, 0, NULL, NULL },
};

const struct cli_cmd vectors_info_info = {
    "vectors info", "<vectors.vecs>",
    "count, dimensions and fingerprint of a packed store",
    info_opts,
    "The fingerprint is a 64-bit FNV-1a hash of the dimension, every token and\n"
    "every number, in order (not cryptographic).  Models record it, and predict\n"
    "refuses a vector set whose fingerprint differs.",
};

int vectors_info(int argc, char **argv)
{
    const struct cli_cmd *cmd = &vectors_info_info;
    struct cli_parser p;
    struct err e = ERR_INIT;
    const char *val;
    vecset *v = NULL;
    int rc = ERR_INPUT, o, verify = 0;
    cli_parser_init(&p, cmd, argc, argv);
    while ((o = cli_next(&p, &val)) >= 0)
        if (o == 0)
            verify = 1;
    if (o == CLI_HELP) {
        rc = ERR_OK;
        goto out;
    }
    if (o == CLI_FAIL)
        goto out;
    if (p.npos != 1) {
        rc = cli_usage(cmd, "'vectors info' needs one packed store, got %d", p.npos);
        goto out;
    }
    if (!(v = vecset_open(p.pos[0], &e)) || (verify && vecset_verify(v, &e) < 0)) {
        rc = cli_fail(&e);
        goto out;
    }
    char hex[17];
    vecset_fingerprint_hex(vecset_fingerprint(v), hex);
    struct stat sb;
    long long size = stat(p.pos[0], &sb) == 0 ? (long long)sb.st_size : -1;
    printf("%-12s %s\n", "file", p.pos[0]);
    printf("%-12s %zu\n", "vectors", vecset_count(v));
    printf("%-12s %zu\n", "dimensions", vecset_dim(v));
    printf("%-12s %s%s\n", "fingerprint", hex, verify ? " (verified)" : "");
    printf("%-12s %lld bytes\n", "size", size);
    rc = ERR_OK;
out:
    vecset_close(v);
    cli_parser_release(&p);
    return rc;
}
