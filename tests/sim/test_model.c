/* test_model.c: unit tests of the simulator's physics and cycle: energy, wear, dressing, determinism. */
#include "grind.h"
#include "model.h"
#include "simtest.h"
#include "units.h"

#include <criterion/criterion.h>
#include <math.h>
#include <string.h>

/* Surface-grinding conditions of the demo's roughing passes. */
static SIM_Cut demo_cut(void)
{
  SIM_Cut c = { 400.0, 40.0, 0.015, 40.0, UNT_SurfaceSpeed(400.0, 1200.0) };
  return c;
}

Test(energy, partition_adds_up_and_terms_follow_their_formulas)
{
  SIM_Scenario s;
  SIM_ScenarioDefaults(&s);
  SIM_Cut c = demo_cut();
  SIM_Energy e;
  SIM_CutEnergy(&s, &c, 0.02, &e);
  cr_assert_float_eq(e.u_j_mm3, e.u_chip_j_mm3 + e.u_plough_j_mm3 + e.u_slide_j_mm3, 1e-12);
  /* Chip formation: 13.8 J/mm^3 for steels (Malkin and Guo, Grinding Technology; from memory). */
  cr_assert_float_eq(e.u_chip_j_mm3, 13.8, 1e-12);
  double vs_mm_s = c.vs_m_s * 1000.0;
  double heq = c.ae_mm * c.vw_mm_s / vs_mm_s;
  double aggr = 1e6 * (c.vw_mm_s / vs_mm_s) * sqrt(c.ae_mm / c.ds_mm);
  cr_assert_float_eq(e.heq_mm, heq, 1e-15);
  cr_assert_float_eq(e.aggr, aggr, 1e-9);
  cr_assert_float_eq(e.u_plough_j_mm3, 1e-3 * s.job.ploughing_force_n_mm / heq, 1e-9);
  double k = 1e-3 * s.job.friction_coefficient * s.job.contact_pressure_mpa;
  cr_assert_float_eq(e.u_slide_j_mm3, k * 0.02 * 1e6 / aggr, 1e-9);
  /* Sliding power mu*p*A*b*lg*vs written out directly (vs in mm/s so N*mm/s; /1000 -> W). */
  double p_slide_w = s.job.friction_coefficient * s.job.contact_pressure_mpa * 0.02 * c.b_mm *
                     sqrt(c.ae_mm * c.ds_mm) * vs_mm_s / 1000.0;
  cr_assert_float_eq(e.u_slide_j_mm3 * e.q_mm3_s, p_slide_w, 1e-6);
  cr_assert_float_eq(e.power_w, e.u_j_mm3 * c.b_mm * c.ae_mm * c.vw_mm_s, 1e-9);
}

Test(energy, agrees_with_the_analysis_formulas)
{
  /* The analysis library is an independent implementation of the same
   * textbook formulas; the simulator's truth must agree with it. */
  SIM_Scenario s;
  SIM_ScenarioDefaults(&s);
  SIM_Cut c = demo_cut();
  SIM_Energy e;
  SIM_CutEnergy(&s, &c, s.wheel.sharp_wear_flat, &e);
  GRD_Params p;
  GRD_DefaultParams(&p);
  cr_assert_float_eq(e.aggr, GRD_Aggressiveness(c.vw_mm_s, c.vs_m_s, c.ae_mm, c.ds_mm), 1e-9);
  cr_assert_float_eq(e.heq_mm, GRD_EquivalentChipThickness(c.ae_mm, c.vw_mm_s, c.vs_m_s), 1e-15);
  cr_assert_float_eq(e.lg_mm, GRD_ContactLength(c.ae_mm, c.ds_mm), 1e-12);
  cr_assert_float_eq(e.u_star_j_mm3, GRD_BurnThreshold(&p, c.ds_mm, c.ae_mm, c.vw_mm_s), 1e-9);
}

Test(energy, burn_threshold_by_hand)
{
  /* u* = 6.2 + 1.76 de^1/4 ae^-3/4 vw^-1/2 (Malkin and Guo, plain carbon steels;
   * from memory). de 400 mm, ae 0.015 mm, vw 40 mm/s worked by hand:
   * 400^0.25 = 4.4721, 0.015^-0.75 = 23.3, 40^-0.5 = 0.15811 -> 6.2 + 29.04 = 35.24. */
  cr_assert_float_eq(SIM_BurnThreshold(400.0, 0.015, 40.0), 35.2355, 1e-3);
}

