/* test_shift.c: Criterion tests of the shift schedule and folder labels (drivers/shift.c). */
#include <criterion/criterion.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "shift.h"

static void use_tz(const char *tz)
{
  setenv("TZ", tz, 1);
  tzset();
}

static void parse(SFT_Schedule *s, const char *starts, const char *names)
{
  char err[200];
  cr_assert_eq(SFT_Parse(s, starts, names, err, sizeof err), 0, "\"%s\" / \"%s\": %s", starts,
               names ? names : "(null)", err);
}

static void expect_shift(const SFT_Schedule *s, double t, const char *label, double start, double end)
{
  SFT_Shift sh;
  SFT_Find(s, t, &sh);
  cr_expect_str_eq(sh.label, label, "t = %.3f", t);
  cr_expect_eq(sh.start, start, "t = %.3f: start %.0f, expected %.0f", t, sh.start, start);
  cr_expect_eq(sh.end, end, "t = %.3f: end %.0f, expected %.0f", t, sh.end, end);
  cr_expect(sh.start <= t && t < sh.end, "t = %.3f outside its own shift", t);
}

/* 2024-03-05T00:00:00Z, from GNU date: `date -u -d 2024-03-05 +%s` prints 1709596800. */
#define D5 1709596800.0
#define H 3600.0

Test(shift, three_shifts_in_utc)
{
  use_tz("UTC");
  SFT_Schedule s;
  parse(&s, "06:00,14:00,22:00", "early,late,night");
  cr_expect_eq(s.count, 3);
  expect_shift(&s, D5 + 6 * H, "2024-03-05_early", D5 + 6 * H, D5 + 14 * H);
  expect_shift(&s, D5 + 10 * H + 0.5, "2024-03-05_early", D5 + 6 * H, D5 + 14 * H);
  expect_shift(&s, D5 + 14 * H - 0.001, "2024-03-05_early", D5 + 6 * H, D5 + 14 * H);
  expect_shift(&s, D5 + 14 * H, "2024-03-05_late", D5 + 14 * H, D5 + 22 * H);
  expect_shift(&s, D5 + 22 * H - 1, "2024-03-05_late", D5 + 14 * H, D5 + 22 * H);
  /* The night shift crosses midnight and keeps the date it started on. */
  expect_shift(&s, D5 + 22 * H, "2024-03-05_night", D5 + 22 * H, D5 + 30 * H);
  expect_shift(&s, D5 + 24 * H - 0.001, "2024-03-05_night", D5 + 22 * H, D5 + 30 * H);
  expect_shift(&s, D5 + 24 * H, "2024-03-05_night", D5 + 22 * H, D5 + 30 * H);
  expect_shift(&s, D5 + 30 * H - 0.001, "2024-03-05_night", D5 + 22 * H, D5 + 30 * H);
  expect_shift(&s, D5 + 30 * H, "2024-03-06_early", D5 + 30 * H, D5 + 38 * H);
  /* Before 06:00: the night shift of the day before. */
  expect_shift(&s, D5 + 59, "2024-03-04_night", D5 - 2 * H, D5 + 6 * H);
  expect_shift(&s, D5 + 5 * H + 59 * 60 + 59.999, "2024-03-04_night", D5 - 2 * H, D5 + 6 * H);
  SFT_Shift sh;
  SFT_Find(&s, D5 + 23 * H, &sh);
  cr_expect_eq(sh.index, 2);
}

Test(shift, across_a_year_and_a_leap_day)
{
  use_tz("UTC");
  SFT_Schedule s;
  parse(&s, "06:00,18:00", "day,night");
  /* 2024-01-01T00:00:00Z = 1704067200 and 2024-02-29T00:00:00Z = 1709164800 (GNU date). */
  expect_shift(&s, 1704067200.0 + 3 * H, "2023-12-31_night", 1704067200.0 - 6 * H, 1704067200.0 + 6 * H);
  expect_shift(&s, 1709164800.0 + 20 * H, "2024-02-29_night", 1709164800.0 + 18 * H, 1709164800.0 + 30 * H);
  expect_shift(&s, 1709164800.0 + 30 * H, "2024-03-01_day", 1709164800.0 + 30 * H, 1709164800.0 + 42 * H);
}

Test(shift, a_single_shift_a_day_and_default_names)
{
  use_tz("UTC");
  SFT_Schedule s;
  parse(&s, "07:30", NULL);
  cr_expect_eq(s.count, 1);
  cr_expect_str_eq(s.name[0], "1");
  expect_shift(&s, D5 + 7.5 * H, "2024-03-05_1", D5 + 7.5 * H, D5 + 31.5 * H);
  expect_shift(&s, D5 + 7.5 * H - 1, "2024-03-04_1", D5 - 16.5 * H, D5 + 7.5 * H);
  expect_shift(&s, D5 + 23 * H, "2024-03-05_1", D5 + 7.5 * H, D5 + 31.5 * H);
  parse(&s, "00:00", "");
  expect_shift(&s, D5, "2024-03-05_1", D5, D5 + 24 * H);
  expect_shift(&s, D5 - 0.001, "2024-03-04_1", D5 - 24 * H, D5);
  parse(&s, " 06:00 , 14:30 ", NULL);
  cr_expect_str_eq(s.name[1], "2");
  expect_shift(&s, D5 + 14.5 * H, "2024-03-05_2", D5 + 14.5 * H, D5 + 30 * H);
}

