/* csv.c -- RFC 4180 CSV: a streaming reader and a cell writer.
 *
 * The reader works in two passes over one record at a time.  The first pass
 * (read_record) pulls 64 KiB blocks with fread and copies bytes into 'raw'
 * until it meets a line end that is not inside a quoted field; the second
 * (parse_record) splits 'raw' into fields, undoes the quoting, checks or
 * converts the text to UTF-8 and records where each field starts.  Holding
 * the whole raw record means a multi-byte sequence never straddles a block,
 * and every error can name its exact line and byte.  Memory is two growing
 * buffers the size of the longest record; there is no line-length limit.
 *
 * Rules where RFC 4180 is silent or stricter than real files (chosen to agree
 * with Python's csv module, default "excel" dialect, where that is sensible;
 * tests/ext/csv_vs_python.py checks the agreement):
 *   - a line ends with CRLF, LF, or a lone CR (as Python's reader does);
 *   - a quote inside an unquoted field is an ordinary character: a"b -> a"b,
 *     and spaces around a field are kept:  ' "x" ' -> ' "x" ' (Python agrees);
 *   - text after the closing quote of a quoted field ("ab"c) is an error.
 *     Python (non-strict) silently glues it on ("abc"); that hides a broken
 *     export, so we refuse it and name the line;
 *   - an empty line is not a row (Python's reader yields [] for it and
 *     csv.DictReader skips it); a single empty field is written as "";
 *   - a NUL byte is an error "NUL byte in field": text columns never hold one
 *     and it usually means the file is UTF-16 or binary;
 *   - the header must have no empty and no repeated column names.
 * It does not tokenise; see text.h.
 */
#include "vecsift/csv.h"

#include <errno.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/err.h"
#include "vecsift/xalloc.h"

#define BLOCK (64 * 1024)

struct csv_reader {
    FILE *fp;
    int own_fp;                 /* 0 for stdin */
    char *path;
    struct csv_options opt;

    unsigned char *blk;         /* (BLOCK) input block */
    size_t blen, bpos;          /* bytes in blk, next unread byte */
    int eof;
    int skip_lf;                /* the last record ended in CR: drop one LF */

    unsigned char *raw;         /* current record, quoting intact, no line end */
    size_t rlen, rcap;
    long rec_line;              /* line where the current record starts */
    long next_line;             /* line where the next record starts */
    long bom;                   /* bytes of BOM before line 1 (for byte offsets) */

    char *buf;                  /* fields, each NUL-terminated, UTF-8 */
    size_t blen2, bcap;
    size_t *off, *len;          /* (nf) field offsets and lengths in buf */
    const char **fields;        /* (nf) pointers into buf */
    size_t nf, fcap;

    char **cols;                /* (ncols) header, owned */
    long header_line;           /* 1 unless empty lines come first */
    size_t ncols;
    long row;
    size_t replaced;
    struct err failed;          /* first error; later calls repeat it */
};

/* ---- encodings ---- */

/* Windows-1252 bytes 0x80-0x9F, from the Unicode Consortium's published
 * mapping: https://www.unicode.org/Public/MAPPINGS/VENDORS/MICSFT/WINDOWS/CP1252.TXT
 * (0 = UNDEFINED there: 0x81, 0x8D, 0x8F, 0x90, 0x9D).  Bytes 0xA0-0xFF map
 * to the same code points, as in ISO-8859-1.  Checked against Python's cp1252
 * codec by tests/ext/csv_vs_python.py. */
static const uint16_t cp1252_80[32] = {
    0x20AC, 0,      0x201A, 0x0192, 0x201E, 0x2026, 0x2020, 0x2021,
    0x02C6, 0x2030, 0x0160, 0x2039, 0x0152, 0,      0x017D, 0,
    0,      0x2018, 0x2019, 0x201C, 0x201D, 0x2022, 0x2013, 0x2014,
    0x02DC, 0x2122, 0x0161, 0x203A, 0x0153, 0,      0x017E, 0x0178,
};

int csv_encoding_parse(const char *name, enum csv_encoding *out)
{
    /* compare ignoring case and dashes/underscores: "UTF8", "latin_1" */
    char k[32];
    size_t n = 0;
    for (const char *p = name; *p && n + 1 < sizeof k; p++)
        if (*p != '-' && *p != '_')
            k[n++] = (char)((*p >= 'A' && *p <= 'Z') ? *p + 32 : *p);
    k[n] = '\0';
    if (!strcmp(k, "utf8"))
        *out = CSV_UTF8;
    else if (!strcmp(k, "windows1252") || !strcmp(k, "cp1252"))
        *out = CSV_WINDOWS_1252;
    else if (!strcmp(k, "latin1") || !strcmp(k, "iso88591"))
        *out = CSV_LATIN1;
    else
        return -1;
    return 0;
}

