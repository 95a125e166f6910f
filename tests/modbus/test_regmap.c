/* test_regmap.c: Criterion tests of the register map: types, word orders, units, ranges, planning. */
#include <criterion/criterion.h>
#include <math.h>
#include <string.h>

#include "regmap.h"
#include "units.h"

/* Register words are written by hand from the value's bytes A B C D (A most significant) under
 * the rule of the Modbus Application Protocol Specification V1.1b3, 4.2: a register travels
 * big-endian, high byte first; libmodbus hands it over as the 16-bit value AB. The bytes of each
 * value are those of Python's struct module (/usr/bin/python3, struct.pack('>I'/'>i'/'>f'/'>Q')),
 * quoted beside each value. */

static RMP_ChannelConfig chan(RMP_Type type, RMP_Order order)
{
  RMP_ChannelConfig c;
  RMP_ChannelInit(&c, RMP_SPINDLE_POWER);
  c.enabled = 1;
  c.type = type;
  c.order = order;
  return c;
}

static double decode_words(RMP_Type type, RMP_Order order, const uint16_t *w)
{
  RMP_ChannelConfig c = chan(type, order);
  double v;
  uint64_t raw = RMP_Assemble(w, RMP_TypeWords(type), order);
  if (RMP_ScaleRaw(&c, raw, &v) < 0)
    return NAN;
  return v;
}

/* One value laid out in the four orders: words[order][i]. */
struct layout {
  RMP_Type type;
  double expect;
  uint16_t words[RMP_ORDER_COUNT][4];
};

static const struct layout layouts[] = {
  /* struct.pack('>I', 0xDEADBEEF) = de ad be ef */
  {RMP_U32, 3735928559.0,
   {{0xDEAD, 0xBEEF}, {0xADDE, 0xEFBE}, {0xBEEF, 0xDEAD}, {0xEFBE, 0xADDE}}},
  /* struct.pack('>i', -123456789) = f8 a4 32 eb */
  {RMP_S32, -123456789.0,
   {{0xF8A4, 0x32EB}, {0xA4F8, 0xEB32}, {0x32EB, 0xF8A4}, {0xEB32, 0xA4F8}}},
  /* struct.pack('>f', 12.5) = 41 48 00 00 */
  {RMP_F32, 12.5, {{0x4148, 0x0000}, {0x4841, 0x0000}, {0x0000, 0x4148}, {0x0000, 0x4841}}},
  /* struct.pack('>f', -0.15625) = be 20 00 00 */
  {RMP_F32, -0.15625, {{0xBE20, 0x0000}, {0x20BE, 0x0000}, {0x0000, 0xBE20}, {0x0000, 0x20BE}}},
  /* struct.pack('>f', 1234.5678) = 44 9a 52 2b; the float nearest 1234.5678 is 1234.5677490234375 */
  {RMP_F32, 1234.5677490234375,
   {{0x449A, 0x522B}, {0x9A44, 0x2B52}, {0x522B, 0x449A}, {0x2B52, 0x9A44}}},
  /* struct.pack('>Q', 0x0001234567890ABC) = 00 01 23 45 67 89 0a bc = 320255973460668 */
  {RMP_U64, 320255973460668.0,
   {{0x0001, 0x2345, 0x6789, 0x0ABC},
    {0x0100, 0x4523, 0x8967, 0xBC0A},
    {0x0ABC, 0x6789, 0x2345, 0x0001},
    {0xBC0A, 0x8967, 0x4523, 0x0100}}},
  /* struct.pack('>Q', 1700000000123) = 00 00 01 8b cf e5 68 7b (a clock in ms) */
  {RMP_U64, 1700000000123.0,
   {{0x0000, 0x018B, 0xCFE5, 0x687B},
    {0x0000, 0x8B01, 0xE5CF, 0x7B68},
    {0x687B, 0xCFE5, 0x018B, 0x0000},
    {0x7B68, 0xE5CF, 0x8B01, 0x0000}}},
};

Test(regmap, every_32_and_64_bit_type_in_every_order)
{
  for (size_t i = 0; i < sizeof layouts / sizeof layouts[0]; i++)
    for (int o = 0; o < RMP_ORDER_COUNT; o++) {
      double v = decode_words(layouts[i].type, (RMP_Order)o, layouts[i].words[o]);
      cr_expect(v == layouts[i].expect, "%s %s: got %.17g, expected %.17g",
                RMP_TypeName(layouts[i].type), RMP_OrderName(o), v, layouts[i].expect);
    }
}

