/* fuzz_regmap.c: libFuzzer target for Modbus register decoding: RMP_MakePlan, RMP_Decode, RMP_Assemble, RMP_ScaleRaw. */
#include <float.h>
#include <math.h>
#include <stddef.h>
#include <stdint.h>
#include <string.h>

#include "fuzzcheck.h"
#include "regmap.h"

/* The input, read front to back; past its end every byte is 0. Layout (see
 * regmap_seeds.py, which writes the seeds): map settings, then per channel its
 * flags, order and type, unit, address, numbers; then words for RMP_Assemble,
 * a lone channel for RMP_ScaleRaw, then the contents of each planned block. */
typedef struct input {
  const uint8_t *p;
  size_t left;
} input;

static uint8_t byte(input *in)
{
  if (!in->left)
    return 0;
  in->left--;
  return *in->p++;
}
static uint16_t word(input *in) { return (uint16_t)(byte(in) << 8 | byte(in)); }
static uint64_t raw64(input *in)
{
  uint64_t v = 0;
  for (int i = 0; i < 8; i++)
    v = v << 8 | byte(in);
  return v;
}

/* Numbers a config can hold and the edges it should not: picked from a table
 * so that the fuzzer reaches them, or any 64-bit pattern. */
static double number(input *in)
{
  static const double table[] = {0.0, 1.0, -1.0, 0.1, 0.001, 0.0001, 1000.0, 65535.0, 1e12, -1e12, 1e-12,
                                 1e300, -1e300, 1e-300, DBL_MAX, -DBL_MAX, DBL_MIN, 4503599627370496.0,
                                 9007199254740993.0, 3.4e38, NAN, INFINITY, -INFINITY, -0.0};
  uint8_t sel = byte(in);
  if (sel < 0xf0)
    return table[sel % (sizeof table / sizeof table[0])];
  uint64_t bits = raw64(in);
  double d;
  memcpy(&d, &bits, sizeof d);
  return d;
}

/* The value as the wire carries it: each register big-endian (Modbus
 * Application Protocol Specification V1.1b3, 4.2), then the bytes put in
 * the order regmap.h defines (abcd most significant first ... dcba fully
 * reversed; the names are common practice, no source). */
static uint64_t reference_assemble(const uint16_t *words, unsigned n, RMP_Order order)
{
  uint8_t wire[8], v[8];
  for (unsigned k = 0; k < n; k++) {
    wire[2 * k] = (uint8_t)(words[k] >> 8);
    wire[2 * k + 1] = (uint8_t)words[k];
  }
  unsigned bytes = 2 * n;
  for (unsigned i = 0; i < bytes; i++) {
    unsigned from = i;
    if (n > 1) {
      switch (order) {
      case RMP_ABCD: from = i; break;
      case RMP_BADC: from = i ^ 1u; break;
      case RMP_CDAB: from = (bytes - 1 - i) ^ 1u; break;
      default: from = bytes - 1 - i; break;
      }
    }
    v[i] = wire[from];
  }
  uint64_t r = 0;
  for (unsigned i = 0; i < bytes; i++)
    r = r << 8 | v[i];
  return r;
}

/* The raw count as a number: two's complement for signed types (C17
 * 6.3.1.3 conversions of exact-width types on this two's complement
 * machine), IEEE 754 binary32 for f32. */
static double reference_count(const RMP_ChannelConfig *c, uint64_t raw)
{
  if (RMP_TableIsBits(c->table))
    return raw != 0;
  switch (c->type) {
  case RMP_U16: return (double)(uint16_t)raw;
  case RMP_S16: return (double)(int16_t)(uint16_t)raw;
  case RMP_U32: return (double)(uint32_t)raw;
  case RMP_S32: return (double)(int32_t)(uint32_t)raw;
  case RMP_F32: {
    uint32_t u = (uint32_t)raw;
    float f;
    memcpy(&f, &u, sizeof f);
    return f;
  }
  default: return (double)raw;
  }
}

