/* test_scenario.c: unit tests of the strict scenario parser: each mistake names file:line. */
#include "scenario.h"
#include "simtest.h"

#include <criterion/criterion.h>
#include <stdio.h>
#include <string.h>

/* Parses text; expects failure with a message starting "t.ini:LINE: " and containing `what`. */
static void expect_error(const char *text, int line, const char *what)
{
  SIM_Scenario s;
  char err[600];
  cr_assert(simtest_parse(text, &s, err, sizeof err) != 0, "accepted: %s", text);
  char prefix[32];
  snprintf(prefix, sizeof prefix, "t.ini:%d: ", line);
  cr_assert(strncmp(err, prefix, strlen(prefix)) == 0, "want \"%s...\", got \"%s\"", prefix, err);
  cr_assert(strstr(err, what) != NULL, "want \"%s\" in \"%s\"", what, err);
  cr_assert(strchr(err, '\n') == NULL, "one line: %s", err);
}

Test(parser, shipped_scenarios_load)
{
  const char *names[] = { "demo.ini", "stable.ini", "dulling.ini", "aggressive.ini" };
  for (size_t i = 0; i < sizeof names / sizeof names[0]; i++) {
    SIM_Scenario s;
    simtest_load(names[i], &s);
    cr_assert_str_eq(s.machine.name, "sg4");
    cr_assert_str_eq(s.machine.shop, "Alder Street Works");
  }
}

Test(parser, demo_values)
{
  SIM_Scenario s;
  simtest_load("demo.ini", &s);
  cr_assert_str_eq(s.wheel.name, "cx60-vitrified");
  cr_assert_eq(s.wheel.diameter_mm, 400.0);
  cr_assert_eq(s.job.table_speed_mm_min, 2400.0);
  cr_assert_eq(s.schedule.parts, 48);
  cr_assert_eq(s.schedule.n_dress_at, 1);
  cr_assert_eq(s.schedule.dress_at[0], 24);
  cr_assert_eq(s.schedule.dress_on_coil, 0);
  cr_assert_eq(s.noise.seed, 4u);
}

Test(parser, empty_text_gives_the_defaults)
{
  SIM_Scenario s, d;
  char err[600];
  cr_assert(simtest_parse("", &s, err, sizeof err) == 0, "%s", err);
  SIM_ScenarioDefaults(&d);
  cr_assert(memcmp(&s, &d, sizeof s) == 0);
  cr_assert(SIM_ScenarioCheck(&d, err, sizeof err) == 0, "defaults inconsistent: %s", err);
}

Test(parser, all_value_kinds)
{
  SIM_Scenario s;
  char err[600];
  const char *text = "; comment\n# comment too\n[schedule]\n"
                     "epoch = 2024-03-04T06:00:00Z\n"
                     "dress_at_parts = 3, 7 12\n"
                     "table_speed_at = 5:12000, 9:9000\n"
                     "rough_depth_at = 2:0.02\n"
                     "[noise]\nseed = 18446744073709551615\n"
                     "[faults]\nfault = nan@60+5\nfault = exception:6\n"
                     "[machine]\nname = sg4 ; inline comment after a space\n";
  cr_assert(simtest_parse(text, &s, err, sizeof err) == 0, "%s", err);
  cr_assert_eq(s.schedule.has_epoch, 1);
  cr_assert_eq(s.schedule.epoch_ms, 1709532000000ll);
  cr_assert_eq(s.schedule.n_dress_at, 3);
  cr_assert_eq(s.schedule.dress_at[2], 12);
  cr_assert_eq(s.schedule.n_table_speed, 2);
  cr_assert_eq(s.schedule.table_speed[1].part, 9);
  cr_assert_eq(s.schedule.table_speed[1].value, 9000.0);
  cr_assert_eq(s.noise.seed, 18446744073709551615ull);
  cr_assert_eq(s.n_faults, 2);
  cr_assert_eq(s.faults[0].kind, SIM_FAULT_NAN);
  cr_assert_eq(s.faults[0].start_s, 60.0);
  cr_assert_eq(s.faults[1].arg, 6);
  cr_assert_str_eq(s.machine.name, "sg4");
}

Test(parser, unknown_section)
{
  expect_error("[machine]\nname = a\n\n[wheels]\n", 4, "unknown section [wheels]");
}

Test(parser, unknown_empty_section_at_end)
{
  expect_error("[job]\n[extra]\n", 2, "unknown section [extra]");
}

