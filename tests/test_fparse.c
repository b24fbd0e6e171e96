/* test_fparse.c -- the float parser against the C library's strtof.
 *
 * Reference: strtof from the C library (glibc), which rounds correctly to
 * nearest-even as C11 7.22.1.3 and IEEE 754-2008 section 5.12.2 require.
 * Every string below is in the grammar fparse accepts; for each one the
 * parser must give the same bits and stop at the same character as strtof,
 * and report FPARSE_RANGE exactly where strtof overflows to infinity.
 * Strings come from a seeded generator (rng.h), so a failure repeats.
 */
#include <criterion/criterion.h>
#include <errno.h>
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/fparse.h"
#include "vecsift/rng.h"

static uint32_t bits(float f)
{
    uint32_t u;
    memcpy(&u, &f, 4);
    return u;
}

static float from_bits(uint32_t u)
{
    float f;
    memcpy(&f, &u, 4);
    return f;
}

static long checked, ranged;

/* Compare fparse with strtof on s; report the first mismatch. */
static void same(const char *s)
{
    char *rend;
    errno = 0;
    float want = strtof(s, &rend);
    float got = 0;
    const char *stop;
    int rc = fparse_f32(s, s + strlen(s), &got, &stop);
    checked++;
    if (isinf(want)) {
        ranged++;
        cr_assert_eq(rc, FPARSE_RANGE, "'%s': strtof overflows, fparse gave rc %d (%a)", s, rc, (double)got);
    } else {
        cr_assert_eq(rc, FPARSE_OK, "'%s': fparse rc %d", s, rc);
        cr_assert_eq(bits(got), bits(want), "'%s': fparse %a (0x%08x), strtof %a (0x%08x)", s, (double)got,
                     bits(got), (double)want, bits(want));
    }
    cr_assert_eq(stop, rend, "'%s': fparse stopped at %td, strtof at %td", s, stop - s, rend - s);
    /* Again with more text after it, as inside a line of a vector file:
     * numbers with at least 17 bytes to go take the eight-at-a-time path
     * (short_decimal) when they have its shape. */
    char padded[600];
    size_t n = strlen(s);
    if (n + 20 < sizeof padded) {
        memcpy(padded, s, n);
        memcpy(padded + n, " 0.25 -0.5 0.125 7", 19);
        float got2 = 0;
        rc = fparse_f32(padded, padded + n + 18, &got2, &stop);
        cr_assert_eq(rc, isinf(want) ? FPARSE_RANGE : FPARSE_OK, "'%s' padded: rc %d", s, rc);
        if (rc == FPARSE_OK)
            cr_assert_eq(bits(got2), bits(want), "'%s' padded: fparse %a, strtof %a", s, (double)got2,
                         (double)want);
        cr_assert_eq(stop - padded, rend - s, "'%s' padded: stopped at %td, strtof at %td", s, stop - padded,
                     rend - s);
    }
}

/* A random decimal: sign, 1..max_digits digits with a point somewhere (or
 * none), optional exponent in [elo, ehi]. */
static void random_decimal(struct rng *r, char *buf, int max_digits, int elo, int ehi)
{
    char *p = buf;
    if (rng_below(r, 4) == 0)
        *p++ = rng_below(r, 2) ? '-' : '+';
    int nd = 1 + (int)rng_below(r, (uint64_t)max_digits);
    int point = (int)rng_below(r, (uint64_t)nd + 2) - 1; /* -1: no point */
    for (int i = 0; i < nd; i++) {
        if (i == point)
            *p++ = '.';
        /* leading zeros now and then, as in 0.000123 */
        *p++ = (char)('0' + (rng_below(r, 5) == 0 ? 0 : rng_below(r, 10)));
    }
    if (point == nd)
        *p++ = '.';
    if (rng_below(r, 2)) {
        *p++ = rng_below(r, 2) ? 'e' : 'E';
        p += sprintf(p, "%d", elo + (int)rng_below(r, (uint64_t)(ehi - elo + 1)));
    }
    *p = '\0';
}

/* 1,000,000 random decimal strings of every shape. */
Test(fparse, random_decimals_equal_strtof, .timeout = 60)
{
    struct rng r;
    rng_seed(&r, 20261201);
    char buf[128];
    for (int i = 0; i < 1000000; i++) {
        int kind = (int)rng_below(&r, 4);
        if (kind == 0)
            random_decimal(&r, buf, 9, -12, 12);      /* what vector files hold */
        else if (kind == 1)
            random_decimal(&r, buf, 25, -30, 30);     /* more digits than 19 kept */
        else if (kind == 2)
            random_decimal(&r, buf, 12, -60, 45);     /* subnormal, underflow, overflow */
        else
            random_decimal(&r, buf, 60, -80, 80);     /* long and extreme */
        same(buf);
    }
    cr_log_info("fparse vs strtof: %ld random decimals, %ld overflow", checked, ranged);
}

