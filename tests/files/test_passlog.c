/* test_passlog.c: Criterion tests of passes.csv, events.csv and dress_cycles.csv rows (drivers/passlog.c). */
#include <criterion/criterion.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "passlog.h"

#define MAXF 64

/* Splits a copy of a row (its '\n' removed) and returns the field count. */
static int split(const char *row, char *copy, size_t size, char **field)
{
  snprintf(copy, size, "%s", row);
  size_t n = strlen(copy);
  cr_assert(n > 0 && copy[n - 1] == '\n', "a row ends with its newline: \"%s\"", row);
  copy[n - 1] = '\0';
  cr_assert_null(strpbrk(copy, "\r\n"), "one line: \"%s\"", row);
  return PLG_SplitCsv(copy, field, MAXF);
}

static int header_columns(const char *header)
{
  char copy[PLG_LINE_MAX];
  char *field[MAXF];
  snprintf(copy, sizeof copy, "%s", header);
  return PLG_SplitCsv(copy, field, MAXF);
}

Test(passlog, csv_fields_are_quoted_when_needed)
{
  /* Quoting as in RFC 4180, section 2 (fields with commas, quotes or line
   * breaks in double quotes, quotes doubled); line breaks become spaces so
   * that a row stays one line. */
  static const struct {
    const char *text, *csv, *back;
  } cases[] = {
      {"plain", "plain", "plain"},
      {"", "", ""},
      {"a,b", "\"a,b\"", "a,b"},
      {"say \"hi\"", "\"say \"\"hi\"\"\"", "say \"hi\""},
      {"\"", "\"\"\"\"", "\""},
      {"two\nlines", "\"two lines\"", "two lines"},
      {"crlf\r\nend", "\"crlf  end\"", "crlf  end"},
      {"semi;colon tab\there", "semi;colon tab\there", "semi;colon tab\there"},
      {"caf\xc3\xa9, 5 \xc2\xb5m", "\"caf\xc3\xa9, 5 \xc2\xb5m\"", "caf\xc3\xa9, 5 \xc2\xb5m"},
  };
  for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
    char buf[128];
    long n = PLG_CsvField(cases[i].text, buf, sizeof buf);
    cr_assert_eq(n, (long)strlen(cases[i].csv), "case %zu: length %ld", i, n);
    cr_expect_str_eq(buf, cases[i].csv, "case %zu", i);
    char row[160];
    snprintf(row, sizeof row, "x,%s,y", buf);
    char *field[MAXF];
    cr_assert_eq(PLG_SplitCsv(row, field, MAXF), 3, "case %zu: %s", i, buf);
    cr_expect_str_eq(field[0], "x");
    cr_expect_str_eq(field[1], cases[i].back, "case %zu", i);
    cr_expect_str_eq(field[2], "y");
    /* Every buffer shorter than the text and its NUL is refused, never cut. */
    for (size_t size = 0; size <= strlen(cases[i].csv); size++)
      cr_expect_eq(PLG_CsvField(cases[i].text, buf, size), -1, "case %zu, size %zu", i, size);
    cr_expect_eq(PLG_CsvField(cases[i].text, buf, strlen(cases[i].csv) + 1), n);
  }
}

Test(passlog, split_csv)
{
  char *f[MAXF];
  char a[] = "1,,3,";
  cr_assert_eq(PLG_SplitCsv(a, f, MAXF), 4);
  cr_expect_str_eq(f[0], "1");
  cr_expect_str_eq(f[1], "");
  cr_expect_str_eq(f[3], "");
  char b[] = "\"a,b\",\"\",\"c\"\"d\"";
  cr_assert_eq(PLG_SplitCsv(b, f, MAXF), 3);
  cr_expect_str_eq(f[0], "a,b");
  cr_expect_str_eq(f[1], "");
  cr_expect_str_eq(f[2], "c\"d");
  char c[] = "\"not closed,1";
  cr_expect_eq(PLG_SplitCsv(c, f, MAXF), -1);
  char d[] = "\"closed\"junk,1";
  cr_expect_eq(PLG_SplitCsv(d, f, MAXF), -1);
  char e[] = "a,b,c,d";
  cr_expect_eq(PLG_SplitCsv(e, f, 2), 2, "stops at max");
  char g[] = "";
  cr_expect_eq(PLG_SplitCsv(g, f, MAXF), 1);
  cr_expect_str_eq(f[0], "");
}

static void pass_with(SEG_Pass *p, double v)
{
  memset(p, 0, sizeof *p);
  p->number = 42;
  p->start_time = 1709618400.125;
  p->end_time = 1709618406.5;
  p->duration_s = 6.375;
  double *all[] = {&p->depth_mm, &p->work_speed_mm_s, &p->wheel_speed_m_s, &p->spindle_speed_rpm,
                   &p->wheel_diameter_mm, &p->equivalent_diameter_mm, &p->contact_length_mm,
                   &p->specific_removal_rate_mm2_s, &p->removal_rate_mm3_s, &p->aggressiveness,
                   &p->chip_thickness_mm, &p->max_chip_thickness_mm, &p->idle_power_w, &p->net_power_mean_w,
                   &p->net_power_peak_w, &p->energy_j, &p->volume_mm3, &p->specific_energy_j_mm3,
                   &p->burn_threshold_j_mm3, &p->burn_ratio};
  for (size_t i = 0; i < sizeof all / sizeof all[0]; i++)
    *all[i] = v;
}

