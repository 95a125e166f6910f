/* conf.c: the configuration file of gritlined: INI read with inih, every key typed and bounded. */
#include "conf.h"

#include <arpa/inet.h>
#include <ctype.h>
#include <errno.h>
#include <ini.h>
#include <math.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdlib.h>
#include <string.h>

/* ---- key descriptions ------------------------------------------------- */

typedef int (*setter_fn)(void *target, const char *value, char *err, size_t errlen);
typedef void (*printer_fn)(const void *target, char *buf, size_t size);

typedef enum kind { K_DOUBLE, K_UINT, K_STRING, K_NAME, K_PATH, K_SPECIAL } kind;

typedef struct key_desc {
  const char *name;   /* key */
  kind kind;          /* how the value is parsed */
  size_t offset;      /* into the section's target */
  size_t size;        /* string buffers */
  double min, max;    /* inclusive bounds of numbers (after scaling) */
  int positive;       /* numbers must be > 0 (min is then ignored) */
  double scale;       /* value as written * scale = stored (ms -> s, kW -> W) */
  setter_fn set;      /* K_SPECIAL */
  printer_fn print;   /* K_SPECIAL */
  const char *unit;   /* as written in the file, for the docs */
} key_desc;

typedef enum section_kind {
  S_MACHINE, S_MODBUS, S_CHANNEL, S_JOB, S_WHEEL, S_SHIFTS, S_SEGMENTATION, S_CONDITION, S_ALERTS, S_WRITEBACK,
  S_METRICS, S_MQTT
} section_kind;

typedef struct section_desc {
  const char *name;        /* "machine", or the prefix "channel" of "channel.NAME" */
  section_kind kind;
  int named;               /* 1: [name.SOMETHING] */
  const key_desc *keys;
  int n_keys;
} section_desc;

#define OFF(type, field) offsetof(type, field)
#define NUM(n, t, f, lo, hi, sc, u) {n, K_DOUBLE, OFF(t, f), 0, lo, hi, 0, sc, NULL, NULL, u}
#define POS(n, t, f, hi, sc, u) {n, K_DOUBLE, OFF(t, f), 0, 0, hi, 1, sc, NULL, NULL, u}
#define UINT(n, t, f, lo, hi, u) {n, K_UINT, OFF(t, f), 0, lo, hi, 0, 1, NULL, NULL, u}
#define STR(n, t, f, k) {n, k, OFF(t, f), sizeof(((t *)0)->f), 0, 0, 0, 1, NULL, NULL, ""}
#define SPECIAL(n, t, f, s, p) {n, K_SPECIAL, OFF(t, f), 0, 0, 0, 0, 1, s, p, ""}

/* Specials ------------------------------------------------------------- */

static int set_timestamp(void *t, const char *v, char *err, size_t n)
{
  if (strcmp(v, "local") == 0 || strcmp(v, "controller") == 0) {
    *(int *)t = strcmp(v, "controller") == 0;
    return 0;
  }
  snprintf(err, n, "unknown timestamp source \"%s\" (expected local or controller)", v);
  return -1;
}
static void print_timestamp(const void *t, char *b, size_t n)
{
  snprintf(b, n, "%s", *(const int *)t ? "controller" : "local");
}

static int set_transport(void *t, const char *v, char *err, size_t n)
{
  if (strcmp(v, "tcp") == 0 || strcmp(v, "rtu") == 0) {
    *(MBC_Transport *)t = strcmp(v, "tcp") == 0 ? MBC_TCP : MBC_RTU;
    return 0;
  }
  snprintf(err, n, "unknown transport \"%s\" (expected tcp or rtu)", v);
  return -1;
}
static void print_transport(const void *t, char *b, size_t n)
{
  snprintf(b, n, "%s", *(const MBC_Transport *)t == MBC_TCP ? "tcp" : "rtu");
}

static int set_parity(void *t, const char *v, char *err, size_t n)
{
  static const char *const names[] = {"none", "even", "odd"};
  static const char codes[] = {'N', 'E', 'O'};
  for (int i = 0; i < 3; i++)
    if (strcmp(v, names[i]) == 0) {
      *(char *)t = codes[i];
      return 0;
    }
  snprintf(err, n, "unknown parity \"%s\" (expected none, even or odd)", v);
  return -1;
}
static void print_parity(const void *t, char *b, size_t n)
{
  char p = *(const char *)t;
  snprintf(b, n, "%s", p == 'N' ? "none" : p == 'E' ? "even" : "odd");
}

/* Channel fields come with their own name tables in regmap. */
#define ENUM_SETTER(fn, type, parse, list, what)                                                         \
  static int fn(void *t, const char *v, char *err, size_t n)                                           \
  {                                                                                                     \
    int x = parse(v);                                                                                   \
    if (x < 0) {                                                                                        \
      snprintf(err, n, "unknown " what " \"%s\" (expected %s)", v, list());                            \
      return -1;                                                                                        \
    }                                                                                                   \
    *(type *)t = (type)x;                                                                               \
    return 0;                                                                                           \
  }
ENUM_SETTER(set_table, RMP_Table, RMP_ParseTable, RMP_TableList, "table")
ENUM_SETTER(set_type, RMP_Type, RMP_ParseType, RMP_TypeList, "type")
ENUM_SETTER(set_order, RMP_Order, RMP_ParseOrder, RMP_OrderList, "word order")
static void print_table(const void *t, char *b, size_t n) { snprintf(b, n, "%s", RMP_TableName(*(const RMP_Table *)t)); }
static void print_type(const void *t, char *b, size_t n) { snprintf(b, n, "%s", RMP_TypeName(*(const RMP_Type *)t)); }
static void print_order(const void *t, char *b, size_t n) { snprintf(b, n, "%s", RMP_OrderName(*(const RMP_Order *)t)); }

/* The unit is checked against the channel once the section is complete. */
static int set_unit(void *t, const char *v, char *err, size_t n)
{
  int u = RMP_ParseUnit(v);
  if (u < 0) {
    snprintf(err, n, "unknown unit \"%s\"", v);
    return -1;
  }
  *(RMP_Unit *)t = (RMP_Unit)u;
  return 0;
}
static void print_unit(const void *t, char *b, size_t n) { snprintf(b, n, "%s", RMP_UnitName(*(const RMP_Unit *)t)); }

static int set_range_min(void *t, const char *v, char *err, size_t n);
static int set_range_max(void *t, const char *v, char *err, size_t n);
static void print_min(const void *t, char *b, size_t n);
static void print_max(const void *t, char *b, size_t n);

static int set_geometry(void *t, const char *v, char *err, size_t n)
{
  if (GRD_GeometryFromName(v, (GRD_Geometry *)t) == 0)
    return 0;
  snprintf(err, n, "unknown geometry \"%s\" (expected surface, creep-feed, external, internal or plunge)", v);
  return -1;
}
static void print_geometry(const void *t, char *b, size_t n) { snprintf(b, n, "%s", GRD_GeometryName(*(const GRD_Geometry *)t)); }

static int set_material(void *t, const char *v, char *err, size_t n)
{
  if (strcmp(v, "steel") == 0 || strcmp(v, "custom") == 0) {
    snprintf((char *)t, 16, "%s", v);
    return 0;
  }
  snprintf(err, n, "unknown material class \"%s\" (expected steel, or custom with burn_a and burn_b)", v);
  return -1;
}
static void print_string16(const void *t, char *b, size_t n) { snprintf(b, n, "%s", (const char *)t); }

