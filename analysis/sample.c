/* sample.c: helpers for one poll of the machine. */
#include "sample.h"

#include <math.h>

void SMP_Clear(SMP_Sample *s, double time)
{
  s->time = time;
  s->spindle_power_w = NAN;
  s->spindle_speed_rpm = NAN;
  s->work_speed_mm_min = NAN;
  s->infeed_position_mm = NAN;
  s->depth_of_cut_mm = NAN;
  s->wheel_diameter_mm = NAN;
  s->dress_count = NAN;
  s->grinding = NAN;
}

int SMP_IsEmpty(const SMP_Sample *s)
{
  return isnan(s->spindle_power_w) && isnan(s->spindle_speed_rpm) && isnan(s->work_speed_mm_min) &&
         isnan(s->infeed_position_mm) && isnan(s->depth_of_cut_mm) && isnan(s->wheel_diameter_mm) &&
         isnan(s->dress_count) && isnan(s->grinding);
}
