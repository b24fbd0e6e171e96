/* test_report.c -- number formatting, escaping of hostile text, display
 * widths and terminal table alignment, and the markup the charts write. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/chart.h"
#include "vecsift/report.h"

/* A memory stream; call done() to get the NUL-terminated text (caller frees). */
struct mem {
    char *buf;
    size_t len;
    FILE *fp;
};

static void mem_open(struct mem *m)
{
    m->buf = NULL;
    m->len = 0;
    m->fp = open_memstream(&m->buf, &m->len);
    cr_assert_not_null(m->fp);
}

static char *mem_done(struct mem *m)
{
    fclose(m->fp);
    return m->buf;
}

static char *escaped(const char *s, size_t max_cols)
{
    struct mem m;
    mem_open(&m);
    report_escape(m.fp, s, max_cols);
    return mem_done(&m);
}

static size_t count(const char *hay, const char *needle)
{
    size_t n = 0;
    for (const char *p = strstr(hay, needle); p; p = strstr(p + 1, needle))
        n++;
    return n;
}

/* ---- numbers ---- */

Test(report, fmt_mean_sd_uses_plus_minus_sign)
{
    char b[64];
    report_fmt_mean_sd(b, sizeof b, 0.87349, 0.0212, 3);
    cr_assert_str_eq(b, "0.873 \xC2\xB1 0.021");   /* U+00B1 PLUS-MINUS SIGN */
    report_fmt_mean_sd(b, sizeof b, 12.5, 3.25, 1);
    cr_assert_str_eq(b, "12.5 \xC2\xB1 3.2");       /* printf rounds half to even on 3.25 */
}

Test(report, fmt_never_prints_negative_zero)
{
    char b[64];
    report_fmt_mean_sd(b, sizeof b, -0.0004, -0.0001, 3);
    cr_assert_str_eq(b, "0.000 \xC2\xB1 0.000");
    report_fmt_interval(b, sizeof b, -0.0001, -0.0004, 0.0002, 3);
    cr_assert_str_eq(b, "0.000 [0.000, 0.000]");
}

Test(report, fmt_missing_values)
{
    char b[64];
    report_fmt_mean_sd(b, sizeof b, NAN, 0.1, 3);
    cr_assert_str_eq(b, "n/a");
    report_fmt_mean_sd(b, sizeof b, 0.5, NAN, 2);
    cr_assert_str_eq(b, "0.50");
    report_fmt_interval(b, sizeof b, 0.8, NAN, 0.9, 2);
    cr_assert_str_eq(b, "0.80");
}

Test(report, fmt_interval_and_truncation)
{
    char b[64], small[6];
    report_fmt_interval(b, sizeof b, 0.8731, 0.8502, 0.8914, 3);
    cr_assert_str_eq(b, "0.873 [0.850, 0.891]");
    int n = report_fmt_mean_sd(small, sizeof small, 0.873, 0.021, 3);
    cr_assert_eq(n, 14, "returns the length wanted, as snprintf");
    cr_assert_str_eq(small, "0.873");
    report_fmt_mean_sd(b, sizeof b, 0.5, 0.25, 42);   /* digits clamped to 9 */
    cr_assert_str_eq(b, "0.500000000 \xC2\xB1 0.250000000");
}

/* ---- escaping ---- */

Test(report, escape_hostile_markup)
{
    char *s = escaped("<script>alert(\"x\")</script> & 'y'", 0);
    cr_assert_str_eq(s, "&lt;script&gt;alert(&quot;x&quot;)&lt;/script&gt; &amp; &#39;y&#39;");
    free(s);
}

/* XML 1.0 (Fifth Edition) 2.2 Char production; HTML Living Standard 13.2.3.5
 * (control characters and noncharacters are parse errors). */
Test(report, escape_drops_invalid_characters)
{
    /* U+0001, U+001B (ESC), U+007F, U+0085 (C1), U+FFFE, U+FDD0, U+10FFFF */
    char *s = escaped("a\x01" "b\x1b[31m" "c\x7f" "d\xC2\x85" "e\xEF\xBF\xBE" "f\xEF\xB7\x90"
                      "g\xF4\x8F\xBF\xBF" "h\tI\nJ", 0);
    cr_assert_str_eq(s, "ab[31mcdefgh\tI\nJ");
    free(s);
}

