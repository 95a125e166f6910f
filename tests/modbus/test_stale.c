/* test_stale.c: Criterion tests of frozen-value detection (drivers/stale.c). */
#include <criterion/criterion.h>

#include "stale.h"

Test(stale, frozen_longer_than_limit)
{
  STL_Tracker t;
  double limits[3] = {10.0, 0.0, 2.0};
  STL_Init(&t, 3, limits);
  uint64_t raw[3] = {5, 5, 5};
  STL_Update(&t, 7u, raw, 100.0);
  cr_expect_eq(STL_Stale(&t, 100.0), 0);
  STL_Update(&t, 7u, raw, 102.0);
  cr_expect_eq(STL_Stale(&t, 102.0), 0); /* exactly the limit: not yet "longer than" */
  STL_Update(&t, 7u, raw, 102.5);
  cr_expect_eq(STL_Stale(&t, 102.5), 1u << 2);
  STL_Update(&t, 7u, raw, 110.5);
  cr_expect_eq(STL_Stale(&t, 110.5), (1u << 0) | (1u << 2)); /* channel 1: limit 0 = off */
}

Test(stale, a_change_restarts_the_clock)
{
  STL_Tracker t;
  double limits[1] = {5.0};
  STL_Init(&t, 1, limits);
  uint64_t raw[1] = {1};
  STL_Update(&t, 1u, raw, 0.0);
  STL_Update(&t, 1u, raw, 6.0);
  cr_expect_eq(STL_Stale(&t, 6.0), 1u);
  raw[0] = 2; /* a single changed bit is a change */
  STL_Update(&t, 1u, raw, 7.0);
  cr_expect_eq(STL_Stale(&t, 7.0), 0);
  cr_expect_eq(STL_Stale(&t, 12.0), 0);
  cr_expect_eq(STL_Stale(&t, 12.5), 1u);
}

Test(stale, a_missing_read_is_not_frozen_and_restarts_observation)
{
  STL_Tracker t;
  double limits[2] = {5.0, 5.0};
  STL_Init(&t, 2, limits);
  uint64_t raw[2] = {9, 9};
  STL_Update(&t, 3u, raw, 0.0);
  STL_Update(&t, 1u, raw, 10.0); /* channel 1 not read (exception, link down) */
  cr_expect_eq(STL_Stale(&t, 10.0), 1u);
  STL_Update(&t, 0u, raw, 11.0); /* nothing read at all */
  cr_expect_eq(STL_Stale(&t, 11.0), 0);
  STL_Update(&t, 3u, raw, 12.0); /* back with the same bits: a new observation */
  cr_expect_eq(STL_Stale(&t, 12.0), 0);
  cr_expect_eq(STL_Stale(&t, 17.5), 3u);
}

Test(stale, channel_count_is_bounded)
{
  STL_Tracker t;
  STL_Init(&t, 100, NULL);
  cr_expect_eq(t.n, STL_MAX_CHANNELS);
  cr_expect_eq(STL_Stale(&t, 1e9), 0); /* no limits given: never stale */
}
