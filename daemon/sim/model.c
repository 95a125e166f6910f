/* model.c: the simulated surface grinder (see docs/simulator.md for every equation). */
#include "model.h"

#include "rng.h"
#include "units.h"

#include <math.h>
#include <string.h>

/* Independent noise streams drawn from the one scenario seed. */
#define STREAM_POWER 0x706f776572ull /* "power" */
#define STREAM_RPM 0x72706dull       /* "rpm" */
#define STREAM_PHASE 0x7068617365ull /* "phase" */

const char *SIM_PassKindName(SIM_PassKind k)
{
  switch (k) {
  case SIM_PASS_ROUGH:
    return "rough";
  case SIM_PASS_FINISH:
    return "finish";
  case SIM_PASS_SPARK_OUT:
    return "spark_out";
  }
  return "?";
}

double SIM_BurnThreshold(double de_mm, double ae_mm, double vw_mm_s)
{
  return 6.2 + 1.76 * pow(de_mm, 0.25) * pow(ae_mm, -0.75) * pow(vw_mm_s, -0.5);
}

void SIM_CutEnergy(const SIM_Scenario *s, const SIM_Cut *c, double wear_flat, SIM_Energy *e)
{
  const SIM_Job *j = &s->job;
  double vs_mm_s = c->vs_m_s * 1000.0;
  e->de_mm = c->ds_mm; /* surface grinding: a flat work surface */
  e->lg_mm = sqrt(c->ae_mm * e->de_mm);
  e->heq_mm = c->ae_mm * c->vw_mm_s / vs_mm_s;
  e->aggr = 1.0e6 * (c->vw_mm_s / vs_mm_s) * sqrt(c->ae_mm / e->de_mm);
  e->q_mm3_s = c->b_mm * c->ae_mm * c->vw_mm_s;
  e->u_chip_j_mm3 = j->chip_energy_j_mm3;
  /* A ploughing force per unit width that does not depend on the chip: its
   * power F'*b*vs over Q is F'/heq; 1 N/mm^2 = 1e-3 J/mm^3. */
  e->u_plough_j_mm3 = 1.0e-3 * j->ploughing_force_n_mm / e->heq_mm;
  /* Sliding power mu*p*A*b*lg*vs over Q = b*ae*vw gives mu*p*A*1e6/Aggr. */
  e->u_slide_j_mm3 =
    1.0e-3 * j->friction_coefficient * j->contact_pressure_mpa * wear_flat * 1.0e6 / e->aggr;
  e->u_j_mm3 = e->u_chip_j_mm3 + e->u_plough_j_mm3 + e->u_slide_j_mm3;
  e->power_w = e->u_j_mm3 * e->q_mm3_s;
  e->u_star_j_mm3 = SIM_BurnThreshold(e->de_mm, c->ae_mm, c->vw_mm_s) * j->burn_factor;
}

void SIM_CutWear(const SIM_Scenario *s, const SIM_Cut *c, double aggr, double wear_flat,
                 double length_mm, SIM_Wear *w)
{
  const SIM_Wheel *wh = &s->wheel;
  double volume = c->b_mm * c->ae_mm * length_mm;
  double v_per_width = c->ae_mm * length_mm;
  double f = wh->wear_factor;
  double attrition =
    f * wh->dulling_rate * pow(wh->dulling_aggressiveness / aggr, wh->dulling_exponent);
  double fracture_share = pow(aggr / wh->fracture_aggressiveness, wh->fracture_exponent);
  double fracture = f * wh->fracture_rate * fracture_share;
  /* dx/dV' = a*(1 - x/D) - fr*x with x = A - A0: linear, solved exactly over the
   * pass so the result does not depend on how the volume is cut up. */
  double span = wh->max_wear_flat - wh->sharp_wear_flat;
  double x = wear_flat - wh->sharp_wear_flat;
  double lambda = attrition / span + fracture;
  if (lambda > 0.0) {
    double x_eq = attrition / lambda;
    x = x_eq + (x - x_eq) * exp(-lambda * v_per_width);
  }
  w->wear_flat_after = wh->sharp_wear_flat + x;
  w->wheel_volume_mm3 = volume * f * (1.0 / wh->g_ratio + fracture_share / wh->fracture_g_ratio);
  /* The wheel wears over the grinding width b. */
  double d2 = c->ds_mm * c->ds_mm - 4.0 * w->wheel_volume_mm3 / (M_PI * c->b_mm);
  w->diameter_after_mm = d2 > 0.0 ? sqrt(d2) : 0.0;
  w->g_ratio = w->wheel_volume_mm3 > 0.0 ? volume / w->wheel_volume_mm3 : INFINITY;
}

