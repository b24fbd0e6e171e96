/* test_tsne.c -- t-SNE maps: repeatability, perplexity calibration, cluster
 * separation, degenerate input and error paths.  Comparison with the
 * reference implementation (scikit-learn) is in tests/ext/tsne_vs_sklearn.py. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/err.h"
#include "vecsift/rng.h"
#include "vecsift/tsne.h"

/* k Gaussian clusters of m points each in d dimensions, unit spread, centres
 * 'gap' apart along successive axes.  X is (k*m, d). */
static double *clusters(size_t k, size_t m, size_t d, double gap, uint64_t seed)
{
    struct rng r;
    rng_seed(&r, seed);
    double *X = malloc(k * m * d * sizeof *X);
    for (size_t c = 0; c < k; c++)
        for (size_t i = 0; i < m; i++)
            for (size_t j = 0; j < d; j++)
                X[(c * m + i) * d + j] = rng_normal(&r) + (j == c % d ? gap * (double)(c + 1) : 0);
    return X;
}

static void run_ok(const double *X, size_t n, size_t d, const struct tsne_params *p, double *Y)
{
    struct err e = ERR_INIT;
    int rc = tsne_run(X, n, d, p, Y, &e);
    cr_assert_eq(rc, 0, "tsne_run failed: %s", e.msg);
    for (size_t k = 0; k < 2 * n; k++)
        cr_assert(isfinite(Y[k]), "coordinate %zu is not finite", k);
}

/* The task's contract (common practice for seeded tools): same input, same
 * parameters, same seed -> bit-identical output; exact and Barnes-Hut. */
Test(tsne, same_seed_gives_identical_maps)
{
    const size_t n = 120, d = 8;
    double *X = clusters(3, 40, d, 6, 5);
    double *A = malloc(2 * n * sizeof *A), *B = malloc(2 * n * sizeof *B);
    for (int exact = 0; exact <= 1; exact++)
        for (int init = TSNE_INIT_PCA; init <= TSNE_INIT_RANDOM; init++) {
            struct tsne_params p = TSNE_PARAMS_INIT;
            p.iters = 300;
            p.exact = exact;
            p.init = init;
            p.seed = 77;
            run_ok(X, n, d, &p, A);
            run_ok(X, n, d, &p, B);
            cr_assert(memcmp(A, B, 2 * n * sizeof *A) == 0,
                      "exact=%d init=%d: two runs differ", exact, init);
        }
    /* A different seed with random initialisation gives a different map, so
     * the seed is really used. */
    struct tsne_params p = TSNE_PARAMS_INIT;
    p.iters = 300;
    p.init = TSNE_INIT_RANDOM;
    p.seed = 1;
    run_ok(X, n, d, &p, A);
    p.seed = 2;
    run_ok(X, n, d, &p, B);
    cr_assert(memcmp(A, B, 2 * n * sizeof *A) != 0);
    free(X);
    free(A);
    free(B);
}

/* Perplexity is 2^H(P_i) with H in bits (van der Maaten and Hinton 2008,
 * eq. 4); in nats, H(P_i) = log(perplexity).  Each conditional row must also
 * sum to 1 and give p(i|i) = 0 (same paper, section 2). */
static void check_calibration(size_t n, size_t d, double perp, double want_h)
{
    double *X = clusters(2, n / 2, d, 4, 9);
    double *P = malloc(n * n * sizeof *P);
    struct err e = ERR_INIT;
    cr_assert_eq(tsne_affinities(X, n, d, perp, P, &e), 0, "%s", e.msg);
    for (size_t i = 0; i < n; i++) {
        double h = 0, s = 0;
        cr_assert_eq(P[i * n + i], 0.0);
        for (size_t j = 0; j < n; j++) {
            double v = P[i * n + j];
            s += v;
            if (v > 0)
                h -= v * log(v);
        }
        cr_assert_float_eq(s, 1.0, 1e-12, "row %zu sums to %g", i, s);
        cr_assert_float_eq(h, want_h, 1e-6, "row %zu: entropy %.9f, want %.9f", i, h, want_h);
    }
    free(X);
    free(P);
}

Test(tsne, rows_have_the_entropy_the_perplexity_asks_for)
{
    check_calibration(80, 6, 10.0, log(10.0));
    check_calibration(80, 6, 25.0, log(25.0));
    /* 10 points cannot support perplexity 30: it is lowered to (n-1)/3 = 3. */
    check_calibration(10, 3, 30.0, log(3.0));
}

/* Index of the nearest other point of i in Y. */
static size_t nearest(const double *Y, size_t n, size_t i)
{
    size_t best = i == 0 ? 1 : 0;
    double bd = INFINITY;
    for (size_t j = 0; j < n; j++) {
        if (j == i)
            continue;
        double dx = Y[2 * i] - Y[2 * j], dy = Y[2 * i + 1] - Y[2 * j + 1];
        if (dx * dx + dy * dy < bd) {
            bd = dx * dx + dy * dy;
            best = j;
        }
    }
    return best;
}

