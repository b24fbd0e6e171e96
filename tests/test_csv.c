/* test_csv.c -- the CSV reader and writer against RFC 4180 and our own rules.
 * Python's csv module is compared separately (tests/ext/csv_vs_python.py). */
#include <criterion/criterion.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "vecsift/csv.h"
#include "vecsift/err.h"

static char path[64];

/* Write 'n' bytes of 'content' to a fresh temporary file named in 'path'. */
static void put_file(const char *content, size_t n)
{
    strcpy(path, "/tmp/vecsift-csv-XXXXXX");
    int fd = mkstemp(path);
    cr_assert_geq(fd, 0);
    cr_assert_eq(write(fd, content, n), (ssize_t)n);
    close(fd);
}

static csv_reader *open_bytes(const char *content, size_t n, const struct csv_options *o, struct err *e)
{
    put_file(content, n);
    return csv_open(path, o, e);
}

static csv_reader *open_str(const char *content, struct err *e)
{
    return open_bytes(content, strlen(content), NULL, e);
}

/* Open 'content' as a CSV file; the test fails if the reader refuses it. */
static csv_reader *open_ok(const char *content)
{
    struct err e = ERR_INIT;
    csv_reader *r = open_str(content, &e);
    cr_assert_not_null(r, "%s", e.msg);
    return r;
}

/* The next row must be an error whose message contains 'want'. */
static void expect_error(csv_reader *r, const char *want)
{
    struct err e = ERR_INIT;
    cr_assert_eq(csv_next(r, &e), -1);
    cr_assert_eq(e.code, ERR_INPUT);
    cr_assert_eq(strncmp(e.msg, path, strlen(path)), 0, "message starts with the file name: %s", e.msg);
    cr_assert_str_eq(e.msg + strlen(path), want);
}

static void cleanup(void)
{
    if (path[0])
        unlink(path);
}

TestSuite(csv, .fini = cleanup);

static void expect_row(csv_reader *r, const char *a, const char *b, const char *c)
{
    struct err e = ERR_INIT;
    cr_assert_eq(csv_next(r, &e), 1, "%s", e.msg);
    cr_assert_str_eq(csv_field(r, 0), a);
    cr_assert_str_eq(csv_field(r, 1), b);
    cr_assert_str_eq(csv_field(r, 2), c);
}

static void expect_row2(csv_reader *r, const char *a, const char *b)
{
    struct err e = ERR_INIT;
    cr_assert_eq(csv_next(r, &e), 1, "%s", e.msg);
    cr_assert_str_eq(csv_field(r, 0), a);
    cr_assert_str_eq(csv_field(r, 1), b);
}

static void expect_header(csv_reader *r, const char *a, const char *b, const char *c)
{
    cr_assert_eq(csv_ncols(r), 3);
    cr_assert_str_eq(csv_colname(r, 0), a);
    cr_assert_str_eq(csv_colname(r, 1), b);
    cr_assert_str_eq(csv_colname(r, 2), c);
}

static void expect_end(csv_reader *r)
{
    struct err e = ERR_INIT;
    cr_assert_eq(csv_next(r, &e), 0, "%s", e.msg);
}

/* ---- RFC 4180, section 2: the examples of rules 1-7, field for field.
 * Our reader always takes the first record as the header, so where the RFC's
 * example has no header its first record is checked as the header. ---- */

struct rfc_case {
    const char *rule, *input;
    const char *rec[3][3];      /* header, then up to two data records */
    size_t nrec;
};

