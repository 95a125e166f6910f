/* test_summary.c: Criterion tests of the shift figures (daemon/summary.c) on small hand-made shift folders. */
#include <criterion/criterion.h>
#include <ftw.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "passlog.h"
#include "summary.h"

static char root[256];

static void make_root(void)
{
  const char *base = getenv("TMPDIR");
  snprintf(root, sizeof root, "%s/gritline-summary-XXXXXX", base && *base ? base : "/tmp");
  cr_assert_not_null(mkdtemp(root), "mkdtemp");
}

static int remove_entry(const char *path, const struct stat *st, int flag, struct FTW *ftw)
{
  (void)st, (void)flag, (void)ftw;
  return remove(path);
}

static void remove_root(void)
{
  if (root[0])
    nftw(root, remove_entry, 16, FTW_DEPTH | FTW_PHYS);
  root[0] = '\0';
}

TestSuite(summary, .init = make_root, .fini = remove_root);

static const char *path_in(const char *dir, const char *name)
{
  static char slots[4][600];
  static int next;
  char *p = slots[next++ % 4];
  snprintf(p, sizeof slots[0], "%s/%s", dir, name);
  return p;
}

static void write_file(const char *path, const char *text)
{
  FILE *f = fopen(path, "w");
  cr_assert_not_null(f, "%s", path);
  fputs(text, f);
  cr_assert_eq(fclose(f), 0);
}

/* A folder <root>/<machine>/<label>. */
static const char *folder(const char *machine, const char *label)
{
  static char slots[4][400];
  static int next;
  char *p = slots[next++ % 4];
  snprintf(p, sizeof slots[0], "%s/%s", root, machine);
  mkdir(p, 0755);
  snprintf(p, sizeof slots[0], "%s/%s/%s", root, machine, label);
  cr_assert_eq(mkdir(p, 0755), 0, "%s", p);
  return p;
}

/* One passes.csv row from the figures the summary reads; the other columns
 * get fixed plausible values. NAN writes an empty field. */
typedef struct row {
  unsigned long pass;
  double depth, vw, vs, de, qp, q, aggr, pmean, ppeak, energy, volume, u, ustar, burn;
  const char *flags;
} row;

static void put(FILE *f, double v)
{
  if (isfinite(v))
    fprintf(f, ",%.6f", v);
  else
    fputs(",", f);
}

static void write_passes(const char *dir, const row *r, int n)
{
  FILE *f = fopen(path_in(dir, "passes.csv"), "w");
  cr_assert_not_null(f);
  fprintf(f, "%s\n", PLG_PASSES_HEADER);
  for (int i = 0; i < n; i++) {
    double t = 1709629200.0 + 60.0 * r[i].pass;
    fprintf(f, "%lu,%.3f,%.3f,10.000,1,%lu", r[i].pass, t, t + 10.0, r[i].pass);
    put(f, r[i].depth), put(f, r[i].vw), put(f, r[i].vs), put(f, 1200.0), put(f, 400.0), put(f, r[i].de);
    put(f, 2.5), put(f, r[i].qp), put(f, r[i].q), put(f, r[i].aggr), put(f, 0.02), put(f, 1.1), put(f, 2400.0);
    put(f, r[i].pmean), put(f, r[i].ppeak), put(f, r[i].energy), put(f, r[i].volume), put(f, r[i].u);
    put(f, r[i].ustar), put(f, r[i].burn);
    for (int k = 0; k < 11; k++) /* u_ref .. g_ratio: the condition model's columns */
      put(f, NAN);
    fprintf(f, ",%s\n", r[i].flags);
  }
  cr_assert_eq(fclose(f), 0);
}

/* shift-a: nine passes, window 15-20. Expected figures are worked out by hand
 * beside each assertion in test "figures_by_hand". */
