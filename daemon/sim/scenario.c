/* scenario.c: the strict INI scenario parser (inih) and the scenario defaults and checks. */
#include "scenario.h"

#include "simtime.h"

#include <errno.h>
#include <ini.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

void SIM_ScenarioDefaults(SIM_Scenario *s)
{
  memset(s, 0, sizeof *s);
  SIM_Machine *m = &s->machine;
  snprintf(m->shop, sizeof m->shop, "Alder Street Works");
  snprintf(m->name, sizeof m->name, "sg4");
  m->idle_power_w = 1800.0;
  m->warmup_power_w = 250.0;
  m->warmup_s = 1800.0;
  m->drift_w = 40.0;
  m->drift_period_s = 5400.0;
  m->spindle_rpm = 1450.0;
  m->wheel_speed_m_s = 0.0;
  m->power_rating_w = 11000.0;
  m->unit_id = 1;

  SIM_Wheel *w = &s->wheel;
  snprintf(w->name, sizeof w->name, "cx60-vitrified");
  w->diameter_mm = 400.0;
  w->width_mm = 50.0;
  w->min_diameter_mm = 300.0;
  w->max_speed_m_s = 35.0;
  w->sharp_wear_flat = 0.01;
  w->max_wear_flat = 0.08;
  w->dulling_rate = 8.0e-6;
  w->dulling_aggressiveness = 10.0;
  w->dulling_exponent = 1.0;
  w->fracture_aggressiveness = 60.0;
  w->fracture_exponent = 3.0;
  w->fracture_rate = 2.0e-4;
  w->g_ratio = 80.0;
  w->fracture_g_ratio = 150.0;
  w->dress_depth_mm = 0.02;
  w->dress_s = 300.0;
  w->wear_factor = 1.0;

  SIM_Job *j = &s->job;
  snprintf(j->geometry, sizeof j->geometry, "surface");
  snprintf(j->material, sizeof j->material, "steel");
  j->chip_energy_j_mm3 = 13.8;
  j->ploughing_force_n_mm = 0.1;
  j->friction_coefficient = 0.4;
  j->contact_pressure_mpa = 10.0;
  j->burn_factor = 1.0;
  j->length_mm = 300.0;
  j->width_mm = 30.0;
  j->overrun_mm = 25.0;
  j->table_speed_mm_min = 9000.0;
  j->reversal_s = 0.5;
  j->rough_passes = 6;
  j->rough_depth_mm = 0.015;
  j->finish_passes = 2;
  j->finish_depth_mm = 0.005;
  j->spark_out_passes = 2;
  j->spark_out_fraction = 0.3;
  j->load_s = 60.0;
  j->infeed_zero_mm = 0.0;

  SIM_Schedule *c = &s->schedule;
  c->dress_on_coil = -1;

  s->noise.seed = 1;
  s->noise.power_sd_w = 15.0;
  s->noise.rpm_sd = 0.0;
  s->noise.step_s = 0.01;
}

/* ---- the key table ---- */

typedef enum key_type {
  K_DOUBLE,
  K_INT,
  K_STRING,
  K_SEED,
  K_TIME,
  K_PARTS,       /* list of part numbers */
  K_PART_VALUES, /* list of PART:VALUE */
  K_FAULT,       /* repeatable fault specification */
} key_type;

typedef struct key_def {
  const char *section; /* section name */
  const char *name;    /* key name */
  key_type type;       /* value syntax */
  size_t offset;       /* field in SIM_Scenario */
  size_t count_offset; /* int count field for lists */
  double lo, hi;       /* allowed range (numbers, list values) */
  int lo_open;         /* 1: lo itself is not allowed */
  int hi_open;         /* 1: hi itself is not allowed */
} key_def;

#define OFF(f) offsetof(SIM_Scenario, f)
#define D(sec, key, field, lo, hi, lo_open, hi_open) \
  { sec, key, K_DOUBLE, OFF(field), 0, lo, hi, lo_open, hi_open }
#define I(sec, key, field, lo, hi) { sec, key, K_INT, OFF(field), 0, lo, hi, 0, 0 }
#define S(sec, key, field) { sec, key, K_STRING, OFF(field), 0, 0, 0, 0, 0 }

