/* chart.c -- SVG charts for reports: heat map, grouped bars with whiskers,
 * line with band and marked point, interval rows.
 *
 * Each chart is one <svg> element sized in CSS pixels with a viewBox, so a
 * page can scale it down.  Layout is computed from the labels' display
 * widths (report_text_width) with an estimated glyph width, because SVG
 * text cannot be measured without a renderer; labels are shortened with
 * "…" beyond a fixed number of columns and keep their full text in a
 * <title> tooltip.  No element ids are used, so any number of charts can
 * share a page.  Numbers are written with printf in the "C" locale (the
 * program never calls setlocale), so decimal points stay points.
 * It does not compute statistics; callers pass finished numbers.
 */
#include "vecsift/chart.h"

#include <math.h>
#include <stdint.h>
#include <string.h>

#include "vecsift/report.h"

/* ---- drawing helpers ---- */

#define FONT 12        /* px, body text of every chart */
#define COL_PX 7.0     /* estimated width of one display column at FONT */
#define INK "#1b1b1b"
#define GRID "#d9dde2"
#define MUTED "#5a5f66"

/* Okabe and Ito (2008), "Color Universal Design (CUD): how to make figures
 * and presentations that are friendly to colorblind people": eight colours
 * distinguishable under the common colour-vision deficiencies (hex values
 * from memory).  Ordered for series: blue, orange, bluish green, vermillion,
 * reddish purple, sky blue, yellow, black. */
static const char *const palette[] = {
    "#0072B2", "#E69F00", "#009E73", "#D55E00", "#CC79A7", "#56B4E9", "#F0E442", "#000000",
};
#define PALETTE_N (sizeof palette / sizeof palette[0])
#define ACCENT "#D55E00"   /* vermillion: marked points */

#define TITLE_COLS 90

/* Open the <svg> element, widened when needed so the title fits. */
static void svg_open(FILE *fp, double w, double h, const char *title)
{
    if (title) {
        size_t tw = report_text_width(title);
        w = fmax(w, 24 + 8.8 * (double)(tw < TITLE_COLS ? tw : TITLE_COLS));
    }
    fprintf(fp, "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"%.0f\" height=\"%.0f\" "
                "viewBox=\"0 0 %.0f %.0f\" role=\"img\" font-family=\"system-ui,sans-serif\" "
                "font-size=\"%d\" fill=\"" INK "\">\n",
            w, h, w, h, FONT);
    if (title) {
        fputs("<title>", fp);
        report_escape(fp, title, 0);
        fputs("</title>\n", fp);
        fputs("<text x=\"8\" y=\"20\" font-size=\"15\" font-weight=\"600\">", fp);
        report_escape(fp, title, TITLE_COLS);
        fputs("</text>\n", fp);
    }
}

static void svg_close(FILE *fp)
{
    fputs("</svg>\n", fp);
}

/* <text> at (x, y); 'attrs' is extra markup written verbatim (our own
 * constants only); 's' is user text, shortened to max_cols columns with the
 * full text kept as a tooltip when it was cut. */
static void text_at(FILE *fp, double x, double y, const char *anchor, const char *attrs,
                    const char *s, size_t max_cols)
{
    fprintf(fp, "<text x=\"%.1f\" y=\"%.1f\" text-anchor=\"%s\"%s%s>", x, y, anchor,
            attrs && *attrs ? " " : "", attrs ? attrs : "");
    if (max_cols && report_text_width(s) > max_cols) {
        fputs("<title>", fp);
        report_escape(fp, s, 0);
        fputs("</title>", fp);
    }
    report_escape(fp, s, max_cols);
    fputs("</text>\n", fp);
}

static double text_px(const char *s, size_t max_cols)
{
    size_t w = report_text_width(s);
    return COL_PX * (double)(max_cols && w > max_cols ? max_cols : w);
}

static double max_text_px(const char *const *s, size_t n, size_t max_cols)
{
    double m = 0;
    for (size_t i = 0; s && i < n; i++) {
        double w = text_px(s[i], max_cols);
        if (w > m)
            m = w;
    }
    return m;
}

/* ---- colour ramp ---- */