static const row shift_a[] = {
    {1, NAN, 2400, 25, 400, NAN, NAN, NAN, 500, 560, 5000, NAN, NAN, NAN, NAN, "depth_unknown|new_part"},
    {2, 0.015, 2400, 25, 400, 0.6, 24, 10.0, 480, 520, 4800, 240, 20, 35, 0.5714, ""},
    {3, 0.015, 4300, 25, 400, 1.075, 43, 17.5, 774, 820, 7740, 430, 18, 30, 0.6, ""},
    {4, 0.015, 4000, 25, 400, 1.0, 40, 16.0, 760, 810, 7600, 400, 19, 22.35, 0.85, ""},
    {5, 0.005, 2400, 25, 400, 0.2, 8, 6.0, 240, 300, 3000, 100, 30, 72, 0.4167, ""},
    {6, 0.0, 2400, 25, 400, 0.0, 0.0, 0.0, 120, 150, 1200, 0.0, NAN, NAN, NAN, "spark_out"},
    {7, 0.015, 5000, 25, 400, 1.25, 50, 22.0, 850, 900, 8500, 500, 17, 28, 0.6071, ""},
    {8, 0.015, 4500, 25, 400, 1.125, 45, 20.0, 945, 990, 9450, 450, 21, 30, 0.7, ""},
    {9, 0.015, 3500, 25, 400, 0.875, 35, 15.0, 770, 800, 7700, 350, 22, 33, 0.6667, "gap|some_future_flag"},
};

static const char events_a[] =
    "time,kind,severity,state,pass,value,limit,message\n"
    "1709629200.000,shift,info,info,,,,shift 2024-03-05_early\n"
    "1709629200.000,monitoring,info,info,,,,\"monitoring started: gritlined 0.1.0, /etc/gritline/gritline.conf, "
    "job plate-1200, wheel cx60-vitrified state=fresh\"\n"
    "1709629330.000,low_aggressiveness,warning,raised,2,10.0000,15.0000,aggressiveness 10.0 below the window\n"
    "1709629390.000,low_aggressiveness,warning,cleared,3,17.5000,15.0000,back in the window\n"
    "1709629450.000,burn_risk,warning,raised,4,0.8500,0.8000,\"burn, \"\"risk\"\"\"\n"
    "1709629510.000,dulling,warning,raised,5,1.3100,1.3000,\"dull ratio 1.31, \"\"dress\"\" the wheel\"\n"
    "1709629570.000,dress,info,info,6,1000.5000,,\"dress (alert): cycle 1 closed\"\n"
    "1709629570.000,dulling,warning,cleared,6,1.3200,1.3000,wheel dressed\n"
    "1709629630.000,high_aggressiveness,warning,raised,7,22.0000,20.0000,aggressiveness 22.0 above the window\n";

/* Cycle 3 is written twice with the same start (open at a restart, then closed): kept once, the later row. */
static const char cycles_a[] =
    "cycle,wheel,job,start_time,end_time,passes,volume_mm3_mm,volume_mm3,reference_specific_energy_j_mm3,"
    "reference_exponent,final_dull_ratio,g_ratio,wheel_wear_um,started_by,ended_by,forecast_pass,"
    "forecast_volume_mm3_mm,forecast_right,limit_pass,limit_volume_mm3_mm\n"
    "1,wa46-soft,block-7,1709600000.000,1709610000.000,300,1300.000,52000.0,14.0000,-0.3000,1.3500,70.00,10.000,"
    "start,alert,100,1100.000,yes,250,1000.500\n"
    "2,wa46-soft,block-7,1709610000.000,1709620000.000,200,900.000,36000.0,14.5000,-0.3000,1.1000,,,"
    "alert,counter,90,950.000,no,,\n"
    "3,wa46-soft,block-7,1709620000.000,1709625000.000,100,500.000,20000.0,14.2000,-0.3000,1.0500,,,"
    "counter,end,,,,,\n"
    "3,wa46-soft,block-7,1709620000.000,1709629570.000,320,1400.000,56000.0,14.2000,-0.3000,1.3200,71.50,11.000,"
    "counter,alert,,,,260,1200.250\n";

static const SUM_Window window = {15.0, 20.0};

