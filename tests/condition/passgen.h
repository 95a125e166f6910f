/* passgen.h: synthetic pass records from the grinding formulas, and a seeded random source, for the condition tests. */
#ifndef GRITLINE_TEST_PASSGEN_H
#define GRITLINE_TEST_PASSGEN_H

#include <stdint.h>

#include "segment.h"

/* Conditions of the synthetic job: surface grinding at Alder Street Works, cell B,
 * sg4, wheel "cx60-vitrified". The defaults give aggressiveness 17.5. */
typedef struct PGN_Job {
  double ds_mm;          /* wheel diameter */
  double vs_m_s;         /* wheel surface speed */
  double b_mm;           /* grinding width */
  double ae_mm;          /* depth of cut */
  double vw_mm_min;      /* work speed */
  double duration_s;     /* contact time per pass */
  double interval_s;     /* start to start of consecutive passes */
  double dress_count;    /* dress counter */
  double peak_factor;    /* peak / mean net power */
} PGN_Job;

void PGN_DefaultJob(PGN_Job *j);
/* Pass number n (1-based) with specific energy u [J/mm^3]; every figure
 * derived with the GRD_ and UNT_ functions, as the segmentation does. */
void PGN_Make(const PGN_Job *j, unsigned long n, double u_j_mm3, SEG_Pass *p);
/* Removed volume per unit width of one pass, mm^3/mm. */
double PGN_VPrimePerPass(const PGN_Job *j);

/* splitmix64 (Steele, Lea and Flood, 2014): small, seedable, deterministic. */
typedef struct PGN_Rng {
  uint64_t s;
} PGN_Rng;
void PGN_Seed(PGN_Rng *r, uint64_t seed);
double PGN_Uniform(PGN_Rng *r);   /* (0, 1) */
double PGN_Normal(PGN_Rng *r);    /* standard normal (Box-Muller) */

#endif
