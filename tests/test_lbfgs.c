/* test_lbfgs.c -- the L-BFGS optimiser on textbook problems. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdlib.h>

#include "vecsift/lbfgs.h"

/* Rosenbrock's function f = 100 (x2 - x1^2)^2 + (1 - x1)^2, minimiser
 * (1, 1), standard start (-1.2, 1): the test problem Nocedal and Wright,
 * "Numerical Optimization" (2nd ed.), use in chapters 2 and 3 (eq. 2.22 and
 * exercise 3.1; equation numbers from memory). */
static double rosenbrock(void *ctx, const double *x, double *g)
{
    int *calls = ctx;
    if (calls)
        (*calls)++;
    double a = x[1] - x[0] * x[0], b = 1 - x[0];
    g[0] = -400 * a * x[0] - 2 * b;
    g[1] = 200 * a;
    return 100 * a * a + b * b;
}

Test(lbfgs, rosenbrock_from_standard_start_reaches_1_1)
{
    double x[2] = { -1.2, 1 };
    struct lbfgs_params p = LBFGS_PARAMS_INIT;
    p.gtol = 1e-10;
    p.ftol = 0;
    struct lbfgs_result r;
    int calls = 0;
    int st = lbfgs_minimize(2, x, rosenbrock, &calls, &p, &r);
    cr_assert_eq(st, LBFGS_GRADIENT);
    cr_assert(r.converged);
    cr_assert_float_eq(x[0], 1.0, 1e-6);
    cr_assert_float_eq(x[1], 1.0, 1e-6);
    cr_assert_lt(r.f, 1e-12);
    cr_assert_leq(r.gnorm, 1e-10);
    cr_assert_eq(r.evals, calls);
    /* Nocedal and Wright report BFGS needing a few tens of iterations here
     * (ch. 6, from memory); a working L-BFGS should not need hundreds. */
    cr_assert_lt(r.iters, 100, "iterations %d", r.iters);
}

/* Each accepted step must satisfy the strong Wolfe conditions (N&W eq. 3.7)
 * with c1 = 1e-4, c2 = 0.9, or, flagged, the approximate form (Hager and
 * Zhang 2005): same curvature condition, f not above f0 + 1e-12 |f0|. */
struct wolfe_log {
    int steps, bad, approx;
    double prev_f;
};

static void check_wolfe(void *ctx, const struct lbfgs_step *s)
{
    struct wolfe_log *w = ctx;
    w->steps++;
    int armijo = s->approx ? s->f1 <= s->f0 + 1e-12 * fabs(s->f0)
                           : s->f1 <= s->f0 + 1e-4 * s->alpha * s->dphi0;
    w->approx += s->approx;
    int curv = fabs(s->dphi1) <= 0.9 * fabs(s->dphi0);
    if (!armijo || !curv || !(s->dphi0 < 0) || !(s->alpha > 0) || s->iter != w->steps
        || (w->steps > 1 && s->f0 != w->prev_f))
        w->bad++;
    w->prev_f = s->f1;
}

Test(lbfgs, every_step_satisfies_strong_wolfe)
{
    double x[2] = { -1.2, 1 };
    struct wolfe_log w = { 0, 0, 0, 0 };
    struct lbfgs_params p = LBFGS_PARAMS_INIT;
    p.watch = check_wolfe;
    p.watch_ctx = &w;
    struct lbfgs_result r;
    lbfgs_minimize(2, x, rosenbrock, NULL, &p, &r);
    cr_assert(r.converged);
    cr_assert_eq(w.steps, r.iters);
    cr_assert_gt(w.steps, 5);
    cr_assert_eq(w.bad, 0, "%d of %d steps break the strong Wolfe conditions", w.bad, w.steps);
    /* Rosenbrock's minimum value is 0, so rounding never hides progress. */
    cr_assert_eq(w.approx, 0);
}

/* f = 0.5 x'Ax - b'x with A = tridiag(-1, 2, -1) (n x n), b = e_1 + e_n.
 * A times the all-ones vector is e_1 + e_n, so the minimiser is all ones
 * (checked by hand; A is the standard 1-D discrete Laplacian, positive
 * definite). */