/* Two clusters whose centres are 20 standard deviations apart must come out
 * as two groups: every point's nearest map neighbour is in its own cluster,
 * and the discs around the two centroids holding all their points do not
 * overlap (the property the 2008 paper, section 4, shows on real data). */
static void check_separated(int exact)
{
    const size_t m = 60, n = 2 * m, d = 10;
    double *X = clusters(2, m, d, 20, 3);
    double *Y = malloc(2 * n * sizeof *Y);
    struct tsne_params p = TSNE_PARAMS_INIT;
    p.iters = 500;
    p.exact = exact;
    run_ok(X, n, d, &p, Y);
    for (size_t i = 0; i < n; i++)
        cr_assert_eq(nearest(Y, n, i) / m, i / m, "exact=%d: point %zu's nearest is in the other cluster", exact, i);
    double c[2][2] = { { 0, 0 }, { 0, 0 } }, rad[2] = { 0, 0 };
    for (size_t i = 0; i < n; i++) {
        c[i / m][0] += Y[2 * i] / (double)m;
        c[i / m][1] += Y[2 * i + 1] / (double)m;
    }
    for (size_t i = 0; i < n; i++)
        rad[i / m] = fmax(rad[i / m], hypot(Y[2 * i] - c[i / m][0], Y[2 * i + 1] - c[i / m][1]));
    double gap = hypot(c[0][0] - c[1][0], c[0][1] - c[1][1]);
    cr_assert_gt(gap, rad[0] + rad[1], "exact=%d: centroids %g apart, radii %g and %g",
                 exact, gap, rad[0], rad[1]);
    free(X);
    free(Y);
}

Test(tsne, separated_clusters_stay_separated_exact) { check_separated(1); }
Test(tsne, separated_clusters_stay_separated_barnes_hut) { check_separated(0); }

/* With theta = 0 the quadtree opens every cell, so the Barnes-Hut repulsion
 * is the exact sum; with 3*perplexity >= n-1 every point is a neighbour, so
 * the sparse P is the dense P.  The two code paths must then agree up to
 * rounding (the 2014 paper, section 4: the approximation is exact at
 * theta = 0).  Only 10 steps: in the exaggerated phase rounding differences
 * grow about tenfold every three steps (measured: 1e-12 after 10 steps,
 * 2e-5 after 30, on a map about 10 wide). */
Test(tsne, barnes_hut_at_theta_zero_matches_exact)
{
    const size_t n = 31, d = 4;
    double *X = clusters(1, n, d, 0, 21);
    double A[62], B[62];
    struct tsne_params p = TSNE_PARAMS_INIT;
    p.perplexity = 10; /* 3 * 10 = 30 = n - 1 neighbours */
    p.iters = 10;
    p.theta = 0;
    p.exact = 1;
    run_ok(X, n, d, &p, A);
    p.exact = 0;
    run_ok(X, n, d, &p, B);
    double scale = 0, diff = 0;
    for (size_t k = 0; k < 2 * n; k++) {
        scale = fmax(scale, fabs(A[k]));
        diff = fmax(diff, fabs(A[k] - B[k]));
    }
    cr_assert_gt(scale, 0);
    cr_assert_lt(diff, 1e-9 * scale, "largest difference %g, map scale %g", diff, scale);
    /* And at theta = 0.5 the approximation is close but not identical. */
    p.theta = 0.5;
    run_ok(X, n, d, &p, B);
    diff = 0;
    for (size_t k = 0; k < 2 * n; k++)
        diff = fmax(diff, fabs(A[k] - B[k]));
    cr_assert_gt(diff, 0);
    free(X);
}

/* Identical points: every distance is 0, the bandwidth search cannot reach
 * the perplexity and the quadtree cannot split them.  Must still end with
 * finite coordinates (common practice: degenerate input must not crash). */
Test(tsne, identical_points_give_finite_map)
{
    const size_t n = 40, d = 3;
    double *X = calloc(n * d, sizeof *X);
    double *Y = malloc(2 * n * sizeof *Y);
    for (int exact = 0; exact <= 1; exact++) {
        struct tsne_params p = TSNE_PARAMS_INIT;
        p.iters = 100;
        p.exact = exact;
        run_ok(X, n, d, &p, Y);
    }
    free(X);
    free(Y);
}

/* One-dimensional input has one principal component; the second map
 * coordinate then starts random.  The order along the line is kept: the two
 * ends of a line of points stay the two points farthest apart. */
