/* passlog.c: the logs passes.csv, events.csv and dress_cycles.csv. */
#include "passlog.h"

#include "textbuf.h"

#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>

const char PLG_PASSES_HEADER[] =
    "pass,start_time,end_time,duration_s,dress_cycle,passes_since_dress,depth_of_cut_mm,work_speed_mm_min,"
    "wheel_speed_m_s,spindle_speed_rpm,wheel_diameter_mm,equivalent_diameter_mm,contact_length_mm,"
    "specific_removal_rate_mm2_s,removal_rate_mm3_s,aggressiveness,equivalent_chip_thickness_um,"
    "max_chip_thickness_um,idle_power_w,net_power_mean_w,net_power_peak_w,energy_j,volume_mm3,"
    "specific_energy_j_mm3,burn_threshold_j_mm3,burn_ratio,reference_specific_energy_j_mm3,dull_ratio,"
    "dull_ratio_smoothed,cusum,volume_since_dress_mm3_mm,forecast_passes_left,forecast_volume_left_mm3_mm,"
    "rubbing_intercept_w_mm,incremental_energy_j_mm3,radial_wear_um,g_ratio,flags";

const char PLG_EVENTS_HEADER[] = "time,kind,severity,state,pass,value,limit,message";

const char PLG_CYCLES_HEADER[] =
    "cycle,wheel,job,start_time,end_time,passes,volume_mm3_mm,volume_mm3,reference_specific_energy_j_mm3,"
    "reference_exponent,final_dull_ratio,g_ratio,wheel_wear_um,started_by,ended_by,forecast_pass,"
    "forecast_volume_mm3_mm,forecast_right,limit_pass,limit_volume_mm3_mm";


/* A number with `dec` decimals, or an empty field when unknown. */
static void num(TXB_Buf *o, double v, int dec)
{
  if (isfinite(v))
    TXB_Put(o, ",%.*f", dec, v);
  else
    TXB_Put(o, ",");
}

long PLG_FormatPass(const SEG_Pass *p, const CYC_PassInfo *x, char *buf, size_t size)
{
  TXB_Buf o = TXB_INIT(buf, size);
  char flags[160];
  CYC_PassInfo none;
  if (!x) {
    memset(&none, 0, sizeof none);
    none.v_prime_mm3_mm = none.u_ref_j_mm3 = none.dull_ratio = none.smoothed_ratio = none.cusum = NAN;
    none.forecast_passes_left = none.forecast_v_prime_left = none.power_intercept_w_mm = NAN;
    none.power_slope_j_mm3 = none.radial_wear_um = none.g_ratio = NAN;
    x = &none;
  }
  TXB_Put(&o, "%lu,%.3f,%.3f,%.3f,", p->number, p->start_time, p->end_time, p->duration_s);
  if (x->cycle)
    TXB_Put(&o, "%lu,%lu", x->cycle, x->pass_in_cycle);
  else
    TXB_Put(&o, ",");
  num(&o, p->depth_mm, 6);
  num(&o, p->work_speed_mm_s * 60.0, 1);
  num(&o, p->wheel_speed_m_s, 3);
  num(&o, p->spindle_speed_rpm, 1);
  num(&o, p->wheel_diameter_mm, 3);
  num(&o, p->equivalent_diameter_mm, 3);
  num(&o, p->contact_length_mm, 4);
  num(&o, p->specific_removal_rate_mm2_s, 4);
  num(&o, p->removal_rate_mm3_s, 3);
  num(&o, p->aggressiveness, 3);
  num(&o, p->chip_thickness_mm * 1e3, 5);
  num(&o, p->max_chip_thickness_mm * 1e3, 4);
  num(&o, p->idle_power_w, 1);
  num(&o, p->net_power_mean_w, 1);
  num(&o, p->net_power_peak_w, 1);
  num(&o, p->energy_j, 2);
  num(&o, p->volume_mm3, 3);
  num(&o, p->specific_energy_j_mm3, 4);
  num(&o, p->burn_threshold_j_mm3, 4);
  num(&o, p->burn_ratio, 4);
  num(&o, x->u_ref_j_mm3, 4);
  num(&o, x->dull_ratio, 4);
  num(&o, x->smoothed_ratio, 4);
  num(&o, x->cusum, 3);
  num(&o, x->v_prime_mm3_mm, 3);
  num(&o, x->forecast_passes_left, 1);
  num(&o, x->forecast_v_prime_left, 3);
  num(&o, x->power_intercept_w_mm, 3);
  num(&o, x->power_slope_j_mm3, 4);
  num(&o, x->radial_wear_um, 4);
  num(&o, x->g_ratio, 2);
  TXB_Put(&o, ",%s\n", SEG_FormatFlags(p->flags, flags, sizeof flags));
  return TXB_Done(&o);
}

