/* condition.c: the wheel-condition model and its events (see condition.h). */
#include "condition.h"

#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>

#include "grind.h"
#include "units.h"

static const char *const kind_names[CND_KIND_COUNT] = {
    "dulling",       "low_aggressiveness", "high_aggressiveness", "wheel_wear",     "burn_risk", "overload",
    "overspeed",     "communication_lost", "stale_data",          "logging_failed", "dress",     "forecast",
};
static const char *const severity_names[CND_SEVERITY_COUNT] = {"info", "warning", "critical"};
static const char *const transition_names[] = {"raised", "cleared", "info"};

const char *CND_KindName(CND_Kind k) { return (unsigned)k < CND_KIND_COUNT ? kind_names[k] : "?"; }

int CND_KindFromName(const char *name, CND_Kind *k)
{
  for (int i = 0; i < CND_KIND_COUNT; i++) {
    if (strcmp(name, kind_names[i]) == 0) {
      *k = (CND_Kind)i;
      return 0;
    }
  }
  return -1;
}

const char *CND_SeverityName(CND_Severity s) { return (unsigned)s < CND_SEVERITY_COUNT ? severity_names[s] : "?"; }

int CND_SeverityFromName(const char *name, CND_Severity *s)
{
  for (int i = 0; i < CND_SEVERITY_COUNT; i++) {
    if (strcmp(name, severity_names[i]) == 0) {
      *s = (CND_Severity)i;
      return 0;
    }
  }
  return -1;
}

const char *CND_TransitionName(CND_Transition t) { return (unsigned)t <= CND_NOTE ? transition_names[t] : "?"; }

static void set_rule(CND_Rule *r, CND_Severity sev, unsigned raise_after, unsigned clear_after, double band)
{
  r->severity = sev;
  r->raise_after = raise_after;
  r->clear_after = clear_after;
  r->band = band;
}

void CND_DefaultSettings(CND_Settings *s)
{
  memset(s, 0, sizeof(*s));
  snprintf(s->wheel.name, sizeof(s->wheel.name), "%s", "cx60-vitrified");
  s->wheel.aggr_low = 15.0;
  s->wheel.aggr_high = 20.0;
  s->wheel.aggr_min = 5.0;
  s->wheel.aggr_max = 50.0;
  s->wheel.dull_limit = 1.3;
  s->wheel.burn_margin = 0.8;
  s->wheel.min_g_ratio = 20.0;
  s->wheel.max_speed_m_s = NAN;
  s->wheel.wear_drop_ratio = 0.8;
  s->machine.spindle_rating_w = NAN;
  s->machine.wheel_diameter_mm = NAN;
  snprintf(s->job.name, sizeof(s->job.name), "%s", "job");
  s->job.width_mm = NAN;
  s->job.wear_width_mm = NAN;
  s->job.diameter_measured = 0;
  CYC_DefaultSettings(&s->model);
  s->cusum_gate = 1.0;
  set_rule(&s->rule[CND_DULLING], CND_WARNING, 3, 3, 0.02);
  set_rule(&s->rule[CND_LOW_AGGR], CND_WARNING, 5, 3, 0.03);
  set_rule(&s->rule[CND_HIGH_AGGR], CND_WARNING, 5, 3, 0.03);
  set_rule(&s->rule[CND_WHEEL_WEAR], CND_WARNING, 3, 5, 0.05);
  set_rule(&s->rule[CND_BURN_RISK], CND_WARNING, 2, 3, 0.03);
  set_rule(&s->rule[CND_OVERLOAD], CND_WARNING, 2, 3, 0.02);
  set_rule(&s->rule[CND_OVERSPEED], CND_CRITICAL, 1, 5, 0.01);
  set_rule(&s->rule[CND_COMM_LOST], CND_WARNING, 1, 1, 0.0);
  set_rule(&s->rule[CND_STALE_DATA], CND_WARNING, 1, 1, 0.0);
  set_rule(&s->rule[CND_LOGGING_FAILED], CND_WARNING, 1, 1, 0.0);
}

static int fail(char *err, unsigned long size, const char *fmt, ...)
{
  if (err && size) {
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(err, size, fmt, ap);
    va_end(ap);
  }
  return -1;
}

static int positive(double x) { return isfinite(x) && x > 0.0; }
static int unset_or_positive(double x) { return isnan(x) || positive(x); }

