/* stats.c -- incomplete beta and Student's t, the corrected resampled t-test,
 * and the inverse power law learning-curve fit.  Citations are in stats.h.
 */
#include "vecsift/stats.h"

#include <math.h>
#include <string.h>

#include "vecsift/err.h"

/* ---- incomplete beta and Student's t ---- */

/* Continued fraction for I_x(a, b), modified Lentz method (Numerical Recipes,
 * 3rd ed., section 6.4, "betacf"; Lentz 1976). */
static double betacf(double a, double b, double x)
{
    const double tiny = 1e-300, eps = 1e-16;
    double qab = a + b, qap = a + 1, qam = a - 1;
    double c = 1, d = 1 - qab * x / qap;
    if (fabs(d) < tiny)
        d = tiny;
    d = 1 / d;
    double h = d;
    for (int m = 1; m <= 10000; m++) {
        int m2 = 2 * m;
        double aa = m * (b - m) * x / ((qam + m2) * (a + m2));
        d = 1 + aa * d;
        if (fabs(d) < tiny)
            d = tiny;
        c = 1 + aa / c;
        if (fabs(c) < tiny)
            c = tiny;
        d = 1 / d;
        h *= d * c;
        aa = -(a + m) * (qab + m) * x / ((a + m2) * (qap + m2));
        d = 1 + aa * d;
        if (fabs(d) < tiny)
            d = tiny;
        c = 1 + aa / c;
        if (fabs(c) < tiny)
            c = tiny;
        d = 1 / d;
        double del = d * c;
        h *= del;
        if (fabs(del - 1) <= eps)
            break;
    }
    return h;
}

double stats_betainc(double a, double b, double x)
{
    if (!(a > 0) || !(b > 0) || !(x >= 0 && x <= 1))
        return NAN;
    if (x == 0 || x == 1)
        return x;
    double lbt = lgamma(a + b) - lgamma(a) - lgamma(b) + a * log(x) + b * log1p(-x);
    /* The fraction converges fast for x < (a+1)/(a+b+2); otherwise use the
     * symmetry I_x(a, b) = 1 - I_{1-x}(b, a). */
    if (x < (a + 1) / (a + b + 2))
        return exp(lbt) * betacf(a, b, x) / a;
    return 1 - exp(lbt) * betacf(b, a, 1 - x) / b;
}

/* P(|T| >= |t|) = I_{df/(df+t^2)}(df/2, 1/2). */
static double t_two_tail(double t, double df)
{
    if (isinf(t))
        return 0;
    return stats_betainc(df / 2, 0.5, df / (df + t * t));
}

double stats_t_cdf(double t, double df)
{
    double tail = 0.5 * t_two_tail(t, df);
    return t > 0 ? 1 - tail : tail;
}

/* ---- corrected resampled t-test ---- */

int stats_corrected_ttest(const double *d, size_t J, double n_test, double n_train,
                          struct stats_ttest *out, struct err *e)
{
    memset(out, 0, sizeof *out);
    if (J < 2)
        return err_set(e, NULL, 0, "the t-test needs at least 2 fold differences, got %zu", J);
    if (!(n_test > 0) || !(n_train > 0))
        return err_set(e, NULL, 0, "test and training sizes must be positive (%g, %g)", n_test, n_train);
    double s = 0;
    for (size_t j = 0; j < J; j++) {
        if (!isfinite(d[j]))
            return err_set(e, NULL, 0, "fold difference %zu is not a finite number", j + 1);
        s += d[j];
    }
    double mean = s / (double)J, ss = 0;
    for (size_t j = 0; j < J; j++)
        ss += (d[j] - mean) * (d[j] - mean);
    out->mean = mean;
    out->var = ss / (double)(J - 1);
    out->df = (double)(J - 1);
    if (out->var == 0) {
        /* Every fold gave the same difference: no spread to test against.
         * A zero difference is no evidence either way; any other is taken
         * as certain (t infinite), and flagged so reports can say so. */
        out->degenerate = 1;
        out->t = mean == 0 ? 0 : copysign(INFINITY, mean);
    } else {
        out->t = mean / sqrt((1.0 / (double)J + n_test / n_train) * out->var);
    }
    double tail = 0.5 * t_two_tail(out->t, out->df);    /* P(T >= |t|) */
    out->p_two_sided = fmin(1.0, 2 * tail);
    out->p_greater = out->t >= 0 ? tail : 1 - tail;
    out->p_less = out->t <= 0 ? tail : 1 - tail;
    return 0;
}

/* ---- inverse power law fit ---- */

static double rss_of(const double *n, const double *y, size_t m, double a, double b, double c)
{
    double s = 0;
    for (size_t i = 0; i < m; i++) {
        double r = a * pow(n[i], -b) + c - y[i];
        s += r * r;
    }
    return s;
}

/* For fixed b the model is linear in (a, c): ordinary least squares. */
static double fit_linear(const double *n, const double *y, size_t m, double b, double *a, double *c)
{
    double mx = 0, my = 0;
    for (size_t i = 0; i < m; i++) {
        mx += pow(n[i], -b);
        my += y[i];
    }
    mx /= (double)m;
    my /= (double)m;
    double sxy = 0, sxx = 0;
    for (size_t i = 0; i < m; i++) {
        double dx = pow(n[i], -b) - mx;
        sxy += dx * (y[i] - my);
        sxx += dx * dx;
    }
    *a = sxx > 0 ? sxy / sxx : 0;
    *c = my - *a * mx;
    return rss_of(n, y, m, *a, b, *c);
}