Test(report, escape_replaces_invalid_utf8)
{
    /* a lone continuation byte, a truncated sequence and an encoded surrogate */
    char *s = escaped("x\x80y\xC3z\xED\xA0\x80w", 0);
    cr_assert_str_eq(s, "x\xEF\xBF\xBDy\xEF\xBF\xBDz\xEF\xBF\xBD\xEF\xBF\xBD\xEF\xBF\xBDw");
    free(s);
}

Test(report, escape_shortens_by_display_width)
{
    char *s = escaped("Rückfragen", 5);
    cr_assert_str_eq(s, "Rück\xE2\x80\xA6");   /* 4 columns + U+2026 */
    free(s);
    s = escaped("日本語テキスト", 5);   /* wide: 2 columns each */
    cr_assert_str_eq(s, "日本\xE2\x80\xA6");
    free(s);
    s = escaped("a&b", 3);             /* fits: not cut; entity counts as one column */
    cr_assert_str_eq(s, "a&amp;b");
    free(s);
}

/* ---- widths and tables ---- */

/* Widths: Unicode Standard Annex #11 East Asian Width (CJK ideographs are W,
 * 2 columns), combining marks take no column (common practice of wcwidth). */
Test(report, text_width_counts_columns)
{
    cr_assert_eq(report_text_width("caf\xC3\xA9"), 4);        /* é precomposed */
    cr_assert_eq(report_text_width("cafe\xCC\x81"), 4);       /* e + U+0301 */
    cr_assert_eq(report_text_width("日本語"), 6);
    cr_assert_eq(report_text_width("a\x1b" "b"), 2);          /* ESC not printed */
    cr_assert_eq(report_text_width("\xff"), 1);               /* prints as U+FFFD */
    cr_assert_eq(report_text_width(NULL), 0);
}

/* What report_table_print writes (caller frees). */
static char *table_text(const char *const *head, size_t ncols, const char *const *cells,
                        size_t nrows, const char *align)
{
    struct mem m;
    mem_open(&m);
    report_table_print(m.fp, head, ncols, cells, nrows, align);
    return mem_done(&m);
}

Test(report, table_aligns_accented_and_wide_text)
{
    const char *head[2] = { "queue", "count" };
    const char *cells[] = {
        "caf\xC3\xA9", "1",
        "日本語", "22",
        "cafe\xCC\x81", "333",
    };
    char *s = table_text(head, 2, cells, 3, "lr");
    /* Worked by hand: column widths 6 and 5, two spaces apart. */
    cr_assert_str_eq(s,
                     "queue   count\n"
                     "-------------\n"
                     "caf\xC3\xA9" "        1\n"
                     "日本語     22\n"
                     "cafe\xCC\x81" "      333\n");
    free(s);
}

Test(report, table_default_alignment_and_no_escape_codes)
{
    const char *head[3] = { "a", "b", "c" };
    const char *cells[] = { "x\x1b[2J", NULL, "yy" };
    char *s = table_text(head, 3, cells, 1, NULL);
    cr_assert_null(strchr(s, 0x1b), "ESC must never reach the terminal");
    cr_assert_str_eq(s, "a     b   c\n-----------\nx[2J     yy\n");
    free(s);
}

/* A cell with U+00B1 (2 bytes, 1 column): the rule and the padding follow
 * display columns, not bytes.  Expected text worked by hand: column widths
 * 5 ("queue") and 13 ("0.873 \u00b1 0.021"), two spaces apart: 20 columns. */
Test(report, table_rule_counts_columns_of_plus_minus)
{
    const char *head[2] = { "queue", "F1" };
    const char *cells[] = { "fault", "0.873 \xC2\xB1 0.021", "ideas", "0.5" };
    char *s = table_text(head, 2, cells, 2, "lr");
    cr_assert_str_eq(s,
                     "queue             F1\n"
                     "--------------------\n"
                     "fault  0.873 \xC2\xB1 0.021\n"
                     "ideas            0.5\n");
    free(s);
}

/* ---- HTML and SVG ---- */