/* Length of the valid UTF-8 sequence at s[0..n), or 0 if it is not valid; in
 * that case '*bad' is the length of the maximal subpart to replace by one
 * U+FFFD (Unicode Standard, chapter 3, "U+FFFD Substitution of Maximal
 * Subparts"; Python's errors="replace" does the same).  Strict per RFC 3629
 * table 4: no overlongs, no surrogates, nothing above U+10FFFF. */
static size_t utf8_seq(const unsigned char *s, size_t n, size_t *bad)
{
    unsigned c = s[0];
    size_t need;
    unsigned lo = 0x80, hi = 0xBF;   /* range of the second byte */
    if (c < 0x80)
        return 1;
    if (c >= 0xC2 && c <= 0xDF)
        need = 2;
    else if (c >= 0xE0 && c <= 0xEF) {
        need = 3;
        if (c == 0xE0) lo = 0xA0;
        if (c == 0xED) hi = 0x9F;
    } else if (c >= 0xF0 && c <= 0xF4) {
        need = 4;
        if (c == 0xF0) lo = 0x90;
        if (c == 0xF4) hi = 0x8F;
    } else {
        *bad = 1;
        return 0;
    }
    size_t i = 1;
    for (; i < need && i < n; i++) {
        unsigned b = s[i];
        if (i == 1 ? (b < lo || b > hi) : (b < 0x80 || b > 0xBF))
            break;
    }
    if (i == need)
        return need;
    *bad = i;
    return 0;
}

static size_t put_utf8(char *o, uint32_t cp)
{
    if (cp < 0x80) { o[0] = (char)cp; return 1; }
    if (cp < 0x800) {
        o[0] = (char)(0xC0 | (cp >> 6));
        o[1] = (char)(0x80 | (cp & 0x3F));
        return 2;
    }
    o[0] = (char)(0xE0 | (cp >> 12));
    o[1] = (char)(0x80 | ((cp >> 6) & 0x3F));
    o[2] = (char)(0x80 | (cp & 0x3F));
    return 3;
}

/* ---- input ---- */

static int fill(csv_reader *r, struct err *e)
{
    if (r->eof)
        return 0;
    r->blen = fread(r->blk, 1, BLOCK, r->fp);
    r->bpos = 0;
    if (r->blen == 0) {
        r->eof = 1;
        if (ferror(r->fp))
            return err_io(e, r->path, 0, "read error: %s", strerror(errno));
        return 0;
    }
    return 1;
}

static void raw_add(csv_reader *r, const unsigned char *p, size_t n)
{
    if (n == 0)
        return;     /* raw may still be NULL: memcpy(NULL, p, 0) is undefined */
    if (r->rlen + n > r->rcap)
        r->raw = xgrow(r->raw, &r->rcap, r->rlen + n, 1);
    memcpy(r->raw + r->rlen, p, n);
    r->rlen += n;
}

enum { S_START, S_FIELD, S_QUOTED, S_QUOTE };

/* Copy the next record (without its line end) into r->raw.  Returns 1, 0 at
 * end of input with nothing read, -1 on error.  Sets rec_line/next_line. */
static int read_record(csv_reader *r, struct err *e)
{
    int st = S_START;
    long lines = 0;             /* line ends inside the record */
    long qline = 0;             /* line where the open quoted field started */
    int pending_cr = 0;         /* a CR inside quotes: a following LF is the same line end */
    int any = 0;
    r->rlen = 0;
    r->rec_line = r->next_line;
    for (;;) {
        if (r->bpos == r->blen) {
            int k = fill(r, e);
            if (k < 0)
                return -1;
            if (k == 0)
                break;
        }
        if (r->skip_lf) {
            r->skip_lf = 0;
            if (r->blk[r->bpos] == '\n') {
                r->bpos++;
                continue;
            }
        }
        any = 1;
        const unsigned char *p = r->blk + r->bpos, *end = r->blk + r->blen;
        const unsigned char *q = p;
        while (q < end) {
            unsigned c = *q;
            if (st == S_QUOTED) {
                /* fast path: everything up to the next quote is field text */
                const unsigned char *z = memchr(q, '"', (size_t)(end - q));
                const unsigned char *stop = z ? z : end;
                for (const unsigned char *t = q; t < stop; t++) {
                    if (*t == '\n') {
                        if (!pending_cr) lines++;
                        pending_cr = 0;
                    } else if (*t == '\r') {
                        lines++;
                        pending_cr = 1;
                    } else
                        pending_cr = 0;
                }
                q = stop;
                if (z) {
                    pending_cr = 0;
                    st = S_QUOTE;
                    q++;
                }
                continue;
            }
            if (c == '\r' || c == '\n') {
                raw_add(r, p, (size_t)(q - p));
                r->bpos += (size_t)(q - p) + 1;
                r->skip_lf = (c == '\r');
                r->next_line = r->rec_line + lines + 1;
                return 1;
            }
            if (c == ',')
                st = S_START;
            else if (c == '"' && st == S_START) {
                st = S_QUOTED;
                qline = r->rec_line + lines;
            } else if (c == '"' && st == S_QUOTE)
                st = S_QUOTED;
            else
                st = S_FIELD;
            q++;
        }
        raw_add(r, p, (size_t)(q - p));
        r->bpos = r->blen;
    }
    if (st == S_QUOTED)
        return err_set(e, r->path, qline, "unterminated quoted field (end of file reached)");
    r->next_line = r->rec_line + lines + 1;
    return any ? 1 : 0;
}