int CND_CheckSettings(const CND_Settings *s, char *err, unsigned long n)
{
  const CND_WheelProfile *w = &s->wheel;
  if (w->name[0] == '\0' || memchr(w->name, '\0', sizeof(w->name)) == NULL)
    return fail(err, n, "wheel.name: must be a name of 1 to %d characters", CYC_NAME_MAX - 1);
  if (!positive(w->aggr_min) || !positive(w->aggr_max) || !(w->aggr_min < w->aggr_max))
    return fail(err, n, "wheel.aggr_min: must be a positive number below wheel.aggr_max");
  if (!positive(w->aggr_low) || !positive(w->aggr_high) || !(w->aggr_low < w->aggr_high))
    return fail(err, n, "wheel.aggr_low: must be a positive number below wheel.aggr_high");
  if (w->aggr_low < w->aggr_min || w->aggr_high > w->aggr_max)
    return fail(err, n, "wheel.aggr_low: the window %g-%g lies outside the working range %g-%g", w->aggr_low,
                w->aggr_high, w->aggr_min, w->aggr_max);
  if (!(isfinite(w->dull_limit) && w->dull_limit > 1.0))
    return fail(err, n, "wheel.dull_limit: must be a number above 1");
  if (!positive(w->burn_margin))
    return fail(err, n, "wheel.burn_margin: must be a positive number");
  if (!unset_or_positive(w->min_g_ratio))
    return fail(err, n, "wheel.min_g_ratio: must be a positive number or unset");
  if (!unset_or_positive(w->max_speed_m_s))
    return fail(err, n, "wheel.max_speed_m_s: must be a positive number or unset");
  if (!(w->wear_drop_ratio > 0.0 && w->wear_drop_ratio < 1.0))
    return fail(err, n, "wheel.wear_drop_ratio: must be in (0, 1)");
  if (!unset_or_positive(s->machine.spindle_rating_w))
    return fail(err, n, "machine.spindle_rating_w: must be a positive number or unset");
  if (!unset_or_positive(s->machine.wheel_diameter_mm))
    return fail(err, n, "machine.wheel_diameter_mm: must be a positive number or unset");
  if (s->job.name[0] == '\0' || memchr(s->job.name, '\0', sizeof(s->job.name)) == NULL)
    return fail(err, n, "job.name: must be a name of 1 to %d characters", CYC_NAME_MAX - 1);
  if (!positive(s->job.width_mm))
    return fail(err, n, "job.width_mm: must be a positive number (the grinding width b)");
  if (!unset_or_positive(s->job.wear_width_mm))
    return fail(err, n, "job.wear_width_mm: must be a positive number or unset");
  if (!(s->cusum_gate > 0.0 && s->cusum_gate <= 1.0))
    return fail(err, n, "model.cusum_gate: must be in (0, 1]");
  for (int k = 0; k < CND_CONDITION_COUNT; k++) {
    const CND_Rule *r = &s->rule[k];
    if ((unsigned)r->severity >= CND_SEVERITY_COUNT)
      return fail(err, n, "rule.%s.severity: must be info, warning or critical", kind_names[k]);
    if (r->raise_after < 1)
      return fail(err, n, "rule.%s.raise_after: must be at least 1", kind_names[k]);
    if (r->clear_after < 1)
      return fail(err, n, "rule.%s.clear_after: must be at least 1", kind_names[k]);
    if (!(r->band >= 0.0 && r->band < 0.5))
      return fail(err, n, "rule.%s.band: must be in [0, 0.5)", kind_names[k]);
  }
  return CYC_CheckSettings(&s->model, err, n);
}

int CND_Init(CND_State *st, const CND_Settings *s, char *err, unsigned long errsize)
{
  if (CND_CheckSettings(s, err, errsize) != 0)
    return -1;
  memset(st, 0, sizeof(*st));
  st->set = *s;
  CYC_Init(&st->cycle, &s->model, &s->job, s->wheel.name, s->wheel.dull_limit, s->wheel.aggr_low, s->wheel.aggr_high);
  for (int k = 0; k < CND_CONDITION_COUNT; k++)
    st->track[k].value = st->track[k].limit = NAN;
  st->last_diameter_mm = NAN;
  return 0;
}

