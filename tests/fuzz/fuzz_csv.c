/* fuzz_csv.c -- libFuzzer harness for the CSV reader (src/csv.c): open the
 * input as a CSV file (header then rows) and read every field of every row,
 * once strict UTF-8 and once with replacement and another encoding chosen by
 * the first byte.  Any crash, out-of-bounds access or undefined behaviour is
 * a finding; errors reported through struct err are the expected outcome. */
#include "fuzz_common.h"

#include <string.h>

#include "vecsift/csv.h"
#include "vecsift/err.h"

static void read_all(const char *path, const struct csv_options *o)
{
    struct err e = ERR_INIT;
    csv_reader *r = csv_open(path, o, &e);
    if (!r)
        return;
    size_t n = csv_ncols(r);
    volatile size_t sink = 0;
    for (size_t i = 0; i < n; i++)
        sink += strlen(csv_colname(r, i));
    (void)csv_col(r, "text");
    int rc;
    while ((rc = csv_next(r, &e)) == 1) {
        for (size_t i = 0; i < n; i++) {
            const char *f = csv_field(r, i);
            size_t len = csv_field_len(r, i);
            /* every byte of the field must be readable, and NUL-terminated */
            for (size_t j = 0; j <= len; j++)
                sink += (unsigned char)f[j];
        }
        sink += (size_t)csv_line(r) + (size_t)csv_row(r);
    }
    (void)sink;
    csv_close(r);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    char path[64];
    int fd = fuzz_memfd(data, size, path);
    struct csv_options strict = CSV_OPTIONS_INIT;
    read_all(path, &strict);
    struct csv_options loose = CSV_OPTIONS_INIT;
    loose.replace_invalid = 1;
    loose.encoding = size ? (enum csv_encoding)(data[0] % 3) : CSV_UTF8;
    read_all(path, &loose);
    close(fd);
    return 0;
}