/* 600,000 floats of random bits, printed the ways writers print them:
 * %.9g (round trip), %.6g, %.8e, %.17g, %f. */
Test(fparse, printed_floats_equal_strtof, .timeout = 60)
{
    struct rng r;
    rng_seed(&r, 7);
    char buf[512];
    static const char *const fmt[] = { "%.9g", "%.6g", "%.8e", "%.17g", "%.20f" };
    for (int i = 0; i < 600000; i++) {
        float f = from_bits((uint32_t)rng_next(&r));
        if (!isfinite(f))
            continue;
        snprintf(buf, sizeof buf, fmt[i % 5], (double)f);
        same(buf);
    }
}

/* Halfway cases: the exact decimal value of the midpoint between two
 * adjacent floats (a tie: round to even), and that value nudged up or down
 * in its last digits.  These are the inputs a double-rounding parser gets
 * wrong.  400,000 strings. */
Test(fparse, halfway_cases_equal_strtof, .timeout = 60)
{
    struct rng r;
    rng_seed(&r, 99);
    char buf[256];
    for (int i = 0; i < 100000; i++) {
        uint32_t u = (uint32_t)rng_next(&r) & 0x7f7fffffu; /* finite, below FLT_MAX */
        if (i % 4 == 0)
            u &= 0x007fffffu; /* subnormal */
        double mid = ((double)from_bits(u) + (double)from_bits(u + 1)) / 2; /* exact in double */
        /* %.*e with enough digits prints the binary value exactly (glibc) */
        snprintf(buf, sizeof buf, "%.120e", mid);
        /* strip trailing zeros of the mantissa */
        char *e = strchr(buf, 'e');
        char *z = e;
        while (z[-1] == '0')
            z--;
        memmove(z, e, strlen(e) + 1);
        same(buf);
        char up[260], down[260];
        char *ee = strchr(buf, 'e');
        snprintf(up, sizeof up, "%.*s1%s", (int)(ee - buf), buf, ee);        /* a hair above */
        same(up);
        snprintf(down, sizeof down, "%.*s%s", (int)(ee - buf - 1), buf, ee); /* last digit cut: below */
        same(down);
        snprintf(buf, sizeof buf, "%.9g", mid);
        same(buf);
    }
}

/* Fixed edge cases (values from the IEEE 754 binary32 format: FLT_MAX,
 * FLT_MIN, the least subnormal 2^-149, and the overflow threshold
 * 2^128 - 2^103 = 340282356779733661637539395458142568448). */
Test(fparse, limits_equal_strtof)
{
    static const char *const cases[] = {
        "0", "-0", "+0", "0.0", ".5", "5.", "-.5e1", "00000000000000000000000001",
        "3.4028234663852886e38", "3.4028235e38", "3.40282356e38", "3.4028236e38",
        "340282356779733661637539395458142568448", "340282356779733661637539395458142568447",
        "340282356779733661637539395458142568449", "1e39", "-1e39", "1e38", "99999999999999999999e20",
        "1.17549435e-38", "1.1754942e-38", "1.4e-45", "1.401298464324817e-45", "7.006492321624085e-46",
        "7.006492321624086e-46", "7e-46", "1e-46", "1e-50", "2.8e-45", "4.2e-45",
        "1e-300", "1e-99999", "1e99999", "0e99999", "1e", "1e+", "1e-", "1.5E+3x", "12 34",
        "0.000000000000000000000000000000000000000000001401298464324817070923729583289916131280",
        "16777216", "16777217", "16777218", "16777219", "9007199254740993", "9007199254740993e-10",
        "123456789012345678901234567890", "0.1", "0.2", "0.3", "3.14159265358979323846",
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++)
        same(cases[i]);
}

/* Not numbers to us, though strtof reads some of them: nan, inf, hex. */
Test(fparse, refuses_nan_inf_and_empty)
{
    static const char *const bad[] = { "nan", "-nan", "inf", "-Infinity", "", "-", "+", ".", "e5", "x1" };
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        float f;
        const char *stop;
        const char *s = bad[i];
        cr_assert_eq(fparse_f32(s, s + strlen(s), &f, &stop), FPARSE_SYNTAX, "'%s' accepted", s);
        cr_assert_eq(stop, s);
    }
    /* hexadecimal: "0" is read and the parser stops at 'x', so the caller
     * sees a field that is not a number */
    const char *h = "0x1p3";
    float f;
    const char *stop;
    cr_assert_eq(fparse_f32(h, h + 5, &f, &stop), FPARSE_OK);
    cr_assert_eq(stop, h + 1);
}