Test(regmap, sixteen_bit_types_ignore_order)
{
  /* struct.pack('>H', 0xBEEF) = be ef; struct.pack('>h', -1234) = fb 2e */
  uint16_t u = 0xBEEF, s = 0xFB2E, min = 0x8000, max = 0x7FFF;
  for (int o = 0; o < RMP_ORDER_COUNT; o++) {
    cr_expect(decode_words(RMP_U16, (RMP_Order)o, &u) == 48879.0);
    cr_expect(decode_words(RMP_S16, (RMP_Order)o, &s) == -1234.0);
  }
  cr_expect(decode_words(RMP_S16, RMP_ABCD, &min) == -32768.0);
  cr_expect(decode_words(RMP_S16, RMP_ABCD, &max) == 32767.0);
  cr_expect(decode_words(RMP_U16, RMP_ABCD, &min) == 32768.0);
}

Test(regmap, signed_and_unsigned_32_bit_limits)
{
  uint16_t all[2] = {0xFFFF, 0xFFFF}, top[2] = {0x8000, 0x0000}, pos[2] = {0x7FFF, 0xFFFF};
  cr_expect(decode_words(RMP_U32, RMP_ABCD, all) == 4294967295.0);
  cr_expect(decode_words(RMP_S32, RMP_ABCD, all) == -1.0);
  cr_expect(decode_words(RMP_S32, RMP_ABCD, top) == -2147483648.0);
  cr_expect(decode_words(RMP_S32, RMP_ABCD, pos) == 2147483647.0);
  /* The same top bit in cdab order sits in the second word. */
  uint16_t top_cdab[2] = {0x0000, 0x8000};
  cr_expect(decode_words(RMP_S32, RMP_CDAB, top_cdab) == -2147483648.0);
}

Test(regmap, assemble_follows_the_order_names)
{
  uint16_t w[4] = {0x0102, 0x0304, 0x0506, 0x0708};
  cr_expect(RMP_Assemble(w, 2, RMP_ABCD) == 0x01020304u);
  cr_expect(RMP_Assemble(w, 2, RMP_BADC) == 0x02010403u);
  cr_expect(RMP_Assemble(w, 2, RMP_CDAB) == 0x03040102u);
  cr_expect(RMP_Assemble(w, 2, RMP_DCBA) == 0x04030201u);
  cr_expect(RMP_Assemble(w, 4, RMP_ABCD) == 0x0102030405060708u);
  cr_expect(RMP_Assemble(w, 4, RMP_DCBA) == 0x0807060504030201u);
  cr_expect(RMP_Assemble(w, 4, RMP_CDAB) == 0x0708050603040102u);
  cr_expect(RMP_Assemble(w, 4, RMP_BADC) == 0x0201040306050807u);
}

Test(regmap, nan_and_infinite_floats_are_rejected)
{
  /* IEEE 754 binary32: quiet NaN 7fc00000, +inf 7f800000, -inf ff800000
   * (struct.pack('>f', float('nan'/'inf'/'-inf'))). */
  uint16_t qnan[2] = {0x7FC0, 0x0000}, pinf[2] = {0x7F80, 0x0000}, ninf[2] = {0xFF80, 0x0000};
  uint16_t snan[2] = {0x7F80, 0x0001};
  RMP_ChannelConfig c = chan(RMP_F32, RMP_ABCD);
  double v = 0;
  cr_expect(RMP_ScaleRaw(&c, RMP_Assemble(qnan, 2, RMP_ABCD), &v) == -1 && isnan(v));
  cr_expect(RMP_ScaleRaw(&c, RMP_Assemble(pinf, 2, RMP_ABCD), &v) == -1 && isnan(v));
  cr_expect(RMP_ScaleRaw(&c, RMP_Assemble(ninf, 2, RMP_ABCD), &v) == -1 && isnan(v));
  cr_expect(RMP_ScaleRaw(&c, RMP_Assemble(snan, 2, RMP_ABCD), &v) == -1 && isnan(v));
  /* The largest finite float times a big scale overflows: rejected too. */
  uint16_t fmax[2] = {0x7F7F, 0xFFFF};
  c.scale = 1e300;
  cr_expect(RMP_ScaleRaw(&c, RMP_Assemble(fmax, 2, RMP_ABCD), &v) == -1);
}