static const struct rfc_case rfc4180[] = {
    { "rule 1: records end with CRLF", "aaa,bbb,ccc\r\nzzz,yyy,xxx\r\n",
      { { "aaa", "bbb", "ccc" }, { "zzz", "yyy", "xxx" } }, 2 },
    { "rule 2: last record without a line break", "aaa,bbb,ccc\r\nzzz,yyy,xxx",
      { { "aaa", "bbb", "ccc" }, { "zzz", "yyy", "xxx" } }, 2 },
    /* the RFC's example repeats "field_name"; ours refuses duplicate names
     * (tested below), so the names are numbered here */
    { "rule 3: header line", "field_name,field_name2,field_name3\r\naaa,bbb,ccc\r\nzzz,yyy,xxx\r\n",
      { { "field_name", "field_name2", "field_name3" }, { "aaa", "bbb", "ccc" }, { "zzz", "yyy", "xxx" } }, 3 },
    /* rule 4's example is one record "aaa,bbb,ccc"; spaces added to show that
     * "spaces are considered part of a field and should not be ignored" */
    { "rule 4: spaces are part of a field", "a,b,c\r\naaa, bbb ,ccc\r\n",
      { { "a", "b", "c" }, { "aaa", " bbb ", "ccc" } }, 2 },
    { "rule 5: fields in double quotes", "\"aaa\",\"bbb\",\"ccc\"\r\nzzz,yyy,xxx",
      { { "aaa", "bbb", "ccc" }, { "zzz", "yyy", "xxx" } }, 2 },
    { "rule 6: line break and comma in quotes", "\"aaa\",\"b\r\nbb\",\"ccc\"\r\nzzz,yyy,xxx",
      { { "aaa", "b\r\nbb", "ccc" }, { "zzz", "yyy", "xxx" } }, 2 },
    { "rule 7: doubled quote", "h1,h2,h3\r\n\"aaa\",\"b\"\"bb\",\"ccc\"",
      { { "h1", "h2", "h3" }, { "aaa", "b\"bb", "ccc" } }, 2 },
};

Test(csv, rfc4180_section2_examples)
{
    for (size_t k = 0; k < sizeof rfc4180 / sizeof *rfc4180; k++) {
        const struct rfc_case *c = &rfc4180[k];
        csv_reader *r = open_ok(c->input);
        expect_header(r, c->rec[0][0], c->rec[0][1], c->rec[0][2]);
        for (size_t i = 1; i < c->nrec; i++)
            expect_row(r, c->rec[i][0], c->rec[i][1], c->rec[i][2]);
        expect_end(r);
        csv_close(r);
        unlink(path);
    }
}

Test(csv, line_numbers_count_embedded_line_breaks)
{
    csv_reader *r = open_ok("h1,h2,h3\r\n\"aaa\",\"b\r\nbb\",\"ccc\"\r\nzzz,\"y,y\",xxx");
    expect_row(r, "aaa", "b\r\nbb", "ccc");
    cr_assert_eq(csv_line(r), 2);
    expect_row(r, "zzz", "y,y", "xxx");
    cr_assert_eq(csv_line(r), 4, "the embedded line break counts as a line");
    cr_assert_eq(csv_row(r), 2);
    csv_close(r);
}

Test(csv, error_is_repeated_after_failure)
{
    csv_reader *r = open_ok("a,b\n1\n2,3\n");
    expect_error(r, ":2: row has 1 field, header has 2");
    expect_error(r, ":2: row has 1 field, header has 2");
    csv_close(r);
}

/* ---- our rules ---- */

Test(csv, lf_cr_and_bom)
{
    csv_reader *r = open_ok("\xEF\xBB\xBFid,text,q\n1,a,b\r2,c,d\r\n3,e,f");
    expect_header(r, "id", "text", "q");
    expect_row(r, "1", "a", "b");
    expect_row(r, "2", "c", "d");
    cr_assert_eq(csv_line(r), 3);
    expect_row(r, "3", "e", "f");
    cr_assert_eq(csv_line(r), 4);
    expect_end(r);
    csv_close(r);
}

Test(csv, embedded_newlines_keep_line_numbers_right)
{
    csv_reader *r = open_ok("a,b,c\n1,\"x\ny\nz\",2\n3,\"p\r\nq\",4\n5,6\n");
    expect_row(r, "1", "x\ny\nz", "2");
    expect_row(r, "3", "p\r\nq", "4");
    cr_assert_eq(csv_line(r), 5);
    expect_error(r, ":7: row has 2 fields, header has 3");
    csv_close(r);
}

Test(csv, quote_in_unquoted_field_is_literal)
{
    csv_reader *r = open_ok("a,b,c\nsay \"hi\",x\"y, \"z\"\n");
    expect_row(r, "say \"hi\"", "x\"y", " \"z\"");
    csv_close(r);
}

Test(csv, blank_lines_are_not_rows)
{
    csv_reader *r = open_ok("\na,b,c\n\n1,2,3\n\r\n\n");
    expect_row(r, "1", "2", "3");
    cr_assert_eq(csv_line(r), 4);
    expect_end(r);
    csv_close(r);
}

Test(csv, empty_and_trailing_empty_fields)
{
    csv_reader *r = open_ok("a,b,c\n,,\n\"\",x,\n");
    expect_row(r, "", "", "");
    expect_row(r, "", "x", "");
    csv_close(r);
}