static const key_def keys[] = {
  S("machine", "shop", machine.shop),
  S("machine", "name", machine.name),
  D("machine", "idle_power_w", machine.idle_power_w, 0, 1e6, 0, 0),
  D("machine", "warmup_power_w", machine.warmup_power_w, 0, 1e6, 0, 0),
  D("machine", "warmup_s", machine.warmup_s, 0, 1e9, 1, 0),
  D("machine", "drift_w", machine.drift_w, 0, 1e6, 0, 0),
  D("machine", "drift_period_s", machine.drift_period_s, 0, 1e9, 1, 0),
  D("machine", "spindle_rpm", machine.spindle_rpm, 0, 1e5, 1, 0),
  D("machine", "wheel_speed_m_s", machine.wheel_speed_m_s, 0, 500, 0, 0),
  D("machine", "power_rating_w", machine.power_rating_w, 0, 1e7, 1, 0),
  I("machine", "unit_id", machine.unit_id, 0, 255),

  S("wheel", "name", wheel.name),
  D("wheel", "diameter_mm", wheel.diameter_mm, 0, 5000, 1, 0),
  D("wheel", "width_mm", wheel.width_mm, 0, 2000, 1, 0),
  D("wheel", "min_diameter_mm", wheel.min_diameter_mm, 0, 5000, 1, 0),
  D("wheel", "max_speed_m_s", wheel.max_speed_m_s, 0, 500, 1, 0),
  D("wheel", "sharp_wear_flat", wheel.sharp_wear_flat, 0, 1, 1, 1),
  D("wheel", "max_wear_flat", wheel.max_wear_flat, 0, 1, 1, 1),
  D("wheel", "dulling_rate", wheel.dulling_rate, 0, 1, 0, 0),
  D("wheel", "dulling_aggressiveness", wheel.dulling_aggressiveness, 0, 1e6, 1, 0),
  D("wheel", "dulling_exponent", wheel.dulling_exponent, 0, 10, 0, 0),
  D("wheel", "fracture_aggressiveness", wheel.fracture_aggressiveness, 0, 1e6, 1, 0),
  D("wheel", "fracture_exponent", wheel.fracture_exponent, 0, 10, 0, 0),
  D("wheel", "fracture_rate", wheel.fracture_rate, 0, 1e3, 0, 0),
  D("wheel", "g_ratio", wheel.g_ratio, 0, 1e9, 1, 0),
  D("wheel", "fracture_g_ratio", wheel.fracture_g_ratio, 0, 1e9, 1, 0),
  D("wheel", "dress_depth_mm", wheel.dress_depth_mm, 0, 10, 0, 0),
  D("wheel", "dress_s", wheel.dress_s, 0, 1e6, 0, 0),
  D("wheel", "wear_factor", wheel.wear_factor, 0, 1e9, 1, 0),

  S("job", "geometry", job.geometry),
  S("job", "material", job.material),
  D("job", "chip_energy_j_mm3", job.chip_energy_j_mm3, 0, 1000, 1, 0),
  D("job", "ploughing_force_n_mm", job.ploughing_force_n_mm, 0, 1000, 0, 0),
  D("job", "friction_coefficient", job.friction_coefficient, 0, 10, 0, 0),
  D("job", "contact_pressure_mpa", job.contact_pressure_mpa, 0, 1e4, 0, 0),
  D("job", "burn_factor", job.burn_factor, 0, 100, 1, 0),
  D("job", "length_mm", job.length_mm, 0, 1e5, 1, 0),
  D("job", "width_mm", job.width_mm, 0, 2000, 1, 0),
  D("job", "overrun_mm", job.overrun_mm, 0, 1e4, 0, 0),
  D("job", "table_speed_mm_min", job.table_speed_mm_min, 0, 1e6, 1, 0),
  D("job", "reversal_s", job.reversal_s, 0, 600, 0, 0),
  I("job", "rough_passes", job.rough_passes, 0, 10000),
  D("job", "rough_depth_mm", job.rough_depth_mm, 0, 10, 1, 0),
  I("job", "finish_passes", job.finish_passes, 0, 10000),
  D("job", "finish_depth_mm", job.finish_depth_mm, 0, 10, 1, 0),
  I("job", "spark_out_passes", job.spark_out_passes, 0, 10000),
  D("job", "spark_out_fraction", job.spark_out_fraction, 0, 1, 0, 1),
  D("job", "load_s", job.load_s, 0, 1e6, 0, 0),
  D("job", "infeed_zero_mm", job.infeed_zero_mm, -1e4, 1e4, 0, 0),

  { "schedule", "epoch", K_TIME, OFF(schedule.epoch_ms), OFF(schedule.has_epoch), 0, 0, 0, 0 },
  I("schedule", "parts", schedule.parts, 0, 1e9),
  D("schedule", "start_delay_s", schedule.start_delay_s, 0, 1e9, 0, 0),
  I("schedule", "dress_every_parts", schedule.dress_every_parts, 0, 1e9),
  { "schedule", "dress_at_parts", K_PARTS, OFF(schedule.dress_at), OFF(schedule.n_dress_at), 1, 1e9,
    0, 0 },
  I("schedule", "dress_on_coil", schedule.dress_on_coil, 0, 15),
  { "schedule", "table_speed_at", K_PART_VALUES, OFF(schedule.table_speed),
    OFF(schedule.n_table_speed), 0, 1e6, 1, 0 },
  { "schedule", "rough_depth_at", K_PART_VALUES, OFF(schedule.rough_depth),
    OFF(schedule.n_rough_depth), 0, 10, 1, 0 },
  { "schedule", "finish_depth_at", K_PART_VALUES, OFF(schedule.finish_depth),
    OFF(schedule.n_finish_depth), 0, 10, 1, 0 },

  { "noise", "seed", K_SEED, OFF(noise.seed), 0, 0, 0, 0, 0 },
  D("noise", "power_sd_w", noise.power_sd_w, 0, 1e5, 0, 0),
  D("noise", "rpm_sd", noise.rpm_sd, 0, 1e4, 0, 0),
  D("noise", "step_s", noise.step_s, 0, 3600, 1, 0),

  { "faults", "fault", K_FAULT, OFF(faults), OFF(n_faults), 0, 0, 0, 0 },
};
#define KEY_COUNT (sizeof keys / sizeof keys[0])

