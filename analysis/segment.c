/* segment.c: splits the sample stream into grinding passes (see segment.h). */
#include "segment.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "units.h"

static const char *const flag_names[SEG_FLAG_COUNT] = {
    "gap", "depth_unknown", "new_part", "spark_out", "after_dress", "no_speed", "truncated",
};

const char *SEG_FlagName(unsigned bit_index)
{
  return bit_index < SEG_FLAG_COUNT ? flag_names[bit_index] : "?";
}

char *SEG_FormatFlags(unsigned flags, char *buf, unsigned long size)
{
  unsigned long used = 0;
  if (size == 0)
    return buf;
  buf[0] = '\0';
  for (unsigned i = 0; i < SEG_FLAG_COUNT; i++) {
    if (!(flags & (1u << i)))
      continue;
    int n = snprintf(buf + used, size - used, "%s%s", used ? "|" : "", flag_names[i]);
    if (n < 0 || (unsigned long)n >= size - used)
      break;
    used += (unsigned long)n;
  }
  return buf;
}

int SEG_ParseFlags(const char *text, unsigned *flags)
{
  *flags = 0;
  while (*text) {
    const char *end = strchr(text, '|');
    size_t len = end ? (size_t)(end - text) : strlen(text);
    unsigned i;
    for (i = 0; i < SEG_FLAG_COUNT; i++)
      if (strlen(flag_names[i]) == len && strncmp(text, flag_names[i], len) == 0)
        break;
    if (i == SEG_FLAG_COUNT)
      return -1;
    *flags |= 1u << i;
    text += len + (end ? 1 : 0);
  }
  return 0;
}

void SEG_DefaultConfig(SEG_Config *c)
{
  memset(c, 0, sizeof(*c));
  c->geometry = GRD_SURFACE;
  c->width_mm = NAN;
  c->workpiece_diameter_mm = NAN;
  c->wheel_diameter_mm = NAN;
  c->fixed_depth_mm = NAN;
  GRD_DefaultParams(&c->params);
  c->contact_on_w = 100.0;
  c->contact_off_w = 50.0;
  c->noise_on = 5.0;
  c->noise_off = 2.5;
  c->min_pass_s = 0.2;
  c->end_hold_s = 0.1;
  c->baseline_tau_s = 60.0;
  c->min_pass_samples = 3;
  c->speed_change = 0.05;
  c->max_interval_s = 1.0;
  c->depth_tolerance_mm = 0.0002;
}

const char *SEG_CheckConfig(const SEG_Config *c)
{
  if ((unsigned)c->geometry >= GRD_GEOMETRY_COUNT)
    return "geometry: unknown";
  if (!(c->width_mm > 0.0))
    return "width_mm: must be positive";
  if (GRD_GeometryIsCylindrical(c->geometry) && !(c->workpiece_diameter_mm > 0.0))
    return "workpiece_diameter_mm: required and positive for cylindrical grinding";
  if (!isnan(c->wheel_diameter_mm) && !(c->wheel_diameter_mm > 0.0))
    return "wheel_diameter_mm: must be positive";
  if (c->geometry == GRD_INTERNAL && c->wheel_diameter_mm >= c->workpiece_diameter_mm)
    return "wheel_diameter_mm: internal grinding needs a wheel smaller than the bore";
  if (!isnan(c->fixed_depth_mm) && !(c->fixed_depth_mm >= 0.0))
    return "fixed_depth_mm: must not be negative";
  if (!(c->contact_on_w > 0.0))
    return "contact_on_w: must be positive";
  if (!(c->contact_off_w > 0.0) || c->contact_off_w > c->contact_on_w)
    return "contact_off_w: must be positive and not above contact_on_w";
  if (!(c->noise_on >= 0.0) || !(c->noise_off >= 0.0) || c->noise_off > c->noise_on)
    return "noise_off: must be between 0 and noise_on";
  if (c->min_pass_samples < 1)
    return "min_pass_samples: must be at least 1";
  if (!(c->min_pass_s >= 0.0))
    return "min_pass_s: must not be negative";
  if (!(c->end_hold_s >= 0.0))
    return "end_hold_s: must not be negative";
  if (!(c->baseline_tau_s > 0.0))
    return "baseline_tau_s: must be positive";
  if (!(c->speed_change > 0.0))
    return "speed_change: must be positive";
  if (!(c->max_interval_s > 0.0))
    return "max_interval_s: must be positive";
  if (!(c->depth_tolerance_mm >= 0.0))
    return "depth_tolerance_mm: must not be negative";
  return NULL;
}

