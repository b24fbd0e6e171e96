/* fuzz_text.c -- libFuzzer harness for the text normaliser and tokeniser
 * (src/text.c).  The first byte picks the options (accents, masks), the rest
 * is the text.  Checks beyond the sanitizers: every token is non-empty,
 * NUL-terminated inside the token buffer; a returned normalisation has the
 * length it claims. */
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/err.h"
#include "vecsift/text.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (size < 1)
        return 0;
    struct text_options o = TEXT_OPTIONS_INIT;
    o.keep_accents = data[0] & 1;
    o.mask_email = (data[0] >> 1) & 1;
    o.mask_url = (data[0] >> 2) & 1;
    o.mask_number = (data[0] >> 3) & 1;
    const char *s = (const char *)data + 1;
    size_t len = size - 1;

    struct text_tokens t = TEXT_TOKENS_INIT;
    struct err e = ERR_INIT;
    long n = text_tokenize(s, len, &o, &t, &e);
    if (n >= 0) {
        if ((size_t)n != t.n)
            abort();
        for (size_t i = 0; i < t.n; i++) {
            if (t.off[i] >= t.len || strlen(text_token(&t, i)) == 0)
                abort();
        }
        /* a second call appends to the same list */
        text_tokens_clear(&t);
        if (text_tokenize(s, len, &o, &t, &e) != n)
            abort();
    }
    text_tokens_release(&t);

    size_t outlen = 0;
    char *norm = text_normalize(s, len, &o, &outlen);
    if (norm && strlen(norm) > outlen)
        abort();
    free(norm);
    free(text_normalize_token(s, len, &o));
    char *nfkc = text_nfkc(s, len, &outlen);
    free(nfkc);
    return 0;
}
