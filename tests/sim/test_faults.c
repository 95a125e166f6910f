/* test_faults.c: unit tests of fault specifications and of the faults in force over time. */
#include "faults.h"

#include <criterion/criterion.h>
#include <string.h>

Test(spec, forms)
{
  SIM_FaultSpec f;
  char err[300];
  cr_assert(SIM_FaultParse("silent", &f, err, sizeof err) == 0, "%s", err);
  cr_assert_eq(f.kind, SIM_FAULT_SILENT);
  cr_assert_eq(f.relative, 1);
  cr_assert_eq(f.start_s, 0.0);
  cr_assert_lt(f.duration_s, 0.0);

  cr_assert(SIM_FaultParse("exception:6@3600+60", &f, err, sizeof err) == 0, "%s", err);
  cr_assert_eq(f.kind, SIM_FAULT_EXCEPTION);
  cr_assert_eq(f.arg, 6);
  cr_assert_eq(f.relative, 0);
  cr_assert_eq(f.start_s, 3600.0);
  cr_assert_eq(f.duration_s, 60.0);

  cr_assert(SIM_FaultParse("exception", &f, err, sizeof err) == 0);
  cr_assert_eq(f.arg, 4, "default: server device failure");

  cr_assert(SIM_FaultParse("nan@+5s+2m", &f, err, sizeof err) == 0, "%s", err);
  cr_assert_eq(f.relative, 1);
  cr_assert_eq(f.start_s, 5.0);
  cr_assert_eq(f.duration_s, 120.0);

  cr_assert(SIM_FaultParse("freeze@1.5h", &f, err, sizeof err) == 0, "%s", err);
  cr_assert_eq(f.start_s, 5400.0);
  const char *names[] = { "drop", "silent", "exception", "garbage", "freeze", "nan", "inf", "huge" };
  for (int k = 0; k < SIM_FAULT_KIND_COUNT; k++) {
    cr_assert(SIM_FaultParse(names[k], &f, err, sizeof err) == 0);
    cr_assert_eq((int)f.kind, k);
    cr_assert_str_eq(SIM_FaultName(f.kind), names[k]);
  }
}

Test(spec, mistakes)
{
  SIM_FaultSpec f;
  char err[300];
  cr_assert(SIM_FaultParse("boom", &f, err, sizeof err) != 0);
  cr_assert(strstr(err, "unknown kind") != NULL, "%s", err);
  cr_assert(SIM_FaultParse("exception:0", &f, err, sizeof err) != 0);
  cr_assert(SIM_FaultParse("exception:x", &f, err, sizeof err) != 0);
  cr_assert(SIM_FaultParse("nan:3", &f, err, sizeof err) != 0);
  cr_assert(strstr(err, "takes no argument") != NULL, "%s", err);
  cr_assert(SIM_FaultParse("nan@soon", &f, err, sizeof err) != 0);
  cr_assert(SIM_FaultParse("nan@5+0", &f, err, sizeof err) != 0);
  cr_assert(SIM_FaultParse("nan@5+-3", &f, err, sizeof err) != 0);
  cr_assert(SIM_FaultParse("nan@5+3x", &f, err, sizeof err) != 0);
}

Test(set, windows_and_origins)
{
  SIM_FaultSet set;
  SIM_FaultSetInit(&set);
  SIM_FaultSpec f;
  char err[300];
  SIM_FaultParse("silent@100+10", &f, err, sizeof err); /* absolute: 100..110 */
  SIM_FaultSetAdd(&set, &f, 50.0, 0);
  SIM_FaultParse("nan@+5+5", &f, err, sizeof err); /* relative to origin 50: 55..60 */
  SIM_FaultSetAdd(&set, &f, 50.0, 0);
  SIM_FaultParse("exception:3@200", &f, err, sizeof err); /* 200.. for ever */
  SIM_FaultSetAdd(&set, &f, 50.0, 0);
  SIM_FaultState st;
  SIM_FaultSetEval(&set, 54.9, &st);
  cr_assert_eq(st.active, 0u);
  SIM_FaultSetEval(&set, 55.0, &st);
  cr_assert_eq(st.active, 1u << SIM_FAULT_NAN);
  SIM_FaultSetEval(&set, 60.0, &st);
  cr_assert_eq(st.active, 0u);
  SIM_FaultSetEval(&set, 105.0, &st);
  cr_assert_eq(st.active, 1u << SIM_FAULT_SILENT);
  SIM_FaultSetEval(&set, 1e9, &st);
  cr_assert_eq(st.active, 1u << SIM_FAULT_EXCEPTION);
  cr_assert_eq(st.exception_code, 3);
}

Test(set, drop_without_duration_fires_once)
{
  SIM_FaultSet set;
  SIM_FaultSetInit(&set);
  SIM_FaultSpec f;
  char err[300];
  SIM_FaultParse("drop@10", &f, err, sizeof err);
  SIM_FaultSetAdd(&set, &f, 0.0, 0);
  SIM_FaultParse("drop@20+5", &f, err, sizeof err);
  SIM_FaultSetAdd(&set, &f, 0.0, 0);
  SIM_FaultState st;
  SIM_FaultSetEval(&set, 9.0, &st);
  cr_assert_eq(st.drop_once, 0);
  SIM_FaultSetEval(&set, 11.0, &st);
  cr_assert_eq(st.drop_once, 1);
  cr_assert_eq(st.active, 0u);
  SIM_FaultSetEval(&set, 12.0, &st);
  cr_assert_eq(st.drop_once, 0);
  SIM_FaultSetEval(&set, 22.0, &st);
  cr_assert_eq(st.active, 1u << SIM_FAULT_DROP);
  SIM_FaultSetEval(&set, 25.0, &st);
  cr_assert_eq(st.active, 0u);
}

Test(set, control_text_replaces_its_group)
{
  SIM_FaultSet set;
  SIM_FaultSetInit(&set);
  SIM_FaultSpec f;
  char err[300];
  SIM_FaultParse("inf@1000", &f, err, sizeof err);
  SIM_FaultSetAdd(&set, &f, 0.0, 0);
  cr_assert(SIM_FaultSetLoadControl(&set, "# runtime\n garbage \n\nhuge@+10+1 # soon\n", 500.0, err,
                                    sizeof err) == 0, "%s", err);
  cr_assert_eq(set.count, 3);
  SIM_FaultState st;
  SIM_FaultSetEval(&set, 505.0, &st);
  cr_assert_eq(st.active, 1u << SIM_FAULT_GARBAGE);
  SIM_FaultSetEval(&set, 510.5, &st);
  cr_assert_eq(st.active, (1u << SIM_FAULT_GARBAGE) | (1u << SIM_FAULT_HUGE));
  cr_assert(SIM_FaultSetLoadControl(&set, "", 600.0, err, sizeof err) == 0);
  cr_assert_eq(set.count, 1, "the fixed fault stays");
  cr_assert(SIM_FaultSetLoadControl(&set, "nan\nwrong\n", 600.0, err, sizeof err) != 0);
  cr_assert(strncmp(err, "line 2: ", 8) == 0, "%s", err);
  cr_assert_eq(set.count, 1, "a bad control file adds nothing");
}
