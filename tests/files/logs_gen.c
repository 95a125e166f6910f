/* logs_gen.c: writes a shift folder's logs and recording, and their values as JSON, for check_logs.py. */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "logfile.h"
#include "passlog.h"
#include "recording.h"

static uint64_t rng = 0x2545f4914f6cdd1dull;
static double uniform(void)
{
  rng = rng * 6364136223846793005ull + 1442695040888963407ull;
  return (double)(rng >> 11) / 9007199254740992.0;
}

/* A value in [lo, hi), or NAN one time in `nan_one_in` (0 = never). */
static double value(double lo, double hi, int nan_one_in)
{
  double u = uniform();
  if (nan_one_in && uniform() * nan_one_in < 1.0)
    return NAN;
  return lo + u * (hi - lo);
}

static void json_number(FILE *f, const char *name, double v, int comma)
{
  if (isfinite(v))
    fprintf(f, "\"%s\": %.17g%s", name, v, comma ? ", " : "");
  else
    fprintf(f, "\"%s\": null%s", name, comma ? ", " : "");
}

static void json_string(FILE *f, const char *name, const char *s, int comma)
{
  fprintf(f, "\"%s\": \"", name);
  for (const char *p = s; *p; p++) {
    if (*p == '"' || *p == '\\')
      fprintf(f, "\\%c", *p);
    else if ((unsigned char)*p < 0x20)
      fprintf(f, "\\u%04x", *p);
    else
      fputc(*p, f);
  }
  fprintf(f, "\"%s", comma ? ", " : "");
}

static int open_log(LGF_File *f, const char *dir, const char *name, const char *header)
{
  char path[600];
  snprintf(path, sizeof path, "%s/%s", dir, name);
  if (LGF_Open(f, path) != 0) {
    perror(path);
    return -1;
  }
  if (header) {
    char line[PLG_LINE_MAX];
    int n = snprintf(line, sizeof line, "%s\n", header);
    if (LGF_Append(f, line, (size_t)n) != 0)
      return -1;
  }
  return 0;
}

static int write_passes(const char *dir, FILE *js)
{
  LGF_File f;
  if (open_log(&f, dir, "passes.csv", PLG_PASSES_HEADER) != 0)
    return -1;
  fprintf(js, "\"passes\": [\n");
  const int count = 60;
  for (int i = 0; i < count; i++) {
    SEG_Pass p;
    memset(&p, 0, sizeof p);
    CYC_PassInfo x;
    memset(&x, 0, sizeof x);
    int sparse = i % 4 == 3; /* every fourth pass: many unknowns */
    int n = sparse ? 3 : 0;
    p.number = (unsigned long)i + 1;
    p.start_time = 1709618400.0 + i * 30.0 + uniform();
    p.duration_s = value(0.5, 20.0, 0);
    p.end_time = p.start_time + p.duration_s;
    p.depth_mm = i % 7 == 6 ? 0.0 : value(0.001, 0.05, n);
    p.work_speed_mm_s = value(10.0, 500.0, n);
    p.wheel_speed_m_s = value(20.0, 35.0, n);
    p.spindle_speed_rpm = value(1000.0, 3000.0, n);
    p.wheel_diameter_mm = value(300.0, 400.0, n);
    p.equivalent_diameter_mm = value(50.0, 400.0, n);
    p.contact_length_mm = value(0.5, 5.0, n);
    p.specific_removal_rate_mm2_s = value(0.1, 20.0, n);
    p.removal_rate_mm3_s = value(1.0, 800.0, n);
    p.aggressiveness = value(2.0, 60.0, n);
    p.chip_thickness_mm = value(1e-6, 1e-3, n);
    p.max_chip_thickness_mm = value(1e-5, 5e-3, n);
    p.idle_power_w = value(800.0, 1500.0, n);
    p.net_power_mean_w = value(100.0, 9000.0, n);
    p.net_power_peak_w = value(200.0, 12000.0, n);
    p.energy_j = value(10.0, 1e5, n);
    p.volume_mm3 = value(1.0, 1e4, n);
    p.specific_energy_j_mm3 = value(5.0, 120.0, n);
    p.burn_threshold_j_mm3 = value(20.0, 90.0, n);
    p.burn_ratio = value(0.1, 1.5, n);
    p.flags = (unsigned)(i * 37) & 0x7fu;
    int no_model = i % 10 == 9; /* the condition model has nothing for this pass */
    x.cycle = no_model ? 0 : 1 + (unsigned long)i / 20;
    x.pass_in_cycle = 1 + (unsigned long)i % 20;
    int m = no_model ? 1 : sparse ? 2 : 0;
    x.u_ref_j_mm3 = value(10.0, 60.0, m);
    x.dull_ratio = value(0.8, 1.6, m);
    x.smoothed_ratio = value(0.9, 1.4, m);
    x.cusum = value(0.0, 8.0, m);
    x.v_prime_mm3_mm = value(0.0, 5000.0, m);
    x.forecast_passes_left = value(0.0, 400.0, m ? 1 : 2);
    x.forecast_v_prime_left = value(0.0, 8000.0, m ? 1 : 2);
    x.power_intercept_w_mm = value(-10.0, 40.0, m ? 1 : 2);
    x.power_slope_j_mm3 = value(5.0, 60.0, m ? 1 : 2);
    x.radial_wear_um = value(0.0, 0.5, m ? 1 : 2);
    x.g_ratio = value(5.0, 300.0, m ? 1 : 2);
    char line[PLG_LINE_MAX];
    long len = PLG_FormatPass(&p, &x, line, sizeof line);
    if (len < 0 || LGF_Append(&f, line, (size_t)len) != 0)
      return -1;
    fprintf(js, "  {");
    fprintf(js, "\"number\": %lu, \"cycle\": %lu, \"pass_in_cycle\": %lu, \"flags\": %u, ", p.number, x.cycle,
            x.pass_in_cycle, p.flags);
#define F(name) json_number(js, #name, p.name, 1)
    F(start_time); F(end_time); F(duration_s); F(depth_mm); F(work_speed_mm_s); F(wheel_speed_m_s);
    F(spindle_speed_rpm); F(wheel_diameter_mm); F(equivalent_diameter_mm); F(contact_length_mm);
    F(specific_removal_rate_mm2_s); F(removal_rate_mm3_s); F(aggressiveness); F(chip_thickness_mm);
    F(max_chip_thickness_mm); F(idle_power_w); F(net_power_mean_w); F(net_power_peak_w); F(energy_j);
    F(volume_mm3); F(specific_energy_j_mm3); F(burn_threshold_j_mm3); F(burn_ratio);
#undef F
#define X(name) json_number(js, #name, x.name, 1)
    X(u_ref_j_mm3); X(dull_ratio); X(smoothed_ratio); X(cusum); X(v_prime_mm3_mm); X(forecast_passes_left);
    X(forecast_v_prime_left); X(power_intercept_w_mm); X(power_slope_j_mm3); X(radial_wear_um);
#undef X
    json_number(js, "g_ratio", x.g_ratio, 0);
    fprintf(js, "}%s\n", i + 1 < count ? "," : "");
  }
  fprintf(js, "],\n");
  LGF_Close(&f);
  return 0;
}