Test(regmap, scale_and_offset)
{
  RMP_ChannelConfig c = chan(RMP_S16, RMP_ABCD);
  double v;
  c.scale = 0.125; /* binary fractions: exact */
  c.offset = -2.0;
  cr_expect(RMP_ScaleRaw(&c, 0xFFF0 /* -16 */, &v) == 0);
  cr_expect(v == -4.0, "%g", v);
  c.scale = 0.01; /* typical "hundredths" register */
  c.offset = 0.0;
  cr_expect(RMP_ScaleRaw(&c, 1234, &v) == 0);
  cr_expect_float_eq(v, 12.34, 1e-12);
}

Test(regmap, scaled_integer_of_the_manual)
{
  /* docs/modbus.md: s16 in hundredths of a kW with an offset of -0.2 kW. */
  RMP_ChannelConfig c = chan(RMP_S16, RMP_ABCD);
  double v;
  c.scale = 0.01;
  c.offset = -0.2;
  c.unit = RMP_UNIT_KW;
  cr_expect(RMP_ScaleRaw(&c, 0x04D2, &v) == 0);
  cr_expect_float_eq(RMP_ToCanonical(c.unit, v), 12140.0, 1e-9);
  cr_expect(RMP_ScaleRaw(&c, 0xFFCE, &v) == 0);
  cr_expect_float_eq(RMP_ToCanonical(c.unit, v), -700.0, 1e-9);
  c.has_range = 1;
  c.min = 0.0;
  c.max = 30.0;
  cr_expect(RMP_ScaleRaw(&c, 0xFFCE, &v) == -1);
}

Test(regmap, plausible_range_is_inclusive_and_in_configured_unit)
{
  RMP_ChannelConfig c = chan(RMP_U16, RMP_ABCD);
  double v;
  c.unit = RMP_UNIT_KW;
  c.scale = 0.1;
  c.has_range = 1;
  c.min = 0.0;
  c.max = 30.0; /* kW */
  cr_expect(RMP_ScaleRaw(&c, 300, &v) == 0 && v == 30.0);
  cr_expect(RMP_ScaleRaw(&c, 301, &v) == -1 && isnan(v));
  cr_expect(RMP_ScaleRaw(&c, 0, &v) == 0 && v == 0.0);
}

Test(regmap, units_convert_to_the_sample_units)
{
  /* Exact definitions, NIST SP 811 Appendix B: 1 in = 25.4 mm, 1 ft = 0.3048 m,
   * 1 hp = 745.699 871 582 270 22 W. */
  cr_expect(RMP_ToCanonical(RMP_UNIT_W, 1500.0) == 1500.0);
  cr_expect(RMP_ToCanonical(RMP_UNIT_KW, 2.5) == 2500.0);
  cr_expect_float_eq(RMP_ToCanonical(RMP_UNIT_HP, 1.0), 745.69987158227022, 1e-9);
  cr_expect(RMP_ToCanonical(RMP_UNIT_RPM, 3000.0) == 3000.0);
  cr_expect(RMP_ToCanonical(RMP_UNIT_M_S, 35.0) == 35.0);
  cr_expect_float_eq(RMP_ToCanonical(RMP_UNIT_FT_MIN, 6000.0), 30.48, 1e-12);
  cr_expect(RMP_ToCanonical(RMP_UNIT_MM_MIN, 12000.0) == 12000.0);
  cr_expect(RMP_ToCanonical(RMP_UNIT_MM_S, 200.0) == 12000.0);
  cr_expect(RMP_ToCanonical(RMP_UNIT_M_MIN, 12.0) == 12000.0);
  cr_expect_float_eq(RMP_ToCanonical(RMP_UNIT_IN_MIN, 10.0), 254.0, 1e-12);
  cr_expect(RMP_ToCanonical(RMP_UNIT_MM, 0.02) == 0.02);
  cr_expect(RMP_ToCanonical(RMP_UNIT_UM, 20.0) == 0.02);
  cr_expect_float_eq(RMP_ToCanonical(RMP_UNIT_IN, 2.0), 50.8, 1e-12);
  cr_expect(RMP_ToCanonical(RMP_UNIT_COUNTER, 17.0) == 17.0);
  cr_expect(RMP_ToCanonical(RMP_UNIT_BOOL, 7.0) == 1.0);
  cr_expect(RMP_ToCanonical(RMP_UNIT_BOOL, 0.0) == 0.0);
  cr_expect(RMP_ToCanonical(RMP_UNIT_BOOL, -1.0) == 1.0);
  cr_expect(RMP_ToCanonical(RMP_UNIT_S, 12.5) == 12.5);
  cr_expect(RMP_ToCanonical(RMP_UNIT_MS, 1500.0) == 1.5);
}

