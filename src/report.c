/* report.c -- terminal tables, number formatting, text escaping and the
 * frame of self-contained HTML pages.  Charts are in chart.c.
 *
 * One decoder (next_char) serves every text path, so escaping, display
 * widths and shortening agree on what a character is and on which ones are
 * dropped.  It does not open files: callers pass a stream from ofile.h.
 */
#include "vecsift/report.h"

#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <utf8proc.h>

#include "vecsift/xalloc.h"

/* ---- characters ---- */

#define REPLACEMENT 0xFFFD

/* Whether code point 'c' may appear in a page.  Sources:
 *   XML 1.0 (Fifth Edition) section 2.2, production [2] Char:
 *     #x9 | #xA | #xD | [#x20-#xD7FF] | [#xE000-#xFFFD] | [#x10000-#x10FFFF];
 *   HTML Living Standard, 13.2.3.5 "Preprocessing the input stream": control
 *     characters other than ASCII whitespace (so also U+007F..U+009F) and
 *     noncharacters (U+FDD0..U+FDEF, and U+xxFFFE / U+xxFFFF in every plane)
 *     are parse errors.
 * A tab, line feed or carriage return is kept; the page treats it as a space. */
static int allowed(int32_t c)
{
    if (c == 0x9 || c == 0xA || c == 0xD)
        return 1;
    if (c < 0x20 || (c >= 0x7F && c <= 0x9F))
        return 0;
    if (c >= 0xD800 && c <= 0xDFFF)
        return 0;
    if (c >= 0xFDD0 && c <= 0xFDEF)
        return 0;
    if ((c & 0xFFFE) == 0xFFFE)
        return 0;
    return c <= 0x10FFFF;
}

/* Decode the character at s[*i] (s NUL-terminated), advance *i past it and
 * return it; an invalid byte is consumed alone and returned as U+FFFD.
 * Returns -1 for a character to drop (see allowed()). */
static int32_t next_char(const char *s, size_t *i)
{
    utf8proc_int32_t c;
    size_t rest = strnlen(s + *i, 4);
    utf8proc_ssize_t k = utf8proc_iterate((const utf8proc_uint8_t *)s + *i,
                                          (utf8proc_ssize_t)rest, &c);
    if (k <= 0) {
        *i += 1;
        return REPLACEMENT;
    }
    *i += (size_t)k;
    return allowed(c) ? c : -1;
}

/* Columns 'c' takes; tab/LF/CR print as one space. */
static size_t char_cols(int32_t c)
{
    if (c == 0x9 || c == 0xA || c == 0xD)
        return 1;
    int w = utf8proc_charwidth(c);
    return w > 0 ? (size_t)w : 0;
}

size_t report_text_width(const char *s)
{
    size_t w = 0, i = 0;
    if (!s)
        return 0;
    while (s[i]) {
        int32_t c = next_char(s, &i);
        if (c >= 0)
            w += char_cols(c);
    }
    return w;
}

static void put_char(FILE *fp, int32_t c)
{
    utf8proc_uint8_t b[4];
    utf8proc_ssize_t k = utf8proc_encode_char(c, b);
    fwrite(b, 1, (size_t)k, fp);
}

/* Write s: escaped for markup when 'html', else as plain text; tab/LF/CR
 * become a space for the terminal; at most max_cols columns (0 = all). */
static void put_text(FILE *fp, const char *s, size_t max_cols, int html)
{
    size_t i = 0, cols = 0;
    if (!s)
        return;
    size_t total = max_cols ? report_text_width(s) : 0;
    /* When shortening, keep room for the one-column ellipsis. */
    size_t limit = (max_cols && total > max_cols) ? max_cols - 1 : (size_t)-1;
    while (s[i]) {
        int32_t c = next_char(s, &i);
        if (c < 0)
            continue;
        size_t w = char_cols(c);
        if (cols + w > limit) {
            put_char(fp, 0x2026);
            return;
        }
        cols += w;
        if (html) {
            switch (c) {
            case '&': fputs("&amp;", fp); continue;
            case '<': fputs("&lt;", fp); continue;
            case '>': fputs("&gt;", fp); continue;
            case '"': fputs("&quot;", fp); continue;
            case '\'': fputs("&#39;", fp); continue;
            default: break;
            }
        } else if (c == 0x9 || c == 0xA || c == 0xD) {
            c = ' ';
        }
        put_char(fp, c);
    }
}

void report_escape(FILE *fp, const char *s, size_t max_cols)
{
    put_text(fp, s, max_cols, 1);
}

/* ---- numbers ---- */

static int clamp_digits(int d)
{
    return d < 0 ? 0 : d > 9 ? 9 : d;
}

/* A value that would print as zero prints without a minus sign ("-0.000"
 * reads like a real negative). */
static double tidy(double v, int digits)
{
    return fabs(v) < 0.5 * pow(10.0, -digits) ? 0.0 : v;
}

int report_fmt_mean_sd(char *buf, size_t size, double mean, double sd, int digits)
{
    int d = clamp_digits(digits);
    if (isnan(mean))
        return snprintf(buf, size, "n/a");
    if (isnan(sd))
        return snprintf(buf, size, "%.*f", d, tidy(mean, d));
    return snprintf(buf, size, "%.*f \xC2\xB1 %.*f", d, tidy(mean, d), d, tidy(fabs(sd), d));
}

int report_fmt_interval(char *buf, size_t size, double mean, double lo, double hi,
                        int digits)
{
    int d = clamp_digits(digits);
    if (isnan(mean))
        return snprintf(buf, size, "n/a");
    if (isnan(lo) || isnan(hi))
        return snprintf(buf, size, "%.*f", d, tidy(mean, d));
    return snprintf(buf, size, "%.*f [%.*f, %.*f]", d, tidy(mean, d), d, tidy(lo, d),
                    d, tidy(hi, d));
}