void SEG_Init(SEG_State *s, const SEG_Config *c, unsigned long first_number)
{
  memset(s, 0, sizeof(*s));
  s->cfg = *c;
  s->next_number = first_number ? first_number : 1;
  s->baseline_w = NAN;
  s->baseline_rpm = NAN;
}

double SEG_Baseline(const SEG_State *s) { return s->have_baseline ? s->baseline_w : NAN; }
int SEG_InPass(const SEG_State *s) { return s->in_pass; }

/* Idle samples (their forgetting weight) the baseline needs before power
 * above it may start a pass. With fewer, the noise estimate is still about
 * zero and the slope of a handful of noisy points is taken at face value:
 * one noise sample then read as contact, and the pass baseline, extrapolated
 * with that slope, ran away so that the pass never ended (a daemon started
 * a few polls before grinding; seen with 4 idle samples 0.5 s apart). */
#define SEG_MIN_IDLE_WEIGHT 8.0

/* fmax(floor, v) for a floor that is never NAN, inline: fmax is a call into
 * libm, and the thresholds are needed on every sample. */
static inline double at_least(double floor, double v)
{
  return v > floor ? v : floor;
}

static double on_threshold(const SEG_State *s)
{
  return at_least(s->cfg.contact_on_w, s->cfg.noise_on * s->noise_w);
}

static double off_threshold(const SEG_State *s)
{
  return at_least(s->cfg.contact_off_w, s->cfg.noise_off * s->noise_w);
}

static int speed_changed(const SEG_State *s, const SMP_Sample *x)
{
  double rpm = x->spindle_speed_rpm;
  return !isnan(rpm) && !isnan(s->baseline_rpm) &&
         fabs(rpm - s->baseline_rpm) > s->cfg.speed_change * fabs(s->baseline_rpm);
}

static void baseline_refit(SEG_State *s);

static void baseline_seed(SEG_State *s, double t, double p, double rpm)
{
  s->have_baseline = 1;
  s->bl_ref = t;
  s->bl_w = 1.0;
  s->bl_wp = p;
  s->bl_wt = s->bl_wtt = s->bl_wtp = 0.0;
  s->baseline_w = p;
  s->baseline_rpm = rpm;
  baseline_refit(s);
}

/* Level and slope of the weighted line at bl_ref. The slope is shrunk toward
 * zero by its own uncertainty (factor s^2 / (s^2 + se^2)): a few noisy idle
 * samples between passes must not tilt the line that is extrapolated over
 * the next pass, while a long, well-sampled warm-up drift is followed fully. */
static void baseline_line(const SEG_State *s, double *level, double *slope)
{
  double w = s->bl_w;
  double mean_u = s->bl_wt / w, mean_p = s->bl_wp / w;
  double suu = s->bl_wtt - s->bl_wt * mean_u; /* weighted sum of squared age deviations */
  *slope = 0.0;
  if (w >= 3.0 && suu > 1e-12 * (s->bl_wtt + 1e-300)) {
    double b = (s->bl_wtp - s->bl_wt * mean_p) / suu;
    double se2 = s->noise_w * s->noise_w / suu;
    *slope = b * (b * b / (b * b + se2 + 1e-300));
  }
  *level = mean_p - *slope * mean_u;
}

/* The line is kept with the sums (bl_level, bl_slope) and fitted again only
 * when they or the noise change: every sample asks for it, and its divisions
 * are a long chain of latency. */
static void baseline_refit(SEG_State *s)
{
  baseline_line(s, &s->bl_level, &s->bl_slope);
}

static double baseline_at(const SEG_State *s, double t)
{
  return s->bl_level + s->bl_slope * (t - s->bl_ref);
}

/* exp(x) and expm1(x) of the idle step x = -dt/tau. Both are needed for
 * every idle sample (the decay of the sums, the weight of the noise
 * estimate), and the two library calls, with the division, were a third of
 * its cost. Samples come at the poll period with timestamps in microseconds
 * (the recording's resolution), so the same dt recurs to the bit and is
 * found in a small table: the values are the library's own. */