Test(regmap, names_parse_and_unknown_names_fail)
{
  cr_expect(RMP_ChannelFromName("spindle_power") == RMP_SPINDLE_POWER);
  cr_expect(RMP_ChannelFromName("clock") == RMP_CLOCK);
  cr_expect(RMP_ChannelFromName("wheel_diameter") == RMP_WHEEL_DIAMETER);
  cr_expect(RMP_ChannelFromName("spindle") == -1);
  for (int i = 0; i < RMP_CHANNEL_COUNT; i++)
    cr_expect(RMP_ChannelFromName(RMP_ChannelName(i)) == i);
  cr_expect(RMP_ChannelName(RMP_CHANNEL_COUNT) == NULL);
  cr_expect(RMP_ParseTable("holding") == RMP_HOLDING);
  cr_expect(RMP_ParseTable("discrete") == RMP_DISCRETE);
  cr_expect(RMP_ParseTable("register") == -1);
  cr_expect(RMP_ParseType("f32") == RMP_F32);
  cr_expect(RMP_ParseType("u64") == RMP_U64);
  cr_expect(RMP_ParseType("float") == -1);
  cr_expect(RMP_ParseOrder("cdab") == RMP_CDAB);
  cr_expect(RMP_ParseOrder("abdc") == -1);
  cr_expect(RMP_ParseUnit("kW") == RMP_UNIT_KW);
  cr_expect(RMP_ParseUnit("kw") == RMP_UNIT_KW);
  cr_expect(RMP_ParseUnit("ft/min") == RMP_UNIT_FT_MIN);
  cr_expect(RMP_ParseUnit("\xc2\xb5m") == RMP_UNIT_UM);
  cr_expect(RMP_ParseUnit("1/min") == RMP_UNIT_RPM);
  cr_expect(RMP_ParseUnit("furlong") == -1);
  cr_expect(RMP_ParseUnit(NULL) == -1);
  cr_expect_str_eq(RMP_TypeList(), "u16, s16, u32, s32, f32, u64");
  cr_expect(RMP_UnitAllowed(RMP_SPINDLE_POWER, RMP_UNIT_HP));
  cr_expect(!RMP_UnitAllowed(RMP_SPINDLE_POWER, RMP_UNIT_RPM));
  cr_expect(RMP_UnitAllowed(RMP_WORK_SPEED, RMP_UNIT_IN_MIN));
  cr_expect(!RMP_UnitAllowed(RMP_CLOCK, RMP_UNIT_MM));
  cr_expect_str_eq(RMP_UnitList(RMP_SPINDLE_POWER), "W, kW, hp");
  for (int i = 0; i < RMP_CHANNEL_COUNT; i++)
    cr_expect(RMP_UnitAllowed(i, RMP_DefaultUnit(i)));
}

/* ---- planning ---- */

static void add(RMP_Map *m, int ch, RMP_Table t, unsigned addr, RMP_Type type)
{
  m->ch[ch].enabled = 1;
  m->ch[ch].table = t;
  m->ch[ch].address = addr;
  m->ch[ch].type = type;
}

static RMP_Plan plan_of(const RMP_Map *m)
{
  RMP_Plan p;
  char err[256] = "";
  cr_assert(RMP_MakePlan(m, &p, err, sizeof err) == 0, "%s", err);
  return p;
}

