/*
 * lantern/rng.h - random streams.
 *
 * xoshiro256** (Blackman & Vigna 2021, ACM TOMS 47, 36), seeded through
 * splitmix64 from (seed, stream): every chain's stream comes from the run's
 * seed and the chain's index only, never from a clock or a shared state,
 * so a seeded run gives the same numbers with any thread count. The state
 * is four words, so a checkpoint can hold it exactly; a stream is a plain
 * function of (seed, stream, the number of calls so far). Any change to
 * these functions changes every seeded result: the unit tests pin their
 * output.
 */
#ifndef LANTERN_RNG_H
#define LANTERN_RNG_H

#include <stdint.h>

typedef struct lt_rng {
    uint64_t s[4];
} lt_rng;

void lt_rng_seed(lt_rng *r, uint64_t seed, uint64_t stream);
uint64_t lt_rng_next(lt_rng *r);
double lt_rng_uniform(lt_rng *r); /* in [0, 1), 53 random bits */
double lt_rng_normal(lt_rng *r);  /* standard normal (Box-Muller, one of the pair) */

#endif