Test(energy, size_effect_ploughing_falls_as_chip_thickness_grows)
{
  SIM_Scenario s;
  SIM_ScenarioDefaults(&s);
  SIM_Cut c = demo_cut();
  double last_u = INFINITY, last_heq = 0.0;
  for (double vw = 5.0; vw <= 500.0; vw *= 1.5) {
    c.vw_mm_s = vw;
    SIM_Energy e;
    SIM_CutEnergy(&s, &c, s.wheel.sharp_wear_flat, &e);
    cr_assert_gt(e.heq_mm, last_heq);
    cr_assert_lt(e.u_plough_j_mm3, last_u, "ploughing energy must fall as heq grows (vw %g)", vw);
    cr_assert_gt(e.u_j_mm3, e.u_chip_j_mm3);
    last_u = e.u_plough_j_mm3;
    last_heq = e.heq_mm;
  }
  /* Same with the depth: total u falls too (size effect). */
  c = demo_cut();
  double last_total = INFINITY;
  for (double ae = 0.001; ae <= 0.2; ae *= 1.6) {
    c.ae_mm = ae;
    SIM_Energy e;
    SIM_CutEnergy(&s, &c, s.wheel.sharp_wear_flat, &e);
    cr_assert_lt(e.u_j_mm3, last_total);
    last_total = e.u_j_mm3;
  }
}

Test(energy, dull_wheel_needs_more_energy)
{
  SIM_Scenario s;
  SIM_ScenarioDefaults(&s);
  SIM_Cut c = demo_cut();
  SIM_Energy sharp, dull;
  SIM_CutEnergy(&s, &c, 0.01, &sharp);
  SIM_CutEnergy(&s, &c, 0.04, &dull);
  cr_assert_gt(dull.u_j_mm3, sharp.u_j_mm3);
  cr_assert_float_eq(dull.u_slide_j_mm3, 4.0 * sharp.u_slide_j_mm3, 1e-9);
  cr_assert_float_eq(dull.u_plough_j_mm3, sharp.u_plough_j_mm3, 1e-12);
}

/* Wear flat after `passes` cuts of length L at aggressiveness set by vw. */
static double wear_after(const SIM_Scenario *s, double vw_mm_s, double ae, int passes,
                         double *diameter, double *g)
{
  SIM_Cut c = demo_cut();
  c.vw_mm_s = vw_mm_s;
  c.ae_mm = ae;
  double a = s->wheel.sharp_wear_flat;
  for (int i = 0; i < passes; i++) {
    SIM_Energy e;
    SIM_CutEnergy(s, &c, a, &e);
    SIM_Wear w;
    SIM_CutWear(s, &c, e.aggr, a, 1200.0, &w);
    a = w.wear_flat_after;
    c.ds_mm = w.diameter_after_mm;
    *g = w.g_ratio;
  }
  *diameter = c.ds_mm;
  return a;
}

Test(wear, dulling_is_faster_at_low_aggressiveness)
{
  SIM_Scenario s;
  SIM_ScenarioDefaults(&s);
  /* Same removed volume per width: 100 passes of 0.015 mm over 1200 mm. */
  double d, g;
  double a_low = wear_after(&s, 20.0, 0.015, 100, &d, &g);   /* aggressiveness ~5 */
  double a_mid = wear_after(&s, 80.0, 0.015, 100, &d, &g);   /* ~19 */
  double a_high = wear_after(&s, 300.0, 0.015, 100, &d, &g); /* ~73 */
  cr_assert_gt(a_low, a_mid);
  cr_assert_gt(a_mid, a_high);
  cr_assert_gt(a_low, 1.5 * s.wheel.sharp_wear_flat, "low aggressiveness must dull visibly");
  cr_assert_leq(a_low, s.wheel.max_wear_flat);
}

Test(wear, self_sharpening_and_radial_wear_at_high_aggressiveness)
{
  SIM_Scenario s;
  SIM_ScenarioDefaults(&s);
  double d_low, g_low, d_high, g_high;
  wear_after(&s, 20.0, 0.015, 300, &d_low, &g_low);
  double a_high = wear_after(&s, 600.0, 0.04, 300, &d_high, &g_high); /* aggressiveness ~240 */
  cr_assert_lt(a_high, 1.02 * s.wheel.sharp_wear_flat, "fracture must keep the wheel sharp");
  cr_assert_lt(g_high, g_low / 10.0, "G-ratio must fall at high aggressiveness");
  cr_assert_lt(d_high, d_low, "the wheel must wear radially");
  /* G at low aggressiveness is the scenario's attritious G-ratio. */
  cr_assert_float_eq(g_low, s.wheel.g_ratio, 0.01 * s.wheel.g_ratio);
}