static const char *const sections[] = { "machine", "wheel", "job", "schedule", "noise", "faults" };

/* inih reads lines of at most INI_MAX_LINE - 1 bytes including the newline; a
 * longer one is split silently, so the reader reports it instead. */
#define LINE_LIMIT (INI_MAX_LINE - 2)

typedef struct parse_state {
  SIM_Scenario *s;
  const char *name;          /* file name for messages */
  const char *next;          /* reader position in the text */
  int line;                  /* number of the line last handed to inih */
  int key_line[KEY_COUNT];   /* line each key was set on, 0 = not set */
  int section_line[6];       /* first line of each known section header */
  int err_line;              /* line of the first error found, 0 = none */
  char err[512];             /* message of that error */
  char buf[INI_MAX_LINE];    /* the line handed to inih */
} parse_state;

static void fail_at(parse_state *st, int line, const char *fmt, ...)
  __attribute__((format(printf, 3, 4)));
static void fail_at(parse_state *st, int line, const char *fmt, ...)
{
  if (st->err_line != 0 && st->err_line <= line)
    return;
  char msg[400];
  va_list ap;
  va_start(ap, fmt);
  vsnprintf(msg, sizeof msg, fmt, ap);
  va_end(ap);
  st->err_line = line;
  snprintf(st->err, sizeof st->err, "%s:%d: %s", st->name, line, msg);
}

static const char *trim_left(const char *p)
{
  while (*p == ' ' || *p == '\t')
    p++;
  return p;
}