Test(parser, unknown_key)
{
  expect_error("[wheel]\ndiameter_mm = 300\ndiameter = 300\n", 3, "unknown key \"diameter\"");
}

Test(parser, key_before_section)
{
  expect_error("name = x\n", 1, "before any [section]");
}

Test(parser, bad_number)
{
  expect_error("[wheel]\ndiameter_mm = big\n", 2,
               "diameter_mm: expected a number in (0, 5000], got \"big\"");
}

Test(parser, out_of_range)
{
  expect_error("[wheel]\n\nsharp_wear_flat = 1.5\n", 3,
               "sharp_wear_flat: expected a number in (0, 1)");
}

Test(parser, negative)
{
  expect_error("[job]\nload_s = -1\n", 2, "expected a number >= 0");
}

Test(parser, not_an_integer)
{
  expect_error("[job]\nrough_passes = 2.5\n", 2, "expected an integer");
}

Test(parser, inline_comment_without_space)
{
  expect_error("[job]\nlength_mm = 200;long\n", 2, "needs a space before ';'");
}

Test(parser, hash_comment_inline)
{
  expect_error("[job]\nlength_mm = 200 # mm\n", 2, "'#' starts a comment");
}

Test(parser, repeated_key)
{
  expect_error("[job]\nlength_mm = 200\nwidth_mm = 20\nlength_mm = 300\n", 4,
               "repeated (first set on line 2)");
}

Test(parser, syntax_error)
{
  expect_error("[job]\nlength_mm 200\n", 2, "syntax error");
}

Test(parser, unclosed_section)
{
  expect_error("[job\n", 1, "syntax error");
}

Test(parser, long_line)
{
  char text[600];
  snprintf(text, sizeof text, "[machine]\nname = sg4\n; %0300d\n", 0);
  expect_error(text, 3, "line is 302 characters long");
}

Test(parser, long_value_line)
{
  char text[600];
  snprintf(text, sizeof text, "[schedule]\ndress_at_parts = 1");
  for (int i = 2; i < 60; i++)
    snprintf(text + strlen(text), sizeof text - strlen(text), ", %d", i);
  strcat(text, "\n");
  expect_error(text, 2, "characters long, over the limit");
}

Test(parser, indented_line)
{
  expect_error("[job]\nlength_mm = 200\n  width_mm = 20\n", 3, "indented line");
}

Test(parser, bad_time)
{
  expect_error("[schedule]\nepoch = yesterday\n", 2, "ISO 8601");
}

Test(parser, bad_list)
{
  expect_error("[schedule]\ndress_at_parts = 5, 3\n", 2, "must increase");
}

Test(parser, bad_part_value)
{
  expect_error("[schedule]\ntable_speed_at = 5=9000\n", 2, "PART:VALUE");
}

Test(parser, bad_fault)
{
  expect_error("[faults]\nfault = explode@5\n", 2, "unknown kind \"explode\"");
}

Test(parser, empty_value)
{
  expect_error("[wheel]\nname =\n", 2, "expected a name");
}

Test(parser, cross_check_points_at_the_key)
{
  /* 3000 1/min on a 400 mm wheel is 62.8 m/s: over the marked 35 m/s. */
  expect_error("[wheel]\ndiameter_mm = 400\n[machine]\n\nspindle_rpm = 3000\n", 5,
               "over the wheel's marked maximum 35 m/s");
  expect_error("[job]\nwidth_mm = 20\n[wheel]\nwidth_mm = 10\n", 2, "wider than the wheel");
  /* The first key involved is not in the file: the line of the other one. */
  expect_error("[machine]\nname = sg4\n[wheel]\nwidth_mm = 10\n", 4,
               "[job] width_mm: grinding width 30 mm");
  /* None in the file: the section of one of them. */
  expect_error("[noise]\nseed = 3\n[job]\nrough_passes = 0\n[job]\nfinish_passes = 0\n", 4,
               "at least one");
  expect_error("[wheel]\nmin_diameter_mm = 450\n", 2, "not below the wheel diameter");
  expect_error("[job]\ngeometry = plunge\n", 2, "not simulated yet");
  expect_error("[job]\noverrun_mm = 1\nrough_depth_mm = 0.5\n", 2, "half the longest contact");
  expect_error("[job]\nrough_passes = 0\nfinish_passes = 0\n", 2, "at least one");
}

Test(parser, first_error_wins)
{
  expect_error("[job]\nlength_mm = x\n[nope]\nfoo = 1\n", 2, "length_mm");
}
