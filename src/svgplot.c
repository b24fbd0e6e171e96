/* svgplot.c -- write a 2-D map as one self-contained SVG file.
 *
 * Layout: a square plotting area (equal scale on both axes, no axes drawn),
 * a legend to its right, a wrapped caption underneath.  Everything is inline
 * SVG 1.1; the file holds no script and refers to nothing outside itself.
 * It does not compute coordinates (see tsne.c).
 */
#include "vecsift/svgplot.h"

#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/err.h"
#include "vecsift/xalloc.h"

/* Okabe and Ito (2008), "Color Universal Design (CUD)": the eight colours
 * of their palette, ordered so the first few are the easiest to tell apart
 * on white (yellow, weakest on white, comes late). */
static const char *const PALETTE[] = {
    "#0072B2", /* blue */
    "#E69F00", /* orange */
    "#009E73", /* bluish green */
    "#CC79A7", /* reddish purple */
    "#56B4E9", /* sky blue */
    "#D55E00", /* vermillion */
    "#F0E442", /* yellow */
    "#000000", /* black */
};
enum { NCOLOURS = sizeof PALETTE / sizeof PALETTE[0], NSHAPES = 4 };
static const char *const UNLABELLED_COLOUR = "#999999";

/* Geometry, in SVG user units (pixels). */
static const double PLOT = 600, MARGIN = 20, LEGEND_MIN_W = 200, RADIUS = 3.5;
static const double LINE_H = 18, LEGEND_ROW = 20;
/* Width of one character at font-size 13 in a sans-serif face, generous
 * (about 0.55 em is typical; common practice, no font is measured). */
static const double CHAR_W = 7.5;

/* ---- XML text ---- */

/* Decode one UTF-8 sequence at s; returns its length and the code point in
 * *cp, or 0 when the bytes are not valid UTF-8 (RFC 3629: no overlongs, no
 * surrogates, nothing above U+10FFFF). */
static size_t utf8_decode(const unsigned char *s, uint32_t *cp)
{
    if (s[0] < 0x80) {
        *cp = s[0];
        return 1;
    }
    size_t len;
    uint32_t c, min;
    if ((s[0] & 0xE0) == 0xC0) {
        len = 2;
        c = s[0] & 0x1F;
        min = 0x80;
    } else if ((s[0] & 0xF0) == 0xE0) {
        len = 3;
        c = s[0] & 0x0F;
        min = 0x800;
    } else if ((s[0] & 0xF8) == 0xF0) {
        len = 4;
        c = s[0] & 0x07;
        min = 0x10000;
    } else {
        return 0;
    }
    for (size_t k = 1; k < len; k++) {
        if ((s[k] & 0xC0) != 0x80) /* also stops at the terminating NUL */
            return 0;
        c = (c << 6) | (s[k] & 0x3F);
    }
    if (c < min || c > 0x10FFFF || (c >= 0xD800 && c <= 0xDFFF))
        return 0;
    *cp = c;
    return len;
}

/* XML 1.0 (Fifth Edition), section 2.2, production [2] Char. */
static int xml_char(uint32_t c)
{
    return c == 0x9 || c == 0xA || c == 0xD || (c >= 0x20 && c <= 0xD7FF) ||
           (c >= 0xE000 && c <= 0xFFFD) || (c >= 0x10000 && c <= 0x10FFFF);
}

/* Write bytes [s, s+len) as escaped XML text. */
static void xml_span(FILE *fp, const char *s, size_t len)
{
    const unsigned char *p = (const unsigned char *)s, *end = p + len;
    while (p < end) {
        uint32_t c;
        size_t k = utf8_decode(p, &c);
        if (k == 0 || p + k > end) { /* invalid byte: drop it, resynchronise */
            p++;
            continue;
        }
        if (!xml_char(c)) {
            p += k;
            continue;
        }
        switch (c) {
        case '&': fputs("&amp;", fp); break;
        case '<': fputs("&lt;", fp); break;
        case '>': fputs("&gt;", fp); break;
        case '"': fputs("&quot;", fp); break;
        case '\'': fputs("&apos;", fp); break;
        default: fwrite(p, 1, k, fp); break;
        }
        p += k;
    }
}

void svgplot_xml_text(FILE *fp, const char *s)
{
    if (s)
        xml_span(fp, s, strlen(s));
}

/* ---- drawing ---- */