static double quadratic(void *ctx, const double *x, double *g)
{
    size_t n = *(size_t *)ctx;
    double f = 0;
    for (size_t i = 0; i < n; i++) {
        double ax = 2 * x[i] - (i > 0 ? x[i - 1] : 0) - (i + 1 < n ? x[i + 1] : 0);
        double bi = (i == 0 || i + 1 == n) ? 1 : 0;
        g[i] = ax - bi;
        f += 0.5 * x[i] * ax - bi * x[i];
    }
    return f;
}

static void quadratic_case(int m, double gtol, double xtol)
{
    size_t n = 30;
    double *x = calloc(n, sizeof *x);
    struct lbfgs_params p = LBFGS_PARAMS_INIT;
    p.m = m;
    p.gtol = gtol;
    p.ftol = 0;
    struct lbfgs_result r;
    int st = lbfgs_minimize(n, x, quadratic, &n, &p, &r);
    cr_assert_eq(st, LBFGS_GRADIENT, "m=%d status %d", m, st);
    for (size_t i = 0; i < n; i++)
        cr_assert_float_eq(x[i], 1.0, xtol, "m=%d x[%zu]=%g", m, i, x[i]);
    /* f at the minimiser: -0.5 b'x* = -1. */
    cr_assert_float_eq(r.f, -1.0, 1e-13);
    free(x);
}

Test(lbfgs, convex_quadratic_known_minimiser)
{
    /* |x - x*| <= |g| / lambda_min, lambda_min = 2 - 2 cos(pi / 31) ~ 0.0103
     * (eigenvalues of the discrete Laplacian, a standard result). */
    quadratic_case(10, 1e-10, 1e-8);
    quadratic_case(1, 1e-8, 1e-6);
}

Test(lbfgs, max_iter_is_reported_as_not_converged)
{
    double x[2] = { -1.2, 1 };
    struct lbfgs_params p = LBFGS_PARAMS_INIT;
    p.max_iter = 3;
    struct lbfgs_result r;
    cr_assert_eq(lbfgs_minimize(2, x, rosenbrock, NULL, &p, &r), LBFGS_MAX_ITER);
    cr_assert_eq(r.iters, 3);
    cr_assert_eq(r.converged, 0);
    cr_assert_gt(r.gnorm, 1e-6);
}

/* f = x - log x on x > 0 (minimiser 1), +inf outside the domain: a step
 * that leaves the domain must be shortened, not accepted. */
static double log_barrier(void *ctx, const double *x, double *g)
{
    (void)ctx;
    g[0] = 1 - 1 / x[0];
    return x[0] > 0 ? x[0] - log(x[0]) : INFINITY;
}

Test(lbfgs, steps_out_of_the_domain_are_shortened)
{
    double x[1] = { 0.01 };
    struct lbfgs_result r;
    lbfgs_minimize(1, x, log_barrier, NULL, NULL, &r);
    cr_assert(r.converged);
    cr_assert_float_eq(x[0], 1.0, 1e-5);
}

Test(lbfgs, non_finite_start_stops_at_once)
{
    double x[1] = { -1 };
    struct lbfgs_result r;
    cr_assert_eq(lbfgs_minimize(1, x, log_barrier, NULL, NULL, &r), LBFGS_NO_STEP);
    cr_assert_eq(r.converged, 0);
    cr_assert_eq(r.evals, 1);
    cr_assert_eq(x[0], -1);
}

/* A gradient that contradicts f (sign flipped) gives no descent step. */
static double wrong_gradient(void *ctx, const double *x, double *g)
{
    (void)ctx;
    g[0] = -2 * (x[0] - 3);
    return (x[0] - 3) * (x[0] - 3);
}

Test(lbfgs, inconsistent_gradient_ends_without_a_step)
{
    double x[1] = { 0 };
    struct lbfgs_result r;
    cr_assert_eq(lbfgs_minimize(1, x, wrong_gradient, NULL, NULL, &r), LBFGS_NO_STEP);
    cr_assert_eq(r.iters, 0);
    cr_assert_eq(x[0], 0);
}