/* sRGB transfer function, IEC 61966-2-1 (constants from memory). */
static double srgb_gamma(double v)
{
    v = v <= 0.0031308 ? 12.92 * v : 1.055 * pow(v, 1 / 2.4) - 0.055;
    return v < 0 ? 0 : v > 1 ? 1 : v;
}

/* CIE 1976 L*a*b* (D65 white) to 8-bit sRGB.  Formulas from CIE 15:2004 and
 * the sRGB XYZ-to-linear matrix of IEC 61966-2-1, written from memory.
 * Returns 0 when the colour is inside the sRGB gamut, 1 when a channel had
 * to be clipped (which would also shift its lightness). */
static int lab_to_rgb(double L, double a, double b, int rgb[3])
{
    double fy = (L + 16) / 116, fx = fy + a / 500, fz = fy - b / 200;
    double f[3] = { fx, fy, fz }, t[3];
    for (int i = 0; i < 3; i++) {
        const double d = 6.0 / 29;
        t[i] = f[i] > d ? f[i] * f[i] * f[i] : 3 * d * d * (f[i] - 4.0 / 29);
    }
    double X = 0.95047 * t[0], Y = t[1], Z = 1.08883 * t[2];
    double lin[3] = {
        3.2406 * X - 1.5372 * Y - 0.4986 * Z,
        -0.9689 * X + 1.8758 * Y + 0.0415 * Z,
        0.0557 * X - 0.2040 * Y + 1.0570 * Z,
    };
    int clipped = 0;
    for (int i = 0; i < 3; i++) {
        clipped |= lin[i] < -1e-4 || lin[i] > 1 + 1e-4;
        rgb[i] = (int)lround(255 * srgb_gamma(lin[i]));
    }
    return clipped;
}

/* Relative luminance of an 8-bit sRGB colour, WCAG 2.1 definition. */
static double luminance(const int rgb[3])
{
    static const double wt[3] = { 0.2126, 0.7152, 0.0722 };
    double y = 0;
    for (int i = 0; i < 3; i++) {
        double c = rgb[i] / 255.0;
        y += wt[i] * (c <= 0.04045 ? c / 12.92 : pow((c + 0.055) / 1.055, 2.4));
    }
    return y;
}

/* The heat-map ramp: share 0..1 to a blue whose CIE L* falls evenly from 97
 * to 28, so equal steps in share look like equal steps in darkness, for
 * every reader, in colour or in greyscale.  Chroma rises with darkness at a
 * fixed hue of 255 degrees (blue).  Writes the fill to 'out' and returns the
 * text colour with the higher WCAG 2.1 contrast ratio on it, black or white;
 * the lower of the two best ratios over all fills is about 4.6:1, above the
 * 4.5:1 of success criterion 1.4.3 (tests/ext/report_page_check.py). */
static const char *ramp(double share, char out[8])
{
    if (!(share >= 0))
        share = 0;
    if (share > 1)
        share = 1;
    double L = 97 - 69 * share, C = 4 + 40 * share, h = 255 * 3.14159265358979 / 180;
    int rgb[3];
    /* Dark saturated blues leave the sRGB gamut: give up chroma, never
     * lightness, until the colour fits (keeps the even steps in L*). */
    while (lab_to_rgb(L, C * cos(h), C * sin(h), rgb) && C > 0)
        C -= 0.5;
    snprintf(out, 8, "#%02x%02x%02x", rgb[0], rgb[1], rgb[2]);
    double y = luminance(rgb);
    return 1.05 / (y + 0.05) > (y + 0.05) / 0.05 ? "#ffffff" : "#000000";
}

/* ---- axes ---- */

struct axis {
    double lo, hi, step;
    int decimals;
};

/* Round axis limits around [lo, hi]: a step of 1, 2, 2.5 or 5 times a power
 * of ten giving about five intervals (common practice).  Data inside [0, 1]
 * get the whole 0..1 axis when 'unit' is set. */