static const char *const hostile[3] = {
    "<script>alert(1)</script>", "a\"b'c&d\x01", "\xff<img src=x onerror=y>",
};

static void assert_no_raw_hostile(const char *s)
{
    cr_assert_null(strstr(s, "<script"), "raw <script in: %.200s", s);
    cr_assert_null(strstr(s, "<img"), "raw <img");
    cr_assert_null(strchr(s, 0x01), "control character passed through");
    cr_assert_null(strchr(s, (char)0xff), "invalid byte passed through");
    cr_assert_not_null(strstr(s, "&lt;script&gt;alert(1)&lt;/script&gt;"));
    cr_assert_not_null(strstr(s, "a&quot;b&#39;c&amp;d"));
}

Test(report, page_escapes_every_text)
{
    struct mem m;
    mem_open(&m);
    report_html_begin(m.fp, hostile[0], hostile[1]);
    report_html_section(m.fp, hostile[2], hostile[0]);
    report_html_table(m.fp, hostile, 3, hostile, 1, (const int[]){ 0, 1, 0 });
    report_html_note(m.fp, hostile[1]);
    report_html_end(m.fp);
    char *s = mem_done(&m);
    assert_no_raw_hostile(s);
    cr_assert(strncmp(s, "<!DOCTYPE html>\n", 16) == 0);
    cr_assert_eq(count(s, "<tr>"), 2);
    cr_assert_eq(count(s, "class=\"n\""), 2, "one numeric column: th and td");
    cr_assert_eq(count(s, "class=\"note\""), 1);
    cr_assert(strstr(s, "</html>\n") != NULL);
    free(s);
}

Test(report, charts_escape_labels)
{
    double counts[9] = { 5, 1, 0, 2, 7, 1, 0, 0, 0 };   /* last row empty */
    double mean[3] = { 0.5, 0.7, NAN }, sd[3] = { 0.1, 0.05, 0.1 };
    double lo[3] = { 0.4, 0.6, NAN }, hi[3] = { 0.6, 0.8, NAN };
    struct chart_group g = { hostile[1], mean, sd };
    struct chart_mark mk = { 0.5, 0.7, hostile[0] };
    struct mem m;
    mem_open(&m);
    chart_heatmap(m.fp, hostile[0], hostile, hostile, 3, counts, hostile[1], hostile[2]);
    chart_bars(m.fp, hostile[2], hostile, 3, &g, 1, hostile[0]);
    chart_curve(m.fp, hostile[1], mean, mean, 3, hostile[0], hostile[1], lo, hi, &mk);
    chart_intervals(m.fp, hostile[0], hostile, 3, mean, lo, hi, 1, hostile, hostile[1]);
    char *s = mem_done(&m);
    assert_no_raw_hostile(s);
    cr_assert_eq(count(s, "<svg "), 4);
    cr_assert_eq(count(s, "</svg>"), 4);
    cr_assert_null(strstr(s, "nan"), "NaN must be drawn as missing, not printed");
    cr_assert_eq(count(s, ">n/a<"), 2, "one missing bar, one missing interval");
    free(s);
}

/* The SVG of a 2 x 2 heat map of 'counts' (caller frees). */
static char *heat2(const double counts[4])
{
    const char *lab[2] = { "billing", "delivery" };
    struct mem m;
    mem_open(&m);
    chart_heatmap(m.fp, NULL, lab, lab, 2, counts, "true", "predicted");
    return mem_done(&m);
}

Test(report, heatmap_writes_counts_and_shades_by_row)
{
    char *s = heat2((const double[4]){ 30, 10, 0, 8 });
    cr_assert_not_null(strstr(s, ">30</text>"));
    cr_assert_not_null(strstr(s, ">10</text>"));
    cr_assert_not_null(strstr(s, ": 30 (75.0% of row)"));
    cr_assert_not_null(strstr(s, ": 8 (100.0% of row)"));
    cr_assert_not_null(strstr(s, ": 0 (0.0% of row)"));
    /* 4 cells + 11 legend steps */
    cr_assert_eq(count(s, "<rect"), 15);
    free(s);
}

