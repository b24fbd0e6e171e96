/* cmd_vectors_export.c -- 'vectors export': a packed store written back in
 * the text form that 'vectors pack' reads, every number exactly. */
#include "cmd_vectors.h"

#include <string.h>

#include "vecsift/err.h"
#include "vecsift/ofile.h"
#include "vecsift/vecset.h"

struct export_args {
    const char *out;
};

static const struct cli_opt export_opts[] = {
    CLI_OPT_STR("output", 'o', "<file>", "text file to write, '-' for standard output (required)", struct export_args,
                out),
    CLI_OPT_END,
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
    struct err e = ERR_INIT;
    struct export_args a = { NULL };
    const char *in = NULL;
    int rc = cli_parse_exact(cmd, argc, argv, &a, 1, &in, "'vectors export' needs one packed store, got %d");
    if (rc != CLI_END)
        return rc;
    if (!a.out)
        return cli_usage(cmd, "'vectors export' needs -o <file> ('-' for standard output)");
    vecset *v = NULL;
    rc = ERR_OK;
    if (ofile_check_distinct(a.out, &in, 1, &e) < 0 || !(v = vecset_open(in, &e)) ||
        vecset_export_text(v, a.out, &e) < 0)
        rc = cli_fail(&e);
    vecset_close(v);
    return rc;
}
