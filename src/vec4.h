/* vec4.h -- private to src/: four-lane double vectors for the numeric
 * kernels of linear.c and lbfgs.c.  Not a module and not API.
 *
 * GCC/Clang vector extension: lane-wise IEEE multiplies and adds, lowered
 * to SSE2 pairs on plain x86-64 and to scalar code elsewhere.  On x86-64
 * Linux a function marked VEC4_CLONES is also compiled for AVX2 and the
 * loader picks that copy where the CPU has it (target_clones, an ifunc).
 * AVX2 does not enable FMA, and the build never contracts a * b + c (ISO
 * C mode), so both copies give the same bits: only speed differs.
 */
#ifndef VECSIFT_VEC4_H
#define VECSIFT_VEC4_H

#include <stdint.h>
#include <string.h>

typedef double v4d __attribute__((vector_size(4 * sizeof(double))));
/* Lane masks and bit patterns of a v4d: v4d comparisons give v4i lanes
 * of all ones or all zeros; (v4i) and (v4d) casts reinterpret the bits. */
typedef int64_t v4i __attribute__((vector_size(4 * sizeof(int64_t))));

/* Unaligned loads and stores (memcpy: no alignment or aliasing
 * assumption; compiled to single moves).  Macros, not functions: a v4d
 * passed by value outside the AVX copy trips GCC's ABI warning. */
#define VEC4_LOAD(v, p) memcpy(&(v), (p), sizeof(v4d))
#define VEC4_STORE(p, v) memcpy((p), &(v), sizeof(v4d))
#define VEC4_SPLAT(a) ((v4d){ (a), (a), (a), (a) })
#define VEC4_SPLAT_BITS(a) ((v4i){ (a), (a), (a), (a) })

#if defined(__x86_64__) && defined(__linux__) && (defined(__GNUC__) || defined(__clang__))
#define VEC4_CLONES __attribute__((target_clones("avx2", "default")))
#else
#define VEC4_CLONES
#endif

/* Unroll a loop over a small constant count in full (accumulator arrays
 * then live in registers). */
#define VEC4_UNROLL _Pragma("GCC unroll 8")

/* a . b over n entries: lane l of s0 sums entries j = l mod 8, lane l of
 * s1 entries j = 4 + l mod 8; then ((s0 + s1) lanes (0 + 1) + (2 + 3)) +
 * the n mod 8 entries left, in order.  Eight partial sums hide the
 * adder's latency; the order is fixed, so every copy gives the same bits.
 * vec4_dot and vec4_axpy are inlined into VEC4_CLONES functions. */
static inline __attribute__((always_inline)) double vec4_dot(size_t n, const double *a, const double *b)
{
    v4d s0 = VEC4_SPLAT(0.0), s1 = s0, x, y;
    size_t j = 0;
    for (; j + 8 <= n; j += 8) {
        VEC4_LOAD(x, a + j);
        VEC4_LOAD(y, b + j);
        s0 += x * y;
        VEC4_LOAD(x, a + j + 4);
        VEC4_LOAD(y, b + j + 4);
        s1 += x * y;
    }
    s0 += s1;
    double s = (s0[0] + s0[1]) + (s0[2] + s0[3]);
    for (; j < n; j++)
        s += a[j] * b[j];
    return s;
}

/* y[j] = x[j] + a * d[j] for j < n (y may be x): lane-wise, the same bits
 * as the plain loop. */
static inline __attribute__((always_inline)) void vec4_axpy(size_t n, double a, const double *d, const double *x,
                                                            double *y)
{
    v4d av = VEC4_SPLAT(a), xv, dv;
    size_t j = 0;
    for (; j + 4 <= n; j += 4) {
        VEC4_LOAD(xv, x + j);
        VEC4_LOAD(dv, d + j);
        xv += av * dv;
        VEC4_STORE(y + j, xv);
    }
    for (; j < n; j++)
        y[j] = x[j] + a * d[j];
}

#endif
