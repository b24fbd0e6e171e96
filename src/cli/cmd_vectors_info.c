/* cmd_vectors_info.c -- 'vectors info': what a packed store holds (count,
 * dimensions, fingerprint, size), optionally checked row by row. */
#include "cmd_vectors.h"

#include <stdio.h>
#include <sys/stat.h>

#include "vecsift/err.h"
#include "vecsift/vecset.h"

struct info_args {
    int verify;
};

static const struct cli_opt info_opts[] = {
    CLI_OPT_FLAG("verify", 0, "read every row: check values, stored lengths and the fingerprint (default: header only)", struct info_args,
                 verify),
    CLI_OPT_END,
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
    struct err e = ERR_INIT;
    struct info_args a = { 0 };
    const char *path = NULL;
    int rc = cli_parse_exact(&vectors_info_info, argc, argv, &a, 1, &path,
                             "'vectors info' needs one packed store, got %d");
    if (rc != CLI_END)
        return rc;
    vecset *v = vecset_open(path, &e);
    if (!v || (a.verify && vecset_verify(v, &e) < 0)) {
        vecset_close(v);
        return cli_fail(&e);
    }
    char hex[17];
    vecset_fingerprint_hex(vecset_fingerprint(v), hex);
    struct stat sb;
    long long size = stat(path, &sb) == 0 ? (long long)sb.st_size : -1;
    printf("%-12s %s\n", "file", path);
    printf("%-12s %zu\n", "vectors", vecset_count(v));
    printf("%-12s %zu\n", "dimensions", vecset_dim(v));
    printf("%-12s %s%s\n", "fingerprint", hex, a.verify ? " (verified)" : "");
    printf("%-12s %lld bytes\n", "size", size);
    vecset_close(v);
    return ERR_OK;
}