static int write_events(const char *dir, FILE *js)
{
  LGF_File f;
  if (open_log(&f, dir, "events.csv", PLG_EVENTS_HEADER) != 0)
    return -1;
  static const struct {
    const char *kind;
    PLG_Severity sev;
    PLG_State state;
    unsigned long pass;
    double value, limit;
    const char *message;
  } ev[] = {
      {"shift", PLG_INFO, PLG_NOTE, 0, NAN, NAN, "shift 2024-03-05_early"},
      {"monitoring", PLG_INFO, PLG_NOTE, 0, NAN, NAN, "monitoring started: gritlined 0.1.0"},
      {"dulling", PLG_WARNING, PLG_RAISED, 17, 1.3412, 1.3, "dull ratio 1.34 above 1.30, dress soon"},
      {"burn_risk", PLG_CRITICAL, PLG_RAISED, 18, 61.23456, 58.0, "specific energy \"61.2\" J/mm^3, burn"},
      {"dulling", PLG_WARNING, PLG_CLEARED, 19, 1.1, 1.3, "cleared after dress, ratio 1.10"},
      {"config", PLG_WARNING, PLG_NOTE, 0, NAN, NAN, "configuration refused: /etc/gritline/gritline.conf:12: bad"},
      {"dress", PLG_INFO, PLG_NOTE, 20, NAN, NAN, "dress marked by \"Bay B\", line 1\nline 2\r\nend"},
      {"communication_lost", PLG_WARNING, PLG_RAISED, 0, 2.5, NAN, "no values since 1709618460.000 (250 polls)"},
      {"stale_data", PLG_WARNING, PLG_RAISED, 0, NAN, 30.0, "values frozen: spindle_power, work_speed"},
      {"note", PLG_INFO, PLG_NOTE, 0, -0.5, 0.0, ""},
      {"note", PLG_INFO, PLG_NOTE, 0, NAN, NAN, ",\"\","},
  };
  int count = (int)(sizeof ev / sizeof ev[0]);
  fprintf(js, "\"events\": [\n");
  for (int i = 0; i < count; i++) {
    PLG_Event e;
    memset(&e, 0, sizeof e);
    e.time = 1709618400.0 + i * 61.25;
    snprintf(e.kind, sizeof e.kind, "%s", ev[i].kind);
    e.severity = ev[i].sev;
    e.state = ev[i].state;
    e.pass = ev[i].pass;
    e.value = ev[i].value;
    e.limit = ev[i].limit;
    snprintf(e.message, sizeof e.message, "%s", ev[i].message);
    char line[PLG_LINE_MAX];
    long len = PLG_FormatEvent(&e, line, sizeof line);
    if (len < 0 || LGF_Append(&f, line, (size_t)len) != 0)
      return -1;
    fprintf(js, "  {");
    json_number(js, "time", e.time, 1);
    json_string(js, "kind", e.kind, 1);
    json_string(js, "severity", PLG_SeverityName(e.severity), 1);
    json_string(js, "state", PLG_StateName(e.state), 1);
    fprintf(js, "\"pass\": %lu, ", e.pass);
    json_number(js, "value", e.value, 1);
    json_number(js, "limit", e.limit, 1);
    json_string(js, "message", e.message, 0);
    fprintf(js, "}%s\n", i + 1 < count ? "," : "");
  }
  fprintf(js, "],\n");
  LGF_Close(&f);
  return 0;
}