/* ---- parsing one record ---- */

static void buf_add(csv_reader *r, const void *p, size_t n)
{
    if (r->blen2 + n > r->bcap)
        r->buf = xgrow(r->buf, &r->bcap, r->blen2 + n, 1);
    memcpy(r->buf + r->blen2, p, n);
    r->blen2 += n;
}

static void field_end(csv_reader *r, size_t start)
{
    if (r->nf == r->fcap) {
        size_t cap = r->fcap;
        r->off = xgrow(r->off, &cap, r->nf + 1, sizeof *r->off);
        cap = r->fcap;
        r->len = xgrow(r->len, &cap, r->nf + 1, sizeof *r->len);
        r->fields = xgrow(r->fields, &r->fcap, r->nf + 1, sizeof *r->fields);
    }
    r->off[r->nf] = start;
    r->len[r->nf] = r->blen2 - start;
    r->nf++;
    buf_add(r, "", 1);
}

/* Line and 1-based byte column of raw offset 'at' in the current record. */
static void locate(const csv_reader *r, size_t at, long *line, long *col)
{
    long ln = r->rec_line;
    size_t bol = 0;
    for (size_t i = 0; i < at; i++) {
        if (r->raw[i] == '\n' || (r->raw[i] == '\r' && (i + 1 >= r->rlen || r->raw[i + 1] != '\n'))) {
            ln++;
            bol = i + 1;
        }
    }
    *line = ln;
    *col = (long)(at - bol) + 1 + (ln == 1 ? r->bom : 0);
}

/* Append the text byte(s) at raw[*i] to buf, converting or validating.
 * Returns 0, or -1 with 'e' set. */
static int put_text(csv_reader *r, size_t *i, size_t end, struct err *e)
{
    const unsigned char *s = r->raw + *i;
    char u[4];
    if (*s == 0) {
        long ln, col;
        locate(r, *i, &ln, &col);
        return err_set(e, r->path, ln, "NUL byte in field (byte %ld of the line)", col);
    }
    if (*s < 0x80) {
        /* a run of plain ASCII goes in one copy */
        size_t k = 1;
        while (*i + k < end && s[k] > 0 && s[k] < 0x80 && s[k] != ',' && s[k] != '"')
            k++;
        buf_add(r, s, k);
        *i += k;
        return 0;
    }
    if (r->opt.encoding == CSV_LATIN1) {
        buf_add(r, u, put_utf8(u, *s));
        (*i)++;
        return 0;
    }
    if (r->opt.encoding == CSV_WINDOWS_1252) {
        uint32_t cp = *s >= 0xA0 ? *s : cp1252_80[*s - 0x80];
        if (cp == 0) {
            if (!r->opt.replace_invalid) {
                long ln, col;
                locate(r, *i, &ln, &col);
                return err_set(e, r->path, ln, "byte 0x%02X at byte %ld of the line is not defined in windows-1252",
                               *s, col);
            }
            cp = 0xFFFD;
            r->replaced++;
        }
        buf_add(r, u, put_utf8(u, cp));
        (*i)++;
        return 0;
    }
    size_t bad = 0, n = utf8_seq(s, end - *i, &bad);
    if (n) {
        buf_add(r, s, n);
        *i += n;
        return 0;
    }
    if (!r->opt.replace_invalid) {
        long ln, col;
        locate(r, *i, &ln, &col);
        err_set(e, r->path, ln, "invalid UTF-8 at byte %ld of the line (0x%02X)", col, *s);
        return err_hint(e, "if the file was saved by a Windows program, try --encoding windows-1252");
    }
    buf_add(r, "\xEF\xBF\xBD", 3);
    r->replaced++;
    *i += bad;
    return 0;
}