const char *PLG_SeverityName(PLG_Severity s)
{
  return s == PLG_CRITICAL ? "critical" : s == PLG_WARNING ? "warning" : "info";
}

const char *PLG_StateName(PLG_State s)
{
  return s == PLG_RAISED ? "raised" : s == PLG_CLEARED ? "cleared" : "info";
}

long PLG_CsvField(const char *text, char *buf, size_t size)
{
  int quote = strpbrk(text, ",\"\n\r") != NULL;
  size_t u = 0;
  if (quote && u < size)
    buf[u++] = '"';
  for (const char *p = text; *p; p++) {
    char c = (*p == '\n' || *p == '\r') ? ' ' : *p;
    if (c == '"') {
      if (u + 1 >= size)
        return -1;
      buf[u++] = '"';
    }
    if (u + 1 >= size)
      return -1;
    buf[u++] = c;
  }
  if (quote) {
    if (u + 1 >= size)
      return -1;
    buf[u++] = '"';
  }
  if (u >= size)
    return -1;
  buf[u] = '\0';
  return (long)u;
}

long PLG_FormatEvent(const PLG_Event *e, char *buf, size_t size)
{
  TXB_Buf o = TXB_INIT(buf, size);
  char msg[sizeof e->message * 2 + 4];
  if (PLG_CsvField(e->message, msg, sizeof msg) < 0)
    return -1;
  TXB_Put(&o, "%.3f,%s,%s,%s,", e->time, e->kind, PLG_SeverityName(e->severity), PLG_StateName(e->state));
  if (e->pass)
    TXB_Put(&o, "%lu", e->pass);
  num(&o, e->value, 4);
  num(&o, e->limit, 4);
  TXB_Put(&o, ",%s\n", msg);
  return TXB_Done(&o);
}

long PLG_FormatCycle(const CYC_Record *c, char *buf, size_t size)
{
  TXB_Buf o = TXB_INIT(buf, size);
  char wheel[2 * CYC_NAME_MAX + 4], job[2 * CYC_NAME_MAX + 4];
  if (PLG_CsvField(c->wheel, wheel, sizeof wheel) < 0 || PLG_CsvField(c->job, job, sizeof job) < 0)
    return -1;
  TXB_Put(&o, "%lu,%s,%s,%.3f,%.3f,%lu", c->cycle, wheel, job, c->start_time, c->end_time, c->passes);
  num(&o, c->v_prime_mm3_mm, 3);
  num(&o, c->volume_mm3, 1);
  num(&o, c->u_ref_j_mm3, 4);
  num(&o, c->ref_exponent, 4);
  num(&o, c->final_ratio, 4);
  num(&o, c->g_ratio, 2);
  num(&o, c->wear_um, 3);
  TXB_Put(&o, ",%s,%s,", CYC_TriggerName(c->started_by), CYC_TriggerName(c->ended_by));
  if (c->forecast_made)
    TXB_Put(&o, "%lu", c->forecast_pass);
  num(&o, c->forecast_made ? c->forecast_v_prime_mm3_mm : NAN, 3);
  TXB_Put(&o, ",%s,", c->forecast_right < 0 ? "" : c->forecast_right ? "yes" : "no");
  if (c->pass_at_limit)
    TXB_Put(&o, "%lu", c->pass_at_limit);
  num(&o, c->v_prime_at_limit, 3);
  TXB_Put(&o, "\n");
  return TXB_Done(&o);
}

int PLG_SplitCsv(char *line, char **field, int max)
{
  int n = 0;
  char *p = line;
  for (;;) {
    if (n == max)
      return n;
    if (*p == '"') {
      char *w = p;
      field[n++] = w;
      p++;
      for (;;) {
        if (*p == '\0')
          return -1;
        if (*p == '"') {
          if (p[1] == '"') {
            *w++ = '"';
            p += 2;
            continue;
          }
          p++;
          break;
        }
        *w++ = *p++;
      }
      *w = '\0';
      if (*p == ',') {
        p++;
        continue;
      }
      return *p == '\0' ? n : -1;
    }
    field[n++] = p;
    char *comma = strchr(p, ',');
    if (!comma)
      return n;
    *comma = '\0';
    p = comma + 1;
  }
}
