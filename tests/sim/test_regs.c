/* test_regs.c: unit tests of the register encoding (against libmodbus's getters) and request checks. */
#include "regs.h"
#include "server.h"

#include <criterion/criterion.h>
#include <math.h>
#include <modbus.h>
#include <string.h>

/* The Modbus Application Protocol specification (V1.1b3, section 4.2) sends a
 * register's high byte first; a 32-bit value's word order is not specified,
 * and libmodbus names the four usual ones by their byte sequence on the wire:
 * abcd (big-endian), dcba, badc, cdab. Its getters (modbus_get_float_*) are
 * the outside reference here; they are fine in 3.1.6, only the setters are not. */
Test(encode, floats_match_libmodbus_getters)
{
  const float values[] = { 400.0f, -1.5f, 2729.59f, 1.0e-7f, 3.0e38f };
  for (size_t i = 0; i < sizeof values / sizeof values[0]; i++) {
    uint16_t r[2];
    SIM_PutF32(r, values[i], SIM_ABCD);
    cr_assert_eq(modbus_get_float_abcd(r), values[i]);
    SIM_PutF32(r, values[i], SIM_DCBA);
    cr_assert_eq(modbus_get_float_dcba(r), values[i]);
    SIM_PutF32(r, values[i], SIM_BADC);
    cr_assert_eq(modbus_get_float_badc(r), values[i]);
    SIM_PutF32(r, values[i], SIM_CDAB);
    cr_assert_eq(modbus_get_float_cdab(r), values[i]);
  }
}

Test(encode, known_bit_patterns)
{
  /* 400.0f is 0x43C80000 (IEEE 754 binary32: sign 0, exponent 135, mantissa 0x480000). */
  uint16_t r[2];
  SIM_PutF32(r, 400.0f, SIM_ABCD);
  cr_assert(r[0] == 0x43C8 && r[1] == 0x0000);
  SIM_PutF32(r, 400.0f, SIM_BADC);
  cr_assert(r[0] == 0xC843 && r[1] == 0x0000);
  SIM_PutF32(r, 400.0f, SIM_CDAB);
  cr_assert(r[0] == 0x0000 && r[1] == 0x43C8);
  SIM_PutF32(r, 400.0f, SIM_DCBA);
  cr_assert(r[0] == 0x0000 && r[1] == 0xC843);
  SIM_PutU32(r, 0x11223344u, SIM_ABCD);
  cr_assert(r[0] == 0x1122 && r[1] == 0x3344);
  SIM_PutU32(r, 0x11223344u, SIM_CDAB);
  cr_assert(r[0] == 0x3344 && r[1] == 0x1122);
  SIM_PutU32(r, 0x11223344u, SIM_BADC);
  cr_assert(r[0] == 0x2211 && r[1] == 0x4433);
  SIM_PutU32(r, 0x11223344u, SIM_DCBA);
  cr_assert(r[0] == 0x4433 && r[1] == 0x2211);
  for (int o = SIM_ABCD; o <= SIM_DCBA; o++) {
    SIM_PutU32(r, 0xCAFEF00Du, (SIM_WordOrder)o);
    cr_assert_eq(SIM_GetU32(r, (SIM_WordOrder)o), 0xCAFEF00Du);
  }
  uint16_t c[4];
  SIM_PutU64(c, 0x0123456789ABCDEFull);
  cr_assert(c[0] == 0x0123 && c[1] == 0x4567 && c[2] == 0x89AB && c[3] == 0xCDEF);
}

static SIM_Snapshot sample_snapshot(void)
{
  SIM_Snapshot s;
  memset(&s, 0, sizeof s);
  s.state = SIM_STATE_GRINDING;
  s.grinding = 1;
  s.spindle_power_w = 2734.6;
  s.spindle_rpm = 1200.25;
  s.work_speed_mm_min = 2400.0;
  s.infeed_mm = -2.4851;
  s.depth_mm = 0.015;
  s.wheel_diameter_mm = 399.9426;
  s.dress_count = 3;
  s.pass = 65538;
  return s;
}