double SIM_IdlePower(const SIM_Scenario *s, double t)
{
  const SIM_Machine *m = &s->machine;
  double tt = t > 0.0 ? t : 0.0;
  double phi1 = 2.0 * M_PI * SIM_Uniform(s->noise.seed ^ STREAM_PHASE, 1);
  double phi2 = 2.0 * M_PI * SIM_Uniform(s->noise.seed ^ STREAM_PHASE, 2);
  double period = m->drift_period_s;
  /* Two sines with periods in an irrational-looking ratio: a wander that does
   * not repeat within a shift. */
  double wander = 0.6 * sin(2.0 * M_PI * tt / period + phi1) +
                  0.4 * sin(2.0 * M_PI * tt / (0.383 * period) + phi2);
  return m->idle_power_w + m->warmup_power_w * exp(-tt / m->warmup_s) + m->drift_w * wander;
}

static uint64_t noise_counter(const SIM_Scenario *s, double t)
{
  return (uint64_t)(int64_t)floor(t / s->noise.step_s);
}

double SIM_PowerNoise(const SIM_Scenario *s, double t)
{
  if (s->noise.power_sd_w <= 0.0)
    return 0.0;
  return s->noise.power_sd_w * SIM_Gauss(s->noise.seed ^ STREAM_POWER, noise_counter(s, t));
}

double SIM_SpindleRpm(const SIM_Scenario *s, double ds_mm)
{
  if (s->machine.wheel_speed_m_s > 0.0)
    return UNT_SpindleSpeedFor(ds_mm, s->machine.wheel_speed_m_s);
  return s->machine.spindle_rpm;
}

static double part_value(const SIM_PartValue *pv, int n, unsigned long part, double base)
{
  double v = base;
  for (int i = 0; i < n; i++)
    if ((unsigned long)pv[i].part <= part)
      v = pv[i].value;
  return v;
}

double SIM_PartTableSpeed(const SIM_Scenario *s, unsigned long part)
{
  return part_value(s->schedule.table_speed, s->schedule.n_table_speed, part,
                    s->job.table_speed_mm_min);
}

double SIM_PassDepth(const SIM_Scenario *s, unsigned long part, unsigned index)
{
  const SIM_Job *j = &s->job;
  if (index <= (unsigned)j->rough_passes)
    return part_value(s->schedule.rough_depth, s->schedule.n_rough_depth, part, j->rough_depth_mm);
  if (index <= (unsigned)(j->rough_passes + j->finish_passes))
    return part_value(s->schedule.finish_depth, s->schedule.n_finish_depth, part,
                      j->finish_depth_mm);
  return 0.0;
}

void SIM_ModelInit(SIM_Model *m, const SIM_Scenario *s)
{
  memset(m, 0, sizeof *m);
  m->sc = s;
  m->phase = SIM_PH_START;
  m->seg_start = 0.0;
  m->seg_end = s->schedule.start_delay_s;
  m->passes_per_part =
    (unsigned)(s->job.rough_passes + s->job.finish_passes + s->job.spark_out_passes);
  m->ds_mm = s->wheel.diameter_mm;
  m->wear_flat = s->wheel.sharp_wear_flat;
}

void SIM_ModelRequestDress(SIM_Model *m) { m->dress_requested = 1; }

static void start_load(SIM_Model *m, double t0)
{
  m->phase = SIM_PH_LOAD;
  m->seg_start = t0;
  m->seg_end = t0 + m->sc->job.load_s;
  m->infeed_mm = 0.0;
}

