/* test_rng.c -- the seeded generator. */
#include <criterion/criterion.h>
#include <math.h>

#include "vecsift/rng.h"

/* splitmix64 seeded with 0: first output 0xe220a8397b1dcdaf.  Value from the
 * public-domain reference splitmix64.c by Vigna (recalled from memory; it is
 * also the well-known first state word of xoshiro seeded from 0). */
Test(rng, splitmix_seeding_matches_reference_value)
{
    struct rng r;
    rng_seed(&r, 0);
    cr_assert_eq(r.s[0], 0xe220a8397b1dcdafULL);
}

Test(rng, same_seed_same_stream_and_children_are_independent_of_order)
{
    struct rng a, b, c1, c2;
    rng_seed(&a, 42);
    rng_seed(&b, 42);
    for (int i = 0; i < 100; i++)
        cr_assert_eq(rng_next(&a), rng_next(&b));
    rng_child(&a, 3, &c1);
    rng_child(&a, 7, &c2);
    struct rng d1;
    rng_child(&a, 3, &d1);
    cr_assert_eq(rng_next(&c1), rng_next(&d1));
    cr_assert_neq(rng_next(&c1), rng_next(&c2));
}

/* Uniformity of rng_below: chi-square over 10 cells (common practice; the
 * 0.999 quantile of chi-square with 9 degrees of freedom is 27.88, from
 * standard tables). */
Test(rng, below_is_uniform)
{
    struct rng r;
    rng_seed(&r, 7);
    long cnt[10] = { 0 };
    const int n = 100000;
    for (int i = 0; i < n; i++)
        cnt[rng_below(&r, 10)]++;
    double chi = 0;
    for (int k = 0; k < 10; k++)
        chi += (cnt[k] - n / 10.0) * (cnt[k] - n / 10.0) / (n / 10.0);
    cr_assert_lt(chi, 27.88);
}

Test(rng, normal_has_unit_variance)
{
    struct rng r;
    rng_seed(&r, 11);
    double s = 0, s2 = 0;
    const int n = 200000;
    for (int i = 0; i < n; i++) {
        double x = rng_normal(&r);
        s += x;
        s2 += x * x;
    }
    double mean = s / n, var = s2 / n - mean * mean;
    cr_assert_lt(fabs(mean), 0.01);
    cr_assert_lt(fabs(var - 1.0), 0.02);
}

Test(rng, shuffle_is_a_permutation)
{
    struct rng r;
    rng_seed(&r, 5);
    size_t a[50];
    for (size_t i = 0; i < 50; i++)
        a[i] = i;
    rng_shuffle(&r, a, 50);
    int seen[50] = { 0 };
    for (size_t i = 0; i < 50; i++)
        seen[a[i]]++;
    for (size_t i = 0; i < 50; i++)
        cr_assert_eq(seen[i], 1);
}