Test(plan, gap_decides_merging)
{
  RMP_Map m;
  RMP_MapInit(&m);
  add(&m, RMP_SPINDLE_POWER, RMP_HOLDING, 0, RMP_U16);
  add(&m, RMP_WORK_SPEED, RMP_HOLDING, 5, RMP_U32);     /* 5..6: hole of 4 after 0 */
  add(&m, RMP_DRESS_COUNT, RMP_HOLDING, 15, RMP_U16);   /* hole 7..14 = 8 registers: merged */
  add(&m, RMP_GRINDING, RMP_HOLDING, 25, RMP_U16);      /* hole 16..24 = 9: new request */
  RMP_Plan p = plan_of(&m);
  cr_assert_eq(p.n, 2);
  cr_expect_eq(p.block[0].start, 0);
  cr_expect_eq(p.block[0].count, 16);
  cr_expect_eq(p.block[0].channels,
               (1u << RMP_SPINDLE_POWER) | (1u << RMP_WORK_SPEED) | (1u << RMP_DRESS_COUNT));
  cr_expect_eq(p.block[1].start, 25);
  cr_expect_eq(p.block[1].count, 1);
  cr_expect_eq(p.block_of[RMP_GRINDING], 1);
  m.gap = 9;
  p = plan_of(&m);
  cr_expect_eq(p.n, 1);
  cr_expect_eq(p.block[0].count, 26);
  m.gap = 0; /* only adjacent registers share a request */
  p = plan_of(&m);
  cr_expect_eq(p.n, 4);
}

Test(plan, order_of_configuration_does_not_matter_and_overlaps_merge)
{
  RMP_Map m;
  RMP_MapInit(&m);
  add(&m, RMP_SPINDLE_POWER, RMP_INPUT, 40, RMP_F32);
  add(&m, RMP_SPINDLE_SPEED, RMP_INPUT, 2, RMP_U16);
  add(&m, RMP_WORK_SPEED, RMP_INPUT, 41, RMP_U16); /* inside the f32 at 40..41 */
  add(&m, RMP_CLOCK, RMP_INPUT, 0, RMP_U64);       /* 0..3 */
  RMP_Plan p = plan_of(&m);
  cr_assert_eq(p.n, 2);
  cr_expect_eq(p.block[0].start, 0);
  cr_expect_eq(p.block[0].count, 4);
  cr_expect_eq(p.block[1].start, 40);
  cr_expect_eq(p.block[1].count, 2);
}

Test(plan, at_most_125_registers_per_read)
{
  /* Modbus Application Protocol Specification V1.1b3, 6.3: quantity of registers 1 to 125. */
  RMP_Map m;
  RMP_MapInit(&m);
  m.gap = 1000;
  add(&m, RMP_SPINDLE_POWER, RMP_HOLDING, 0, RMP_U16);
  add(&m, RMP_SPINDLE_SPEED, RMP_HOLDING, 100, RMP_U32);
  add(&m, RMP_WORK_SPEED, RMP_HOLDING, 124, RMP_U16); /* 0..124: exactly 125 */
  RMP_Plan p = plan_of(&m);
  cr_expect_eq(p.n, 1);
  cr_expect_eq(p.block[0].count, 125);
  m.ch[RMP_WORK_SPEED].address = 125; /* 126 registers: split */
  p = plan_of(&m);
  cr_assert_eq(p.n, 2);
  cr_expect_eq(p.block[0].count, 102);
  cr_expect_eq(p.block[1].start, 125);
  m.ch[RMP_WORK_SPEED].address = 122; /* a u64 at 122..125 passes the limit too */
  m.ch[RMP_WORK_SPEED].type = RMP_U64;
  p = plan_of(&m);
  cr_assert_eq(p.n, 2);
  cr_expect_eq(p.block[1].start, 122);
  cr_expect_eq(p.block[1].count, 4);
  for (unsigned i = 0; i < p.n; i++)
    cr_expect(p.block[i].count >= 1 && p.block[i].count <= 125);
}