/* Checks a raw line for what inih would silently accept or mangle. */
static void check_raw_line(parse_state *st, const char *line, size_t len)
{
  if (len > LINE_LIMIT) {
    fail_at(st, st->line, "line is %zu characters long, over the limit of %d", len, LINE_LIMIT);
    return;
  }
  const char *p = trim_left(line);
  if (*p == '\0' || *p == '\r' || *p == '\n' || *p == ';' || *p == '#')
    return;
  if (p != line && st->line > 1) {
    fail_at(st, st->line,
            "indented line: inih takes an indented line after a key as more of its value;"
            " remove the indentation");
    return;
  }
  if (*p == '[') {
    const char *close = strchr(p, ']');
    if (close == NULL)
      return; /* inih reports the syntax error */
    size_t n = (size_t)(close - p - 1);
    for (size_t i = 0; i < sizeof sections / sizeof sections[0]; i++) {
      if (strlen(sections[i]) == n && strncmp(p + 1, sections[i], n) == 0) {
        if (st->section_line[i] == 0)
          st->section_line[i] = st->line;
        return;
      }
    }
    fail_at(st, st->line, "unknown section [%.*s] (machine, wheel, job, schedule, noise, faults)",
            (int)(n > 60 ? 60 : n), p + 1);
  }
}

/* fgets-like reader over the text, so the handler knows the line number. */
static char *reader(char *str, int num, void *stream)
{
  parse_state *st = stream;
  if (*st->next == '\0')
    return NULL;
  const char *eol = strchr(st->next, '\n');
  size_t len = eol != NULL ? (size_t)(eol - st->next) : strlen(st->next);
  st->line++;
  size_t content = len;
  if (content > 0 && st->next[content - 1] == '\r')
    content--;
  check_raw_line(st, st->next, content);
  size_t copy = len < (size_t)num - 2 ? len : (size_t)num - 2;
  memcpy(str, st->next, copy);
  str[copy] = '\n';
  str[copy + 1] = '\0';
  st->next += len;
  if (*st->next == '\n')
    st->next++;
  return str;
}

static const char *value_hint(const char *value)
{
  if (strchr(value, ';') != NULL)
    return " (an inline comment needs a space before ';')";
  if (strchr(value, '#') != NULL)
    return " ('#' starts a comment only at the start of a line)";
  return "";
}

static void range_text(const key_def *k, char *buf, size_t n)
{
  if (k->type == K_INT)
    snprintf(buf, n, "an integer from %g to %g", k->lo, k->hi);
  else if (k->lo == 0 && k->lo_open && k->hi >= 1e5)
    snprintf(buf, n, "a number > 0");
  else if (k->lo == 0 && !k->lo_open && k->hi >= 1e5)
    snprintf(buf, n, "a number >= 0");
  else
    snprintf(buf, n, "a number in %c%g, %g%c", k->lo_open ? '(' : '[', k->lo, k->hi,
             k->hi_open ? ')' : ']');
}

static int in_range(const key_def *k, double v)
{
  if (!isfinite(v))
    return 0;
  if (k->lo_open ? v <= k->lo : v < k->lo)
    return 0;
  if (k->hi_open ? v >= k->hi : v > k->hi)
    return 0;
  return 1;
}

static int parse_number(const char *text, double *v)
{
  char *end = NULL;
  if (*text == '\0')
    return -1;
  *v = strtod(text, &end);
  if (end == text || *end != '\0' || !isfinite(*v))
    return -1;
  return 0;
}

static int parse_integer(const char *text, long long *v)
{
  char *end = NULL;
  if (*text == '\0')
    return -1;
  *v = strtoll(text, &end, 10);
  if (end == text || *end != '\0')
    return -1;
  return 0;
}