static void start_pass(SIM_Model *m, double t0)
{
  const SIM_Scenario *s = m->sc;
  const SIM_Job *j = &s->job;
  m->pass_in_part++;
  m->pass++;
  double ae = SIM_PassDepth(s, m->part, m->pass_in_part);
  m->infeed_mm += ae;
  double rpm = SIM_SpindleRpm(s, m->ds_mm);
  SIM_Cut cut = { m->ds_mm, j->width_mm, ae, m->vw_mm_s, UNT_SurfaceSpeed(m->ds_mm, rpm) };

  SIM_PassRecord *r = &m->cur;
  memset(r, 0, sizeof *r);
  r->pass = m->pass;
  r->part = m->part;
  r->pass_in_part = m->pass_in_part;
  r->depth_mm = ae;
  r->work_speed_mm_min = UNT_MmPerSToMmPerMin(m->vw_mm_s);
  r->wheel_speed_m_s = cut.vs_m_s;
  r->spindle_rpm = rpm;
  r->wheel_diameter_mm = m->ds_mm;
  r->equivalent_diameter_mm = m->ds_mm;
  r->wear_flat = m->wear_flat;
  r->dress_count = m->dress_count;

  double lg;
  if (ae > 0.0) {
    SIM_Energy e, sharp;
    SIM_CutEnergy(s, &cut, m->wear_flat, &e);
    SIM_CutEnergy(s, &cut, s->wheel.sharp_wear_flat, &sharp);
    r->kind = m->pass_in_part <= (unsigned)j->rough_passes ? SIM_PASS_ROUGH : SIM_PASS_FINISH;
    r->aggressiveness = e.aggr;
    r->chip_thickness_mm = e.heq_mm;
    r->specific_energy_j_mm3 = e.u_j_mm3;
    r->power_w = e.power_w;
    r->volume_mm3 = j->width_mm * ae * j->length_mm;
    r->dull_factor = e.u_j_mm3 / sharp.u_j_mm3;
    r->burn_threshold_j_mm3 = e.u_star_j_mm3;
    r->burnt = e.u_j_mm3 > e.u_star_j_mm3;
    lg = e.lg_mm;
    m->last_power_w = e.power_w;
    m->last_lg_mm = lg;
  } else {
    /* Spark-out: no infeed, the deflection of the pass before relaxes and the
     * power falls by spark_out_fraction per pass. */
    unsigned k = m->pass_in_part - (unsigned)(j->rough_passes + j->finish_passes);
    r->kind = SIM_PASS_SPARK_OUT;
    r->power_w = m->last_power_w * pow(j->spark_out_fraction, (double)k);
    r->specific_energy_j_mm3 = NAN;
    r->dull_factor = NAN;
    r->burn_threshold_j_mm3 = NAN;
    r->g_ratio = NAN;
    lg = m->last_lg_mm;
  }
  /* With ramps of lg/vw at both ends of a contact of (L + lg)/vw the energy is
   * exactly P*L/vw = u*b*ae*L. */
  r->energy_j = r->power_w * j->length_mm / m->vw_mm_s;

  m->phase = SIM_PH_PASS;
  m->seg_start = t0;
  m->travel_start = t0 + j->reversal_s;
  m->contact_start = m->travel_start + (j->overrun_mm - lg / 2.0) / m->vw_mm_s;
  m->contact_end = m->travel_start + (j->overrun_mm + j->length_mm + lg / 2.0) / m->vw_mm_s;
  m->seg_end = m->travel_start + (j->length_mm + 2.0 * j->overrun_mm) / m->vw_mm_s;
  m->ramp_s = lg / m->vw_mm_s;
  m->pass_power_w = r->power_w;
  m->contact_done = 0;
  r->start_s = m->contact_start;
  r->end_s = m->contact_end;
}

static void start_part(SIM_Model *m, double t0)
{
  m->part++;
  m->pass_in_part = 0;
  m->infeed_mm = 0.0;
  m->vw_mm_s = UNT_MmPerMinToMmPerS(SIM_PartTableSpeed(m->sc, m->part));
  start_pass(m, t0);
}

static void finish_pass(SIM_Model *m, SIM_Event *ev)
{
  const SIM_Scenario *s = m->sc;
  SIM_PassRecord *r = &m->cur;
  m->contact_done = 1;
  if (r->depth_mm > 0.0) {
    SIM_Cut cut = { m->ds_mm, s->job.width_mm, r->depth_mm, m->vw_mm_s, r->wheel_speed_m_s };
    SIM_Wear w;
    SIM_CutWear(s, &cut, r->aggressiveness, m->wear_flat, s->job.length_mm, &w);
    r->g_ratio = w.g_ratio;
    m->wear_flat = w.wear_flat_after;
    m->ds_mm = w.diameter_after_mm;
    if (m->ds_mm < s->wheel.min_diameter_mm)
      m->worn_out = 1;
  }
  memset(ev, 0, sizeof *ev);
  ev->kind = SIM_EVENT_PASS;
  ev->pass = *r;
}

static int finished(const SIM_Model *m)
{
  int parts = m->sc->schedule.parts;
  return m->worn_out || (parts > 0 && m->part >= (unsigned long)parts);
}

static void end_part(SIM_Model *m, double t0)
{
  const SIM_Schedule *c = &m->sc->schedule;
  const char *reason = NULL;
  if (m->dress_requested)
    reason = "request";
  else if (c->dress_every_parts > 0 && m->part % (unsigned long)c->dress_every_parts == 0)
    reason = "every";
  for (int i = 0; reason == NULL && i < c->n_dress_at; i++)
    if ((unsigned long)c->dress_at[i] == m->part)
      reason = "at";
  m->infeed_mm = 0.0;
  if (reason != NULL) {
    m->dress_requested = 0;
    m->phase = SIM_PH_DRESS;
    m->seg_start = t0;
    m->seg_end = t0 + m->sc->wheel.dress_s;
    memset(&m->dress, 0, sizeof m->dress);
    m->dress.part = m->part;
    m->dress.start_s = t0;
    m->dress.end_s = m->seg_end;
    m->dress.diameter_before_mm = m->ds_mm;
    m->dress.wear_flat_before = m->wear_flat;
    m->dress.reason = reason;
  } else if (finished(m)) {
    m->phase = SIM_PH_DONE;
    m->seg_start = t0;
    m->seg_end = INFINITY;
  } else {
    start_load(m, t0);
  }
}

