/* test_recording.c: Criterion tests of the recording samples.csv (drivers/recording.c). */
#include <criterion/criterion.h>
#include <math.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "filetest.h"
#include "recording.h"

static void setup(void) { FTS_TempDir(); }
static void teardown(void) { FTS_RemoveTempDir(); }
TestSuite(recording, .init = setup, .fini = teardown);

/* Decimals of each column as the format promises (docs/recording-format.md). */
static const int decimals[REC_COLUMNS] = {6, 1, 1, 2, 6, 6, 4, 0, 0};


/* A small deterministic generator: the same numbers on every run. */
static uint64_t rng_state = 0x9e3779b97f4a7c15ull;
static double uniform(void)
{
  rng_state = rng_state * 6364136223846793005ull + 1442695040888963407ull;
  return (double)(rng_state >> 11) / 9007199254740992.0;
}

/* A plausible value for column c, or any magnitude the register map can
 * deliver when wide is set: f32 at most 3.4e38, times a scale of at most 1e12,
 * times 745.7 for hp -> W, stays under 1e54. */
static double value_for(int c, int wide)
{
  if (c == 0)
    return 1.7e9 + uniform() * 3.2e8;
  if (wide) {
    double mag = pow(10.0, uniform() * 60.0 - 7.0); /* 1e-7 .. 1e53 */
    return uniform() < 0.5 ? -mag : mag;
  }
  switch (c) {
  case 1: return uniform() * 15000.0;
  case 2: return 1500.0 + uniform() * 2000.0;
  case 3: return uniform() * 30000.0;
  case 4: return -5.0 + uniform() * 10.0;
  case 5: return uniform() * 0.05;
  case 6: return 300.0 + uniform() * 100.0;
  case 7: return floor(uniform() * 500.0);
  default: return uniform() < 0.5 ? 0.0 : 1.0;
  }
}

/* Formats s, parses it back, and checks: every present value reads back as
 * glibc's strtod reads the printed field (correctly rounded, C17 7.22.1.3),
 * within half a unit of the last decimal of the original; every missing one
 * reads back as missing; formatting the parsed sample gives the same text. */
static void check_round_trip(const SMP_Sample *s)
{
  char a[REC_LINE_MAX * 2], b[REC_LINE_MAX * 2];
  long n = REC_FormatSample(s, a, sizeof a);
  cr_assert_gt(n, 0);
  cr_assert_eq(a[n - 1], '\n');
  cr_assert_eq(memchr(a, '\n', (size_t)n - 1), NULL, "one line: %s", a);
  SMP_Sample back;
  int col = -1;
  cr_assert_eq(REC_ParseSample(a, (size_t)n - 1, &back, &col), 0, "parse of %s failed at column %d", a, col);
  SMP_Sample copy = *s, *orig = &copy;
  char *field = a;
  for (int c = 0; c < REC_COLUMNS; c++) {
    char *end = strpbrk(field, ",\n");
    cr_assert_not_null(end);
    double v = *FTS_Column(orig, c), r = *FTS_Column(&back, c);
    if (isnan(v)) {
      cr_expect(end == field, "column %d of %s: missing value written as text", c + 1, a);
      cr_expect(isnan(r), "column %d: missing value read back as %g", c + 1, r);
    } else {
      char text[400];
      memcpy(text, field, (size_t)(end - field));
      text[end - field] = '\0';
      double ref = strtod(text, NULL);
      cr_expect(r == ref, "column %d: \"%s\" read as %.17g, strtod gives %.17g", c + 1, text, r, ref);
      double half = 0.5 * pow(10.0, -decimals[c]);
      cr_expect(fabs(r - v) <= half + fabs(v) * 4e-16, "column %d: %.17g written as %s", c + 1, v, text);
    }
    field = end + 1;
  }
  long m = REC_FormatSample(&back, b, sizeof b);
  cr_assert_eq(m, n);
  cr_expect_str_eq(b, a, "format(parse(format(x))) differs from format(x)");
}

Test(recording, round_trip_with_every_channel_present_or_missing)
{
  for (unsigned mask = 0; mask < 256; mask++)
    for (int rep = 0; rep < 20; rep++) {
      SMP_Sample s;
      for (int c = 0; c < REC_COLUMNS; c++)
        *FTS_Column(&s, c) = (c > 0 && !(mask & (1u << (c - 1)))) ? NAN : value_for(c, 0);
      check_round_trip(&s);
    }
}