/* Splits a list at commas and blanks; calls item() for each; stops at its error. */
static int parse_list(parse_state *st, const key_def *k, const char *value, void *field, int *count)
{
  char buf[INI_MAX_LINE];
  snprintf(buf, sizeof buf, "%s", value);
  int n = 0;
  int last_part = 0;
  char *save = NULL;
  for (char *tok = strtok_r(buf, ", \t", &save); tok != NULL; tok = strtok_r(NULL, ", \t", &save)) {
    if (n >= SIM_LIST_MAX) {
      fail_at(st, st->line, "[%s] %s: more than %d entries", k->section, k->name, SIM_LIST_MAX);
      return -1;
    }
    long long part;
    double v = 0.0;
    char *colon = strchr(tok, ':');
    if (k->type == K_PART_VALUES) {
      if (colon == NULL) {
        fail_at(st, st->line, "[%s] %s: expected PART:VALUE entries, got \"%s\"", k->section,
                k->name, tok);
        return -1;
      }
      *colon = '\0';
      char range[80];
      range_text(k, range, sizeof range);
      if (parse_number(colon + 1, &v) != 0 || !in_range(k, v)) {
        fail_at(st, st->line, "[%s] %s: value of part %s: expected %s, got \"%s\"%s", k->section,
                k->name, tok, range, colon + 1, value_hint(colon + 1));
        return -1;
      }
    } else if (colon != NULL) {
      fail_at(st, st->line, "[%s] %s: expected part numbers, got \"%s\"", k->section, k->name, tok);
      return -1;
    }
    if (parse_integer(tok, &part) != 0 || part < 1 || part > 1000000000) {
      fail_at(st, st->line, "[%s] %s: expected a part number >= 1, got \"%s\"%s", k->section,
              k->name, tok, value_hint(tok));
      return -1;
    }
    if (part <= last_part) {
      fail_at(st, st->line, "[%s] %s: part numbers must increase (%lld after %d)", k->section,
              k->name, part, last_part);
      return -1;
    }
    last_part = (int)part;
    if (k->type == K_PART_VALUES) {
      SIM_PartValue *pv = field;
      pv[n].part = (int)part;
      pv[n].value = v;
    } else {
      ((int *)field)[n] = (int)part;
    }
    n++;
  }
  if (n == 0) {
    fail_at(st, st->line, "[%s] %s: empty list", k->section, k->name);
    return -1;
  }
  *count = n;
  return 0;
}

static int handler(void *user, const char *section, const char *name, const char *value)
{
  parse_state *st = user;
  char *base = (char *)st->s;
  int known_section = 0;
  for (size_t i = 0; i < sizeof sections / sizeof sections[0]; i++)
    known_section |= strcmp(section, sections[i]) == 0;
  if (!known_section) {
    if (*section == '\0')
      fail_at(st, st->line, "key \"%s\" before any [section]", name);
    else
      fail_at(st, st->line, "unknown section [%s]", section);
    return 0;
  }
  size_t ki = KEY_COUNT;
  for (size_t i = 0; i < KEY_COUNT; i++)
    if (strcmp(keys[i].section, section) == 0 && strcmp(keys[i].name, name) == 0)
      ki = i;
  if (ki == KEY_COUNT) {
    fail_at(st, st->line, "[%s] unknown key \"%s\"", section, name);
    return 0;
  }
  const key_def *k = &keys[ki];
  if (st->key_line[ki] != 0 && k->type != K_FAULT) {
    fail_at(st, st->line, "[%s] %s: repeated (first set on line %d)", section, name,
            st->key_line[ki]);
    return 0;
  }
  st->key_line[ki] = st->line;
  void *field = base + k->offset;
  char range[80];
  range_text(k, range, sizeof range);
  switch (k->type) {
  case K_DOUBLE: {
    double v;
    if (parse_number(value, &v) != 0 || !in_range(k, v)) {
      fail_at(st, st->line, "[%s] %s: expected %s, got \"%s\"%s", section, name, range, value,
              value_hint(value));
      return 0;
    }
    *(double *)field = v;
    break;
  }
  case K_INT: {
    long long v;
    if (parse_integer(value, &v) != 0 || v < (long long)k->lo || v > (long long)k->hi) {
      fail_at(st, st->line, "[%s] %s: expected %s, got \"%s\"%s", section, name, range, value,
              value_hint(value));
      return 0;
    }
    *(int *)field = (int)v;
    break;
  }
  case K_STRING:
    if (*value == '\0' || strlen(value) >= SIM_NAME_MAX) {
      fail_at(st, st->line, "[%s] %s: expected a name of 1 to %d characters", section, name,
              SIM_NAME_MAX - 1);
      return 0;
    }
    snprintf((char *)field, SIM_NAME_MAX, "%s", value);
    break;
  case K_SEED: {
    char *end = NULL;
    errno = 0;
    unsigned long long v = strtoull(value, &end, 10);
    if (*value == '\0' || *value == '-' || end == value || *end != '\0' || errno != 0) {
      fail_at(st, st->line, "[%s] %s: expected an unsigned integer, got \"%s\"%s", section, name,
              value, value_hint(value));
      return 0;
    }
    *(uint64_t *)field = (uint64_t)v;
    break;
  }
  case K_TIME:
    if (SIM_ParseTime(value, (int64_t *)field) != 0) {
      fail_at(st, st->line,
              "[%s] %s: expected UNIX seconds or an ISO 8601 time (2024-03-04T06:00:00Z), got \"%s\"",
              section, name, value);
      return 0;
    }
    *(int *)(base + k->count_offset) = 1;
    break;
  case K_PARTS:
  case K_PART_VALUES:
    if (parse_list(st, k, value, field, (int *)(base + k->count_offset)) != 0)
      return 0;
    break;
  case K_FAULT: {
    int *n = (int *)(base + k->count_offset);
    char why[300];
    if (*n >= SIM_FAULT_MAX) {
      fail_at(st, st->line, "[faults] fault: more than %d faults", SIM_FAULT_MAX);
      return 0;
    }
    if (SIM_FaultParse(value, &st->s->faults[*n], why, sizeof why) != 0) {
      fail_at(st, st->line, "[faults] %s", why);
      return 0;
    }
    (*n)++;
    break;
  }
  }
  return 1;
}