static const char *make_shift_a(void)
{
  const char *dir = folder("sg4", "2024-03-05_early");
  write_passes(dir, shift_a, 9);
  write_file(path_in(dir, "events.csv"), events_a);
  write_file(path_in(dir, "dress_cycles.csv"), cycles_a);
  return dir;
}

/* The work speed that gives aggressiveness `aggr`, from the definition of the
 * aggressiveness number Aggr = 1e6 * (vw / vs) * sqrt(ae / de), vw and vs in
 * the same unit (docs/formulas.md), solved for vw and turned into mm/min. */
static double vw_for(double aggr, double vs_m_s, double ae, double de)
{
  return aggr / 1e6 * (vs_m_s * 60000.0) * sqrt(de / ae);
}

Test(summary, figures_by_hand)
{
  const char *dir = make_shift_a();
  SUM_Summary s;
  char err[300];
  int nf = -1;
  cr_assert_eq(SUM_Compute(dir, &window, &s, &nf, err, sizeof err), 0, "%s", err);
  cr_expect_str_eq(s.label, "2024-03-05_early");
  cr_expect_str_eq(s.machine, "sg4");
  /* the monitoring note names the job and wheel; the cycle rows' names are the fallback */
  cr_expect_str_eq(s.job, "plate-1200");
  cr_expect_str_eq(s.wheel, "cx60-vitrified");
  cr_expect_eq(s.passes, 9);
  cr_expect_eq(s.depth_known, 8);              /* all but pass 1 */
  cr_expect_eq(s.spark_out, 1);                /* pass 6 */
  cr_expect_eq(s.aggr_passes, 7);              /* 2,3,4,5,7,8,9: aggressiveness > 0, no spark-out */
  cr_expect_eq(s.in_window, 4);                /* 17.5, 16, 20 and 15: the ends belong to the window */
  cr_expect_eq(s.below_window, 2);             /* 10, 6 */
  cr_expect_eq(s.above_window, 1);             /* 22 */
  cr_expect_float_eq(s.window_share, 4.0 / 7.0, 1e-12);
  cr_expect_float_eq(s.volume_mm3, 2470.0, 1e-9); /* 240+430+400+100+0+500+450+350 */
  cr_expect_float_eq(s.volume_mm3_mm, 61.75, 1e-9); /* every Q'/Q = 1/40: the width is 40 mm */
  cr_expect_float_eq(s.energy_j, 54990.0, 1e-6);
  cr_expect_float_eq(s.aggr_mean, 106.5 / 7.0, 1e-12);
  cr_expect_float_eq(s.aggr_median, 16.0, 1e-12); /* 6 10 15 [16] 17.5 20 22 */
  cr_expect_eq(s.u_passes, 7);
  cr_expect_float_eq(s.u_mean, 21.0, 1e-12);   /* 147 / 7 */
  cr_expect_float_eq(s.u_median, 20.0, 1e-12); /* 17 18 19 [20] 21 22 30 */
  cr_expect_float_eq(s.burn_ratio_max, 0.85, 1e-12);
  cr_expect_float_eq(s.net_peak_max_w, 990.0, 1e-12);
  cr_expect_eq(s.dresses, 1);
  cr_expect_eq(s.alerts_raised, 4);
  cr_assert_eq(s.n_kinds, 4);
  const char *kinds[] = {"low_aggressiveness", "burn_risk", "dulling", "high_aggressiveness"};
  for (int i = 0; i < 4; i++) {
    cr_expect_str_eq(s.kinds[i].kind, kinds[i]);
    cr_expect_eq(s.kinds[i].raised, 1);
  }
  cr_expect_eq(s.cycles, 3);        /* cycle 3's two rows count once */
  cr_expect_eq(s.closed_cycles, 3); /* its later row is closed (alert) */
  cr_expect_eq(s.limit_cycles, 2);
  cr_expect_float_eq(s.limit_v_prime_median, 0.5 * (1000.5 + 1200.25), 1e-9);
  cr_expect_float_eq(s.limit_v_prime_min, 1000.5, 1e-12);
  cr_expect_float_eq(s.limit_v_prime_max, 1200.25, 1e-12);
  cr_expect_eq(s.forecasts_judged, 2);
  cr_expect_eq(s.forecasts_right, 1);
  cr_expect_float_eq(s.work_speed_median_mm_min, 4000.0, 1e-9); /* 2400 2400 3500 [4000] 4300 4500 5000 */
  cr_expect_float_eq(s.centre_aggr, 17.5, 1e-12);
  cr_expect_eq(s.centre_passes, 7);
  /* six passes at 0.015 mm and one at 0.005 mm: the median is the 0.015 mm figure */
  cr_expect_float_eq(s.centre_work_speed_mm_min, vw_for(17.5, 25.0, 0.015, 400.0), 1e-6);
  cr_expect_float_eq(s.centre_work_speed_mm_min, 4286.607, 1e-3); /* by hand: 0.4375 * 163.299 * 60 */
  cr_expect_float_eq(s.depth_median_mm, 0.015, 1e-12);
  cr_expect_float_eq(s.first_time, 1709629260.0, 1e-6);
  cr_expect_float_eq(s.last_time, 1709629200.0 + 540.0 + 10.0, 1e-6);
}

