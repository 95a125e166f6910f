/* test_grind.c: the grinding formulas against textbook examples and definitions. */
#include <criterion/criterion.h>
#include <math.h>

#include "grind.h"
#include "units.h"

/* Kalpakjian and Schmid, Manufacturing Engineering and Technology, grinding
 * chapter, worked example "chip dimensions in surface grinding" (from memory):
 * D = 200 mm, d = 0.05 mm, v = 30 m/min, V = 1800 m/min, C = 2 /mm^2, r = 15:
 * l = sqrt(D*d) = 3.2 mm and t = sqrt(4v/(VCr) * sqrt(d/D)) = 0.006 mm. */
Test(grind, kalpakjian_chip_dimensions_example)
{
  double vw = UNT_MPerMinToMmPerS(30.0);
  double vs = 1800.0 / 60.0;
  cr_expect_float_eq(GRD_ContactLength(0.05, 200.0), 3.2, 0.05);
  double t = GRD_MaxChipThickness(vw, vs, 0.05, 200.0, 2.0, 15.0);
  cr_expect_float_eq(t, 0.006, 0.0005, "t = %g mm", t);
  /* The defaults are the example's C and r. */
  GRD_Params p;
  GRD_DefaultParams(&p);
  cr_expect_float_eq(p.grit_density_mm2, 2.0, 0.0);
  cr_expect_float_eq(p.chip_width_ratio, 15.0, 0.0);
}

/* Kalpakjian and Schmid, worked example "forces in surface grinding" (from
 * memory): low-carbon steel, D = 10 in, N = 4000 rpm, w = 1 in, d = 0.002 in,
 * v = 60 in/min, u = 11 hp*min/in^3 from the table: MRR = 0.12 in^3/min, power
 * 1.32 hp, tangential force about 4.2 lb. */
Test(grind, kalpakjian_surface_grinding_force_example)
{
  double b = UNT_InchToMm(1.0), ae = UNT_InchToMm(0.002), vw = UNT_InPerMinToMmPerS(60.0);
  double q = GRD_RemovalRate(b, ae, vw);
  cr_expect_float_eq(q * 60.0 / UNT_MM3_PER_IN3, 0.12, 1e-12);
  double p_w = UNT_HpToW(1.32);
  double u = GRD_SpecificEnergy(p_w, q);
  cr_expect_float_eq(UNT_JPerMm3ToHpMinPerIn3(u), 11.0, 1e-9);
  double vs = UNT_SurfaceSpeed(UNT_InchToMm(10.0), 4000.0);
  double force_lbf = p_w / vs / 4.4482216152605; /* F = P / vs; 1 lbf in N (NIST SP 811) */
  cr_expect_float_eq(force_lbf, 4.2, 0.05, "F = %g lbf", force_lbf);
}

/* Equivalent diameter (Malkin and Guo, Grinding Technology, ch. 2; the usual
 * definition de = ds*dw/(dw +- ds)). */
Test(grind, equivalent_diameter)
{
  cr_expect_float_eq(GRD_EquivalentDiameter(GRD_SURFACE, 250.0, NAN), 250.0, 0.0);
  cr_expect_float_eq(GRD_EquivalentDiameter(GRD_CREEP_FEED, 400.0, NAN), 400.0, 0.0);
  cr_expect_float_eq(GRD_EquivalentDiameter(GRD_EXTERNAL, 400.0, 50.0), 400.0 * 50.0 / 450.0, 1e-12);
  cr_expect_float_eq(GRD_EquivalentDiameter(GRD_PLUNGE, 400.0, 50.0), 400.0 * 50.0 / 450.0, 1e-12);
  cr_expect_float_eq(GRD_EquivalentDiameter(GRD_INTERNAL, 30.0, 50.0), 75.0, 1e-12);
  /* An internal wheel must be smaller than the bore. */
  cr_expect(isnan(GRD_EquivalentDiameter(GRD_INTERNAL, 50.0, 50.0)));
  cr_expect(isnan(GRD_EquivalentDiameter(GRD_INTERNAL, 60.0, 50.0)));
  cr_expect(isnan(GRD_EquivalentDiameter(GRD_EXTERNAL, 400.0, NAN)));
  cr_expect(isnan(GRD_EquivalentDiameter(GRD_SURFACE, 0.0, NAN)));
  /* External de is always below both diameters, internal above both. */
  cr_expect_lt(GRD_EquivalentDiameter(GRD_EXTERNAL, 400.0, 50.0), 50.0);
  cr_expect_gt(GRD_EquivalentDiameter(GRD_INTERNAL, 30.0, 50.0), 50.0);
}