static size_t key_index(const char *section, const char *name)
{
  for (size_t i = 0; i < KEY_COUNT; i++)
    if (strcmp(keys[i].section, section) == 0 && strcmp(keys[i].name, name) == 0)
      return i;
  return 0; /* not reached with the names below */
}

/* Where a cross-key message points: the first of the keys involved that the
 * file set, else that key's section header, else line 1. */
static int line_of(const int *key_line, const int *section_line, const char *const *pairs)
{
  if (key_line == NULL)
    return 0;
  for (int i = 0; pairs[i] != NULL; i += 2) {
    int line = key_line[key_index(pairs[i], pairs[i + 1])];
    if (line > 0)
      return line;
  }
  for (int i = 0; pairs[i] != NULL; i += 2)
    for (size_t k = 0; k < sizeof sections / sizeof sections[0]; k++)
      if (strcmp(sections[k], pairs[i]) == 0 && section_line[k] > 0)
        return section_line[k];
  return 1;
}

/* Cross-key checks. The message names the first key involved ("[sec] key: ...");
 * *line gets the line to report (0 without key_line). */
static int check(const SIM_Scenario *s, const int *key_line, const int *section_line, char *err,
                 size_t n, int *line)
{
  const SIM_Wheel *w = &s->wheel;
  const SIM_Job *j = &s->job;
  const SIM_Machine *m = &s->machine;
#define FAIL(PAIRS, ...)                                                                     \
  do {                                                                                       \
    static const char *const pairs_[] = { UNPAREN PAIRS, NULL };                            \
    *line = line_of(key_line, section_line, pairs_);                                         \
    int used_ = snprintf(err, n, "[%s] %s: ", pairs_[0], pairs_[1]);                         \
    if (used_ > 0 && (size_t)used_ < n)                                                      \
      snprintf(err + used_, n - (size_t)used_, __VA_ARGS__);                                 \
    return -1;                                                                               \
  } while (0)
#define K(S, N) S, N
#define UNPAREN(...) __VA_ARGS__

  if (strcmp(j->geometry, "surface") != 0)
    FAIL((K("job", "geometry")),
         "\"%s\" is not simulated yet (surface: reciprocating surface grinding)", j->geometry);
  if (w->min_diameter_mm >= w->diameter_mm)
    FAIL((K("wheel", "min_diameter_mm"), K("wheel", "diameter_mm")),
         "%g mm is not below the wheel diameter %g mm", w->min_diameter_mm, w->diameter_mm);
  if (w->sharp_wear_flat >= w->max_wear_flat)
    FAIL((K("wheel", "max_wear_flat"), K("wheel", "sharp_wear_flat")),
         "%g is not above sharp_wear_flat %g", w->max_wear_flat, w->sharp_wear_flat);
  if (j->width_mm > w->width_mm)
    FAIL((K("job", "width_mm"), K("wheel", "width_mm")),
         "grinding width %g mm is wider than the wheel (%g mm)", j->width_mm, w->width_mm);
  double vs = m->wheel_speed_m_s > 0.0 ? m->wheel_speed_m_s
                                       : M_PI * w->diameter_mm * m->spindle_rpm / 60000.0;
  if (vs > w->max_speed_m_s) {
    if (m->wheel_speed_m_s > 0.0)
      FAIL((K("machine", "wheel_speed_m_s"), K("wheel", "max_speed_m_s")),
           "%g m/s is over the wheel's marked maximum %g m/s", m->wheel_speed_m_s,
           w->max_speed_m_s);
    FAIL((K("machine", "spindle_rpm"), K("wheel", "diameter_mm"), K("wheel", "max_speed_m_s")),
         "%g 1/min on a %g mm wheel is %.1f m/s, over the wheel's marked maximum %g m/s",
         m->spindle_rpm, w->diameter_mm, vs, w->max_speed_m_s);
  }
  if (j->rough_passes + j->finish_passes < 1)
    FAIL((K("job", "rough_passes"), K("job", "finish_passes")),
         "a part needs at least one roughing or finishing pass");
  /* The wheel must be clear of the work at the reversal, else the contact
   * ramps would overlap the reversal. */
  double max_depth = j->rough_depth_mm > j->finish_depth_mm ? j->rough_depth_mm : j->finish_depth_mm;
  for (int i = 0; i < s->schedule.n_rough_depth; i++)
    if (s->schedule.rough_depth[i].value > max_depth)
      max_depth = s->schedule.rough_depth[i].value;
  for (int i = 0; i < s->schedule.n_finish_depth; i++)
    if (s->schedule.finish_depth[i].value > max_depth)
      max_depth = s->schedule.finish_depth[i].value;
  double lg = sqrt(max_depth * w->diameter_mm);
  if (j->overrun_mm < lg / 2.0)
    FAIL((K("job", "overrun_mm"), K("job", "rough_depth_mm"), K("job", "finish_depth_mm"),
          K("wheel", "diameter_mm")),
         "%g mm is less than half the longest contact length (%.2f mm)", j->overrun_mm, lg);
  if (m->idle_power_w + m->warmup_power_w >= m->power_rating_w)
    FAIL((K("machine", "power_rating_w"), K("machine", "idle_power_w"),
          K("machine", "warmup_power_w")),
         "%g W is not above the idle power of the cold spindle (%g W)", m->power_rating_w,
         m->idle_power_w + m->warmup_power_w);
#undef FAIL
#undef K
#undef UNPAREN
  return 0;
}

