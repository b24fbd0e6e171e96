/* xalloc.h -- the one out-of-memory policy (STYLE C10).
 *
 * Every allocation in vecsift goes through these wrappers.  On failure they
 * print "vecsift: out of memory allocating N bytes" and abort(), so callers
 * never test for NULL.  Sizes are size_t; products are overflow-checked.
 */
#ifndef VECSIFT_XALLOC_H
#define VECSIFT_XALLOC_H

#include <stddef.h>

void *xmalloc(size_t n);
void *xcalloc(size_t count, size_t size);
void *xrealloc(void *p, size_t n);
/* realloc to count*size bytes, aborting when the product overflows. */
void *xreallocarray(void *p, size_t count, size_t size);
char *xstrdup(const char *s);
char *xstrndup(const char *s, size_t n);
/* a*b, aborting (as out of memory) when it overflows size_t. */
size_t xmul(size_t a, size_t b);

/* Grow '*cap' (doubling, at least 'need') and realloc 'p' to '*cap' elements of
 * 'size' bytes.  Returns the new pointer. */
void *xgrow(void *p, size_t *cap, size_t need, size_t size);

#endif
