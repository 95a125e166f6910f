/* statusjson.c: the live state as one JSON object. */
#include "statusjson.h"

#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>

typedef struct jbuf {
  char *b;
  size_t size, used;
  int bad;
} jbuf;

__attribute__((format(printf, 2, 3))) static void put(jbuf *j, const char *fmt, ...)
{
  if (j->bad)
    return;
  va_list ap;
  va_start(ap, fmt);
  int n = vsnprintf(j->b + j->used, j->size - j->used, fmt, ap);
  va_end(ap);
  if (n < 0 || (size_t)n >= j->size - j->used)
    j->bad = 1;
  else
    j->used += (size_t)n;
}

long STJ_String(const char *text, char *buf, size_t size)
{
  size_t u = 0;
  if (size < 3)
    return -1;
  buf[u++] = '"';
  for (const unsigned char *p = (const unsigned char *)text; *p; p++) {
    char esc[8];
    const char *add = esc;
    if (*p == '"')
      add = "\\\"";
    else if (*p == '\\')
      add = "\\\\";
    else if (*p < 0x20)
      snprintf(esc, sizeof esc, "\\u%04x", *p);
    else {
      esc[0] = (char)*p;
      esc[1] = '\0';
    }
    size_t n = strlen(add);
    if (u + n + 2 > size)
      return -1;
    memcpy(buf + u, add, n);
    u += n;
  }
  buf[u++] = '"';
  buf[u] = '\0';
  return (long)u;
}

static void str(jbuf *j, const char *key, const char *value)
{
  char tmp[1200];
  if (STJ_String(value, tmp, sizeof tmp) < 0)
    snprintf(tmp, sizeof tmp, "\"\"");
  put(j, "\"%s\":%s", key, tmp);
}

static void num(jbuf *j, const char *key, double v)
{
  if (isfinite(v))
    put(j, "\"%s\":%.15g", key, v);
  else
    put(j, "\"%s\":null", key);
}