int CND_AggrAdvice(const SEG_Pass *p, double target, CND_Advice *a)
{
  a->target_aggr = target;
  a->work_speed_mm_min = UNT_MmPerSToMmPerMin(
      GRD_WorkSpeedForAggressiveness(target, p->wheel_speed_m_s, p->depth_mm, p->equivalent_diameter_mm));
  a->depth_mm = GRD_DepthForAggressiveness(target, p->wheel_speed_m_s, p->work_speed_mm_s, p->equivalent_diameter_mm);
  if (!(isfinite(a->work_speed_mm_min) && a->work_speed_mm_min > 0.0 && isfinite(a->depth_mm) && a->depth_mm > 0.0)) {
    a->work_speed_mm_min = a->depth_mm = NAN;
    return -1;
  }
  return 0;
}

/* Hysteresis: once active, an upper limit is relaxed downwards by the band. */
static int above(int active, double v, double limit, double band)
{
  return active ? v > limit * (1.0 - band) : v > limit;
}

static int below(int active, double v, double limit, double band)
{
  return active ? v < limit * (1.0 + band) : v < limit;
}

/* Hold-off and clearing: +1 when raised, -1 when cleared, 0 otherwise. */
static int track_step(CND_State *st, CND_Kind k, int holds, double value, double limit)
{
  CND_Track *t = &st->track[k];
  const CND_Rule *r = &st->set.rule[k];
  t->value = value;
  t->limit = limit;
  if (holds) {
    t->gone = 0;
    if (!t->active && ++t->hold >= r->raise_after) {
      t->active = 1;
      t->hold = 0;
      return 1;
    }
  } else {
    t->hold = 0;
    if (t->active && ++t->gone >= r->clear_after) {
      t->active = 0;
      t->gone = 0;
      return -1;
    }
  }
  return 0;
}

static void start_event(const CND_State *st, CND_Event *e, double t, CND_Kind k, CND_Transition tr, double value,
                        double limit)
{
  e->time = t;
  e->kind = k;
  e->severity = k < CND_CONDITION_COUNT ? st->set.rule[k].severity : CND_INFO;
  e->state = tr;
  e->pass = st->last_pass;
  e->cycle = st->cycle.cycle;
  e->value = value;
  e->limit = limit;
  e->message[0] = '\0';
}

/* Appends to the event's message; a message that does not fit is cut, never overrun. */
static void say(CND_Event *e, const char *fmt, ...)
{
  size_t used = strlen(e->message);
  if (used + 1 >= sizeof(e->message))
    return;
  va_list ap;
  va_start(ap, fmt);
  vsnprintf(e->message + used, sizeof(e->message) - used, fmt, ap);
  va_end(ap);
}

static void push(CND_State *st, CND_Event *ev, unsigned max, unsigned *n, const CND_Event *e)
{
  if (*n < max)
    ev[(*n)++] = *e;
  else
    st->events_dropped++;
}

static void say_advice(CND_Event *e, const SEG_Pass *p, const CND_Advice *a)
{
  say(e, "work speed %.0f mm/min at depth %.4f mm, or depth %.4f mm at %.0f mm/min, brings it to %.1f",
      a->work_speed_mm_min, p->depth_mm, a->depth_mm, UNT_MmPerSToMmPerMin(p->work_speed_mm_s), a->target_aggr);
}

static double centre(const CND_State *st) { return 0.5 * (st->set.wheel.aggr_low + st->set.wheel.aggr_high); }

static void say_forecast(CND_Event *e, const CYC_State *c)
{
  if (c->forecast_made)
    say(e, "forecast made at pass %lu: limit at pass %.0f", c->forecast_pass, c->forecast_limit_pass);
  else
    say(e, "no forecast made");
}