/* Tables ---------------------------------------------------------------- */

static const key_desc machine_keys[] = {
    STR("name", CNF_Config, machine, K_NAME),
    STR("description", CNF_Config, description, K_STRING),
    POS("spindle_rating_kw", CNF_Config, spindle_rating_w, 10000, 1000.0, "kW"),
    POS("poll_interval_ms", CNF_Config, poll_interval_s, 60000, 0.001, "ms"),
    SPECIAL("timestamp", CNF_Config, timestamp_controller, set_timestamp, print_timestamp),
    POS("comm_lost_after_s", CNF_Config, comm_lost_after_s, 3600, 1, "s"),
    STR("data_dir", CNF_Config, data_dir, K_PATH),
    STR("runtime_dir", CNF_Config, runtime_dir, K_PATH),
    STR("job", CNF_Config, job_name, K_NAME),
    STR("wheel", CNF_Config, wheel_name, K_NAME),
};

static const key_desc modbus_keys[] = {
    SPECIAL("transport", CNF_Config, modbus.transport, set_transport, print_transport),
    STR("host", CNF_Config, modbus.host, K_STRING),
    UINT("port", CNF_Config, modbus.port, 1, 65535, ""),
    UINT("unit_id", CNF_Config, modbus.unit_id, 0, 255, ""),
    STR("device", CNF_Config, modbus.device, K_PATH),
    UINT("baud", CNF_Config, modbus.baud, 300, 4000000, "bit/s"),
    SPECIAL("parity", CNF_Config, modbus.parity, set_parity, print_parity),
    UINT("data_bits", CNF_Config, modbus.data_bits, 7, 8, ""),
    UINT("stop_bits", CNF_Config, modbus.stop_bits, 1, 2, ""),
    POS("response_timeout_ms", CNF_Config, modbus.response_timeout_s, 60000, 0.001, "ms"),
    POS("backoff_min_ms", CNF_Config, modbus.backoff_min_s, 3600000, 0.001, "ms"),
    POS("backoff_max_ms", CNF_Config, modbus.backoff_max_s, 3600000, 0.001, "ms"),
    NUM("stale_after_s", CNF_Config, modbus.stale_s, 0, 86400, 1, "s"),
    UINT("max_gap_registers", CNF_Config, map.gap, 0, 124, "registers"),
    UINT("max_registers_per_read", CNF_Config, map.max_regs, 1, 125, "registers"),
};

static const key_desc channel_keys[] = {
    SPECIAL("table", RMP_ChannelConfig, table, set_table, print_table),
    UINT("address", RMP_ChannelConfig, address, 0, 65535, ""),
    SPECIAL("type", RMP_ChannelConfig, type, set_type, print_type),
    SPECIAL("order", RMP_ChannelConfig, order, set_order, print_order),
    NUM("scale", RMP_ChannelConfig, scale, -1e12, 1e12, 1, ""),
    NUM("offset", RMP_ChannelConfig, offset, -1e12, 1e12, 1, ""),
    SPECIAL("unit", RMP_ChannelConfig, unit, set_unit, print_unit),
    SPECIAL("min", RMP_ChannelConfig, min, set_range_min, print_min),
    SPECIAL("max", RMP_ChannelConfig, max, set_range_max, print_max),
    NUM("stale_after_s", RMP_ChannelConfig, stale_s, -1, 86400, 1, "s"),
};

static const key_desc job_keys[] = {
    SPECIAL("geometry", CNF_Job, seg.geometry, set_geometry, print_geometry),
    POS("width_mm", CNF_Job, seg.width_mm, 10000, 1, "mm"),
    POS("workpiece_diameter_mm", CNF_Job, seg.workpiece_diameter_mm, 100000, 1, "mm"),
    NUM("depth_of_cut_mm", CNF_Job, seg.fixed_depth_mm, 0, 100, 1, "mm"),
    SPECIAL("material", CNF_Job, material, set_material, print_string16),
    NUM("burn_a", CNF_Job, seg.params.burn_a_j_mm3, 0, 1000, 1, "J/mm^3"),
    POS("burn_b", CNF_Job, seg.params.burn_b, 1000, 1, ""),
    POS("grit_density_per_mm2", CNF_Job, seg.params.grit_density_mm2, 1000, 1, "1/mm^2"),
    POS("chip_width_ratio", CNF_Job, seg.params.chip_width_ratio, 1000, 1, ""),
};

static const key_desc wheel_keys[] = {
    POS("diameter_mm", CNF_Wheel, diameter_mm, 10000, 1, "mm"),
    POS("max_speed_m_s", CNF_Wheel, max_speed_m_s, 500, 1, "m/s"),
    POS("aggr_low", CNF_Wheel, aggr_low, 1000, 1, ""),
    POS("aggr_high", CNF_Wheel, aggr_high, 1000, 1, ""),
    NUM("dull_limit", CNF_Wheel, dull_limit, 1.01, 10, 1, ""),
    NUM("burn_margin", CNF_Wheel, burn_margin, 0.1, 2, 1, ""),
    NUM("min_g_ratio", CNF_Wheel, min_g_ratio, 0, 100000, 1, ""),
    NUM("wear_drop", CNF_Wheel, wear_drop, 0.1, 0.99, 1, ""),
    POS("aggr_min", CNF_Wheel, aggr_min, 1000, 1, ""),
    POS("aggr_max", CNF_Wheel, aggr_max, 1000, 1, ""),
};

/* [condition]: the model of the dress cycles and the hold-off of each condition. */
#define RULE(n, k, f, what) UINT(n, CNF_Config, cond.rule[k].f, 1, 1000, what)
static const key_desc condition_keys[] = {
    UINT("settle_passes", CNF_Config, cond.model.settle_passes, 0, 1000, "passes"),
    UINT("reference_passes", CNF_Config, cond.model.reference_passes, 2, CYC_REFERENCE_MAX, "passes"),
    UINT("median_passes", CNF_Config, cond.model.median_len, 1, RBS_RUNMED_MAX, "passes"),
    NUM("smoothing", CNF_Config, cond.model.ewma_alpha, 0.01, 1, 1, ""),
    NUM("cusum_k", CNF_Config, cond.model.cusum_k, 0, 10, 1, "scatters"),
    NUM("cusum_h", CNF_Config, cond.model.cusum_h, 0.1, 100, 1, "scatters"),
    NUM("cusum_gate", CNF_Config, cond.cusum_gate, 0, 1, 1, ""),
    UINT("trend_passes", CNF_Config, cond.model.trend_window, 2, CYC_TREND_MAX, "passes"),
    UINT("min_forecast_passes", CNF_Config, cond.model.min_forecast_passes, 2, CYC_TREND_MAX, "passes"),
    UINT("power_fit_passes", CNF_Config, cond.model.power_window, 2, CYC_POWER_MAX, "passes"),
    NUM("forecast_tolerance", CNF_Config, cond.model.forecast_tolerance, 0.01, 1, 1, ""),
    RULE("dulling_raise_after", CND_DULLING, raise_after, "passes"),
    RULE("dulling_clear_after", CND_DULLING, clear_after, "passes"),
    RULE("low_aggressiveness_raise_after", CND_LOW_AGGR, raise_after, "passes"),
    RULE("low_aggressiveness_clear_after", CND_LOW_AGGR, clear_after, "passes"),
    RULE("high_aggressiveness_raise_after", CND_HIGH_AGGR, raise_after, "passes"),
    RULE("high_aggressiveness_clear_after", CND_HIGH_AGGR, clear_after, "passes"),
    RULE("wheel_wear_raise_after", CND_WHEEL_WEAR, raise_after, "passes"),
    RULE("wheel_wear_clear_after", CND_WHEEL_WEAR, clear_after, "passes"),
    RULE("burn_risk_raise_after", CND_BURN_RISK, raise_after, "passes"),
    RULE("burn_risk_clear_after", CND_BURN_RISK, clear_after, "passes"),
    RULE("overload_raise_after", CND_OVERLOAD, raise_after, "passes"),
    RULE("overload_clear_after", CND_OVERLOAD, clear_after, "passes"),
    RULE("overspeed_raise_after", CND_OVERSPEED, raise_after, "samples"),
    RULE("overspeed_clear_after", CND_OVERSPEED, clear_after, "samples"),
};