static void info_with(CYC_PassInfo *x, double v)
{
  memset(x, 0, sizeof *x);
  double *all[] = {&x->v_prime_mm3_mm, &x->u_ref_j_mm3, &x->dull_ratio, &x->smoothed_ratio, &x->cusum,
                   &x->trend_per_v_prime, &x->forecast_passes_left, &x->forecast_v_prime_left,
                   &x->power_intercept_w_mm, &x->power_slope_j_mm3, &x->power_intercept_rise_w_mm,
                   &x->radial_wear_um, &x->wear_since_dress_um, &x->g_ratio};
  for (size_t i = 0; i < sizeof all / sizeof all[0]; i++)
    *all[i] = v;
}

Test(passlog, pass_rows_have_the_header_columns)
{
  int cols = header_columns(PLG_PASSES_HEADER);
  cr_assert_eq(cols, 38);
  char row[PLG_LINE_MAX], copy[PLG_LINE_MAX];
  char *field[MAXF];
  SEG_Pass p;
  CYC_PassInfo x;

  /* Everything unknown: empty fields, never "nan"; no condition model at all. */
  pass_with(&p, NAN);
  cr_assert_gt(PLG_FormatPass(&p, NULL, row, sizeof row), 0);
  cr_expect_null(strstr(row, "nan"), "%s", row);
  cr_assert_eq(split(row, copy, sizeof copy, field), cols, "%s", row);
  cr_expect_str_eq(field[0], "42");
  cr_expect_str_eq(field[1], "1709618400.125");
  cr_expect_str_eq(field[2], "1709618406.500");
  cr_expect_str_eq(field[3], "6.375");
  for (int i = 4; i < cols; i++)
    cr_expect_str_eq(field[i], "", "column %d", i + 1);
  info_with(&x, NAN);
  cr_assert_gt(PLG_FormatPass(&p, &x, row, sizeof row), 0);
  cr_assert_eq(split(row, copy, sizeof copy, field), cols, "%s", row);
  for (int i = 4; i < cols; i++)
    cr_expect_str_eq(field[i], "", "column %d with cycle 0", i + 1);

  /* Everything known, with flags. */
  pass_with(&p, 0.0123456789);
  p.work_speed_mm_s = 250.0;
  p.chip_thickness_mm = 0.000125;
  p.max_chip_thickness_mm = 0.0023456;
  p.flags = SEG_F_GAP | SEG_F_SPARK_OUT | SEG_F_TRUNCATED;
  info_with(&x, 1.23456);
  x.cycle = 3;
  x.pass_in_cycle = 12;
  x.power_intercept_w_mm = -2.5;
  cr_assert_gt(PLG_FormatPass(&p, &x, row, sizeof row), 0);
  cr_assert_eq(split(row, copy, sizeof copy, field), cols, "%s", row);
  cr_expect_str_eq(field[4], "3");
  cr_expect_str_eq(field[5], "12");
  cr_expect_str_eq(field[6], "0.012346", "depth_of_cut_mm: mm, 6 decimals");
  cr_expect_str_eq(field[7], "15000.0", "work_speed_mm_min: mm/s * 60");
  cr_expect_str_eq(field[16], "0.12500", "equivalent_chip_thickness_um: um");
  cr_expect_str_eq(field[17], "2.3456", "max_chip_thickness_um: um");
  cr_expect_str_eq(field[33], "-2.500", "rubbing_intercept_w_mm");
  cr_expect_str_eq(field[37], "gap|spark_out|truncated");
  for (int i = 0; i < cols; i++)
    cr_expect_neq(field[i][0], '\0', "column %d empty", i + 1);

  /* A buffer too small is refused. */
  cr_expect_eq(PLG_FormatPass(&p, &x, row, 100), -1);
}