static void step_decay(SEG_State *s, double dt, double *exp_x, double *expm1_x)
{
  double tau = s->cfg.baseline_tau_s;
  if (s->step_memo_tau_s != tau) { /* first use, or a new tau (reconfigured) */
    double x0 = -0.0 / tau;      /* every entry starts as dt = +0 */
    SEG_StepMemo zero = {0, exp(x0), expm1(x0)};
    for (unsigned i = 0; i < sizeof s->step_memo / sizeof s->step_memo[0]; i++)
      s->step_memo[i] = zero;
    s->step_memo_tau_s = tau;
  }
  uint64_t bits;
  memcpy(&bits, &dt, sizeof bits);
  SEG_StepMemo *m = &s->step_memo[(bits * 0x9E3779B97F4A7C15ull) >> (64 - SEG_STEP_MEMO_BITS)];
  if (m->dt_bits != bits) {
    double x = -dt / tau;
    m->dt_bits = bits;
    m->exp_x = exp(x);
    m->expm1_x = expm1(x);
  }
  *exp_x = m->exp_x;
  *expm1_x = m->expm1_x;
}

/* Adds an idle sample with exponential forgetting (time constant tau): the
 * sums are moved to the new reference time, decayed, and the sample added. */
static void baseline_add(SEG_State *s, double t, double p, double decay)
{
  double d = t - s->bl_ref;
  if (d > 0.0) { /* decay = exp(-d / s->cfg.baseline_tau_s), from step_decay */
    s->bl_wtt = (s->bl_wtt - 2.0 * d * s->bl_wt + d * d * s->bl_w) * decay;
    s->bl_wtp = (s->bl_wtp - d * s->bl_wp) * decay;
    s->bl_wt = (s->bl_wt - d * s->bl_w) * decay;
    s->bl_wp *= decay;
    s->bl_w *= decay;
    s->bl_ref = t;
  }
  s->bl_w += 1.0;
  s->bl_wp += p;
  baseline_refit(s); /* noise_w, changed just before by follow_idle, is in it too */
  s->baseline_w = baseline_at(s, t);
}

/* An idle sample dev watts above the baseline line at its time, with the
 * spindle speed unchanged: power well under the line (the stream began in
 * contact, or the spindle slowed) re-seeds the line, else the sample adds to
 * the fit and to the noise estimate. */
static void follow_idle(SEG_State *s, const SMP_Sample *x, double dev)
{
  double p = x->spindle_power_w;
  if (isnan(s->baseline_rpm))
    s->baseline_rpm = x->spindle_speed_rpm;
  double on = on_threshold(s);
  if (dev < -on) {
    baseline_seed(s, x->time, p, x->spindle_speed_rpm);
    return;
  }
  /* One step for both uses: exp for the decay of the sums, expm1 for the
   * weight of this sample in the noise estimate. */
  double decay, em1;
  step_decay(s, x->time - s->bl_ref, &decay, &em1);
  if (fabs(dev) < on && s->bl_w >= 3.0) {
    double wn = -em1; /* -expm1(-(x->time - s->bl_ref) / s->cfg.baseline_tau_s) */
    double var = s->noise_w * s->noise_w;
    var += wn * (dev * dev - var);
    s->noise_w = sqrt(var);
  }
  baseline_add(s, x->time, p, decay);
}

/* Follows the idle power while the wheel is out of contact. Idle power drifts
 * with temperature (followed by the fit) and depends on spindle speed: a change
 * of speed re-seeds the fit and holds off contact while the spindle settles. */
static void track_baseline(SEG_State *s, const SMP_Sample *x)
{
  double p = x->spindle_power_w, rpm = x->spindle_speed_rpm;
  if (!s->have_baseline) {
    baseline_seed(s, x->time, p, rpm);
    return;
  }
  if (speed_changed(s, x)) {
    baseline_seed(s, x->time, p, rpm);
    s->settle_until = x->time + fmin(2.0, s->cfg.baseline_tau_s);
    return;
  }
  follow_idle(s, x, p - baseline_at(s, x->time));
}

/* Idle power under the pass: the line frozen at its start, extrapolated. */
static double pass_baseline(const SEG_State *s, double t)
{
  return s->pass_bl_level + s->pass_bl_slope * (t - s->pass_bl_ref);
}