static int set_hook(void *t, const char *v, char *err, size_t n)
{
  if (v[0] != '/') {
    snprintf(err, n, "must be an absolute path to a program (it is run without a shell)");
    return -1;
  }
  if (strlen(v) >= CNF_PATH) {
    snprintf(err, n, "longer than %d characters", CNF_PATH - 1);
    return -1;
  }
  snprintf((char *)t, CNF_PATH, "%s", v);
  return 0;
}
static void print_path(const void *t, char *b, size_t n) { snprintf(b, n, "%s", (const char *)t); }

static const key_desc alert_keys[] = {
    SPECIAL("hook", CNF_Config, hook, set_hook, print_path),
    POS("hook_timeout_s", CNF_Config, hook_timeout_s, 3600, 1, "s"),
};

/* "coil 12" or "register 100 1". */
static int set_writeback(void *t, const char *v, char *err, size_t n)
{
  CNF_WriteBack *w = t;
  char kind[16], tail;
  unsigned addr, value = 1;
  int got = sscanf(v, "%15s %u %u %c", kind, &addr, &value, &tail);
  if (got >= 2 && strcmp(kind, "coil") == 0 && got == 2 && addr <= 65535) {
    *w = (CNF_WriteBack){CNF_WB_COIL, addr, 1};
    return 0;
  }
  if (got == 3 && strcmp(kind, "register") == 0 && addr <= 65535 && value <= 65535) {
    *w = (CNF_WriteBack){CNF_WB_REGISTER, addr, value};
    return 0;
  }
  snprintf(err, n, "expected \"coil ADDRESS\" or \"register ADDRESS VALUE\" (addresses 0..65535), not \"%s\"", v);
  return -1;
}
static void print_writeback(const void *t, char *b, size_t n)
{
  const CNF_WriteBack *w = t;
  if (w->kind == CNF_WB_COIL)
    snprintf(b, n, "coil %u", w->address);
  else if (w->kind == CNF_WB_REGISTER)
    snprintf(b, n, "register %u %u", w->address, w->value);
  else
    b[0] = '\0';
}

static const key_desc writeback_keys[] = {
    {"dulling", K_SPECIAL, OFF(CNF_Config, writeback[CND_DULLING]), 0, 0, 0, 0, 1, set_writeback, print_writeback, ""},
    {"low_aggressiveness", K_SPECIAL, OFF(CNF_Config, writeback[CND_LOW_AGGR]), 0, 0, 0, 0, 1, set_writeback, print_writeback, ""},
    {"high_aggressiveness", K_SPECIAL, OFF(CNF_Config, writeback[CND_HIGH_AGGR]), 0, 0, 0, 0, 1, set_writeback, print_writeback, ""},
    {"wheel_wear", K_SPECIAL, OFF(CNF_Config, writeback[CND_WHEEL_WEAR]), 0, 0, 0, 0, 1, set_writeback, print_writeback, ""},
    {"burn_risk", K_SPECIAL, OFF(CNF_Config, writeback[CND_BURN_RISK]), 0, 0, 0, 0, 1, set_writeback, print_writeback, ""},
    {"overload", K_SPECIAL, OFF(CNF_Config, writeback[CND_OVERLOAD]), 0, 0, 0, 0, 1, set_writeback, print_writeback, ""},
    {"overspeed", K_SPECIAL, OFF(CNF_Config, writeback[CND_OVERSPEED]), 0, 0, 0, 0, 1, set_writeback, print_writeback, ""},
    {"communication_lost", K_SPECIAL, OFF(CNF_Config, writeback[CND_COMM_LOST]), 0, 0, 0, 0, 1, set_writeback, print_writeback, ""},
    {"stale_data", K_SPECIAL, OFF(CNF_Config, writeback[CND_STALE_DATA]), 0, 0, 0, 0, 1, set_writeback, print_writeback, ""},
    {"logging_failed", K_SPECIAL, OFF(CNF_Config, writeback[CND_LOGGING_FAILED]), 0, 0, 0, 0, 1, set_writeback, print_writeback, ""},
};

/* [metrics] and [mqtt] ---------------------------------------------------- */

/* A numeric address: the server binds exactly what is written, never a name. */
static int set_listen(void *t, const char *v, char *err, size_t n)
{
  unsigned char a[16];
  if (strlen(v) < sizeof(((MET_Config *)0)->listen) &&
      (inet_pton(AF_INET, v, a) == 1 || inet_pton(AF_INET6, v, a) == 1)) {
    snprintf((char *)t, sizeof(((MET_Config *)0)->listen), "%s", v);
    return 0;
  }
  snprintf(err, n, "not a numeric IPv4 or IPv6 address: \"%s\" (127.0.0.1 keeps it on this host)", v);
  return -1;
}
static void print_text(const void *t, char *b, size_t n) { snprintf(b, n, "%s", (const char *)t); }

static int set_yesno(void *t, const char *v, char *err, size_t n)
{
  if (strcmp(v, "yes") == 0 || strcmp(v, "no") == 0) {
    *(int *)t = strcmp(v, "yes") == 0;
    return 0;
  }
  snprintf(err, n, "expected yes or no, not \"%s\"", v);
  return -1;
}
static void print_yesno(const void *t, char *b, size_t n) { snprintf(b, n, "%s", *(const int *)t ? "yes" : "no"); }

/* Topic levels of letters, digits, '_', '-' and '.', separated by single '/':
 * no wildcard ('+', '#'), no '$' (the broker's own topics), no empty level. */
static int set_topic_prefix(void *t, const char *v, char *err, size_t n)
{
  size_t len = strlen(v);
  int ok = len > 0 && len < MQT_PREFIX_MAX && v[0] != '/' && v[len - 1] != '/' && !strstr(v, "//");
  for (size_t i = 0; ok && i < len; i++)
    ok = isalnum((unsigned char)v[i]) || strchr("_-./", v[i]);
  if (!ok) {
    snprintf(err, n, "\"%s\": 1 to %d letters, digits, '_', '-', '.' in levels separated by single '/'", v,
             MQT_PREFIX_MAX - 1);
    return -1;
  }
  snprintf((char *)t, MQT_PREFIX_MAX, "%s", v);
  return 0;
}
static int set_client_id(void *t, const char *v, char *err, size_t n)
{
  size_t len = strlen(v);
  int ok = len > 0 && len < MQT_CLIENT_ID_MAX;
  for (size_t i = 0; ok && i < len; i++)
    ok = isalnum((unsigned char)v[i]) || strchr("_-.", v[i]);
  if (!ok) {
    snprintf(err, n, "\"%s\": 1 to %d letters, digits, '_', '-' or '.'", v, MQT_CLIENT_ID_MAX - 1);
    return -1;
  }
  snprintf((char *)t, MQT_CLIENT_ID_MAX, "%s", v);
  return 0;
}