Test(passlog, event_rows)
{
  cr_assert_eq(header_columns(PLG_EVENTS_HEADER), 8);
  cr_expect_str_eq(PLG_SeverityName(PLG_INFO), "info");
  cr_expect_str_eq(PLG_SeverityName(PLG_WARNING), "warning");
  cr_expect_str_eq(PLG_SeverityName(PLG_CRITICAL), "critical");
  cr_expect_str_eq(PLG_StateName(PLG_RAISED), "raised");
  cr_expect_str_eq(PLG_StateName(PLG_CLEARED), "cleared");
  cr_expect_str_eq(PLG_StateName(PLG_NOTE), "info");
  PLG_Event e;
  memset(&e, 0, sizeof e);
  e.time = 1709618400.5;
  snprintf(e.kind, sizeof e.kind, "dulling");
  e.severity = PLG_WARNING;
  e.state = PLG_RAISED;
  e.pass = 17;
  e.value = 1.34567;
  e.limit = 1.3;
  snprintf(e.message, sizeof e.message, "dull ratio 1.35, limit \"1.30\",\ndress soon");
  char row[PLG_LINE_MAX], copy[PLG_LINE_MAX];
  char *field[MAXF];
  cr_assert_gt(PLG_FormatEvent(&e, row, sizeof row), 0);
  cr_expect_str_eq(row, "1709618400.500,dulling,warning,raised,17,1.3457,1.3000,"
                        "\"dull ratio 1.35, limit \"\"1.30\"\", dress soon\"\n");
  cr_assert_eq(split(row, copy, sizeof copy, field), 8);
  cr_expect_str_eq(field[7], "dull ratio 1.35, limit \"1.30\", dress soon");
  e.pass = 0;
  e.value = e.limit = NAN;
  e.severity = PLG_INFO;
  e.state = PLG_NOTE;
  snprintf(e.kind, sizeof e.kind, "shift");
  snprintf(e.message, sizeof e.message, "shift 2024-03-05_early");
  cr_assert_gt(PLG_FormatEvent(&e, row, sizeof row), 0);
  cr_expect_str_eq(row, "1709618400.500,shift,info,info,,,,shift 2024-03-05_early\n");
  cr_expect_eq(split(row, copy, sizeof copy, field), 8);
  /* The longest message, every character a quote: still one row that fits a line. */
  memset(e.message, '"', sizeof e.message - 1);
  e.message[sizeof e.message - 1] = '\0';
  long n = PLG_FormatEvent(&e, row, sizeof row);
  cr_assert_gt(n, 0);
  cr_expect_lt(n, PLG_LINE_MAX);
  cr_assert_eq(split(row, copy, sizeof copy, field), 8);
  cr_expect_eq(strlen(field[7]), sizeof e.message - 1);
  cr_expect_eq(PLG_FormatEvent(&e, row, 64), -1);
}

Test(passlog, dress_cycle_rows)
{
  cr_assert_eq(header_columns(PLG_CYCLES_HEADER), 20);
  CYC_Record c;
  memset(&c, 0, sizeof c);
  c.cycle = 2;
  snprintf(c.wheel, sizeof c.wheel, "cx60-vitrified");
  snprintf(c.job, sizeof c.job, "plate,1200");
  c.start_time = 1709618400.0;
  c.end_time = 1709622000.25;
  c.passes = 31;
  c.v_prime_mm3_mm = 1234.5678;
  c.volume_mm3 = 49382.71;
  c.u_ref_j_mm3 = 22.123456;
  c.ref_exponent = -0.25;
  c.final_ratio = 1.31;
  c.g_ratio = NAN;
  c.wear_um = NAN;
  c.started_by = CYC_START;
  c.ended_by = CYC_ALERT;
  c.forecast_made = 0;
  c.forecast_right = -1;
  c.v_prime_at_limit = 1200.0;
  c.pass_at_limit = 29;
  char row[PLG_LINE_MAX], copy[PLG_LINE_MAX];
  char *field[MAXF];
  cr_assert_gt(PLG_FormatCycle(&c, row, sizeof row), 0);
  cr_expect_str_eq(row, "2,cx60-vitrified,\"plate,1200\",1709618400.000,1709622000.250,31,1234.568,49382.7,"
                        "22.1235,-0.2500,1.3100,,,start,alert,,,,29,1200.000\n");
  cr_expect_eq(split(row, copy, sizeof copy, field), 20);
  cr_expect_str_eq(field[2], "plate,1200");
  c.forecast_made = 1;
  c.forecast_pass = 14;
  c.forecast_v_prime_mm3_mm = 1100.0;
  c.forecast_right = 1;
  c.g_ratio = 45.678;
  c.wear_um = 12.3456;
  c.pass_at_limit = 0;
  c.v_prime_at_limit = NAN;
  c.ended_by = CYC_END;
  cr_assert_gt(PLG_FormatCycle(&c, row, sizeof row), 0);
  cr_expect_eq(split(row, copy, sizeof copy, field), 20);
  cr_expect_str_eq(field[11], "45.68");
  cr_expect_str_eq(field[12], "12.346");
  cr_expect_str_eq(field[14], "end");
  cr_expect_str_eq(field[15], "14");
  cr_expect_str_eq(field[16], "1100.000");
  cr_expect_str_eq(field[17], "yes");
  cr_expect_str_eq(field[18], "");
  cr_expect_str_eq(field[19], "");
  c.forecast_right = 0;
  cr_assert_gt(PLG_FormatCycle(&c, row, sizeof row), 0);
  cr_expect_eq(split(row, copy, sizeof copy, field), 20);
  cr_expect_str_eq(field[17], "no");
  cr_expect_eq(PLG_FormatCycle(&c, row, 20), -1);
}