static void start_pass(SEG_State *s, const SMP_Sample *x, double net, int after_gap)
{
  s->in_pass = 1;
  s->below = 0;
  s->pass_bl_level = s->bl_level;
  s->pass_bl_slope = s->bl_slope;
  s->pass_bl_ref = s->bl_ref;
  s->energy_j = 0.0;
  s->pend_energy_j = 0.0;
  s->peak_w = net;
  s->sum_net = 0.0;
  s->sum_vw = s->sum_rpm = s->sum_ds = s->sum_doc = 0.0;
  s->n_vw = s->n_rpm = s->n_ds = s->n_doc = s->n_samples = s->pend_samples = 0;
  s->infeed_first = s->infeed_last = NAN;
  s->infeed_first_t = s->infeed_last_t = NAN;
  s->dress_first = x->dress_count;
  s->n_rise = 0;
  s->n_fall = 0;
  s->fall_head = 0;
  s->start_after_gap = after_gap;
  if (!after_gap && s->have_last) {
    /* The rising edge: from the last idle sample to this one. */
    double prev = s->last.spindle_power_w - pass_baseline(s, s->last.time);
    s->rise[s->n_rise++] = (SEG_EdgeSample){s->last.time, prev};
    s->energy_j += 0.5 * (prev + net) * (x->time - s->last.time);
    s->t_first = x->time;
  } else {
    s->t_first = x->time;
  }
}

/* Adds one contact sample (already integrated from the previous sample). */
static void add_contact(SEG_State *s, const SMP_Sample *x, double net)
{
  s->t_last = x->time;
  s->n_samples++;
  s->sum_net += net;
  if (net > s->peak_w)
    s->peak_w = net;
  if (!isnan(x->work_speed_mm_min)) {
    s->sum_vw += x->work_speed_mm_min;
    s->n_vw++;
  }
  if (!isnan(x->spindle_speed_rpm)) {
    s->sum_rpm += x->spindle_speed_rpm;
    s->n_rpm++;
  }
  if (!isnan(x->wheel_diameter_mm)) {
    s->sum_ds += x->wheel_diameter_mm;
    s->n_ds++;
  }
  if (!isnan(x->depth_of_cut_mm)) {
    s->sum_doc += x->depth_of_cut_mm;
    s->n_doc++;
  }
  if (!isnan(x->infeed_position_mm)) {
    if (isnan(s->infeed_first)) {
      s->infeed_first = x->infeed_position_mm;
      s->infeed_first_t = x->time;
    }
    s->infeed_last = x->infeed_position_mm;
    s->infeed_last_t = x->time;
  }
  if (s->n_rise < SEG_EDGE)
    s->rise[s->n_rise++] = (SEG_EdgeSample){x->time, net};
  s->fall[s->fall_head] = (SEG_EdgeSample){x->time, net};
  s->fall_head = (s->fall_head + 1) % SEG_EDGE;
  if (s->n_fall < SEG_EDGE)
    s->n_fall++;
}

/* Linear interpolation of the time where the segment (a, b) crosses level. */
static double cross_time(SEG_EdgeSample a, SEG_EdgeSample b, double level)
{
  if (b.p == a.p)
    return b.t;
  return a.t + (level - a.p) * (b.t - a.t) / (b.p - a.p);
}

/* Places the start at the half-power crossing of the rising edge. For a
 * sampled rectangle this is unbiased; for a ramp it is exact. */
static double refine_start(const SEG_State *s, double level)
{
  for (unsigned i = 0; i + 1 < s->n_rise; i++)
    if (s->rise[i].p < level && s->rise[i + 1].p >= level)
      return cross_time(s->rise[i], s->rise[i + 1], level);
  return s->t_first;
}

static double refine_end(const SEG_State *s, const SEG_EdgeSample *after, double level)
{
  SEG_EdgeSample seq[SEG_EDGE + 1];
  unsigned n = 0;
  unsigned start = (s->fall_head + SEG_EDGE - s->n_fall) % SEG_EDGE;
  for (unsigned i = 0; i < s->n_fall; i++)
    seq[n++] = s->fall[(start + i) % SEG_EDGE];
  if (after)
    seq[n++] = *after;
  for (unsigned i = n; i-- > 1;)
    if (seq[i - 1].p >= level && seq[i].p < level)
      return cross_time(seq[i - 1], seq[i], level);
  return after ? after->t : s->t_last;
}