Test(summary, cycle_rows_and_events_as_read)
{
  const char *dir = make_shift_a();
  SUM_Data d;
  SUM_InitData(&d);
  char err[300];
  cr_assert_eq(SUM_ReadFolder(&d, dir, NULL, err, sizeof err), 0, "%s", err);
  cr_assert_eq(d.n_passes, 9);
  cr_assert_eq(d.n_events, 9);
  cr_assert_eq(d.n_cycles, 3);
  cr_expect_str_eq(d.cycles[2].ended_by, "alert"); /* the later row of cycle 3 replaced the earlier */
  cr_expect_eq(d.cycles[2].passes, 320);
  cr_expect_eq(d.cycles[0].forecast_right, 1);
  cr_expect_eq(d.cycles[1].forecast_right, 0);
  cr_expect_eq(d.cycles[2].forecast_right, -1);
  cr_expect(isnan(d.cycles[1].g_ratio));
  cr_expect_str_eq(d.events[4].message, "burn, \"risk\""); /* quoting undone as RFC 4180, section 2, has it */
  cr_expect_str_eq(d.events[5].message, "dull ratio 1.31, \"dress\" the wheel");
  cr_expect(isnan(d.events[0].value));
  cr_expect_eq(d.events[0].pass, 0);
  cr_expect_eq(d.passes[5].flags, 1u << 3);         /* spark_out */
  cr_expect_eq(d.passes[8].flags, 1u << 0);         /* gap; an unknown flag name is passed over */
  cr_expect(isnan(d.passes[0].depth_mm));
  SUM_FreeData(&d);
}

Test(summary, names_from_cycles_without_notes)
{
  const char *dir = folder("sg4", "2024-03-05_late");
  write_passes(dir, shift_a, 3);
  write_file(path_in(dir, "dress_cycles.csv"), cycles_a);
  SUM_Summary s;
  char err[300];
  cr_assert_eq(SUM_Compute(dir, &window, &s, NULL, err, sizeof err), 0, "%s", err);
  cr_expect_str_eq(s.job, "block-7");
  cr_expect_str_eq(s.wheel, "wa46-soft");
  cr_expect_eq(s.dresses, 0); /* no events.csv: no event */
  cr_expect_eq(s.alerts_raised, 0);
  cr_expect_eq(s.bytes[SUM_EVENTS], -1);
}