Test(grind, removal_rates_and_chip_thickness)
{
  /* Q' = ae*vw, Q = b*ae*vw, heq = ae*vw/vs (Malkin and Guo, ch. 2). */
  cr_expect_float_eq(GRD_SpecificRemovalRate(0.02, 250.0), 5.0, 1e-12);
  cr_expect_float_eq(GRD_RemovalRate(20.0, 0.02, 250.0), 100.0, 1e-12);
  /* 0.02 mm * 250 mm/s / 30000 mm/s = 0.1667 um */
  cr_expect_float_eq(GRD_EquivalentChipThickness(0.02, 250.0, 30.0) * 1e3, 0.16667, 1e-5);
  cr_expect_float_eq(GRD_SpecificEnergy(2000.0, 100.0), 20.0, 1e-12);
}

/* The aggressiveness number Aggr = 1e6 (vw/vs) sqrt(ae/de). The shop form with
 * vw in mm/min and vs in m/s carries the factor 16.7 (common practice, no
 * source; exactly 1e6/60000 = 16.67). */
Test(grind, aggressiveness_forms_agree)
{
  double vw_mm_min = 12000.0, vs = 32.0, ae = 0.015, de = 300.0;
  double a = GRD_Aggressiveness(UNT_MmPerMinToMmPerS(vw_mm_min), vs, ae, de);
  cr_expect_float_eq(GRD_AggressivenessShop(vw_mm_min, vs, ae, de), a, a * 1e-12);
  cr_expect_float_eq(16.7 * vw_mm_min / vs * sqrt(ae / de), a, a * 0.003, "the rounded 16.7 is within 0.2 %%");
  double imp = GRD_AggressivenessImperial(UNT_MmPerSToInPerMin(UNT_MmPerMinToMmPerS(vw_mm_min)),
                                          UNT_MPerSToFtPerMin(vs), UNT_MmToInch(ae), UNT_MmToInch(de));
  cr_expect_float_eq(imp, a, a * 1e-12);
  /* Dimensionless: the same with vw and vs both in m/s. */
  cr_expect_float_eq(1e6 * (vw_mm_min / 60000.0 / vs) * sqrt(ae / de), a, a * 1e-12);
}

/* Aggressiveness numbers run from about 5 (fine finishing, rubbing) to about 50
 * (heavy stock removal), and about 15 to 20 suits a ceramic-grit wheel (common
 * practice, no source). Typical surface-grinding settings land in that range. */
Test(grind, typical_settings_fall_in_the_working_range)
{
  struct {
    double vw_mm_min, vs, ae, de;
  } jobs[] = {
      {6000.0, 30.0, 0.005, 250.0}, /* finishing */
      {9000.0, 30.0, 0.015, 250.0}, /* roughing */
      {200.0, 30.0, 3.0, 400.0},    /* creep-feed */
  };
  for (unsigned i = 0; i < 3; i++) {
    double a = GRD_AggressivenessShop(jobs[i].vw_mm_min, jobs[i].vs, jobs[i].ae, jobs[i].de);
    cr_expect(a > 5.0 && a < 50.0, "job %u: Aggr %.1f", i, a);
  }
}