Test(wear, wear_factor_compresses_life)
{
  SIM_Scenario s;
  SIM_ScenarioDefaults(&s);
  SIM_Cut c = demo_cut();
  SIM_Energy e;
  SIM_CutEnergy(&s, &c, 0.02, &e);
  SIM_Wear long_cut, fast;
  SIM_CutWear(&s, &c, e.aggr, 0.02, 1200.0 * 30.0, &long_cut);
  s.wheel.wear_factor = 30.0;
  SIM_CutWear(&s, &c, e.aggr, 0.02, 1200.0, &fast);
  cr_assert_float_eq(fast.wear_flat_after, long_cut.wear_flat_after, 1e-12);
  cr_assert_float_eq(fast.wheel_volume_mm3, long_cut.wheel_volume_mm3, 1e-9);
}

Test(wear, solution_does_not_depend_on_how_the_volume_is_cut)
{
  SIM_Scenario s;
  SIM_ScenarioDefaults(&s);
  SIM_Cut c = demo_cut();
  SIM_Energy e;
  SIM_CutEnergy(&s, &c, 0.01, &e);
  SIM_Wear one, half;
  SIM_CutWear(&s, &c, e.aggr, 0.01, 1000.0, &one);
  SIM_CutWear(&s, &c, e.aggr, 0.01, 500.0, &half);
  SIM_CutWear(&s, &c, e.aggr, half.wear_flat_after, 500.0, &half);
  cr_assert_float_eq(half.wear_flat_after, one.wear_flat_after, 1e-12);
}

/* A short, quick scenario: small part, a dress every 3 parts, no noise. */
static void quick_scenario(SIM_Scenario *s)
{
  char err[600];
  const char *text = "[job]\nlength_mm = 100\ntable_speed_mm_min = 6000\nload_s = 10\n"
                     "rough_passes = 3\nfinish_passes = 1\nspark_out_passes = 1\n"
                     "[wheel]\ndress_s = 20\nwear_factor = 50\n"
                     "[schedule]\nparts = 12\ndress_every_parts = 3\n"
                     "[noise]\npower_sd_w = 0\n";
  cr_assert(simtest_parse(text, s, err, sizeof err) == 0, "%s", err);
}

Test(cycle, dressing_resets_wear_flat_and_shrinks_the_wheel)
{
  SIM_Scenario s;
  quick_scenario(&s);
  SIM_Model m;
  SIM_ModelInit(&m, &s);
  SIM_Event ev;
  int dresses = 0;
  double a_before_last_pass = 0.0, d_after_last_pass = 0.0;
  while (SIM_ModelStep(&m, 1e6, &ev)) {
    if (ev.kind == SIM_EVENT_PASS) {
      a_before_last_pass = m.wear_flat;
      d_after_last_pass = m.ds_mm;
      continue;
    }
    dresses++;
    cr_assert_eq(ev.dress.part % 3, 0);
    cr_assert_float_eq(ev.dress.wear_flat_before, a_before_last_pass, 1e-15);
    cr_assert_gt(ev.dress.wear_flat_before, s.wheel.sharp_wear_flat);
    cr_assert_float_eq(ev.dress.diameter_before_mm, d_after_last_pass, 1e-12);
    cr_assert_float_eq(ev.dress.diameter_after_mm,
                       ev.dress.diameter_before_mm - 2.0 * s.wheel.dress_depth_mm, 1e-9);
    cr_assert_eq(ev.dress.dress_count, (unsigned)dresses);
    cr_assert_eq(m.wear_flat, s.wheel.sharp_wear_flat);
    cr_assert_float_eq(ev.dress.end_s - ev.dress.start_s, s.wheel.dress_s, 1e-9);
  }
  cr_assert_eq(dresses, 4);
  cr_assert_eq(m.part, 12u);
  SIM_Snapshot snap;
  SIM_ModelSnapshot(&m, 1e6, &snap);
  cr_assert_eq(snap.state, SIM_STATE_IDLE);
  cr_assert_eq(snap.dress_count, 4u);
}