Test(shift, format_writes_back_what_was_parsed)
{
  SFT_Schedule s, again;
  parse(&s, "6:05, 14:00,22:45", "A-1,b2,Night");
  char starts[128], names[256];
  SFT_Format(&s, starts, sizeof starts, names, sizeof names);
  cr_expect_str_eq(starts, "06:05,14:00,22:45");
  cr_expect_str_eq(names, "A-1,b2,Night");
  parse(&again, starts, names);
  cr_expect_eq(memcmp(&again, &s, sizeof s), 0);
}

/* Daylight saving in Berlin: EU summer time starts and ends at 01:00 UTC on
 * the last Sunday of March and of October (Directive 2000/84/EC, art. 2 and 3):
 * 2024-03-31 and 2024-10-27. Needs the tzdata zone file. */
Test(shift, night_shifts_across_daylight_saving_changes_in_berlin)
{
  if (access("/usr/share/zoneinfo/Europe/Berlin", R_OK) != 0)
    cr_skip_test("tzdata is not installed");
  use_tz("Europe/Berlin");
  SFT_Schedule s;
  parse(&s, "06:00,14:00,22:00", "early,late,night");
  /* 2024-03-30 22:00 CET = 21:00Z = 1711832400 (GNU date); the night ends
   * 2024-03-31 06:00 CEST = 04:00Z: 7 hours. */
  double spring = 1711832400.0;
  expect_shift(&s, spring + 3 * H, "2024-03-30_night", spring, spring + 7 * H);
  expect_shift(&s, spring + 7 * H, "2024-03-31_early", spring + 7 * H, spring + 15 * H);
  expect_shift(&s, spring - 1, "2024-03-30_late", spring - 8 * H, spring);
  /* 2024-10-26 22:00 CEST = 20:00Z = 1729972800 (GNU date); the night ends
   * 2024-10-27 06:00 CET = 05:00Z: 9 hours. */
  double autumn = 1729972800.0;
  expect_shift(&s, autumn + 0.5 * H, "2024-10-26_night", autumn, autumn + 9 * H);
  expect_shift(&s, autumn + 5.5 * H, "2024-10-26_night", autumn, autumn + 9 * H); /* the repeated hour */
  expect_shift(&s, autumn + 6.5 * H, "2024-10-26_night", autumn, autumn + 9 * H);
  expect_shift(&s, autumn + 9 * H, "2024-10-27_early", autumn + 9 * H, autumn + 17 * H);
  /* Every other shift of both weeks lasts 8 hours. */
  for (double t = spring - 3 * 24 * H; t < spring + 3 * 24 * H; t += 1800.0) {
    SFT_Shift sh;
    SFT_Find(&s, t, &sh);
    double len = sh.end - sh.start;
    cr_expect(len == (strcmp(sh.label, "2024-03-30_night") == 0 ? 7 * H : 8 * H), "%s lasts %.0f s", sh.label, len);
  }
  for (double t = autumn - 3 * 24 * H; t < autumn + 3 * 24 * H; t += 1800.0) {
    SFT_Shift sh;
    SFT_Find(&s, t, &sh);
    double len = sh.end - sh.start;
    cr_expect(len == (strcmp(sh.label, "2024-10-26_night") == 0 ? 9 * H : 8 * H), "%s lasts %.0f s", sh.label, len);
  }
}

static void expect_refused(const char *starts, const char *names, const char *words)
{
  SFT_Schedule s;
  char err[200] = "";
  cr_expect_eq(SFT_Parse(&s, starts, names, err, sizeof err), -1, "\"%s\" / \"%s\" accepted", starts,
               names ? names : "(null)");
  cr_expect_not_null(strstr(err, words), "\"%s\" / \"%s\": \"%s\" does not say \"%s\"", starts,
                     names ? names : "(null)", err, words);
  cr_expect_null(strchr(err, '\n'));
}

Test(shift, parse_errors)
{
  expect_refused("6am", NULL, "\"6am\" is not a time HH:MM");
  expect_refused("06:00,24:00", NULL, "\"24:00\" is not a time");
  expect_refused("06:60", NULL, "not a time");
  expect_refused("06:00x", NULL, "not a time");
  expect_refused("", NULL, "not a time");
  expect_refused("06:00,,14:00", NULL, "not a time");
  expect_refused("06:00,14:00,", NULL, "not a time");
  expect_refused("14:00,06:00", NULL, "ascending");
  expect_refused("06:00,06:00", NULL, "ascending");
  char many[400] = "";
  for (int i = 0; i <= SFT_MAX; i++) /* one more than allowed */
    snprintf(many + strlen(many), sizeof many - strlen(many), "%s%02d:%02d", i ? "," : "", i / 60, i % 60);
  expect_refused(many, NULL, "at most 32 shifts");
  expect_refused("06:00,14:00,22:00", "early,late", "2 shift names for 3 shift starts");
  expect_refused("06:00,14:00", "a,b,c", "3 shift names for 2 shift starts");
  expect_refused("06:00,14:00", "early,late night", "only letters, digits and '-'");
  expect_refused("06:00,14:00", "early,l/ate", "only letters, digits and '-'");
  expect_refused("06:00,14:00", "early,sp\xc3\xa4t", "only letters, digits and '-'");
  expect_refused("06:00,14:00", "early,", "1 to 23 characters");
  expect_refused("06:00", "abcdefghijklmnopqrstuvwx", "1 to 23 characters");
}