static struct axis axis_make(double lo, double hi, int unit)
{
    struct axis a;
    if (!isfinite(lo) || !isfinite(hi)) {
        lo = 0;
        hi = 1;
    }
    if (unit && lo >= 0 && hi <= 1) {
        a.lo = 0;
        a.hi = 1;
        a.step = 0.2;
        a.decimals = 1;
        return a;
    }
    if (hi - lo < 1e-12) {
        double pad = fabs(lo) > 1e-12 ? fabs(lo) * 0.1 : 1;
        lo -= pad;
        hi += pad;
    }
    double raw = (hi - lo) / 5, p = pow(10, floor(log10(raw))), m = raw / p;
    double mult = m <= 1 ? 1 : m <= 2 ? 2 : m <= 2.5 ? 2.5 : m <= 5 ? 5 : 10;
    a.step = mult * p;
    a.lo = floor(lo / a.step + 1e-9) * a.step;
    a.hi = ceil(hi / a.step - 1e-9) * a.step;
    int d = (int)-floor(log10(a.step) + 1e-9) + (mult == 2.5 ? 1 : 0);
    a.decimals = d < 0 ? 0 : d > 6 ? 6 : d;
    return a;
}

static double axis_pos(const struct axis *a, double v, double p0, double p1)
{
    return p0 + (v - a->lo) / (a->hi - a->lo) * (p1 - p0);
}

static size_t axis_ticks(const struct axis *a)
{
    return (size_t)lround((a->hi - a->lo) / a->step) + 1;
}

/* Grid lines with tick labels.  'across' set: the axis runs left to right
 * from p0 to p1, lines go from c0 (top) to c1 (bottom) and labels sit under
 * c1.  Otherwise the axis runs bottom (p0) to top (p1), lines go from c0
 * (left) to c1 (right) and labels sit left of c0. */
static void grid(FILE *fp, const struct axis *a, int across, double p0, double p1, double c0,
                 double c1)
{
    for (size_t i = 0; i < axis_ticks(a); i++) {
        double v = a->lo + (double)i * a->step, p = axis_pos(a, v, p0, p1);
        double lx1 = across ? p : c0, ly1 = across ? c0 : p;
        double lx2 = across ? p : c1, ly2 = across ? c1 : p;
        fprintf(fp, "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" stroke=\"" GRID
                    "\"/>\n", lx1, ly1, lx2, ly2);
        fprintf(fp, "<text x=\"%.1f\" y=\"%.1f\" text-anchor=\"%s\" fill=\"" MUTED
                    "\">%.*f</text>\n", across ? p : c0 - 6, across ? c1 + 15 : p + 4,
                across ? "middle" : "end", a->decimals, v);
    }
}

/* A whisker with the same end cap at both ends, one dark stroke.  No white
 * halo: over a filled bar a halo drew a pale box around the cap inside the
 * bar while the cap outside it had none, so the two ends looked different.
 * Dark ink keeps at least 3:1 contrast on the first seven palette colours
 * (lowest: blue, about 3.3:1), the minimum of WCAG 2.1 success criterion
 * 1.4.11 for graphical objects. */
static void whisker_h(FILE *fp, double xa, double xb, double y, double cap)
{
    fprintf(fp, "<path d=\"M%.1f %.1fH%.1fM%.1f %.1fV%.1fM%.1f %.1fV%.1f\" stroke=\"" INK "\" "
                "stroke-width=\"1.3\" fill=\"none\"/>\n",
            xa, y, xb, xa, y - cap, y + cap, xb, y - cap, y + cap);
}

static double clamp01(double v)
{
    return v < 0 ? 0 : v > 1 ? 1 : v;
}

/* ---- heat map ---- */

#define HEAT_LABEL_COLS 24

/* One number of decimals for every cell, so a column of counts reads
 * evenly: none when all counts are whole, else one (two when every count
 * is below 1, e.g. averages of rare confusions).  NaN cells are skipped. */
static int heat_decimals(const double *counts, size_t n)
{
    int whole = 1;
    double big = 0;
    for (size_t i = 0; i < n; i++) {
        double c = counts[i];
        if (isnan(c))
            continue;
        if (c != floor(c) || !(fabs(c) < 1e15))
            whole = 0;
        big = fmax(big, fabs(c));
    }
    return whole ? 0 : big < 1 ? 2 : 1;
}

