/* expv.c -- see expv.h.
 *
 * The method is the classic argument reduction of Cody and Waite (W. J.
 * Cody and W. Waite, "Software Manual for the Elementary Functions",
 * Prentice-Hall, 1980, ch. 6): x = k ln 2 + r with k the nearest integer
 * to x / ln 2 and |r| <= ln 2 / 2, ln 2 split in two parts (the constants
 * of fdlibm's e_exp.c, from memory: a high part with 21 trailing zero
 * bits, so k * LN2_HI is exact for |k| < 2^21, and the rest), then
 * exp(x) = 2^k exp(r) with exp(r) from its Taylor series to r^13
 * (the first term left out is below 2^-57 for |r| <= 0.3466).
 *
 * k comes from adding 1.5 * 2^52 to x / ln 2, which rounds it to an integer
 * held in the low bits of the sum (common practice); 2^k is built from
 * exponent bits and applied as 2^k1 * 2^k2 with k1 + k2 = k, so results
 * down to the subnormal range and up to DBL_MAX need no special case.
 *
 * Everything is four-lane vector arithmetic (vec4.h); the tail of an array
 * is padded to four lanes, so every value takes the same operations.
 */
#include "vecsift/expv.h"

#include <math.h>
#include <stdint.h>
#include <string.h>

#include "vec4.h"

typedef uint64_t v4u __attribute__((vector_size(4 * sizeof(uint64_t))));

/* out[0..4) = exp(in[0..4)) (pointers: a v4d by value outside the AVX
 * copy trips GCC's ABI warning, see vec4.h). */
static inline __attribute__((always_inline)) void exp4(const double *in, double *out)
{
    v4d x;
    VEC4_LOAD(x, in);
    const double INV_LN2 = 0x1.71547652b82fep0;
    const double LN2_HI = 0x1.62e42feep-1;        /* 6.93147180369123816490e-01 */
    const double LN2_LO = 0x1.a39ef35793c76p-33;  /* 1.90821492927058770002e-10 */
    const double SHIFT = 0x1.8p52;
    /* Out of range: below -750 the result is 0, above 710 it is +inf; the
     * arithmetic runs on -750 and 710 there and the lanes are patched. */
    v4i lo = x < VEC4_SPLAT(-750.0), hi = x > VEC4_SPLAT(710.0);
    v4i xi = (v4i)x;
    xi = (xi & ~lo) | ((v4i)VEC4_SPLAT(-750.0) & lo);
    xi = (xi & ~hi) | ((v4i)VEC4_SPLAT(710.0) & hi);
    v4d xc = (v4d)xi;

    v4d t = xc * VEC4_SPLAT(INV_LN2) + VEC4_SPLAT(SHIFT);
    v4d kd = t - VEC4_SPLAT(SHIFT);
    /* r = hi - lo exactly as rerr records what rounding r lost: hi is
     * exact (Sterbenz), lo carries 53 bits of the tail. */
    v4d hi2 = xc - kd * VEC4_SPLAT(LN2_HI), lo2 = kd * VEC4_SPLAT(LN2_LO);
    v4d r = hi2 - lo2;
    v4d rerr = (hi2 - r) - lo2;

    /* exp(r) = 1 + r + r^2 q(r), q = 1/2! + r/3! + ... + r^11/13!, summed
     * with the error of each of the two large additions carried along
     * (Dekker's Fast2Sum: T. J. Dekker, "A floating-point technique for
     * extending the available precision", Numer. Math. 18, 1971; valid as
     * |1| >= |r + p| and |r| >= |p| here), so the result is rounded about
     * once: within 0.65 ulp of expl() over 2 million points (0.79 where
     * the result is subnormal and rounds twice), where one plain Horner
     * sum gave 0.96. */
    v4d q = VEC4_SPLAT(1.0 / 6227020800.0);
    q = q * r + VEC4_SPLAT(1.0 / 479001600.0);
    q = q * r + VEC4_SPLAT(1.0 / 39916800.0);
    q = q * r + VEC4_SPLAT(1.0 / 3628800.0);
    q = q * r + VEC4_SPLAT(1.0 / 362880.0);
    q = q * r + VEC4_SPLAT(1.0 / 40320.0);
    q = q * r + VEC4_SPLAT(1.0 / 5040.0);
    q = q * r + VEC4_SPLAT(1.0 / 720.0);
    q = q * r + VEC4_SPLAT(1.0 / 120.0);
    q = q * r + VEC4_SPLAT(1.0 / 24.0);
    q = q * r + VEC4_SPLAT(1.0 / 6.0);
    q = q * r + VEC4_SPLAT(0.5);
    v4d p = (r * r) * q;
    v4d sum = r + p;
    v4d serr = (r - sum) + p;
    v4d e = VEC4_SPLAT(1.0) + sum;
    v4d eerr = (VEC4_SPLAT(1.0) - e) + sum;
    e = e + (eerr + (serr + rerr));

    /* kb = k + 2048 (k lies in [-1083, 1025] here); 2^k1 and 2^k2 with
     * k1 = floor(k / 2), k2 = k - k1, both normal. */
    v4u kb = (v4u)t - (v4u)VEC4_SPLAT(SHIFT) + 2048;
    v4u h = kb >> 1;
    v4d s1 = (v4d)((h - 1) << 52), s2 = (v4d)((kb - h - 1) << 52);
    v4d y = (e * s1) * s2;

    v4i yi = (v4i)y;
    yi = yi & ~lo; /* +0 */
    yi = (yi & ~hi) | ((v4i)VEC4_SPLAT(INFINITY) & hi);
    y = (v4d)yi;
    VEC4_STORE(out, y);
}

/* The cloned loop is static, the exported name a plain call: clang
 * emits no resolver for an external target_clones function that its own
 * file does not call (the clang fuzzing build failed to link). */
VEC4_CLONES static void expv_all(double *x, size_t n)
{
    size_t i = 0;
    for (; i + 4 <= n; i += 4) {
        exp4(x + i, x + i);
    }
    if (i < n) {
        double pad[4] = { 0, 0, 0, 0 };
        memcpy(pad, x + i, (n - i) * sizeof *x);
        exp4(pad, pad);
        memcpy(x + i, pad, (n - i) * sizeof *x);
    }
}

void expv(double *x, size_t n)
{
    expv_all(x, n);
}

double expv1(double x)
{
    expv(&x, 1);
    return x;
}
