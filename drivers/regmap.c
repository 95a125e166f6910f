/* regmap.c: the machine's Modbus register map: channels, value decoding, request planning (no I/O). */
#include "regmap.h"

#include <math.h>
#include <stdio.h>
#include <string.h>
#include <strings.h>

#include "units.h"

static const char *const channel_names[RMP_CHANNEL_COUNT] = {
  "spindle_power", "spindle_speed", "wheel_speed", "work_speed", "infeed_position",
  "depth_of_cut", "wheel_diameter", "dress_count", "grinding", "clock",
};

static const char *const table_names[RMP_TABLE_COUNT] = {"holding", "input", "coil", "discrete"};
static const char *const type_names[RMP_TYPE_COUNT] = {"u16", "s16", "u32", "s32", "f32", "u64"};
static const unsigned type_words[RMP_TYPE_COUNT] = {1, 1, 2, 2, 2, 4};
static const char *const order_names[RMP_ORDER_COUNT] = {"abcd", "badc", "cdab", "dcba"};

static const char *const unit_names[RMP_UNIT_TOTAL] = {
  "W", "kW", "hp", "rpm", "m/s", "ft/min", "mm/min", "mm/s", "m/min", "in/min",
  "mm", "um", "in", "count", "bool", "s", "ms",
};

#define U(x) (1u << (x))
/* Units each channel accepts; the first listed is the canonical one. */
static const unsigned channel_units[RMP_CHANNEL_COUNT] = {
  [RMP_SPINDLE_POWER] = U(RMP_UNIT_W) | U(RMP_UNIT_KW) | U(RMP_UNIT_HP),
  [RMP_SPINDLE_SPEED] = U(RMP_UNIT_RPM),
  [RMP_WHEEL_SPEED] = U(RMP_UNIT_M_S) | U(RMP_UNIT_FT_MIN),
  [RMP_WORK_SPEED] = U(RMP_UNIT_MM_MIN) | U(RMP_UNIT_MM_S) | U(RMP_UNIT_M_MIN) | U(RMP_UNIT_IN_MIN),
  [RMP_INFEED_POSITION] = U(RMP_UNIT_MM) | U(RMP_UNIT_UM) | U(RMP_UNIT_IN),
  [RMP_DEPTH_OF_CUT] = U(RMP_UNIT_MM) | U(RMP_UNIT_UM) | U(RMP_UNIT_IN),
  [RMP_WHEEL_DIAMETER] = U(RMP_UNIT_MM) | U(RMP_UNIT_UM) | U(RMP_UNIT_IN),
  [RMP_DRESS_COUNT] = U(RMP_UNIT_COUNTER),
  [RMP_GRINDING] = U(RMP_UNIT_BOOL),
  [RMP_CLOCK] = U(RMP_UNIT_S) | U(RMP_UNIT_MS),
};
static const char *const channel_unit_lists[RMP_CHANNEL_COUNT] = {
  "W, kW, hp", "rpm", "m/s, ft/min", "mm/min, mm/s, m/min, in/min", "mm, um, in",
  "mm, um, in", "mm, um, in", "count", "bool", "s, ms",
};
static const RMP_Unit channel_default_unit[RMP_CHANNEL_COUNT] = {
  RMP_UNIT_W, RMP_UNIT_RPM, RMP_UNIT_M_S, RMP_UNIT_MM_MIN, RMP_UNIT_MM,
  RMP_UNIT_MM, RMP_UNIT_MM, RMP_UNIT_COUNTER, RMP_UNIT_BOOL, RMP_UNIT_S,
};

static int find_name(const char *const *names, int n, const char *name, int any_case)
{
  if (name == NULL)
    return -1;
  for (int i = 0; i < n; i++)
    if (any_case ? strcasecmp(names[i], name) == 0 : strcmp(names[i], name) == 0)
      return i;
  return -1;
}

const char *RMP_ChannelName(int id)
{
  return id >= 0 && id < RMP_CHANNEL_COUNT ? channel_names[id] : NULL;
}

int RMP_ChannelFromName(const char *name)
{
  return find_name(channel_names, RMP_CHANNEL_COUNT, name, 0);
}

const char *RMP_ChannelList(void)
{
  return "spindle_power, spindle_speed, wheel_speed, work_speed, infeed_position, depth_of_cut, "
         "wheel_diameter, dress_count, grinding, clock";
}

int RMP_ParseTable(const char *name) { return find_name(table_names, RMP_TABLE_COUNT, name, 0); }
const char *RMP_TableName(int t) { return t >= 0 && t < RMP_TABLE_COUNT ? table_names[t] : NULL; }
const char *RMP_TableList(void) { return "holding, input, coil, discrete"; }
int RMP_TableIsBits(int t) { return t == RMP_COIL || t == RMP_DISCRETE; }

