/* bench_text.c -- speed of text_tokenize() on a batch of 100,000 invented
 * support-ticket rows, printed as a ratio against a reference measured in
 * the same run: utf8proc_map() with NFKC + case folding + ignorable removal
 * on the same rows (normalisation alone, one malloc per row, no masking or
 * splitting).  A ratio near or below 1 means tokenising costs no more than
 * the library's own normalisation call.  Run on demand, never as a test:
 *
 *   ninja -C build && cc -O2 -std=c11 -D_POSIX_C_SOURCE=200809L -Iinclude \
 *       tests/bench/bench_text.c build/libvecsift.a -lutf8proc -lm -o /tmp/bench_text \
 *       && /tmp/bench_text
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <utf8proc.h>

#include "vecsift/err.h"
#include "vecsift/text.h"

#define ROWS 100000

/* Invented ticket phrases (fictional inbox); some accented, one Hindi, one
 * with an RFC 2606 example address, one with a link. */
static const char *const phrase[] = {
    "Printer on the 3rd floor is offline again, ticket 88123",
    "I can't log in to the portal since this morning's update",
    "Please refund order 4412, I was charged twice for the same invoice",
    "Caf\xC3\xA9 terminal shows error E42 when paying by card",
    "Reset link https://portal.example.com/reset?t=9f8e7d does not work",
    "Contact anna.k@example.com about the Wi-Fi in meeting room B",
    "\xE0\xA4\xB9\xE0\xA4\xBF\xE0\xA4\x82\xE0\xA4\xA6\xE0\xA5\x80 keyboard layout missing after reinstall",
    "VPN disconnects every 10 minutes \xE2\x80\x94 r\xC3\xA9seau instable",
};

static double now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

int main(void)
{
    size_t np = sizeof phrase / sizeof phrase[0];
    char **rows = malloc(ROWS * sizeof *rows);
    size_t *lens = malloc(ROWS * sizeof *lens);
    for (size_t i = 0; i < ROWS; i++) {
        const char *a = phrase[i % np], *b = phrase[(i * 7 + 3) % np];
        size_t la = strlen(a), lb = strlen(b);
        rows[i] = malloc(la + lb + 2);
        memcpy(rows[i], a, la);
        rows[i][la] = ' ';
        memcpy(rows[i] + la + 1, b, lb + 1);
        lens[i] = la + lb + 1;
    }

    double t0 = now();
    size_t ref_bytes = 0;
    for (size_t i = 0; i < ROWS; i++) {
        utf8proc_uint8_t *out = NULL;
        utf8proc_ssize_t n = utf8proc_map((const utf8proc_uint8_t *)rows[i], (utf8proc_ssize_t)lens[i], &out,
                                          UTF8PROC_STABLE | UTF8PROC_COMPOSE | UTF8PROC_COMPAT | UTF8PROC_CASEFOLD
                                              | UTF8PROC_IGNORE);
        ref_bytes += n > 0 ? (size_t)n : 0;
        free(out);
    }
    double t_ref = now() - t0;

    struct text_tokens t = TEXT_TOKENS_INIT;
    struct err e = ERR_INIT;
    size_t ntok = 0;
    t0 = now();
    for (size_t i = 0; i < ROWS; i++) {
        text_tokens_clear(&t);
        long n = text_tokenize(rows[i], lens[i], NULL, &t, &e);
        if (n < 0) {
            fprintf(stderr, "bench_text: row %zu: %s\n", i + 1, e.msg);
            return 1;
        }
        ntok += (size_t)n;
    }
    double t_tok = now() - t0;

    printf("rows %d, tokens %zu, normalised bytes %zu\n", ROWS, ntok, ref_bytes);
    printf("utf8proc_map (reference): %.3f s, %.0f rows/s\n", t_ref, ROWS / t_ref);
    printf("text_tokenize:            %.3f s, %.0f rows/s\n", t_tok, ROWS / t_tok);
    printf("ratio text_tokenize / reference: %.2f\n", t_tok / t_ref);
    text_tokens_release(&t);
    for (size_t i = 0; i < ROWS; i++)
        free(rows[i]);
    free(rows);
    free(lens);
    return 0;
}