Test(cycle, requested_dress_happens_at_the_next_part_change)
{
  SIM_Scenario s;
  quick_scenario(&s);
  s.schedule.dress_every_parts = 0;
  SIM_Model m;
  SIM_ModelInit(&m, &s);
  SIM_Event ev;
  while (m.part < 2)
    SIM_ModelStep(&m, m.seg_end, &ev);
  SIM_ModelRequestDress(&m);
  int dresses = 0;
  while (SIM_ModelStep(&m, 1e6, &ev)) {
    if (ev.kind == SIM_EVENT_DRESS) {
      dresses++;
      cr_assert_eq(ev.dress.part, 2u, "after the part in progress");
      cr_assert_str_eq(ev.dress.reason, "request");
    }
  }
  cr_assert_eq(dresses, 1, "one request, one dress");
}

Test(cycle, pass_sequence_energy_and_timing)
{
  SIM_Scenario s;
  quick_scenario(&s);
  SIM_Model m;
  SIM_ModelInit(&m, &s);
  SIM_Event ev;
  int n = 0;
  double last_end = -1.0;
  while (SIM_ModelStep(&m, 500.0, &ev)) {
    if (ev.kind != SIM_EVENT_PASS)
      continue;
    const SIM_PassRecord *r = &ev.pass;
    n++;
    cr_assert_eq(r->pass, (unsigned long)n);
    cr_assert_gt(r->start_s, last_end);
    last_end = r->end_s;
    unsigned i = r->pass_in_part;
    if (i <= 3) {
      cr_assert_eq(r->kind, SIM_PASS_ROUGH);
      cr_assert_eq(r->depth_mm, s.job.rough_depth_mm);
    } else if (i == 4) {
      cr_assert_eq(r->kind, SIM_PASS_FINISH);
      cr_assert_eq(r->depth_mm, s.job.finish_depth_mm);
    } else {
      cr_assert_eq(r->kind, SIM_PASS_SPARK_OUT);
      cr_assert_eq(r->depth_mm, 0.0);
      cr_assert(isnan(r->specific_energy_j_mm3));
      continue;
    }
    /* Energy of the ramped contact = u * V. */
    cr_assert_float_eq(r->energy_j, r->specific_energy_j_mm3 * r->volume_mm3, 1e-6 * r->energy_j);
    cr_assert_float_eq(r->volume_mm3, s.job.width_mm * r->depth_mm * s.job.length_mm, 1e-9);
    /* Contact time (L + lg)/vw. */
    double lg = sqrt(r->depth_mm * r->wheel_diameter_mm);
    cr_assert_float_eq(r->end_s - r->start_s, (s.job.length_mm + lg) / (6000.0 / 60.0), 1e-9);
  }
  cr_assert_gt(n, 5);
}

Test(cycle, served_power_integrates_to_the_truth_energy)
{
  SIM_Scenario s;
  quick_scenario(&s);
  s.machine.drift_w = 0.0;
  s.machine.warmup_power_w = 0.0;
  SIM_Model m;
  SIM_ModelInit(&m, &s);
  SIM_Event ev;
  /* Step to the start of pass 2 and integrate its power at 1 ms. */
  while (m.pass < 2)
    SIM_ModelStep(&m, m.seg_end, &ev);
  double start = m.contact_start - 0.1, end = m.contact_end + 0.1, e = 0.0;
  const double dt = 0.001;
  SIM_Snapshot snap;
  double grinding_s = 0.0;
  for (double t = start; t < end; t += dt) {
    SIM_ModelSnapshot(&m, t, &snap);
    e += (snap.spindle_power_w - s.machine.idle_power_w) * dt;
    grinding_s += snap.grinding ? dt : 0.0;
  }
  cr_assert(SIM_ModelStep(&m, end, &ev) == 1 && ev.kind == SIM_EVENT_PASS);
  cr_assert_float_eq(e, ev.pass.energy_j, 0.002 * ev.pass.energy_j);
  cr_assert_float_eq(grinding_s, ev.pass.end_s - ev.pass.start_s, 2.0 * dt);
}

