/* test_segment.c: pass segmentation on synthetic streams with known passes. */
#include <criterion/criterion.h>
#include <math.h>
#include <string.h>

#include "segment.h"
#include "synth.h"
#include "units.h"

#define MAXP 64

static SEG_Config job(void)
{
  SEG_Config c;
  SEG_DefaultConfig(&c);
  c.geometry = GRD_SURFACE;
  c.width_mm = 20.0;
  c.wheel_diameter_mm = 250.0;
  return c;
}

/* Runs the stream through the segmentation; returns the number of passes. */
static int run(const SYN_Stream *st, const SEG_Config *c, SEG_Pass *out, int max)
{
  static SEG_State s; /* large; static keeps the test stack small */
  SEG_Init(&s, c, 1);
  int n = 0;
  long count = SYN_Count(st);
  for (long i = 0; i < count; i++) {
    SMP_Sample x;
    SYN_Sample(st, i, &x);
    SEG_Pass p;
    if (SEG_Feed(&s, &x, &p)) {
      cr_assert(n < max, "too many passes");
      out[n++] = p;
    }
  }
  SEG_Pass p;
  if (SEG_Finish(&s, &p) && n < max)
    out[n++] = p;
  return n;
}

/* A part: n passes, each `depth` deeper, strokes of `dur` s every `cycle` s. */
static int make_part(SYN_Pass *p, int n, double t0, double dur, double cycle, double net, double depth,
                     double infeed0, double vw_mm_min)
{
  for (int k = 0; k < n; k++) {
    p[k] = (SYN_Pass){t0 + k * cycle, dur, net, 0.03, infeed0 + depth * (k + 1), vw_mm_min, 0};
  }
  return n;
}

static SYN_Stream base_stream(const SYN_Pass *p, int n, double t_end)
{
  SYN_Stream st;
  memset(&st, 0, sizeof(st));
  st.period_s = 0.01;
  st.t0 = 1000.0;
  st.t_end = t_end;
  st.idle_w = 1500.0;
  st.noise_w = 8.0;
  st.rpm = 2300.0;
  st.wheel_diameter_mm = 250.0;
  st.passes = p;
  st.n_passes = n;
  st.seed = 7;
  return st;
}

Test(segment, counts_and_boundaries_with_noise_and_drift)
{
  SYN_Pass truth[20];
  int n = make_part(truth, 20, 1005.0, 2.5, 4.0, 1800.0, 0.01, 5.0, 6000.0);
  SYN_Stream st = base_stream(truth, n, 1090.0);
  st.drift_w_per_s = 3.0; /* 255 W of idle drift over the run: warm-up */
  SEG_Config c = job();
  SEG_Pass out[MAXP];
  int got = run(&st, &c, out, MAXP);
  cr_assert_eq(got, 20, "passes found: %d", got);
  for (int k = 0; k < got; k++) {
    cr_expect_leq(fabs(out[k].start_time - truth[k].start), st.period_s, "pass %d start %.4f vs %.4f", k + 1,
                  out[k].start_time, truth[k].start);
    cr_expect_leq(fabs(out[k].end_time - (truth[k].start + truth[k].duration)), st.period_s, "pass %d end", k + 1);
    cr_expect_eq(out[k].number, (unsigned long)k + 1);
    if (k == 0) {
      cr_expect(out[k].flags & SEG_F_DEPTH_UNKNOWN, "first pass: depth unknown, not guessed");
      cr_expect(isnan(out[k].depth_mm));
      continue;
    }
    cr_expect_eq(out[k].flags, 0u, "pass %d flags %u", k + 1, out[k].flags);
    cr_expect_float_eq(out[k].depth_mm, 0.01, 1e-9);
    double e_true = SYN_PassEnergy(&truth[k]);
    cr_expect_leq(fabs(out[k].energy_j - e_true) / e_true, 0.005, "pass %d energy %.2f vs %.2f", k + 1,
                  out[k].energy_j, e_true);
    double v_true = 20.0 * 0.01 * UNT_MmPerMinToMmPerS(6000.0) * truth[k].duration;
    cr_expect_leq(fabs(out[k].volume_mm3 - v_true) / v_true, 0.005, "pass %d volume", k + 1);
    cr_expect_float_eq(out[k].specific_energy_j_mm3, out[k].energy_j / out[k].volume_mm3, 1e-9);
  }
}

