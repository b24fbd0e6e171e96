/* rng.c -- xoshiro256** and splitmix64 (Blackman and Vigna 2021). */
#include "vecsift/rng.h"

#include <math.h>

static uint64_t splitmix64(uint64_t *x)
{
    uint64_t z = (*x += 0x9e3779b97f4a7c15ULL);
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
    return z ^ (z >> 31);
}

void rng_seed(struct rng *r, uint64_t seed)
{
    uint64_t x = seed;
    for (int i = 0; i < 4; i++)
        r->s[i] = splitmix64(&x);
}

static inline uint64_t rotl(uint64_t x, int k)
{
    return (x << k) | (x >> (64 - k));
}

uint64_t rng_next(struct rng *r)
{
    uint64_t *s = r->s;
    uint64_t result = rotl(s[1] * 5, 7) * 9;
    uint64_t t = s[1] << 17;
    s[2] ^= s[0];
    s[3] ^= s[1];
    s[1] ^= s[2];
    s[0] ^= s[3];
    s[2] ^= t;
    s[3] = rotl(s[3], 45);
    return result;
}

double rng_uniform(struct rng *r)
{
    return (double)(rng_next(r) >> 11) * 0x1.0p-53;
}

uint64_t rng_below(struct rng *r, uint64_t n)
{
    /* Lemire, "Fast Random Integer Generation in an Interval" (2019). */
    unsigned __int128 m = (unsigned __int128)rng_next(r) * n;
    uint64_t l = (uint64_t)m;
    if (l < n) {
        uint64_t t = -n % n;
        while (l < t) {
            m = (unsigned __int128)rng_next(r) * n;
            l = (uint64_t)m;
        }
    }
    return (uint64_t)(m >> 64);
}

double rng_normal(struct rng *r)
{
    double u, v, s;
    do {
        u = 2.0 * rng_uniform(r) - 1.0;
        v = 2.0 * rng_uniform(r) - 1.0;
        s = u * u + v * v;
    } while (s >= 1.0 || s == 0.0);
    return u * sqrt(-2.0 * log(s) / s);
}

void rng_shuffle(struct rng *r, size_t *a, size_t n)
{
    for (size_t i = n; i > 1; i--) {
        size_t j = (size_t)rng_below(r, i);
        size_t t = a[i - 1];
        a[i - 1] = a[j];
        a[j] = t;
    }
}

void rng_child(const struct rng *parent, uint64_t k, struct rng *child)
{
    uint64_t x = parent->s[0] ^ rotl(parent->s[1], 17) ^ rotl(parent->s[2], 31) ^ parent->s[3];
    x ^= splitmix64(&k);
    rng_seed(child, x);
}
