/* rng.c: counter-based pseudo-random numbers (splitmix64 mixing, Box-Muller normals). */
#include "rng.h"

#include <math.h>

/* splitmix64's finaliser: cheap and good enough for noise; not for secrets. */
static uint64_t mix64(uint64_t z)
{
  z += 0x9E3779B97F4A7C15ull;
  z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
  z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
  return z ^ (z >> 31);
}

uint64_t SIM_Hash64(uint64_t seed, uint64_t counter)
{
  return mix64(mix64(seed) ^ (counter * 0xD1B54A32D192ED03ull));
}

double SIM_Uniform(uint64_t seed, uint64_t counter)
{
  /* 53 random bits, shifted by half a step so 0 cannot occur. */
  return ((double)(SIM_Hash64(seed, counter) >> 11) + 0.5) * (1.0 / 9007199254740992.0);
}

double SIM_Gauss(uint64_t seed, uint64_t counter)
{
  double u1 = SIM_Uniform(seed, 2 * counter);
  double u2 = SIM_Uniform(seed ^ 0x5DEECE66Dull, 2 * counter + 1);
  return sqrt(-2.0 * log(u1)) * cos(2.0 * M_PI * u2);
}

void SIM_RngSeed(SIM_Rng *r, uint64_t seed) { r->state = seed; }

uint64_t SIM_RngNext(SIM_Rng *r)
{
  r->state += 0x9E3779B97F4A7C15ull;
  return mix64(r->state);
}