Test(summary, empty_and_missing)
{
  SUM_Summary s;
  char err[300];
  int nf = 0;
  const char *dir = folder("sg4", "2024-03-06_early");
  cr_expect_eq(SUM_Compute(dir, &window, &s, &nf, err, sizeof err), -1);
  cr_expect_eq(nf, 1, "no passes.csv: not found");
  cr_expect_not_null(strstr(err, "passes.csv"), "%s", err);
  /* a passes.csv just created by the daemon (empty, or only its header) */
  write_file(path_in(dir, "passes.csv"), "");
  cr_assert_eq(SUM_Compute(dir, &window, &s, &nf, err, sizeof err), 0, "%s", err);
  cr_expect_eq(s.passes, 0);
  cr_expect(isnan(s.aggr_median) && isnan(s.u_mean) && isnan(s.window_share) && isnan(s.centre_work_speed_mm_min));
  cr_expect(isnan(s.first_time));
  write_file(path_in(dir, "passes.csv"), PLG_PASSES_HEADER);
  cr_assert_eq(SUM_Compute(dir, &window, &s, &nf, err, sizeof err), 0, "%s", err);
  cr_expect_eq(s.passes, 0);
  cr_expect_eq(s.bytes[SUM_PASSES], 0, "a header still being written is not counted");
}

/* The tail of a file whose last line has no newline (the daemon is writing it). */
Test(summary, torn_last_line_and_crlf)
{
  const char *dir = make_shift_a();
  FILE *f = fopen(path_in(dir, "passes.csv"), "a");
  fputs("10,1709629800.000,1709629810.000,10.0", f);
  fclose(f);
  SUM_Summary s;
  char err[300];
  cr_assert_eq(SUM_Compute(dir, &window, &s, NULL, err, sizeof err), 0, "%s", err);
  cr_expect_eq(s.passes, 9);
  struct stat st;
  stat(path_in(dir, "passes.csv"), &st);
  cr_expect_eq(s.bytes[SUM_PASSES], (long long)st.st_size - 37, "bytes read stop at the last whole line");
  /* CRLF (a file saved back by a spreadsheet) reads the same */
  write_file(path_in(dir, "events.csv"),
             "time,kind,severity,state,pass,value,limit,message\r\n1.000,dress,info,info,3,5.0,,d\r\n");
  cr_assert_eq(SUM_Compute(dir, &window, &s, NULL, err, sizeof err), 0, "%s", err);
  cr_expect_eq(s.dresses, 1);
}

static void expect_error(const char *dir, const char *file, const char *text, const char *want)
{
  write_file(path_in(dir, file), text);
  SUM_Summary s;
  char err[300] = "";
  int nf = -1;
  cr_expect_eq(SUM_Compute(dir, &window, &s, &nf, err, sizeof err), -1, "%s: accepted", want);
  cr_expect_eq(nf, 0, "a malformed file is not a missing one");
  cr_expect_not_null(strstr(err, want), "got \"%s\", want \"%s\"", err, want);
}

Test(summary, malformed_files_name_file_and_line)
{
  const char *dir = make_shift_a();
  char text[8192];
  snprintf(text, sizeof text, "%s\n1,1.0,2.0,1.0,1,1,0.01,abc%s\n", PLG_PASSES_HEADER,
           ",,,,,,,,,,,,,,,,,,,,,,,,,,,,,,");
  expect_error(dir, "passes.csv", text, "passes.csv:2: column \"work_speed_mm_min\": not a number: \"abc\"");
  snprintf(text, sizeof text, "%s\n1,2,3\n", PLG_PASSES_HEADER);
  expect_error(dir, "passes.csv", text, "passes.csv:2: 3 fields, the header has 38");
  write_passes(dir, shift_a, 2);
  expect_error(dir, "events.csv", "time,kind,severity,state,pass,value,limit,message\n1.0,a,b,c,,,,\"open\n",
               "events.csv:2: a quoted field is not closed");
  expect_error(dir, "events.csv", "time,kind,severity,state,pass,value,limit,message\n1.0,a,b,c,-3,,,m\n",
               "events.csv:2: column \"pass\": not a whole number: \"-3\"");
  expect_error(dir, "events.csv", "time,kind,state\n", "events.csv:1: no column \"severity\" in the header");
  write_file(path_in(dir, "events.csv"), events_a);
  expect_error(dir, "dress_cycles.csv", "cycle,wheel\n1,x\n", "dress_cycles.csv:1: no column \"job\"");
}