/* Solve the 3x3 system A x = g by Gaussian elimination with partial
 * pivoting.  Returns -1 when A is singular. */
static int solve3(double A[3][3], double g[3], double x[3])
{
    for (int col = 0; col < 3; col++) {
        int p = col;
        for (int r = col + 1; r < 3; r++)
            if (fabs(A[r][col]) > fabs(A[p][col]))
                p = r;
        if (A[p][col] == 0)
            return -1;
        for (int k = 0; k < 3; k++) {
            double t = A[col][k];
            A[col][k] = A[p][k];
            A[p][k] = t;
        }
        double t = g[col];
        g[col] = g[p];
        g[p] = t;
        for (int r = col + 1; r < 3; r++) {
            double f = A[r][col] / A[col][col];
            for (int k = col; k < 3; k++)
                A[r][k] -= f * A[col][k];
            g[r] -= f * g[col];
        }
    }
    for (int r = 2; r >= 0; r--) {
        double s = g[r];
        for (int k = r + 1; k < 3; k++)
            s -= A[r][k] * x[k];
        x[r] = s / A[r][r];
    }
    return 0;
}

int stats_powerlaw_fit(const double *n, const double *y, size_t m,
                       struct stats_powerlaw *out, struct err *e)
{
    memset(out, 0, sizeof *out);
    out->why = "";
    if (m < 3)
        return err_set(e, NULL, 0, "a power law fit needs at least 3 points, got %zu", m);
    size_t lo = 0, hi = 0, distinct = 1;
    for (size_t i = 0; i < m; i++) {
        if (!(n[i] > 0) || !isfinite(n[i]) || !isfinite(y[i]))
            return err_set(e, NULL, 0, "point %zu: size %g and error %g must be finite, size > 0",
                           i + 1, n[i], y[i]);
        if (n[i] < n[lo])
            lo = i;
        if (n[i] > n[hi])
            hi = i;
    }
    for (size_t i = 1; i < m; i++) {
        int seen = 0;
        for (size_t j = 0; j < i; j++)
            seen |= n[j] == n[i];
        distinct += !seen;
    }
    if (distinct < 3)
        return err_set(e, NULL, 0, "a power law fit needs at least 3 distinct sizes, got %zu", distinct);

    /* Start: the best b on a log grid over [1e-3, 5], a and c solved linearly. */
    double a = 0, b = 0, c = 0, best = INFINITY;
    for (int g = 0; g <= 400; g++) {
        double bg = 1e-3 * pow(5e3, g / 400.0), ag, cg;
        double r = fit_linear(n, y, m, bg, &ag, &cg);
        if (r < best) {
            best = r;
            a = ag;
            b = bg;
            c = cg;
        }
    }

    /* Levenberg-Marquardt on r_i = a n^-b + c - y_i, with Marquardt's
     * scaling of the damping by diag(J^T J). */
    double lambda = 1e-3, rss = best;
    int it = 0, converged = rss == 0;
    for (; it < 1000 && !converged; it++) {
        double JtJ[3][3] = { { 0 } }, Jtr[3] = { 0 };
        for (size_t i = 0; i < m; i++) {
            double p = pow(n[i], -b);
            double r = a * p + c - y[i];
            double J[3] = { p, -a * p * log(n[i]), 1 };
            for (int u = 0; u < 3; u++) {
                Jtr[u] += J[u] * r;
                for (int v = 0; v < 3; v++)
                    JtJ[u][v] += J[u] * J[v];
            }
        }
        for (;;) {
            double A[3][3], g[3], step[3];
            memcpy(A, JtJ, sizeof A);
            for (int u = 0; u < 3; u++) {
                A[u][u] += lambda * JtJ[u][u];
                g[u] = -Jtr[u];
            }
            double na = a, nb = b, nc = c, r2 = INFINITY;
            if (solve3(A, g, step) == 0) {
                na += step[0];
                nb += step[1];
                nc += step[2];
                r2 = rss_of(n, y, m, na, nb, nc);
            }
            if (r2 < rss) {
                double gain = rss - r2;
                a = na;
                b = nb;
                c = nc;
                lambda = fmax(lambda / 10, 1e-12);
                converged = gain <= 1e-15 * rss || r2 == 0;
                rss = r2;
                break;
            }
            lambda *= 10;
            if (lambda > 1e16) {
                /* No step lowers the residual any more: at the minimum to
                 * machine precision. */
                converged = 1;
                break;
            }
        }
    }
    out->a = a;
    out->b = b;
    out->c = c;
    out->rss = rss;
    out->n_points = m;
    out->iterations = it;
    out->converged = converged;
    out->n_max = n[hi];
    out->at_2n = stats_powerlaw_eval(out, 2 * n[hi]);
    out->reliable = 0;
    if (m < 4)
        out->why = "fewer than 4 points";
    else if (!(y[hi] < y[lo]))
        out->why = "error does not fall as rows are added";
    else if (!converged)
        out->why = "the fit did not converge";
    else if (!(b > 0 && b <= 2))
        out->why = "exponent b outside (0, 2]";
    else if (c < 0)
        out->why = "error levels off below 0";
    else
        out->reliable = 1;
    return 0;
}

double stats_powerlaw_eval(const struct stats_powerlaw *f, double n)
{
    return f->a * pow(n, -f->b) + f->c;
}