void chart_heatmap(FILE *fp, const char *title, const char *const *row_labels,
                   const char *const *col_labels, size_t k, const double *counts,
                   const char *row_axis, const char *col_axis)
{
    double cell = k <= 12 ? 46 : k <= 20 ? 36 : 26;
    int cfont = k <= 20 ? FONT : 9;
    double rowpx = max_text_px(row_labels, k, HEAT_LABEL_COLS);
    double colpx = max_text_px(col_labels, k, HEAT_LABEL_COLS);
    /* Column labels are turned 40 degrees so long ones never collide. */
    double sin40 = 0.643, cos40 = 0.766;
    double x0 = 34 + rowpx + 10, y0 = 58 + colpx * sin40 + 10;
    double gw = cell * (double)k, legend_x = x0 + gw + 28;
    double w = fmax(legend_x + 145, x0 + gw - cell / 2 + colpx * cos40 + 16);
    double h = y0 + gw + 40;
    if (h < y0 + 230)
        h = y0 + 230;

    int decimals = heat_decimals(counts, k * k);

    svg_open(fp, w, h, title);
    if (col_axis)
        text_at(fp, x0 + gw / 2, 40, "middle", "font-weight=\"600\"", col_axis, 60);
    if (row_axis) {
        char attrs[96];
        snprintf(attrs, sizeof attrs, "font-weight=\"600\" transform=\"rotate(-90 16 %.1f)\"",
                 y0 + gw / 2);
        text_at(fp, 16, y0 + gw / 2, "middle", attrs, row_axis, 60);
    }
    for (size_t j = 0; j < k; j++) {
        double cx = x0 + cell * ((double)j + 0.5), cy = y0 - 8;
        char attrs[96];
        snprintf(attrs, sizeof attrs, "transform=\"rotate(-40 %.1f %.1f)\"", cx, cy);
        text_at(fp, cx, cy, "start", attrs, col_labels[j], HEAT_LABEL_COLS);
    }
    for (size_t i = 0; i < k; i++) {
        double y = y0 + cell * (double)i, total = 0;
        for (size_t j = 0; j < k; j++)
            if (counts[i * k + j] > 0)
                total += counts[i * k + j];
        text_at(fp, x0 - 8, y + cell / 2 + 4, "end", NULL, row_labels[i], HEAT_LABEL_COLS);
        for (size_t j = 0; j < k; j++) {
            double c = counts[i * k + j], x = x0 + cell * (double)j;
            double share = total > 0 && c > 0 ? c / total : 0;
            char fill[8], num[32];
            const char *ink = ramp(share, fill);
            if (isnan(c))
                snprintf(num, sizeof num, "n/a");
            else
                snprintf(num, sizeof num, "%.*f", decimals, c);
            fputs("<g><title>", fp);
            report_escape(fp, row_labels[i], 0);
            fputs(" \xE2\x86\x92 ", fp);   /* U+2192 rightwards arrow */
            report_escape(fp, col_labels[j], 0);
            fprintf(fp, ": %s (%.1f%% of row)</title>", num, 100 * share);
            fprintf(fp, "<rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"%.1f\" fill=\"%s\" "
                        "stroke=\"%s\" stroke-width=\"%s\"/>",
                    x, y, cell, cell, fill, i == j ? INK : "#ffffff", i == j ? "1.5" : "1");
            fprintf(fp, "<text x=\"%.1f\" y=\"%.1f\" text-anchor=\"middle\" font-size=\"%d\" "
                        "fill=\"%s\">%s</text></g>\n",
                    x + cell / 2, y + cell / 2 + cfont / 3.0, cfont,
                    ink, num);
        }
    }
    /* Legend: ten steps of the ramp, top = 100 % of the row. */
    double ly = y0 + 16, lh = 16;
    fprintf(fp, "<text x=\"%.1f\" y=\"%.1f\" fill=\"" MUTED "\">share of row</text>\n",
            legend_x, y0 + 4);
    for (int s = 10; s >= 0; s--) {
        char fill[8];
        ramp(s / 10.0, fill);
        double y = ly + (10 - s) * lh;
        fprintf(fp, "<rect x=\"%.1f\" y=\"%.1f\" width=\"18\" height=\"%.1f\" fill=\"%s\" "
                    "stroke=\"" GRID "\" stroke-width=\"0.5\"/>\n", legend_x, y, lh, fill);
        if (s % 5 == 0)
            fprintf(fp, "<text x=\"%.1f\" y=\"%.1f\" fill=\"" MUTED "\">%d%%</text>\n",
                    legend_x + 24, y + lh / 2 + 4, s * 10);
    }
    fprintf(fp, "<text x=\"%.1f\" y=\"%.1f\" fill=\"" MUTED "\">outlined: agreement</text>\n",
            legend_x, ly + 11 * lh + 18);
    svg_close(fp);
}