Test(recording, round_trip_of_extreme_and_awkward_values)
{
  for (int rep = 0; rep < 20000; rep++) {
    SMP_Sample s;
    for (int c = 0; c < REC_COLUMNS; c++)
      *FTS_Column(&s, c) = value_for(c, c > 0);
    check_round_trip(&s);
  }
  /* Halfway cases, negative zero, values just under a carry. */
  static const double awkward[] = {0.0, -0.0, 0.05, 0.15, 0.25, 2.675, 1e-7, -1e-7, 0.9999995, 999999.95,
                                   4503599627370495.5, 9007199254740993.0, 1e19, 1.2345678901234567e20};
  for (size_t i = 0; i < sizeof awkward / sizeof awkward[0]; i++) {
    SMP_Sample s;
    for (int c = 0; c < REC_COLUMNS; c++)
      *FTS_Column(&s, c) = c == 0 ? 1709600000.0 + awkward[i] * 1e-9 : awkward[i];
    check_round_trip(&s);
  }
  /* The time column's resolution: microseconds over this century. */
  SMP_Sample s;
  SMP_Clear(&s, 4102444799.999999); /* 2099-12-31T23:59:59.999999Z */
  check_round_trip(&s);
}

Test(recording, a_row_needs_a_time_and_nine_columns)
{
  SMP_Sample s;
  int col;
  static const char no_time[] = ",1.0,,,,,,,";
  cr_expect_eq(REC_ParseSample(no_time, strlen(no_time), &s, &col), -1);
  cr_expect_eq(col, 1);
  static const char eight[] = "1709600000.000000,1.0,,,,,,";
  cr_expect_eq(REC_ParseSample(eight, strlen(eight), &s, &col), -1);
  cr_expect_eq(col, 0);
  static const char ten[] = "1709600000.000000,1.0,,,,,,,,";
  cr_expect_eq(REC_ParseSample(ten, strlen(ten), &s, &col), -1);
  cr_expect_eq(col, 0);
  static const char ok[] = "1709600000.000000,,,,,,,,";
  cr_expect_eq(REC_ParseSample(ok, strlen(ok), &s, &col), 0);
  cr_expect(SMP_IsEmpty(&s), "a row with only the time is a failed poll");
  cr_expect_eq(s.time, 1709600000.0);
}

Test(recording, a_field_that_is_not_a_number_is_refused_with_its_column)
{
  /* Each text sits in column 2; none is a finite decimal number. */
  static const char *const bad[] = {"+", "-", ".", "+.", "-.", "1.2.3", "1,5x", "abc", "nan", "inf", "-inf",
                                    "1e999", "0x", "1 ", " ", "1\r", "--1", "1-"};
  for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
    char line[128];
    snprintf(line, sizeof line, "1709600000.000000,%s,,,,,,,", bad[i]);
    SMP_Sample s;
    int col = -1;
    int rc = REC_ParseSample(line, strlen(line), &s, &col);
    cr_expect_eq(rc, -1, "\"%s\" was read as %g", bad[i], s.spindle_power_w);
    if (strchr(bad[i], ',') == NULL)
      cr_expect_eq(col, 2, "\"%s\": column %d", bad[i], col);
  }
  /* Plain decimals in any of the usual spellings are numbers. */
  static const struct {
    const char *text;
    double value;
  } good[] = {{"0", 0.0}, {"-0.5", -0.5}, {"+2", 2.0}, {".5", 0.5}, {"5.", 5.0}, {"1e3", 1000.0},
              {"000123.4500", 123.45}};
  for (size_t i = 0; i < sizeof good / sizeof good[0]; i++) {
    char line[128];
    snprintf(line, sizeof line, "1709600000.000000,%s,,,,,,,", good[i].text);
    SMP_Sample s;
    int col;
    cr_expect_eq(REC_ParseSample(line, strlen(line), &s, &col), 0, "\"%s\" refused", good[i].text);
    cr_expect_eq(s.spindle_power_w, good[i].value, "\"%s\" read as %g", good[i].text, s.spindle_power_w);
  }
}

/* ---- ISO 8601 times ------------------------------------------------------ */

