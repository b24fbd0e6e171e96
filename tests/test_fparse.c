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