static void fill_figures(SEG_State *s, SEG_Pass *o)
{
  const SEG_Config *c = &s->cfg;
  double vw_mm_min = s->n_vw ? s->sum_vw / s->n_vw : NAN;
  o->work_speed_mm_s = UNT_MmPerMinToMmPerS(vw_mm_min);
  o->spindle_speed_rpm = s->n_rpm ? s->sum_rpm / s->n_rpm : NAN;
  o->wheel_diameter_mm = s->n_ds ? s->sum_ds / s->n_ds : c->wheel_diameter_mm;
  o->wheel_speed_m_s = UNT_SurfaceSpeed(o->wheel_diameter_mm, o->spindle_speed_rpm);
  o->equivalent_diameter_mm = GRD_EquivalentDiameter(c->geometry, o->wheel_diameter_mm,
                                                     c->workpiece_diameter_mm);
  o->infeed_position_mm = s->infeed_last;
  o->dress_count = s->dress_first;
  if (isnan(o->work_speed_mm_s) || isnan(o->wheel_speed_m_s))
    o->flags |= SEG_F_NO_SPEED;

  /* Depth of cut: the controller's figure, else the infeed since the previous
   * pass (plunge: the infeed rate over the pass), else the configured one. */
  double ae = NAN;
  if (s->n_doc) {
    ae = s->sum_doc / s->n_doc;
  } else if (!isnan(s->infeed_last)) {
    if (c->geometry == GRD_PLUNGE) {
      double span = s->infeed_last_t - s->infeed_first_t;
      if (span > 0.0) {
        double vf = (s->infeed_last - s->infeed_first) / span;
        ae = GRD_PlungeDepthPerRevolution(vf, c->workpiece_diameter_mm, o->work_speed_mm_s);
        if (fabs(s->infeed_last - s->infeed_first) <= c->depth_tolerance_mm)
          ae = 0.0;
      }
    } else if (s->have_prev_infeed) {
      ae = s->infeed_last - s->prev_infeed_mm;
      if (ae < -c->depth_tolerance_mm) {
        ae = NAN;
        o->flags |= SEG_F_NEW_PART;
      } else if (ae <= c->depth_tolerance_mm) {
        ae = 0.0;
      }
    }
    s->have_prev_infeed = 1;
    s->prev_infeed_mm = s->infeed_last;
  } else if (!isnan(c->fixed_depth_mm)) {
    ae = c->fixed_depth_mm;
  }
  if (isnan(ae))
    o->flags |= SEG_F_DEPTH_UNKNOWN;
  else if (ae == 0.0)
    o->flags |= SEG_F_SPARK_OUT;
  o->depth_mm = ae;

  if (!isnan(o->dress_count)) {
    if (s->have_prev_dress && o->dress_count != s->prev_dress)
      o->flags |= SEG_F_AFTER_DRESS;
    s->have_prev_dress = 1;
    s->prev_dress = o->dress_count;
  }

  GRD_Conditions k = {c->geometry, o->wheel_diameter_mm, c->workpiece_diameter_mm, c->width_mm, ae,
                      o->work_speed_mm_s, o->wheel_speed_m_s};
  GRD_Figures f;
  GRD_Compute(&k, &c->params, &f, NULL);
  o->contact_length_mm = f.lg_mm;
  o->specific_removal_rate_mm2_s = f.q_prime_mm2_s;
  o->removal_rate_mm3_s = f.q_mm3_s;
  o->aggressiveness = f.aggr;
  o->chip_thickness_mm = f.heq_mm;
  o->max_chip_thickness_mm = f.hmax_mm;
  o->volume_mm3 = f.q_mm3_s * o->duration_s;
  o->specific_energy_j_mm3 = o->volume_mm3 > 0.0 ? o->energy_j / o->volume_mm3 : NAN;
  o->burn_threshold_j_mm3 = f.u_star_j_mm3;
  o->burn_ratio = o->specific_energy_j_mm3 / o->burn_threshold_j_mm3;
}

/* Closes the open pass. `after` is the first sample out of contact (the end
 * of the falling edge), NULL when a gap or the end of the stream cut it.
 * Returns 1 when the pass is long enough to be reported. */