static const key_desc metrics_keys[] = {
    SPECIAL("listen", CNF_Config, metrics.listen, set_listen, print_text),
    UINT("port", CNF_Config, metrics.port, 0, 65535, ""),
};

static const key_desc mqtt_keys[] = {
    SPECIAL("enabled", CNF_Config, mqtt.enabled, set_yesno, print_yesno),
    STR("host", CNF_Config, mqtt.host, K_STRING),
    UINT("port", CNF_Config, mqtt.port, 1, 65535, ""),
    SPECIAL("client_id", CNF_Config, mqtt.client_id, set_client_id, print_text),
    SPECIAL("topic_prefix", CNF_Config, mqtt.topic_prefix, set_topic_prefix, print_text),
    STR("username", CNF_Config, mqtt.username, K_STRING),
    STR("password_file", CNF_Config, mqtt.password_file, K_PATH),
    UINT("keepalive_s", CNF_Config, mqtt.keepalive_s, 5, 3600, "s"),
    UINT("qos_passes", CNF_Config, mqtt.qos_passes, 0, 2, ""),
    UINT("queue_passes", CNF_Config, mqtt.queue_passes, 1, 100000, "messages"),
    UINT("queue_alerts", CNF_Config, mqtt.queue_alerts, 1, 10000, "messages"),
    UINT("reconnect_min_s", CNF_Config, mqtt.reconnect_min_s, 1, 3600, "s"),
    UINT("reconnect_max_s", CNF_Config, mqtt.reconnect_max_s, 1, 3600, "s"),
};

/* [shifts] keys hold text until the end, then SFT_Parse checks them together. */
typedef struct shift_text {
  char starts[128];
  char names[256];
  int line;
} shift_text;

static const key_desc shift_keys[] = {
    STR("starts", shift_text, starts, K_STRING),
    STR("names", shift_text, names, K_STRING),
};

static const key_desc segmentation_keys[] = {
    POS("contact_on_w", SEG_Config, contact_on_w, 1e6, 1, "W"),
    POS("contact_off_w", SEG_Config, contact_off_w, 1e6, 1, "W"),
    NUM("noise_on", SEG_Config, noise_on, 0, 100, 1, "sd"),
    NUM("noise_off", SEG_Config, noise_off, 0, 100, 1, "sd"),
    NUM("min_pass_s", SEG_Config, min_pass_s, 0, 3600, 1, "s"),
    UINT("min_pass_samples", SEG_Config, min_pass_samples, 1, 100000, "samples"),
    NUM("end_hold_s", SEG_Config, end_hold_s, 0, 60, 1, "s"),
    POS("baseline_tau_s", SEG_Config, baseline_tau_s, 3600, 1, "s"),
    POS("speed_change", SEG_Config, speed_change, 1, 1, ""),
    POS("max_interval_s", SEG_Config, max_interval_s, 3600, 1, "s"),
    NUM("depth_tolerance_mm", SEG_Config, depth_tolerance_mm, 0, 1, 1, "mm"),
};

#define N(a) ((int)(sizeof(a) / sizeof((a)[0])))
static const section_desc sections[] = {
    {"machine", S_MACHINE, 0, machine_keys, N(machine_keys)},
    {"modbus", S_MODBUS, 0, modbus_keys, N(modbus_keys)},
    {"channel", S_CHANNEL, 1, channel_keys, N(channel_keys)},
    {"job", S_JOB, 1, job_keys, N(job_keys)},
    {"wheel", S_WHEEL, 1, wheel_keys, N(wheel_keys)},
    {"shifts", S_SHIFTS, 0, shift_keys, N(shift_keys)},
    {"segmentation", S_SEGMENTATION, 0, segmentation_keys, N(segmentation_keys)},
    {"condition", S_CONDITION, 0, condition_keys, N(condition_keys)},
    {"alerts", S_ALERTS, 0, alert_keys, N(alert_keys)},
    {"writeback", S_WRITEBACK, 0, writeback_keys, N(writeback_keys)},
    {"metrics", S_METRICS, 0, metrics_keys, N(metrics_keys)},
    {"mqtt", S_MQTT, 0, mqtt_keys, N(mqtt_keys)},
};

/* ---- parsing state ---------------------------------------------------- */

#define NO_ADDRESS 0x10000u /* a channel section without its address */

typedef struct parse_state {
  CNF_Config *cfg;
  shift_text shifts;
  FILE *file;
  int line;               /* line being parsed */
  int header_line;        /* line of the latest [section] header, 0 = none */
  int long_line;          /* first over-long line, 0 = none */
  char err[512];          /* first error, without the file name */
  int err_line;
  char section[64];       /* current section header as written */
  const section_desc *sec;
  void *target;           /* struct the current section's keys go to */
  int sec_line;
  unsigned char seen[64]; /* keys seen in the current section (bit per key index) */
  int machine_line, modbus_line, shifts_line, segmentation_line, condition_line, alerts_line, writeback_line;
  int metrics_line, mqtt_line;
  int channel_line[RMP_CHANNEL_COUNT];
  int range_min_set, range_max_set;
  int replay;             /* checks for a replay: no Modbus, no marked speed needed */
} parse_state;

__attribute__((format(printf, 3, 4))) static int fail(parse_state *p, int line, const char *fmt, ...)
{
  if (p->err[0])
    return 0;
  va_list ap;
  va_start(ap, fmt);
  vsnprintf(p->err, sizeof p->err, fmt, ap);
  va_end(ap);
  p->err_line = line;
  return 0;
}

static int set_range_min(void *t, const char *v, char *err, size_t n)
{
  char *end;
  double x = strtod(v, &end);
  if (end == v || *end || !isfinite(x)) {
    snprintf(err, n, "not a number: \"%s\"", v);
    return -1;
  }
  *(double *)t = x;
  return 0;
}
static int set_range_max(void *t, const char *v, char *err, size_t n) { return set_range_min(t, v, err, n); }
static void print_min(const void *t, char *b, size_t n)
{
  const RMP_ChannelConfig *c = (const RMP_ChannelConfig *)((const char *)t - offsetof(RMP_ChannelConfig, min));
  if (c->has_range)
    snprintf(b, n, "%.10g", c->min);
  else
    b[0] = '\0';
}
static void print_max(const void *t, char *b, size_t n)
{
  const RMP_ChannelConfig *c = (const RMP_ChannelConfig *)((const char *)t - offsetof(RMP_ChannelConfig, max));
  if (c->has_range)
    snprintf(b, n, "%.10g", c->max);
  else
    b[0] = '\0';
}

static int valid_name(const char *s)
{
  size_t n = strlen(s);
  if (n == 0 || n >= CNF_NAME)
    return 0;
  for (size_t i = 0; i < n; i++)
    if (!isalnum((unsigned char)s[i]) && s[i] != '_' && s[i] != '-')
      return 0;
  return 1;
}

static void job_init(CNF_Job *j)
{
  memset(j, 0, sizeof(*j));
  SEG_DefaultConfig(&j->seg);
  snprintf(j->material, sizeof j->material, "steel");
}

/* Defaults of a wheel profile: a ceramic-grit wheel's window of 15 to 20 and an
 * overall range of 5 to 50 are common practice (no source); the dull limit,
 * burn margin, minimum G-ratio and wear drop are our choices, see
 * docs/conditions.md. */