long STJ_Format(const CNF_Config *cfg, const MON_Monitor *mon, const STJ_Link *link, char *buf, size_t size)
{
  jbuf j = {buf, size, 0, 0};
  MON_Status st;
  MON_GetStatus(mon, &st);
  const CND_State *cnd = MON_Conditions(mon);
  put(&j, "{");
  str(&j, "machine", cfg->machine);
  put(&j, ",");
  str(&j, "version", GRITLINE_VERSION);
  put(&j, ",");
  str(&j, "mode", link->mode);
  put(&j, ",");
  str(&j, "job", cfg->job->name);
  put(&j, ",");
  str(&j, "wheel", cfg->wheel->name);
  put(&j, ",\"connected\":%s,\"communication_lost\":%s,", link->connected ? "true" : "false",
      st.comm_lost ? "true" : "false");
  num(&j, "now", link->now);
  put(&j, ",");
  num(&j, "last_sample_time", st.last_sample_time);
  put(&j, ",");
  num(&j, "last_sample_age_s", isnan(st.last_sample_time) ? NAN : link->now - st.last_sample_time);
  put(&j, ",\"polls\":%lu,\"failed_polls\":%lu,", link->polls, link->failed);
  str(&j, "last_error", link->last_error ? link->last_error : "");
  put(&j, ",");
  str(&j, "shift", st.shift);
  put(&j, ",");
  str(&j, "shift_dir", MON_ShiftDir(mon));
  put(&j, ",\"passes_shift\":%lu,\"in_pass\":%s,", st.passes_shift, st.in_pass ? "true" : "false");
  const SMP_Sample *s = &st.last_sample;
  put(&j, "\"live\":{");
  num(&j, "spindle_power_w", s->spindle_power_w);
  put(&j, ",");
  num(&j, "idle_power_w", st.baseline_w);
  put(&j, ",");
  num(&j, "net_power_w", s->spindle_power_w - st.baseline_w);
  put(&j, ",");
  num(&j, "spindle_speed_rpm", s->spindle_speed_rpm);
  put(&j, ",");
  double ds = isnan(s->wheel_diameter_mm) ? cfg->wheel->diameter_mm : s->wheel_diameter_mm;
  num(&j, "wheel_speed_m_s", M_PI * ds * s->spindle_speed_rpm / 60000.0);
  put(&j, ",");
  num(&j, "work_speed_mm_min", s->work_speed_mm_min);
  put(&j, ",");
  num(&j, "wheel_diameter_mm", ds);
  put(&j, "},\"window\":{");
  num(&j, "low", cfg->wheel->aggr_low);
  put(&j, ",");
  num(&j, "high", cfg->wheel->aggr_high);
  put(&j, ",");
  num(&j, "min", cfg->wheel->aggr_min);
  put(&j, ",");
  num(&j, "max", cfg->wheel->aggr_max);
  put(&j, ",");
  num(&j, "dull_limit", cfg->wheel->dull_limit);
  put(&j, ",");
  num(&j, "max_speed_m_s", cfg->wheel->max_speed_m_s);
  put(&j, "},\"last_pass\":");
  const SEG_Pass *p = &st.last_pass;
  if (!p->number) {
    put(&j, "null");
  } else {
    char flags[160];
    put(&j, "{\"pass\":%lu,", p->number);
    num(&j, "end_time", p->end_time);
    put(&j, ",");
    num(&j, "duration_s", p->duration_s);
    put(&j, ",");
    num(&j, "depth_of_cut_mm", p->depth_mm);
    put(&j, ",");
    num(&j, "work_speed_mm_min", p->work_speed_mm_s * 60.0);
    put(&j, ",");
    num(&j, "wheel_speed_m_s", p->wheel_speed_m_s);
    put(&j, ",");
    num(&j, "aggressiveness", p->aggressiveness);
    put(&j, ",");
    num(&j, "equivalent_chip_thickness_um", p->chip_thickness_mm * 1e3);
    put(&j, ",");
    num(&j, "net_power_mean_w", p->net_power_mean_w);
    put(&j, ",");
    num(&j, "net_power_peak_w", p->net_power_peak_w);
    put(&j, ",");
    num(&j, "specific_energy_j_mm3", p->specific_energy_j_mm3);
    put(&j, ",");
    num(&j, "burn_ratio", p->burn_ratio);
    put(&j, ",");
    str(&j, "flags", SEG_FormatFlags(p->flags, flags, sizeof flags));
    put(&j, "}");
  }
  const CYC_PassInfo *x = &st.last_info;
  put(&j, ",\"cycle\":{\"number\":%lu,\"passes\":%lu,", st.cycle, st.passes_in_cycle);
  num(&j, "volume_mm3_mm", st.volume_in_cycle);
  put(&j, ",");
  num(&j, "reference_specific_energy_j_mm3", x->u_ref_j_mm3);
  put(&j, ",");
  num(&j, "dull_ratio", x->dull_ratio);
  put(&j, ",");
  num(&j, "dull_ratio_smoothed", x->smoothed_ratio);
  put(&j, ",");
  num(&j, "trend_per_mm3_mm", x->trend_per_v_prime);
  put(&j, ",");
  num(&j, "forecast_passes_left", st.forecast_passes_left);
  put(&j, ",");
  num(&j, "forecast_volume_left_mm3_mm", st.forecast_volume_left);
  put(&j, ",");
  num(&j, "g_ratio", x->g_ratio);
  put(&j, "},\"conditions\":[");
  CND_Kind kinds[CND_CONDITION_COUNT];
  unsigned n = CND_ActiveList(cnd, kinds, CND_CONDITION_COUNT);
  for (unsigned i = 0; i < n; i++)
    put(&j, "%s\"%s\"", i ? "," : "", CND_KindName(kinds[i]));
  put(&j, "],");
  str(&j, "summary", st.conditions);
  put(&j, ",\"recent_events\":[");
  for (int i = 0; i < st.n_recent; i++) {
    const PLG_Event *e = &st.recent[i];
    put(&j, "%s{", i ? "," : "");
    num(&j, "time", e->time);
    put(&j, ",\"kind\":\"%s\",\"severity\":\"%s\",\"state\":\"%s\",\"pass\":%lu,", e->kind,
        PLG_SeverityName(e->severity), PLG_StateName(e->state), e->pass);
    str(&j, "message", e->message);
    put(&j, "}");
  }
  put(&j, "]}");
  return j.bad ? -1 : (long)j.used;
}