Test(recording, iso_times_of_known_moments)
{
  /* Epoch values from GNU date: `date -u -d @951782400` is Tue Feb 29 00:00:00 UTC 2000,
   * `date -u -d @1700000000` is Tue Nov 14 22:13:20 UTC 2023. */
  char buf[40];
  REC_FormatIso(0.0, buf, sizeof buf);
  cr_expect_str_eq(buf, "1970-01-01T00:00:00.000Z");
  REC_FormatIso(951782400.5, buf, sizeof buf);
  cr_expect_str_eq(buf, "2000-02-29T00:00:00.500Z");
  REC_FormatIso(1700000000.0, buf, sizeof buf);
  cr_expect_str_eq(buf, "2023-11-14T22:13:20.000Z");
  REC_FormatIso(1700000000.9999, buf, sizeof buf); /* milliseconds are cut, never rounded up */
  cr_expect_str_eq(buf, "2023-11-14T22:13:20.999Z");
  double t;
  cr_assert_eq(REC_ParseIso("2023-11-14T22:13:20Z", &t), 0);
  cr_expect_eq(t, 1700000000.0);
  cr_assert_eq(REC_ParseIso("2000-02-29T00:00:00.5Z", &t), 0);
  cr_expect_eq(t, 951782400.5);
  cr_assert_eq(REC_ParseIso("2023-11-14T22:13:20.123456Z", &t), 0);
  cr_expect(fabs(t - 1700000000.123456) < 1e-6);
}

Test(recording, iso_format_parse_format_is_the_same_text)
{
  /* Every millisecond of 100 s at a present-day time, and spread over a century. */
  char a[40], b[40];
  for (long i = 0; i < 100000; i++) {
    double t = 1700000000.0 + (double)i * 0.001;
    REC_FormatIso(t, a, sizeof a);
    double back;
    cr_assert_eq(REC_ParseIso(a, &back), 0, "%s", a);
    REC_FormatIso(back, b, sizeof b);
    cr_assert_str_eq(b, a, "t = %.6f", t);
  }
  for (int i = 0; i < 100000; i++) {
    double t = floor(uniform() * 4102444800.0 * 1000.0) / 1000.0 + uniform() * 0.001;
    REC_FormatIso(t, a, sizeof a);
    double back;
    cr_assert_eq(REC_ParseIso(a, &back), 0, "%s", a);
    cr_expect(t - back > -2e-6 && t - back < 0.001 + 2e-6, "%.6f written as %s", t, a);
    REC_FormatIso(back, b, sizeof b);
    cr_assert_str_eq(b, a, "t = %.6f", t);
  }
}

Test(recording, iso_parse_refuses_other_spellings)
{
  static const char *const bad[] = {
      "2024-03-05T06:00:00",       /* no zone */
      "2024-03-05T06:00:00+00:00", /* offsets are not written by the format */
      "2024-03-05T06:00:00z", "2024-03-05 06:00:00Z", "2024-03-05T06:00:00.Z", "2024-03-05T06:00:00ZZ",
      "2024-13-05T06:00:00Z", "2024-00-05T06:00:00Z", "2024-03-32T06:00:00Z", "2024-03-05T24:00:00Z",
      "2024-03-05T06:60:00Z", "2024-03-05T06:00:61Z", "", "now",
  };
  for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
    double t = 0;
    cr_expect_eq(REC_ParseIso(bad[i], &t), -1, "\"%s\" accepted", bad[i]);
  }
}

/* ---- metadata ------------------------------------------------------------ */

static void write_text(const char *path, const char *text)
{
  cr_assert_eq(FTS_WriteFile(path, text, strlen(text)), 0);
}