Test(segment, step_edges_stay_within_one_period)
{
  SYN_Pass truth[6];
  int n = make_part(truth, 6, 1002.013, 1.7, 3.1, 900.0, 0.005, 0.0, 4000.0);
  for (int k = 0; k < n; k++)
    truth[k].ramp_s = 0.0; /* ideal steps between samples */
  SYN_Stream st = base_stream(truth, n, 1025.0);
  st.noise_w = 0.0;
  SEG_Config c = job();
  SEG_Pass out[MAXP];
  cr_assert_eq(run(&st, &c, out, MAXP), 6);
  for (int k = 0; k < 6; k++) {
    cr_expect_leq(fabs(out[k].start_time - truth[k].start), st.period_s);
    cr_expect_leq(fabs(out[k].duration_s - truth[k].duration), st.period_s);
    cr_expect_float_eq(out[k].net_power_mean_w, 900.0, 900.0 * 0.01);
    cr_expect_float_eq(out[k].net_power_peak_w, 900.0, 1e-6);
  }
}

Test(segment, gap_between_passes_makes_next_depth_unknown)
{
  SYN_Pass truth[5];
  int n = make_part(truth, 5, 1005.0, 2.0, 4.0, 1500.0, 0.01, 5.0, 6000.0);
  SYN_Stream st = base_stream(truth, n, 1030.0);
  st.gap_from[0] = 1011.3; /* between pass 2 and pass 3, 1.2 s long */
  st.gap_to[0] = 1012.5;
  st.n_gaps = 1;
  SEG_Config c = job();
  SEG_Pass out[MAXP];
  cr_assert_eq(run(&st, &c, out, MAXP), 5);
  cr_expect_float_eq(out[1].depth_mm, 0.01, 1e-9);
  cr_expect(out[2].flags & SEG_F_DEPTH_UNKNOWN, "a pass could have hidden in the gap");
  cr_expect_not(out[2].flags & SEG_F_GAP);
  cr_expect_float_eq(out[3].depth_mm, 0.01, 1e-9);
}

Test(segment, gap_cuts_a_pass_and_is_marked)
{
  SYN_Pass truth[4];
  int n = make_part(truth, 4, 1005.0, 3.0, 5.0, 1500.0, 0.01, 5.0, 6000.0);
  SYN_Stream st = base_stream(truth, n, 1030.0);
  st.gap_from[0] = 1011.0; /* inside pass 2 (1010..1013) */
  st.gap_to[0] = 1011.5;
  st.n_gaps = 1;
  SEG_Config c = job();
  SEG_Pass out[MAXP];
  int got = run(&st, &c, out, MAXP);
  cr_assert_eq(got, 5, "pass 2 is cut in two: %d", got);
  cr_expect(out[1].flags & SEG_F_GAP);
  cr_expect_float_eq(out[1].end_time, 1010.99, 0.011);
  cr_expect_float_eq(out[1].depth_mm, 0.01, 1e-9, "the part before the gap keeps its depth");
  cr_expect(out[2].flags & SEG_F_GAP, "the rest after the gap is marked too");
  cr_expect(out[2].flags & SEG_F_DEPTH_UNKNOWN, "and not read as a spark-out");
  cr_expect_float_eq(out[2].start_time, 1011.5, 0.011);
  cr_expect_eq(out[3].flags, 0u);
  /* Nothing interpolated: energy stops at the gap. */
  cr_expect_leq(out[1].energy_j, 1500.0 * 1.0 * 1.01);
}

Test(segment, spark_out_and_new_part)
{
  SYN_Pass truth[8];
  make_part(truth, 4, 1005.0, 2.0, 4.0, 1500.0, 0.01, 5.0, 6000.0);
  /* Two spark-out passes at the final depth, with a little residual power. */
  truth[4] = (SYN_Pass){1021.0, 2.0, 300.0, 0.03, 5.04, 6000.0, 0};
  truth[5] = (SYN_Pass){1025.0, 2.0, 250.0, 0.03, 5.04, 6000.0, 0};
  /* Next part: the wheel head went back up, then one deeper pass. */
  truth[6] = (SYN_Pass){1040.0, 2.0, 1500.0, 0.03, 4.00, 6000.0, 0};
  truth[7] = (SYN_Pass){1044.0, 2.0, 1500.0, 0.03, 4.01, 6000.0, 0};
  SYN_Stream st = base_stream(truth, 8, 1050.0);
  SEG_Config c = job();
  SEG_Pass out[MAXP];
  cr_assert_eq(run(&st, &c, out, MAXP), 8);
  cr_expect(out[4].flags & SEG_F_SPARK_OUT);
  cr_expect_float_eq(out[4].depth_mm, 0.0, 1e-12);
  cr_expect_float_eq(out[4].aggressiveness, 0.0, 1e-12);
  cr_expect(isnan(out[4].specific_energy_j_mm3), "no volume, no specific energy");
  cr_expect_gt(out[4].energy_j, 0.0);
  cr_expect(out[5].flags & SEG_F_SPARK_OUT);
  cr_expect(out[6].flags & SEG_F_NEW_PART);
  cr_expect(out[6].flags & SEG_F_DEPTH_UNKNOWN);
  cr_expect_float_eq(out[7].depth_mm, 0.01, 1e-9);
}

