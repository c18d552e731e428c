/* rng: a small seeded generator (xoshiro256**, Blackman and Vigna 2018) with Gaussian draws,
 * so the synthetic study is the same on every machine for the same seed. */
#ifndef SYNTH_RNG_H
#define SYNTH_RNG_H

#include <stdint.h>

typedef struct rng {
    uint64_t s[4];
    double spare;
    int has_spare;
} rng;

void rng_seed(rng *r, uint64_t seed);
uint64_t rng_next(rng *r);
double rng_uniform(rng *r);     /* [0, 1) */
double rng_gauss(rng *r);       /* standard normal */

#endif
