/* fparse.c -- decimal text to float32, correctly rounded, fast.
 *
 * The method is Clinger's fast path ("How to Read Floating Point Numbers
 * Accurately", PLDI 1990) widened by an error bound, with the C library's
 * strtof as the slow path for the rare hard cases:
 *
 *   0. With at most 2^24 as mantissa and |e10| <= 10, one float multiply or
 *      divide of two exact floats is the correctly rounded answer.
 *   1. Scan sign, up to 19 significant digits into a uint64 m, and a decimal
 *      exponent e10 (digits beyond the 19th only set a 'truncated' flag).
 *   2. Compute d = m * 10^e10 in double with at most three roundings, using
 *      only powers of ten that are exact in double (10^0 .. 10^22).
 *   3. When d is exact, (float)d is the correctly rounded answer.  Otherwise
 *      the true value lies within |d| * 2^-49 of d (three roundings of at
 *      most 2^-53 relative each, plus truncation below 10^-18).  If no float
 *      rounding boundary (midpoint between two adjacent floats, or the
 *      overflow threshold) lies within that distance, the true value and d
 *      round to the same float, so (float)d is right.
 *   4. Otherwise (about one number in ten million on random input) call
 *      strtof on the same characters.
 * Before all this, numbers of the shape vector files are made of ("-0.123456",
 * "0.1234567", "12.5") are read eight characters at a time without a loop
 * (short_decimal) and go straight to step 0.  fparse_f32_row reads a row
 * of such numbers in one call.  It does not split lines or know about
 * files; see vecpack.c.
 */
#include "vecsift/fparse.h"

#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/xalloc.h"

static const double p10[23] = {
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11,
    1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
};

#if !defined(FLT_EVAL_METHOD) || FLT_EVAL_METHOD != 0
#error "the float fast path needs float arithmetic done in float (FLT_EVAL_METHOD 0)"
#endif

static const float p10f[11] = { 1e0f, 1e1f, 1e2f, 1e3f, 1e4f, 1e5f, 1e6f, 1e7f, 1e8f, 1e9f, 1e10f };

static uint32_t fbits(float f)
{
    uint32_t u;
    memcpy(&u, &f, 4);
    return u;
}

static float bitsf(uint32_t u)
{
    float f;
    memcpy(&f, &u, 4);
    return f;
}

/* Digits at q, appended to *m (m = m * 10 + digit; wrapping is the
 * caller's concern).  Returns the first non-digit.  The general scan;
 * the common short shapes are read eight characters at a time by
 * short_decimal below, without a loop over the digits.  (Looping over
 * eight-byte words here instead was 30% slower on vector files.) */
static const char *scan_digits(const char *q, const char *end, uint64_t *m)
{
    uint64_t v = *m;
    while (q < end && (unsigned)(*q - '0') < 10)
        v = v * 10 + (unsigned)(*q++ - '0');
    *m = v;
    return q;
}

/* The slow path: strtof on a NUL-terminated copy of s[0..n). */
static int slow(const char *s, size_t n, float *out)
{
    char buf[208];
    char *p = n < sizeof buf ? buf : xmalloc(n + 1);
    memcpy(p, s, n);
    p[n] = '\0';
    float f = strtof(p, NULL);
    if (p != buf)
        free(p);
    *out = f;
    return isinf(f) ? FPARSE_RANGE : FPARSE_OK;
}

/* Is d (> 0, inexact) safely away from every float rounding boundary? */
static int safe(double d, float f)
{
    double bound = d * 0x1p-49;
    double mid;
    if (isinf(f)) {
        mid = (double)FLT_MAX + 0x1p103; /* overflow threshold: 2^128 - 2^103 */
    } else {
        double df = f;
        if (df == d)
            return 1;
        if (df < d)
            mid = f == FLT_MAX ? df + 0x1p103 : (df + (double)bitsf(fbits(f) + 1)) * 0.5;
        else
            mid = (df + (double)bitsf(fbits(f) - 1)) * 0.5;
    }
    return fabs(d - mid) > bound;
}

/* ---- the common shape, eight bytes at a time ---- */

