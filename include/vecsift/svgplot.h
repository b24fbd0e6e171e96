/* svgplot.h -- a self-contained SVG scatter drawing for 2-D maps.
 *
 * The file needs nothing else: no scripts, no style sheets, no fonts or
 * images from elsewhere.  Points are coloured by label from the Okabe-Ito
 * palette (Okabe and Ito 2008, "Color Universal Design (CUD): how to make
 * figures and presentations that are friendly to colorblind people"), with
 * marker shapes cycling when there are more labels than colours.  Each point
 * carries its text as a <title> tooltip.  There are no axes: the coordinates
 * of a t-SNE map have no units.  This module does not compute maps; see
 * tsne.h.
 */
#ifndef VECSIFT_SVGPLOT_H
#define VECSIFT_SVGPLOT_H

#include <stddef.h>
#include <stdio.h>

struct err;

/* Default caption for t-SNE maps: what may and may not be read from one. */
#define SVGPLOT_MAP_CAPTION \
    "Each dot is one text, placed so that texts with similar vectors sit close " \
    "together. Read only what is near: the gaps between groups that lie far " \
    "apart, where the groups sit and how big they look say little about the data."

/* Write a scatter drawing of the n points Y ((n, 2) row-major) to 'fp'.
 *
 * label:    (n) label index per point in [0, nlabels), or -1 for a point
 *           without a label; NULL draws every point alike with no legend.
 * labels:   (nlabels) label names, shown in the legend with their counts
 *           and in each point's tooltip.
 * titles:   (n) text of each point for its tooltip; NULL, or a NULL entry,
 *           for none.
 * caption:  one paragraph under the drawing (wrapped); NULL for none.
 *
 * All text is escaped for XML, and characters XML 1.0 does not allow
 * (control characters, invalid UTF-8) are left out.  Returns 0, or -1 with
 * 'e' set: ERR_INPUT when a coordinate is not finite or a label index is out
 * of range (nothing is written then), ERR_IO when writing fails.  Does not
 * close 'fp'. */
int svgplot_scatter(FILE *fp, const double *Y, size_t n, const int *label,
                    const char *const *labels, size_t nlabels,
                    const char *const *titles, const char *caption, struct err *e);

/* Write 's' (UTF-8) to 'fp' as XML character data, safe in element content
 * and in quoted attribute values: & < > " ' become references, characters
 * outside the XML 1.0 Char production and invalid UTF-8 bytes are dropped.
 * Exposed for other SVG and HTML writers. */
void svgplot_xml_text(FILE *fp, const char *s);

#endif
