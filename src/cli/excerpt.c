/* excerpt.c -- one-line excerpts of texts (see excerpt.h). */
#include "excerpt.h"

#include <string.h>

#include "vecsift/xalloc.h"

static int is_space(unsigned char c)
{
    return c == ' ' || c == '\t' || c == '\r' || c == '\n';
}

char *excerpt_new(const char *s, size_t max)
{
    size_t n = strlen(s), len = 0;
    char *out = xmalloc(n + 4);
    int gap = 0;
    for (size_t i = 0; i < n; i++) {
        if (is_space((unsigned char)s[i])) {
            gap = len > 0;
            continue;
        }
        if (gap)
            out[len++] = ' ';
        gap = 0;
        out[len++] = s[i];
    }
    out[len] = '\0';
    if (len > max) {
        /* back up to the start of a character: continuation bytes are 10xxxxxx */
        size_t cut = max;
        while (cut > 0 && ((unsigned char)out[cut] & 0xC0) == 0x80)
            cut--;
        while (cut > 0 && out[cut - 1] == ' ')
            cut--;
        memcpy(out + cut, "...", 4);
    }
    return out;
}
