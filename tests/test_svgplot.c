/* test_svgplot.c -- the SVG scatter: escaping, XML 1.0 character rules,
 * legend, self-containedness, well-formedness and error paths.  A full XML
 * parse of a drawing is done by tests/ext/tsne_vs_sklearn.py with Python's
 * xml.etree. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/err.h"
#include "vecsift/svgplot.h"

/* Run svgplot_scatter into memory; returns the text (caller frees) and the
 * return code in *rc. */
static char *draw(const double *Y, size_t n, const int *label, const char *const *labels,
                  size_t nlabels, const char *const *titles, const char *caption,
                  struct err *e, int *rc)
{
    char *buf = NULL;
    size_t len = 0;
    FILE *fp = open_memstream(&buf, &len);
    cr_assert_not_null(fp);
    *rc = svgplot_scatter(fp, Y, n, label, labels, nlabels, titles, caption, e);
    fclose(fp);
    return buf;
}

static size_t count(const char *hay, const char *needle)
{
    size_t c = 0;
    for (const char *p = strstr(hay, needle); p; p = strstr(p + 1, needle))
        c++;
    return c;
}

/* A small well-formedness check after XML 1.0 (Fifth Edition) section 2.1 and
 * 2.4: start and end tags nest, '<' and '&' appear in text only as markup or
 * references (the five predefined entities), attribute values are quoted.
 * Comments, CDATA and DOCTYPE are not used by the writer, so they fail. */
static void check_well_formed(const char *s)
{
    const char *stack[64];
    size_t stack_len[64], depth = 0, roots = 0;
    const char *p = s;
    if (strncmp(p, "<?xml ", 6) == 0) {
        p = strstr(p, "?>");
        cr_assert_not_null(p);
        p += 2;
    }
    while (*p) {
        if (*p == '&') {
            static const char *const ent[] = { "&amp;", "&lt;", "&gt;", "&quot;", "&apos;" };
            size_t k;
            for (k = 0; k < 5; k++)
                if (strncmp(p, ent[k], strlen(ent[k])) == 0)
                    break;
            cr_assert_lt(k, 5, "bare '&' at offset %td", p - s);
            p++;
            continue;
        }
        if (*p == '>')
            cr_assert_fail("bare '>' in text at offset %td", p - s);
        if (*p != '<') {
            p++;
            continue;
        }
        int closing = p[1] == '/';
        const char *name = p + 1 + closing;
        size_t nlen = strspn(name, "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789:-_");
        cr_assert_gt(nlen, 0, "bad tag at offset %td", p - s);
        const char *q = name + nlen;
        /* attributes: name="value" */
        while (*q && *q != '>' && !(q[0] == '/' && q[1] == '>')) {
            if (*q == ' ' || *q == '\n') {
                q++;
                continue;
            }
            size_t an = strspn(q, "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789:-_");
            cr_assert_gt(an, 0, "bad attribute at offset %td", q - s);
            q += an;
            cr_assert(q[0] == '=' && q[1] == '"', "unquoted attribute at offset %td", q - s);
            q += 2;
            while (*q && *q != '"') {
                cr_assert(*q != '<', "'<' in attribute at offset %td", q - s);
                q++;
            }
            cr_assert_eq(*q, '"');
            q++;
        }
        cr_assert(*q, "unterminated tag");
        int empty = *q == '/';
        if (closing) {
            cr_assert_gt(depth, 0, "end tag without start at offset %td", p - s);
            depth--;
            cr_assert(stack_len[depth] == nlen && strncmp(stack[depth], name, nlen) == 0,
                      "end tag does not match at offset %td", p - s);
        } else if (!empty) {
            if (depth == 0)
                roots++;
            cr_assert_lt(depth, 64);
            stack[depth] = name;
            stack_len[depth++] = nlen;
        }
        p = q + (empty ? 2 : 1);
    }
    cr_assert_eq(depth, 0, "unclosed elements");
    cr_assert_eq(roots, 1, "one root element expected");
}

Test(svgplot, labelled_map_has_points_legend_and_caption)
{
    const double Y[] = { 0, 0, 1, 1, -1, 2, 5, 5, 4, 6 };
    const int label[] = { 0, 0, 1, 1, -1 };
    const char *const labels[] = { "billing", "login trouble" };
    const char *const titles[] = { "refund please", "card declined", "cannot sign in",
                                   "password reset loop", NULL };
    struct err e = ERR_INIT;
    int rc;
    char *s = draw(Y, 5, label, labels, 2, titles, SVGPLOT_MAP_CAPTION, &e, &rc);
    cr_assert_eq(rc, 0, "%s", e.msg);
    check_well_formed(s);
    /* 5 points + 3 legend markers (two labels and "no label"), all circles
     * for the first eight labels. */
    cr_assert_eq(count(s, "<circle "), 8);
    cr_assert_eq(count(s, "<title>"), 4); /* the unlabelled, untitled point has none */
    cr_assert(strstr(s, "<title>billing\nrefund please</title>"));
    cr_assert(strstr(s, ">billing (2)</text>"));
    cr_assert(strstr(s, ">login trouble (2)</text>"));
    cr_assert(strstr(s, ">(no label) (1)</text>"));
    /* Okabe-Ito blue and orange for the first two labels (Okabe and Ito 2008). */
    cr_assert(strstr(s, "fill=\"#0072B2\""));
    cr_assert(strstr(s, "fill=\"#E69F00\""));
    /* Self-contained: no script, no link to anything outside. */
    cr_assert_null(strstr(s, "<script"));
    cr_assert_null(strstr(s, "href"));
    cr_assert_null(strstr(s, "url("));
    cr_assert_null(strstr(s, "<line"), "no axes");
    /* The caption is there, wrapped over more than one line. */
    cr_assert(strstr(s, "<desc>"));
    cr_assert_gt(count(s, "<g class=\"caption\""), 0);
    cr_assert(strstr(s, ">Each dot is one text"));
    free(s);
}

