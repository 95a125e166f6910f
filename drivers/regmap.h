/* regmap.h: the machine's Modbus register map: channels, value decoding, request planning (no I/O). */
#ifndef GRITLINE_REGMAP_H
#define GRITLINE_REGMAP_H

#include <stddef.h>
#include <stdint.h>

#include "sample.h"

/* Canonical channels. The names (RMP_ChannelName) are the ones the config file uses. */
typedef enum RMP_ChannelId {
  RMP_SPINDLE_POWER,   /* "spindle_power" -> SMP_Sample.spindle_power_w */
  RMP_SPINDLE_SPEED,   /* "spindle_speed" -> spindle_speed_rpm */
  RMP_WHEEL_SPEED,     /* "wheel_speed": surface speed, turned into spindle_speed_rpm (see RMP_Decode) */
  RMP_WORK_SPEED,      /* "work_speed" -> work_speed_mm_min */
  RMP_INFEED_POSITION, /* "infeed_position" -> infeed_position_mm */
  RMP_DEPTH_OF_CUT,    /* "depth_of_cut" -> depth_of_cut_mm */
  RMP_WHEEL_DIAMETER,  /* "wheel_diameter" -> wheel_diameter_mm */
  RMP_DRESS_COUNT,     /* "dress_count" -> dress_count */
  RMP_GRINDING,        /* "grinding" -> grinding (0/1) */
  RMP_CLOCK,           /* "clock": the controller's clock, returned beside the sample */
  RMP_CHANNEL_COUNT
} RMP_ChannelId;

/* Name of a channel, NULL when id is out of range. */
const char *RMP_ChannelName(int id);
/* Channel of a name (exact, lower case), -1 when unknown. */
int RMP_ChannelFromName(const char *name);
/* "spindle_power, spindle_speed, ..." for error messages. */
const char *RMP_ChannelList(void);

/* Modbus data tables (Modbus Application Protocol Specification V1.1b3, 4.3). */
typedef enum RMP_Table { RMP_HOLDING, RMP_INPUT, RMP_COIL, RMP_DISCRETE, RMP_TABLE_COUNT } RMP_Table;
int RMP_ParseTable(const char *name); /* "holding", "input", "coil", "discrete"; -1 when unknown */
const char *RMP_TableName(int table);
const char *RMP_TableList(void);
/* 1 for coils and discrete inputs (single bits), 0 for registers. */
int RMP_TableIsBits(int table);

/* Register value types. Coils and discrete inputs are single bits: their type and order are ignored
 * and their raw value is 0 or 1 (scale, offset, range and unit still apply). */
typedef enum RMP_Type { RMP_U16, RMP_S16, RMP_U32, RMP_S32, RMP_F32, RMP_U64, RMP_TYPE_COUNT } RMP_Type;
int RMP_ParseType(const char *name); /* "u16", "s16", "u32", "s32", "f32", "u64"; -1 when unknown */
const char *RMP_TypeName(int type);
const char *RMP_TypeList(void);
/* Registers (16-bit words) a type takes: 1, 2 or 4. */
unsigned RMP_TypeWords(int type);

/* Byte order of a 32/64-bit value over its registers, written as the bytes of the value from most
 * (a) to least significant as they come on the wire:
 *   abcd: most significant word first, each word big-endian (the Modbus rule for one register)
 *   badc: most significant word first, bytes swapped inside each word
 *   cdab: least significant word first, each word big-endian
 *   dcba: least significant word first, bytes swapped inside each word (fully little-endian)
 * For u64 the same rule spans four words (abcd = words 0..3 most to least significant).
 * 16-bit types ignore the order: one register is always big-endian (V1.1b3, 4.2). */
typedef enum RMP_Order { RMP_ABCD, RMP_BADC, RMP_CDAB, RMP_DCBA, RMP_ORDER_COUNT } RMP_Order;
int RMP_ParseOrder(const char *name); /* -1 when unknown */
const char *RMP_OrderName(int order);
const char *RMP_OrderList(void);

/* Units a channel may be given in. Names are matched without regard to case; "um" may be written
 * "µm" and "rpm" "1/min". */
typedef enum RMP_Unit {
  RMP_UNIT_W, RMP_UNIT_KW, RMP_UNIT_HP,                           /* power */
  RMP_UNIT_RPM,                                                   /* rotation */
  RMP_UNIT_M_S, RMP_UNIT_FT_MIN,                                  /* wheel surface speed */
  RMP_UNIT_MM_MIN, RMP_UNIT_MM_S, RMP_UNIT_M_MIN, RMP_UNIT_IN_MIN, /* feed speed */
  RMP_UNIT_MM, RMP_UNIT_UM, RMP_UNIT_IN,                          /* length */
  RMP_UNIT_COUNTER, RMP_UNIT_BOOL,                                /* counter, flag (nonzero = 1) */
  RMP_UNIT_S, RMP_UNIT_MS,                                        /* clock */
  RMP_UNIT_TOTAL
} RMP_Unit;
int RMP_ParseUnit(const char *name); /* any unit name; -1 when unknown */
const char *RMP_UnitName(int unit);
/* 1 when the channel accepts the unit. */
int RMP_UnitAllowed(int channel, int unit);
/* The units a channel accepts, e.g. "W, kW, hp", for error messages. */
const char *RMP_UnitList(int channel);
/* Unit a channel gets when the config names none: the canonical one. */
RMP_Unit RMP_DefaultUnit(int channel);