Test(recording, metadata_round_trip)
{
  REC_Meta m;
  REC_InitMeta(&m);
  snprintf(m.machine, sizeof m.machine, "sg4");
  m.geometry = GRD_EXTERNAL;
  m.grinding_width_mm = 25.5;
  m.workpiece_diameter_mm = 80.0;
  m.wheel_diameter_mm = 399.75;
  m.started = 1709618400.125;
  snprintf(m.wheel, sizeof m.wheel, "cx60-vitrified");
  snprintf(m.job, sizeof m.job, "shaft-80");
  char head[2048];
  long n = REC_FormatHead(&m, head, sizeof head);
  cr_assert_gt(n, 0);
  cr_expect_str_eq(head, "# format: gritline-samples/1\n"
                         "# machine: sg4\n"
                         "# geometry: external\n"
                         "# grinding_width_mm: 25.5\n"
                         "# workpiece_diameter_mm: 80\n"
                         "# wheel_diameter_mm: 399.75\n"
                         "# started: 2024-03-05T06:00:00.125Z\n"
                         "# wheel: cx60-vitrified\n"
                         "# job: shaft-80\n" REC_HEADER "\n");
  const char *path = FTS_Path("samples.csv");
  write_text(path, head);
  REC_Reader r;
  char err[700];
  cr_assert_eq(REC_Open(&r, path, err, sizeof err), 0, "%s", err);
  cr_expect_str_eq(r.meta.format, "gritline-samples/1");
  cr_expect_str_eq(r.meta.machine, "sg4");
  cr_expect_eq(r.meta.geometry, GRD_EXTERNAL);
  cr_expect_eq(r.meta.grinding_width_mm, 25.5);
  cr_expect_eq(r.meta.workpiece_diameter_mm, 80.0);
  cr_expect_eq(r.meta.wheel_diameter_mm, 399.75);
  cr_expect_eq(r.meta.started, 1709618400.125);
  cr_expect_str_eq(r.meta.wheel, "cx60-vitrified");
  cr_expect_str_eq(r.meta.job, "shaft-80");
  REC_Item it;
  cr_expect_eq(REC_Next(&r, &it, err, sizeof err), 0, "no rows: the end");
  REC_Close(&r);

  /* Optional keys left out when unknown, and read back as unknown. */
  REC_InitMeta(&m);
  snprintf(m.machine, sizeof m.machine, "sg4");
  m.grinding_width_mm = 40;
  m.started = 0;
  n = REC_FormatHead(&m, head, sizeof head);
  cr_assert_gt(n, 0);
  cr_expect_null(strstr(head, "workpiece_diameter_mm"));
  cr_expect_null(strstr(head, "# wheel"));
  cr_expect_null(strstr(head, "# job"));
  write_text(path, head);
  cr_assert_eq(REC_Open(&r, path, err, sizeof err), 0, "%s", err);
  cr_expect(isnan(r.meta.workpiece_diameter_mm));
  cr_expect(isnan(r.meta.wheel_diameter_mm));
  cr_expect_str_eq(r.meta.wheel, "");
  cr_expect_eq(r.meta.geometry, GRD_SURFACE);
  REC_Close(&r);

  /* Too small a buffer is refused, not cut. */
  cr_expect_eq(REC_FormatHead(&m, head, 40), -1);
}

Test(recording, unknown_metadata_is_ignored_and_minor_versions_accepted)
{
  const char *path = FTS_Path("samples.csv");
  write_text(path, "# format: gritline-samples/1.7\n"
                   "# machine: sg4\n"
                   "# coolant: emulsion 5 %\n"
                   "#operator_note:   spaces around  \n"
                   "# started: 2024-03-05T06:00:00Z\n" REC_HEADER "\n"
                   "1709618400.000000,2500.0,,,,,,,\n");
  REC_Reader r;
  char err[700];
  cr_assert_eq(REC_Open(&r, path, err, sizeof err), 0, "%s", err);
  cr_expect_str_eq(r.meta.format, "gritline-samples/1.7");
  cr_expect_str_eq(r.meta.machine, "sg4");
  REC_Item it;
  cr_assert_eq(REC_Next(&r, &it, err, sizeof err), 1);
  cr_expect_eq(it.kind, REC_ITEM_SAMPLE);
  cr_expect_eq(it.line, 7);
  cr_expect_eq(it.sample.spindle_power_w, 2500.0);
  REC_Close(&r);
}

/* Opens text as a recording and expects REC_Open to fail with "path:line:". */
static void expect_open_error(const char *text, long line, const char *words)
{
  const char *path = FTS_Path("bad.csv");
  write_text(path, text);
  REC_Reader r;
  char err[700] = "", want[600];
  cr_assert_eq(REC_Open(&r, path, err, sizeof err), -1, "accepted: %s", text);
  snprintf(want, sizeof want, "%s:%ld: ", path, line);
  cr_expect_eq(strncmp(err, want, strlen(want)), 0, "\"%s\" does not start with \"%s\"", err, want);
  cr_expect_not_null(strstr(err, words), "\"%s\" does not say \"%s\"", err, words);
  cr_expect_null(strchr(err, '\n'), "one line");
}