Test(segment, dips_short_blips_and_speed_steps)
{
  SYN_Pass truth[3];
  make_part(truth, 3, 1005.0, 2.0, 6.0, 1500.0, 0.01, 5.0, 6000.0);
  /* A 50 ms blip (a knock, not a pass) and a 50 ms dip inside pass 2. */
  SYN_Pass extra[2] = {{1009.0, 0.05, 1500.0, 0.0, 5.01, 6000.0, 0}, {1011.5, 0.05, -1400.0, 0.0, 5.02, 6000.0, 0}};
  SYN_Pass all[5] = {truth[0], extra[0], truth[1], extra[1], truth[2]};
  SYN_Stream st = base_stream(all, 5, 1030.0);
  SEG_Config c = job();
  SEG_Pass out[MAXP];
  cr_assert_eq(run(&st, &c, out, MAXP), 3, "blip ignored, dip does not split the pass");
  cr_expect_float_eq(out[1].duration_s, 2.0, 0.02);

  /* A spindle speed step while idle re-seeds the baseline instead of opening a pass. */
  static SEG_State s;
  SEG_Init(&s, &c, 1);
  SEG_Pass p;
  int passes = 0;
  for (int i = 0; i < 3000; i++) {
    SMP_Sample x;
    SMP_Clear(&x, 2000.0 + i * 0.01);
    int fast = i >= 1000;
    x.spindle_speed_rpm = fast ? 2800.0 : 2300.0;
    x.spindle_power_w = fast ? 1900.0 : 1500.0; /* idle power rises with speed */
    passes += SEG_Feed(&s, &x, &p);
  }
  cr_expect_eq(passes, 0);
  cr_expect_float_eq(SEG_Baseline(&s), 1900.0, 1.0);
}

Test(segment, grinding_flag_channel_defines_contact)
{
  SYN_Pass truth[4];
  int n = make_part(truth, 4, 1005.0, 2.0, 4.0, 120.0, 0.01, 5.0, 6000.0); /* too weak for the power rule */
  SYN_Stream st = base_stream(truth, n, 1025.0);
  st.with_flag = 1;
  SEG_Config c = job();
  SEG_Pass out[MAXP];
  cr_assert_eq(run(&st, &c, out, MAXP), 4);
  cr_expect_float_eq(out[2].duration_s, 2.0, 0.02);
}

Test(segment, stream_ending_in_a_pass_is_truncated)
{
  SYN_Pass truth[2];
  int n = make_part(truth, 2, 1005.0, 2.0, 4.0, 1500.0, 0.01, 5.0, 6000.0);
  SYN_Stream st = base_stream(truth, n, 1010.0); /* pass 2 runs 1009..1011 */
  SEG_Config c = job();
  SEG_Pass out[MAXP];
  cr_assert_eq(run(&st, &c, out, MAXP), 2);
  cr_expect(out[1].flags & SEG_F_TRUNCATED);
}

Test(segment, dress_counter_change_is_flagged)
{
  SYN_Pass truth[4];
  int n = make_part(truth, 4, 1005.0, 2.0, 4.0, 1500.0, 0.01, 5.0, 6000.0);
  truth[2].dress_count = 1;
  truth[3].dress_count = 1;
  SYN_Stream st = base_stream(truth, n, 1025.0);
  SEG_Config c = job();
  SEG_Pass out[MAXP];
  cr_assert_eq(run(&st, &c, out, MAXP), 4);
  cr_expect_not(out[1].flags & SEG_F_AFTER_DRESS);
  cr_expect(out[2].flags & SEG_F_AFTER_DRESS);
  cr_expect_not(out[3].flags & SEG_F_AFTER_DRESS);
  cr_expect_float_eq(out[3].dress_count, 1.0, 0.0);
}

