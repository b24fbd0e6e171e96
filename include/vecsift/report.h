/* report.h -- what people read: terminal tables, number formatting and
 * self-contained HTML pages.
 *
 * Commands (evaluate, compare, curve, map) build their reports from these
 * pieces; charts are in chart.h.  Everything takes plain C arrays and
 * strings, never another module's structs, so any command can use it.
 * Every string passed in may be user data (labels from a CSV): it is
 * escaped for HTML/XML and stripped of characters that XML 1.0 or HTML do
 * not allow (control characters, noncharacters, invalid UTF-8 becomes
 * U+FFFD).  Pages need no network and no JavaScript: inline CSS and inline
 * SVG only, and a Content-Security-Policy that forbids loading anything.
 *
 * Functions write to a caller's stream and do not check it: write errors
 * are caught when the caller commits the output (ofile_commit).
 * This module does not open files and does not compute statistics.
 */
#ifndef VECSIFT_REPORT_H
#define VECSIFT_REPORT_H

#include <stddef.h>
#include <stdio.h>

/* ---- numbers ---- */

/* Format "MEAN ± SD" with 'digits' decimals (clamped to 0..9), e.g.
 * "0.873 ± 0.021" (U+00B1 between spaces).  A NaN mean gives "n/a"; a NaN
 * sd gives the mean alone.  Never writes "-0.000".  Returns what snprintf
 * returns (the length wanted; the text is cut when 'size' is too small). */
int report_fmt_mean_sd(char *buf, size_t size, double mean, double sd, int digits);

/* Format "MEAN [LO, HI]", e.g. "0.873 [0.850, 0.891]".  NaN bounds are
 * left out; a NaN mean gives "n/a".  Returns as snprintf. */
int report_fmt_interval(char *buf, size_t size, double mean, double lo, double hi,
                        int digits);

/* ---- text ---- */

/* Columns 's' (UTF-8) takes on a terminal: wide East Asian characters count
 * 2, combining marks 0 (utf8proc_charwidth), control characters 0 (they are
 * never printed), an invalid byte 1 (it prints as U+FFFD). */
size_t report_text_width(const char *s);

/* Write 's' escaped for HTML and XML text or attribute values: & < > " '
 * become entities; characters outside XML 1.0's Char production and HTML's
 * control characters and noncharacters are dropped; invalid UTF-8 bytes
 * become U+FFFD.  At most 'max_cols' display columns are written (0 = no
 * limit); a longer text is cut and ends in "…". */
void report_escape(FILE *fp, const char *s, size_t max_cols);

/* ---- terminal tables ---- */

/* Print a table: a header line, a rule of '-', then 'nrows' rows.
 * 'header' has ncols strings, 'cells' nrows*ncols row-major (NULL prints as
 * empty); the argument order matches report_html_table.
 * 'align' has one letter per column, 'l' left or 'r' right; NULL means the
 * first column left and the rest right.  Columns are padded by display
 * width (report_text_width), two spaces apart, with no trailing blanks.
 * Control characters in cells are not printed (a label cannot move the
 * cursor or recolour the terminal). */
void report_table_print(FILE *fp, const char *const *header, size_t ncols,
                        const char *const *cells, size_t nrows, const char *align);

/* ---- HTML page ---- */

/* Start a page: doctype, head with inline CSS, <h1>title</h1> and, when
 * 'subtitle' is not NULL, a line under it.  Finish with report_html_end. */
void report_html_begin(FILE *fp, const char *title, const char *subtitle);

/* A heading (<h2>) and, when 'paragraph' is not NULL, a paragraph. */
void report_html_section(FILE *fp, const char *heading, const char *paragraph);

/* A plain paragraph of text. */
void report_html_paragraph(FILE *fp, const char *text);

/* A table: 'header' has ncols cells, 'cells' nrows*ncols row-major (NULL
 * prints as empty).  'numeric' (ncols flags, or NULL for none) right-aligns
 * a column with tabular figures. */
void report_html_table(FILE *fp, const char *const *header, size_t ncols,
                       const char *const *cells, size_t nrows, const int *numeric);

/* A caution in a visually distinct box (e.g. "3 labels have fewer than 10
 * examples; their figures are unreliable"). */
void report_html_note(FILE *fp, const char *text);

/* Close the page. */
void report_html_end(FILE *fp);

#endif