Test(recording, bad_heads_are_refused_with_their_line)
{
  expect_open_error("# format: gritline-samples/2\n# machine: sg4\n" REC_HEADER "\n", 1, "gritline-samples/2");
  expect_open_error("# machine: sg4\n# format: gritline-samples/10\n" REC_HEADER "\n", 2, "format");
  expect_open_error("# format: other-samples/1\n" REC_HEADER "\n", 1, "format");
  expect_open_error("# machine: sg4\n" REC_HEADER "\n", 2, "format");
  expect_open_error("# format: gritline-samples/1\n# grinding_width_mm: wide\n" REC_HEADER "\n", 2,
                    "grinding_width_mm");
  expect_open_error("# format: gritline-samples/1\n# geometry: round\n" REC_HEADER "\n", 2, "geometry");
  expect_open_error("# format: gritline-samples/1\n# started: yesterday\n" REC_HEADER "\n", 2, "started");
  expect_open_error("# format: gritline-samples/1\n# a comment without a key\n" REC_HEADER "\n", 2,
                    "# key: value");
  expect_open_error("# format: gritline-samples/1\ntime,power\n", 2, "header");
  expect_open_error("# format: gritline-samples/1\n", 1, "no header");
  /* A spreadsheet that saved the file with CRLF: the header no longer matches. */
  expect_open_error("# format: gritline-samples/1\r\n" REC_HEADER "\r\n", 2, "header");
  REC_Reader r;
  char err[700];
  write_text(FTS_Path("empty.csv"), "");
  cr_expect_eq(REC_Open(&r, FTS_Path("empty.csv"), err, sizeof err), -1);
  cr_expect_not_null(strstr(err, "not a recording"), "%s", err);
  cr_expect_eq(REC_Open(&r, FTS_Path("missing.csv"), err, sizeof err), -1);
  cr_expect_not_null(strstr(err, "missing.csv: No such file"), "%s", err);
}

/* ---- the reader over a real file --------------------------------------- */

#define HEAD                                                                                            \
  "# format: gritline-samples/1\n# machine: sg4\n# geometry: surface\n# grinding_width_mm: 40\n"        \
  "# started: 2024-03-05T06:00:00.000Z\n" REC_HEADER "\n"

typedef struct expect_item {
  REC_ItemKind kind;
  long line;
  const char *err;  /* for TORN and BAD: the message after "path:" */
  double time;      /* sample or mark time */
  const char *mark; /* kind of a mark */
  const char *text; /* its text */
} expect_item;

static void read_and_expect(const char *path, const expect_item *want, int count)
{
  REC_Reader r;
  char err[700];
  cr_assert_eq(REC_Open(&r, path, err, sizeof err), 0, "%s", err);
  for (int i = 0; i < count; i++) {
    REC_Item it;
    err[0] = '\0';
    cr_assert_eq(REC_Next(&r, &it, err, sizeof err), 1, "item %d: early end", i);
    cr_expect_eq(it.kind, want[i].kind, "item %d (line %ld): kind %d, expected %d", i, it.line, it.kind,
                 want[i].kind);
    cr_expect_eq(it.line, want[i].line, "item %d: line %ld, expected %ld", i, it.line, want[i].line);
    if (want[i].err) {
      char full[700];
      snprintf(full, sizeof full, "%s:%s", path, want[i].err);
      cr_expect_eq(strncmp(err, full, strlen(full)), 0, "item %d: \"%s\", expected \"%s...\"", i, err, full);
    }
    if (it.kind == REC_ITEM_SAMPLE)
      cr_expect(fabs(it.sample.time - want[i].time) < 1e-7, "item %d: time %.6f", i, it.sample.time);
    if (it.kind == REC_ITEM_MARK) {
      cr_expect(fabs(it.mark_time - want[i].time) < 1e-7, "item %d: mark time %.6f", i, it.mark_time);
      cr_expect_str_eq(it.mark_kind, want[i].mark);
      cr_expect_str_eq(it.mark_text, want[i].text);
    }
  }
  REC_Item it;
  cr_expect_eq(REC_Next(&r, &it, err, sizeof err), 0, "more items than expected (line %ld)", it.line);
  cr_expect_eq(REC_Next(&r, &it, err, sizeof err), 0, "the end stays the end");
  REC_Close(&r);
}