/* Empty and all-missing inputs still give one well-formed chart each. */
Test(report, charts_accept_empty_and_missing_input)
{
    double nan3[3] = { NAN, NAN, NAN };
    const char *lab[3] = { "a", "b", "c" };
    struct chart_group g = { "F1", nan3, NULL };
    struct chart_mark mk = { NAN, NAN, "nowhere" };
    struct mem m;
    mem_open(&m);
    chart_heatmap(m.fp, "empty", NULL, NULL, 0, NULL, NULL, NULL);
    chart_bars(m.fp, NULL, NULL, 0, NULL, 0, NULL);
    chart_curve(m.fp, NULL, nan3, nan3, 3, "x", "y", NULL, NULL, &mk);
    chart_intervals(m.fp, NULL, lab, 3, nan3, nan3, nan3, CHART_NO_BEST, NULL, NULL);
    chart_bars(m.fp, NULL, lab, 3, &g, 1, NULL);
    char *s = mem_done(&m);
    cr_assert_eq(count(s, "<svg "), 5);
    cr_assert_eq(count(s, "</svg>"), 5);
    cr_assert_null(strstr(s, "nan"));
    cr_assert_null(strstr(s, "inf"));
    cr_assert_null(strstr(s, "nowhere"), "a mark without coordinates is not drawn");
    cr_assert_eq(count(s, ">n/a<"), 6, "three missing bars, three missing intervals");
    free(s);
}

/* Counts that are not whole (averages over repeats) all get one decimal, so
 * 1/3 and 79.3 do not come out as "0.333" next to "79.3". */
Test(report, heatmap_uses_one_number_of_decimals)
{
    char *s = heat2((const double[4]){ 79.3, 1.0 / 3, 0, 2 });
    cr_assert_not_null(strstr(s, ">79.3</text>"));
    cr_assert_not_null(strstr(s, ">0.3</text>"));
    cr_assert_not_null(strstr(s, ">0.0</text>"));
    cr_assert_not_null(strstr(s, ">2.0</text>"));
    cr_assert_null(strstr(s, "0.333"));
    free(s);
    /* all below 1: two decimals */
    s = heat2((const double[4]){ 0.5, 0.25, 0, 0.125 });
    cr_assert_not_null(strstr(s, ">0.50</text>"));
    cr_assert_not_null(strstr(s, ">0.00</text>"));
    cr_assert_not_null(strstr(s, ">0.12</text>"));   /* printf rounds half to even */
    free(s);
}

/* The legend says what bar and whisker show; the default note no longer
 * claims the bar is a mean. */
Test(report, bars_legend_note_is_the_callers)
{
    const char *lab[2] = { "access", "fault" };
    double mean[2] = { 0.6, 0.8 }, sd[2] = { 0.1, 0.05 };
    struct chart_group g = { "F1", mean, sd };
    struct mem m;
    mem_open(&m);
    chart_bars_noted(m.fp, NULL, lab, 2, &g, 1, "score", "bar: pooled; whisker: sd over folds");
    chart_bars(m.fp, NULL, lab, 2, &g, 1, "score");
    chart_bars_noted(m.fp, NULL, lab, 2, &g, 1, "score", NULL);
    char *s = mem_done(&m);
    cr_assert_eq(count(s, ">bar: pooled; whisker: sd over folds</text>"), 1);
    cr_assert_eq(count(s, ">whisker: \xC2\xB1 1 sd</text>"), 1);
    cr_assert_null(strstr(s, "mean \xC2\xB1 sd"));
    free(s);
}

/* Every whisker is one path "Mxa yHxb Mxa y-cVy+c Mxb y-cVy+c": the caps at
 * both ends have the same length and the same stroke, and no second (halo)
 * stroke is drawn under it. */
