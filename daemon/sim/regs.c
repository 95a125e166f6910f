/* regs.c: encoding of the simulator's values into Modbus registers. */
#include "regs.h"

#include <math.h>
#include <string.h>

void SIM_PutU32(uint16_t *dst, uint32_t v, SIM_WordOrder order)
{
  uint16_t hi = (uint16_t)(v >> 16), lo = (uint16_t)(v & 0xFFFFu);
  switch (order) {
  case SIM_ABCD:
    dst[0] = hi;
    dst[1] = lo;
    break;
  case SIM_CDAB:
    dst[0] = lo;
    dst[1] = hi;
    break;
  case SIM_BADC:
    dst[0] = (uint16_t)((hi >> 8) | (hi << 8));
    dst[1] = (uint16_t)((lo >> 8) | (lo << 8));
    break;
  case SIM_DCBA:
    dst[0] = (uint16_t)((lo >> 8) | (lo << 8));
    dst[1] = (uint16_t)((hi >> 8) | (hi << 8));
    break;
  }
}

uint32_t SIM_GetU32(const uint16_t *src, SIM_WordOrder order)
{
  uint16_t w[2];
  SIM_PutU32(w, ((uint32_t)src[0] << 16) | src[1], order); /* each order is its own inverse */
  return ((uint32_t)w[0] << 16) | w[1];
}

void SIM_PutF32(uint16_t *dst, float v, SIM_WordOrder order)
{
  uint32_t bits;
  memcpy(&bits, &v, sizeof bits);
  SIM_PutU32(dst, bits, order);
}

void SIM_PutU64(uint16_t *dst, uint64_t v)
{
  for (int i = 0; i < 4; i++)
    dst[i] = (uint16_t)(v >> (48 - 16 * i));
}

/* Rounds to the nearest integer and saturates into [lo, hi]; NaN gives lo. */
static double clamp_round(double v, double lo, double hi)
{
  if (!(v >= lo))
    return lo;
  if (v >= hi)
    return hi;
  return floor(v + 0.5);
}

void SIM_ImageFill(SIM_Image *img, uint64_t clock_ms, const SIM_Snapshot *s)
{
  uint16_t *h = img->holding;
  memset(img, 0, sizeof *img);
  SIM_PutU64(h + SIM_HR_CLOCK, clock_ms);
  SIM_PutF32(h + SIM_HR_POWER, (float)s->spindle_power_w, SIM_ABCD);
  SIM_PutF32(h + SIM_HR_RPM, (float)s->spindle_rpm, SIM_ABCD);
  SIM_PutF32(h + SIM_HR_WORK_SPEED, (float)s->work_speed_mm_min, SIM_ABCD);
  int32_t infeed = (int32_t)clamp_round(s->infeed_mm * 1.0e4, -2147483648.0, 2147483647.0);
  SIM_PutU32(h + SIM_HR_INFEED, (uint32_t)infeed, SIM_ABCD);
  SIM_PutU32(h + SIM_HR_DEPTH, (uint32_t)clamp_round(s->depth_mm * 1.0e4, 0.0, 4294967295.0),
             SIM_ABCD);
  SIM_PutF32(h + SIM_HR_DIAMETER, (float)s->wheel_diameter_mm, SIM_ABCD);
  h[SIM_HR_DRESS_COUNT] = (uint16_t)s->dress_count;
  h[SIM_HR_GRINDING] = (uint16_t)(s->grinding != 0);
  h[SIM_HR_STATE] = (uint16_t)s->state;
  h[SIM_HR_PASS] = (uint16_t)(s->pass & 0xFFFFu);

  uint16_t *in = img->input;
  SIM_PutU32(in + SIM_IR_POWER_U32, (uint32_t)clamp_round(s->spindle_power_w, 0.0, 4294967295.0),
             SIM_CDAB);
  in[SIM_IR_POWER_U16] = (uint16_t)clamp_round(s->spindle_power_w / 10.0, 0.0, 65535.0);
  SIM_PutF32(in + SIM_IR_WORK_SPEED, (float)s->work_speed_mm_min, SIM_DCBA);
  SIM_PutF32(in + SIM_IR_DIAMETER_F32, (float)s->wheel_diameter_mm, SIM_BADC);
  SIM_PutU32(in + SIM_IR_DIAMETER_U32,
             (uint32_t)clamp_round(s->wheel_diameter_mm * 1000.0, 0.0, 4294967295.0), SIM_CDAB);
  SIM_PutF32(in + SIM_IR_POWER_F32, (float)s->spindle_power_w, SIM_CDAB);
  SIM_PutU32(in + SIM_IR_INFEED, (uint32_t)infeed, SIM_CDAB);
  in[SIM_IR_RPM_U16] = (uint16_t)clamp_round(s->spindle_rpm, 0.0, 65535.0);

  img->discrete[0] = (uint8_t)(s->grinding != 0);
}

static void put_all_floats(SIM_Image *img, float v)
{
  SIM_PutF32(img->holding + SIM_HR_POWER, v, SIM_ABCD);
  SIM_PutF32(img->holding + SIM_HR_RPM, v, SIM_ABCD);
  SIM_PutF32(img->holding + SIM_HR_WORK_SPEED, v, SIM_ABCD);
  SIM_PutF32(img->holding + SIM_HR_DIAMETER, v, SIM_ABCD);
  SIM_PutF32(img->input + SIM_IR_WORK_SPEED, v, SIM_DCBA);
  SIM_PutF32(img->input + SIM_IR_DIAMETER_F32, v, SIM_BADC);
  SIM_PutF32(img->input + SIM_IR_POWER_F32, v, SIM_CDAB);
}

void SIM_ImageCorrupt(SIM_Image *img, unsigned active)
{
  if (active & (1u << SIM_FAULT_NAN))
    put_all_floats(img, NAN);
  if (active & (1u << SIM_FAULT_INF))
    put_all_floats(img, INFINITY);
  if (active & (1u << SIM_FAULT_HUGE)) {
    put_all_floats(img, 3.0e38f);
    SIM_PutU32(img->holding + SIM_HR_INFEED, 0x7FFFFFFFu, SIM_ABCD);
    SIM_PutU32(img->holding + SIM_HR_DEPTH, 0xFFFFFFFFu, SIM_ABCD);
    SIM_PutU32(img->input + SIM_IR_POWER_U32, 0xFFFFFFFFu, SIM_CDAB);
    img->input[SIM_IR_POWER_U16] = 0xFFFFu;
    SIM_PutU32(img->input + SIM_IR_DIAMETER_U32, 0xFFFFFFFFu, SIM_CDAB);
    SIM_PutU32(img->input + SIM_IR_INFEED, 0x7FFFFFFFu, SIM_CDAB);
    img->input[SIM_IR_RPM_U16] = 0xFFFFu;
  }
}