static void wheel_init(CNF_Wheel *w)
{
  memset(w, 0, sizeof(*w));
  w->diameter_mm = NAN;
  w->max_speed_m_s = NAN;
  w->aggr_low = 15.0;
  w->aggr_high = 20.0;
  w->dull_limit = 1.3;
  w->burn_margin = 0.8;
  w->min_g_ratio = 20.0;
  w->wear_drop = 0.8;
  w->aggr_min = 5.0;
  w->aggr_max = 50.0;
}

static void config_init(CNF_Config *c)
{
  memset(c, 0, sizeof(*c));
  c->spindle_rating_w = NAN;
  c->poll_interval_s = 0.01;
  snprintf(c->data_dir, sizeof c->data_dir, "/var/lib/gritline");
  snprintf(c->runtime_dir, sizeof c->runtime_dir, "/run/gritline");
  MBC_ConfigInit(&c->modbus);
  snprintf(c->modbus.host, sizeof c->modbus.host, "127.0.0.1");
  c->modbus.response_timeout_s = 0.5;
  c->modbus.backoff_min_s = 1.0;
  c->modbus.backoff_max_s = 30.0;
  RMP_MapInit(&c->map);
  if (c->map.max_regs == 0)
    c->map.max_regs = RMP_MAX_REGS;
  SEG_DefaultConfig(&c->detect);
  CND_DefaultSettings(&c->cond);
  c->comm_lost_after_s = 2.0;
  c->hook_timeout_s = 10.0;
  snprintf(c->metrics.listen, sizeof c->metrics.listen, "127.0.0.1");
  c->metrics.port = MET_DEFAULT_PORT;
  snprintf(c->mqtt.host, sizeof c->mqtt.host, "127.0.0.1");
  c->mqtt.port = 1883; /* the port registered for MQTT (from memory) */
  c->mqtt.keepalive_s = 30;
  c->mqtt.queue_passes = 1000;
  c->mqtt.queue_alerts = 200;
  c->mqtt.reconnect_min_s = 1;
  c->mqtt.reconnect_max_s = 30;
  char err[128];
  SFT_Parse(&c->shifts, "06:00,14:00,22:00", "early,late,night", err, sizeof err);
}

/* Opens a section; returns 0 when it is refused. */
static int open_section(parse_state *p, const char *section)
{
  const int at = p->header_line ? p->header_line : p->line; /* where the header is */
  CNF_Config *c = p->cfg;
  char kindname[64];
  const char *dot = strchr(section, '.');
  size_t klen = dot ? (size_t)(dot - section) : strlen(section);
  if (klen >= sizeof kindname)
    return fail(p, at, "unknown section [%s]", section);
  memcpy(kindname, section, klen);
  kindname[klen] = '\0';
  const char *sub = dot ? dot + 1 : NULL;
  p->sec = NULL;
  for (int i = 0; i < N(sections); i++)
    if (strcmp(sections[i].name, kindname) == 0 && (sections[i].named == (sub != NULL)))
      p->sec = &sections[i];
  if (!p->sec)
    return fail(p, at,
                "unknown section [%s] (expected machine, modbus, channel.NAME, job.NAME, wheel.NAME, shifts, "
                "segmentation, condition, alerts, writeback, metrics, mqtt)",
                section);
  snprintf(p->section, sizeof p->section, "%s", section);
  p->sec_line = at;
  memset(p->seen, 0, sizeof p->seen);
  int *once = NULL;
  switch (p->sec->kind) {
  case S_MACHINE: once = &p->machine_line; p->target = c; break;
  case S_MODBUS: once = &p->modbus_line; p->target = c; break;
  case S_SHIFTS: once = &p->shifts_line; p->target = &p->shifts; break;
  case S_SEGMENTATION: once = &p->segmentation_line; p->target = &c->detect; break;
  case S_CONDITION: once = &p->condition_line; p->target = c; break;
  case S_ALERTS: once = &p->alerts_line; p->target = c; break;
  case S_WRITEBACK: once = &p->writeback_line; p->target = c; break;
  case S_METRICS: once = &p->metrics_line; p->target = c; break;
  case S_MQTT: once = &p->mqtt_line; p->target = c; break;
  case S_CHANNEL: {
    int ch = RMP_ChannelFromName(sub);
    if (ch < 0)
      return fail(p, at, "unknown channel [channel.%s] (expected %s)", sub, RMP_ChannelList());
    once = &p->channel_line[ch];
    p->target = &c->map.ch[ch];
    if (!c->map.ch[ch].enabled) {
      c->map.ch[ch].enabled = 1;
      c->map.ch[ch].address = NO_ADDRESS; /* required */
    }
    break;
  }
  case S_JOB:
  case S_WHEEL: {
    int is_job = p->sec->kind == S_JOB;
    if (!valid_name(sub))
      return fail(p, at, "[%s]: a name is 1 to %d letters, digits, '_' or '-'", section, CNF_NAME - 1);
    int n = is_job ? c->n_jobs : c->n_wheels;
    for (int i = 0; i < n; i++)
      if (strcmp(is_job ? c->jobs[i].name : c->wheels[i].name, sub) == 0)
        return fail(p, at, "section [%s] appears twice (first at line %d)", section,
                    is_job ? c->jobs[i].line : c->wheels[i].line);
    if (n == (is_job ? CNF_MAX_JOBS : CNF_MAX_WHEELS))
      return fail(p, at, "too many [%s.*] sections (at most %d)", kindname, is_job ? CNF_MAX_JOBS : CNF_MAX_WHEELS);
    if (is_job) {
      CNF_Job *j = &c->jobs[c->n_jobs++];
      job_init(j);
      snprintf(j->name, sizeof j->name, "%s", sub);
      j->line = at;
      p->target = j;
    } else {
      CNF_Wheel *w = &c->wheels[c->n_wheels++];
      wheel_init(w);
      snprintf(w->name, sizeof w->name, "%s", sub);
      w->line = at;
      p->target = w;
    }
    return 1;
  }
  }
  if (*once)
    return fail(p, at, "section [%s] appears twice (first at line %d)", section, *once);
  *once = at;
  return 1;
}

static int parse_double(const char *v, double *out)
{
  char *end;
  errno = 0;
  double x = strtod(v, &end);
  if (end == v || *end || !isfinite(x) || errno == ERANGE)
    return -1;
  *out = x;
  return 0;
}

