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

#include <string.h>

typedef double v4d __attribute__((vector_size(4 * sizeof(double))));

/* Unaligned loads and stores (memcpy: no alignment or aliasing
 * assumption; compiled to single moves).  Macros, not functions: a v4d
 * passed by value outside the AVX copy trips GCC's ABI warning. */
#define VEC4_LOAD(v, p) memcpy(&(v), (p), sizeof(v4d))
#define VEC4_STORE(p, v) memcpy((p), &(v), sizeof(v4d))
#define VEC4_SPLAT(a) ((v4d){ (a), (a), (a), (a) })

#if defined(__x86_64__) && defined(__linux__) && (defined(__GNUC__) || defined(__clang__))
#define VEC4_CLONES __attribute__((target_clones("avx2", "default")))
#else
#define VEC4_CLONES
#endif

/* Unroll a loop over a small constant count in full (accumulator arrays
 * then live in registers). */
#define VEC4_UNROLL _Pragma("GCC unroll 8")

#endif