Test(cycle, snapshot_shows_the_documented_states)
{
  SIM_Scenario s;
  quick_scenario(&s);
  s.schedule.start_delay_s = 5.0;
  SIM_Model m;
  SIM_ModelInit(&m, &s);
  SIM_Event ev;
  SIM_Snapshot snap;
  SIM_ModelSnapshot(&m, 1.0, &snap);
  cr_assert_eq(snap.state, SIM_STATE_IDLE);
  cr_assert_float_eq(snap.depth_mm, s.job.rough_depth_mm, 1e-12);
  while (SIM_ModelStep(&m, 6.0, &ev)) {
  }
  SIM_ModelSnapshot(&m, 6.0, &snap);
  cr_assert_eq(snap.state, SIM_STATE_LOADING);
  cr_assert_eq(snap.work_speed_mm_min, 0.0);
  double mid = m.seg_end + s.job.reversal_s + (s.job.overrun_mm + 50.0) / 100.0;
  while (SIM_ModelStep(&m, mid, &ev)) {
  }
  SIM_ModelSnapshot(&m, mid, &snap);
  cr_assert_eq(snap.state, SIM_STATE_GRINDING);
  cr_assert_eq(snap.grinding, 1);
  cr_assert_float_eq(snap.work_speed_mm_min, 6000.0, 1e-9);
  cr_assert_float_eq(snap.infeed_mm, s.job.rough_depth_mm, 1e-12);
  cr_assert_eq(snap.pass, 1u);
  cr_assert_gt(snap.spindle_power_w, s.machine.idle_power_w + 100.0);
}

/* A fixed pseudo-random sequence for step sizes. */
static double next_step(unsigned *state)
{
  *state = *state * 1103515245u + 12345u;
  return 0.01 + (double)((*state >> 8) % 5000) / 1000.0; /* 0.01 .. 5 s */
}

static void assert_same_model(const SIM_Model *a, const SIM_Model *b)
{
  cr_assert_eq(a->phase, b->phase);
  cr_assert_eq(a->part, b->part);
  cr_assert_eq(a->pass, b->pass);
  cr_assert_eq(a->pass_in_part, b->pass_in_part);
  cr_assert_eq(a->dress_count, b->dress_count);
  cr_assert_eq(a->seg_start, b->seg_start);
  cr_assert_eq(a->seg_end, b->seg_end);
  cr_assert_eq(a->contact_start, b->contact_start);
  cr_assert_eq(a->contact_end, b->contact_end);
  cr_assert_eq(a->ds_mm, b->ds_mm);
  cr_assert_eq(a->wear_flat, b->wear_flat);
  cr_assert_eq(a->infeed_mm, b->infeed_mm);
  cr_assert_eq(a->pass_power_w, b->pass_power_w);
}

static void assert_same_snapshot(const SIM_Snapshot *a, const SIM_Snapshot *b)
{
  cr_assert_eq(a->state, b->state);
  cr_assert_eq(a->grinding, b->grinding);
  cr_assert_eq(a->spindle_power_w, b->spindle_power_w);
  cr_assert_eq(a->spindle_rpm, b->spindle_rpm);
  cr_assert_eq(a->work_speed_mm_min, b->work_speed_mm_min);
  cr_assert_eq(a->infeed_mm, b->infeed_mm);
  cr_assert_eq(a->depth_mm, b->depth_mm);
  cr_assert_eq(a->wheel_diameter_mm, b->wheel_diameter_mm);
  cr_assert_eq(a->dress_count, b->dress_count);
  cr_assert_eq(a->pass, b->pass);
}

Test(determinism, same_scenario_and_time_give_the_same_state)
{
  static SIM_Scenario s;
  simtest_load("demo.ini", &s);
  static SIM_Model a, b;
  SIM_ModelInit(&a, &s);
  SIM_ModelInit(&b, &s);
  SIM_Event ea, eb;
  const double t = 5.5 * 3600.0;
  while (SIM_ModelStep(&a, t, &ea)) {
    cr_assert(SIM_ModelStep(&b, t, &eb) == 1);
    cr_assert(memcmp(&ea.pass, &eb.pass, sizeof ea.pass) == 0 || ea.kind == SIM_EVENT_DRESS);
  }
  cr_assert(SIM_ModelStep(&b, t, &eb) == 0);
  assert_same_model(&a, &b);
  SIM_Snapshot sa, sb;
  SIM_ModelSnapshot(&a, t, &sa);
  SIM_ModelSnapshot(&b, t, &sb);
  assert_same_snapshot(&sa, &sb);
}