static int write_cycles(const char *dir, FILE *js)
{
  LGF_File f;
  if (open_log(&f, dir, "dress_cycles.csv", PLG_CYCLES_HEADER) != 0)
    return -1;
  static const CYC_Trigger started[] = {CYC_START, CYC_ALERT, CYC_SCHEDULE, CYC_OPERATOR, CYC_COUNTER};
  static const CYC_Trigger ended[] = {CYC_ALERT, CYC_SCHEDULE, CYC_OPERATOR, CYC_COUNTER, CYC_END};
  const int count = 5;
  fprintf(js, "\"cycles\": [\n");
  for (int i = 0; i < count; i++) {
    CYC_Record c;
    memset(&c, 0, sizeof c);
    c.cycle = (unsigned long)i + 1;
    snprintf(c.wheel, sizeof c.wheel, "%s", i == 3 ? "wa46-soft" : "cx60-vitrified");
    snprintf(c.job, sizeof c.job, "%s", i == 2 ? "plate \"1200\", rework" : "plate-1200");
    c.start_time = 1709618400.0 + i * 3600.0;
    c.end_time = c.start_time + 3000.0 + uniform();
    c.passes = 20 + (unsigned long)i;
    c.v_prime_mm3_mm = value(100.0, 5000.0, 0);
    c.volume_mm3 = c.v_prime_mm3_mm * 40.0;
    c.u_ref_j_mm3 = i == 0 ? NAN : value(10.0, 60.0, 0);
    c.ref_exponent = i == 0 ? NAN : value(-1.0, 0.0, 0);
    c.ref_scatter = 0.05;
    c.final_ratio = value(1.0, 1.5, 0);
    c.g_ratio = i % 2 ? NAN : value(5.0, 200.0, 0);
    c.wear_um = i % 2 ? NAN : value(1.0, 50.0, 0);
    c.started_by = started[i];
    c.ended_by = ended[i];
    c.forecast_made = i >= 2;
    c.forecast_pass = c.forecast_made ? 10 + (unsigned long)i : 0;
    c.forecast_v_prime_mm3_mm = c.forecast_made ? value(100.0, 5000.0, 0) : NAN;
    c.forecast_limit_pass = c.forecast_made ? 30.0 : NAN;
    c.forecast_right = i < 2 ? -1 : i % 2;
    c.pass_at_limit = i == 4 ? 0 : 18 + (unsigned long)i;
    c.v_prime_at_limit = i == 4 ? NAN : value(100.0, 5000.0, 0);
    char line[PLG_LINE_MAX];
    long len = PLG_FormatCycle(&c, line, sizeof line);
    if (len < 0 || LGF_Append(&f, line, (size_t)len) != 0)
      return -1;
    fprintf(js, "  {\"cycle\": %lu, \"passes\": %lu, \"forecast_right\": %d, \"forecast_made\": %d, "
                "\"forecast_pass\": %lu, \"pass_at_limit\": %lu, ",
            c.cycle, c.passes, c.forecast_right, c.forecast_made, c.forecast_pass, c.pass_at_limit);
    json_string(js, "wheel", c.wheel, 1);
    json_string(js, "job", c.job, 1);
    json_string(js, "started_by", CYC_TriggerName(c.started_by), 1);
    json_string(js, "ended_by", CYC_TriggerName(c.ended_by), 1);
    json_number(js, "start_time", c.start_time, 1);
    json_number(js, "end_time", c.end_time, 1);
    json_number(js, "v_prime_mm3_mm", c.v_prime_mm3_mm, 1);
    json_number(js, "volume_mm3", c.volume_mm3, 1);
    json_number(js, "u_ref_j_mm3", c.u_ref_j_mm3, 1);
    json_number(js, "ref_exponent", c.ref_exponent, 1);
    json_number(js, "final_ratio", c.final_ratio, 1);
    json_number(js, "g_ratio", c.g_ratio, 1);
    json_number(js, "wear_um", c.wear_um, 1);
    json_number(js, "forecast_v_prime_mm3_mm", c.forecast_v_prime_mm3_mm, 1);
    json_number(js, "v_prime_at_limit", c.v_prime_at_limit, 0);
    fprintf(js, "}%s\n", i + 1 < count ? "," : "");
  }
  fprintf(js, "],\n");
  LGF_Close(&f);
  return 0;
}