Test(tsne, one_dimensional_input)
{
    const size_t n = 30;
    double X[30], Y[60];
    for (size_t i = 0; i < n; i++)
        X[i] = (double)i;
    struct tsne_params p = TSNE_PARAMS_INIT;
    p.perplexity = 5;
    run_ok(X, n, 1, &p, Y);
    double far = 0;
    size_t a = 0, b = 0;
    for (size_t i = 0; i < n; i++)
        for (size_t j = i + 1; j < n; j++) {
            double dd = hypot(Y[2 * i] - Y[2 * j], Y[2 * i + 1] - Y[2 * j + 1]);
            if (dd > far) {
                far = dd;
                a = i;
                b = j;
            }
        }
    cr_assert(a <= 1 && b >= n - 2, "farthest pair is %zu and %zu", a, b);
}

/* Values whose squares overflow (or underflow) a double: P does not depend
 * on the scale of X (the bandwidth search absorbs it; 2008 paper, section
 * 2), so the map of 1e200 * X is the map of X up to rounding. */
Test(tsne, extreme_scales_give_the_same_map)
{
    const size_t n = 60, d = 5;
    double *X = clusters(3, 20, d, 8, 13);
    double *Xb = malloc(n * d * sizeof *Xb), *Xs = malloc(n * d * sizeof *Xs);
    double A[120], B[120], C[120];
    for (size_t k = 0; k < n * d; k++) {
        Xb[k] = X[k] * 1e200;
        Xs[k] = X[k] * 1e-200;
    }
    struct tsne_params p = TSNE_PARAMS_INIT;
    p.perplexity = 10;
    p.iters = 10; /* short: rounding differences grow in the early phase */
    run_ok(X, n, d, &p, A);
    run_ok(Xb, n, d, &p, B);
    run_ok(Xs, n, d, &p, C);
    for (size_t k = 0; k < 2 * n; k++) {
        cr_assert_float_eq(A[k], B[k], 1e-6 * fabs(A[k]) + 1e-9, "large: %zu %g %g", k, A[k], B[k]);
        cr_assert_float_eq(A[k], C[k], 1e-6 * fabs(A[k]) + 1e-9, "small: %zu %g %g", k, A[k], C[k]);
    }
    free(X);
    free(Xb);
    free(Xs);
}

Test(tsne, bad_input_is_reported)
{
    double X[12] = { 0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11 }, Y[12];
    struct tsne_params p = TSNE_PARAMS_INIT;
    struct err e = ERR_INIT;

    cr_assert_eq(tsne_run(X, 3, 4, &p, Y, &e), -1);
    cr_assert_eq(e.code, ERR_INPUT);
    cr_assert(strstr(e.msg, "at least 4 points, got 3"), "%s", e.msg);

    err_clear(&e);
    X[7] = NAN;
    cr_assert_eq(tsne_run(X, 6, 2, &p, Y, &e), -1);
    cr_assert(strstr(e.msg, "point 4, dimension 2 is not a finite number"), "%s", e.msg);
    X[7] = INFINITY;
    err_clear(&e);
    cr_assert_eq(tsne_affinities(X, 6, 2, 1.5, Y, &e), -1);
    cr_assert(strstr(e.msg, "not a finite number"), "%s", e.msg);
    X[7] = 7;

    const double bad_perp[] = { 0.5, 0.0, -3, NAN, INFINITY };
    for (size_t k = 0; k < sizeof bad_perp / sizeof bad_perp[0]; k++) {
        err_clear(&e);
        p.perplexity = bad_perp[k];
        cr_assert_eq(tsne_run(X, 6, 2, &p, Y, &e), -1);
        cr_assert(strstr(e.msg, "perplexity"), "%s", e.msg);
        cr_assert(strstr(e.msg, "out of range"), "%s", e.msg);
    }
    p.perplexity = 1.5;

    err_clear(&e);
    p.iters = 0;
    cr_assert_eq(tsne_run(X, 6, 2, &p, Y, &e), -1);
    cr_assert(strstr(e.msg, "iterations 0 is out of range"), "%s", e.msg);
    p.iters = 10;

    err_clear(&e);
    p.theta = -0.1;
    cr_assert_eq(tsne_run(X, 6, 2, &p, Y, &e), -1);
    cr_assert(strstr(e.msg, "theta"), "%s", e.msg);
    p.theta = 0.5;

    err_clear(&e);
    cr_assert_eq(tsne_run(X, 6, 0, &p, Y, &e), -1);
    cr_assert(strstr(e.msg, "no dimensions"), "%s", e.msg);

    /* The same input with valid parameters works: the errors came from the
     * values changed above, not from the fixture. */
    err_clear(&e);
    cr_assert_eq(tsne_run(X, 6, 2, &p, Y, &e), 0, "%s", e.msg);
}