Test(determinism, fast_forward_equals_small_steps)
{
  /* What a restarted simulator does (one jump from the epoch) must land on the
   * state of one that ran all along (many small steps), events included. */
  static SIM_Scenario s;
  simtest_load("demo.ini", &s);
  static SIM_Model stepped;
  SIM_ModelInit(&stepped, &s);
  static SIM_PassRecord passes[1000];
  int n_passes = 0, n_dresses = 0;
  unsigned rng = 42;
  double t = 0.0;
  const double end = 8.0 * 3600.0;
  int checks = 0;
  while (t < end) {
    t += next_step(&rng);
    SIM_Event ev;
    while (SIM_ModelStep(&stepped, t, &ev)) {
      if (ev.kind == SIM_EVENT_PASS) {
        cr_assert_lt(n_passes, 1000);
        passes[n_passes++] = ev.pass;
      } else {
        n_dresses++;
      }
    }
    if (((unsigned)t / 997) % 5 == 0 && checks < 2000) {
      /* A fresh model jumped straight to t. */
      static SIM_Model jumped;
      SIM_ModelInit(&jumped, &s);
      while (SIM_ModelStep(&jumped, t, &ev)) {
      }
      assert_same_model(&stepped, &jumped);
      SIM_Snapshot a, b;
      SIM_ModelSnapshot(&stepped, t, &a);
      SIM_ModelSnapshot(&jumped, t, &b);
      assert_same_snapshot(&a, &b);
      checks++;
    }
  }
  cr_assert_gt(checks, 10);
  /* The events of one jump to the end are the same as those collected. */
  static SIM_Model once;
  SIM_ModelInit(&once, &s);
  SIM_Event ev;
  int i = 0, d = 0;
  while (SIM_ModelStep(&once, t, &ev)) {
    if (ev.kind == SIM_EVENT_DRESS) {
      d++;
      continue;
    }
    cr_assert_lt(i, n_passes);
    cr_assert(memcmp(&ev.pass, &passes[i], sizeof ev.pass) == 0, "pass %d differs", i + 1);
    i++;
  }
  cr_assert_eq(i, n_passes);
  cr_assert_eq(d, n_dresses);
  cr_assert_eq(n_dresses, 1);
}

Test(noise, is_a_function_of_time_with_the_configured_spread)
{
  SIM_Scenario s;
  SIM_ScenarioDefaults(&s);
  s.noise.power_sd_w = 20.0;
  double sum = 0.0, sum2 = 0.0;
  const int n = 20000;
  for (int i = 0; i < n; i++) {
    double t = (i + 0.5) * s.noise.step_s;
    double v = SIM_PowerNoise(&s, t);
    cr_assert_eq(v, SIM_PowerNoise(&s, t + 0.25 * s.noise.step_s), "noise must hold over a step");
    sum += v;
    sum2 += v * v;
  }
  double mean = sum / n, sd = sqrt(sum2 / n - mean * mean);
  cr_assert_lt(fabs(mean), 1.0);
  cr_assert_float_eq(sd, 20.0, 1.0);
  SIM_Scenario other = s;
  other.noise.seed = 99;
  cr_assert_neq(SIM_PowerNoise(&s, 12.34), SIM_PowerNoise(&other, 12.34));
}

Test(idle, warms_up_and_wanders_within_the_drift)
{
  SIM_Scenario s;
  SIM_ScenarioDefaults(&s);
  const SIM_Machine *m = &s.machine;
  double p0 = SIM_IdlePower(&s, 0.0);
  cr_assert_float_eq(p0, m->idle_power_w + m->warmup_power_w, m->drift_w + 1e-9);
  for (double t = 10.0 * m->warmup_s; t < 20.0 * m->warmup_s; t += 17.0)
    cr_assert_float_eq(SIM_IdlePower(&s, t), m->idle_power_w, m->drift_w + 1.0);
  /* Slow: less than 1 W per second with the defaults. */
  cr_assert_lt(fabs(SIM_IdlePower(&s, 4000.0) - SIM_IdlePower(&s, 4001.0)), 1.0);
}

Test(spindle, constant_surface_speed_raises_rpm_as_the_wheel_shrinks)
{
  SIM_Scenario s;
  SIM_ScenarioDefaults(&s);
  cr_assert_eq(SIM_SpindleRpm(&s, 380.0), s.machine.spindle_rpm);
  s.machine.wheel_speed_m_s = 30.0;
  double r400 = SIM_SpindleRpm(&s, 400.0), r380 = SIM_SpindleRpm(&s, 380.0);
  cr_assert_gt(r380, r400);
  cr_assert_float_eq(UNT_SurfaceSpeed(380.0, r380), 30.0, 1e-9);
}