Test(summary, columns_found_by_name)
{
  /* A later format may add columns: they are looked up by name. */
  const char *dir = make_shift_a();
  write_file(path_in(dir, "events.csv"),
             "time,new_column,kind,severity,state,pass,value,limit,message\n"
             "5.0,x,dulling,warning,raised,3,1.4,1.3,m\n");
  SUM_Summary s;
  char err[300];
  cr_assert_eq(SUM_Compute(dir, &window, &s, NULL, err, sizeof err), 0, "%s", err);
  cr_expect_eq(s.alerts_raised, 1);
  cr_expect_str_eq(s.kinds[0].kind, "dulling");
}

Test(summary, several_folders)
{
  const char *a = make_shift_a();
  const char *b = folder("sg4", "2024-03-05_late");
  /* shift b: two passes, and cycle 3's closing row again (the same cycle, written in both folders) */
  static const row rows_b[] = {
      {1, 0.015, 6000, 25, 400, 1.5, 60, 26.0, 900, 950, 9000, 600, 16, 30, 0.5333, ""},
      {2, 0.015, 6000, 25, 400, 1.5, 60, 26.0, 910, 960, 9100, 600, 15, 30, 0.5, ""},
  };
  write_passes(b, rows_b, 2);
  write_file(path_in(b, "dress_cycles.csv"),
             "cycle,wheel,job,start_time,end_time,passes,volume_mm3_mm,volume_mm3,reference_specific_energy_j_mm3,"
             "reference_exponent,final_dull_ratio,g_ratio,wheel_wear_um,started_by,ended_by,forecast_pass,"
             "forecast_volume_mm3_mm,forecast_right,limit_pass,limit_volume_mm3_mm\n"
             "3,wa46-soft,block-7,1709620000.000,1709629570.000,320,1400.000,56000.0,14.2000,-0.3000,1.3200,71.50,"
             "11.000,counter,alert,,,,260,1200.250\n"
             "4,wa46-soft,block-7,1709629570.000,1709640000.000,50,300.000,12000.0,14.9000,-0.3000,1.0200,,,"
             "alert,end,,,,,\n");
  SUM_Data d;
  SUM_InitData(&d);
  char err[300];
  cr_assert_eq(SUM_ReadFolder(&d, a, NULL, err, sizeof err), 0, "%s", err);
  cr_assert_eq(SUM_ReadFolder(&d, b, NULL, err, sizeof err), 0, "%s", err);
  SUM_Summary all, sa, sb;
  cr_assert_eq(SUM_FromData(&d, -1, &window, &all, err, sizeof err), 0);
  cr_assert_eq(SUM_FromData(&d, 0, &window, &sa, err, sizeof err), 0);
  cr_assert_eq(SUM_FromData(&d, 1, &window, &sb, err, sizeof err), 0);
  cr_expect_eq(all.folders, 2);
  cr_expect_str_eq(all.label, "2024-03-05_early to 2024-03-05_late");
  cr_expect_eq(all.passes, 11);
  cr_expect_eq(sa.passes, 9);
  cr_expect_eq(sb.passes, 2);
  cr_expect_float_eq(all.volume_mm3, 3670.0, 1e-9);
  /* medians over all the passes, not of the shifts' medians */
  cr_expect_float_eq(all.u_median, 19.0, 1e-12);  /* 15 16 17 18 [19] 20 21 22 30 */
  cr_expect_float_eq(sb.u_median, 15.5, 1e-12);   /* even count: mean of the middle two */
  cr_expect_float_eq(all.aggr_median, 17.5, 1e-12); /* 6 10 15 16 [17.5] 20 22 26 26 */
  cr_expect_eq(all.above_window, 3);
  /* cycle 3 is in both folders: once in the total, once in each shift */
  cr_expect_eq(sa.cycles, 3);
  cr_expect_eq(sb.cycles, 2);
  cr_expect_eq(all.cycles, 4);
  cr_expect_eq(all.closed_cycles, 3);
  cr_expect_eq(all.limit_cycles, 2);
  SUM_FreeData(&d);
}