/* How one channel is read. value = raw * scale + offset, in `unit`; then converted to the
 * canonical unit of the sample. */
typedef struct RMP_ChannelConfig {
  int enabled;       /* 0 = not read: its sample field stays NAN */
  RMP_Table table;   /* data table */
  unsigned address;  /* protocol (PDU) address, 0-based: 0..65535 (V1.1b3, 4.4) */
  RMP_Type type;     /* register type (ignored for coils and discrete inputs) */
  RMP_Order order;   /* word/byte order of 32/64-bit types */
  double scale;      /* unit per raw count, default 1 */
  double offset;     /* unit, added after scaling, default 0 */
  RMP_Unit unit;     /* unit of raw * scale + offset */
  int has_range;     /* 1: values outside [min, max] are rejected */
  double min, max;   /* plausible range, in `unit` after scale and offset */
  double stale_s;    /* s a frozen raw value may last; 0 = the client's global limit, < 0 = never */
} RMP_ChannelConfig;

/* Requests: Modbus Application Protocol Specification V1.1b3, 6.1/6.2 (read coils / discrete
 * inputs: quantity 1..2000) and 6.3/6.4 (read holding / input registers: quantity 1..125). */
#define RMP_MAX_REGS 125
#define RMP_MAX_BITS 2000
#define RMP_DEFAULT_GAP 8
/* Each channel needs at most 4 registers, so merging only lowers the count below this. */
#define RMP_MAX_BLOCKS RMP_CHANNEL_COUNT

typedef struct RMP_Map {
  RMP_ChannelConfig ch[RMP_CHANNEL_COUNT]; /* indexed by RMP_ChannelId */
  unsigned gap;      /* registers (bits for coil/discrete tables) of unused hole a request may span */
  unsigned max_regs; /* registers per read, 1..125; 0 = 125 (for devices that accept fewer) */
  unsigned max_bits; /* bits per read, 1..2000; 0 = 2000 */
} RMP_Map;

/* Default channel: disabled, holding u16 abcd at 0, scale 1, offset 0, canonical unit, no range. */
void RMP_ChannelInit(RMP_ChannelConfig *c, int channel);
/* Every channel at its default, gap RMP_DEFAULT_GAP, spec limits. */
void RMP_MapInit(RMP_Map *m);
/* Checks what a config file could get wrong; the message names the channel. */
int RMP_MapCheck(const RMP_Map *m, char *err, size_t errlen);

/* One read request. */
typedef struct RMP_Block {
  RMP_Table table;   /* table read */
  uint16_t start;    /* first address */
  uint16_t count;    /* registers or bits, 1..125 / 1..2000 */
  unsigned channels; /* bit (1u << RMP_ChannelId) per channel decoded from this block */
} RMP_Block;

typedef struct RMP_Plan {
  unsigned n;                              /* blocks used */
  RMP_Block block[RMP_MAX_BLOCKS];         /* in table order, then address order */
  unsigned char block_of[RMP_CHANNEL_COUNT]; /* block index of each enabled channel */
} RMP_Plan;

/* Groups the enabled channels into as few reads as possible: per table, channels sorted by address
 * join the current request while the hole before them is at most m->gap and the request stays
 * within the per-read limit. Runs RMP_MapCheck first. */
int RMP_MakePlan(const RMP_Map *m, RMP_Plan *p, char *err, size_t errlen);

/* What one block read returned. */
typedef struct RMP_BlockData {
  uint16_t reg[RMP_MAX_REGS]; /* registers, each the 16-bit value of its big-endian pair of bytes */
  uint8_t bit[RMP_MAX_BITS];  /* coils / discrete inputs, 0 or 1 */
} RMP_BlockData;

/* Puts n (1, 2 or 4) registers together into one raw value following the order. */
uint64_t RMP_Assemble(const uint16_t *words, unsigned n, RMP_Order order);
/* Raw value -> value in the channel's configured unit after type, scale and offset; then range.
 * Returns 0, or -1 (with *value NAN) for a NaN/infinite value or one outside the range. */
int RMP_ScaleRaw(const RMP_ChannelConfig *c, uint64_t raw, double *value);
/* Value in `unit` -> canonical unit of its kind: W, 1/min, m/s, mm/min, mm, count, 0/1, s. */
double RMP_ToCanonical(RMP_Unit unit, double v);

typedef struct RMP_Values {
  double value[RMP_CHANNEL_COUNT]; /* canonical units (wheel_speed in m/s, clock in s); NAN = none */
  uint64_t raw[RMP_CHANNEL_COUNT]; /* raw bits as read (for frozen-value detection) */
  unsigned read_mask;              /* bit per channel whose raw value was read */
  unsigned rejected_mask;          /* bit per channel read but rejected (NaN/inf/out of range) */
} RMP_Values;

/* Decodes the blocks whose bit is set in ok_blocks into out's channels (out->time untouched) and
 * *clock_s (s, NAN when not read). spindle_speed_rpm comes from spindle_speed; when that has no
 * value it comes from wheel_speed and the wheel diameter read in the same poll, else
 * fallback_wheel_diameter_mm (mm, <= 0 = none). vals (may be NULL) receives the detail. */
void RMP_Decode(const RMP_Map *m, const RMP_Plan *p, const RMP_BlockData *data, unsigned ok_blocks,
                double fallback_wheel_diameter_mm, SMP_Sample *out, double *clock_s, RMP_Values *vals);

#endif
