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
 * It does not split lines or know about files; see vecset.c.
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
 * caller's concern).  Returns the first non-digit.  (Tried: eight bytes at
 * a time, SWAR; 30% slower on vector files, whose numbers are short.) */
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

int fparse_f32(const char *s, const char *end, float *out, const char **stop)
{
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