int SIM_ScenarioCheck(const SIM_Scenario *s, char *err, size_t errsize)
{
  int line;
  return check(s, NULL, NULL, err, errsize, &line);
}

int SIM_ScenarioParse(const char *text, const char *name, SIM_Scenario *s, char *err,
                      size_t errsize)
{
  parse_state *st = calloc(1, sizeof *st);
  if (st == NULL) {
    snprintf(err, errsize, "%s: out of memory", name);
    return -1;
  }
  st->s = s;
  st->name = name;
  st->next = text;
  s->n_faults = 0;
  int rc = ini_parse_stream(reader, st, handler, st);
  if (rc > 0 && (st->err_line == 0 || rc < st->err_line))
    fail_at(st, rc, "syntax error: expected [section], name = value, or a comment");
  else if (rc < 0 && st->err_line == 0)
    fail_at(st, st->line, "cannot parse (inih error %d)", rc);
  if (st->err_line == 0) {
    char msg[400];
    int line = 0;
    if (check(s, st->key_line, st->section_line, msg, sizeof msg, &line) != 0)
      fail_at(st, line, "%s", msg);
  }
  int failed = st->err_line != 0;
  if (failed)
    snprintf(err, errsize, "%s", st->err);
  free(st);
  return failed ? -1 : 0;
}