/* The index of the lowest set bit of x (x != 0). */
static unsigned ctz64(uint64_t x)
{
#ifdef __GNUC__
    return (unsigned)__builtin_ctzll(x);
#else
    unsigned n = 0;
    for (; !(x & 1); x >>= 1)
        n++;
    return n;
#endif
}

#if defined(__GNUC__) && defined(__BYTE_ORDER__) && __BYTE_ORDER__ == __ORDER_LITTLE_ENDIAN__
#define HAVE_SWAR 1

static const uint64_t p10u[8] = { 1, 10, 100, 1000, 10000, 100000, 1000000, 10000000 };

/* Eight characters as one word, the first in the low byte. */
static uint64_t load8(const char *p)
{
    uint64_t x;
    memcpy(&x, p, 8);
    return x;
}

/* How many of the eight characters in x, from the first, are ASCII digits
 * (0 to 8).  A byte b is a digit when t = b ^ '0' is 0..9: (t & 0x7f) + 0x76
 * reaches 0x80 exactly when t & 0x7f >= 10, and no byte carries into the
 * next; t's own high bit flags bytes >= 0x80. */
static unsigned leading_digits(uint64_t x)
{
    uint64_t t = x ^ 0x3030303030303030ULL;
    uint64_t bad = (((t & 0x7f7f7f7f7f7f7f7fULL) + 0x7676767676767676ULL) | t) & 0x8080808080808080ULL;
    return bad ? ctz64(bad) >> 3 : 8;
}

/* The value of the first n (1..8) characters of x, all digits.  Shifting
 * left by 8 - n bytes drops the characters after them and puts zero digits
 * in front; then pairs, quads and the octet are combined by three
 * multiplies (each byte pair d0 d1 gives 10*d0 + d1, and so on up). */
static uint64_t digits_value(uint64_t x, unsigned n)
{
    x = (x & 0x0f0f0f0f0f0f0f0fULL) << (8 * (8 - n));
    x = (x * 10 + (x >> 8)) & 0x00ff00ff00ff00ffULL;
    x = (x * 100 + (x >> 16)) & 0x0000ffff0000ffffULL;
    return (x * 10000 + (x >> 32)) & 0xffffffffULL;
}

/* The shape nearly every number in a vector file has: an optional sign, 1
 * to 7 digits, and optionally a point and 0 to 7 digits, with no exponent,
 * and at most 2^24 as the digits' value.  Reads s[0..17), so needs 17 bytes
 * before 'end'.  Returns 1 with *out and *stop set, or 0 when the number
 * has another shape; then the general scan below reads it again.  The
 * value is the one the general path gives for the same m and e10 (Clinger's
 * float fast path: one correctly rounded division of two exact floats). */
__attribute__((always_inline)) static inline int short_decimal(const char *s, float *out, const char **stop)
{
    const char *p = s;
    uint32_t neg = *p == '-';
    p += neg | (*p == '+');
    uint64_t x = load8(p);
    unsigned ni = leading_digits(x);
    if (ni == 0 || ni == 8)
        return 0;
    uint64_t m = digits_value(x, ni);
    unsigned nf = 0;
    const char *q = p + ni;
    if (*q == '.') {
        uint64_t y = load8(q + 1);
        nf = leading_digits(y);
        if (nf == 8)
            return 0;
        if (nf)
            m = m * p10u[nf] + digits_value(y, nf);
        q += 1 + nf;
    }
    if ((*q | 0x20) == 'e' || m > (1u << 24))
        return 0;
    float f = (float)(uint32_t)m / p10f[nf];
    uint32_t u = fbits(f) | neg << 31;
    *out = bitsf(u);
    *stop = q;
    return 1;
}
#endif

