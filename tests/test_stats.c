/* test_stats.c -- incomplete beta and Student's t against closed forms and
 * printed tables, the corrected resampled t-test worked by hand, and the
 * power law fit on exact curves.  tests/ext/stats_vs_scipy.py compares the
 * same functions with scipy on more points.
 */
#include <criterion/criterion.h>
#include <math.h>

#include "vecsift/err.h"
#include "vecsift/stats.h"

/* Closed forms of the regularized incomplete beta (Abramowitz and Stegun,
 * Handbook of Mathematical Functions (1964), 26.5): I_x(a, 1) = x^a,
 * I_x(1, b) = 1 - (1 - x)^b, and by symmetry I_{1/2}(a, a) = 1/2. */
Test(stats, incomplete_beta_closed_forms)
{
    double xs[] = { 0.01, 0.2, 0.5, 0.77, 0.999 };
    for (int i = 0; i < 5; i++) {
        double x = xs[i];
        cr_assert_float_eq(stats_betainc(3.5, 1, x), pow(x, 3.5), 1e-14);
        cr_assert_float_eq(stats_betainc(1, 2.25, x), 1 - pow(1 - x, 2.25), 1e-14);
    }
    cr_assert_float_eq(stats_betainc(7.3, 7.3, 0.5), 0.5, 1e-14);
    cr_assert_float_eq(stats_betainc(40, 40, 0.5), 0.5, 1e-13);
    cr_assert_eq(stats_betainc(2, 3, 0), 0.0);
    cr_assert_eq(stats_betainc(2, 3, 1), 1.0);
    cr_assert(isnan(stats_betainc(-1, 3, 0.5)));
}

/* Student's t with 1 degree of freedom is the Cauchy distribution,
 * F(t) = 1/2 + atan(t)/pi; with 2, F(t) = 1/2 + t / (2 sqrt(2 + t^2))
 * (both standard closed forms).  Table values: the 0.975 quantile is 2.228
 * for 10 degrees of freedom and 2.015 is the 0.95 quantile for 5 (printed t
 * tables, to 3 decimals, from memory). */
Test(stats, t_cdf_matches_closed_forms_and_tables)
{
    double ts[] = { -30, -2.5, -0.3, 0, 0.3, 1, 4.2, 100 };
    for (int i = 0; i < 8; i++) {
        double t = ts[i];
        cr_assert_float_eq(stats_t_cdf(t, 1), 0.5 + atan(t) / acos(-1.0), 1e-14, "t = %g", t);
        cr_assert_float_eq(stats_t_cdf(t, 2), 0.5 + t / (2 * sqrt(2 + t * t)), 1e-14, "t = %g", t);
    }
    cr_assert_float_eq(stats_t_cdf(2.228, 10), 0.975, 1e-4);
    cr_assert_float_eq(stats_t_cdf(2.015, 5), 0.95, 1e-4);
    cr_assert_eq(stats_t_cdf(INFINITY, 3), 1.0);
    cr_assert_eq(stats_t_cdf(-INFINITY, 3), 0.0);
}

/* Nadeau and Bengio (2003) corrected t, worked by hand for 5 folds:
 *   d = 0.01 0.02 0.03 0.00 0.04: mean 0.02, sample variance 0.001/4 = 0.00025
 *   n_test/n_train = 1/4 (5-fold), so t = 0.02 / sqrt((1/5 + 1/4) * 0.00025)
 *     = 0.02 / sqrt(1.125e-4) = 1.8856180831641267
 *   (the uncorrected paired t would be 0.02 / sqrt(0.00025/5) = 2.828...) */