Test(segment, plunge_depth_per_revolution_from_infeed_rate)
{
  /* External plunge: dw 40 mm, vw 30 m/min = 500 mm/s, radial infeed 0.6 mm/min. */
  SEG_Config c = job();
  c.geometry = GRD_PLUNGE;
  c.workpiece_diameter_mm = 40.0;
  c.width_mm = 15.0;
  static SEG_State s;
  SEG_Init(&s, &c, 1);
  SEG_Pass p;
  int got = 0;
  double vf = 0.6 / 60.0; /* mm/s */
  for (int i = 0; i < 1200; i++) {
    double t = 100.0 + i * 0.01;
    SMP_Sample x;
    SMP_Clear(&x, t);
    int on = t >= 102.0 && t < 110.0;
    x.spindle_power_w = 2000.0 + (on ? 2500.0 : 0.0);
    x.spindle_speed_rpm = 2300.0;
    x.work_speed_mm_min = 30000.0;
    x.infeed_position_mm = 1.0 + (t < 102.0 ? 0.0 : vf * (fmin(t, 110.0) - 102.0));
    if (SEG_Feed(&s, &x, &p))
      got++;
  }
  cr_assert_eq(got, 1);
  /* ae = vf * pi * dw / vw (depth per work revolution). */
  double ae = vf * M_PI * 40.0 / 500.0;
  cr_expect_float_eq(p.depth_mm, ae, ae * 0.005);
  cr_expect_float_eq(p.equivalent_diameter_mm, 250.0 * 40.0 / 290.0, 1e-9);
}

Test(segment, flags_format_and_parse)
{
  char buf[128];
  unsigned f = SEG_F_GAP | SEG_F_SPARK_OUT | SEG_F_TRUNCATED, back;
  cr_expect_str_eq(SEG_FormatFlags(f, buf, sizeof buf), "gap|spark_out|truncated");
  cr_expect_eq(SEG_ParseFlags(buf, &back), 0);
  cr_expect_eq(back, f);
  cr_expect_eq(SEG_ParseFlags("", &back), 0);
  cr_expect_eq(back, 0u);
  cr_expect_eq(SEG_ParseFlags("gap|bogus", &back), -1);
}

Test(segment, config_checks_name_the_field)
{
  SEG_Config c = job();
  cr_expect_null(SEG_CheckConfig(&c));
  c.width_mm = 0.0;
  cr_expect_not_null(strstr(SEG_CheckConfig(&c), "width_mm"));
  c = job();
  c.geometry = GRD_INTERNAL;
  c.workpiece_diameter_mm = 40.0;
  c.wheel_diameter_mm = 50.0;
  cr_expect_not_null(strstr(SEG_CheckConfig(&c), "wheel_diameter_mm"));
  c = job();
  c.contact_off_w = 200.0;
  cr_expect_not_null(strstr(SEG_CheckConfig(&c), "contact_off_w"));
}

/* A stream that begins a few polls before work: the first idle rows of a
 * daemon started against the simulator at 60 times real time (recorded
 * values, 0.4 to 0.6 s apart, all idle, noise about 30 W), then idle on and
 * one real pass of +800 W for 30 s. Before the baseline had enough idle
 * samples, the fifth row read as contact and the pass never ended. */
Test(segment, few_idle_samples_start_no_pass)
{
  static const double first[][2] = {{0.000, 2749.4}, {0.535, 2739.6}, {0.937, 2692.0}, {1.517, 2682.5},
                                     {2.110, 2764.0}, {2.755, 2724.2}, {3.309, 2746.2}, {3.943, 2730.9},
                                     {4.508, 2685.2}, {5.108, 2703.4}};
  static SEG_State s;
  SEG_Config c = job();
  SEG_Init(&s, &c, 1);
  SEG_Pass out[MAXP], p;
  int n = 0;
  SMP_Sample x;
  for (int i = 0; i < 10; i++) {
    SMP_Clear(&x, NAN);
    x.time = 1000.0 + first[i][0];
    x.spindle_power_w = first[i][1];
    x.spindle_speed_rpm = 1200.0;
    x.work_speed_mm_min = 0.0;
    x.infeed_position_mm = 0.0;
    if (SEG_Feed(&s, &x, &p))
      out[n++] = p;
  }
  cr_expect(!SEG_InPass(&s), "noise at start-up read as contact");
  /* Idle with the same noise to 100 s, a pass from 100 to 130 s, idle to 160 s. */
  for (int i = 0; i < 2600 && n < MAXP; i++) {
    double t = 6.0 + i * 0.06;
    SMP_Clear(&x, NAN);
    x.time = 1000.0 + t;
    x.spindle_power_w = 2710.0 + 30.0 * sin(i * 2.3) + (t >= 100.0 && t < 130.0 ? 800.0 : 0.0);
    x.spindle_speed_rpm = 1200.0;
    x.work_speed_mm_min = t >= 100.0 && t < 130.0 ? 2400.0 : 0.0;
    x.infeed_position_mm = 0.015;
    if (SEG_Feed(&s, &x, &p))
      out[n++] = p;
  }
  cr_assert_eq(n, 1, "%d passes", n);
  cr_expect(fabs(out[0].start_time - 1100.0) < 0.2 && fabs(out[0].end_time - 1130.0) < 0.2,
            "pass %.2f..%.2f", out[0].start_time - 1000.0, out[0].end_time - 1000.0);
}
