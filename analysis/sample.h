/* sample.h: one poll of the machine, in the units of the recording. */
#ifndef GRITLINE_SAMPLE_H
#define GRITLINE_SAMPLE_H

/* A channel not configured, or a value not obtained in this poll, is NAN.
 * A poll that obtained nothing at all (connection down, timeout) has every
 * channel NAN and still carries its time: the segmentation sees it as a gap. */
typedef struct SMP_Sample {
  double time;               /* s; UNIX time in the daemon and recordings */
  double spindle_power_w;    /* W, gross spindle power (idle + grinding) */
  double spindle_speed_rpm;  /* 1/min, wheel spindle */
  double work_speed_mm_min;  /* mm/min: table speed (surface) or workpiece surface speed (cylindrical) */
  double infeed_position_mm; /* mm, wheel-head infeed axis, larger = deeper into the work */
  double depth_of_cut_mm;    /* mm, depth of cut per pass when the controller reports it */
  double wheel_diameter_mm;  /* mm, current wheel diameter */
  double dress_count;        /* dress counter of the controller (integer valued) */
  double grinding;           /* 1 = controller says the wheel is grinding, 0 = not */
} SMP_Sample;

#define SMP_CHANNELS 8 /* every field after time */

/* Fills every channel with NAN and sets the time. */
void SMP_Clear(SMP_Sample *s, double time);
/* True when no channel holds a value (a lost poll). */
int SMP_IsEmpty(const SMP_Sample *s);

#endif