Test(summary, single_files)
{
  const char *dir = make_shift_a();
  cr_expect_eq(SUM_SniffFile(path_in(dir, "passes.csv")), SUM_PASSES);
  cr_expect_eq(SUM_SniffFile(path_in(dir, "events.csv")), SUM_EVENTS);
  cr_expect_eq(SUM_SniffFile(path_in(dir, "dress_cycles.csv")), SUM_CYCLES);
  write_file(path_in(dir, "other.csv"), "a,b\n1,2\n");
  cr_expect_eq(SUM_SniffFile(path_in(dir, "other.csv")), -1);
  cr_expect_eq(SUM_SniffFile(path_in(dir, "absent.csv")), -1);
  const char *files[SUM_FILE_KINDS] = {path_in(dir, "passes.csv"), NULL, path_in(dir, "dress_cycles.csv")};
  SUM_Data d;
  SUM_InitData(&d);
  char err[300];
  cr_assert_eq(SUM_ReadFiles(&d, files, "copy", "sg4", NULL, err, sizeof err), 0, "%s", err);
  cr_expect_eq(d.n_passes, 9);
  cr_expect_eq(d.n_events, 0);
  cr_expect_eq(d.n_cycles, 3);
  cr_expect_str_eq(d.folders[0].label, "copy");
  SUM_FreeData(&d);
}

static char *slurp(const char *path)
{
  FILE *f = fopen(path, "r");
  if (!f)
    return NULL;
  static char buf[1 << 16];
  size_t n = fread(buf, 1, sizeof buf - 1, f);
  buf[n] = '\0';
  fclose(f);
  return buf;
}

Test(summary, summary_json_written_atomically)
{
  const char *dir = make_shift_a();
  char err[300];
  cr_assert_eq(SUM_WriteFolder(dir, &window, err, sizeof err), 0, "%s", err);
  char *j = slurp(path_in(dir, "summary.json"));
  cr_assert_not_null(j);
  cr_expect_not_null(strstr(j, "\"format\": \"gritline-summary/1\""), "%s", j);
  cr_expect_not_null(strstr(j, "\"passes\": 9,"));
  cr_expect_not_null(strstr(j, "\"window_share\": 0.5714285714285714"), "exact to 16 digits");
  cr_expect_not_null(strstr(j, "\"aggr_low\": 15,"));
  cr_expect_not_null(strstr(j, "{\"kind\": \"burn_risk\", \"raised\": 1}"));
  cr_expect_not_null(strstr(j, "\"limit_v_prime_median_mm3_mm\": 1100.375"));
  cr_expect_not_null(strstr(j, "\"cycle_rows\": ["));
  cr_expect_not_null(strstr(j, "\"forecast_right\": true"));
  struct stat st;
  stat(path_in(dir, "passes.csv"), &st);
  char want[64];
  snprintf(want, sizeof want, "\"passes_csv\": %lld", (long long)st.st_size);
  cr_expect_not_null(strstr(j, want), "the sizes of the files it was made from");
  stat(path_in(dir, "summary.json"), &st);
  cr_expect_eq(st.st_mode & 0777, 0644);
  /* no temporary file is left behind */
  char cmd[700];
  snprintf(cmd, sizeof cmd, "ls -a '%s' | grep -c summary", dir);
  FILE *p = popen(cmd, "r");
  int count = 0;
  cr_assert_eq(fscanf(p, "%d", &count), 1);
  pclose(p);
  cr_expect_eq(count, 1);
  /* a folder it cannot write into: -1 and a message naming it */
  cr_expect_eq(SUM_WriteFolder(path_in(root, "nowhere"), &window, err, sizeof err), -1);
  cr_expect_not_null(strstr(err, "nowhere"), "%s", err);
}

Test(summary, median)
{
  double odd[] = {5, 1, 4, 2, 3};
  double even[] = {10, 2, 8, 4};
  double one[] = {7};
  cr_expect_float_eq(SUM_Median(odd, 5), 3.0, 0.0);
  cr_expect_float_eq(SUM_Median(even, 4), 6.0, 0.0);
  cr_expect_float_eq(SUM_Median(one, 1), 7.0, 0.0);
  cr_expect(isnan(SUM_Median(one, 0)));
}