/* The end pointer is respected: nothing past 'end' is read. */
Test(fparse, stops_at_end)
{
    const char *s = "12345e10";
    float f;
    const char *stop;
    cr_assert_eq(fparse_f32(s, s + 3, &f, &stop), FPARSE_OK);
    cr_assert_eq(f, 123.0f);
    cr_assert_eq(stop, s + 3);
}

/* Every number of the two shapes vector files are mostly made of, six
 * decimals with a sign and seven without ("-0.dddddd", "0.ddddddd"), plus
 * every 1 to 3 digit integer part with 1 to 4 decimals, in the middle of a
 * line (the eight-at-a-time path) and at its end (the general one): each
 * equals strtof.  11,000,000+ strings. */
Test(fparse, vector_file_shapes_exhaustive, .timeout = 120)
{
    char buf[64];
    long n = 0;
    for (long k = 0; k < 1000000; k++) {
        snprintf(buf, sizeof buf, "-0.%06ld", k);
        same(buf);
        n++;
    }
    for (long k = 0; k < 10000000; k++) {
        snprintf(buf, sizeof buf, "0.%07ld", k);
        char *rend;
        float want = strtof(buf, &rend), got;
        const char *stop;
        /* 'same' would also call the end-of-line path; here the middle */
        memcpy(buf + 9, " 0.5 0.25 0.125 0.0625", 23);
        cr_assert_eq(fparse_f32(buf, buf + 31, &got, &stop), FPARSE_OK);
        cr_assert_eq(bits(got), bits(want), "'%.9s': fparse %a, strtof %a", buf, (double)got, (double)want);
        cr_assert_eq(stop, buf + 9);
        n++;
    }
    for (int ip = 0; ip < 1000; ip++)
        for (int nd = 1; nd <= 4; nd++)
            for (int f = 0; f < 10000; f += nd < 4 ? 1 : 7) {
                int lim = nd == 1 ? 10 : nd == 2 ? 100 : nd == 3 ? 1000 : 10000;
                if (f >= lim)
                    break;
                snprintf(buf, sizeof buf, "%s%d.%0*d", (ip + f) % 3 ? "" : "-", ip, nd, f);
                same(buf);
                n++;
            }
    cr_log_info("fparse vs strtof: %ld vector-file numbers", n);
}

/* fparse_f32_row gives what fparse_f32 gives field by field, stops at the
 * first field that is not a number, and reports where. */
Test(fparse, row_equals_field_by_field)
{
    struct rng r;
    rng_seed(&r, 5);
    char line[4096];
    for (int t = 0; t < 2000; t++) {
        size_t len = 0, nf = 1 + rng_below(&r, 40);
        for (size_t i = 0; i < nf; i++) {
            len += (size_t)snprintf(line + len, sizeof line - len, "%s", rng_below(&r, 5) ? " " : " \t ");
            random_decimal(&r, line + len, 9, -12, 12);
            len += strlen(line + len);
        }
        float got[64], want;
        const char *stop;
        size_t k = fparse_f32_row(line, line + len, got, nf, &stop);
        cr_assert_eq(k, nf, "'%s': read %zu of %zu", line, k, nf);
        cr_assert_eq(stop, line + len);
        const char *p = line;
        for (size_t i = 0; i < nf; i++) {
            while (*p == ' ' || *p == '\t')
                p++;
            char *rend;
            want = strtof(p, &rend); /* the C library, field by field */
            cr_assert_eq(bits(got[i]), bits(want), "'%s' field %zu", line, i);
            p = rend;
        }
        /* asking for fewer stops after the last one asked for */
        if (nf > 1) {
            k = fparse_f32_row(line, line + len, got, nf - 1, &stop);
            cr_assert_eq(k, nf - 1);
            cr_assert(stop < line + len && (*stop == ' ' || *stop == '\t'));
        }
    }
    const char *bad = " 0.5 -0.25 0.1x 4";
    float v[4];
    const char *stop;
    cr_assert_eq(fparse_f32_row(bad, bad + strlen(bad), v, 4, &stop), 2);
    cr_assert_eq(stop, bad + 10);
    const char *big = "0.5 1e39 2";
    cr_assert_eq(fparse_f32_row(big, big + strlen(big), v, 3, &stop), 1);
    cr_assert_eq(stop, big + 3);
    const char *few = "1 2";
    cr_assert_eq(fparse_f32_row(few, few + 3, v, 3, &stop), 2);
    cr_assert_eq(stop, few + 3);
}
