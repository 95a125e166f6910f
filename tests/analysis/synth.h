/* synth.h: synthetic sample streams with known passes, for the segmentation tests. */
#ifndef GRITLINE_TEST_SYNTH_H
#define GRITLINE_TEST_SYNTH_H

#include "sample.h"

typedef struct SYN_Pass {
  double start;          /* s, half-power point of the rising edge */
  double duration;       /* s, between the half-power points */
  double net_w;          /* W, net power on the plateau */
  double ramp_s;         /* s, linear ramp time at entry and exit (0 = step) */
  double infeed_mm;      /* infeed position during the pass */
  double work_speed_mm_min;
  double dress_count;
} SYN_Pass;

typedef struct SYN_Stream {
  double period_s;       /* sample period */
  double t0, t_end;      /* s */
  double idle_w;         /* idle power at t0 */
  double drift_w_per_s;  /* linear idle drift */
  double noise_w;        /* standard deviation of the added noise */
  double rpm;            /* spindle speed */
  double wheel_diameter_mm;
  int with_flag;         /* serve the grinding flag channel */
  const SYN_Pass *passes;
  int n_passes;
  double gap_from[4], gap_to[4]; /* intervals with missing samples */
  int n_gaps;
  unsigned seed;
} SYN_Stream;

/* Number of samples of the stream. */
long SYN_Count(const SYN_Stream *s);
/* Sample i (0-based), deterministic for a given seed. */
void SYN_Sample(const SYN_Stream *s, long i, SMP_Sample *out);
/* Net power of the model at time t (no noise), and the true energy of pass k. */
double SYN_NetPower(const SYN_Stream *s, double t);
double SYN_PassEnergy(const SYN_Pass *p);

#endif