Test(csv, unterminated_quote_names_line_where_it_started)
{
    csv_reader *r = open_ok("a,b\n1,2\n3,\"open\nmore\nstill\n");
    expect_row2(r, "1", "2");
    expect_error(r, ":3: unterminated quoted field (end of file reached)");
    csv_close(r);
}

Test(csv, unterminated_quote_after_multiline_field)
{
    /* the record starts on line 2, the open quote on line 3 */
    csv_reader *r = open_ok("a,b\n\"x\ny\",\"open\n");
    expect_error(r, ":3: unterminated quoted field (end of file reached)");
    csv_close(r);
}

Test(csv, text_after_closing_quote_is_an_error)
{
    csv_reader *r = open_ok("a,b\n1,\"ab\"c\n");
    expect_error(r, ":2: text after the closing quote of field 2 (byte 7 of the line)");
    csv_close(r);
}

Test(csv, nul_byte_is_an_error)
{
    struct err e = ERR_INIT;
    csv_reader *r = open_bytes("a,b\n1,x\0y\n", 10, NULL, &e);
    cr_assert_not_null(r, "%s", e.msg);
    cr_assert_eq(csv_next(r, &e), -1);
    cr_assert(strstr(e.msg, ":2: NUL byte in field (byte 4 of the line)"), "%s", e.msg);
    csv_close(r);
}

Test(csv, empty_file)
{
    struct err e = ERR_INIT;
    cr_assert_null(open_str("", &e));
    cr_assert_str_eq(e.msg + strlen(path), ": empty file, expected a header row");
    cr_assert_eq(e.code, ERR_INPUT);
}

Test(csv, header_only_has_no_rows)
{
    csv_reader *r = open_ok("a,b\r\n");
    expect_end(r);
    cr_assert_eq(csv_row(r), 0);
    csv_close(r);
}

Test(csv, duplicate_and_empty_column_names)
{
    struct err e = ERR_INIT;
    cr_assert_null(open_str("text,label,text\n", &e));
    cr_assert(strstr(e.msg, ":1: column name 'text' appears twice"), "%s", e.msg);
    err_clear(&e);
    cr_assert_null(open_str("text,,label\n", &e));
    cr_assert(strstr(e.msg, ":1: column 2 of the header has no name"), "%s", e.msg);
}

Test(csv, missing_file_is_io_error)
{
    struct err e = ERR_INIT;
    cr_assert_null(csv_open("/nonexistent/vecsift.csv", NULL, &e));
    cr_assert_eq(e.code, ERR_IO);
    cr_assert(strstr(e.msg, "/nonexistent/vecsift.csv: cannot open"), "%s", e.msg);
}

Test(csv, require_col_lists_columns)
{
    struct err e = ERR_INIT;
    csv_reader *r = open_ok("text,queue\n");
    cr_assert_eq(csv_col(r, "queue"), 1);
    cr_assert_eq(csv_require_col(r, "label", &e), -1);
    cr_assert(strstr(e.msg, ":1: no column 'label'"), "%s", e.msg);
    cr_assert_str_eq(e.hint, "the columns are: 'text', 'queue'");
    csv_close(r);
}

Test(csv, missing_column_names_header_line)
{
    struct err e = ERR_INIT;
    csv_reader *r = open_ok("\r\ntext,queue\n");   /* header on line 2 after an empty line */
    cr_assert_eq(csv_require_col(r, "label", &e), -1);
    cr_assert_str_eq(e.msg + strlen(path), ":2: no column 'label'");
    csv_close(r);
}

Test(csv, very_long_field)
{
    /* 5 MB in one quoted field, spanning many 64 KiB blocks */
    size_t big = 5u << 20;
    char *s = malloc(big + 64);
    size_t n = (size_t)sprintf(s, "a,b\nx,\"");
    for (size_t i = 0; i < big; i++)
        s[n++] = (char)('a' + i % 26);
    n += (size_t)sprintf(s + n, "\"\ny,z\n");
    struct err e = ERR_INIT;
    csv_reader *r = open_bytes(s, n, NULL, &e);
    cr_assert_eq(csv_next(r, &e), 1, "%s", e.msg);
    cr_assert_eq(csv_field_len(r, 1), big);
    cr_assert_eq(csv_field(r, 1)[big - 1], (char)('a' + (big - 1) % 26));
    cr_assert_eq(csv_next(r, &e), 1, "%s", e.msg);
    cr_assert_str_eq(csv_field(r, 1), "z");
    cr_assert_eq(csv_line(r), 3);
    csv_close(r);
    free(s);
}