Test(report, whisker_ends_are_alike)
{
    const char *lab[3] = { "access", "fault", "ideas" };
    double mean[3] = { 0.6, 0.8, 0.3 }, sd[3] = { 0.1, 0.05, 0.2 };
    double lo[3] = { 0.5, 0.75, 0.1 }, hi[3] = { 0.7, 0.85, 0.5 };
    struct chart_group g = { "F1", mean, sd };
    struct mem m;
    mem_open(&m);
    chart_bars(m.fp, NULL, lab, 3, &g, 1, "score");
    chart_intervals(m.fp, NULL, lab, 3, mean, lo, hi, 0, NULL, NULL);
    char *s = mem_done(&m);
    size_t n = 0;
    for (const char *p = strstr(s, "<path d=\"M"); p; p = strstr(p + 1, "<path d=\"M")) {
        double xa, y, xb, xa2, ya1, ya2, xb2, yb1, yb2;
        if (sscanf(p, "<path d=\"M%lf %lfH%lfM%lf %lfV%lfM%lf %lfV%lf\"", &xa, &y, &xb, &xa2, &ya1,
                   &ya2, &xb2, &yb1, &yb2) != 9)
            continue;
        n++;
        cr_assert_float_eq(xa2, xa, 1e-9);
        cr_assert_float_eq(xb2, xb, 1e-9);
        cr_assert_float_eq(ya2 - ya1, yb2 - yb1, 1e-9, "caps differ");
        cr_assert_float_eq((ya1 + ya2) / 2, y, 0.051);
        const char *end = strchr(p, '>');
        cr_assert(strstr(p, "stroke=\"#ffffff\"") == NULL || strstr(p, "stroke=\"#ffffff\"") > end,
                  "whisker drawn with a white halo");
    }
    cr_assert_eq(n, 6, "three bar whiskers and three interval whiskers (found %zu)", n);
    free(s);
}

/* Tick labels on the y axis (text-anchor end, left of the plot). */
static size_t y_ticks(const char *s, double *v, size_t max)
{
    size_t n = 0;
    for (const char *p = strstr(s, "text-anchor=\"end\" fill=\"#5a5f66\">"); p && n < max;
         p = strstr(p + 1, "text-anchor=\"end\" fill=\"#5a5f66\">"))
        v[n++] = strtod(strchr(p, '>') + 1, NULL);
    return n;
}

/* A precision curve between 0.85 and 1.0.  Zoomed: 5 % margin gives
 * [0.8425, 1.0]; a fifth of that is 0.0315, so the round step is 0.05 and
 * the axis runs 0.80..1.00 in five steps (worked by hand), and says it
 * does not start at 0.  Unit: 0..1 in steps of 0.2, no such note. */
Test(report, curve_zooms_on_data_when_asked)
{
    double x[4] = { 0.2, 0.5, 0.8, 1.0 }, y[4] = { 1.0, 0.97, 0.92, 0.85 };
    double v[16];
    struct mem m;
    mem_open(&m);
    chart_curve_ranged(m.fp, NULL, x, y, 4, "coverage", "precision", NULL, NULL, NULL, CHART_Y_DATA);
    char *s = mem_done(&m);
    size_t n = y_ticks(s, v, 16);
    cr_assert_eq(n, 5, "found %zu y ticks", n);
    for (size_t i = 0; i < n; i++)
        cr_assert_float_eq(v[i], 0.80 + 0.05 * (double)i, 1e-9);
    cr_assert_not_null(strstr(s, ">0.80<"));
    cr_assert_not_null(strstr(s, "y axis starts at 0.80, not 0"));
    free(s);

    mem_open(&m);
    chart_curve(m.fp, NULL, x, y, 4, "coverage", "precision", NULL, NULL, NULL);
    s = mem_done(&m);
    n = y_ticks(s, v, 16);
    cr_assert_eq(n, 6);
    cr_assert_float_eq(v[0], 0.0, 1e-9);
    cr_assert_float_eq(v[5], 1.0, 1e-9);
    cr_assert_null(strstr(s, "not 0"));
    free(s);

    /* data reaching 0: zoomed axis starts at 0, no note */
    double y0[4] = { 0.4, 0.3, 0.1, 0.0 };
    mem_open(&m);
    chart_curve_ranged(m.fp, NULL, x, y0, 4, "coverage", "precision", NULL, NULL, NULL, CHART_Y_DATA);
    s = mem_done(&m);
    n = y_ticks(s, v, 16);
    cr_assert(n >= 2);
    cr_assert_float_eq(v[0], 0.0, 1e-9);
    cr_assert_null(strstr(s, "not 0"));
    free(s);
}
