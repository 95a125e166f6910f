/* test_monitor.c: Criterion tests of the pipeline's batched writing of samples.csv (MON_Options.record_batch_s). */
#include <criterion/criterion.h>
#include <ftw.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "conf.h"
#include "monitor.h"

static char dir[64];
static CNF_Config cfg;

static void setup(void)
{
  snprintf(dir, sizeof dir, "/tmp/gritline-monitor-XXXXXX");
  cr_assert(mkdtemp(dir));
  char err[512];
  cr_assert_eq(CNF_Load(&cfg, DEMO_CONF, err, sizeof err), 0, "%s", err);
}

static int rm_one(const char *path, const struct stat *st, int flag, struct FTW *f)
{
  (void)st, (void)flag, (void)f;
  return remove(path);
}

static void teardown(void) { nftw(dir, rm_one, 8, FTW_DEPTH | FTW_PHYS); }

/* Lines of a file that start with a digit: the sample rows of samples.csv, the
 * rows of passes.csv. */
static int count_rows(const char *path)
{
  FILE *f = fopen(path, "r");
  if (!f)
    return -1;
  char line[4096];
  int n = 0;
  while (fgets(line, sizeof line, f))
    n += line[0] >= '0' && line[0] <= '9';
  fclose(f);
  return n;
}

static int rows(const MON_Monitor *m, const char *name)
{
  char path[1024];
  snprintf(path, sizeof path, "%s/%s", MON_ShiftDir(m), name);
  return count_rows(path);
}

/* A surface grinder at 100 Hz: idle at 1500 W, in contact at 4500 W from
 * 20.0 s to 22.0 s (one pass, depth 0.01 mm), idle again after. */
static SMP_Sample sample(int i)
{
  SMP_Sample s;
  SMP_Clear(&s, NAN);
  s.time = 1796180000.0 + i * 0.01;
  double t = i * 0.01;
  int contact = t >= 20.0 && t < 22.0;
  s.spindle_power_w = contact ? 4500.0 : 1500.0 + (i % 3);
  s.spindle_speed_rpm = 1450.0;
  s.work_speed_mm_min = 9000.0;
  s.infeed_position_mm = t >= 19.0 ? 0.02 : 0.01;
  s.wheel_diameter_mm = 400.0;
  s.dress_count = 0.0;
  return s;
}

TestSuite(monitor, .init = setup, .fini = teardown);

/* Rows are held for 0.2 s of data time, then written in one go; closing
 * writes what is held. */
Test(monitor, batches_rows_for_the_time_given)
{
  char err[512];
  MON_Options o = {dir, 1, 0.2};
  MON_Monitor *m = MON_Create(&cfg, &o, &(MON_Sink){0}, err, sizeof err);
  cr_assert(m, "%s", err);
  for (int i = 0; i < 10; i++) {
    SMP_Sample s = sample(i);
    cr_assert_eq(MON_Feed(m, &s), 0);
  }
  cr_expect_eq(rows(m, "samples.csv"), 0, "0.09 s of rows are held");
  for (int i = 10; i < 21; i++) {
    SMP_Sample s = sample(i);
    cr_assert_eq(MON_Feed(m, &s), 0);
  }
  /* The row at 0.20 s completes the batch begun at 0.00 s. */
  cr_expect_eq(rows(m, "samples.csv"), 21);
  for (int i = 21; i < 30; i++) {
    SMP_Sample s = sample(i);
    cr_assert_eq(MON_Feed(m, &s), 0);
  }
  cr_expect_eq(rows(m, "samples.csv"), 21);
  char path[1024];
  snprintf(path, sizeof path, "%s/samples.csv", MON_ShiftDir(m));
  MON_Destroy(m);
  cr_expect_eq(count_rows(path), 30, "closing writes the held rows");
}

/* A pass line is written only after every row up to the sample that closed
 * the pass: a replay of the recording finds it. */
Test(monitor, pass_line_follows_its_rows)
{
  char err[512];
  MON_Options o = {dir, 1, 0.2};
  MON_Monitor *m = MON_Create(&cfg, &o, &(MON_Sink){0}, err, sizeof err);
  cr_assert(m, "%s", err);
  int passes = 0;
  for (int i = 0; i < 2600 && passes == 0; i++) {
    SMP_Sample s = sample(i);
    cr_assert_eq(MON_Feed(m, &s), 0);
    passes = rows(m, "passes.csv");
    if (passes > 0)
      cr_expect_eq(rows(m, "samples.csv"), i + 1, "the closing sample (%d) and all before it are written", i);
  }
  cr_expect_eq(passes, 1);
  MON_Destroy(m);
}

/* Without batching (record_batch_s 0) every row is written at once. */
Test(monitor, unbatched_writes_each_row)
{
  char err[512];
  MON_Options o = {dir, 1, 0.0};
  MON_Monitor *m = MON_Create(&cfg, &o, &(MON_Sink){0}, err, sizeof err);
  cr_assert(m, "%s", err);
  for (int i = 0; i < 5; i++) {
    SMP_Sample s = sample(i);
    cr_assert_eq(MON_Feed(m, &s), 0);
    cr_expect_eq(rows(m, "samples.csv"), i + 1);
  }
  MON_Destroy(m);
}
