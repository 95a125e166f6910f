/* regs.h: the simulator's Modbus register map and the encoding of values into 16-bit registers. */
#ifndef GRITLINE_SIM_REGS_H
#define GRITLINE_SIM_REGS_H

#include "faults.h"
#include "model.h"

#include <stdint.h>

/* Holding registers (function 03), 0-based PDU addresses; documented in docs/simulator.md. */
enum {
  SIM_HR_CLOCK = 0,        /* 0-3   u64 ms since the UNIX epoch, abcd */
  SIM_HR_POWER = 4,        /* 4-5   f32 W, abcd */
  SIM_HR_RPM = 6,          /* 6-7   f32 1/min, abcd */
  SIM_HR_WORK_SPEED = 8,   /* 8-9   f32 mm/min, abcd */
  SIM_HR_INFEED = 10,      /* 10-11 s32 0.1 um, abcd, larger = deeper */
  SIM_HR_DEPTH = 12,       /* 12-13 u32 0.1 um, abcd */
  SIM_HR_DIAMETER = 14,    /* 14-15 f32 mm, abcd */
  SIM_HR_DRESS_COUNT = 16, /* u16 */
  SIM_HR_GRINDING = 17,    /* u16 0/1 */
  SIM_HR_STATE = 18,       /* u16 0 idle, 1 grinding, 2 dressing, 3 loading */
  SIM_HR_PASS = 19,        /* u16 pass number modulo 65536 */
  SIM_HR_COUNT = 20,       /* live holding registers 0..19 */
  SIM_HR_WRITE_START = 100, /* write-back area 100..115 */
  SIM_HR_WRITE_COUNT = 16,
};

/* Input registers (function 04): the same values in other types and word orders. */
enum {
  SIM_IR_POWER_U32 = 0,     /* 0-1   u32 W, cdab */
  SIM_IR_POWER_U16 = 2,     /* 2     u16 in 10 W steps */
  SIM_IR_WORK_SPEED = 3,    /* 3-4   f32 mm/min, dcba */
  SIM_IR_DIAMETER_F32 = 5,  /* 5-6   f32 mm, badc */
  SIM_IR_DIAMETER_U32 = 7,  /* 7-8   u32 um, cdab */
  SIM_IR_POWER_F32 = 9,     /* 9-10  f32 W, cdab */
  SIM_IR_INFEED = 11,       /* 11-12 s32 0.1 um, cdab */
  SIM_IR_RPM_U16 = 13,      /* 13    u16 1/min */
  SIM_IR_COUNT = 14,
};

#define SIM_COIL_COUNT 16      /* write-back coils 0..15 */
#define SIM_DISCRETE_COUNT 1   /* discrete input 0: grinding */

/* Word orders of 32-bit values, bytes A (most significant) to D. */
typedef enum SIM_WordOrder {
  SIM_ABCD = 0, /* reg n = AB, reg n+1 = CD (big-endian) */
  SIM_CDAB,     /* reg n = CD, reg n+1 = AB (words swapped) */
  SIM_BADC,     /* reg n = BA, reg n+1 = DC (bytes swapped) */
  SIM_DCBA,     /* reg n = DC, reg n+1 = BA (little-endian) */
} SIM_WordOrder;

void SIM_PutU32(uint16_t *dst, uint32_t v, SIM_WordOrder order);
/* Floats are encoded by hand (memcpy to uint32): libmodbus 3.1.6's float setters
 * do not round-trip on amd64. */
void SIM_PutF32(uint16_t *dst, float v, SIM_WordOrder order);
void SIM_PutU64(uint16_t *dst, uint64_t v); /* abcdefgh: most significant word first */
uint32_t SIM_GetU32(const uint16_t *src, SIM_WordOrder order);

/* Everything a read may return, for one instant. */
typedef struct SIM_Image {
  uint16_t holding[SIM_HR_COUNT];       /* live holding registers */
  uint16_t input[SIM_IR_COUNT];         /* input registers */
  uint8_t discrete[SIM_DISCRETE_COUNT]; /* discrete inputs */
} SIM_Image;

/* Encodes a snapshot; clock_ms is the sim time in ms since the UNIX epoch. */
void SIM_ImageFill(SIM_Image *img, uint64_t clock_ms, const SIM_Snapshot *snap);
/* Applies the value faults (nan, inf, huge) in `active` (bits 1u << SIM_FaultKind). */
void SIM_ImageCorrupt(SIM_Image *img, unsigned active);

#endif