static void check_assemble(input *in)
{
  uint16_t w[4];
  for (int i = 0; i < 4; i++)
    w[i] = word(in);
  static const unsigned sizes[] = {1, 2, 4};
  for (int s = 0; s < 3; s++)
    for (int o = 0; o < RMP_ORDER_COUNT; o++) {
      uint64_t got = RMP_Assemble(w, sizes[s], (RMP_Order)o);
      uint64_t want = reference_assemble(w, sizes[s], (RMP_Order)o);
      if (got != want)
        FZ_Fail("RMP_Assemble %u words %s: %#llx, expected %#llx", sizes[s], RMP_OrderName(o),
                (unsigned long long)got, (unsigned long long)want);
    }
}

static void check_scale(const RMP_ChannelConfig *c, uint64_t raw)
{
  double v = 12345.0;
  int rc = RMP_ScaleRaw(c, raw, &v);
  FZ_CheckValue("RMP_ScaleRaw", v);
  if ((rc == 0) != !isnan(v))
    FZ_Fail("RMP_ScaleRaw returned %d with %g", rc, v);
  double want = reference_count(c, raw) * c->scale + c->offset;
  int accept = isfinite(want) && !(c->has_range && (want < c->min || want > c->max));
  if (accept != (rc == 0) || (accept && v != want))
    FZ_Fail("RMP_ScaleRaw %s raw %#llx: %g (rc %d), expected %g", RMP_TypeName(c->type), (unsigned long long)raw, v,
            rc, want);
}

static void check_plan(const RMP_Map *m, const RMP_Plan *p)
{
  if (p->n > RMP_MAX_BLOCKS)
    FZ_Fail("%u blocks", p->n);
  unsigned seen = 0;
  for (unsigned b = 0; b < p->n; b++) {
    const RMP_Block *k = &p->block[b];
    unsigned limit = RMP_TableIsBits(k->table) ? (m->max_bits ? m->max_bits : RMP_MAX_BITS)
                                               : (m->max_regs ? m->max_regs : RMP_MAX_REGS);
    if (k->count < 1 || k->count > limit || (unsigned)k->start + k->count > 65536u)
      FZ_Fail("block %u: start %u count %u (limit %u)", b, k->start, k->count, limit);
    if (k->channels & seen)
      FZ_Fail("a channel in two blocks");
    seen |= k->channels;
  }
  for (int i = 0; i < RMP_CHANNEL_COUNT; i++) {
    const RMP_ChannelConfig *c = &m->ch[i];
    if (!c->enabled) {
      if (seen & (1u << i))
        FZ_Fail("channel %s planned while disabled", RMP_ChannelName(i));
      continue;
    }
    unsigned b = p->block_of[i];
    unsigned width = RMP_TableIsBits(c->table) ? 1 : RMP_TypeWords(c->type);
    if (b >= p->n || !(p->block[b].channels & (1u << i)) || p->block[b].table != c->table ||
        c->address < p->block[b].start || c->address + width > (unsigned)p->block[b].start + p->block[b].count)
      FZ_Fail("channel %s at %u is not inside its block", RMP_ChannelName(i), c->address);
  }
}

static RMP_BlockData blocks[RMP_MAX_BLOCKS]; /* large: kept out of the stack */

