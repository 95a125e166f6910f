/* rng.h: counter-based pseudo-random numbers: the simulator's noise is a function of (seed, time). */
#ifndef GRITLINE_SIM_RNG_H
#define GRITLINE_SIM_RNG_H

#include <stdint.h>

/* A well-mixed 64-bit value for (seed, counter): the same pair always gives the
 * same value, which is what lets a restarted simulator serve the same noise. */
uint64_t SIM_Hash64(uint64_t seed, uint64_t counter);
/* Uniform in (0, 1), never 0 or 1. */
double SIM_Uniform(uint64_t seed, uint64_t counter);
/* Standard normal (mean 0, sd 1) for (seed, counter). */
double SIM_Gauss(uint64_t seed, uint64_t counter);

/* A sequential stream, for values that need not be reproducible (garbage bytes). */
typedef struct SIM_Rng {
  uint64_t state; /* internal state, any value */
} SIM_Rng;

void SIM_RngSeed(SIM_Rng *r, uint64_t seed);
uint64_t SIM_RngNext(SIM_Rng *r);

#endif