Test(recording, reader_marks_comments_restarts_and_bad_rows)
{
  const char *path = FTS_Path("samples.csv");
  write_text(path, HEAD                                                  /* lines 1-6 */
                   "1709618400.000000,2500.0,3000.0,12000.00,0.100000,,400.0000,3,1\n" /* 7 */
                   "# mark: 1709618401.000000 dress operator on cell B\n"              /* 8 */
                   "# a comment a person added\n"                                      /* 9 */
                   "1709618401.010000,,,,,,,,\n"                                       /* 10 */
                   "# mark: 1709618402.500000 stop\n"                                  /* 11 */
                   REC_HEADER "\n"                                                     /* 12 */
                   "# mark: 1709618410.000000 start gritlined 0.1.0\n"                 /* 13 */
                   "1709618410.000000,2500.0,abc,,,,,,\n"                              /* 14 */
                   "1709618410.010000,2500.0,,,,,,,0\r\n"                              /* 15 */
                   "1709618410.020000,2500.0,,,,,,\n"                                  /* 16 */
                   "1709618410.030000,2500.0,,,,,,,\n"                                 /* 17 */
                   "# mark: soon dress\n"                                              /* 18 */
                   "# mark: 1709618411.000000 config reloaded: job plate-1200\n"       /* 19 */
                   "\n"                                                                /* 20 */
                   "1709618410.040000,2500.0,,,,,,,\n"                                 /* 21 */
                   "1709618410.05");                                                   /* 22, torn */
  const expect_item want[] = {
      {REC_ITEM_SAMPLE, 7, NULL, 1709618400.0, NULL, NULL},
      {REC_ITEM_MARK, 8, NULL, 1709618401.0, "dress", "operator on cell B"},
      {REC_ITEM_SAMPLE, 10, NULL, 1709618401.01, NULL, NULL},
      {REC_ITEM_MARK, 11, NULL, 1709618402.5, "stop", ""},
      {REC_ITEM_MARK, 13, NULL, 1709618410.0, "start", "gritlined 0.1.0"},
      {REC_ITEM_BAD, 14, "14:3: column spindle_speed_rpm", 0, NULL, NULL},
      {REC_ITEM_BAD, 15, "15:9: column grinding", 0, NULL, NULL},
      {REC_ITEM_BAD, 16, "16: expected 9 columns", 0, NULL, NULL},
      {REC_ITEM_SAMPLE, 17, NULL, 1709618410.03, NULL, NULL},
      {REC_ITEM_BAD, 18, "18:1: malformed mark", 0, NULL, NULL},
      {REC_ITEM_MARK, 19, NULL, 1709618411.0, "config", "reloaded: job plate-1200"},
      {REC_ITEM_BAD, 20, "20: expected 9 columns", 0, NULL, NULL},
      {REC_ITEM_SAMPLE, 21, NULL, 1709618410.04, NULL, NULL},
      {REC_ITEM_TORN, 22, "22: incomplete last line (13 bytes)", 0, NULL, NULL},
  };
  read_and_expect(path, want, (int)(sizeof want / sizeof want[0]));
}

Test(recording, marks_written_are_marks_read)
{
  char buf[REC_LINE_MAX];
  cr_assert_gt(REC_FormatMark(1709618401.25, "dress", "by the night crew", buf, sizeof buf), 0);
  cr_expect_str_eq(buf, "# mark: 1709618401.250000 dress by the night crew\n");
  cr_assert_gt(REC_FormatMark(1709618402.0, "stop", NULL, buf, sizeof buf), 0);
  cr_expect_str_eq(buf, "# mark: 1709618402.000000 stop\n");
  cr_assert_gt(REC_FormatMark(1709618403.0, "config", "two\nlines\r", buf, sizeof buf), 0);
  cr_expect_str_eq(buf, "# mark: 1709618403.000000 config two lines \n", "a mark stays one line");
  cr_expect_eq(REC_FormatMark(1709618403.0, "config", "too long for the buffer", buf, 30), -1);
  static const char *const kinds[] = {"start", "stop", "dress", "config"};
  char text[4096];
  size_t used = 0;
  used += (size_t)snprintf(text, sizeof text, HEAD);
  for (int i = 0; i < 4; i++) {
    long n = REC_FormatMark(1709618400.0 + i, kinds[i], i == 3 ? "accepted, 3 keys changed" : "", text + used,
                            sizeof text - used);
    cr_assert_gt(n, 0);
    used += (size_t)n;
  }
  const char *path = FTS_Path("marks.csv");
  cr_assert_eq(FTS_WriteFile(path, text, used), 0);
  const expect_item want[] = {
      {REC_ITEM_MARK, 7, NULL, 1709618400.0, "start", ""},
      {REC_ITEM_MARK, 8, NULL, 1709618401.0, "stop", ""},
      {REC_ITEM_MARK, 9, NULL, 1709618402.0, "dress", ""},
      {REC_ITEM_MARK, 10, NULL, 1709618403.0, "config", "accepted, 3 keys changed"},
  };
  read_and_expect(path, want, 4);
}