Test(plan, at_most_2000_bits_per_read)
{
  /* V1.1b3, 6.1 (read coils) and 6.2 (read discrete inputs): quantity 1 to 2000. */
  RMP_Map m;
  RMP_MapInit(&m);
  m.gap = 5000;
  add(&m, RMP_GRINDING, RMP_COIL, 0, RMP_U16);
  add(&m, RMP_DRESS_COUNT, RMP_COIL, 1999, RMP_U64); /* type ignored: one bit */
  RMP_Plan p = plan_of(&m);
  cr_assert_eq(p.n, 1);
  cr_expect_eq(p.block[0].count, 2000);
  m.ch[RMP_DRESS_COUNT].address = 2000;
  p = plan_of(&m);
  cr_assert_eq(p.n, 2);
  cr_expect_eq(p.block[0].count, 1);
  cr_expect_eq(p.block[1].start, 2000);
  cr_expect_eq(p.block[1].count, 1);
  m.ch[RMP_DRESS_COUNT].table = RMP_DISCRETE; /* other table: never merged */
  m.ch[RMP_DRESS_COUNT].address = 1;
  p = plan_of(&m);
  cr_expect_eq(p.n, 2);
}

Test(plan, several_tables_in_table_order)
{
  RMP_Map m;
  RMP_MapInit(&m);
  add(&m, RMP_GRINDING, RMP_DISCRETE, 0, RMP_U16);
  add(&m, RMP_SPINDLE_POWER, RMP_INPUT, 0, RMP_F32);
  add(&m, RMP_DRESS_COUNT, RMP_COIL, 0, RMP_U16);
  add(&m, RMP_CLOCK, RMP_HOLDING, 0, RMP_U64);
  add(&m, RMP_SPINDLE_SPEED, RMP_HOLDING, 4, RMP_U16);
  RMP_Plan p = plan_of(&m);
  cr_assert_eq(p.n, 4);
  cr_expect_eq(p.block[0].table, RMP_HOLDING);
  cr_expect_eq(p.block[0].count, 5);
  cr_expect_eq(p.block[1].table, RMP_INPUT);
  cr_expect_eq(p.block[2].table, RMP_COIL);
  cr_expect_eq(p.block[3].table, RMP_DISCRETE);
}

Test(plan, a_spread_map_is_split_at_the_limit)
{
  /* Ten u32 channels 40 registers apart with a huge gap: 0..361 needs 3 requests of <= 125. */
  RMP_Map m;
  RMP_MapInit(&m);
  m.gap = 65535;
  for (int i = 0; i < RMP_CHANNEL_COUNT; i++)
    add(&m, i, RMP_INPUT, (unsigned)i * 40u, RMP_U32);
  RMP_Plan p = plan_of(&m);
  cr_assert_eq(p.n, 3);
  cr_expect_eq(p.block[0].start, 0);   /* 0, 40, 80, 120 (..121) */
  cr_expect_eq(p.block[0].count, 122);
  cr_expect_eq(p.block[1].start, 160); /* 160, 200, 240, 280 (..281) */
  cr_expect_eq(p.block[1].count, 122);
  cr_expect_eq(p.block[2].start, 320); /* 320, 360 (..361) */
  cr_expect_eq(p.block[2].count, 42);
  unsigned all = 0;
  for (unsigned i = 0; i < p.n; i++) {
    cr_expect_eq(all & p.block[i].channels, 0);
    all |= p.block[i].channels;
  }
  cr_expect_eq(all, (1u << RMP_CHANNEL_COUNT) - 1);
  m.max_regs = 64; /* a device that accepts fewer registers per read: pairs of channels */
  p = plan_of(&m);
  cr_expect_eq(p.n, 5);
}

Test(plan, map_errors_name_the_channel)
{
  RMP_Map m;
  RMP_Plan p;
  char err[256];
  RMP_MapInit(&m);
  add(&m, RMP_CLOCK, RMP_HOLDING, 65533, RMP_U64);
  cr_expect(RMP_MakePlan(&m, &p, err, sizeof err) == -1);
  cr_expect(strstr(err, "clock") && strstr(err, "65533"), "%s", err);
  m.ch[RMP_CLOCK].address = 65532;
  cr_expect(RMP_MakePlan(&m, &p, err, sizeof err) == 0, "%s", err);
  m.ch[RMP_CLOCK].unit = RMP_UNIT_MM;
  cr_expect(RMP_MakePlan(&m, &p, err, sizeof err) == -1);
  cr_expect(strstr(err, "unit \"mm\"") && strstr(err, "s, ms"), "%s", err);
  m.ch[RMP_CLOCK].unit = RMP_UNIT_MS;
  m.ch[RMP_CLOCK].scale = 0.0;
  cr_expect(RMP_MakePlan(&m, &p, err, sizeof err) == -1);
  m.ch[RMP_CLOCK].scale = 1.0;
  m.ch[RMP_CLOCK].has_range = 1;
  m.ch[RMP_CLOCK].min = 5;
  m.ch[RMP_CLOCK].max = 1;
  cr_expect(RMP_MakePlan(&m, &p, err, sizeof err) == -1);
  m.ch[RMP_CLOCK].has_range = 0;
  m.max_regs = 126;
  cr_expect(RMP_MakePlan(&m, &p, err, sizeof err) == -1);
  m.max_regs = 3; /* a u64 cannot be read */
  cr_expect(RMP_MakePlan(&m, &p, err, sizeof err) == -1);
  cr_expect(strstr(err, "clock") != NULL, "%s", err);
}