static void dulling_event(CND_State *st, const SEG_Pass *p, const CYC_PassInfo *o, int tr, CND_Event *e)
{
  const CYC_State *c = &st->cycle;
  double limit = st->set.wheel.dull_limit;
  start_event(st, e, p->end_time, CND_DULLING, tr > 0 ? CND_RAISED : CND_CLEARED, o->smoothed_ratio, limit);
  if (tr < 0) {
    say(e, "dull ratio %.2f back under limit %.2f after %lu passes since dress", o->smoothed_ratio, limit,
        o->pass_in_cycle);
    return;
  }
  if (o->smoothed_ratio > limit)
    say(e, "dull ratio %.2f over limit %.2f", o->smoothed_ratio, limit);
  else
    say(e, "dull ratio %.2f rising steadily (change detector alarm; limit %.2f)", o->smoothed_ratio, limit);
  say(e, " after %lu passes since dress (", o->pass_in_cycle);
  say_forecast(e, c);
  say(e, ")");
  if (isfinite(o->power_intercept_rise_w_mm) && o->power_intercept_rise_w_mm > 0.0)
    say(e, "; rubbing share up %.1f W/mm since dress", o->power_intercept_rise_w_mm);
  double geo;
  CND_Advice a;
  if (CYC_AggrBelow(c, &geo)) {
    say(e, "; aggressiveness sat below the window %.1f-%.1f over the cycle (mean %.1f), the likely cause",
        st->set.wheel.aggr_low, st->set.wheel.aggr_high, geo);
    if (CND_AggrAdvice(p, centre(st), &a) == 0) {
      say(e, ": ");
      say_advice(e, p, &a);
    }
  }
  say(e, "; dress the wheel");
}

static void aggr_event(CND_State *st, const SEG_Pass *p, CND_Kind k, int tr, CND_Event *e)
{
  int low = k == CND_LOW_AGGR;
  const CND_WheelProfile *w = &st->set.wheel;
  start_event(st, e, p->end_time, k, tr > 0 ? CND_RAISED : CND_CLEARED, p->aggressiveness,
              low ? w->aggr_low : w->aggr_high);
  if (tr < 0) {
    say(e, "aggressiveness %.1f back in the window %.1f-%.1f", p->aggressiveness, w->aggr_low, w->aggr_high);
    return;
  }
  say(e, "aggressiveness %.1f %s the window %.1f-%.1f (%s)", p->aggressiveness, low ? "below" : "above",
      w->aggr_low, w->aggr_high,
      low ? "rubbing, heat, chatter risk" : "grits break out, the wheel wears fast, rough finish");
  CND_Advice a;
  if (CND_AggrAdvice(p, centre(st), &a) == 0) {
    say(e, ": ");
    say_advice(e, p, &a);
  }
}

static void wear_event(CND_State *st, const SEG_Pass *p, const CYC_PassInfo *o, int by_g, int tr, CND_Event *e)
{
  const CND_WheelProfile *w = &st->set.wheel;
  if (by_g) {
    start_event(st, e, p->end_time, CND_WHEEL_WEAR, tr > 0 ? CND_RAISED : CND_CLEARED, o->g_ratio, w->min_g_ratio);
    if (tr > 0)
      say(e,
          "G-ratio %.1f below minimum %.1f (%.0f mm^3 removed, radial wear %.1f um since dress); the wheel wears "
          "fast: check grade, dressing and aggressiveness",
          o->g_ratio, w->min_g_ratio, st->cycle.wear_volume, o->wear_since_dress_um);
    else
      say(e, "G-ratio %.1f back above minimum %.1f", o->g_ratio, w->min_g_ratio);
    return;
  }
  start_event(st, e, p->end_time, CND_WHEEL_WEAR, tr > 0 ? CND_RAISED : CND_CLEARED, o->dull_ratio,
              w->wear_drop_ratio);
  if (tr > 0)
    say(e,
        "specific energy %.2f of the sharp-wheel reference at aggressiveness %.1f, above the window %.1f-%.1f "
        "(limit %.2f): grits pulling out, the wheel wears fast; lower the aggressiveness",
        o->dull_ratio, p->aggressiveness, w->aggr_low, w->aggr_high, w->wear_drop_ratio);
  else
    say(e, "specific energy %.2f of the sharp-wheel reference at aggressiveness %.1f: no sign of fast wear",
        o->dull_ratio, p->aggressiveness);
}