/* Split r->raw into fields.  Returns 0 or -1. */
static int parse_record(csv_reader *r, struct err *e)
{
    size_t i = 0, n = r->rlen;
    r->nf = 0;
    r->blen2 = 0;
    for (;;) {
        size_t start = r->blen2;
        if (i < n && r->raw[i] == '"') {
            size_t q0 = i++;
            for (;;) {
                if (i >= n) {
                    /* read_record only ends a record inside quotes at EOF */
                    long ln, col;
                    locate(r, q0, &ln, &col);
                    return err_set(e, r->path, ln, "unterminated quoted field");
                }
                if (r->raw[i] == '"') {
                    if (i + 1 < n && r->raw[i + 1] == '"') {
                        buf_add(r, "\"", 1);
                        i += 2;
                        continue;
                    }
                    i++;
                    break;
                }
                if (put_text(r, &i, n, e) < 0)
                    return -1;
            }
            if (i < n && r->raw[i] != ',') {
                long ln, col;
                locate(r, i, &ln, &col);
                return err_set(e, r->path, ln, "text after the closing quote of field %zu (byte %ld of the line)",
                               r->nf + 1, col);
            }
        } else {
            while (i < n && r->raw[i] != ',')
                if (put_text(r, &i, n, e) < 0)
                    return -1;
        }
        field_end(r, start);
        if (i >= n)
            break;
        i++;    /* the comma */
    }
    for (size_t k = 0; k < r->nf; k++)
        r->fields[k] = r->buf + r->off[k];
    return 0;
}

/* Next non-empty record, parsed.  1, 0 at end, -1 on error. */
static int next_record(csv_reader *r, struct err *e)
{
    for (;;) {
        int k = read_record(r, e);
        if (k <= 0)
            return k;
        if (r->rlen > 0)
            break;
    }
    return parse_record(r, e) < 0 ? -1 : 1;
}

/* ---- API ---- */

csv_reader *csv_open(const char *path, const struct csv_options *o, struct err *e)
{
    struct csv_options defaults = CSV_OPTIONS_INIT;
    csv_reader *r = xcalloc(1, sizeof *r);
    r->opt = o ? *o : defaults;
    if (!strcmp(path, "-")) {
        r->fp = stdin;
        r->path = xstrdup("<stdin>");
    } else {
        r->path = xstrdup(path);
        r->fp = fopen(path, "rb");
        if (!r->fp) {
            err_io(e, path, 0, "cannot open: %s", strerror(errno));
            goto fail;
        }
        r->own_fp = 1;
    }
    r->blk = xmalloc(BLOCK);
    r->next_line = 1;
    if (fill(r, e) < 0)
        goto fail;
    if (r->blen >= 3 && !memcmp(r->blk, "\xEF\xBB\xBF", 3)) {
        r->bpos = 3;
        r->bom = 3;
    }
    int k = next_record(r, e);
    if (k < 0)
        goto fail;
    if (k == 0) {
        err_set(e, r->path, 0, "empty file, expected a header row");
        goto fail;
    }
    r->ncols = r->nf;
    r->header_line = r->rec_line;
    r->cols = xcalloc(r->ncols, sizeof *r->cols);
    for (size_t i = 0; i < r->ncols; i++) {
        r->cols[i] = xstrdup(r->fields[i]);
        if (r->cols[i][0] == '\0') {
            err_set(e, r->path, r->rec_line, "column %zu of the header has no name", i + 1);
            goto fail;
        }
        for (size_t j = 0; j < i; j++)
            if (!strcmp(r->cols[j], r->cols[i])) {
                err_set(e, r->path, r->rec_line, "column name '%s' appears twice in the header (columns %zu and %zu)",
                        r->cols[i], j + 1, i + 1);
                goto fail;
            }
    }
    r->nf = 0;
    return r;
fail:
    csv_close(r);
    return NULL;
}

void csv_close(csv_reader *r)
{
    if (!r)
        return;
    if (r->own_fp && r->fp)
        fclose(r->fp);
    for (size_t i = 0; i < r->ncols; i++)
        free(r->cols[i]);
    free(r->cols);
    free(r->path);
    free(r->blk);
    free(r->raw);
    free(r->buf);
    free(r->off);
    free(r->len);
    free(r->fields);
    free(r);
}

size_t csv_ncols(const csv_reader *r) { return r->ncols; }
const char *csv_colname(const csv_reader *r, size_t i) { return r->cols[i]; }