/* ---- decoding into a sample ---- */

Test(decode, blocks_into_sample_with_rejections_and_missing_blocks)
{
  RMP_Map m;
  RMP_MapInit(&m);
  add(&m, RMP_SPINDLE_POWER, RMP_HOLDING, 0, RMP_F32);     /* kW */
  m.ch[RMP_SPINDLE_POWER].unit = RMP_UNIT_KW;
  add(&m, RMP_WHEEL_DIAMETER, RMP_HOLDING, 2, RMP_U16);    /* 0.1 mm, range 100..600 mm */
  m.ch[RMP_WHEEL_DIAMETER].scale = 0.1;
  m.ch[RMP_WHEEL_DIAMETER].has_range = 1;
  m.ch[RMP_WHEEL_DIAMETER].min = 100;
  m.ch[RMP_WHEEL_DIAMETER].max = 600;
  add(&m, RMP_CLOCK, RMP_HOLDING, 4, RMP_U64);             /* ms, cdab */
  m.ch[RMP_CLOCK].unit = RMP_UNIT_MS;
  m.ch[RMP_CLOCK].order = RMP_CDAB;
  add(&m, RMP_GRINDING, RMP_COIL, 3, RMP_U16);
  add(&m, RMP_DRESS_COUNT, RMP_INPUT, 100, RMP_U16);
  RMP_Plan p = plan_of(&m);
  cr_assert_eq(p.n, 3);

  static RMP_BlockData d[RMP_MAX_BLOCKS];
  memset(d, 0, sizeof d);
  /* struct.pack('>f', 12.5) = 41 48 00 00: 12.5 kW */
  d[0].reg[0] = 0x4148;
  d[0].reg[1] = 0x0000;
  d[0].reg[2] = 4000; /* 400.0 mm */
  /* 1700000000123 ms = 00 00 01 8b cf e5 68 7b, cdab: least significant word first */
  d[0].reg[4] = 0x687B;
  d[0].reg[5] = 0xCFE5;
  d[0].reg[6] = 0x018B;
  d[0].reg[7] = 0x0000;
  d[2].bit[0] = 1; /* the coil block starts at coil 3 */
  d[1].reg[0] = 99;

  SMP_Sample s;
  SMP_Clear(&s, 42.0);
  double clock;
  RMP_Values v;
  /* The input block (index 1) failed this poll. */
  RMP_Decode(&m, &p, d, (1u << 0) | (1u << 2), 0.0, &s, &clock, &v);
  cr_expect(s.time == 42.0);
  cr_expect(s.spindle_power_w == 12500.0, "%g", s.spindle_power_w);
  cr_expect(s.wheel_diameter_mm == 400.0, "%g", s.wheel_diameter_mm);
  cr_expect(clock == 1700000000123.0 / 1000.0, "%.17g", clock);
  cr_expect(s.grinding == 1.0);
  cr_expect(isnan(s.dress_count));
  cr_expect(isnan(s.spindle_speed_rpm) && isnan(s.work_speed_mm_min) && isnan(s.depth_of_cut_mm));
  cr_expect_eq(v.read_mask,
               (1u << RMP_SPINDLE_POWER) | (1u << RMP_WHEEL_DIAMETER) | (1u << RMP_CLOCK) |
                   (1u << RMP_GRINDING));
  cr_expect_eq(v.rejected_mask, 0);

  d[0].reg[2] = 6001; /* 600.1 mm: outside the plausible range */
  d[0].reg[0] = 0x7FC0; /* NaN */
  RMP_Decode(&m, &p, d, 7u, 0.0, &s, &clock, &v);
  cr_expect(isnan(s.wheel_diameter_mm));
  cr_expect(isnan(s.spindle_power_w));
  cr_expect(s.dress_count == 99.0);
  cr_expect_eq(v.rejected_mask, (1u << RMP_WHEEL_DIAMETER) | (1u << RMP_SPINDLE_POWER));

  RMP_Decode(&m, &p, d, 0u, 0.0, &s, &clock, NULL); /* nothing read: nothing repeated */
  cr_expect(SMP_IsEmpty(&s));
  cr_expect(isnan(clock));
}