Test(stats, corrected_ttest_worked_example)
{
    double d[5] = { 0.01, 0.02, 0.03, 0.00, 0.04 };
    struct stats_ttest t;
    struct err e = ERR_INIT;
    cr_assert_eq(stats_corrected_ttest(d, 5, 20, 80, &t, &e), 0);
    cr_assert_float_eq(t.mean, 0.02, 1e-15);
    cr_assert_float_eq(t.var, 0.00025, 1e-15);
    cr_assert_float_eq(t.t, 0.02 / sqrt(1.125e-4), 1e-12);
    cr_assert_eq(t.df, 4.0);
    cr_assert_float_eq(t.p_two_sided, 2 * (1 - stats_t_cdf(t.t, 4)), 1e-14);
    cr_assert_float_eq(t.p_greater + t.p_less, 1.0, 1e-14);
    cr_assert_lt(t.p_greater, t.p_less);
    cr_assert_eq(t.degenerate, 0);
}

Test(stats, corrected_ttest_zero_variance_and_errors)
{
    struct stats_ttest t;
    struct err e = ERR_INIT;
    double same[4] = { 0.05, 0.05, 0.05, 0.05 }, zero[3] = { 0, 0, 0 };
    cr_assert_eq(stats_corrected_ttest(same, 4, 1, 3, &t, &e), 0);
    cr_assert_eq(t.degenerate, 1);
    cr_assert(isinf(t.t) && t.t > 0);
    cr_assert_eq(t.p_two_sided, 0.0);
    cr_assert_eq(t.p_greater, 0.0);
    cr_assert_eq(t.p_less, 1.0);
    cr_assert_eq(stats_corrected_ttest(zero, 3, 1, 3, &t, &e), 0);
    cr_assert_eq(t.t, 0.0);
    cr_assert_eq(t.p_two_sided, 1.0);
    cr_assert_eq(t.p_greater, 0.5);
    cr_assert_eq(stats_corrected_ttest(zero, 1, 1, 3, &t, &e), -1);
    cr_assert_str_eq(e.msg, "the t-test needs at least 2 fold differences, got 1");
    err_clear(&e);
    cr_assert_eq(stats_corrected_ttest(zero, 3, 0, 3, &t, &e), -1);
}

/* An exact inverse power law is recovered (a consistency check on the
 * fitter: with zero residual the least-squares solution is the curve). */
Test(stats, power_law_recovers_an_exact_curve)
{
    double n[6] = { 25, 50, 100, 200, 400, 800 }, y[6];
    for (int i = 0; i < 6; i++)
        y[i] = 2.0 * pow(n[i], -0.5) + 0.05;
    struct stats_powerlaw f;
    struct err e = ERR_INIT;
    cr_assert_eq(stats_powerlaw_fit(n, y, 6, &f, &e), 0, "%s", e.msg);
    cr_assert_float_eq(f.a, 2.0, 1e-6);
    cr_assert_float_eq(f.b, 0.5, 1e-7);
    cr_assert_float_eq(f.c, 0.05, 1e-7);
    cr_assert_eq(f.converged, 1);
    cr_assert_eq(f.reliable, 1, "%s", f.why);
    cr_assert_float_eq(f.at_2n, 2.0 / 40.0 + 0.05, 1e-7);   /* 2 * 1600^-0.5 + 0.05 */
}

Test(stats, power_law_flags_unreliable_fits)
{
    struct stats_powerlaw f;
    struct err e = ERR_INIT;
    double n3[3] = { 50, 100, 200 }, y3[3] = { 0.4, 0.3, 0.25 };
    cr_assert_eq(stats_powerlaw_fit(n3, y3, 3, &f, &e), 0);
    cr_assert_eq(f.reliable, 0);
    cr_assert_str_eq(f.why, "fewer than 4 points");
    double n[5] = { 50, 100, 200, 400, 800 }, up[5] = { 0.20, 0.22, 0.25, 0.24, 0.3 };
    cr_assert_eq(stats_powerlaw_fit(n, up, 5, &f, &e), 0);
    cr_assert_eq(f.reliable, 0);
    cr_assert_str_eq(f.why, "error does not fall as rows are added");
    double twice[3] = { 50, 50, 100 };
    cr_assert_eq(stats_powerlaw_fit(twice, y3, 3, &f, &e), -1);
    cr_assert_str_eq(e.msg, "a power law fit needs at least 3 distinct sizes, got 2");
}