/* Shape of label k's marker: it changes every NCOLOURS labels so that up
 * to 32 labels stay distinct; unlabelled points are grey circles. */
static int shape_of(int k)
{
    return k < 0 ? 0 : (k / NCOLOURS) % NSHAPES;
}

static const char *shape_tag(int k)
{
    static const char *const tag[NSHAPES] = { "circle", "rect", "polygon", "polygon" };
    return tag[shape_of(k)];
}

/* Open the marker element for label k at (x, y), without closing it. */
static void marker_open(FILE *fp, int k, double x, double y)
{
    const char *fill = k < 0 ? UNLABELLED_COLOUR : PALETTE[k % NCOLOURS];
    int shape = shape_of(k);
    double r = RADIUS;
    switch (shape) {
    case 0:
        fprintf(fp, "<circle cx=\"%.2f\" cy=\"%.2f\" r=\"%.2f\" fill=\"%s\"", x, y, r, fill);
        break;
    case 1:
        fprintf(fp, "<rect x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" height=\"%.2f\" fill=\"%s\"",
                x - r, y - r, 2 * r, 2 * r, fill);
        break;
    case 2:
        fprintf(fp, "<polygon points=\"%.2f,%.2f %.2f,%.2f %.2f,%.2f\" fill=\"%s\"",
                x, y - 1.3 * r, x - 1.2 * r, y + r, x + 1.2 * r, y + r, fill);
        break;
    default:
        fprintf(fp, "<polygon points=\"%.2f,%.2f %.2f,%.2f %.2f,%.2f %.2f,%.2f\" fill=\"%s\"",
                x, y - 1.4 * r, x + 1.4 * r, y, x, y + 1.4 * r, x - 1.4 * r, y, fill);
        break;
    }
}

/* Split 'text' at spaces into lines of at most 'wrap' bytes (a longer
 * word gets a line of its own) and write each as a <text> element; with
 * 'fp' NULL only count them.  Returns the number of lines. */
static size_t caption_lines(FILE *fp, const char *text, size_t wrap, double x, double y)
{
    const char *s = text;
    size_t lines = 0;
    while (*s) {
        while (*s == ' ')
            s++;
        if (!*s)
            break;
        const char *end = s, *cut = NULL;
        while (*end && (size_t)(end - s) <= wrap) {
            if (*end == ' ')
                cut = end;
            end++;
        }
        if (*end && cut)
            end = cut;
        else if (*end) /* one word longer than a line: run to its end */
            while (*end && *end != ' ')
                end++;
        if (fp) {
            fprintf(fp, "<text x=\"%.2f\" y=\"%.2f\">", x, y);
            xml_span(fp, s, (size_t)(end - s));
            fputs("</text>\n", fp);
        }
        y += LINE_H;
        lines++;
        s = end;
    }
    return lines;
}

