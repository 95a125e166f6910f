/* passgen.c: synthetic pass records and a seeded random source (see passgen.h). */
#include "passgen.h"

#include <math.h>
#include <string.h>

#include "grind.h"
#include "units.h"

void PGN_DefaultJob(PGN_Job *j)
{
  j->ds_mm = 400.0;
  j->vs_m_s = 30.0;
  j->b_mm = 20.0;
  j->ae_mm = 0.01;
  j->vw_mm_min = 6300.0;
  j->duration_s = 4.0;
  j->interval_s = 10.0;
  j->dress_count = 7.0;
  j->peak_factor = 1.1;
}

void PGN_Make(const PGN_Job *j, unsigned long n, double u, SEG_Pass *p)
{
  GRD_Params prm;
  GRD_DefaultParams(&prm);
  memset(p, 0, sizeof(*p));
  double vw = UNT_MmPerMinToMmPerS(j->vw_mm_min);
  p->number = n;
  p->start_time = 1000.0 + (double)n * j->interval_s;
  p->duration_s = j->duration_s;
  p->end_time = p->start_time + j->duration_s;
  p->depth_mm = j->ae_mm;
  p->work_speed_mm_s = vw;
  p->wheel_speed_m_s = j->vs_m_s;
  p->spindle_speed_rpm = UNT_SpindleSpeedFor(j->ds_mm, j->vs_m_s);
  p->wheel_diameter_mm = j->ds_mm;
  p->equivalent_diameter_mm = GRD_EquivalentDiameter(GRD_SURFACE, j->ds_mm, NAN);
  p->contact_length_mm = GRD_ContactLength(j->ae_mm, p->equivalent_diameter_mm);
  p->specific_removal_rate_mm2_s = GRD_SpecificRemovalRate(j->ae_mm, vw);
  p->removal_rate_mm3_s = GRD_RemovalRate(j->b_mm, j->ae_mm, vw);
  p->aggressiveness = GRD_Aggressiveness(vw, j->vs_m_s, j->ae_mm, p->equivalent_diameter_mm);
  p->chip_thickness_mm = GRD_EquivalentChipThickness(j->ae_mm, vw, j->vs_m_s);
  p->max_chip_thickness_mm = GRD_MaxChipThickness(vw, j->vs_m_s, j->ae_mm, p->equivalent_diameter_mm,
                                                  prm.grit_density_mm2, prm.chip_width_ratio);
  p->idle_power_w = 800.0;
  p->net_power_mean_w = u * p->removal_rate_mm3_s;
  p->net_power_peak_w = p->net_power_mean_w * j->peak_factor;
  p->energy_j = p->net_power_mean_w * j->duration_s;
  p->volume_mm3 = p->removal_rate_mm3_s * j->duration_s;
  p->specific_energy_j_mm3 = GRD_SpecificEnergy(p->net_power_mean_w, p->removal_rate_mm3_s);
  p->burn_threshold_j_mm3 = GRD_BurnThreshold(&prm, p->equivalent_diameter_mm, j->ae_mm, vw);
  p->burn_ratio = p->specific_energy_j_mm3 / p->burn_threshold_j_mm3;
  p->infeed_position_mm = NAN;
  p->dress_count = j->dress_count;
  p->samples = 40;
  p->flags = 0;
}

double PGN_VPrimePerPass(const PGN_Job *j)
{
  return j->ae_mm * UNT_MmPerMinToMmPerS(j->vw_mm_min) * j->duration_s;
}

void PGN_Seed(PGN_Rng *r, uint64_t seed) { r->s = seed; }

static uint64_t next(PGN_Rng *r)
{
  uint64_t z = (r->s += 0x9e3779b97f4a7c15ULL);
  z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
  z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
  return z ^ (z >> 31);
}

double PGN_Uniform(PGN_Rng *r) { return ((double)(next(r) >> 11) + 0.5) / 9007199254740992.0; }

double PGN_Normal(PGN_Rng *r)
{
  double u1 = PGN_Uniform(r), u2 = PGN_Uniform(r);
  return sqrt(-2.0 * log(u1)) * cos(2.0 * M_PI * u2);
}