int RMP_ParseType(const char *name) { return find_name(type_names, RMP_TYPE_COUNT, name, 0); }
const char *RMP_TypeName(int t) { return t >= 0 && t < RMP_TYPE_COUNT ? type_names[t] : NULL; }
const char *RMP_TypeList(void) { return "u16, s16, u32, s32, f32, u64"; }
unsigned RMP_TypeWords(int t) { return t >= 0 && t < RMP_TYPE_COUNT ? type_words[t] : 0; }

int RMP_ParseOrder(const char *name) { return find_name(order_names, RMP_ORDER_COUNT, name, 0); }
const char *RMP_OrderName(int o) { return o >= 0 && o < RMP_ORDER_COUNT ? order_names[o] : NULL; }
const char *RMP_OrderList(void) { return "abcd, badc, cdab, dcba"; }

int RMP_ParseUnit(const char *name)
{
  if (name != NULL && strcmp(name, "\xc2\xb5m") == 0) /* UTF-8 micro sign */
    return RMP_UNIT_UM;
  if (name != NULL && strcmp(name, "1/min") == 0)
    return RMP_UNIT_RPM;
  return find_name(unit_names, RMP_UNIT_TOTAL, name, 1);
}

const char *RMP_UnitName(int u) { return u >= 0 && u < RMP_UNIT_TOTAL ? unit_names[u] : NULL; }

int RMP_UnitAllowed(int channel, int unit)
{
  if (channel < 0 || channel >= RMP_CHANNEL_COUNT || unit < 0 || unit >= RMP_UNIT_TOTAL)
    return 0;
  return (channel_units[channel] & U(unit)) != 0;
}

const char *RMP_UnitList(int channel)
{
  return channel >= 0 && channel < RMP_CHANNEL_COUNT ? channel_unit_lists[channel] : "";
}

RMP_Unit RMP_DefaultUnit(int channel)
{
  return channel >= 0 && channel < RMP_CHANNEL_COUNT ? channel_default_unit[channel] : RMP_UNIT_W;
}

void RMP_ChannelInit(RMP_ChannelConfig *c, int channel)
{
  memset(c, 0, sizeof *c);
  c->table = RMP_HOLDING;
  c->type = RMP_U16;
  c->order = RMP_ABCD;
  c->scale = 1.0;
  c->offset = 0.0;
  c->unit = RMP_DefaultUnit(channel);
  c->min = -INFINITY;
  c->max = INFINITY;
}

void RMP_MapInit(RMP_Map *m)
{
  for (int i = 0; i < RMP_CHANNEL_COUNT; i++)
    RMP_ChannelInit(&m->ch[i], i);
  m->gap = RMP_DEFAULT_GAP;
  m->max_regs = 0;
  m->max_bits = 0;
}

static unsigned channel_width(const RMP_ChannelConfig *c)
{
  return RMP_TableIsBits((int)c->table) ? 1 : RMP_TypeWords((int)c->type);
}

static unsigned limit_of(const RMP_Map *m, RMP_Table t)
{
  if (RMP_TableIsBits(t))
    return m->max_bits ? m->max_bits : RMP_MAX_BITS;
  return m->max_regs ? m->max_regs : RMP_MAX_REGS;
}

int RMP_MapCheck(const RMP_Map *m, char *err, size_t errlen)
{
  if (m->max_regs > RMP_MAX_REGS) {
    snprintf(err, errlen, "max_regs %u: above 125, the Modbus limit per read", m->max_regs);
    return -1;
  }
  if (m->max_bits > RMP_MAX_BITS) {
    snprintf(err, errlen, "max_bits %u: above 2000, the Modbus limit per read", m->max_bits);
    return -1;
  }
  if (m->gap > 65535) {
    snprintf(err, errlen, "gap %u: above 65535", m->gap);
    return -1;
  }
  for (int i = 0; i < RMP_CHANNEL_COUNT; i++) {
    const RMP_ChannelConfig *c = &m->ch[i];
    const char *name = channel_names[i];
    if (!c->enabled)
      continue;
    if ((unsigned)c->table >= RMP_TABLE_COUNT) {
      snprintf(err, errlen, "channel %s: unknown table %d (expected %s)", name, (int)c->table,
               RMP_TableList());
      return -1;
    }
    if (!RMP_TableIsBits(c->table) && (unsigned)c->type >= RMP_TYPE_COUNT) {
      snprintf(err, errlen, "channel %s: unknown type %d (expected %s)", name, (int)c->type,
               RMP_TypeList());
      return -1;
    }
    if (!RMP_TableIsBits(c->table) && (unsigned)c->order >= RMP_ORDER_COUNT) {
      snprintf(err, errlen, "channel %s: unknown order %d (expected %s)", name, (int)c->order,
               RMP_OrderList());
      return -1;
    }
    unsigned width = channel_width(c);
    if (c->address > 65535 || c->address + width - 1 > 65535) {
      snprintf(err, errlen, "channel %s: address %u with %u register(s) passes 65535", name,
               c->address, width);
      return -1;
    }
    if (width > limit_of(m, c->table)) {
      snprintf(err, errlen, "channel %s: needs %u registers, more than max_regs %u", name, width,
               limit_of(m, c->table));
      return -1;
    }
    if (!isfinite(c->scale) || c->scale == 0.0) {
      snprintf(err, errlen, "channel %s: scale %g must be finite and nonzero", name, c->scale);
      return -1;
    }
    if (!isfinite(c->offset)) {
      snprintf(err, errlen, "channel %s: offset %g must be finite", name, c->offset);
      return -1;
    }
    if (!RMP_UnitAllowed(i, (int)c->unit)) {
      const char *un = RMP_UnitName((int)c->unit);
      snprintf(err, errlen, "channel %s: unit \"%s\" not accepted (expected %s)", name,
               un ? un : "?", RMP_UnitList(i));
      return -1;
    }
    if (c->has_range && (isnan(c->min) || isnan(c->max) || c->min > c->max)) {
      snprintf(err, errlen, "channel %s: range %g..%g is empty", name, c->min, c->max);
      return -1;
    }
    if (isnan(c->stale_s)) {
      snprintf(err, errlen, "channel %s: stale_s is not a number", name);
      return -1;
    }
  }
  return 0;
}

