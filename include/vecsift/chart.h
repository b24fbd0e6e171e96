/* chart.h -- SVG charts: heat map, grouped bars with spread, line with a
 * band, interval rows.
 *
 * Each function writes one complete <svg> element (with the SVG namespace,
 * so it is valid inline in HTML5 and as a standalone .svg file).  Inputs
 * are plain C arrays; labels may be user data and are escaped and, when
 * very long, shortened with "…" (the full text stays in a <title> tooltip).
 * Colours: a single-hue blue ramp computed in CIE L*a*b* with lightness
 * falling evenly (perceptually uniform, readable without colour vision),
 * and the Okabe-Ito colour-blind-safe palette for series.  NaN values are
 * drawn as missing ("n/a"), never as zero.
 * It does not compute statistics and does not write HTML around the chart.
 */
#ifndef VECSIFT_CHART_H
#define VECSIFT_CHART_H

#include <stddef.h>
#include <stdio.h>

/* Square heat map of counts (K, K) row-major, e.g. a confusion matrix with
 * counts[true*K + predicted].  Each cell is shaded by its share of its row
 * (so a small class is as readable as a large one) and shows its count:
 * whole numbers when every count is whole, else every cell with the same
 * number of decimals (one, or two when all counts are below 1).
 * 'row_axis' and 'col_axis' name the axes ("true queue", "predicted
 * queue"); 'title' may be NULL. */
void chart_heatmap(FILE *fp, const char *title, const char *const *row_labels,
                   const char *const *col_labels, size_t k, const double *counts,
                   const char *row_axis, const char *col_axis);

/* One series of a bar chart: n means and n standard deviations (sd may be
 * NULL: no whiskers). */
struct chart_group {
    const char *name;       /* legend text, e.g. "precision" */
    const double *mean;     /* (n) */
    const double *sd;       /* (n) or NULL */
};

/* Grouped horizontal bars on a 0..1 axis: one band per label, one bar per
 * group, with whiskers from mean-sd to mean+sd (clipped to the axis).  The
 * legend names the groups and ends with "whisker: ± 1 sd". */
void chart_bars(FILE *fp, const char *title, const char *const *labels, size_t n,
                const struct chart_group *groups, size_t ngroups, const char *value_axis);

/* chart_bars with the caller's own words after the group names in the
 * legend, saying what the bar and the whisker are (e.g. "bar: pooled over
 * folds; whisker: ± 1 sd over folds" when the bar is not the mean the sd is
 * taken around).  NULL or "" writes no note. */
void chart_bars_noted(FILE *fp, const char *title, const char *const *labels, size_t n,
                      const struct chart_group *groups, size_t ngroups, const char *value_axis,
                      const char *legend_note);

/* A point to mark on a curve, e.g. the chosen confidence cut-off. */
struct chart_mark {
    double x, y;
    const char *label;
};

/* Line through (x[i], y[i]) in the order given, with an optional band
 * (band_lo/band_hi, both (n) or both NULL) and an optional marked point.
 * Axes span the data with round ticks; when every value lies in [0, 1]
 * that axis spans 0..1.  Points with a NaN coordinate are skipped. */
void chart_curve(FILE *fp, const char *title, const double *x, const double *y, size_t n,
                 const char *x_axis, const char *y_axis, const double *band_lo,
                 const double *band_hi, const struct chart_mark *mark);

/* How chart_curve_ranged spans the y axis. */
enum chart_yrange {
    CHART_Y_UNIT,   /* as chart_curve: 0..1 when every value lies in [0, 1] */
    CHART_Y_DATA,   /* zoomed: the data (line, band and mark) plus a 5 % margin,
                     * widened to round ticks and kept inside [0, 1] when the
                     * data are; an axis that does not start at 0 gets a break
                     * mark at its foot and says so under its lowest tick */
};

/* chart_curve with a choice of y range; the x axis is as in chart_curve. */
void chart_curve_ranged(FILE *fp, const char *title, const double *x, const double *y, size_t n,
                        const char *x_axis, const char *y_axis, const double *band_lo,
                        const double *band_hi, const struct chart_mark *mark,
                        enum chart_yrange yrange);

/* Dot-and-whisker rows in the order given: mean[i] with its interval
 * [lo[i], hi[i]].  Row 'best' (or CHART_NO_BEST) is highlighted, and its
 * interval is shaded across the plot so overlaps are visible.  'flags' (n
 * strings, NULL entries or NULL for none) are written after each row, e.g.
 * "not significantly worse". */
#define CHART_NO_BEST ((size_t)-1)
void chart_intervals(FILE *fp, const char *title, const char *const *names, size_t n,
                     const double *mean, const double *lo, const double *hi, size_t best,
                     const char *const *flags, const char *value_axis);

#endif