static int end_pass(SEG_State *s, const SEG_EdgeSample *after, unsigned flags, SEG_Pass *o)
{
  s->in_pass = 0;
  s->below = 0;
  double energy = s->energy_j + (after ? s->edge_energy_j : 0.0);
  double level = 0.5 * (s->n_samples ? s->sum_net / s->n_samples : 0.0);
  double t0 = s->start_after_gap ? s->t_first : refine_start(s, level);
  double t1 = after ? refine_end(s, after, level) : s->t_last;
  if (s->start_after_gap)
    flags |= SEG_F_GAP;
  if (t1 - t0 < s->cfg.min_pass_s || s->n_samples < s->cfg.min_pass_samples)
    return 0;
  memset(o, 0, sizeof(*o));
  o->number = s->next_number++;
  o->start_time = t0;
  o->end_time = t1;
  o->duration_s = t1 - t0;
  o->idle_power_w = pass_baseline(s, t0);
  o->energy_j = energy;
  o->net_power_mean_w = o->duration_s > 0.0 ? energy / o->duration_s : NAN;
  o->net_power_peak_w = s->peak_w;
  o->samples = s->n_samples;
  o->flags = flags;
  fill_figures(s, o);
  return 1;
}

/* A gap: the open pass (if any) ends at its last sample. A gap long enough to
 * hide a whole pass makes the next infeed difference unknown (see SEG_Feed). */
static int gap(SEG_State *s, SEG_Pass *out)
{
  int done = 0;
  if (s->in_pass) {
    done = end_pass(s, NULL, SEG_F_GAP, out);
    s->have_prev_infeed = 0; /* the rest of this stroke must not read as a spark-out */
  }
  if (s->have_last) {
    s->in_gap = 1;
    s->gap_from = s->last.time;
  }
  s->have_last = 0;
  return done;
}

int SEG_Feed(SEG_State *s, const SMP_Sample *x, SEG_Pass *out)
{
  if (isnan(x->time))
    return 0;
  if (isnan(x->spindle_power_w) || !isfinite(x->spindle_power_w))
    return gap(s, out);
  int done = 0;
  if (s->have_last) {
    double step = x->time - s->last.time;
    if (step == 0.0)
      return 0; /* the same instant twice (a clock register that did not move) */
    if (step < 0.0 || step > s->cfg.max_interval_s)
      done = gap(s, out); /* leaves no pass open, so nothing below can end one */
  }
  if (s->in_gap && !s->have_last) {
    if (x->time - s->gap_from >= s->cfg.min_pass_s || x->time < s->gap_from)
      s->have_prev_infeed = 0;
    s->in_gap = 0;
  }
  double dt = s->have_last ? x->time - s->last.time : 0.0;
  int flagged = !isnan(x->grinding);

  if (!s->in_pass && s->have_baseline && speed_changed(s, x)) {
    track_baseline(s, x); /* re-seeds and holds contact off while the spindle settles */
  } else if (!s->in_pass) {
    double net = s->have_baseline ? x->spindle_power_w - baseline_at(s, x->time) : 0.0;
    int contact = flagged ? x->grinding > 0.5
                          : (s->have_baseline && s->bl_w >= SEG_MIN_IDLE_WEIGHT && x->time >= s->settle_until &&
                             net > on_threshold(s));
    /* Flagged contact before any idle sample (the stream began mid-pass) is
     * skipped: that power is no idle baseline, and the pass cannot be measured. */
    if (contact && s->have_baseline) {
      start_pass(s, x, net, !s->have_last);
      add_contact(s, x, net);
    } else if (!contact && s->have_baseline) {
      follow_idle(s, x, net); /* what track_baseline does, without computing net again */
    } else if (!contact) {
      track_baseline(s, x);
    }
  } else {
    double net = x->spindle_power_w - pass_baseline(s, x->time);
    double seg = 0.5 * (s->last_net_w + net) * dt;
    int contact = flagged ? x->grinding > 0.5 : net > off_threshold(s);
    if (contact) {
      s->energy_j += s->pend_energy_j + seg;
      s->pend_energy_j = 0.0;
      s->below = 0;
      add_contact(s, x, net);
    } else {
      if (s->below == 0) {
        s->below_since = x->time;
        s->edge_energy_j = seg;
        s->edge = (SEG_EdgeSample){x->time, net};
      }
      s->below++;
      s->pend_energy_j += seg;
      if (flagged || x->time - s->below_since >= s->cfg.end_hold_s) {
        SEG_EdgeSample after = s->edge;
        done = end_pass(s, &after, 0, out);
        track_baseline(s, x);
      }
    }
  }
  s->last = *x;
  s->have_last = 1;
  s->last_net_w = x->spindle_power_w - (s->in_pass ? pass_baseline(s, x->time) : s->baseline_w);
  return done;
}

int SEG_Finish(SEG_State *s, SEG_Pass *out)
{
  if (!s->in_pass)
    return 0;
  return end_pass(s, NULL, SEG_F_TRUNCATED, out);
}