static int set_key(parse_state *p, const key_desc *k, const char *value)
{
  void *slot = (char *)p->target + k->offset;
  char why[256];
  switch (k->kind) {
  case K_DOUBLE: {
    double x;
    if (parse_double(value, &x) != 0)
      return fail(p, p->line, "[%s] %s: not a number: \"%s\"", p->section, k->name, value);
    if (k->positive ? !(x > 0.0) : x < k->min)
      return k->positive ? fail(p, p->line, "[%s] %s: must be positive", p->section, k->name)
                         : fail(p, p->line, "[%s] %s: must be at least %g", p->section, k->name, k->min);
    if (x > k->max)
      return fail(p, p->line, "[%s] %s: must be at most %g", p->section, k->name, k->max);
    *(double *)slot = x * k->scale;
    return 1;
  }
  case K_UINT: {
    char *end;
    errno = 0;
    unsigned long x = strtoul(value, &end, 10);
    if (end == value || *end || errno || value[0] == '-')
      return fail(p, p->line, "[%s] %s: not a whole number: \"%s\"", p->section, k->name, value);
    if (x < (unsigned long)k->min || x > (unsigned long)k->max)
      return fail(p, p->line, "[%s] %s: must be between %g and %g", p->section, k->name, k->min, k->max);
    *(unsigned *)slot = (unsigned)x;
    return 1;
  }
  case K_NAME:
    if (!valid_name(value))
      return fail(p, p->line, "[%s] %s: a name is 1 to %d letters, digits, '_' or '-'", p->section, k->name,
                  CNF_NAME - 1);
    /* fall through */
  case K_STRING:
  case K_PATH:
    if (strlen(value) >= k->size)
      return fail(p, p->line, "[%s] %s: longer than %zu characters", p->section, k->name, k->size - 1);
    if (k->kind == K_PATH && value[0] != '/')
      return fail(p, p->line, "[%s] %s: must be an absolute path", p->section, k->name);
    snprintf((char *)slot, k->size, "%s", value);
    return 1;
  case K_SPECIAL:
    if (k->set(slot, value, why, sizeof why) != 0)
      return fail(p, p->line, "[%s] %s: %s", p->section, k->name, why);
    if (k->set == set_range_min || k->set == set_range_max)
      ((RMP_ChannelConfig *)p->target)->has_range = 1;
    return 1;
  }
  return 1;
}

static int handler(void *user, const char *section, const char *name, const char *value)
{
  parse_state *p = user;
  if (p->err[0])
    return 0;
  if (!p->section[0] || strcmp(section, p->section) != 0 || !p->sec) {
    if (!open_section(p, section))
      return 0;
  }
  if (!name) /* a section header alone (inih calls with name NULL when built so) */
    return 1;
  for (int i = 0; i < p->sec->n_keys; i++) {
    const key_desc *k = &p->sec->keys[i];
    if (strcmp(k->name, name) != 0)
      continue;
    if (p->seen[i])
      return fail(p, p->line, "[%s] %s: given twice", p->section, name);
    p->seen[i] = 1;
    if (*value == '\0')
      return fail(p, p->line, "[%s] %s: empty value", p->section, name);
    return set_key(p, k, value);
  }
  char list[512] = "";
  size_t u = 0;
  for (int i = 0; i < p->sec->n_keys && u < sizeof list; i++) {
    int n = snprintf(list + u, sizeof list - u, "%s%s", i ? ", " : "", p->sec->keys[i].name);
    if (n > 0)
      u += (size_t)n;
  }
  return fail(p, p->line, "[%s] unknown key \"%s\" (expected %s)", p->section, name, list);
}

/* Feeds inih one line at a time, so the handler knows the line number, and
 * refuses lines too long for inih (which would split them silently). */
static char *reader(char *str, int num, void *stream)
{
  parse_state *p = stream;
  if (p->err[0])
    return NULL;
  if (!fgets(str, num, p->file))
    return NULL;
  p->line++;
  const char *q = str;
  while (*q == ' ' || *q == '\t')
    q++;
  if (*q == '[' && strchr(q, ']')) { /* without ']' inih refuses the line and stays in the section */
    p->section[0] = '\0'; /* a header: the next key opens it, even when repeated */
    p->header_line = p->line; /* inih names a section only with its first key */
  }
  size_t n = strlen(str);
  if (n == (size_t)num - 1 && str[n - 1] != '\n' && !feof(p->file)) {
    /* fgets filled inih's buffer without reaching the newline: the line has at least
     * CNF_LINE_MAX - 1 characters, one more than fits with its newline and NUL. */
    fail(p, p->line, "line longer than %d characters", CNF_LINE_MAX - 2);
    return NULL;
  }
  return str;
}

/* ---- checks across keys ----------------------------------------------- */

/* The job's kinematics and constants with the detection settings. */
static void job_seg(const CNF_Config *c, const CNF_Job *job, const CNF_Wheel *wheel, SEG_Config *out)
{
  *out = c->detect;
  const SEG_Config *j = &job->seg;
  out->geometry = j->geometry;
  out->width_mm = j->width_mm;
  out->workpiece_diameter_mm = j->workpiece_diameter_mm;
  out->fixed_depth_mm = j->fixed_depth_mm;
  out->params = j->params;
  out->wheel_diameter_mm = wheel ? wheel->diameter_mm : NAN;
}