/* XML 1.0 (Fifth Edition), section 2.2 [2] Char and section 2.4: markup
 * characters become references; C0 controls other than tab, LF and CR,
 * U+FFFE/U+FFFF, UTF-16 surrogates and bytes that are not UTF-8 (RFC 3629)
 * must not appear. */
Test(svgplot, text_is_escaped_and_invalid_characters_dropped)
{
    const double Y[] = { 0, 0, 1, 0, 0, 1 };
    const int label[] = { 0, 0, 0 };
    const char *const labels[] = { "<queue> & \"co\" 'x'" };
    const char *const titles[] = {
        "</title><script>alert(1)</script>",
        "a\x01" "b\x1b" "c\x7f" "d\xff" "e\xc0\xaf" "f\xed\xa0\x80" "g\xef\xbf\xbe" "h",
        "caf\xc3\xa9 \xe2\x82\xac \xf0\x9f\x93\xa7\tend",
    };
    struct err e = ERR_INIT;
    int rc;
    char *s = draw(Y, 3, label, labels, 1, titles, "caption with <b>", &e, &rc);
    cr_assert_eq(rc, 0, "%s", e.msg);
    check_well_formed(s);
    cr_assert(strstr(s, "&lt;queue&gt; &amp; &quot;co&quot; &apos;x&apos;"));
    cr_assert(strstr(s, "&lt;/title&gt;&lt;script&gt;alert(1)&lt;/script&gt;"));
    cr_assert_null(strstr(s, "<script"));
    /* DEL (U+007F) is allowed by the Char production; the others are not. */
    cr_assert(strstr(s, "abc\x7f" "defgh</title>"), "%s", s);
    cr_assert(strstr(s, "caf\xc3\xa9 \xe2\x82\xac \xf0\x9f\x93\xa7\tend"));
    cr_assert(strstr(s, "caption with &lt;b&gt;"));
    for (const unsigned char *p = (const unsigned char *)s; *p; p++)
        cr_assert(*p >= 0x20 || *p == '\n' || *p == '\t' || *p == '\r', "control byte %#x", *p);
    free(s);
}

Test(svgplot, unlabelled_map_has_no_legend_and_repeats_exactly)
{
    const double Y[] = { 0.5, 0.25, -3, 7, 2, 2, 1e6, -1e6 };
    struct err e = ERR_INIT;
    int rc;
    char *a = draw(Y, 4, NULL, NULL, 0, NULL, NULL, &e, &rc);
    cr_assert_eq(rc, 0);
    char *b = draw(Y, 4, NULL, NULL, 0, NULL, NULL, &e, &rc);
    cr_assert_str_eq(a, b);
    check_well_formed(a);
    cr_assert_eq(count(a, "<circle "), 4);
    cr_assert_null(strstr(a, "class=\"legend\""));
    cr_assert_null(strstr(a, "<title>"));
    /* Every point lands inside the drawing: 600 x 600, no legend column. */
    for (const char *p = strstr(a, "cx=\""); p; p = strstr(p + 1, "cx=\"")) {
        double x = strtod(p + 4, NULL);
        cr_assert(x >= 0 && x <= 600, "cx %g", x);
    }
    free(a);
    free(b);
}

/* More labels than colours: the shape changes, so label 0 and label 8 (same
 * colour) are still told apart. */
Test(svgplot, ninth_label_gets_another_shape)
{
    double Y[18];
    int label[9];
    const char *names[9] = { "a", "b", "c", "d", "e", "f", "g", "h", "i" };
    for (int k = 0; k < 9; k++) {
        Y[2 * k] = k;
        Y[2 * k + 1] = -k;
        label[k] = k;
    }
    struct err e = ERR_INIT;
    int rc;
    char *s = draw(Y, 9, label, names, 9, names, NULL, &e, &rc);
    cr_assert_eq(rc, 0);
    check_well_formed(s);
    cr_assert_eq(count(s, "<circle "), 16);
    /* the white background, then the point and legend marker of "i" */
    cr_assert_eq(count(s, "<rect "), 3);
    free(s);
}

Test(svgplot, bad_input_writes_nothing)
{
    const double Y[] = { 0, 0, NAN, 1, 2, 2 };
    const int label[] = { 0, 3, 0 };
    const char *const labels[] = { "one", "two" };
    struct err e = ERR_INIT;
    int rc;
    char *s = draw(Y, 3, NULL, NULL, 0, NULL, NULL, &e, &rc);
    cr_assert_eq(rc, -1);
    cr_assert_eq(e.code, ERR_INPUT);
    cr_assert(strstr(e.msg, "map point 2 has a coordinate that is not a finite number"), "%s", e.msg);
    cr_assert_str_empty(s);
    free(s);

    const double Z[] = { 0, 0, 1, 1, 2, 2 };
    err_clear(&e);
    s = draw(Z, 3, label, labels, 2, NULL, NULL, &e, &rc);
    cr_assert_eq(rc, -1);
    cr_assert(strstr(e.msg, "map point 2 has label index 3, but there are 2 labels"), "%s", e.msg);
    cr_assert_str_empty(s);
    free(s);
}
