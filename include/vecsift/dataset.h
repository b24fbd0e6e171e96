/* dataset.h -- a labelled CSV file read whole into memory.
 *
 * Every command that learns from or scores rows starts here: the text
 * columns are joined (one space between them), the label and group columns
 * are kept as strings, and the distinct labels are sorted bytewise so that
 * label indices are the same on every run.  Reading and decoding is csv.h's
 * job; this module does not tokenise (see text.h) and does not judge empty
 * texts (it counts them; commands decide).
 */
#ifndef VECSIFT_DATASET_H
#define VECSIFT_DATASET_H

#include <stddef.h>

#include "vecsift/csv.h"

struct err;

struct dataset_options {
    const char *const *text_cols; size_t ntext;  /* joined with one space; required >= 1 */
    const char *label_col;   /* NULL: unlabelled data */
    const char *group_col;   /* NULL: no groups */
    struct csv_options csv;
};

struct dataset {
    size_t n;                /* rows */
    char **text;             /* (n) joined text, owned */
    char **label;            /* (n) or NULL when no label_col */
    char **group;            /* (n) or NULL */
    long *line;              /* (n) file line where each row starts */
    size_t nlabels; char **labels; /* distinct labels, sorted by strcmp (bytewise), owned */
    int *y;                  /* (n) index into labels, or NULL */
    size_t empty_text;       /* rows whose joined text is empty or only white space (space, tab, CR, LF) */
    size_t replaced;         /* invalid UTF-8 sequences replaced */
    char *path;
};

#define DATASET_INIT {0}

/* Read the CSV file 'path' ("-" = stdin) under the options 'o' into 'd',
 * which is overwritten (it need not be initialised).  Everything in 'd' is
 * owned by it: free with dataset_release.
 *
 * Returns 0, or -1 with 'e' set and 'd' left empty (safe to release): any
 * csv.h error, a named column missing ("FILE:1: no column 'x'", with a hint
 * listing the columns), a label cell that is empty or only white space
 * ("FILE:LINE: row has no label in column 'queue'"), no text column asked
 * for, or a file with no data rows ("FILE: no data rows after the header").
 * An empty text is not an error: it is counted in d->empty_text. */
/* Join parts[0..n) with one space into '*buf' (grown as needed, capacity
 * in '*cap'), NUL-terminated; returns the length.  This is how the text
 * columns of a row become one text, in training and prediction alike. */
size_t dataset_join_text(char **buf, size_t *cap, const char *const *parts, size_t n);

int dataset_load(struct dataset *d, const char *path, const struct dataset_options *o, struct err *e);

/* Free everything 'd' owns and zero it.  NULL-safe; safe on a zeroed struct. */
void dataset_release(struct dataset *d);

/* Index of 'label' in d->labels (binary search), or -1. */
int dataset_label_index(const struct dataset *d, const char *label);

#endif