static void check_decode(const RMP_Map *m, const RMP_Plan *p, unsigned ok, double fallback)
{
  SMP_Sample s;
  SMP_Clear(&s, 1.0);
  double clock = 0.0;
  RMP_Values v;
  RMP_Decode(m, p, blocks, ok, fallback, &s, &clock, &v);
  const double *f = &s.time;
  for (int c = 0; c <= SMP_CHANNELS; c++)
    FZ_CheckValue("sample field", f[c]);
  FZ_CheckValue("clock", clock);
  if (s.time != 1.0)
    FZ_Fail("RMP_Decode changed the time");
  if (v.rejected_mask & ~v.read_mask)
    FZ_Fail("rejected without being read");
  for (int i = 0; i < RMP_CHANNEL_COUNT; i++) {
    const RMP_ChannelConfig *c = &m->ch[i];
    unsigned bit = 1u << i;
    int read = c->enabled && (ok & (1u << p->block_of[i]));
    if (read != !!(v.read_mask & bit))
      FZ_Fail("channel %s read %d, mask says %d", RMP_ChannelName(i), read, !!(v.read_mask & bit));
    FZ_CheckValue("channel value", v.value[i]);
    if (!read) {
      if (!isnan(v.value[i]))
        FZ_Fail("channel %s has a value without a read", RMP_ChannelName(i));
      continue;
    }
    /* No value comes out unchecked: NaN and only NaN for a rejection. */
    if (isnan(v.value[i]) != !!(v.rejected_mask & bit))
      FZ_Fail("channel %s: value %g, rejected %d", RMP_ChannelName(i), v.value[i], !!(v.rejected_mask & bit));
    const RMP_Block *k = &p->block[p->block_of[i]];
    const RMP_BlockData *d = &blocks[p->block_of[i]];
    unsigned off = c->address - k->start;
    uint64_t raw = RMP_TableIsBits(c->table) ? d->bit[off] != 0
                                             : reference_assemble(&d->reg[off], RMP_TypeWords(c->type), c->order);
    if (raw != v.raw[i])
      FZ_Fail("channel %s: raw %#llx, expected %#llx", RMP_ChannelName(i), (unsigned long long)v.raw[i],
              (unsigned long long)raw);
    check_scale(c, raw);
  }
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
  input in = {data, size};
  RMP_Map m;
  RMP_MapInit(&m);
  uint8_t g = byte(&in);
  m.gap = g < 0xf0 ? g % 130u : word(&in) * 2u; /* past 124 and 65535 too: RMP_MapCheck must refuse */
  m.max_regs = byte(&in) % 130u;
  m.max_bits = word(&in) % 2100u;
  double fallback = number(&in);
  unsigned ok = byte(&in) | (unsigned)byte(&in) << 8;
  unsigned base = word(&in);
  for (int i = 0; i < RMP_CHANNEL_COUNT; i++) {
    RMP_ChannelConfig *c = &m.ch[i];
    uint8_t flags = byte(&in);
    c->enabled = flags & 1;
    c->has_range = (flags >> 1) & 1;
    c->table = (RMP_Table)((flags >> 2) % RMP_TABLE_COUNT);
    uint8_t how = byte(&in);
    c->order = (RMP_Order)(how % RMP_ORDER_COUNT);
    c->type = (RMP_Type)((how >> 2) % RMP_TYPE_COUNT);
    if (flags & 0x10)
      c->unit = (RMP_Unit)(byte(&in) % RMP_UNIT_TOTAL);
    uint8_t a = byte(&in);
    c->address = a < 0xf0 ? (base + a) % 65536u : word(&in);
    if (flags & 0x20) {
      c->scale = number(&in);
      c->offset = number(&in);
    }
    if (c->has_range) {
      c->min = number(&in);
      c->max = number(&in);
    }
    if (flags & 0x40)
      c->stale_s = number(&in);
  }
  check_assemble(&in);
  RMP_ChannelConfig lone;
  RMP_ChannelInit(&lone, RMP_SPINDLE_POWER);
  lone.type = (RMP_Type)(byte(&in) % RMP_TYPE_COUNT);
  lone.scale = number(&in);
  lone.offset = number(&in);
  if (isfinite(lone.scale) && lone.scale != 0.0 && isfinite(lone.offset))
    check_scale(&lone, raw64(&in));

  RMP_Plan p;
  char err[256];
  if (RMP_MakePlan(&m, &p, err, sizeof err) != 0) {
    FZ_CheckMessage("RMP_MakePlan", err, sizeof err, "");
    return 0;
  }
  check_plan(&m, &p);
  for (unsigned b = 0; b < p.n; b++) {
    if (!RMP_TableIsBits(p.block[b].table)) {
      for (unsigned r = 0; r < p.block[b].count && r < RMP_MAX_REGS; r++)
        blocks[b].reg[r] = word(&in);
      continue;
    }
    for (unsigned r = 0; r < p.block[b].count && r < RMP_MAX_BITS; r += 8) {
      uint8_t bits = byte(&in);
      for (unsigned k = 0; k < 8 && r + k < RMP_MAX_BITS; k++)
        blocks[b].bit[r + k] = (bits >> k) & 1;
    }
  }
  check_decode(&m, &p, ok, fallback);
  return 0;
}