Test(image, holding_and_input_registers_as_documented)
{
  SIM_Snapshot s = sample_snapshot();
  SIM_Image img;
  SIM_ImageFill(&img, 1709532000123ull, &s);
  const uint16_t *h = img.holding;
  uint64_t clock = ((uint64_t)h[0] << 48) | ((uint64_t)h[1] << 32) | ((uint64_t)h[2] << 16) | h[3];
  cr_assert_eq(clock, 1709532000123ull);
  cr_assert_eq(modbus_get_float_abcd(h + 4), (float)2734.6);
  cr_assert_eq(modbus_get_float_abcd(h + 6), (float)1200.25);
  cr_assert_eq(modbus_get_float_abcd(h + 8), 2400.0f);
  cr_assert_eq((int32_t)SIM_GetU32(h + 10, SIM_ABCD), -24851);
  cr_assert_eq(SIM_GetU32(h + 12, SIM_ABCD), 150u);
  cr_assert_eq(modbus_get_float_abcd(h + 14), (float)399.9426);
  cr_assert_eq(h[16], 3);
  cr_assert_eq(h[17], 1);
  cr_assert_eq(h[18], 1);
  cr_assert_eq(h[19], 2, "pass number modulo 65536");
  const uint16_t *in = img.input;
  cr_assert_eq(SIM_GetU32(in + 0, SIM_CDAB), 2735u);
  cr_assert_eq(in[2], 273);
  cr_assert_eq(modbus_get_float_dcba(in + 3), 2400.0f);
  cr_assert_eq(modbus_get_float_badc(in + 5), (float)399.9426);
  cr_assert_eq(SIM_GetU32(in + 7, SIM_CDAB), 399943u);
  cr_assert_eq(modbus_get_float_cdab(in + 9), (float)2734.6);
  cr_assert_eq((int32_t)SIM_GetU32(in + 11, SIM_CDAB), -24851);
  cr_assert_eq(in[13], 1200);
  cr_assert_eq(img.discrete[0], 1);
}

Test(image, value_faults)
{
  SIM_Snapshot s = sample_snapshot();
  SIM_Image img;
  SIM_ImageFill(&img, 1, &s);
  SIM_ImageCorrupt(&img, 1u << SIM_FAULT_NAN);
  cr_assert(isnan(modbus_get_float_abcd(img.holding + 4)));
  cr_assert(isnan(modbus_get_float_abcd(img.holding + 14)));
  cr_assert(isnan(modbus_get_float_dcba(img.input + 3)));
  cr_assert(isnan(modbus_get_float_badc(img.input + 5)));
  cr_assert_eq(img.holding[16], 3, "integers keep their values");

  SIM_ImageFill(&img, 1, &s);
  SIM_ImageCorrupt(&img, 1u << SIM_FAULT_INF);
  cr_assert(isinf(modbus_get_float_abcd(img.holding + 6)));
  cr_assert(isinf(modbus_get_float_cdab(img.input + 9)));

  SIM_ImageFill(&img, 1, &s);
  SIM_ImageCorrupt(&img, 1u << SIM_FAULT_HUGE);
  cr_assert_eq(modbus_get_float_abcd(img.holding + 4), 3.0e38f);
  cr_assert_eq(SIM_GetU32(img.holding + 10, SIM_ABCD), 0x7FFFFFFFu);
  cr_assert_eq(SIM_GetU32(img.holding + 12, SIM_ABCD), 0xFFFFFFFFu);
  cr_assert_eq(SIM_GetU32(img.input + 0, SIM_CDAB), 0xFFFFFFFFu);
  cr_assert_eq(img.input[2], 0xFFFF);
}

/* Builds a PDU. */
static int pdu(uint8_t *p, int fc, int a, int b)
{
  p[0] = (uint8_t)fc;
  p[1] = (uint8_t)(a >> 8);
  p[2] = (uint8_t)a;
  p[3] = (uint8_t)(b >> 8);
  p[4] = (uint8_t)b;
  return 5;
}