/* A dress closes the cycle; the dulling condition ends with it. */
static void do_dress(CND_State *st, double t, CYC_Trigger trigger, CYC_Record *rec, int *closed, CND_Event *ev,
                     unsigned max, unsigned *n)
{
  CND_Event e;
  int dull = st->track[CND_DULLING].active;
  unsigned long cycle = st->cycle.cycle;
  *closed = CYC_Dress(&st->cycle, t, trigger, dull, rec);
  if (!*closed)
    return;
  start_event(st, &e, t, CND_DRESS, CND_NOTE, rec->v_prime_mm3_mm, NAN);
  e.cycle = cycle;
  say(&e, "dress (%s): cycle %lu closed after %lu passes, V' %.1f mm^3/mm", CYC_TriggerName(rec->ended_by), cycle,
      rec->passes, rec->v_prime_mm3_mm);
  if (isfinite(rec->final_ratio))
    say(&e, ", final dull ratio %.2f", rec->final_ratio);
  if (isfinite(rec->g_ratio))
    say(&e, ", G-ratio %.1f", rec->g_ratio);
  if (rec->forecast_made)
    say(&e, ", forecast %s", rec->forecast_right > 0 ? "right" : rec->forecast_right == 0 ? "wrong" : "not judged");
  push(st, ev, max, n, &e);
  if (dull) {
    CND_Track *tk = &st->track[CND_DULLING];
    tk->active = 0;
    tk->hold = tk->gone = 0;
    start_event(st, &e, t, CND_DULLING, CND_CLEARED, rec->final_ratio, st->set.wheel.dull_limit);
    e.cycle = cycle;
    say(&e, "wheel dressed (%s): dull ratio %.2f at the dress", CYC_TriggerName(trigger), rec->final_ratio);
    push(st, ev, max, n, &e);
  }
  /* A new cycle starts from scratch: the hold-off counts of dulling begin again. */
  st->track[CND_DULLING].hold = 0;
}

unsigned CND_Dress(CND_State *st, double t, CYC_Trigger trigger, CYC_Record *rec, int *closed, CND_Event *ev,
                   unsigned max_ev)
{
  unsigned n = 0;
  *closed = 0;
  if (trigger != CYC_SCHEDULE && trigger != CYC_COUNTER)
    trigger = CYC_OPERATOR;
  do_dress(st, t, trigger, rec, closed, ev, max_ev, &n);
  return n;
}

static int grinding_pass(const SEG_Pass *p)
{
  return !(p->flags & (SEG_F_SPARK_OUT | SEG_F_DEPTH_UNKNOWN | SEG_F_NO_SPEED)) && isfinite(p->aggressiveness) &&
         p->aggressiveness > 0.0;
}

