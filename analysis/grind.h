/* grind.h: the grinding formulas (kinematics, energy, burn threshold). Pure. */
#ifndef GRITLINE_GRIND_H
#define GRITLINE_GRIND_H

/* Units throughout: lengths and diameters in mm, work speed vw in mm/s, wheel
 * surface speed vs in m/s, power in W, energy in J, specific energy in J/mm^3. */

typedef enum GRD_Geometry {
  GRD_SURFACE = 0,   /* reciprocating surface grinding, de = ds */
  GRD_CREEP_FEED,    /* creep-feed surface grinding, de = ds */
  GRD_EXTERNAL,      /* external cylindrical traverse grinding */
  GRD_INTERNAL,      /* internal cylindrical traverse grinding */
  GRD_PLUNGE,        /* external cylindrical plunge grinding */
  GRD_GEOMETRY_COUNT
} GRD_Geometry;

/* "surface", "creep-feed", "external", "internal", "plunge". */
const char *GRD_GeometryName(GRD_Geometry g);
/* Returns 0 and sets *g, or -1 for an unknown name. */
int GRD_GeometryFromName(const char *name, GRD_Geometry *g);
/* True for the geometries that need a workpiece diameter. */
int GRD_GeometryIsCylindrical(GRD_Geometry g);

/* Model constants a user may change. */
typedef struct GRD_Params {
  double grit_density_mm2;  /* C: active cutting points per mm^2 of wheel surface */
  double chip_width_ratio;  /* r: chip width / chip thickness */
  double burn_a_j_mm3;      /* A of Malkin's burn threshold, J/mm^3 */
  double burn_b;            /* B of Malkin's burn threshold, J*s^(1/2)/mm^(5/2) (mm, mm/s units) */
} GRD_Params;

/* Defaults. C = 2 /mm^2 and r = 15 are the values of the worked chip-thickness
 * example in Kalpakjian and Schmid, Manufacturing Engineering and Technology,
 * grinding chapter (C between about 0.1 and 10 /mm^2, r between 10 and 20);
 * A = 6.2 J/mm^3 and B = 1.76 are Malkin's constants for plain carbon steels
 * (Malkin and Guo, Grinding Technology, 2nd ed., 2008, ch. 6). Values from memory. */
void GRD_DefaultParams(GRD_Params *p);

/* Equivalent wheel diameter de [mm] from wheel ds [mm] and workpiece dw [mm]:
 * surface and creep-feed: ds; external and plunge: ds*dw/(dw+ds);
 * internal: ds*dw/(dw-ds). Returns NAN when the inputs are not positive or,
 * internal, when dw <= ds. */
double GRD_EquivalentDiameter(GRD_Geometry g, double ds_mm, double dw_mm);

/* Geometric contact length lg = sqrt(ae*de) [mm]. */
double GRD_ContactLength(double ae_mm, double de_mm);
/* Specific removal rate Q' = ae*vw [mm^2/s]. */
double GRD_SpecificRemovalRate(double ae_mm, double vw_mm_s);
/* Removal rate Q = b*ae*vw [mm^3/s]. */
double GRD_RemovalRate(double b_mm, double ae_mm, double vw_mm_s);
/* Equivalent chip thickness heq = ae*vw/vs [mm]. */
double GRD_EquivalentChipThickness(double ae_mm, double vw_mm_s, double vs_m_s);

/* Aggressiveness number Aggr = 1e6 * (vw/vs) * sqrt(ae/de), vw and vs in the
 * same unit (here vw mm/s, vs m/s, converted inside). Dimensionless. */
double GRD_Aggressiveness(double vw_mm_s, double vs_m_s, double ae_mm, double de_mm);
/* Shop form: 1e6/60000 (the 16.7 of the shop) * vw[mm/min] / vs[m/s] * sqrt(ae/de). */
double GRD_AggressivenessShop(double vw_mm_min, double vs_m_s, double ae_mm, double de_mm);
/* Imperial form: 1e6/12 * vw[in/min] / vs[ft/min] * sqrt(ae/de), ae and de in inch. */
double GRD_AggressivenessImperial(double vw_in_min, double vs_ft_min, double ae_in, double de_in);

/* Maximum uncut chip thickness [mm] (Malkin; Kalpakjian and Schmid):
 * hm = sqrt( 4/(C*r) * (vw/vs) * sqrt(ae/de) ), C in 1/mm^2. */
double GRD_MaxChipThickness(double vw_mm_s, double vs_m_s, double ae_mm, double de_mm,
                            double grit_density_mm2, double chip_width_ratio);

/* Specific grinding energy u = P_net / Q [J/mm^3]; P in W, Q in mm^3/s. */
double GRD_SpecificEnergy(double p_net_w, double q_mm3_s);

/* Malkin's workpiece-burn threshold u* = A + B * de^(1/4) * ae^(-3/4) * vw^(-1/2)
 * [J/mm^3], de and ae in mm, vw in mm/s. */
double GRD_BurnThreshold(const GRD_Params *p, double de_mm, double ae_mm, double vw_mm_s);

/* Inverse problems. The work speed [mm/s] that reaches aggressiveness aggr at
 * depth ae; the depth [mm] that reaches aggr at work speed vw. */
double GRD_WorkSpeedForAggressiveness(double aggr, double vs_m_s, double ae_mm, double de_mm);
double GRD_DepthForAggressiveness(double aggr, double vs_m_s, double vw_mm_s, double de_mm);

/* Cylindrical plunge: depth of cut per workpiece revolution [mm] from the radial
 * infeed rate vf [mm/s], the workpiece diameter dw [mm] and its surface speed
 * vw [mm/s]: ae = vf * pi * dw / vw. */
double GRD_PlungeDepthPerRevolution(double vf_mm_s, double dw_mm, double vw_mm_s);

/* Everything calc and the pass records print, for one set of conditions. */
typedef struct GRD_Conditions {
  GRD_Geometry geometry; /* kinematics */
  double ds_mm;          /* wheel diameter */
  double dw_mm;          /* workpiece diameter (cylindrical only) */
  double b_mm;           /* grinding width (traverse: axial feed per work revolution) */
  double ae_mm;          /* depth of cut per pass (plunge: per work revolution) */
  double vw_mm_s;        /* work speed */
  double vs_m_s;         /* wheel surface speed */
} GRD_Conditions;

typedef struct GRD_Figures {
  double de_mm;          /* equivalent wheel diameter */
  double lg_mm;          /* geometric contact length */
  double q_prime_mm2_s;  /* specific removal rate */
  double q_mm3_s;        /* removal rate */
  double heq_mm;         /* equivalent chip thickness */
  double aggr;           /* aggressiveness number */
  double hmax_mm;        /* maximum uncut chip thickness */
  double u_star_j_mm3;   /* burn threshold */
} GRD_Figures;

/* Computes every figure; quantities that cannot be computed are NAN. Returns 0,
 * or -1 when de cannot be formed (then *why names the cause). */
int GRD_Compute(const GRD_Conditions *c, const GRD_Params *p, GRD_Figures *f, const char **why);

#endif