/* ---- grouped bars ---- */

#define BAR_LABEL_COLS 28
#define BAR_NOTE_COLS 60

void chart_bars(FILE *fp, const char *title, const char *const *labels, size_t n,
                const struct chart_group *groups, size_t ngroups, const char *value_axis)
{
    chart_bars_noted(fp, title, labels, n, groups, ngroups, value_axis,
                     "whisker: \xC2\xB1 1 sd");
}

void chart_bars_noted(FILE *fp, const char *title, const char *const *labels, size_t n,
                      const struct chart_group *groups, size_t ngroups, const char *value_axis,
                      const char *legend_note)
{
    double bar = 11, step = bar + 3, band = step * (double)ngroups + 12;
    double x0 = 16 + max_text_px(labels, n, BAR_LABEL_COLS) + 12, pw = 520;
    double x1 = x0 + pw, y0 = 62, y1 = y0 + band * (double)n;
    double w = x1 + 24, h = y1 + 52;
    struct axis a = axis_make(0, 1, 1);
    /* The legend row may be wider than the plot: widen the chart to fit. */
    double legend_w = 0;
    for (size_t g = 0; g < ngroups; g++)
        legend_w += 17 + text_px(groups[g].name, 24) + 22;
    if (legend_note && *legend_note)
        legend_w += 8 + text_px(legend_note, BAR_NOTE_COLS);
    w = fmax(w, x0 + legend_w + 12);

    svg_open(fp, w, h, title);
    /* Legend row: one swatch per group, then what bar and whisker show. */
    double lx = x0;
    for (size_t g = 0; g < ngroups; g++) {
        fprintf(fp, "<rect x=\"%.1f\" y=\"34\" width=\"12\" height=\"12\" fill=\"%s\"/>\n", lx,
                palette[g % PALETTE_N]);
        text_at(fp, lx + 17, 44.5, "start", NULL, groups[g].name, 24);
        lx += 17 + text_px(groups[g].name, 24) + 22;
    }
    if (legend_note && *legend_note)
        text_at(fp, lx + 8, 44.5, "start", "fill=\"" MUTED "\"", legend_note, BAR_NOTE_COLS);
    for (size_t i = 0; i < n; i += 2)
        fprintf(fp, "<rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"%.1f\" "
                    "fill=\"#f4f6f8\"/>\n", 8.0, y0 + band * (double)i, x1 - 8, band);
    grid(fp, &a, 1, x0, x1, y0, y1);
    for (size_t i = 0; i < n; i++) {
        double by = y0 + band * (double)i + 6;
        text_at(fp, x0 - 8, by + step * (double)ngroups / 2 + 2, "end", NULL, labels[i],
                BAR_LABEL_COLS);
        for (size_t g = 0; g < ngroups; g++) {
            double m = groups[g].mean[i], sd = groups[g].sd ? groups[g].sd[i] : NAN;
            double y = by + step * (double)g;
            char num[64];
            report_fmt_mean_sd(num, sizeof num, m, sd, 3);
            fputs("<g><title>", fp);
            report_escape(fp, labels[i], 0);
            fputs(" \xE2\x80\x94 ", fp);
            report_escape(fp, groups[g].name, 0);
            fprintf(fp, ": %s</title>", num);
            if (isnan(m)) {
                fprintf(fp, "<text x=\"%.1f\" y=\"%.1f\" font-size=\"10\" fill=\"" MUTED
                            "\">n/a</text></g>\n", x0 + 4, y + bar - 2);
                continue;
            }
            fprintf(fp, "<rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"%.1f\" "
                        "fill=\"%s\"/>", x0, y, axis_pos(&a, clamp01(m), x0, x1) - x0, bar,
                    palette[g % PALETTE_N]);
            fputs("</g>\n", fp);
            if (!isnan(sd) && sd > 0)
                whisker_h(fp, axis_pos(&a, clamp01(m - sd), x0, x1),
                          axis_pos(&a, clamp01(m + sd), x0, x1), y + bar / 2, 3.5);
        }
    }
    fprintf(fp, "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" stroke=\"" MUTED
                "\"/>\n", x0, y0, x0, y1);
    if (value_axis)
        text_at(fp, (x0 + x1) / 2, y1 + 38, "middle", "font-weight=\"600\"", value_axis, 60);
    svg_close(fp);
}