/* ---- terminal tables ---- */

static void pad(FILE *fp, size_t n)
{
    while (n--)
        fputc(' ', fp);
}

static void print_row(FILE *fp, const char *const *row, size_t ncols, const size_t *width,
                      const char *align)
{
    for (size_t j = 0; j < ncols; j++) {
        const char *s = row[j] ? row[j] : "";
        size_t w = report_text_width(s);
        int right = align ? align[j] == 'r' : j > 0;
        if (j > 0)
            pad(fp, 2);
        if (right)
            pad(fp, width[j] - w);
        put_text(fp, s, 0, 0);
        if (!right && j + 1 < ncols)
            pad(fp, width[j] - w);
    }
    fputc('\n', fp);
}

void report_table_print(FILE *fp, const char *const *header, size_t ncols,
                        const char *const *cells, size_t nrows, const char *align)
{
    size_t *width = xcalloc(ncols ? ncols : 1, sizeof *width), total = 0;
    for (size_t j = 0; j < ncols; j++) {
        width[j] = report_text_width(header[j]);
        for (size_t i = 0; i < nrows; i++) {
            size_t w = report_text_width(cells[i * ncols + j]);
            if (w > width[j])
                width[j] = w;
        }
        total += width[j] + (j ? 2 : 0);
    }
    print_row(fp, header, ncols, width, align);
    for (size_t k = 0; k < total; k++)
        fputc('-', fp);
    fputc('\n', fp);
    for (size_t i = 0; i < nrows; i++)
        print_row(fp, cells + i * ncols, ncols, width, align);
    free(width);
}

/* ---- HTML page ---- */

/* The page allows nothing to load and nothing to run: default-src 'none'
 * (W3C Content Security Policy Level 3) with inline styles only. */
static const char page_head[] =
    "<!DOCTYPE html>\n"
    "<html lang=\"en\">\n"
    "<head>\n"
    "<meta charset=\"utf-8\">\n"
    "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
    "<meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; "
    "style-src 'unsafe-inline'\">\n";

static const char page_style[] =
    "<style>\n"
    "body{font-family:system-ui,sans-serif;color:#1b1b1b;background:#fff;margin:0}\n"
    "main{max-width:1000px;margin:0 auto;padding:24px 28px 48px}\n"
    "h1{font-size:1.6em;margin:0 0 4px}\n"
    "h2{font-size:1.25em;margin:32px 0 8px;padding-bottom:4px;border-bottom:1px solid #d0d7de}\n"
    "p{line-height:1.45;margin:6px 0 10px;max-width:80ch}\n"
    ".sub{color:#555;margin:0 0 16px}\n"
    "table{border-collapse:collapse;margin:8px 0 16px;font-size:.92em}\n"
    "th,td{padding:4px 10px;border-bottom:1px solid #e3e6ea;text-align:left;vertical-align:top}\n"
    "th{background:#f3f5f7;font-weight:600}\n"
    "td.n,th.n{text-align:right;font-variant-numeric:tabular-nums;white-space:nowrap}\n"
    ".note{border-left:5px solid #d55e00;background:#fff4ec;padding:8px 14px;margin:12px 0;"
    "max-width:80ch}\n"
    ".note b{color:#a04000}\n"
    "svg{display:block;max-width:100%;height:auto;margin:8px 0 16px}\n"
    "</style>\n";

void report_html_begin(FILE *fp, const char *title, const char *subtitle)
{
    fputs(page_head, fp);
    fputs("<title>", fp);
    report_escape(fp, title, 0);
    fputs("</title>\n", fp);
    fputs(page_style, fp);
    fputs("</head>\n<body>\n<main>\n<h1>", fp);
    report_escape(fp, title, 0);
    fputs("</h1>\n", fp);
    if (subtitle) {
        fputs("<p class=\"sub\">", fp);
        report_escape(fp, subtitle, 0);
        fputs("</p>\n", fp);
    }
}

void report_html_paragraph(FILE *fp, const char *text)
{
    fputs("<p>", fp);
    report_escape(fp, text, 0);
    fputs("</p>\n", fp);
}

void report_html_section(FILE *fp, const char *heading, const char *paragraph)
{
    fputs("<h2>", fp);
    report_escape(fp, heading, 0);
    fputs("</h2>\n", fp);
    if (paragraph)
        report_html_paragraph(fp, paragraph);
}

static void cell(FILE *fp, const char *tag, const char *s, int numeric)
{
    fprintf(fp, "<%s%s>", tag, numeric ? " class=\"n\"" : "");
    report_escape(fp, s, 0);
    fprintf(fp, "</%s>", tag);
}

void report_html_table(FILE *fp, const char *const *header, size_t ncols,
                       const char *const *cells, size_t nrows, const int *numeric)
{
    fputs("<table>\n<thead><tr>", fp);
    for (size_t j = 0; j < ncols; j++)
        cell(fp, "th", header[j], numeric && numeric[j]);
    fputs("</tr></thead>\n<tbody>\n", fp);
    for (size_t i = 0; i < nrows; i++) {
        fputs("<tr>", fp);
        for (size_t j = 0; j < ncols; j++)
            cell(fp, "td", cells[i * ncols + j], numeric && numeric[j]);
        fputs("</tr>\n", fp);
    }
    fputs("</tbody>\n</table>\n", fp);
}

void report_html_note(FILE *fp, const char *text)
{
    fputs("<div class=\"note\" role=\"note\"><b>Caution:</b> ", fp);
    report_escape(fp, text, 0);
    fputs("</div>\n", fp);
}

void report_html_end(FILE *fp)
{
    fputs("</main>\n</body>\n</html>\n", fp);
}
