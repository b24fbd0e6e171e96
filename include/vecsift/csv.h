/* csv.h -- RFC 4180 CSV: a streaming reader and a cell writer.
 *
 * The reader holds one row at a time (memory is bounded by the longest row),
 * accepts CRLF and LF, quoted fields with embedded commas, doubled quotes and
 * newlines, skips a UTF-8 byte-order mark, and reads the header row at open.
 * Text is checked to be UTF-8 (or converted from windows-1252 / latin-1 on
 * request).  It does not tokenise; see text.h.
 */
#ifndef VECSIFT_CSV_H
#define VECSIFT_CSV_H

#include <stddef.h>
#include <stdio.h>

struct err;
typedef struct csv_reader csv_reader;

enum csv_encoding { CSV_UTF8 = 0, CSV_WINDOWS_1252, CSV_LATIN1 };

struct csv_options {
    enum csv_encoding encoding; /* of the file; fields are always handed out as UTF-8 */
    int replace_invalid;        /* 1: invalid UTF-8 becomes U+FFFD (counted); 0: error */
};
#define CSV_OPTIONS_INIT { CSV_UTF8, 0 }

/* Parse an --encoding value ("utf-8", "windows-1252", "latin-1"; case and
 * the dash do not matter).  Returns 0, or -1 for an unknown name. */
int csv_encoding_parse(const char *name, enum csv_encoding *out);

/* Open 'path' ("-" = stdin) and read its header row.  Errors (ERR_INPUT
 * unless the file cannot be read, then ERR_IO): empty file, invalid UTF-8,
 * unterminated quote, duplicate or empty column names.  Returns a reader
 * owned by the caller (csv_close), or NULL with 'e' set. */
csv_reader *csv_open(const char *path, const struct csv_options *o, struct err *e);
void csv_close(csv_reader *r); /* NULL-safe */

/* The header. */
size_t csv_ncols(const csv_reader *r);
const char *csv_colname(const csv_reader *r, size_t i);
/* Index of the column called 'name', or -1. */
long csv_col(const csv_reader *r, const char *name);
/* Index of 'name', or -1 with 'e' set to "FILE:1: no column 'name'" (the
 * header's line) and a hint listing the columns there are. */
long csv_require_col(const csv_reader *r, const char *name, struct err *e);

/* Read the next data row.  Returns 1 when a row was read, 0 at end of file,
 * -1 on error with 'e' set to "FILE:LINE: ..." (wrong number of fields,
 * unterminated quote, text after a closing quote, invalid UTF-8, a byte
 * undefined in windows-1252, a NUL byte).  An empty line, anywhere, is not a
 * row.  After an error every later call returns -1 with the same error.
 *
 * Where RFC 4180 is silent the reader agrees with Python's csv module
 * (default dialect): a lone CR also ends a line, a quote inside an unquoted
 * field is an ordinary character, spaces around fields are kept.  It is
 * stricter on text after a closing quote ("ab"c), a quote still open at end
 * of file and NUL bytes: those are errors.  See src/csv.c. */
int csv_next(csv_reader *r, struct err *e);

/* Fields of the current row: NUL-terminated UTF-8, borrowed, valid until the
 * next csv_next/csv_close.  A field may itself contain NUL bytes only if the
 * input did; csv_field_len gives the true length. */
const char *csv_field(const csv_reader *r, size_t i);
size_t csv_field_len(const csv_reader *r, size_t i);

/* Line number (1-based, in the file) where the current row starts, and the
 * 1-based number of the current data row (header excluded). */
long csv_line(const csv_reader *r);
long csv_row(const csv_reader *r);
/* The path given to csv_open ("<stdin>" for "-"). */
const char *csv_path(const csv_reader *r);
/* How many invalid byte sequences were replaced by U+FFFD so far. */
size_t csv_replaced(const csv_reader *r);

/* ---- writing ---- */

/* Write one cell: quoted only where RFC 4180 needs it (comma, quote, CR, LF).
 * With 'guard' set, a cell beginning with = + - @ TAB or CR that is not a
 * plain number gets a leading apostrophe so spreadsheets show it as text
 * instead of running it as a formula (OWASP, "CSV Injection"). */
void csv_put(FILE *fp, const char *s, size_t len, int guard);
/* Write a row of NUL-terminated cells (each through csv_put with 'guard'),
 * ending in CRLF as RFC 4180 section 2 asks. */
void csv_put_row(FILE *fp, const char *const *cells, size_t n, int guard);

#endif