/* ---- line with band ---- */

static int point_ok(const double *x, const double *y, size_t i)
{
    return !isnan(x[i]) && !isnan(y[i]);
}

/* A y axis zoomed on the data: [lo, hi] plus 5 % of the range on each side
 * (at least 0.005, so a flat line still gets a band), kept inside [0, 1]
 * when the data are, then widened to round ticks by axis_make. */
static struct axis axis_zoom(double lo, double hi)
{
    if (!isfinite(lo) || !isfinite(hi))
        return axis_make(lo, hi, 1);
    int unit = lo >= 0 && hi <= 1;
    double pad = fmax(0.05 * (hi - lo), 0.005);
    lo -= pad;
    hi += pad;
    if (unit) {
        lo = fmax(lo, 0);
        hi = fmin(hi, 1);
    }
    return axis_make(lo, hi, 0);
}

void chart_curve(FILE *fp, const char *title, const double *x, const double *y, size_t n,
                 const char *x_axis, const char *y_axis, const double *band_lo,
                 const double *band_hi, const struct chart_mark *mark)
{
    chart_curve_ranged(fp, title, x, y, n, x_axis, y_axis, band_lo, band_hi, mark,
                       CHART_Y_UNIT);
}

void chart_curve_ranged(FILE *fp, const char *title, const double *x, const double *y, size_t n,
                        const char *x_axis, const char *y_axis, const double *band_lo,
                        const double *band_hi, const struct chart_mark *mark,
                        enum chart_yrange yrange)
{
    double xmin = INFINITY, xmax = -INFINITY, ymin = INFINITY, ymax = -INFINITY;
    for (size_t i = 0; i < n; i++) {
        if (!point_ok(x, y, i))
            continue;
        xmin = fmin(xmin, x[i]);
        xmax = fmax(xmax, x[i]);
        ymin = fmin(ymin, y[i]);
        ymax = fmax(ymax, y[i]);
        if (band_lo && band_hi && !isnan(band_lo[i]) && !isnan(band_hi[i])) {
            ymin = fmin(ymin, band_lo[i]);
            ymax = fmax(ymax, band_hi[i]);
        }
    }
    if (mark && !isnan(mark->x) && !isnan(mark->y)) {
        xmin = fmin(xmin, mark->x);
        xmax = fmax(xmax, mark->x);
        ymin = fmin(ymin, mark->y);
        ymax = fmax(ymax, mark->y);
    }
    struct axis ax = axis_make(xmin, xmax, 1);
    struct axis ay = yrange == CHART_Y_DATA ? axis_zoom(ymin, ymax) : axis_make(ymin, ymax, 1);
    /* A zoomed axis above 0 exaggerates differences: say so on the axis. */
    int cut_axis = yrange == CHART_Y_DATA && ay.lo > 1e-12;
    double w = 660, h = cut_axis ? 418 : 400, x0 = 70, x1 = w - 30, y0 = 40, y1 = 340;