int RMP_MakePlan(const RMP_Map *m, RMP_Plan *p, char *err, size_t errlen)
{
  memset(p, 0, sizeof *p);
  if (RMP_MapCheck(m, err, errlen) < 0)
    return -1;
  for (int t = 0; t < RMP_TABLE_COUNT; t++) {
    int idx[RMP_CHANNEL_COUNT];
    int n = 0;
    for (int i = 0; i < RMP_CHANNEL_COUNT; i++) {
      if (!m->ch[i].enabled || (int)m->ch[i].table != t)
        continue;
      /* Insertion sort by address: ten channels at most. */
      int k = n++;
      while (k > 0 && m->ch[idx[k - 1]].address > m->ch[i].address) {
        idx[k] = idx[k - 1];
        k--;
      }
      idx[k] = i;
    }
    unsigned limit = limit_of(m, (RMP_Table)t);
    RMP_Block *cur = NULL;
    unsigned cur_end = 0; /* one past the last address of cur */
    for (int k = 0; k < n; k++) {
      const RMP_ChannelConfig *c = &m->ch[idx[k]];
      unsigned start = c->address, end = c->address + channel_width(c);
      unsigned new_end = end > cur_end ? end : cur_end;
      /* Greedy in address order gives the fewest requests for a fixed gap and limit. */
      if (cur != NULL && (start <= cur_end || start - cur_end <= m->gap) &&
          new_end - cur->start <= limit) {
        cur_end = new_end;
        cur->count = (uint16_t)(cur_end - cur->start);
      } else {
        cur = &p->block[p->n++];
        cur->table = (RMP_Table)t;
        cur->start = (uint16_t)start;
        cur_end = end;
        cur->count = (uint16_t)(end - start);
        cur->channels = 0;
      }
      cur->channels |= 1u << idx[k];
      p->block_of[idx[k]] = (unsigned char)(cur - p->block);
    }
  }
  return 0;
}

static uint16_t swap16(uint16_t w) { return (uint16_t)((w << 8) | (w >> 8)); }

uint64_t RMP_Assemble(const uint16_t *words, unsigned n, RMP_Order order)
{
  if (n <= 1)
    return words[0];
  int reversed = order == RMP_CDAB || order == RMP_DCBA;
  int swapped = order == RMP_BADC || order == RMP_DCBA;
  uint64_t v = 0;
  for (unsigned i = 0; i < n; i++) {
    uint16_t w = words[reversed ? n - 1 - i : i];
    v = (v << 16) | (swapped ? swap16(w) : w);
  }
  return v;
}

int RMP_ScaleRaw(const RMP_ChannelConfig *c, uint64_t raw, double *value)
{
  double x;
  if (RMP_TableIsBits(c->table)) {
    x = raw != 0 ? 1.0 : 0.0;
  } else {
    switch (c->type) {
    case RMP_U16: x = (double)(raw & 0xffffu); break;
    case RMP_S16: {
      uint16_t u = (uint16_t)raw;
      x = u >= 0x8000u ? (double)u - 65536.0 : (double)u;
      break;
    }
    case RMP_U32: x = (double)(raw & 0xffffffffu); break;
    case RMP_S32: {
      uint32_t u = (uint32_t)raw;
      x = u >= 0x80000000u ? (double)u - 4294967296.0 : (double)u;
      break;
    }
    case RMP_F32: {
      /* IEEE 754 binary32 in the 32 assembled bits. */
      uint32_t u = (uint32_t)raw;
      float f;
      memcpy(&f, &u, sizeof f);
      x = (double)f;
      break;
    }
    case RMP_U64: x = (double)raw; break; /* exact up to 2^53 */
    default: x = NAN; break;
    }
  }
  double v = x * c->scale + c->offset;
  if (!isfinite(v) || (c->has_range && (v < c->min || v > c->max))) {
    *value = NAN;
    return -1;
  }
  *value = v;
  return 0;
}

