/* stats.h -- the statistics evaluation needs beyond counting: a t-test for
 * comparing two set-ups over cross-validation folds, Student's t
 * distribution, and an inverse power law fitted to a learning curve.
 * Pure functions of their inputs; nothing is printed.
 */
#ifndef VECSIFT_STATS_H
#define VECSIFT_STATS_H

#include <stddef.h>

struct err;

/* Regularized incomplete beta function I_x(a, b), a, b > 0, x in [0, 1].
 * Continued fraction evaluated by the modified Lentz method, as in Press,
 * Teukolsky, Vetterling and Flannery, Numerical Recipes (3rd ed., 2007),
 * section 6.4.  Returns NAN for arguments out of range. */
double stats_betainc(double a, double b, double x);

/* Student's t cumulative distribution P(T <= t) with 'df' > 0 degrees of
 * freedom (df need not be an integer).  Infinite t gives 0 or 1. */
double stats_t_cdf(double t, double df);

struct stats_ttest {
    double mean;        /* mean of the differences d_j */
    double var;         /* their sample variance (J - 1) */
    double t;           /* statistic; +-INFINITY when var == 0 and mean != 0 */
    double df;          /* J - 1 */
    double p_two_sided; /* P(|T| >= |t|) */
    double p_greater;   /* P(T >= t): small when the mean difference is > 0 */
    double p_less;      /* P(T <= t) */
    int degenerate;     /* 1 when var == 0: t is 0 (mean 0, p = 1) or infinite (p = 0) */
};

/* Corrected resampled t-test, Nadeau and Bengio (2003), "Inference for the
 * Generalization Error", Machine Learning 52: for J = k*r per-fold score
 * differences d (between two set-ups scored on the same folds),
 *     t = mean(d) / sqrt((1/J + n_test/n_train) * var(d)),
 * with J - 1 degrees of freedom.  The n_test/n_train term widens the plain
 * paired t-test for the overlap between training sets of different folds.
 * 'n_test' and 'n_train' are rows per test and training fold (for k-fold,
 * n_test/n_train is about 1/(k-1)).  Returns 0, or -1 with 'e' set when
 * J < 2, a difference is not finite, or n_test or n_train is not positive. */
int stats_corrected_ttest(const double *d, size_t J, double n_test, double n_train,
                          struct stats_ttest *out, struct err *e);

/* error(n) = a * n^(-b) + c: an inverse power law learning curve, fitted by
 * unweighted nonlinear least squares (the unweighted fit Figueroa,
 * Zeng-Treitler, Kandula and Ngo (2012), "Predicting sample size required for
 * classification performance", BMC Med Inform Decis Mak 12:8, use as their
 * baseline) with our own Levenberg-Marquardt iteration (Marquardt 1963, "An
 * algorithm for least-squares estimation of nonlinear parameters"), started
 * from the best of a grid over b with a and c solved linearly. */
struct stats_powerlaw {
    double a, b, c;
    double rss;         /* residual sum of squares */
    size_t n_points;
    int iterations;
    int converged;
    int reliable;       /* 0 when 'why' says the fit should not be trusted */
    const char *why;    /* static text, "" when reliable */
    double n_max;       /* largest n fitted */
    double at_2n;       /* predicted error at 2 * n_max */
};

/* Fit to m points (n[i] > 0, y[i] finite).  Unreliable (reliable = 0, with
 * the reason in 'why'): fewer than 4 points; error at the largest n not below
 * the error at the smallest; b outside (0, 2]; c < 0; no convergence.
 * Returns 0, or -1 with 'e' set for fewer than 3 points, fewer than 3
 * distinct n, or a bad value. */
int stats_powerlaw_fit(const double *n, const double *y, size_t m,
                       struct stats_powerlaw *out, struct err *e);

/* a * n^(-b) + c for a fitted curve. */
double stats_powerlaw_eval(const struct stats_powerlaw *f, double n);

#endif