    svg_open(fp, w, h, title);
    grid(fp, &ax, 1, x0, x1, y0, y1);
    grid(fp, &ay, 0, y1, y0, x0, x1);
    if (cut_axis) {
        /* Axis line with a gap and two slanted strokes at its foot (the
         * usual mark of a broken axis, common practice), and in words under
         * the lowest tick label. */
        fprintf(fp, "<path d=\"M%.1f %.1fV%.1fM%.1f %.1fV%.1fH%.1f\" stroke=\"" MUTED "\" "
                    "fill=\"none\"/>\n", x0, y0, y1 - 16, x0, y1 - 8, y1, x1);
        fprintf(fp, "<path d=\"M%.1f %.1fL%.1f %.1fM%.1f %.1fL%.1f %.1f\" stroke=\"" MUTED "\" "
                    "stroke-width=\"1.3\" fill=\"none\"/>\n", x0 - 5, y1 - 14, x0 + 5, y1 - 18,
                x0 - 5, y1 - 6, x0 + 5, y1 - 10);
        fprintf(fp, "<text x=\"8\" y=\"%.1f\" font-size=\"11\" fill=\"" MUTED "\">"
                    "y axis starts at %.*f, not 0</text>\n", h - 6, ay.decimals, ay.lo);
    } else {
        fprintf(fp, "<path d=\"M%.1f %.1fV%.1fH%.1f\" stroke=\"" MUTED "\" fill=\"none\"/>\n",
                x0, y0, y1, x1);
    }
    if (band_lo && band_hi) {
        /* Lower edge left to right, then upper edge back. */
        int first = 1;
        fputs("<path d=\"", fp);
        for (size_t i = 0; i < n; i++)
            if (point_ok(x, band_lo, i) && !isnan(band_hi[i])) {
                fprintf(fp, "%s%.1f %.1f", first ? "M" : "L", axis_pos(&ax, x[i], x0, x1),
                        axis_pos(&ay, band_lo[i], y1, y0));
                first = 0;
            }
        for (size_t i = n; i-- > 0;)
            if (point_ok(x, band_hi, i) && !isnan(band_lo[i]))
                fprintf(fp, "L%.1f %.1f", axis_pos(&ax, x[i], x0, x1),
                        axis_pos(&ay, band_hi[i], y1, y0));
        fputs(first ? "\" fill=\"none\"/>\n" : "Z\" fill=\"#0072B2\" fill-opacity=\"0.18\"/>\n",
              fp);
    }
    int first = 1;
    fputs("<path d=\"", fp);
    for (size_t i = 0; i < n; i++)
        if (point_ok(x, y, i)) {
            fprintf(fp, "%s%.1f %.1f", first ? "M" : "L", axis_pos(&ax, x[i], x0, x1),
                    axis_pos(&ay, y[i], y1, y0));
            first = 0;
        }
    fputs("\" fill=\"none\" stroke=\"#0072B2\" stroke-width=\"2.2\" "
          "stroke-linejoin=\"round\"/>\n", fp);
    /* Dots only when few enough to tell apart. */
    if (n <= 40)
        for (size_t i = 0; i < n; i++)
            if (point_ok(x, y, i))
                fprintf(fp, "<circle cx=\"%.1f\" cy=\"%.1f\" r=\"3\" fill=\"#0072B2\"/>\n",
                        axis_pos(&ax, x[i], x0, x1), axis_pos(&ay, y[i], y1, y0));
    if (mark && !isnan(mark->x) && !isnan(mark->y)) {
        double mx = axis_pos(&ax, mark->x, x0, x1), my = axis_pos(&ay, mark->y, y1, y0);
        fprintf(fp, "<path d=\"M%.1f %.1fV%.1fM%.1f %.1fH%.1f\" stroke=\"" ACCENT "\" "
                    "stroke-dasharray=\"4 3\" fill=\"none\"/>\n", mx, my, y1, x0, my, mx);
        fprintf(fp, "<circle cx=\"%.1f\" cy=\"%.1f\" r=\"6\" fill=\"#ffffff\" stroke=\""
                    ACCENT "\" stroke-width=\"2.5\"/>\n", mx, my);
        if (mark->label) {
            int right = mx < (x0 + x1) / 2;
            /* Above the point unless the line runs above it where the
             * label goes (or there is no room above): then below. */
            double lw = text_px(mark->label, 48), la = right ? mx + 10 : mx - 10 - lw;
            double sum = 0, cnt = 0;
            for (size_t i = 0; i < n; i++) {
                double px = point_ok(x, y, i) ? axis_pos(&ax, x[i], x0, x1) : NAN;
                if (px >= la && px <= la + lw) {
                    sum += axis_pos(&ay, y[i], y1, y0);
                    cnt++;
                }
            }
            int below = my - 12 < y0 + 12 || (cnt > 0 && sum / cnt < my);
            double ty = below && my + 22 <= y1 - 4 ? my + 22 : my - 12;
            text_at(fp, right ? mx + 10 : mx - 10, ty, right ? "start" : "end",
                    "font-weight=\"600\" fill=\"" ACCENT "\"", mark->label, 48);
        }
    }
    if (x_axis)
        text_at(fp, (x0 + x1) / 2, y1 + 40, "middle", "font-weight=\"600\"", x_axis, 60);
    if (y_axis) {
        char attrs[96];
        snprintf(attrs, sizeof attrs, "font-weight=\"600\" transform=\"rotate(-90 18 %.1f)\"",
                 (y0 + y1) / 2);
        text_at(fp, 18, (y0 + y1) / 2, "middle", attrs, y_axis, 40);
    }
    svg_close(fp);
}