unsigned CND_Pass(CND_State *st, const SEG_Pass *p, CND_PassResult *res, CND_Event *ev, unsigned max)
{
  unsigned n = 0;
  CND_Event e;
  int tr;
  const CND_WheelProfile *w = &st->set.wheel;
  res->cycle_closed = 0;
  if (CYC_CounterDress(&st->cycle, p))
    do_dress(st, p->start_time, CYC_COUNTER, &res->closed, &res->cycle_closed, ev, max, &n);
  st->last_pass = p->number;
  if (isfinite(p->wheel_diameter_mm) && p->wheel_diameter_mm > 0.0)
    st->last_diameter_mm = p->wheel_diameter_mm;
  CYC_Feed(&st->cycle, p, &res->info);
  const CYC_PassInfo *o = &res->info;

  /* dulling: judged only where the ratio exists and the pass is not above the window */
  if (isfinite(o->dull_ratio) && !(p->aggressiveness > w->aggr_high)) {
    int act = st->track[CND_DULLING].active;
    double band = st->set.rule[CND_DULLING].band;
    double gate = 1.0 + st->set.cusum_gate * (w->dull_limit - 1.0);
    int holds = above(act, o->smoothed_ratio, w->dull_limit, band) ||
                (o->cusum_alarm && above(act, o->smoothed_ratio, gate, band));
    if ((tr = track_step(st, CND_DULLING, holds, o->smoothed_ratio, w->dull_limit)) != 0) {
      dulling_event(st, p, o, tr, &e);
      push(st, ev, max, &n, &e);
    }
  }
  if (grinding_pass(p)) {
    int act = st->track[CND_LOW_AGGR].active;
    int holds = below(act, p->aggressiveness, w->aggr_low, st->set.rule[CND_LOW_AGGR].band);
    if ((tr = track_step(st, CND_LOW_AGGR, holds, p->aggressiveness, w->aggr_low)) != 0) {
      aggr_event(st, p, CND_LOW_AGGR, tr, &e);
      push(st, ev, max, &n, &e);
    }
    act = st->track[CND_HIGH_AGGR].active;
    holds = above(act, p->aggressiveness, w->aggr_high, st->set.rule[CND_HIGH_AGGR].band);
    if ((tr = track_step(st, CND_HIGH_AGGR, holds, p->aggressiveness, w->aggr_high)) != 0) {
      aggr_event(st, p, CND_HIGH_AGGR, tr, &e);
      push(st, ev, max, &n, &e);
    }
  }
  /* wheel_wear: the G-ratio where the diameter is measured, else the energy drop */
  {
    int act = st->track[CND_WHEEL_WEAR].active;
    double band = st->set.rule[CND_WHEEL_WEAR].band;
    if (st->set.job.diameter_measured) {
      if (isfinite(o->g_ratio) && isfinite(w->min_g_ratio)) {
        int holds = below(act, o->g_ratio, w->min_g_ratio, band);
        if ((tr = track_step(st, CND_WHEEL_WEAR, holds, o->g_ratio, w->min_g_ratio)) != 0) {
          wear_event(st, p, o, 1, tr, &e);
          push(st, ev, max, &n, &e);
        }
      }
    } else if (isfinite(o->dull_ratio)) {
      int holds = p->aggressiveness > w->aggr_high && below(act, o->dull_ratio, w->wear_drop_ratio, band);
      if ((tr = track_step(st, CND_WHEEL_WEAR, holds, o->dull_ratio, w->wear_drop_ratio)) != 0) {
        wear_event(st, p, o, 0, tr, &e);
        push(st, ev, max, &n, &e);
      }
    }
  }
  if (isfinite(p->burn_ratio)) {
    int act = st->track[CND_BURN_RISK].active;
    int holds = above(act, p->burn_ratio, w->burn_margin, st->set.rule[CND_BURN_RISK].band);
    if ((tr = track_step(st, CND_BURN_RISK, holds, p->burn_ratio, w->burn_margin)) != 0) {
      start_event(st, &e, p->end_time, CND_BURN_RISK, tr > 0 ? CND_RAISED : CND_CLEARED, p->burn_ratio,
                  w->burn_margin);
      if (tr > 0)
        say(&e,
            "specific energy %.2f J/mm^3 is %.2f of the burn threshold u* %.2f J/mm^3 (margin %.2f): workpiece "
            "burn risk (advisory); check coolant, dress the wheel or take a lighter cut",
            p->specific_energy_j_mm3, p->burn_ratio, p->burn_threshold_j_mm3, w->burn_margin);
      else
        say(&e, "specific energy %.2f J/mm^3 back to %.2f of the burn threshold u* %.2f J/mm^3",
            p->specific_energy_j_mm3, p->burn_ratio, p->burn_threshold_j_mm3);
      push(st, ev, max, &n, &e);
    }
  }
  if (isfinite(st->set.machine.spindle_rating_w) && isfinite(p->net_power_peak_w)) {
    double rating = st->set.machine.spindle_rating_w;
    int act = st->track[CND_OVERLOAD].active;
    int holds = above(act, p->net_power_peak_w, rating, st->set.rule[CND_OVERLOAD].band);
    if ((tr = track_step(st, CND_OVERLOAD, holds, p->net_power_peak_w, rating)) != 0) {
      start_event(st, &e, p->end_time, CND_OVERLOAD, tr > 0 ? CND_RAISED : CND_CLEARED, p->net_power_peak_w, rating);
      if (tr > 0)
        say(&e, "net power peak %.0f W over the spindle rating %.0f W; take a lighter cut or a lower work speed",
            p->net_power_peak_w, rating);
      else
        say(&e, "net power peak %.0f W back under the spindle rating %.0f W", p->net_power_peak_w, rating);
      push(st, ev, max, &n, &e);
    }
  }
  if (o->forecast_made) {
    const CYC_State *c = &st->cycle;
    start_event(st, &e, p->end_time, CND_FORECAST, CND_NOTE, c->forecast_v_limit, NAN);
    say(&e,
        "dull ratio passed halfway to the limit (%.2f) at pass %lu since dress: limit %.2f forecast at pass %.0f, "
        "V' %.1f mm^3/mm (now %.1f)",
        1.0 + 0.5 * (w->dull_limit - 1.0), c->forecast_pass, w->dull_limit, c->forecast_limit_pass,
        c->forecast_v_limit, o->v_prime_mm3_mm);
    push(st, ev, max, &n, &e);
  }
  return n;
}

