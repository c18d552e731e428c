/* rng: xoshiro256** seeded through splitmix64 (Vigna), normals by the polar method
 * (Marsaglia and Bray 1964). */
#include "rng.h"

#include <math.h>

static uint64_t splitmix64(uint64_t *x)
{
    uint64_t z = (*x += 0x9e3779b97f4a7c15ull);
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ull;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebull;
    return z ^ (z >> 31);
}

void rng_seed(rng *r, uint64_t seed)
{
    for (int i = 0; i < 4; i++)
        r->s[i] = splitmix64(&seed);
    r->has_spare = 0;
}

static uint64_t rotl(uint64_t x, int k) { return (x << k) | (x >> (64 - k)); }

uint64_t rng_next(rng *r)
{
    uint64_t *s = r->s;
    uint64_t result = rotl(s[1] * 5, 7) * 9, t = s[1] << 17;
    s[2] ^= s[0];
    s[3] ^= s[1];
    s[1] ^= s[2];
    s[0] ^= s[3];
    s[2] ^= t;
    s[3] = rotl(s[3], 45);
    return result;
}

double rng_uniform(rng *r) { return (double)(rng_next(r) >> 11) * 0x1.0p-53; }

double rng_gauss(rng *r)
{
    if (r->has_spare) {
        r->has_spare = 0;
        return r->spare;
    }
    double u, v, s;
    do {
        u = 2 * rng_uniform(r) - 1;
        v = 2 * rng_uniform(r) - 1;
        s = u * u + v * v;
    } while (s >= 1 || s == 0);
    double f = sqrt(-2 * log(s) / s);
    r->spare = v * f;
    r->has_spare = 1;
    return u * f;
}