static void finish_dress(SIM_Model *m, SIM_Event *ev)
{
  const SIM_Wheel *w = &m->sc->wheel;
  m->ds_mm -= 2.0 * w->dress_depth_mm;
  m->wear_flat = w->sharp_wear_flat;
  m->dress_count++;
  if (m->ds_mm < w->min_diameter_mm)
    m->worn_out = 1;
  m->dress.dress_count = m->dress_count;
  m->dress.diameter_after_mm = m->ds_mm;
  memset(ev, 0, sizeof *ev);
  ev->kind = SIM_EVENT_DRESS;
  ev->dress = m->dress;
  double t0 = m->seg_end;
  if (finished(m)) {
    m->phase = SIM_PH_DONE;
    m->seg_start = t0;
    m->seg_end = INFINITY;
  } else {
    start_load(m, t0);
  }
}

int SIM_ModelStep(SIM_Model *m, double t, SIM_Event *ev)
{
  for (;;) {
    if (m->phase == SIM_PH_PASS && !m->contact_done && t >= m->contact_end) {
      m->t = m->contact_end;
      finish_pass(m, ev);
      return 1;
    }
    if (m->phase == SIM_PH_DONE || t < m->seg_end) {
      if (t > m->t)
        m->t = t;
      return 0;
    }
    double t0 = m->seg_end;
    m->t = t0;
    switch (m->phase) {
    case SIM_PH_START:
      start_load(m, t0);
      break;
    case SIM_PH_LOAD:
      start_part(m, t0);
      break;
    case SIM_PH_PASS:
      if (m->pass_in_part < m->passes_per_part)
        start_pass(m, t0);
      else
        end_part(m, t0);
      break;
    case SIM_PH_DRESS:
      finish_dress(m, ev);
      return 1;
    default:
      return 0;
    }
  }
}

void SIM_ModelSnapshot(const SIM_Model *m, double t, SIM_Snapshot *snap)
{
  const SIM_Scenario *s = m->sc;
  memset(snap, 0, sizeof *snap);
  snap->t = t;
  snap->spindle_rpm = SIM_SpindleRpm(s, m->ds_mm);
  if (s->noise.rpm_sd > 0.0)
    snap->spindle_rpm += s->noise.rpm_sd * SIM_Gauss(s->noise.seed ^ STREAM_RPM, noise_counter(s, t));
  snap->spindle_power_w = SIM_IdlePower(s, t) + SIM_PowerNoise(s, t);
  snap->wheel_diameter_mm = m->ds_mm;
  snap->dress_count = m->dress_count;
  snap->pass = m->pass;
  snap->part = m->part;
  snap->wear_flat = m->wear_flat;
  snap->infeed_mm = s->job.infeed_zero_mm;
  snap->state = SIM_STATE_IDLE;

  int phase = t < 0.0 ? SIM_PH_START : m->phase;
  switch (phase) {
  case SIM_PH_START:
    snap->depth_mm = SIM_PassDepth(s, 1, 1);
    break;
  case SIM_PH_LOAD:
    snap->state = SIM_STATE_LOADING;
    snap->depth_mm = SIM_PassDepth(s, m->part + 1, 1);
    break;
  case SIM_PH_DRESS:
    snap->state = SIM_STATE_DRESSING;
    snap->depth_mm = SIM_PassDepth(s, m->part + 1, 1);
    break;
  case SIM_PH_PASS: {
    snap->state = SIM_STATE_GRINDING;
    snap->infeed_mm += m->infeed_mm;
    snap->depth_mm = m->cur.depth_mm;
    if (t >= m->travel_start)
      snap->work_speed_mm_min = UNT_MmPerSToMmPerMin(m->vw_mm_s);
    if (t >= m->contact_start && t < m->contact_end) {
      snap->grinding = 1;
      double tau = t - m->contact_start;
      double left = m->contact_end - t;
      double f = 1.0;
      if (m->ramp_s > 0.0) {
        f = fmin(f, tau / m->ramp_s);
        f = fmin(f, left / m->ramp_s);
      }
      snap->spindle_power_w += m->pass_power_w * f;
    }
    break;
  }
  default: /* done */
    snap->depth_mm = 0.0;
    break;
  }
}
