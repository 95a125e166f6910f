/* statusjson.c: the live state as one JSON object. */
#include "statusjson.h"

#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>

#include "textbuf.h"

static void str(TXB_Buf *j, const char *key, const char *value)
{
  TXB_Put(j, "\"%s\":", key);
  TXB_JsonString(j, value);
}

static void num(TXB_Buf *j, const char *key, double v)
{
  if (isfinite(v))
    TXB_Put(j, "\"%s\":%.15g", key, v);
  else
    TXB_Put(j, "\"%s\":null", key);
}

long STJ_Format(const CNF_Config *cfg, const MON_Monitor *mon, const STJ_Link *link, char *buf, size_t size)
{
  TXB_Buf j = TXB_INIT(buf, size);
  MON_Status st;
  MON_GetStatus(mon, &st);
  const CND_State *cnd = MON_Conditions(mon);
  TXB_Put(&j, "{");
  str(&j, "machine", cfg->machine);
  TXB_Put(&j, ",");
  str(&j, "version", GRITLINE_VERSION);
  TXB_Put(&j, ",");
  str(&j, "mode", link->mode);
  TXB_Put(&j, ",");
  str(&j, "job", cfg->job->name);
  TXB_Put(&j, ",");
  str(&j, "wheel", cfg->wheel->name);
  TXB_Put(&j, ",\"connected\":%s,\"communication_lost\":%s,", link->connected ? "true" : "false",
      st.comm_lost ? "true" : "false");
  num(&j, "now", link->now);
  TXB_Put(&j, ",");
  num(&j, "last_sample_time", st.last_sample_time);
  TXB_Put(&j, ",");
  num(&j, "last_sample_age_s", isnan(st.last_sample_time) ? NAN : link->now - st.last_sample_time);
  TXB_Put(&j, ",\"polls\":%lu,\"failed_polls\":%lu,", link->polls, link->failed);
  str(&j, "last_error", link->last_error ? link->last_error : "");
  TXB_Put(&j, ",");
  str(&j, "shift", st.shift);
  TXB_Put(&j, ",");
  str(&j, "shift_dir", MON_ShiftDir(mon));
  TXB_Put(&j, ",\"passes_shift\":%lu,\"in_pass\":%s,", st.passes_shift, st.in_pass ? "true" : "false");
  const SMP_Sample *s = &st.last_sample;
  TXB_Put(&j, "\"live\":{");
  num(&j, "spindle_power_w", s->spindle_power_w);
  TXB_Put(&j, ",");
  num(&j, "idle_power_w", st.baseline_w);
  TXB_Put(&j, ",");
  num(&j, "net_power_w", s->spindle_power_w - st.baseline_w);
  TXB_Put(&j, ",");
  num(&j, "spindle_speed_rpm", s->spindle_speed_rpm);
  TXB_Put(&j, ",");
  double ds = isnan(s->wheel_diameter_mm) ? cfg->wheel->diameter_mm : s->wheel_diameter_mm;
  num(&j, "wheel_speed_m_s", M_PI * ds * s->spindle_speed_rpm / 60000.0);
  TXB_Put(&j, ",");
  num(&j, "work_speed_mm_min", s->work_speed_mm_min);
  TXB_Put(&j, ",");
  num(&j, "wheel_diameter_mm", ds);
  TXB_Put(&j, "},\"window\":{");
  num(&j, "low", cfg->wheel->aggr_low);
  TXB_Put(&j, ",");
  num(&j, "high", cfg->wheel->aggr_high);
  TXB_Put(&j, ",");
  num(&j, "min", cfg->wheel->aggr_min);
  TXB_Put(&j, ",");
  num(&j, "max", cfg->wheel->aggr_max);
  TXB_Put(&j, ",");
  num(&j, "dull_limit", cfg->wheel->dull_limit);
  TXB_Put(&j, ",");
  num(&j, "max_speed_m_s", cfg->wheel->max_speed_m_s);
  TXB_Put(&j, "},\"last_pass\":");
  const SEG_Pass *p = &st.last_pass;
  if (!p->number) {
    TXB_Put(&j, "null");
  } else {
    char flags[160];
    TXB_Put(&j, "{\"pass\":%lu,", p->number);
    num(&j, "end_time", p->end_time);
    TXB_Put(&j, ",");
    num(&j, "duration_s", p->duration_s);
    TXB_Put(&j, ",");
    num(&j, "depth_of_cut_mm", p->depth_mm);
    TXB_Put(&j, ",");
    num(&j, "work_speed_mm_min", p->work_speed_mm_s * 60.0);
    TXB_Put(&j, ",");
    num(&j, "wheel_speed_m_s", p->wheel_speed_m_s);
    TXB_Put(&j, ",");
    num(&j, "aggressiveness", p->aggressiveness);
    TXB_Put(&j, ",");
    num(&j, "equivalent_chip_thickness_um", p->chip_thickness_mm * 1e3);
    TXB_Put(&j, ",");
    num(&j, "net_power_mean_w", p->net_power_mean_w);
    TXB_Put(&j, ",");
    num(&j, "net_power_peak_w", p->net_power_peak_w);
    TXB_Put(&j, ",");
    num(&j, "specific_energy_j_mm3", p->specific_energy_j_mm3);
    TXB_Put(&j, ",");
    num(&j, "burn_ratio", p->burn_ratio);
    TXB_Put(&j, ",");
    str(&j, "flags", SEG_FormatFlags(p->flags, flags, sizeof flags));
    TXB_Put(&j, "}");
  }
  const CYC_PassInfo *x = &st.last_info;
  TXB_Put(&j, ",\"cycle\":{\"number\":%lu,\"passes\":%lu,", st.cycle, st.passes_in_cycle);
  num(&j, "volume_mm3_mm", st.volume_in_cycle);
  TXB_Put(&j, ",");
  num(&j, "reference_specific_energy_j_mm3", x->u_ref_j_mm3);
  TXB_Put(&j, ",");
  num(&j, "dull_ratio", x->dull_ratio);
  TXB_Put(&j, ",");
  num(&j, "dull_ratio_smoothed", x->smoothed_ratio);
  TXB_Put(&j, ",");
  num(&j, "trend_per_mm3_mm", x->trend_per_v_prime);
  TXB_Put(&j, ",");
  num(&j, "forecast_passes_left", st.forecast_passes_left);
  TXB_Put(&j, ",");
  num(&j, "forecast_volume_left_mm3_mm", st.forecast_volume_left);
  TXB_Put(&j, ",");
  num(&j, "g_ratio", x->g_ratio);
  TXB_Put(&j, "},\"conditions\":[");
  CND_Kind kinds[CND_CONDITION_COUNT];
  unsigned n = CND_ActiveList(cnd, kinds, CND_CONDITION_COUNT);
  for (unsigned i = 0; i < n; i++)
    TXB_Put(&j, "%s\"%s\"", i ? "," : "", CND_KindName(kinds[i]));
  TXB_Put(&j, "],");
  str(&j, "summary", st.conditions);
  TXB_Put(&j, ",\"recent_events\":[");
  for (int i = 0; i < st.n_recent; i++) {
    const PLG_Event *e = &st.recent[i];
    TXB_Put(&j, "%s{", i ? "," : "");
    num(&j, "time", e->time);
    TXB_Put(&j, ",\"kind\":\"%s\",\"severity\":\"%s\",\"state\":\"%s\",\"pass\":%lu,", e->kind,
        PLG_SeverityName(e->severity), PLG_StateName(e->state), e->pass);
    str(&j, "message", e->message);
    TXB_Put(&j, "}");
  }
  TXB_Put(&j, "]}");
  return TXB_Done(&j);
}
