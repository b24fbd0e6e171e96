/* xalloc.c -- allocation wrappers that abort on exhaustion (see xalloc.h). */
#include "vecsift/xalloc.h"

#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static void oom(size_t n)
{
    fprintf(stderr, "vecsift: out of memory allocating %zu bytes\n", n);
    abort();
}

size_t xmul(size_t a, size_t b)
{
    if (a && b > SIZE_MAX / a)
        oom(SIZE_MAX);
    return a * b;
}

void *xmalloc(size_t n)
{
    void *p = malloc(n ? n : 1);
    if (!p)
        oom(n);
    return p;
}

void *xcalloc(size_t count, size_t size)
{
    size_t n = xmul(count, size);
    void *p = calloc(n ? count : 1, n ? size : 1);
    if (!p)
        oom(n);
    return p;
}

void *xrealloc(void *p, size_t n)
{
    void *q = realloc(p, n ? n : 1);
    if (!q)
        oom(n);
    return q;
}

void *xreallocarray(void *p, size_t count, size_t size)
{
    return xrealloc(p, xmul(count, size));
}

char *xstrdup(const char *s)
{
    return xstrndup(s, strlen(s));
}

char *xstrndup(const char *s, size_t n)
{
    size_t len = strnlen(s, n);
    char *d = xmalloc(len + 1);
    memcpy(d, s, len);
    d[len] = '\0';
    return d;
}

void *xgrow(void *p, size_t *cap, size_t need, size_t size)
{
    if (need <= *cap)
        return p;
    size_t c = *cap ? *cap : 8;
    while (c < need)
        c = c > SIZE_MAX / 2 ? need : c * 2;
    *cap = c;
    return xreallocarray(p, c, size);
}