double RMP_ToCanonical(RMP_Unit unit, double v)
{
  switch (unit) {
  case RMP_UNIT_W: return v;
  case RMP_UNIT_KW: return v * 1000.0;
  case RMP_UNIT_HP: return UNT_HpToW(v);
  case RMP_UNIT_RPM: return v;
  case RMP_UNIT_M_S: return v;
  case RMP_UNIT_FT_MIN: return UNT_FtPerMinToMPerS(v);
  case RMP_UNIT_MM_MIN: return v;
  case RMP_UNIT_MM_S: return UNT_MmPerSToMmPerMin(v);
  case RMP_UNIT_M_MIN: return v * 1000.0;
  case RMP_UNIT_IN_MIN: return UNT_InchToMm(v); /* in/min -> mm/min: same factor as in -> mm */
  case RMP_UNIT_MM: return v;
  case RMP_UNIT_UM: return v / 1000.0; /* division keeps whole micrometres correctly rounded */
  case RMP_UNIT_IN: return UNT_InchToMm(v);
  case RMP_UNIT_COUNTER: return v;
  case RMP_UNIT_BOOL: return v != 0.0 ? 1.0 : 0.0;
  case RMP_UNIT_S: return v;
  case RMP_UNIT_MS: return v / 1000.0;
  default: return NAN;
  }
}

void RMP_Decode(const RMP_Map *m, const RMP_Plan *p, const RMP_BlockData *data, unsigned ok_blocks,
                double fallback_wheel_diameter_mm, SMP_Sample *out, double *clock_s, RMP_Values *vals)
{
  RMP_Values local;
  RMP_Values *v = vals ? vals : &local;
  v->read_mask = 0;
  v->rejected_mask = 0;
  for (int i = 0; i < RMP_CHANNEL_COUNT; i++) {
    const RMP_ChannelConfig *c = &m->ch[i];
    v->value[i] = NAN;
    v->raw[i] = 0;
    if (!c->enabled)
      continue;
    unsigned b = p->block_of[i];
    if (b >= p->n || !(ok_blocks & (1u << b)))
      continue;
    unsigned off = c->address - p->block[b].start;
    if (RMP_TableIsBits(c->table))
      v->raw[i] = data[b].bit[off] != 0;
    else
      v->raw[i] = RMP_Assemble(&data[b].reg[off], RMP_TypeWords((int)c->type), c->order);
    v->read_mask |= 1u << i;
    double x;
    if (RMP_ScaleRaw(c, v->raw[i], &x) == 0)
      x = RMP_ToCanonical(c->unit, x);
    if (!isfinite(x)) { /* also catches a unit factor overflowing a huge value */
      v->rejected_mask |= 1u << i;
      continue;
    }
    v->value[i] = x;
  }

  out->spindle_power_w = v->value[RMP_SPINDLE_POWER];
  out->spindle_speed_rpm = v->value[RMP_SPINDLE_SPEED];
  if (isnan(out->spindle_speed_rpm) && !isnan(v->value[RMP_WHEEL_SPEED])) {
    double d = v->value[RMP_WHEEL_DIAMETER];
    if (!(d > 0.0))
      d = fallback_wheel_diameter_mm;
    /* vs = pi * ds * n / 60000 solved for n (analysis/units.h); no diameter -> no speed. */
    out->spindle_speed_rpm = d > 0.0 ? UNT_SpindleSpeedFor(d, v->value[RMP_WHEEL_SPEED]) : NAN;
    if (isinf(out->spindle_speed_rpm)) { /* a huge speed or a tiny diameter: rejected like a bad read */
      out->spindle_speed_rpm = NAN;
      v->value[RMP_WHEEL_SPEED] = NAN;
      v->rejected_mask |= 1u << RMP_WHEEL_SPEED;
    }
  }
  out->work_speed_mm_min = v->value[RMP_WORK_SPEED];
  out->infeed_position_mm = v->value[RMP_INFEED_POSITION];
  out->depth_of_cut_mm = v->value[RMP_DEPTH_OF_CUT];
  out->wheel_diameter_mm = v->value[RMP_WHEEL_DIAMETER];
  out->dress_count = v->value[RMP_DRESS_COUNT];
  out->grinding = v->value[RMP_GRINDING];
  *clock_s = v->value[RMP_CLOCK];
}