static int write_recording(const char *dir, FILE *js)
{
  LGF_File f;
  if (open_log(&f, dir, "samples.csv", NULL) != 0)
    return -1;
  REC_Meta m;
  REC_InitMeta(&m);
  snprintf(m.machine, sizeof m.machine, "sg4");
  m.geometry = GRD_SURFACE;
  m.grinding_width_mm = 40.0;
  m.wheel_diameter_mm = 400.0;
  m.started = 1709618400.25;
  snprintf(m.wheel, sizeof m.wheel, "cx60-vitrified");
  snprintf(m.job, sizeof m.job, "plate-1200");
  char line[PLG_LINE_MAX];
  long len = REC_FormatHead(&m, line, sizeof line);
  if (len < 0 || LGF_Append(&f, line, (size_t)len) != 0)
    return -1;
  fprintf(js, "\"meta\": {\"machine\": \"sg4\", \"geometry\": \"surface\", \"grinding_width_mm\": 40, "
              "\"wheel_diameter_mm\": 400, \"started\": 1709618400.25, \"wheel\": \"cx60-vitrified\", "
              "\"job\": \"plate-1200\"},\n");
  const int count = 500;
  fprintf(js, "\"samples\": [\n");
  for (int i = 0; i < count; i++) {
    if (i == 0 || i == 250 || i == 400) {
      static const char *const kinds[] = {"start", "dress", "config"};
      int k = i == 0 ? 0 : i == 250 ? 1 : 2;
      len = REC_FormatMark(1709618400.25 + i * 0.01, kinds[k], k == 2 ? "accepted, job plate-1200" : "", line,
                           sizeof line);
      if (len < 0 || LGF_Append(&f, line, (size_t)len) != 0)
        return -1;
    }
    SMP_Sample s;
    SMP_Clear(&s, 1709618400.25 + i * 0.01);
    int gap = i % 50 == 49; /* a failed poll: the time only */
    if (!gap) {
      s.spindle_power_w = value(900.0, 9000.0, 0);
      s.spindle_speed_rpm = value(1600.0, 1700.0, 0);
      s.work_speed_mm_min = value(0.0, 20000.0, 10);
      s.infeed_position_mm = value(-2.0, 2.0, 0);
      s.wheel_diameter_mm = 400.0 - i * 1e-4;
      s.dress_count = i < 250 ? 7.0 : 8.0;
      s.grinding = i % 3 == 0 ? 1.0 : 0.0;
    }
    len = REC_FormatSample(&s, line, sizeof line);
    if (len < 0 || LGF_Append(&f, line, (size_t)len) != 0)
      return -1;
    fprintf(js, "  {");
    json_number(js, "time", s.time, 1);
    json_number(js, "spindle_power_w", s.spindle_power_w, 1);
    json_number(js, "spindle_speed_rpm", s.spindle_speed_rpm, 1);
    json_number(js, "work_speed_mm_min", s.work_speed_mm_min, 1);
    json_number(js, "infeed_position_mm", s.infeed_position_mm, 1);
    json_number(js, "depth_of_cut_mm", s.depth_of_cut_mm, 1);
    json_number(js, "wheel_diameter_mm", s.wheel_diameter_mm, 1);
    json_number(js, "dress_count", s.dress_count, 1);
    json_number(js, "grinding", s.grinding, 0);
    fprintf(js, "}%s\n", i + 1 < count ? "," : "");
  }
  fprintf(js, "]\n");
  LGF_Close(&f);
  return 0;
}

int main(int argc, char **argv)
{
  if (argc != 2) {
    fprintf(stderr, "usage: logs_gen DIR\n");
    return 64;
  }
  char path[600];
  snprintf(path, sizeof path, "%s/expected.json", argv[1]);
  FILE *js = fopen(path, "w");
  if (!js) {
    perror(path);
    return 73;
  }
  fprintf(js, "{\n");
  int rc = write_passes(argv[1], js) | write_events(argv[1], js) | write_cycles(argv[1], js) |
           write_recording(argv[1], js);
  fprintf(js, "}\n");
  if (fclose(js) != 0 || rc != 0) {
    fprintf(stderr, "logs_gen: writing %s failed\n", argv[1]);
    return 74;
  }
  return 0;
}