long csv_col(const csv_reader *r, const char *name)
{
    for (size_t i = 0; i < r->ncols; i++)
        if (!strcmp(r->cols[i], name))
            return (long)i;
    return -1;
}

long csv_require_col(const csv_reader *r, const char *name, struct err *e)
{
    long c = csv_col(r, name);
    if (c >= 0)
        return c;
    err_set(e, r->path, r->header_line, "no column '%s'", name);
    char list[480];
    size_t n = 0;
    list[0] = '\0';
    for (size_t i = 0; i < r->ncols && n < sizeof list; i++)
        n += (size_t)snprintf(list + n, sizeof list - n, "%s'%s'", i ? ", " : "", r->cols[i]);
    err_hint(e, "the columns are: %s", list);
    return -1;
}

int csv_next(csv_reader *r, struct err *e)
{
    /* after an error the stream position means nothing: repeat the error */
    if (r->failed.code != ERR_OK) {
        if (e && e->code == ERR_OK)
            *e = r->failed;
        return -1;
    }
    int k = next_record(r, &r->failed);
    if (k > 0 && r->nf != r->ncols) {
        err_set(&r->failed, r->path, r->rec_line, "row has %zu field%s, header has %zu", r->nf,
                r->nf == 1 ? "" : "s", r->ncols);
        k = -1;
    }
    if (k <= 0) {
        r->nf = 0;
        if (k < 0 && e && e->code == ERR_OK)
            *e = r->failed;
        return k;
    }
    r->row++;
    return 1;
}

const char *csv_field(const csv_reader *r, size_t i) { return r->fields[i]; }
size_t csv_field_len(const csv_reader *r, size_t i) { return r->len[i]; }
long csv_line(const csv_reader *r) { return r->rec_line; }
long csv_row(const csv_reader *r) { return r->row; }
const char *csv_path(const csv_reader *r) { return r->path; }
size_t csv_replaced(const csv_reader *r) { return r->replaced; }

/* ---- writing ---- */

/* A plain number: [+-]digits[.digits][e[+-]digits] (or .digits). */
static int is_number(const char *s, size_t n)
{
    size_t i = 0, d = 0;
    if (i < n && (s[i] == '+' || s[i] == '-'))
        i++;
    for (; i < n && s[i] >= '0' && s[i] <= '9'; i++)
        d++;
    if (i < n && s[i] == '.')
        for (i++; i < n && s[i] >= '0' && s[i] <= '9'; i++)
            d++;
    if (!d)
        return 0;
    if (i < n && (s[i] == 'e' || s[i] == 'E')) {
        i++;
        if (i < n && (s[i] == '+' || s[i] == '-'))
            i++;
        size_t x = 0;
        for (; i < n && s[i] >= '0' && s[i] <= '9'; i++)
            x++;
        if (!x)
            return 0;
    }
    return i == n;
}

void csv_put(FILE *fp, const char *s, size_t len, int guard)
{
    int quote = 0;
    for (size_t i = 0; i < len && !quote; i++)
        quote = s[i] == ',' || s[i] == '"' || s[i] == '\r' || s[i] == '\n';
    /* Formula injection: spreadsheets run a cell starting with = + - @ (and
     * some strip a leading TAB or CR first) as a formula.  OWASP, "CSV
     * Injection" (https://owasp.org/www-community/attacks/CSV_Injection),
     * recommends prefixing such cells with a single quote so they show as
     * text.  Plain numbers such as -1.5 are left alone so they stay numbers. */
    int esc = guard && len > 0 && strchr("=+-@\t\r", s[0]) && !is_number(s, len);
    if (quote)
        fputc('"', fp);
    if (esc)
        fputc('\'', fp);
    if (quote) {
        const char *p = s, *end = s + len;
        while (p < end) {
            const char *z = memchr(p, '"', (size_t)(end - p));
            if (!z) {
                fwrite(p, 1, (size_t)(end - p), fp);
                break;
            }
            fwrite(p, 1, (size_t)(z - p) + 1, fp);
            fputc('"', fp);
            p = z + 1;
        }
        fputc('"', fp);
    } else
        fwrite(s, 1, len, fp);
}

void csv_put_row(FILE *fp, const char *const *cells, size_t n, int guard)
{
    /* a row of one empty cell would be an empty line, which readers skip */
    if (n == 1 && cells[0][0] == '\0')
        fputs("\"\"", fp);
    else
        for (size_t i = 0; i < n; i++) {
            if (i)
                fputc(',', fp);
            csv_put(fp, cells[i], strlen(cells[i]), guard);
        }
    fputs("\r\n", fp);
}
