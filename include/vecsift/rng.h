/* rng.h -- seeded pseudo-random numbers: xoshiro256** seeded by splitmix64.
 *
 * Blackman and Vigna, "Scrambled Linear Pseudorandom Number Generators"
 * (ACM TOMS 2021).  No module calls rand(); every random choice draws from a
 * struct rng passed in by the caller (STYLE C12), so runs repeat from --seed.
 */
#ifndef VECSIFT_RNG_H
#define VECSIFT_RNG_H

#include <stddef.h>
#include <stdint.h>

struct rng {
    uint64_t s[4];
};

/* Seed from one 64-bit value (splitmix64 expands it to the state). */
void rng_seed(struct rng *r, uint64_t seed);
/* Next 64 random bits. */
uint64_t rng_next(struct rng *r);
/* Uniform double in [0, 1) with 53 random bits. */
double rng_uniform(struct rng *r);
/* Uniform integer in [0, n); n > 0.  Unbiased (Lemire's method). */
uint64_t rng_below(struct rng *r, uint64_t n);
/* Standard normal deviate (Marsaglia polar method). */
double rng_normal(struct rng *r);
/* Fisher-Yates shuffle of a[0..n). */
void rng_shuffle(struct rng *r, size_t *a, size_t n);
/* A child generator for stream 'k' (folds, threads): deterministic in
 * (parent seed state, k) and independent of the order children are made. */
void rng_child(const struct rng *parent, uint64_t k, struct rng *child);

#endif
