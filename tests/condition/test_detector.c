/* test_detector.c: false-alarm behaviour of the change detector and of the dulling condition (Monte Carlo). */
#include <criterion/criterion.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "condition.h"
#include "passgen.h"
#include "robust.h"

/* Siegmund's approximation of the average run length of a one-sided CUSUM
 * (Siegmund, Sequential Analysis, 1985, as quoted in Montgomery, Introduction to
 * Statistical Quality Control, CUSUM chapter; from memory):
 * ARL = (exp(-2 D b) + 2 D b - 1) / (2 D^2), D = shift - k, b = h + 1.166. */
static double siegmund(double k, double h, double shift)
{
  double d = shift - k, b = h + 1.166;
  return (exp(-2.0 * d * b) + 2.0 * d * b - 1.0) / (2.0 * d * d);
}

static double cusum_arl(double k, double h, double shift, int two_sided, int runs, uint64_t seed)
{
  PGN_Rng r;
  PGN_Seed(&r, seed);
  double total = 0.0;
  for (int i = 0; i < runs; i++) {
    RBS_Cusum up, down;
    RBS_CusumInit(&up, k, h);
    RBS_CusumInit(&down, k, h);
    long n = 0;
    for (;;) {
      double z = shift + PGN_Normal(&r);
      n++;
      int a = RBS_CusumStep(&up, z);
      if (two_sided)
        a |= RBS_CusumStep(&down, -z);
      if (a || n >= 200000)
        break;
    }
    total += (double)n;
  }
  return total / runs;
}

/* The defaults k = 0.5, h = 5 with the scatter known: in-control ARL of the
 * one-sided CUSUM about 938 (Siegmund); the two-sided scheme 465 and 10.4 for a
 * one-sigma shift (Montgomery's table of the tabular CUSUM, h = 5, k = 1/2;
 * from memory). */
Test(detector, cusum_arl_against_siegmund_and_montgomery, .timeout = 60)
{
  double arl0 = cusum_arl(0.5, 5.0, 0.0, 0, 4000, 1);
  double s0 = siegmund(0.5, 5.0, 0.0 + 1e-9);
  cr_log_info("one-sided ARL0 (k=0.5, h=5): Monte Carlo %.0f, Siegmund %.0f", arl0, s0);
  printf("one-sided ARL0 (k=0.5, h=5): Monte Carlo %.0f over 4000 runs, Siegmund %.0f\n", arl0, s0);
  cr_expect_float_eq(arl0, s0, 0.06 * s0);
  double arl1 = cusum_arl(0.5, 5.0, 1.0, 0, 20000, 2);
  printf("one-sided ARL at a 1-sigma shift: Monte Carlo %.2f, Siegmund %.2f, Montgomery 10.4\n", arl1,
         siegmund(0.5, 5.0, 1.0));
  cr_expect_float_eq(arl1, siegmund(0.5, 5.0, 1.0), 0.05 * 10.34);
  cr_expect_float_eq(arl1, 10.4, 0.05 * 10.4);
  double arl2 = cusum_arl(0.5, 5.0, 0.0, 1, 3000, 3);
  printf("two-sided ARL0: Monte Carlo %.0f, Montgomery 465\n", arl2);
  cr_expect_float_eq(arl2, 465.0, 0.07 * 465.0);
}

static CND_State st;

static void settings(CND_Settings *s)
{
  CND_DefaultSettings(s);
  s->job.width_mm = 20.0;
  snprintf(s->job.name, sizeof(s->job.name), "%s", "plate-a");
}

static int cmp(const void *a, const void *b)
{
  double x = *(const double *)a, y = *(const double *)b;
  return (x > y) - (x < y);
}

/* In practice the scatter and the sharp-wheel level are estimated from the 8
 * reference passes, so the in-control run length of the CUSUM alone is much
 * shorter than the textbook figure: measured here for 3 % lognormal scatter.
 * The reference is built by the model itself; the run that follows uses the
 * model's CUSUM recursion on ln(u / u_ref) / scatter. */