int CND_Sample(CND_State *st, double t, double rpm, double ds, CND_Event *ev)
{
  double vmax = st->set.wheel.max_speed_m_s;
  if (!isfinite(vmax) || !isfinite(rpm))
    return 0;
  if (!(isfinite(ds) && ds > 0.0))
    ds = isfinite(st->last_diameter_mm) ? st->last_diameter_mm : st->set.machine.wheel_diameter_mm;
  if (!(isfinite(ds) && ds > 0.0))
    return 0;
  double vs = UNT_SurfaceSpeed(ds, rpm);
  int act = st->track[CND_OVERSPEED].active;
  int tr = track_step(st, CND_OVERSPEED, above(act, vs, vmax, st->set.rule[CND_OVERSPEED].band), vs, vmax);
  if (tr == 0)
    return 0;
  start_event(st, ev, t, CND_OVERSPEED, tr > 0 ? CND_RAISED : CND_CLEARED, vs, vmax);
  if (tr > 0)
    say(ev,
        "wheel surface speed %.1f m/s over the marked maximum %.1f m/s (%.0f 1/min on a %.1f mm wheel, highest "
        "allowed %.0f 1/min): stop and check the spindle speed and the wheel; this check never replaces the "
        "machine's own guards",
        vs, vmax, rpm, ds, UNT_SpindleSpeedFor(ds, vmax));
  else
    say(ev, "wheel surface speed %.1f m/s back within the marked maximum %.1f m/s (%.0f 1/min on a %.1f mm wheel)",
        vs, vmax, rpm, ds);
  return 1;
}

int CND_SetExternal(CND_State *st, CND_Kind kind, int active, double t, const char *detail, CND_Event *ev)
{
  static const char *const raised[] = {"communication lost", "stale data", "logging failed"};
  static const char *const cleared[] = {"communication restored", "data fresh again", "logging works again"};
  if (kind != CND_COMM_LOST && kind != CND_STALE_DATA && kind != CND_LOGGING_FAILED)
    return -1;
  int tr = track_step(st, kind, active != 0, active ? 1.0 : 0.0, NAN);
  if (tr == 0)
    return 0;
  unsigned i = (unsigned)(kind - CND_COMM_LOST);
  start_event(st, ev, t, kind, tr > 0 ? CND_RAISED : CND_CLEARED, NAN, NAN);
  say(ev, "%s", tr > 0 ? raised[i] : cleared[i]);
  if (detail && detail[0]) {
    say(ev, ": %s", detail);
    /* One line: control characters of the detail become spaces. */
    for (char *c = ev->message; *c; c++)
      if ((unsigned char)*c < 0x20 || *c == 0x7f)
        *c = ' ';
  }
  return 1;
}

int CND_IsActive(const CND_State *st, CND_Kind kind)
{
  return (unsigned)kind < CND_CONDITION_COUNT && st->track[kind].active;
}

unsigned CND_ActiveList(const CND_State *st, CND_Kind *kinds, unsigned max)
{
  unsigned n = 0;
  for (int k = 0; k < CND_CONDITION_COUNT; k++) {
    if (!st->track[k].active)
      continue;
    if (n < max)
      kinds[n] = (CND_Kind)k;
    n++;
  }
  return n;
}

char *CND_Summary(const CND_State *st, char *buf, unsigned long size)
{
  if (size == 0)
    return buf;
  unsigned long used = 0;
  buf[0] = '\0';
  for (int k = 0; k < CND_CONDITION_COUNT; k++) {
    if (!st->track[k].active)
      continue;
    int n;
    if (k == CND_DULLING)
      n = snprintf(buf + used, size - used, "%s%s r=%.2f", used ? ", " : "", kind_names[k], st->track[k].value);
    else
      n = snprintf(buf + used, size - used, "%s%s", used ? ", " : "", kind_names[k]);
    if (n < 0 || (unsigned long)n >= size - used) {
      buf[used] = '\0'; /* whole names only */
      return buf;
    }
    used += (unsigned long)n;
  }
  if (used == 0)
    snprintf(buf, size, "ok");
  return buf;
}

int CND_Finish(const CND_State *st, CYC_Record *rec) { return CYC_Snapshot(&st->cycle, rec); }