/* Exception codes from the Modbus Application Protocol specification V1.1b3,
 * section 7: 01 illegal function, 02 illegal data address, 03 illegal data value;
 * the per-function state diagrams check the quantity (03) before the address (02). */
Test(request, exception_codes_follow_the_specification)
{
  uint8_t p[32];
  cr_assert_eq(SIM_CheckRequest(p, pdu(p, 0x03, 0, 20)), 0);
  cr_assert_eq(SIM_CheckRequest(p, pdu(p, 0x03, 100, 16)), 0);
  cr_assert_eq(SIM_CheckRequest(p, pdu(p, 0x03, 19, 2)), 2);
  cr_assert_eq(SIM_CheckRequest(p, pdu(p, 0x03, 50, 1)), 2);
  cr_assert_eq(SIM_CheckRequest(p, pdu(p, 0x03, 0, 0)), 3);
  cr_assert_eq(SIM_CheckRequest(p, pdu(p, 0x03, 0, 126)), 3);
  cr_assert_eq(SIM_CheckRequest(p, pdu(p, 0x04, 0, 14)), 0);
  cr_assert_eq(SIM_CheckRequest(p, pdu(p, 0x04, 0, 15)), 2);
  cr_assert_eq(SIM_CheckRequest(p, pdu(p, 0x01, 0, 16)), 0);
  cr_assert_eq(SIM_CheckRequest(p, pdu(p, 0x01, 8, 9)), 2);
  cr_assert_eq(SIM_CheckRequest(p, pdu(p, 0x02, 0, 1)), 0);
  cr_assert_eq(SIM_CheckRequest(p, pdu(p, 0x02, 0, 2)), 2);
  cr_assert_eq(SIM_CheckRequest(p, pdu(p, 0x05, 15, 0xFF00)), 0);
  cr_assert_eq(SIM_CheckRequest(p, pdu(p, 0x05, 16, 0xFF00)), 2);
  cr_assert_eq(SIM_CheckRequest(p, pdu(p, 0x05, 3, 0x1234)), 3);
  cr_assert_eq(SIM_CheckRequest(p, pdu(p, 0x06, 100, 7)), 0);
  cr_assert_eq(SIM_CheckRequest(p, pdu(p, 0x06, 115, 7)), 0);
  cr_assert_eq(SIM_CheckRequest(p, pdu(p, 0x06, 116, 7)), 2);
  cr_assert_eq(SIM_CheckRequest(p, pdu(p, 0x06, 4, 7)), 2);
  cr_assert_eq(SIM_CheckRequest(p, pdu(p, 0x2B, 0, 0)), 1);
  cr_assert_eq(SIM_CheckRequest(p, pdu(p, 0x08, 0, 0)), 1);
  /* Write multiple registers: 114..115 fine, 115..116 crosses the end. */
  int n = pdu(p, 0x10, 114, 2);
  p[n++] = 4;
  memset(p + n, 0, 4);
  cr_assert_eq(SIM_CheckRequest(p, n + 4), 0);
  p[2] = 115;
  cr_assert_eq(SIM_CheckRequest(p, n + 4), 2);
  p[5] = 3; /* byte count does not match the quantity */
  cr_assert_eq(SIM_CheckRequest(p, n + 4), 3);
  /* Write multiple coils: 10 coils at 6 need 2 bytes. */
  n = pdu(p, 0x0F, 6, 10);
  p[n++] = 2;
  p[n++] = 0xFF;
  p[n++] = 0x03;
  cr_assert_eq(SIM_CheckRequest(p, n), 0);
  p[2] = 7;
  cr_assert_eq(SIM_CheckRequest(p, n), 2);
  /* Read/write multiple registers: the write must stay in the write-back area. */
  n = pdu(p, 0x17, 0, 4);
  p[n++] = 0;
  p[n++] = 100;
  p[n++] = 0;
  p[n++] = 1;
  p[n++] = 2;
  p[n++] = 0;
  p[n++] = 9;
  cr_assert_eq(SIM_CheckRequest(p, n), 0);
  p[6] = 10;
  cr_assert_eq(SIM_CheckRequest(p, n), 2);
}
