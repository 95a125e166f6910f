/* grind.c: the grinding formulas. */
#include "grind.h"

#include <math.h>
#include <string.h>

static const char *const geometry_names[GRD_GEOMETRY_COUNT] = {
    "surface", "creep-feed", "external", "internal", "plunge",
};

const char *GRD_GeometryName(GRD_Geometry g)
{
  return (unsigned)g < GRD_GEOMETRY_COUNT ? geometry_names[g] : "?";
}

int GRD_GeometryFromName(const char *name, GRD_Geometry *g)
{
  for (int i = 0; i < GRD_GEOMETRY_COUNT; i++) {
    if (strcmp(name, geometry_names[i]) == 0) {
      *g = (GRD_Geometry)i;
      return 0;
    }
  }
  return -1;
}

int GRD_GeometryIsCylindrical(GRD_Geometry g)
{
  return g == GRD_EXTERNAL || g == GRD_INTERNAL || g == GRD_PLUNGE;
}

void GRD_DefaultParams(GRD_Params *p)
{
  p->grit_density_mm2 = 2.0;
  p->chip_width_ratio = 15.0;
  p->burn_a_j_mm3 = 6.2;
  p->burn_b = 1.76;
}

double GRD_EquivalentDiameter(GRD_Geometry g, double ds, double dw)
{
  if (!(ds > 0.0))
    return NAN;
  switch (g) {
  case GRD_SURFACE:
  case GRD_CREEP_FEED:
    return ds;
  case GRD_EXTERNAL:
  case GRD_PLUNGE:
    return dw > 0.0 ? ds * dw / (dw + ds) : NAN;
  case GRD_INTERNAL:
    return dw > ds ? ds * dw / (dw - ds) : NAN;
  default:
    return NAN;
  }
}

double GRD_ContactLength(double ae, double de) { return sqrt(ae * de); }
double GRD_SpecificRemovalRate(double ae, double vw) { return ae * vw; }
double GRD_RemovalRate(double b, double ae, double vw) { return b * ae * vw; }

double GRD_EquivalentChipThickness(double ae, double vw, double vs_m_s)
{
  return ae * vw / (vs_m_s * 1000.0);
}

double GRD_Aggressiveness(double vw, double vs_m_s, double ae, double de)
{
  return 1e6 * (vw / (vs_m_s * 1000.0)) * sqrt(ae / de);
}

double GRD_AggressivenessShop(double vw_mm_min, double vs_m_s, double ae, double de)
{
  return (1e6 / 60000.0) * vw_mm_min / vs_m_s * sqrt(ae / de);
}

double GRD_AggressivenessImperial(double vw_in_min, double vs_ft_min, double ae_in, double de_in)
{
  /* in/min over ft/min: 1 ft = 12 in. */
  return (1e6 / 12.0) * vw_in_min / vs_ft_min * sqrt(ae_in / de_in);
}

double GRD_MaxChipThickness(double vw, double vs_m_s, double ae, double de, double c, double r)
{
  return sqrt(4.0 / (c * r) * (vw / (vs_m_s * 1000.0)) * sqrt(ae / de));
}

double GRD_SpecificEnergy(double p_net_w, double q_mm3_s) { return p_net_w / q_mm3_s; }

double GRD_BurnThreshold(const GRD_Params *p, double de, double ae, double vw)
{
  return p->burn_a_j_mm3 + p->burn_b * pow(de, 0.25) * pow(ae, -0.75) * pow(vw, -0.5);
}

double GRD_WorkSpeedForAggressiveness(double aggr, double vs_m_s, double ae, double de)
{
  return aggr * vs_m_s * 1000.0 / 1e6 * sqrt(de / ae);
}

double GRD_DepthForAggressiveness(double aggr, double vs_m_s, double vw, double de)
{
  double k = aggr * vs_m_s * 1000.0 / (1e6 * vw);
  return de * k * k;
}

double GRD_PlungeDepthPerRevolution(double vf, double dw, double vw)
{
  return vf * M_PI * dw / vw;
}

int GRD_Compute(const GRD_Conditions *c, const GRD_Params *p, GRD_Figures *f, const char **why)
{
  f->de_mm = GRD_EquivalentDiameter(c->geometry, c->ds_mm, c->dw_mm);
  if (isnan(f->de_mm)) {
    if (why)
      *why = c->geometry == GRD_INTERNAL && c->dw_mm <= c->ds_mm
                 ? "internal grinding needs a workpiece (bore) diameter larger than the wheel diameter"
                 : "wheel and workpiece diameters must be positive";
    f->lg_mm = f->q_prime_mm2_s = f->q_mm3_s = f->heq_mm = NAN;
    f->aggr = f->hmax_mm = f->u_star_j_mm3 = NAN;
    return -1;
  }
  f->lg_mm = GRD_ContactLength(c->ae_mm, f->de_mm);
  f->q_prime_mm2_s = GRD_SpecificRemovalRate(c->ae_mm, c->vw_mm_s);
  f->q_mm3_s = GRD_RemovalRate(c->b_mm, c->ae_mm, c->vw_mm_s);
  f->heq_mm = GRD_EquivalentChipThickness(c->ae_mm, c->vw_mm_s, c->vs_m_s);
  f->aggr = GRD_Aggressiveness(c->vw_mm_s, c->vs_m_s, c->ae_mm, f->de_mm);
  f->hmax_mm = GRD_MaxChipThickness(c->vw_mm_s, c->vs_m_s, c->ae_mm, f->de_mm, p->grit_density_mm2,
                                    p->chip_width_ratio);
  f->u_star_j_mm3 = c->ae_mm > 0.0 && c->vw_mm_s > 0.0
                        ? GRD_BurnThreshold(p, f->de_mm, c->ae_mm, c->vw_mm_s)
                        : NAN;
  return 0;
}