Test(csv, crlf_split_across_blocks)
{
    /* a CR as the last byte of the first 64 KiB block, its LF in the next */
    size_t n = 65536 + 16;
    char *s = malloc(n);
    memset(s, 'x', n);
    memcpy(s, "a\n", 2);
    s[65535] = '\r';
    s[65536] = '\n';
    memcpy(s + 65537, "b\r\n", 3);
    n = 65540;
    struct err e = ERR_INIT;
    csv_reader *r = open_bytes(s, n, NULL, &e);
    cr_assert_not_null(r, "%s", e.msg);
    cr_assert_eq(csv_next(r, &e), 1);
    cr_assert_eq(csv_field_len(r, 0), 65533);
    cr_assert_eq(csv_next(r, &e), 1);
    cr_assert_str_eq(csv_field(r, 0), "b");
    cr_assert_eq(csv_line(r), 3, "CR LF across blocks is one line end");
    expect_end(r);
    csv_close(r);
    free(s);
}

/* ---- encodings ---- */

Test(csv, invalid_utf8_names_line_and_byte_and_hints)
{
    struct err e = ERR_INIT;
    csv_reader *r = open_ok("a,b\n1,ok\n2,caf\xE9\n");
    cr_assert_eq(csv_next(r, &e), 1);
    cr_assert_eq(csv_next(r, &e), -1);
    cr_assert_str_eq(e.msg + strlen(path), ":3: invalid UTF-8 at byte 6 of the line (0xE9)");
    cr_assert(strstr(e.hint, "--encoding windows-1252"), "%s", e.hint);
    csv_close(r);
}

Test(csv, strict_utf8_rejects_overlong_surrogate_and_too_large)
{
    /* RFC 3629, section 3 and table 4: C0 AF is an overlong '/', ED A0 80 a
     * surrogate (U+D800), F4 90 80 80 is above U+10FFFF */
    const char *bad[] = { "a\n\xC0\xAF\n", "a\n\xED\xA0\x80\n", "a\n\xF4\x90\x80\x80\n", "a\n\xE2\x82\n" };
    for (size_t i = 0; i < sizeof bad / sizeof *bad; i++) {
        csv_reader *r = open_ok(bad[i]);
        char want[64];
        snprintf(want, sizeof want, ":2: invalid UTF-8 at byte 1 of the line (0x%02X)", (unsigned char)bad[i][2]);
        expect_error(r, want);
        csv_close(r);
    }
    /* the largest code point and U+E000 right after the surrogates are fine */
    struct err e = ERR_INIT;
    csv_reader *r = open_ok("a\n\xF4\x8F\xBF\xBF\xEE\x80\x80\n");
    cr_assert_eq(csv_next(r, &e), 1, "%s", e.msg);
    csv_close(r);
}

Test(csv, replacement_counts_maximal_subparts)
{
    struct err e = ERR_INIT;
    struct csv_options o = { CSV_UTF8, 1 };
    /* Unicode Standard ch. 3 "U+FFFD Substitution of Maximal Subparts": the
     * truncated E2 82 is one subpart, C0 and AF are one each; Python's
     * b"x\xe2\x82y\xc0\xafz".decode("utf-8", "replace") gives 3 U+FFFD too */
    const char *s = "t\nx\xE2\x82y\xC0\xAFz\n";
    csv_reader *r = open_bytes(s, strlen(s), &o, &e);
    cr_assert_eq(csv_next(r, &e), 1, "%s", e.msg);
    cr_assert_str_eq(csv_field(r, 0), "x\xEF\xBF\xBDy\xEF\xBF\xBD\xEF\xBF\xBDz");
    cr_assert_eq(csv_replaced(r), 3);
    csv_close(r);
}

Test(csv, windows_1252_converts)
{
    struct err e = ERR_INIT;
    struct csv_options o = { CSV_WINDOWS_1252, 0 };
    /* Unicode Consortium CP1252.TXT: 0x80 -> U+20AC, 0xE9 -> U+00E9, 0x93 -> U+201C */
    const char *s = "t\n\x80 caf\xE9 \x93q\n";
    csv_reader *r = open_bytes(s, strlen(s), &o, &e);
    cr_assert_not_null(r, "%s", e.msg);
    cr_assert_eq(csv_next(r, &e), 1, "%s", e.msg);
    cr_assert_str_eq(csv_field(r, 0), "\xE2\x82\xAC caf\xC3\xA9 \xE2\x80\x9Cq");
    csv_close(r);
}