static int check_config(parse_state *p)
{
  CNF_Config *c = p->cfg;
  if (!p->machine_line)
    return fail(p, 0, "missing section [machine]");
  if (!c->machine[0])
    return fail(p, p->machine_line, "[machine] name: required");
  if (!c->job_name[0])
    return fail(p, p->machine_line, "[machine] job: required (the name of a [job.NAME] section)");
  if (!c->wheel_name[0])
    return fail(p, p->machine_line, "[machine] wheel: required (the name of a [wheel.NAME] section)");
  c->job = NULL;
  c->wheel = NULL;
  for (int i = 0; i < c->n_jobs; i++)
    if (strcmp(c->jobs[i].name, c->job_name) == 0)
      c->job = &c->jobs[i];
  for (int i = 0; i < c->n_wheels; i++)
    if (strcmp(c->wheels[i].name, c->wheel_name) == 0)
      c->wheel = &c->wheels[i];
  if (!c->job)
    return fail(p, p->machine_line, "[machine] job: no section [job.%s]", c->job_name);
  if (!c->wheel)
    return fail(p, p->machine_line, "[machine] wheel: no section [wheel.%s]", c->wheel_name);

  if (p->replay)
    goto modbus_done;
  /* Modbus */
  if (c->modbus.transport == MBC_RTU && !c->modbus.device[0])
    return fail(p, p->modbus_line, "[modbus] device: required for transport rtu");
  if (c->modbus.backoff_max_s < c->modbus.backoff_min_s)
    return fail(p, p->modbus_line, "[modbus] backoff_max_ms: must not be below backoff_min_ms");
  if (!c->map.ch[RMP_SPINDLE_POWER].enabled)
    return fail(p, 0, "missing section [channel.spindle_power]: spindle power is required");
  if (!c->map.ch[RMP_SPINDLE_SPEED].enabled && !c->map.ch[RMP_WHEEL_SPEED].enabled)
    return fail(p, 0, "missing section [channel.spindle_speed] or [channel.wheel_speed]: one is required");
  if (c->timestamp_controller && !c->map.ch[RMP_CLOCK].enabled)
    return fail(p, p->machine_line, "[machine] timestamp: controller needs a [channel.clock] section");
  for (int ch = 0; ch < RMP_CHANNEL_COUNT; ch++) {
    RMP_ChannelConfig *k = &c->map.ch[ch];
    if (!k->enabled)
      continue;
    if (k->address == NO_ADDRESS)
      return fail(p, p->channel_line[ch], "[channel.%s] address: required", RMP_ChannelName(ch));
    if (!RMP_UnitAllowed(ch, k->unit))
      return fail(p, p->channel_line[ch], "[channel.%s] unit: %s is not a unit of this channel (expected %s)",
                  RMP_ChannelName(ch), RMP_UnitName(k->unit), RMP_UnitList(ch));
    if (k->has_range && !(k->min < k->max))
      return fail(p, p->channel_line[ch], "[channel.%s] max: must be above min", RMP_ChannelName(ch));
  }
  char why[256];
  RMP_Plan plan;
  if (RMP_MakePlan(&c->map, &plan, why, sizeof why) != 0)
    return fail(p, 0, "register map: %s", why);
modbus_done:

  /* Shifts */
  if (p->shifts_line) {
    if (!p->shifts.starts[0])
      return fail(p, p->shifts_line, "[shifts] starts: required");
    if (SFT_Parse(&c->shifts, p->shifts.starts, p->shifts.names, why, sizeof why) != 0)
      return fail(p, p->shifts_line, "[shifts] %s", why);
  }

  /* Jobs and wheels: each is checked, not only the active ones, so that a
   * reload that switches to another never meets a bad one. */
  for (int i = 0; i < c->n_jobs; i++) {
    const CNF_Job *j = &c->jobs[i];
    GRD_Params steel;
    GRD_DefaultParams(&steel);
    int burn_given = j->seg.params.burn_a_j_mm3 != steel.burn_a_j_mm3 || j->seg.params.burn_b != steel.burn_b;
    if (strcmp(j->material, "custom") != 0 && burn_given)
      return fail(p, j->line, "[job.%s] burn_a/burn_b: only with material = custom", j->name);
    SEG_Config s;
    job_seg(c, j, NULL, &s);
    s.wheel_diameter_mm = NAN; /* checked with the wheel below */
    const char *bad = SEG_CheckConfig(&s);
    if (bad)
      return fail(p, j->line, "[job.%s] %s", j->name, bad);
  }
  for (int i = 0; i < c->n_wheels; i++) {
    CNF_Wheel *w = &c->wheels[i];
    if (isnan(w->max_speed_m_s) && !p->replay)
      return fail(p, w->line, "[wheel.%s] max_speed_m_s: required (the wheel's marked maximum operating speed)",
                  w->name);
    if (!(w->aggr_low < w->aggr_high))
      return fail(p, w->line, "[wheel.%s] aggr_high: must be above aggr_low", w->name);
    if (!c->map.ch[RMP_WHEEL_DIAMETER].enabled && isnan(w->diameter_mm) && !p->replay)
      return fail(p, w->line, "[wheel.%s] diameter_mm: required when no [channel.wheel_diameter] is read", w->name);
  }
  if (c->job->seg.geometry == GRD_INTERNAL && !isnan(c->wheel->diameter_mm) &&
      c->wheel->diameter_mm >= c->job->seg.workpiece_diameter_mm)
    return fail(p, c->wheel->line, "[wheel.%s] diameter_mm: internal grinding needs a wheel smaller than the bore",
                c->wheel->name);
  c->modbus.fallback_wheel_diameter_mm = isnan(c->wheel->diameter_mm) ? 0.0 : c->wheel->diameter_mm;
  if (!(c->wheel->aggr_min < c->wheel->aggr_low && c->wheel->aggr_high < c->wheel->aggr_max))
    return fail(p, c->wheel->line, "[wheel.%s] aggr_min < aggr_low < aggr_high < aggr_max must hold", c->wheel->name);
  CND_Settings cs;
  CNF_CondSettings(c, &cs);
  if (CND_CheckSettings(&cs, why, sizeof why) != 0)
    return fail(p, p->condition_line, "[condition] %s", why);
  for (int k = 0; k < CND_CONDITION_COUNT; k++)
    for (int j = 0; j < k; j++)
      if (c->writeback[k].kind && c->writeback[k].kind == c->writeback[j].kind &&
          c->writeback[k].address == c->writeback[j].address)
        return fail(p, p->writeback_line, "[writeback] %s and %s write the same address %u", CND_KindName(j),
                    CND_KindName(k), c->writeback[k].address);
  /* [mqtt]: the names built from the machine's, as a reload would build them. */
  if (c->mqtt.password_file[0] && !c->mqtt.username[0])
    return fail(p, p->mqtt_line, "[mqtt] password_file: needs a username");
  if (c->mqtt.reconnect_max_s < c->mqtt.reconnect_min_s)
    return fail(p, p->mqtt_line, "[mqtt] reconnect_max_s: must not be below reconnect_min_s");
  if (!c->mqtt.client_id[0])
    snprintf(c->mqtt.client_id, sizeof c->mqtt.client_id, "gritline-%s", c->machine);
  if (!c->mqtt.topic_prefix[0])
    snprintf(c->mqtt.topic_prefix, sizeof c->mqtt.topic_prefix, "gritline/%s", c->machine);
  SEG_Config merged;
  CNF_SegConfig(c, &merged);
  const char *bad = SEG_CheckConfig(&merged);
  if (bad)
    return fail(p, p->segmentation_line, "[segmentation] %s", bad);
  return 1;
}

void CNF_SegConfig(const CNF_Config *c, SEG_Config *out) { job_seg(c, c->job, c->wheel, out); }

void CNF_CondSettings(const CNF_Config *c, CND_Settings *out)
{
  *out = c->cond;
  const CNF_Wheel *w = c->wheel;
  snprintf(out->wheel.name, sizeof out->wheel.name, "%s", w->name);
  out->wheel.aggr_low = w->aggr_low;
  out->wheel.aggr_high = w->aggr_high;
  out->wheel.aggr_min = w->aggr_min;
  out->wheel.aggr_max = w->aggr_max;
  out->wheel.dull_limit = w->dull_limit;
  out->wheel.burn_margin = w->burn_margin;
  out->wheel.min_g_ratio = w->min_g_ratio;
  out->wheel.max_speed_m_s = w->max_speed_m_s;
  out->wheel.wear_drop_ratio = w->wear_drop;
  out->machine.spindle_rating_w = c->spindle_rating_w;
  out->machine.wheel_diameter_mm = w->diameter_mm;
  snprintf(out->job.name, sizeof out->job.name, "%s", c->job->name);
  out->job.width_mm = c->job->seg.width_mm;
  out->job.wear_width_mm = NAN;
  out->job.diameter_measured = c->map.ch[RMP_WHEEL_DIAMETER].enabled;
}

static void report(const parse_state *p, const char *path, char *err, size_t errlen)
{
  if (p->err_line > 0)
    snprintf(err, errlen, "%s:%d: %s", path, p->err_line, p->err);
  else
    snprintf(err, errlen, "%s: %s", path, p->err);
  /* The message echoes what the file holds: a terminal must not act on it. */
  for (char *q = err; *q; q++)
    if ((unsigned char)*q < 0x20 || *q == 0x7f)
      *q = '?';
}

static int load(CNF_Config *c, const char *path, int replay, char *err, size_t errlen)
{
  static parse_state p; /* large; the daemon loads one file at a time */
  memset(&p, 0, sizeof p);
  p.replay = replay;
  config_init(c);
  snprintf(c->path, sizeof c->path, "%s", path);
  p.cfg = c;
  p.file = fopen(path, "r");
  if (!p.file) {
    snprintf(err, errlen, "%s: %s", path, strerror(errno));
    return -1;
  }
  int rc = ini_parse_stream(reader, &p, handler, &p);
  fclose(p.file);
  if (rc > 0 && (!p.err[0] || rc < p.err_line)) {
    /* inih goes on after a line it cannot read: that line came first. */
    p.err[0] = '\0';
    fail(&p, rc, "not a key = value line or a [section] header");
  }
  if (!p.err[0] && rc < 0)
    fail(&p, 0, "cannot be read");
  if (!p.err[0])
    check_config(&p);
  if (p.err[0]) {
    report(&p, path, err, errlen);
    return -1;
  }
  return 0;
}

int CNF_Load(CNF_Config *c, const char *path, char *err, size_t errlen) { return load(c, path, 0, err, errlen); }