Test(recording, very_long_lines_are_refused_one_line_at_a_time)
{
  /* A 10 kB row and a 10 kB comment, then a line longer than the reader's
   * 1 MiB buffer: each is one line, and the lines after keep their numbers. */
  size_t big = (size_t)REC_BUF + REC_BUF / 2;
  size_t cap = big + 100000;
  char *text = malloc(cap);
  cr_assert_not_null(text);
  size_t u = (size_t)snprintf(text, cap, HEAD);
  memcpy(text + u, "1709618400.000000,", 18);
  u += 18;
  memset(text + u, '7', 10000);
  u += 10000;
  u += (size_t)snprintf(text + u, cap - u, ",,,,,,,\n"); /* line 7 */
  text[u++] = '#';
  memset(text + u, 'c', 10000);
  u += 10000;
  text[u++] = '\n';                                                            /* line 8 */
  u += (size_t)snprintf(text + u, cap - u, "1709618400.010000,1.0,,,,,,,\n"); /* line 9 */
  memset(text + u, '8', big);
  u += big;
  text[u++] = '\n';                                                            /* line 10 */
  u += (size_t)snprintf(text + u, cap - u, "1709618400.020000,1.0,,,,,,,\n"); /* line 11 */
  const char *path = FTS_Path("long.csv");
  cr_assert_eq(FTS_WriteFile(path, text, u), 0);
  free(text);
  const expect_item want[] = {
      {REC_ITEM_BAD, 7, "7:2: column spindle_power_w", 0, NULL, NULL},
      {REC_ITEM_SAMPLE, 9, NULL, 1709618400.01, NULL, NULL},
      {REC_ITEM_BAD, 10, "10:", 0, NULL, NULL},
      {REC_ITEM_SAMPLE, 11, NULL, 1709618400.02, NULL, NULL},
  };
  read_and_expect(path, want, 4);
}

Test(recording, a_million_rows_are_read_completely, .timeout = 120)
{
  const char *path = FTS_Path("big.csv");
  FILE *f = fopen(path, "w");
  cr_assert_not_null(f);
  REC_Meta m;
  REC_InitMeta(&m);
  snprintf(m.machine, sizeof m.machine, "sg4");
  m.grinding_width_mm = 40;
  m.started = 1709618400.0;
  char line[REC_LINE_MAX];
  long n = REC_FormatHead(&m, line, sizeof line);
  cr_assert_gt(n, 0);
  fwrite(line, 1, (size_t)n, f);
  const long rows = 1000000;
  for (long i = 0; i < rows; i++) {
    SMP_Sample s;
    SMP_Clear(&s, 1709618400.0 + (double)i * 0.01);
    s.spindle_power_w = (double)(i % 15000);
    s.spindle_speed_rpm = 3000.0;
    s.dress_count = (double)(i / 100000);
    n = REC_FormatSample(&s, line, sizeof line);
    cr_assert_gt(n, 0);
    fwrite(line, 1, (size_t)n, f);
  }
  cr_assert_eq(fclose(f), 0);
  REC_Reader r;
  char err[700];
  cr_assert_eq(REC_Open(&r, path, err, sizeof err), 0, "%s", err);
  REC_Item it;
  long count = 0;
  int rc;
  while ((rc = REC_Next(&r, &it, err, sizeof err)) == 1) {
    cr_assert_eq(it.kind, REC_ITEM_SAMPLE, "line %ld: %s", it.line, err);
    cr_assert_eq(it.line, 7 + count);
    cr_assert_eq(it.sample.spindle_power_w, (double)(count % 15000));
    cr_assert(fabs(it.sample.time - (1709618400.0 + (double)count * 0.01)) < 1e-6, "line %ld", it.line);
    count++;
  }
  cr_expect_eq(rc, 0, "%s", err);
  cr_expect_eq(count, rows);
  cr_expect_eq(it.sample.dress_count, 9.0);
  REC_Close(&r);
}