Test(csv, windows_1252_undefined_byte)
{
    struct err e = ERR_INIT;
    struct csv_options o = { CSV_WINDOWS_1252, 0 };
    csv_reader *r = open_bytes("t\nab\x81\n", 6, &o, &e);  /* 0x81 is UNDEFINED in CP1252.TXT */
    cr_assert_eq(csv_next(r, &e), -1);
    cr_assert(strstr(e.msg, ":2: byte 0x81 at byte 3 of the line is not defined in windows-1252"), "%s", e.msg);
    csv_close(r);
    err_clear(&e);
    o.replace_invalid = 1;
    r = open_bytes("t\nab\x81\n", 6, &o, &e);
    cr_assert_eq(csv_next(r, &e), 1);
    cr_assert_str_eq(csv_field(r, 0), "ab\xEF\xBF\xBD");
    cr_assert_eq(csv_replaced(r), 1);
    csv_close(r);
}

Test(csv, latin1_converts)
{
    struct err e = ERR_INIT;
    struct csv_options o = { CSV_LATIN1, 0 };
    /* ISO-8859-1 maps byte b to U+00b: 0x80 -> U+0080, 0xE9 -> U+00E9 */
    csv_reader *r = open_bytes("t\n\x80\xE9\n", 5, &o, &e);
    cr_assert_eq(csv_next(r, &e), 1, "%s", e.msg);
    cr_assert_str_eq(csv_field(r, 0), "\xC2\x80\xC3\xA9");
    csv_close(r);
}

Test(csv, encoding_names)
{
    enum csv_encoding k;
    cr_assert_eq(csv_encoding_parse("UTF-8", &k), 0);
    cr_assert_eq(k, CSV_UTF8);
    cr_assert_eq(csv_encoding_parse("Windows-1252", &k), 0);
    cr_assert_eq(k, CSV_WINDOWS_1252);
    cr_assert_eq(csv_encoding_parse("latin1", &k), 0);
    cr_assert_eq(k, CSV_LATIN1);
    cr_assert_eq(csv_encoding_parse("utf-16", &k), -1);
}

/* ---- writer ---- */

static char *written(const char *const *cells, size_t n, int guard)
{
    char *buf = NULL;
    size_t len = 0;
    FILE *fp = open_memstream(&buf, &len);
    csv_put_row(fp, cells, n, guard);
    fclose(fp);
    return buf;
}

Test(csv, writer_quotes_only_where_needed)
{
    /* RFC 4180, section 2, rules 6 and 7: quote fields with a comma, quote or
     * line break, and double the quotes inside; rows end with CRLF (rule 1) */
    const char *cells[] = { "plain", "a,b", "say \"hi\"", "two\nlines", "", " sp " };
    char *s = written(cells, 6, 0);
    cr_assert_str_eq(s, "plain,\"a,b\",\"say \"\"hi\"\"\",\"two\nlines\",, sp \r\n");
    free(s);
    const char *one[] = { "" };
    s = written(one, 1, 0);
    cr_assert_str_eq(s, "\"\"\r\n");
    free(s);
}

Test(csv, writer_guard)
{
    /* OWASP "CSV Injection": cells starting = + - @ TAB CR get a leading
     * apostrophe; plain numbers stay numbers */
    const char *cells[] = { "=SUM(A1:A2)", "+1+2", "-1.5", "@cmd", "\tx", "-", "+3e-4", "ok", "-2,3" };
    char *s = written(cells, 9, 1);
    cr_assert_str_eq(s, "'=SUM(A1:A2),'+1+2,-1.5,'@cmd,'\tx,'-,+3e-4,ok,\"'-2,3\"\r\n");
    free(s);
    s = written(cells, 1, 0);
    cr_assert_str_eq(s, "=SUM(A1:A2)\r\n", "no guard, no change");
    free(s);
}

Test(csv, writer_output_reads_back)
{
    const char *cells[] = { "a,\"b\"", "line\r\nbreak", "" };
    char *s = written(cells, 3, 0);
    struct err e = ERR_INIT;
    char doc[256];
    snprintf(doc, sizeof doc, "x,y,z\r\n%s", s);
    csv_reader *r = open_str(doc, &e);
    expect_row(r, "a,\"b\"", "line\r\nbreak", "");
    csv_close(r);
    free(s);
}