Test(detector, cusum_in_control_run_length_with_estimated_reference, .timeout = 60)
{
  enum { RUNS = 1000, CAP = 100000 };
  static double rl[RUNS];
  CND_Settings s;
  settings(&s);
  PGN_Job j;
  PGN_DefaultJob(&j);
  double mean = 0.0;
  int capped = 0;
  for (int i = 0; i < RUNS; i++) {
    char err[160];
    cr_assert_eq(CND_Init(&st, &s, err, sizeof(err)), 0, "%s", err);
    PGN_Rng r;
    PGN_Seed(&r, 1000 + (uint64_t)i);
    SEG_Pass p;
    CND_PassResult res;
    unsigned long n;
    for (n = 1; !st.cycle.ref_ready; n++) {
      PGN_Make(&j, n, 20.0 * exp(0.03 * PGN_Normal(&r)), &p);
      CND_Pass(&st, &p, &res, NULL, 0);
    }
    double uref = CYC_ReferenceEnergy(&st.cycle, p.aggressiveness);
    RBS_Cusum c;
    RBS_CusumInit(&c, s.model.cusum_k, s.model.cusum_h);
    long k = 0;
    while (k < CAP) {
      k++;
      double u = 20.0 * exp(0.03 * PGN_Normal(&r));
      if (RBS_CusumStep(&c, log(u / uref) / st.cycle.ref_scatter))
        break;
    }
    capped += k >= CAP;
    rl[i] = (double)k;
    mean += (double)k / RUNS;
  }
  qsort(rl, RUNS, sizeof(double), cmp);
  printf("CUSUM alone, reference from 8 passes, 3 %% lognormal scatter: in-control run length median %.0f, "
         "mean %.0f, 10th percentile %.0f, 90th percentile %.0f passes (%d of %d runs capped at %d)\n",
         rl[RUNS / 2], mean, rl[RUNS / 10], rl[RUNS * 9 / 10], capped, RUNS, CAP);
  cr_log_info("CUSUM in-control run length median %.0f mean %.0f", rl[RUNS / 2], mean);
  cr_expect_gt(rl[RUNS / 2], 20.0);
}

/* No dulling alert in long stable runs with realistic scatter (3 % lognormal on
 * u, the work speed varied by the operator between parts), several seeds. */
Test(detector, no_false_dulling_alarm_in_stable_runs, .timeout = 60)
{
  CND_Settings s;
  settings(&s);
  PGN_Job j;
  unsigned long cusum_alarm_passes = 0, total = 0;
  double worst = 0.0;
  for (uint64_t seed = 1; seed <= 8; seed++) {
    char err[160];
    cr_assert_eq(CND_Init(&st, &s, err, sizeof(err)), 0, "%s", err);
    PGN_DefaultJob(&j);
    PGN_Rng r;
    PGN_Seed(&r, seed);
    SEG_Pass p;
    CND_PassResult res;
    CND_Event ev[16];
    for (unsigned long n = 1; n <= 2000; n++) {
      if (seed > 4 && n % 40 == 1) /* a new part, a new work speed inside the window */
        j.vw_mm_min = 6300.0 * (0.9 + 0.2 * PGN_Uniform(&r));
      PGN_Make(&j, n, 1.0, &p);
      /* size effect u = c * Aggr^-0.3 (our example) with 3 % scatter */
      PGN_Make(&j, n, 40.0 * pow(p.aggressiveness, -0.3) * exp(0.03 * PGN_Normal(&r)), &p);
      unsigned ne = CND_Pass(&st, &p, &res, ev, 16);
      for (unsigned i = 0; i < ne; i++)
        cr_assert_neq(ev[i].kind, CND_DULLING, "seed %lu pass %lu: %s", (unsigned long)seed, n, ev[i].message);
      cusum_alarm_passes += (unsigned long)res.info.cusum_alarm;
      total += res.info.usable && res.info.reference_ready;
      if (res.info.smoothed_ratio > worst)
        worst = res.info.smoothed_ratio;
    }
    cr_assert(!CND_IsActive(&st, CND_DULLING));
    cr_assert(!CND_IsActive(&st, CND_WHEEL_WEAR));
  }
  printf("stable runs: 8 x 2000 passes, no dulling alert; CUSUM in alarm on %lu of %lu passes; highest smoothed "
         "ratio %.3f (gate 1.15, limit 1.30)\n",
         cusum_alarm_passes, total, worst);
  cr_expect_lt(worst, 1.15);
}
