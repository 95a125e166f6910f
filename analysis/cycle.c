/* cycle.c: dress cycles, the sharp-wheel reference, dull ratio, trend, forecast and wear (see cycle.h). */
#include "cycle.h"

#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>

static const char *const trigger_names[CYC_TRIGGER_COUNT] = {
    "start", "alert", "schedule", "operator", "counter", "end",
};

const char *CYC_TriggerName(CYC_Trigger t)
{
  return (unsigned)t < CYC_TRIGGER_COUNT ? trigger_names[t] : "?";
}

int CYC_TriggerFromName(const char *name, CYC_Trigger *t)
{
  for (int i = 0; i < CYC_TRIGGER_COUNT; i++) {
    if (strcmp(name, trigger_names[i]) == 0) {
      *t = (CYC_Trigger)i;
      return 0;
    }
  }
  return -1;
}

void CYC_DefaultSettings(CYC_Settings *s)
{
  memset(s, 0, sizeof(*s));
  s->settle_passes = 3;
  s->reference_passes = 8;
  s->min_ln_range = 0.1;
  s->exponent_min = -1.0;
  s->exponent_max = 0.0;
  s->scatter_floor = 0.02;
  s->median_len = 5;
  s->ewma_alpha = 0.3;
  s->cusum_k = 0.5;
  s->cusum_h = 5.0;
  s->trend_window = 64;
  s->min_forecast_passes = 10;
  s->power_window = 20;
  s->min_power_passes = 5;
  s->min_power_spread = 0.05;
  s->min_wear_um = 1.0;
  s->forecast_tolerance = 0.25;
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

int CYC_CheckSettings(const CYC_Settings *s, char *err, unsigned long n)
{
  if (s->reference_passes < 2 || s->reference_passes > CYC_REFERENCE_MAX)
    return fail(err, n, "model.reference_passes: %u is outside 2..%d", s->reference_passes, CYC_REFERENCE_MAX);
  if (!(s->min_ln_range > 0.0) || !isfinite(s->min_ln_range))
    return fail(err, n, "model.min_ln_range: must be a positive number");
  if (!isfinite(s->exponent_min) || !isfinite(s->exponent_max) || s->exponent_min > s->exponent_max)
    return fail(err, n, "model.exponent_min: must be a number not above model.exponent_max");
  if (!(s->scatter_floor > 0.0) || !isfinite(s->scatter_floor))
    return fail(err, n, "model.scatter_floor: must be a positive number");
  if (s->median_len < 1 || s->median_len > RBS_RUNMED_MAX)
    return fail(err, n, "model.median_len: %u is outside 1..%d", s->median_len, RBS_RUNMED_MAX);
  if (!(s->ewma_alpha > 0.0 && s->ewma_alpha <= 1.0))
    return fail(err, n, "model.ewma_alpha: must be in (0, 1]");
  if (!(s->cusum_k >= 0.0) || !isfinite(s->cusum_k))
    return fail(err, n, "model.cusum_k: must be a number >= 0");
  if (!(s->cusum_h > 0.0) || !isfinite(s->cusum_h))
    return fail(err, n, "model.cusum_h: must be a positive number");
  if (s->trend_window < 2 || s->trend_window > CYC_TREND_MAX)
    return fail(err, n, "model.trend_window: %u is outside 2..%d", s->trend_window, CYC_TREND_MAX);
  if (s->min_forecast_passes < 2 || s->min_forecast_passes > s->trend_window)
    return fail(err, n, "model.min_forecast_passes: %u is outside 2..model.trend_window (%u)",
                s->min_forecast_passes, s->trend_window);
  if (s->power_window < 2 || s->power_window > CYC_POWER_MAX)
    return fail(err, n, "model.power_window: %u is outside 2..%d", s->power_window, CYC_POWER_MAX);
  if (s->min_power_passes < 2 || s->min_power_passes > s->power_window)
    return fail(err, n, "model.min_power_passes: %u is outside 2..model.power_window (%u)", s->min_power_passes,
                s->power_window);
  if (!(s->min_power_spread >= 0.0) || !isfinite(s->min_power_spread))
    return fail(err, n, "model.min_power_spread: must be a number >= 0");
  if (!(s->min_wear_um > 0.0) || !isfinite(s->min_wear_um))
    return fail(err, n, "model.min_wear_um: must be a positive number");
  if (!(s->forecast_tolerance > 0.0 && s->forecast_tolerance < 1.0))
    return fail(err, n, "model.forecast_tolerance: must be in (0, 1)");
  return 0;
}

static void clear_info(CYC_PassInfo *o)
{
  memset(o, 0, sizeof(*o));
  o->v_prime_mm3_mm = NAN;
  o->u_ref_j_mm3 = NAN;
  o->dull_ratio = NAN;
  o->smoothed_ratio = NAN;
  o->cusum = NAN;
  o->trend_per_v_prime = NAN;
  o->forecast_passes_left = NAN;
  o->forecast_v_prime_left = NAN;
  o->power_intercept_w_mm = NAN;
  o->power_slope_j_mm3 = NAN;
  o->power_intercept_rise_w_mm = NAN;
  o->radial_wear_um = NAN;
  o->wear_since_dress_um = NAN;
  o->g_ratio = NAN;
}

/* Everything that belongs to one cycle starts afresh at a dress. */
static void reset_cycle(CYC_State *s)
{
  s->passes = 0;
  s->grinding_passes = 0;
  s->v_prime = 0.0;
  s->volume = 0.0;
  s->wear_volume = 0.0;
  s->n_ref = 0;
  s->ref_ready = 0;
  s->ref_fitted = 0;
  s->ref_ln_c = NAN;
  s->ref_m = NAN;
  s->ref_scatter = NAN;
  s->ref_median_u = NAN;
  RBS_RunMedianInit(&s->median, s->set.median_len);
  RBS_EwmaInit(&s->ewma, s->set.ewma_alpha);
  RBS_CusumInit(&s->cusum, s->set.cusum_k, s->set.cusum_h);
  s->smoothed = NAN;
  s->tr_n = s->tr_head = 0;
  s->pw_n = s->pw_head = 0;
  s->first_intercept = NAN;
  s->ds_first = s->ds_prev = NAN;
  s->g_ratio = NAN;
  s->wear_um = NAN;
  s->n_aggr = s->n_aggr_below = 0;
  s->sum_ln_aggr = 0.0;
  s->half_passed = 0;
  s->forecast_made = 0;
  s->forecast_pass = 0;
  s->forecast_v_limit = NAN;
  s->forecast_limit_pass = NAN;
  s->v_at_limit = NAN;
  s->pass_at_limit = 0;
  clear_info(&s->last);
}

void CYC_Init(CYC_State *s, const CYC_Settings *set, const CYC_Job *job, const char *wheel_name,
              double dull_limit, double aggr_low, double aggr_high)
{
  memset(s, 0, sizeof(*s));
  s->set = *set;
  s->job = *job;
  s->job.name[CYC_NAME_MAX - 1] = '\0';
  snprintf(s->wheel, sizeof(s->wheel), "%s", wheel_name ? wheel_name : "");
  s->dull_limit = dull_limit;
  s->aggr_low = aggr_low;
  s->aggr_high = aggr_high;
  s->last_dress_count = NAN;
  s->mark_time = NAN;
  s->next_started_by = CYC_START;
  s->start_time = s->last_end_time = NAN;
  reset_cycle(s);
}

int CYC_CounterDress(const CYC_State *s, const SEG_Pass *p)
{
  if (s->mark_pending || !s->open)
    return 0;
  if (p->flags & SEG_F_AFTER_DRESS)
    return 1;
  return s->have_dress_count && isfinite(p->dress_count) && p->dress_count != s->last_dress_count;
}

/* Passes the model can compare: a real removal with a known specific energy. */
static int pass_usable(const SEG_Pass *p)
{
  const unsigned bad = SEG_F_SPARK_OUT | SEG_F_DEPTH_UNKNOWN | SEG_F_GAP | SEG_F_TRUNCATED | SEG_F_NO_SPEED;
  if (p->flags & bad)
    return 0;
  return isfinite(p->specific_energy_j_mm3) && p->specific_energy_j_mm3 > 0.0 && isfinite(p->aggressiveness) &&
         p->aggressiveness > 0.0 && isfinite(p->volume_mm3) && p->volume_mm3 > 0.0;
}

static double clamp(double x, double lo, double hi) { return x < lo ? lo : x > hi ? hi : x; }

static void build_reference(CYC_State *s)
{
  unsigned n = s->n_ref;
  double work[CYC_REFERENCE_MAX], resid[CYC_REFERENCE_MAX];
  double lo = s->ref_ln_aggr[0], hi = s->ref_ln_aggr[0];
  for (unsigned i = 1; i < n; i++) {
    lo = fmin(lo, s->ref_ln_aggr[i]);
    hi = fmax(hi, s->ref_ln_aggr[i]);
  }
  s->ref_median_u = RBS_MedianCopy(s->ref_u, n, work);
  double slope, icept;
  if (hi - lo > s->set.min_ln_range && RBS_LeastSquares(s->ref_ln_aggr, s->ref_ln_u, n, &slope, &icept) == 0) {
    /* A clamped exponent keeps the least-squares intercept for that exponent: the mean residual. */
    double m = clamp(slope, s->set.exponent_min, s->set.exponent_max);
    double c = 0.0;
    for (unsigned i = 0; i < n; i++)
      c += s->ref_ln_u[i] - m * s->ref_ln_aggr[i];
    s->ref_m = m;
    s->ref_ln_c = c / n;
    s->ref_fitted = 1;
  } else {
    s->ref_m = 0.0;
    s->ref_ln_c = log(s->ref_median_u);
    s->ref_fitted = 0;
  }
  for (unsigned i = 0; i < n; i++)
    resid[i] = s->ref_ln_u[i] - s->ref_ln_c - s->ref_m * s->ref_ln_aggr[i];
  double mad = RBS_Mad(resid, n, work);
  s->ref_scatter = mad > s->set.scatter_floor ? mad : s->set.scatter_floor;
  s->ref_ready = 1;
}

double CYC_ReferenceEnergy(const CYC_State *s, double aggr)
{
  if (!s->ref_ready)
    return NAN;
  if (!s->ref_fitted)
    return s->ref_median_u;
  if (!(aggr > 0.0))
    return NAN;
  return exp(s->ref_ln_c + s->ref_m * log(aggr));
}

int CYC_AggrBelow(const CYC_State *s, double *geo_mean)
{
  if (s->n_aggr == 0) {
    *geo_mean = NAN;
    return 0;
  }
  *geo_mean = exp(s->sum_ln_aggr / (double)s->n_aggr);
  return 2 * s->n_aggr_below > s->n_aggr;
}

static void trend_step(CYC_State *s, CYC_PassInfo *o, double r)
{
  unsigned w = s->set.trend_window;
  s->tr_v[s->tr_head] = s->v_prime;
  s->tr_r[s->tr_head] = r;
  s->tr_pass[s->tr_head] = s->passes;
  s->tr_head = (s->tr_head + 1) % w;
  if (s->tr_n < w)
    s->tr_n++;
  if (s->tr_n < s->set.min_forecast_passes)
    return;
  double b, a;
  if (RBS_TheilSen(s->tr_v, s->tr_r, s->tr_n, s->ts_work, sizeof(s->ts_work) / sizeof(s->ts_work[0]), &b, &a) != 0)
    return;
  o->trend_per_v_prime = b;
  if (!(b > 0.0))
    return;
  double v_left = (s->dull_limit - a) / b - s->v_prime;
  if (v_left < 0.0)
    v_left = 0.0;
  o->forecast_v_prime_left = v_left;
  /* Passes from the recent removal per pass: every pass counts, usable or not. */
  unsigned oldest = s->tr_n < w ? 0 : s->tr_head;
  unsigned newest = (s->tr_head + w - 1) % w;
  double dv = s->tr_v[newest] - s->tr_v[oldest];
  double dp = (double)(s->tr_pass[newest] - s->tr_pass[oldest]);
  if (dv > 0.0 && dp > 0.0)
    o->forecast_passes_left = v_left / (dv / dp);
}

static void ratio_step(CYC_State *s, const SEG_Pass *p, CYC_PassInfo *o)
{
  double uref = CYC_ReferenceEnergy(s, p->aggressiveness);
  double r = p->specific_energy_j_mm3 / uref;
  if (!(r > 0.0) || !isfinite(r))
    return;
  o->u_ref_j_mm3 = uref;
  o->dull_ratio = r;
  s->smoothed = RBS_EwmaPush(&s->ewma, RBS_RunMedianPush(&s->median, r));
  o->smoothed_ratio = s->smoothed;
  RBS_CusumStep(&s->cusum, log(r) / s->ref_scatter);
  o->cusum = s->cusum.s;
  o->cusum_alarm = s->cusum.alarm;
  trend_step(s, o, r);
  double half = 1.0 + 0.5 * (s->dull_limit - 1.0);
  if (!s->half_passed && s->smoothed >= half)
    s->half_passed = 1;
  if (s->half_passed && !s->forecast_made && s->pass_at_limit == 0 && isfinite(o->forecast_v_prime_left) &&
      isfinite(o->forecast_passes_left)) {
    s->forecast_made = 1;
    s->forecast_pass = s->passes;
    s->forecast_v_limit = s->v_prime + o->forecast_v_prime_left;
    s->forecast_limit_pass = (double)s->passes + o->forecast_passes_left;
    o->forecast_made = 1;
  }
  if (s->pass_at_limit == 0 && s->smoothed >= s->dull_limit) {
    s->pass_at_limit = s->passes;
    s->v_at_limit = s->v_prime;
    o->limit_reached = 1;
  }
}

static void power_step(CYC_State *s, const SEG_Pass *p, CYC_PassInfo *o)
{
  unsigned w = s->set.power_window;
  double q = p->specific_removal_rate_mm2_s;
  double pw = p->net_power_mean_w / s->job.width_mm;
  if (isfinite(q) && q > 0.0 && isfinite(pw)) {
    s->pw_q[s->pw_head] = q;
    s->pw_p[s->pw_head] = pw;
    s->pw_head = (s->pw_head + 1) % w;
    if (s->pw_n < w)
      s->pw_n++;
  }
  if (s->pw_n < s->set.min_power_passes)
    return;
  double lo = s->pw_q[0], hi = s->pw_q[0], mean = 0.0;
  for (unsigned i = 0; i < s->pw_n; i++) {
    lo = fmin(lo, s->pw_q[i]);
    hi = fmax(hi, s->pw_q[i]);
    mean += s->pw_q[i];
  }
  mean /= s->pw_n;
  /* Without enough spread in Q' the intercept is an extrapolation of noise. */
  if (!(hi - lo > s->set.min_power_spread * mean))
    return;
  double slope, icept;
  if (RBS_LeastSquares(s->pw_q, s->pw_p, s->pw_n, &slope, &icept) != 0)
    return;
  o->power_intercept_w_mm = icept;
  o->power_slope_j_mm3 = slope;
  if (isnan(s->first_intercept))
    s->first_intercept = icept;
  o->power_intercept_rise_w_mm = icept - s->first_intercept;
}

static void wear_step(CYC_State *s, const SEG_Pass *p, CYC_PassInfo *o, double vol)
{
  double ds = p->wheel_diameter_mm;
  if (!s->job.diameter_measured || !isfinite(ds) || !(ds > 0.0))
    return;
  if (isnan(s->ds_first)) {
    /* The volume of the first pass with a diameter went before the wear we can see. */
    s->ds_first = s->ds_prev = ds;
    s->wear_volume = 0.0;
  } else {
    o->radial_wear_um = (s->ds_prev - ds) / 2.0 * 1000.0;
    s->ds_prev = ds;
    s->wear_volume += vol;
  }
  s->wear_um = (s->ds_first - ds) / 2.0 * 1000.0;
  o->wear_since_dress_um = s->wear_um;
  s->g_ratio = NAN;
  if (s->wear_um >= s->set.min_wear_um) {
    double b = isfinite(s->job.wear_width_mm) && s->job.wear_width_mm > 0.0 ? s->job.wear_width_mm : s->job.width_mm;
    double ds_mean = 0.5 * (s->ds_first + ds);
    /* pi * ds_mean * b * dr is exactly the annulus pi/4 * (d1^2 - d2^2) * b. */
    s->g_ratio = s->wear_volume / (M_PI * ds_mean * b * (s->wear_um / 1000.0));
  }
  o->g_ratio = s->g_ratio;
}

static void open_cycle(CYC_State *s, const SEG_Pass *p)
{
  reset_cycle(s);
  s->open = 1;
  s->cycle++;
  if (s->mark_pending) {
    s->started_by = s->next_started_by;
    s->start_time = s->mark_time;
  } else {
    s->started_by = CYC_START;
    s->start_time = p->start_time;
  }
}

void CYC_Feed(CYC_State *s, const SEG_Pass *p, CYC_PassInfo *info)
{
  if (!s->open)
    open_cycle(s, p);
  s->mark_pending = 0;
  if (isfinite(p->dress_count)) {
    s->have_dress_count = 1;
    s->last_dress_count = p->dress_count;
  }
  s->passes++;
  s->last_end_time = p->end_time;
  CYC_PassInfo *o = &s->last;
  clear_info(o);
  o->cycle = s->cycle;
  o->pass_in_cycle = s->passes;
  int spark = (p->flags & SEG_F_SPARK_OUT) != 0;
  if (!spark)
    s->grinding_passes++;
  double vol = isfinite(p->volume_mm3) && p->volume_mm3 > 0.0 ? p->volume_mm3 : 0.0;
  s->volume += vol;
  s->v_prime += vol / s->job.width_mm;
  o->v_prime_mm3_mm = s->v_prime;
  wear_step(s, p, o, vol);
  int usable = pass_usable(p);
  o->usable = usable;
  if (usable) {
    s->n_aggr++;
    s->sum_ln_aggr += log(p->aggressiveness);
    if (p->aggressiveness < s->aggr_low)
      s->n_aggr_below++;
    power_step(s, p, o);
  }
  if (!spark && s->grinding_passes <= s->set.settle_passes) {
    o->settling = 1;
  } else if (usable && !s->ref_ready) {
    s->ref_ln_aggr[s->n_ref] = log(p->aggressiveness);
    s->ref_ln_u[s->n_ref] = log(p->specific_energy_j_mm3);
    s->ref_u[s->n_ref] = p->specific_energy_j_mm3;
    s->n_ref++;
    o->reference = 1;
    if (s->n_ref >= s->set.reference_passes)
      build_reference(s);
  } else if (usable) {
    ratio_step(s, p, o);
  }
  o->smoothed_ratio = s->smoothed;
  o->reference_ready = s->ref_ready;
  if (info)
    *info = *o;
}

/* 1 right, 0 wrong, -1 cannot be judged (see docs/conditions.md). */
static int judge_forecast(const CYC_State *s, int at_dress)
{
  if (!s->forecast_made)
    return -1;
  double fc = s->forecast_v_limit, tol = s->set.forecast_tolerance;
  if (s->pass_at_limit)
    return fabs(s->v_at_limit - fc) <= tol * fc;
  if (s->v_prime > (1.0 + tol) * fc)
    return 0;
  if (at_dress && s->v_prime >= (1.0 - tol) * fc)
    return 1;
  return -1;
}

static void fill_record(const CYC_State *s, int at_dress, CYC_Record *rec)
{
  memset(rec, 0, sizeof(*rec));
  rec->cycle = s->cycle;
  snprintf(rec->wheel, sizeof(rec->wheel), "%s", s->wheel);
  snprintf(rec->job, sizeof(rec->job), "%s", s->job.name);
  rec->start_time = s->start_time;
  rec->end_time = s->last_end_time;
  rec->passes = s->passes;
  rec->v_prime_mm3_mm = s->v_prime;
  rec->volume_mm3 = s->volume;
  rec->u_ref_j_mm3 = s->ref_fitted ? CYC_ReferenceEnergy(s, 0.5 * (s->aggr_low + s->aggr_high)) : s->ref_median_u;
  rec->ref_exponent = s->ref_m;
  rec->ref_scatter = s->ref_scatter;
  rec->final_ratio = s->smoothed;
  rec->g_ratio = s->g_ratio;
  rec->wear_um = s->wear_um;
  rec->started_by = s->started_by;
  rec->ended_by = CYC_END;
  rec->forecast_made = s->forecast_made;
  rec->forecast_pass = s->forecast_pass;
  rec->forecast_v_prime_mm3_mm = s->forecast_v_limit;
  rec->forecast_limit_pass = s->forecast_limit_pass;
  rec->forecast_right = judge_forecast(s, at_dress);
  rec->v_prime_at_limit = s->v_at_limit;
  rec->pass_at_limit = s->pass_at_limit;
}

int CYC_Snapshot(const CYC_State *s, CYC_Record *rec)
{
  if (!s->open)
    return 0;
  fill_record(s, 0, rec);
  return 1;
}

int CYC_Dress(CYC_State *s, double t, CYC_Trigger ended_by, int dulling_active, CYC_Record *rec)
{
  if (s->mark_pending)
    return 0;
  CYC_Trigger trig = dulling_active ? CYC_ALERT : ended_by;
  int closed = 0;
  if (s->open && s->passes > 0) {
    fill_record(s, 1, rec);
    rec->end_time = t;
    rec->ended_by = trig;
    closed = 1;
  }
  s->open = 0;
  s->mark_pending = 1;
  s->mark_time = t;
  s->next_started_by = trig;
  return closed;
}

void CYC_Recommend(const CYC_Record *recs, unsigned n, const char *wheel, const char *job, CYC_Recommendation *out)
{
  double v[CYC_HISTORY_MAX];
  memset(out, 0, sizeof(*out));
  out->v_prime_mm3_mm = out->v_prime_min = out->v_prime_max = NAN;
  for (unsigned i = n; i-- > 0 && out->cycles < CYC_HISTORY_MAX;) {
    if (strcmp(recs[i].wheel, wheel) != 0 || strcmp(recs[i].job, job) != 0)
      continue;
    out->cycles++;
    double x = recs[i].v_prime_at_limit;
    if (!isfinite(x))
      continue;
    v[out->reached++] = x;
    out->v_prime_min = out->reached == 1 ? x : fmin(out->v_prime_min, x);
    out->v_prime_max = out->reached == 1 ? x : fmax(out->v_prime_max, x);
  }
  out->v_prime_mm3_mm = RBS_Median(v, out->reached);
}

char *CYC_FormatRecommendation(const CYC_Recommendation *r, const char *wheel, const char *job, char *buf,
                               unsigned long size)
{
  if (size == 0)
    return buf;
  if (r->cycles == 0)
    snprintf(buf, size, "wheel %s on job %s: no dress cycles recorded yet", wheel, job);
  else if (r->reached == 0)
    snprintf(buf, size, "wheel %s on job %s: none of %u cycles reached its dulling limit", wheel, job, r->cycles);
  else
    snprintf(buf, size,
             "wheel %s on job %s typically reaches its dulling limit after about %.0f mm^3/mm "
             "(median of %u of %u cycles, %.0f to %.0f mm^3/mm)",
             wheel, job, r->v_prime_mm3_mm, r->reached, r->cycles, r->v_prime_min, r->v_prime_max);
  return buf;
}