/* Malkin's burn threshold for plain carbon steels (Malkin and Guo, Grinding
 * Technology, 2nd ed., ch. 6; constants from memory):
 * u* = 6.2 + 1.76 * de^(1/4) * ae^(-3/4) * vw^(-1/2), J/mm^3, mm, mm/s. */
Test(grind, malkin_burn_threshold)
{
  GRD_Params p;
  GRD_DefaultParams(&p);
  cr_expect_float_eq(p.burn_a_j_mm3, 6.2, 0.0);
  cr_expect_float_eq(p.burn_b, 1.76, 0.0);
  double de = 200.0, ae = 0.02, vw = 200.0;
  double expect = 6.2 + 1.76 * pow(200.0, 0.25) / (pow(0.02, 0.75) * sqrt(200.0));
  cr_expect_float_eq(GRD_BurnThreshold(&p, de, ae, vw), expect, 1e-12);
  cr_expect_float_eq(expect, 15.0, 0.2, "order of magnitude of the published curves: %g", expect);
  /* Deeper or faster cuts carry more heat away with the chips: the threshold falls toward A. */
  cr_expect_lt(GRD_BurnThreshold(&p, de, 0.05, vw), GRD_BurnThreshold(&p, de, 0.02, vw));
  cr_expect_lt(GRD_BurnThreshold(&p, de, ae, 400.0), GRD_BurnThreshold(&p, de, ae, 200.0));
  cr_expect_float_eq(GRD_BurnThreshold(&p, de, 1e6, 1e6), 6.2, 1e-3);
}

Test(grind, inverse_problems_round_trip)
{
  double vs = 33.0, de = 280.0;
  double vw = GRD_WorkSpeedForAggressiveness(18.0, vs, 0.012, de);
  cr_expect_float_eq(GRD_Aggressiveness(vw, vs, 0.012, de), 18.0, 1e-9);
  double ae = GRD_DepthForAggressiveness(18.0, vs, 250.0, de);
  cr_expect_float_eq(GRD_Aggressiveness(250.0, vs, ae, de), 18.0, 1e-9);
  /* Halving the depth needs sqrt(2) more work speed for the same Aggr. */
  cr_expect_float_eq(GRD_WorkSpeedForAggressiveness(18.0, vs, 0.006, de) / vw, sqrt(2.0), 1e-12);
}

Test(grind, plunge_depth_per_revolution)
{
  /* One work revolution takes pi*dw/vw seconds; the wheel advances vf in it. */
  double vf = 0.01, dw = 40.0, vw = 500.0;
  cr_expect_float_eq(GRD_PlungeDepthPerRevolution(vf, dw, vw), vf * (M_PI * dw / vw), 1e-15);
}

Test(grind, compute_and_names)
{
  GRD_Params p;
  GRD_DefaultParams(&p);
  GRD_Conditions c = {GRD_INTERNAL, 50.0, 40.0, 10.0, 0.01, 300.0, 30.0};
  GRD_Figures f;
  const char *why = NULL;
  cr_expect_eq(GRD_Compute(&c, &p, &f, &why), -1);
  cr_expect_not_null(why);
  c.ds_mm = 30.0;
  cr_expect_eq(GRD_Compute(&c, &p, &f, &why), 0);
  cr_expect_float_eq(f.de_mm, 30.0 * 40.0 / 10.0, 1e-12);
  cr_expect_float_eq(f.aggr, GRD_Aggressiveness(300.0, 30.0, 0.01, f.de_mm), 1e-12);
  GRD_Geometry g;
  for (int i = 0; i < GRD_GEOMETRY_COUNT; i++) {
    cr_expect_eq(GRD_GeometryFromName(GRD_GeometryName((GRD_Geometry)i), &g), 0);
    cr_expect_eq(g, (GRD_Geometry)i);
  }
  cr_expect_eq(GRD_GeometryFromName("cylindrical", &g), -1);
}