int fparse_f32(const char *s, const char *end, float *out, const char **stop)
{
#ifdef HAVE_SWAR
    if (end - s >= 17 && short_decimal(s, out, stop))
        return FPARSE_OK;
#endif
    const char *p = s;
    int neg = 0;
    *stop = s;
    if (p < end && (*p == '-' || *p == '+')) {
        neg = *p == '-';
        p++;
    }
    uint64_t m = 0;
    int ndig = 0;       /* digits seen in the mantissa */
    int truncated = 0;  /* a non-zero digit was dropped */
    long e10 = 0;
    /* Fast scan: accumulate every digit.  Exact while there are at most 19
     * digits in all (leading zeros included); longer mantissas are scanned
     * again below, keeping 19 significant digits. */
    const char *q = scan_digits(p, end, &m);
    int nint = (int)(q - p);
    int nfrac = 0;
    if (q < end && *q == '.') {
        const char *f0 = ++q;
        q = scan_digits(q, end, &m);
        nfrac = (int)(q - f0);
    }
    ndig = nint + nfrac;
    if (ndig <= 19) {
        e10 = -nfrac;
        p = q;
    } else {
        m = 0;
        int nd = 0; /* significant digits kept in m */
        for (; p < end && (unsigned)(*p - '0') < 10; p++) {
            unsigned c = (unsigned)(*p - '0');
            if (nd < 19) {
                m = m * 10 + c;
                nd += m != 0;
            } else {
                truncated |= c != 0;
                e10++;
            }
        }
        if (p < end && *p == '.') {
            p++;
            for (; p < end && (unsigned)(*p - '0') < 10; p++) {
                unsigned c = (unsigned)(*p - '0');
                if (nd < 19) {
                    m = m * 10 + c;
                    nd += m != 0;
                    e10--;
                } else {
                    truncated |= c != 0;
                }
            }
        }
    }
    if (ndig == 0)
        return FPARSE_SYNTAX;
    if (p < end && (*p == 'e' || *p == 'E')) {
        const char *q = p + 1;
        int eneg = 0;
        if (q < end && (*q == '-' || *q == '+')) {
            eneg = *q == '-';
            q++;
        }
        if (q < end && (unsigned)(*q - '0') < 10) {
            long x = 0;
            for (; q < end && (unsigned)(*q - '0') < 10; q++)
                if (x < 100000)
                    x = x * 10 + (*q - '0');
            e10 += eneg ? -x : x;
            p = q;
        }
        /* else: "1e" is the number 1 followed by 'e', as strtof reads it */
    }
    *stop = p;
    if (m == 0) {
        *out = neg ? -0.0f : 0.0f;
        return FPARSE_OK;
    }
    /* Clinger's fast path in float itself: m and 10^|e10| are exact floats,
     * so one IEEE multiply or divide rounds correctly.  Most numbers in
     * vector files (up to 7 significant digits) end here. */
    if (m <= (1u << 24) && e10 >= -10 && e10 <= 10) {
        float f = e10 < 0 ? (float)m / p10f[-e10] : (float)m * p10f[e10];
        *out = neg ? -f : f;
        return FPARSE_OK;
    }
    double d = (double)m;
    int exact = !truncated && m <= (1ULL << 53);
    if (e10 > 0) {
        if (e10 > 22)
            goto hard;
        d *= p10[e10];
        exact = exact && d < 0x1p53; /* an integer below 2^53 is exact in double */
    } else if (e10 < 0) {
        if (e10 < -44)
            goto hard;
        if (e10 < -22) {
            d /= p10[22];
            d /= p10[-e10 - 22];
        } else {
            d /= p10[-e10];
        }
        exact = 0;
    }
    float f = (float)d;
    if (!exact && !safe(d, f))
        goto hard;
    if (isinf(f))
        return FPARSE_RANGE;
    *out = neg ? -f : f;
    return FPARSE_OK;
hard:
    return slow(s, (size_t)(p - s), out);
}

/* ---- a row of numbers ---- */

static int is_sep(char c)
{
    return c == ' ' || c == '\t';
}

/* One number after another, each from where the last stopped.  (Tried:
 * finding the separators of 64 characters at once first, so that the
 * start of the next number need not wait for this one's digits to be
 * counted: 15% slower here, the extra work outweighing the overlap.) */
size_t fparse_f32_row(const char *p, const char *end, float *out, size_t n, const char **stop)
{
    size_t j = 0;
    const char *last = p; /* after the last number read */
    for (; j < n; j++) {
        while (p < end && is_sep(*p))
            p++;
        const char *q;
#ifdef HAVE_SWAR
        if (!(end - p >= 17 && short_decimal(p, &out[j], &q)))
#endif
            if (fparse_f32(p, end, &out[j], &q) != FPARSE_OK)
                break;
        if (q < end && !is_sep(*q))
            break;
        p = last = q;
    }
    *stop = last;
    return j;
}
