/* synth.c: synthetic sample streams with known passes, for the segmentation tests. */
#include "synth.h"

#include <math.h>
#include <stddef.h>
#include <stdint.h>

long SYN_Count(const SYN_Stream *s) { return (long)floor((s->t_end - s->t0) / s->period_s) + 1; }

/* Trapezoid pulse: ramps centred on the half-power points. */
static double pulse(const SYN_Pass *p, double t)
{
  double a = p->start, b = p->start + p->duration, r = p->ramp_s;
  if (r <= 0.0)
    return (t >= a && t < b) ? p->net_w : 0.0;
  if (t < a - r / 2 || t > b + r / 2)
    return 0.0;
  if (t < a + r / 2)
    return p->net_w * (t - (a - r / 2)) / r;
  if (t > b - r / 2)
    return p->net_w * ((b + r / 2) - t) / r;
  return p->net_w;
}

double SYN_NetPower(const SYN_Stream *s, double t)
{
  double p = 0.0;
  for (int k = 0; k < s->n_passes; k++)
    p += pulse(&s->passes[k], t);
  return p;
}

double SYN_PassEnergy(const SYN_Pass *p) { return p->net_w * p->duration; }

/* Deterministic normal noise from a counter-based hash (no global state). */
static double gauss(unsigned seed, long i)
{
  uint64_t x = (uint64_t)seed * 0x9E3779B97F4A7C15ull ^ (uint64_t)i * 0xBF58476D1CE4E5B9ull;
  double u[2];
  for (int k = 0; k < 2; k++) {
    x += 0x9E3779B97F4A7C15ull;
    uint64_t z = x;
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
    z ^= z >> 31;
    u[k] = ((double)(z >> 11) + 0.5) / 9007199254740992.0;
  }
  return sqrt(-2.0 * log(u[0])) * cos(2.0 * M_PI * u[1]);
}

void SYN_Sample(const SYN_Stream *s, long i, SMP_Sample *out)
{
  double t = s->t0 + i * s->period_s;
  SMP_Clear(out, t);
  for (int g = 0; g < s->n_gaps; g++)
    if (t >= s->gap_from[g] && t < s->gap_to[g])
      return;
  out->spindle_power_w = s->idle_w + s->drift_w_per_s * (t - s->t0) + SYN_NetPower(s, t) +
                         s->noise_w * gauss(s->seed, i);
  out->spindle_speed_rpm = s->rpm;
  out->wheel_diameter_mm = s->wheel_diameter_mm;
  /* Axis values of the nearest pass that has begun: they change at reversals. */
  const SYN_Pass *cur = NULL;
  for (int k = 0; k < s->n_passes; k++)
    if (s->passes[k].start - s->passes[k].ramp_s <= t + 0.5 * s->period_s)
      cur = &s->passes[k];
  if (!cur && s->n_passes)
    cur = &s->passes[0];
  if (cur) {
    out->infeed_position_mm = cur->infeed_mm;
    out->work_speed_mm_min = cur->work_speed_mm_min;
    out->dress_count = cur->dress_count;
  }
  if (s->with_flag) {
    int on = 0;
    for (int k = 0; k < s->n_passes; k++)
      if (t >= s->passes[k].start && t < s->passes[k].start + s->passes[k].duration)
        on = 1;
    out->grinding = on;
  }
}
