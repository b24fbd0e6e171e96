/* excerpt.h -- a short, one-line view of a text for tables, CSV cells and
 * tooltips (audit, map).  Private to src/cli. */
#ifndef VECSIFT_CLI_EXCERPT_H
#define VECSIFT_CLI_EXCERPT_H

#include <stddef.h>

/* A new string (caller frees) holding 's' with every run of white space
 * (space, tab, CR, LF) turned into one space and both ends trimmed, cut to at
 * most 'max' bytes at a UTF-8 character boundary; a cut text ends in "...". */
char *excerpt_new(const char *s, size_t max);

#endif