int CNF_LoadForReplay(CNF_Config *c, const char *path, char *err, size_t errlen)
{
  return load(c, path, 1, err, errlen);
}

int CNF_FromRecording(CNF_Config *c, const REC_Meta *m, char *err, size_t errlen)
{
  static parse_state p;
  memset(&p, 0, sizeof p);
  p.replay = 1;
  p.cfg = c;
  config_init(c);
  snprintf(c->path, sizeof c->path, "(recording metadata)");
  snprintf(c->machine, sizeof c->machine, "%.32s", valid_name(m->machine) ? m->machine : "machine");
  CNF_Job *j = &c->jobs[c->n_jobs++];
  job_init(j);
  snprintf(j->name, sizeof j->name, "%.32s", valid_name(m->job) ? m->job : "recorded");
  j->seg.geometry = m->geometry;
  j->seg.width_mm = m->grinding_width_mm;
  j->seg.workpiece_diameter_mm = m->workpiece_diameter_mm;
  CNF_Wheel *w = &c->wheels[c->n_wheels++];
  wheel_init(w);
  snprintf(w->name, sizeof w->name, "%.32s", valid_name(m->wheel) ? m->wheel : "recorded");
  w->diameter_mm = m->wheel_diameter_mm;
  c->map.ch[RMP_WHEEL_DIAMETER].enabled = 1; /* the recording may carry it: the model looks */
  snprintf(c->job_name, sizeof c->job_name, "%s", j->name);
  snprintf(c->wheel_name, sizeof c->wheel_name, "%s", w->name);
  p.machine_line = 1; /* the metadata stands for the section */
  check_config(&p);
  if (p.err[0]) {
    report(&p, "recording metadata", err, errlen);
    return -1;
  }
  return 0;
}

int CNF_Set(CNF_Config *c, const char *assignment, char *err, size_t errlen)
{
  static parse_state p;
  memset(&p, 0, sizeof p);
  p.cfg = c;
  p.replay = 1;
  char buf[512];
  snprintf(buf, sizeof buf, "%s", assignment);
  char *eq = strchr(buf, '=');
  char *dot = strchr(buf, '.');
  if (!eq || !dot || dot > eq) {
    snprintf(err, errlen, "\"%s\": expected SECTION.KEY=VALUE", assignment);
    return -1;
  }
  *eq = '\0';
  const char *value = eq + 1;
  char *key = strrchr(buf, '.');
  *key++ = '\0';
  /* job.KEY and wheel.KEY mean the active job and wheel. */
  char section[600];
  if (strcmp(buf, "job") == 0 || strcmp(buf, "wheel") == 0)
    snprintf(section, sizeof section, "%s.%s", buf, strcmp(buf, "job") == 0 ? c->job_name : c->wheel_name);
  else
    snprintf(section, sizeof section, "%s", buf);
  /* Find the section without creating a new job or wheel. */
  if (strncmp(section, "job.", 4) == 0 || strncmp(section, "wheel.", 6) == 0) {
    int is_job = section[0] == 'j';
    const char *name = section + (is_job ? 4 : 6);
    p.sec = &sections[is_job ? 3 : 4];
    p.target = NULL;
    for (int i = 0; i < (is_job ? c->n_jobs : c->n_wheels); i++)
      if (strcmp(is_job ? c->jobs[i].name : c->wheels[i].name, name) == 0)
        p.target = is_job ? (void *)&c->jobs[i] : (void *)&c->wheels[i];
    if (!p.target) {
      snprintf(err, errlen, "%s: no section [%s]", assignment, section);
      return -1;
    }
    snprintf(p.section, sizeof p.section, "%.63s", section);
  } else if (!open_section(&p, section)) {
    snprintf(err, errlen, "%s: %s", assignment, p.err);
    return -1;
  }
  if (strcmp(section, "shifts") == 0) {
    snprintf(err, errlen, "%s: the shift schedule cannot be set here", assignment);
    return -1;
  }
  if (!handler(&p, section, key, value) || p.err[0]) {
    snprintf(err, errlen, "%s: %s", assignment, p.err);
    return -1;
  }
  return 0;
}

int CNF_Recheck(CNF_Config *c, int replay, char *err, size_t errlen)
{
  static parse_state p;
  memset(&p, 0, sizeof p);
  p.cfg = c;
  p.replay = replay;
  p.machine_line = 1;
  check_config(&p);
  if (p.err[0]) {
    snprintf(err, errlen, "%s", p.err);
    return -1;
  }
  return 0;
}

/* ---- printing ------------------------------------------------------------ */

static void print_value(const key_desc *k, const void *target, char *buf, size_t size)
{
  const void *slot = (const char *)target + k->offset;
  switch (k->kind) {
  case K_DOUBLE: {
    double v = *(const double *)slot;
    if (isnan(v))
      buf[0] = '\0';
    else
      snprintf(buf, size, "%.10g", v / k->scale);
    return;
  }
  case K_UINT:
    snprintf(buf, size, "%u", *(const unsigned *)slot);
    return;
  case K_SPECIAL:
    k->print(slot, buf, size);
    return;
  default:
    snprintf(buf, size, "%s", (const char *)slot);
  }
}

static void print_section(FILE *out, const char *header, const section_desc *s, const void *target)
{
  fprintf(out, "[%s]\n", header);
  for (int i = 0; i < s->n_keys; i++) {
    char v[512];
    print_value(&s->keys[i], target, v, sizeof v);
    if (v[0])
      fprintf(out, "%s = %s\n", s->keys[i].name, v);
    else
      fprintf(out, "; %s = (not set)\n", s->keys[i].name);
  }
  fputc('\n', out);
}

void CNF_Print(const CNF_Config *c, FILE *out)
{
  fprintf(out, "; effective configuration of %s\n", c->path);
  print_section(out, "machine", &sections[0], c);
  print_section(out, "modbus", &sections[1], c);
  for (int ch = 0; ch < RMP_CHANNEL_COUNT; ch++)
    if (c->map.ch[ch].enabled) {
      char h[64];
      snprintf(h, sizeof h, "channel.%s", RMP_ChannelName(ch));
      print_section(out, h, &sections[2], &c->map.ch[ch]);
    }
  for (int i = 0; i < c->n_jobs; i++) {
    char h[64];
    snprintf(h, sizeof h, "job.%s", c->jobs[i].name);
    print_section(out, h, &sections[3], &c->jobs[i]);
  }
  for (int i = 0; i < c->n_wheels; i++) {
    char h[64];
    snprintf(h, sizeof h, "wheel.%s", c->wheels[i].name);
    print_section(out, h, &sections[4], &c->wheels[i]);
  }
  char starts[128], names[256];
  SFT_Format(&c->shifts, starts, sizeof starts, names, sizeof names);
  fprintf(out, "[shifts]\nstarts = %s\nnames = %s\n\n", starts, names);
  print_section(out, "segmentation", &sections[6], &c->detect);
  print_section(out, "condition", &sections[7], c);
  print_section(out, "alerts", &sections[8], c);
  print_section(out, "writeback", &sections[9], c);
  print_section(out, "metrics", &sections[10], c);
  print_section(out, "mqtt", &sections[11], c);
}

void CNF_PrintKeys(FILE *out)
{
  for (int s = 0; s < N(sections); s++)
    for (int i = 0; i < sections[s].n_keys; i++)
      fprintf(out, "%s%s %s\n", sections[s].name, sections[s].named ? ".NAME" : "", sections[s].keys[i].name);
}
