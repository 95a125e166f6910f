/* test_units.c: unit conversions against their exact definitions. */
#include <criterion/criterion.h>
#include <math.h>

#include "units.h"

/* NIST SP 811 (2008), Appendix B.8/B.9: 1 in = 2.54 cm exactly, 1 ft = 0.3048 m
 * exactly, 1 hp (550 ft*lbf/s) = 745.6999 W (the factor is 745.699 871 582 270 22). */
Test(units, nist_sp811_definitions)
{
  cr_expect_float_eq(UNT_InchToMm(1.0), 25.4, 1e-12);
  cr_expect_float_eq(UNT_MmToInch(25.4), 1.0, 1e-12);
  cr_expect_float_eq(UNT_FtPerMinToMPerS(1.0) * 60.0, 0.3048, 1e-12);
  cr_expect_float_eq(UNT_HpToW(1.0), 745.6999, 1e-4);
  /* 1 hp = 550 ft*lbf/s with 1 lbf = 4.448 221 615 260 5 N (NIST SP 811, exact). */
  cr_expect_float_eq(UNT_HpToW(1.0), 550.0 * 0.3048 * 4.4482216152605, 1e-9);
}

Test(units, round_trips)
{
  double v[] = {0.001, 1.0, 33.3, 6500.0, 123456.0};
  for (unsigned i = 0; i < sizeof v / sizeof v[0]; i++) {
    cr_expect_float_eq(UNT_MmPerSToMmPerMin(UNT_MmPerMinToMmPerS(v[i])), v[i], v[i] * 1e-14);
    cr_expect_float_eq(UNT_FtPerMinToMPerS(UNT_MPerSToFtPerMin(v[i])), v[i], v[i] * 1e-14);
    cr_expect_float_eq(UNT_MmPerSToInPerMin(UNT_InPerMinToMmPerS(v[i])), v[i], v[i] * 1e-14);
    cr_expect_float_eq(UNT_JPerMm3ToHpMinPerIn3(UNT_HpMinPerIn3ToJPerMm3(v[i])), v[i], v[i] * 1e-14);
    cr_expect_float_eq(UNT_WToHp(UNT_HpToW(v[i])), v[i], v[i] * 1e-14);
  }
  cr_expect_float_eq(UNT_MPerMinToMmPerS(30.0), 500.0, 1e-12);
}

/* Specific energy: 1 hp*min/in^3 = 745.7 W * 60 s / 16 387.064 mm^3 = 2.7303 J/mm^3. */
Test(units, specific_energy_factor)
{
  cr_expect_float_eq(UNT_HpMinPerIn3ToJPerMm3(1.0), 745.69987158227022 * 60.0 / 16387.064, 1e-12);
  cr_expect_float_eq(UNT_HpMinPerIn3ToJPerMm3(1.0), 2.7303, 1e-4);
}

/* Kalpakjian and Schmid, Manufacturing Engineering and Technology, table
 * "Approximate specific-energy requirements for surface grinding" (values from
 * memory): each material's range in hp*min/in^3 and in W*s/mm^3. The metric
 * column is the imperial one converted and rounded to whole numbers. */
Test(units, kalpakjian_specific_energy_table)
{
  static const struct {
    const char *material;
    double hp_lo, hp_hi, si_lo, si_hi;
  } table[] = {
      {"aluminum", 2.5, 10, 7, 27},        {"cast iron", 4.5, 22, 12, 60},
      {"copper", 4.5, 11, 12, 30},         {"hardened steel", 9, 55, 25, 150},
      {"low-carbon steel", 5, 25, 14, 68}, {"nickel alloys", 6, 25, 16, 68},
      {"titanium alloys", 6, 20, 16, 55},  {"tool steels", 6.5, 30, 18, 82},
  };
  for (unsigned i = 0; i < sizeof table / sizeof table[0]; i++) {
    cr_expect_leq(fabs(UNT_HpMinPerIn3ToJPerMm3(table[i].hp_lo) - table[i].si_lo), 0.5, "%s low",
                  table[i].material);
    cr_expect_leq(fabs(UNT_HpMinPerIn3ToJPerMm3(table[i].hp_hi) - table[i].si_hi), 0.5, "%s high",
                  table[i].material);
  }
}

/* vs = pi * ds * n / 60000 [m/s]. Machinery's Handbook gives 5500 to 6500 ft/min
 * as the usual surface speed for vitrified surface-grinding wheels (from memory):
 * a 10-inch wheel at 2500 rpm runs at pi*10*2500/12 = 6545 ft/min, just above. */
Test(units, wheel_surface_speed_and_its_inverse)
{
  double vs = UNT_SurfaceSpeed(254.0, 2500.0);
  cr_expect_float_eq(UNT_MPerSToFtPerMin(vs), M_PI * 10.0 * 2500.0 / 12.0, 1e-9);
  cr_expect_float_eq(UNT_SurfaceSpeed(200.0, 3000.0), 31.41592653589793, 1e-12);
  /* A 200 mm wheel marked 35 m/s may turn at most 35*60000/(pi*200) = 3342 rpm. */
  cr_expect_float_eq(UNT_SpindleSpeedFor(200.0, 35.0), 3342.253804929802, 1e-9);
  /* As the wheel wears down, the allowed rpm rises, the surface speed limit does not. */
  cr_expect_gt(UNT_SpindleSpeedFor(180.0, 35.0), UNT_SpindleSpeedFor(200.0, 35.0));
  cr_expect_float_eq(UNT_SurfaceSpeed(180.0, UNT_SpindleSpeedFor(180.0, 35.0)), 35.0, 1e-12);
}
