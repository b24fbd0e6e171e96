/* test_expv.c -- the exponential of arrays (expv.h). */
#include <criterion/criterion.h>
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/expv.h"
#include "vecsift/rng.h"

/* The reference: the C library's expl in long double (64-bit significand
 * on x86-64), when the arithmetic really is wider than double.  Under
 * valgrind, which computes x87 long double in double precision, it is
 * not, and the reference falls back to the C library's exp (within about
 * 0.5 ulp itself), with the bound widened by that much. */
static int wide_long_double(void)
{
    volatile long double one = 1, tiny = LDBL_EPSILON;
    return LDBL_MANT_DIG > DBL_MANT_DIG && one + tiny != one;
}

static long double reference(double x)
{
    return wide_long_double() ? expl((long double)x) : (long double)exp(x);
}

/* The bound on ulps() against reference(): expv.h's 1 ulp, plus the
 * reference's own rounding where it is only a double. */
static double bound(void)
{
    return wide_long_double() ? 1.0 : 1.5;
}

/* Error of 'got' against the reference 'ref' in units in the last place
 * of the double nearest 'ref'; below DBL_MIN the unit is the subnormal
 * spacing 2^-1074. */
static double ulps(double got, long double ref)
{
    double r = (double)ref;
    int ex;
    frexp(r, &ex);
    long double unit = r < DBL_MIN ? ldexpl(1.0L, -1074) : ldexpl(1.0L, ex - 53);
    return (double)(fabsl((long double)got - ref) / unit);
}

static double worst_on(struct rng *g, double lo, double hi, size_t n, double *at)
{
    double *x = malloc(n * sizeof *x), *y = malloc(n * sizeof *y);
    for (size_t i = 0; i < n; i++)
        x[i] = y[i] = lo + (hi - lo) * rng_uniform(g);
    expv(y, n);
    double worst = 0;
    for (size_t i = 0; i < n; i++) {
        double u = ulps(y[i], reference(x[i]));
        if (u > worst) {
            worst = u;
            *at = x[i];
        }
    }
    free(x);
    free(y);
    return worst;
}

/* Accuracy against expl (glibc's long-double exponential, used as the
 * higher-precision reference): under one ulp everywhere, the bound
 * expv.h states.  Largest errors seen over 2 million points per range when
 * this test was written: 0.65 ulp, 0.79 for subnormal results (a correctly
 * rounded exp has at most 0.5; glibc's exp() measured 0.505 there). */
Test(expv, within_one_ulp_of_long_double_exp)
{
    struct rng g;
    rng_seed(&g, 20261202);
    double at = 0, w;
    double b = bound();
    w = worst_on(&g, -1.0, 1.0, 400000, &at);
    cr_expect_lt(w, b, "[-1, 1]: %.3f ulp at %.17g", w, at);
    w = worst_on(&g, -60.0, 0.0, 400000, &at);
    cr_expect_lt(w, b, "[-60, 0] (softmax inputs): %.3f ulp at %.17g", w, at);
    w = worst_on(&g, -708.0, 709.7, 400000, &at);
    cr_expect_lt(w, b, "[-708, 709.7]: %.3f ulp at %.17g", w, at);
    w = worst_on(&g, -745.0, -708.5, 100000, &at);
    cr_expect_lt(w, b, "subnormal results: %.3f ulp at %.17g", w, at);
}

/* Values any exp must give (IEEE 754-2019, section 9.2 and its table of
 * special cases for exp): exact at 0, limits at the infinities, NaN kept,
 * overflow to +inf past ln(DBL_MAX) = 709.78..., underflow to 0 past
 * ln(2^-1075) = -745.13... */
Test(expv, special_values)
{
    double x[] = { 0.0, -0.0, INFINITY, -INFINITY, NAN, 709.78, 709.79, -745.2, -745.1, 1.0, -1000, 1000 };
    size_t n = sizeof x / sizeof *x;
    double y[sizeof x / sizeof *x];
    memcpy(y, x, sizeof x);
    expv(y, n);
    cr_expect_eq(y[0], 1.0);
    cr_expect_eq(y[1], 1.0);
    cr_expect(isinf(y[2]) && y[2] > 0);
    cr_expect_eq(y[3], 0.0);
    cr_expect(isnan(y[4]));
    cr_expect(isfinite(y[5]) && y[5] > 1.7e308, "exp(709.78) = %g", y[5]);
    cr_expect(isinf(y[6]));
    cr_expect_eq(y[7], 0.0);
    cr_expect(y[8] > 0 && y[8] < 1e-323, "exp(-745.1) = %g (the smallest subnormal)", y[8]);
    /* e to 17 significant digits: 2.7182818284590452 (OEIS A001113). */
    cr_expect(fabs(y[9] - 2.7182818284590452) <= 4.5e-16, "exp(1) = %.17g", y[9]);
    cr_expect_eq(y[10], 0.0);
    cr_expect(isinf(y[11]));
}

/* Powers of two: exp(k ln 2) = 2^k to within an ulp for whole k (the
 * reduction leaves r = k (ln 2 - LN2_HI - LN2_LO), tiny). */
Test(expv, whole_multiples_of_ln2)
{
    for (int k = -1000; k <= 1000; k += 37) {
        double x = (double)k * 0.69314718055994530942;
        double y = expv1(x);
        cr_expect(ulps(y, reference(x)) < bound(), "k = %d", k);
    }
}

/* Every value takes the same operations: an array of any length gives
 * what single calls give, whatever its position among the four lanes. */
Test(expv, array_equals_one_at_a_time)
{
    struct rng g;
    rng_seed(&g, 5);
    for (size_t n = 0; n < 23; n++) {
        double x[23], y[23];
        for (size_t i = 0; i < n; i++)
            x[i] = y[i] = -40 + 45 * rng_uniform(&g);
        expv(y, n);
        for (size_t i = 0; i < n; i++) {
            double one = expv1(x[i]);
            cr_assert_eq(memcmp(&one, &y[i], sizeof one), 0, "n = %zu, i = %zu", n, i);
        }
    }
}
