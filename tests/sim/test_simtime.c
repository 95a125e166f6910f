/* test_simtime.c: unit tests of the sim clock and of the time and duration formats. */
#include "simtime.h"

#include <criterion/criterion.h>
#include <string.h>

Test(time, formats)
{
  int64_t ms;
  /* 2024-03-04T06:00:00Z is 1709532000 (date -u -d 2024-03-04T06:00:00Z +%s). */
  cr_assert(SIM_ParseTime("2024-03-04T06:00:00Z", &ms) == 0);
  cr_assert_eq(ms, 1709532000000ll);
  cr_assert(SIM_ParseTime("2024-03-04 07:00:00+01:00", &ms) == 0);
  cr_assert_eq(ms, 1709532000000ll);
  cr_assert(SIM_ParseTime("2024-03-04T05:30:00.250-0030", &ms) == 0);
  cr_assert_eq(ms, 1709532000250ll);
  cr_assert(SIM_ParseTime("2024-03-04T06:00", &ms) == 0, "seconds optional, no zone = UTC");
  cr_assert_eq(ms, 1709532000000ll);
  cr_assert(SIM_ParseTime("2024-03-04", &ms) == 0);
  cr_assert_eq(ms, 1709510400000ll);
  cr_assert(SIM_ParseTime("1709532000.5", &ms) == 0);
  cr_assert_eq(ms, 1709532000500ll);
  cr_assert(SIM_ParseTime("2024-02-30T00:00:00Z", &ms) != 0);
  cr_assert(SIM_ParseTime("2024-03-04T25:00:00Z", &ms) != 0);
  cr_assert(SIM_ParseTime("2024-03-04T06:00:00Q", &ms) != 0);
  cr_assert(SIM_ParseTime("soon", &ms) != 0);
  cr_assert(SIM_ParseTime("-5", &ms) != 0);
  cr_assert(SIM_ParseTime("", &ms) != 0);
}

Test(time, durations)
{
  double s;
  cr_assert(SIM_ParseDuration("90", &s) == 0 && s == 90.0);
  cr_assert(SIM_ParseDuration("1.5h", &s) == 0 && s == 5400.0);
  cr_assert(SIM_ParseDuration("2m", &s) == 0 && s == 120.0);
  cr_assert(SIM_ParseDuration("500ms", &s) == 0 && s == 0.5);
  cr_assert(SIM_ParseDuration("7d", &s) == 0 && s == 604800.0);
  cr_assert(SIM_ParseDuration("3s", &s) == 0 && s == 3.0);
  cr_assert(SIM_ParseDuration("-1", &s) != 0);
  cr_assert(SIM_ParseDuration("5y", &s) != 0);
  cr_assert(SIM_ParseDuration("", &s) != 0);
}

Test(clock, sim_time_from_real_time)
{
  const int64_t epoch = 1709532000000ll;
  /* At the epoch both clocks agree; after it sim time runs `speed` times faster. */
  cr_assert_eq(SIM_SimTimeMs(epoch, 60.0, epoch * 1000000), epoch);
  cr_assert_eq(SIM_SimTimeMs(epoch, 60.0, (epoch + 1000) * 1000000), epoch + 60000);
  cr_assert_eq(SIM_SimTimeMs(epoch, 1.0, (epoch + 1234) * 1000000 + 400000), epoch + 1234);
  cr_assert_eq(SIM_SimTimeMs(epoch, 0.5, (epoch + 10000) * 1000000), epoch + 5000);
  /* A restart with the same epoch lands on the same sim time. */
  int64_t real = (epoch + 3600 * 1000) * 1000000;
  cr_assert_eq(SIM_SimTimeMs(epoch, 60.0, real), SIM_SimTimeMs(epoch, 60.0, real));
  char buf[40];
  cr_assert_str_eq(SIM_FormatTime(epoch + 7, buf, sizeof buf), "2024-03-04T06:00:00.007Z");
}