/* ---- interval rows ---- */

#define INT_LABEL_COLS 32

void chart_intervals(FILE *fp, const char *title, const char *const *names, size_t n,
                     const double *mean, const double *lo, const double *hi, size_t best,
                     const char *const *flags, const char *value_axis)
{
    double vmin = INFINITY, vmax = -INFINITY;
    for (size_t i = 0; i < n; i++) {
        const double v[3] = { mean[i], lo[i], hi[i] };
        for (int j = 0; j < 3; j++)
            if (isfinite(v[j])) {
                vmin = fmin(vmin, v[j]);
                vmax = fmax(vmax, v[j]);
            }
    }
    /* Differences between settings are small: the axis spans the data, not 0..1. */
    struct axis a = axis_make(vmin, vmax, 0);
    double row = 26, x0 = 16 + max_text_px(names, n, INT_LABEL_COLS) + 14, pw = 440;
    double x1 = x0 + pw, y0 = 36, y1 = y0 + row * (double)n;
    double tx = x1 + 18, flagpx = max_text_px(flags, n, 40);
    double w = tx + COL_PX * 22 + (flagpx > 0 ? flagpx + 16 : 0) + 12, h = y1 + 74;

    svg_open(fp, w, h, title);
    for (size_t i = 0; i < n; i += 2)
        fprintf(fp, "<rect x=\"8\" y=\"%.1f\" width=\"%.1f\" height=\"%.1f\" fill=\"#f4f6f8\"/>\n",
                y0 + row * (double)i, w - 16, row);
    grid(fp, &a, 1, x0, x1, y0, y1);
    if (best < n && isfinite(lo[best]) && isfinite(hi[best])) {
        double xa = axis_pos(&a, lo[best], x0, x1), xb = axis_pos(&a, hi[best], x0, x1);
        fprintf(fp, "<rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"%.1f\" "
                    "fill=\"#0072B2\" fill-opacity=\"0.13\"/>\n", xa, y0, xb - xa, y1 - y0);
    }
    for (size_t i = 0; i < n; i++) {
        double cy = y0 + row * ((double)i + 0.5);
        int is_best = i == best;
        const char *bold = is_best ? "font-weight=\"700\"" : NULL;
        char num[96];
        text_at(fp, x0 - 10, cy + 4, "end", bold, names[i], INT_LABEL_COLS);
        report_fmt_interval(num, sizeof num, mean[i], lo[i], hi[i], 3);
        fprintf(fp, "<text x=\"%.1f\" y=\"%.1f\"%s%s>%s</text>\n", tx, cy + 4,
                bold ? " " : "", bold ? bold : "", num);
        if (flags && flags[i] && *flags[i])
            text_at(fp, tx + COL_PX * 22 + 16, cy + 4, "start",
                    "fill=\"" MUTED "\" font-style=\"italic\"", flags[i], 40);
        if (!isfinite(mean[i]))
            continue;
        if (isfinite(lo[i]) && isfinite(hi[i]))
            whisker_h(fp, axis_pos(&a, lo[i], x0, x1), axis_pos(&a, hi[i], x0, x1), cy, 5);
        fprintf(fp, "<circle cx=\"%.1f\" cy=\"%.1f\" r=\"%s\" fill=\"%s\" stroke=\"#ffffff\" "
                    "stroke-width=\"1\"/>\n", axis_pos(&a, mean[i], x0, x1), cy,
                is_best ? "6" : "4.5", is_best ? "#0072B2" : INK);
    }
    if (value_axis)
        text_at(fp, (x0 + x1) / 2, y1 + 38, "middle", "font-weight=\"600\"", value_axis, 60);
    if (best < n)
        fprintf(fp, "<circle cx=\"%.1f\" cy=\"%.1f\" r=\"6\" fill=\"#0072B2\"/>"
                    "<text x=\"%.1f\" y=\"%.1f\" fill=\"" MUTED "\">best; shaded: its "
                    "interval</text>\n", x0 + 6, y1 + 58, x0 + 18, y1 + 62);
    svg_close(fp);
}