Test(decode, wheel_speed_becomes_rpm_with_read_or_fallback_diameter)
{
  RMP_Map m;
  RMP_MapInit(&m);
  add(&m, RMP_WHEEL_SPEED, RMP_HOLDING, 0, RMP_U16);
  m.ch[RMP_WHEEL_SPEED].unit = RMP_UNIT_FT_MIN;
  add(&m, RMP_WHEEL_DIAMETER, RMP_HOLDING, 1, RMP_U16);
  m.ch[RMP_WHEEL_DIAMETER].unit = RMP_UNIT_IN;
  RMP_Plan p = plan_of(&m);
  static RMP_BlockData d[RMP_MAX_BLOCKS];
  d[0].reg[0] = 6000; /* ft/min = 30.48 m/s (1 ft = 0.3048 m, NIST SP 811) */
  d[0].reg[1] = 16;   /* in = 406.4 mm */
  SMP_Sample s;
  double clock;
  RMP_Decode(&m, &p, d, 1u, 300.0, &s, &clock, NULL);
  /* n = vs * 60000 / (pi * ds): vs in m/s, ds in mm. */
  double want = 30.48 * 60000.0 / (M_PI * 406.4);
  cr_expect_float_eq(s.spindle_speed_rpm, want, 1e-9);
  cr_expect_float_eq(s.wheel_diameter_mm, 406.4, 1e-12);
  /* No diameter read: the configured fallback. */
  m.ch[RMP_WHEEL_DIAMETER].enabled = 0;
  p = plan_of(&m);
  RMP_Decode(&m, &p, d, 1u, 300.0, &s, &clock, NULL);
  cr_expect_float_eq(s.spindle_speed_rpm, 30.48 * 60000.0 / (M_PI * 300.0), 1e-9);
  /* No fallback either: unknown, not guessed. */
  RMP_Decode(&m, &p, d, 1u, 0.0, &s, &clock, NULL);
  cr_expect(isnan(s.spindle_speed_rpm));
  /* A spindle_speed channel wins over the derived speed. */
  add(&m, RMP_SPINDLE_SPEED, RMP_HOLDING, 2, RMP_U16);
  p = plan_of(&m);
  d[0].reg[2] = 1450;
  RMP_Decode(&m, &p, d, 1u, 300.0, &s, &clock, NULL);
  cr_expect(s.spindle_speed_rpm == 1450.0);
}

Test(decode, bits_ignore_type_and_make_grinding_a_flag)
{
  RMP_Map m;
  RMP_MapInit(&m);
  add(&m, RMP_GRINDING, RMP_DISCRETE, 10, RMP_F32);
  add(&m, RMP_DRESS_COUNT, RMP_HOLDING, 0, RMP_U16);
  RMP_Plan p = plan_of(&m);
  cr_assert_eq(p.n, 2);
  static RMP_BlockData d[RMP_MAX_BLOCKS];
  d[1].bit[0] = 1;
  SMP_Sample s;
  double clock;
  RMP_Decode(&m, &p, d, 3u, 0.0, &s, &clock, NULL);
  cr_expect(s.grinding == 1.0);
  d[1].bit[0] = 0;
  RMP_Decode(&m, &p, d, 3u, 0.0, &s, &clock, NULL);
  cr_expect(s.grinding == 0.0);
  /* grinding from a register: nonzero = 1 */
  m.ch[RMP_GRINDING].table = RMP_HOLDING;
  m.ch[RMP_GRINDING].address = 1;
  m.ch[RMP_GRINDING].type = RMP_U16;
  p = plan_of(&m);
  d[0].reg[1] = 0x0100;
  RMP_Decode(&m, &p, d, 1u, 0.0, &s, &clock, NULL);
  cr_expect(s.grinding == 1.0);
}
