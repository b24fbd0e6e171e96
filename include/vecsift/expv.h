/* expv.h -- the exponential of many doubles at once, with the same bits on
 * every CPU.
 *
 * The softmax of logistic regression takes K exponentials per row in every
 * evaluation of the objective: thousands of calls to the C library's exp()
 * per fit, one at a time.  expv computes them four at a time with plain
 * IEEE multiplies and adds in a fixed order (no fused multiply-add, no
 * table), so the vector and the scalar copies of the code, and any CPU,
 * give identical results; glibc's exp() picks an FMA variant where the CPU
 * has one, which is not promised to round the same.
 *
 * Accuracy: within 1 ulp of the true value over the whole range, checked
 * against the C library's long-double expl() in test_expv.c (largest
 * error seen 0.65 ulp, 0.79 for subnormal results).  exp(-inf) = 0,
 * exp(+inf) = +inf, exp(NaN) = NaN; results below the smallest subnormal
 * are 0, above DBL_MAX +inf.
 */
#ifndef VECSIFT_EXPV_H
#define VECSIFT_EXPV_H

#include <stddef.h>

/* x[i] <- exp(x[i]) for i < n. */
void expv(double *x, size_t n);

/* exp(x) for one value: the same bits expv gives. */
double expv1(double x);

#endif