int svgplot_scatter(FILE *fp, const double *Y, size_t n, const int *label,
                    const char *const *labels, size_t nlabels,
                    const char *const *titles, const char *caption, struct err *e)
{
    /* Check everything before the first byte goes out. */
    for (size_t i = 0; i < n; i++) {
        if (!isfinite(Y[2 * i]) || !isfinite(Y[2 * i + 1]))
            return err_set(e, NULL, 0, "map point %zu has a coordinate that is not a finite number", i + 1);
        if (label && (label[i] < -1 || (label[i] >= 0 && (size_t)label[i] >= nlabels)))
            return err_set(e, NULL, 0, "map point %zu has label index %d, but there are %zu labels",
                           i + 1, label[i], nlabels);
    }
    if (label && nlabels > 0 && !labels)
        return err_set(e, NULL, 0, "map has %zu labels but no label names", nlabels);
    for (size_t k = 0; label && k < nlabels; k++)
        if (!labels[k])
            return err_set(e, NULL, 0, "map label %zu has no name", k + 1);

    size_t *count = xcalloc(nlabels + 1, sizeof *count); /* last slot: unlabelled */
    for (size_t i = 0; label && i < n; i++)
        count[label[i] < 0 ? nlabels : (size_t)label[i]]++;
    size_t legend_rows = 0;
    if (label)
        legend_rows = nlabels + (count[nlabels] > 0);

    /* Equal scale on both axes, the data's bounding box centred. */
    double x0 = 0, x1 = 0, y0 = 0, y1 = 0;
    for (size_t i = 0; i < n; i++) {
        double x = Y[2 * i], y = Y[2 * i + 1];
        if (i == 0 || x < x0) x0 = x;
        if (i == 0 || x > x1) x1 = x;
        if (i == 0 || y < y0) y0 = y;
        if (i == 0 || y > y1) y1 = y;
    }
    double span = fmax(x1 - x0, y1 - y0);
    double scale = span > 0 ? (PLOT - 2 * MARGIN) / span : 0;
    double cx = (x0 + x1) / 2, cy = (y0 + y1) / 2;

    double legend_h = MARGIN + (double)legend_rows * LEGEND_ROW;
    double top_h = fmax(PLOT, legend_h);
    /* The legend is as wide as its longest row: marker, name, " (count)". */
    size_t longest = 0;
    for (size_t k = 0; label && k < nlabels; k++)
        if (strlen(labels[k]) > longest)
            longest = strlen(labels[k]);
    double legend_w = fmax(LEGEND_MIN_W, 6 * RADIUS + CHAR_W * (double)(longest + 12) + MARGIN);
    double width = PLOT + (label ? legend_w : 0);
    size_t wrap = (size_t)((width - 2 * MARGIN) / CHAR_W);
    size_t ncap = caption ? caption_lines(NULL, caption, wrap, 0, 0) : 0;
    double height = top_h + (double)ncap * LINE_H + (ncap ? MARGIN : 0);

    fprintf(fp, "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n");
    fprintf(fp, "<svg xmlns=\"http://www.w3.org/2000/svg\" version=\"1.1\" "
                "width=\"%.0f\" height=\"%.0f\" viewBox=\"0 0 %.0f %.0f\" "
                "font-family=\"sans-serif\" font-size=\"13\">\n",
            width, height, width, height);
    if (caption) {
        fputs("<desc>", fp);
        svgplot_xml_text(fp, caption);
        fputs("</desc>\n", fp);
    }
    fprintf(fp, "<rect x=\"0\" y=\"0\" width=\"%.0f\" height=\"%.0f\" fill=\"#ffffff\"/>\n",
            width, height);

    /* Points, in input order so the drawing repeats byte for byte. */
    fputs("<g class=\"points\" stroke=\"#ffffff\" stroke-width=\"0.6\" fill-opacity=\"0.85\">\n", fp);
    for (size_t i = 0; i < n; i++) {
        double x = PLOT / 2 + (Y[2 * i] - cx) * scale;
        double y = PLOT / 2 - (Y[2 * i + 1] - cy) * scale; /* SVG y grows downwards */
        int k = label ? label[i] : 0;
        marker_open(fp, k, x, y);
        const char *name = label && k >= 0 ? labels[k] : NULL;
        const char *text = titles ? titles[i] : NULL;
        if (name || text) {
            fputs("><title>", fp);
            svgplot_xml_text(fp, name);
            if (name && text)
                fputs("\n", fp);
            svgplot_xml_text(fp, text);
            fprintf(fp, "</title></%s>\n", shape_tag(k));
        } else {
            fputs("/>\n", fp);
        }
    }
    fputs("</g>\n", fp);

    if (label) {
        double lx = PLOT + MARGIN, ly = MARGIN;
        fputs("<g class=\"legend\">\n", fp);
        for (size_t r = 0; r < legend_rows; r++) {
            int k = r < nlabels ? (int)r : -1;
            marker_open(fp, k, lx + RADIUS * 2, ly + LEGEND_ROW / 2);
            fputs("/>\n", fp);
            fprintf(fp, "<text x=\"%.2f\" y=\"%.2f\">", lx + 6 * RADIUS, ly + LEGEND_ROW / 2 + 4.5);
            if (k >= 0)
                svgplot_xml_text(fp, labels[k]);
            else
                fputs("(no label)", fp);
            fprintf(fp, " (%zu)</text>\n", count[r < nlabels ? r : nlabels]);
            ly += LEGEND_ROW;
        }
        fputs("</g>\n", fp);
    }
    if (caption) {
        fputs("<g class=\"caption\" fill=\"#333333\">\n", fp);
        caption_lines(fp, caption, wrap, MARGIN, top_h + LINE_H);
        fputs("</g>\n", fp);
    }
    fputs("</svg>\n", fp);
    free(count);
    if (ferror(fp))
        return err_io(e, NULL, 0, "cannot write the map drawing");
    return 0;
}
