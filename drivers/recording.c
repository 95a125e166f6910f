/* recording.c: the recording samples.csv: writing and reading. */
#include "recording.h"

#include <errno.h>
#include <stdarg.h>
#include <fcntl.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

void REC_InitMeta(REC_Meta *m)
{
  memset(m, 0, sizeof(*m));
  snprintf(m->format, sizeof m->format, "%s", REC_FORMAT);
  m->geometry = GRD_SURFACE;
  m->grinding_width_mm = NAN;
  m->workpiece_diameter_mm = NAN;
  m->wheel_diameter_mm = NAN;
  m->started = NAN;
}

void REC_FormatIso(double t, char *buf, size_t size)
{
  /* A controller clock gone wild (NaN, or past year 9999) must neither overflow
   * time_t nor write a time that REC_ParseIso refuses: the epoch stands for it. */
  if (!(t >= 0.0 && t < 253402300800.0))
    t = 0.0;
  double whole = floor(t);
  time_t secs = (time_t)whole;
  /* A tolerance of 1 us, well above the rounding of a parsed time (under 0.5 us
   * until 2106): REC_FormatIso(REC_ParseIso(text)) gives text back. */
  int ms = (int)floor((t - whole) * 1000.0 + 1e-3);
  if (ms > 999)
    ms = 999;
  struct tm tm;
  gmtime_r(&secs, &tm);
  snprintf(buf, size, "%04d-%02d-%02dT%02d:%02d:%02d.%03dZ", tm.tm_year + 1900, tm.tm_mon + 1, tm.tm_mday,
           tm.tm_hour, tm.tm_min, tm.tm_sec, ms);
}

int REC_ParseIso(const char *text, double *t)
{
  struct tm tm;
  memset(&tm, 0, sizeof tm);
  int used = 0;
  if (sscanf(text, "%4d-%2d-%2dT%2d:%2d:%2d%n", &tm.tm_year, &tm.tm_mon, &tm.tm_mday, &tm.tm_hour, &tm.tm_min,
             &tm.tm_sec, &used) != 6)
    return -1;
  const char *p = text + used;
  double frac = 0.0;
  if (*p == '.') {
    double scale = 0.1;
    p++;
    if (*p < '0' || *p > '9')
      return -1;
    while (*p >= '0' && *p <= '9') {
      frac += (*p - '0') * scale;
      scale /= 10.0;
      p++;
    }
  }
  if (strcmp(p, "Z") != 0)
    return -1;
  if (tm.tm_mon < 1 || tm.tm_mon > 12 || tm.tm_mday < 1 || tm.tm_mday > 31 || tm.tm_hour > 23 ||
      tm.tm_min > 59 || tm.tm_sec > 60)
    return -1;
  tm.tm_year -= 1900;
  tm.tm_mon -= 1;
  *t = (double)timegm(&tm) + frac;
  return 0;
}

__attribute__((format(printf, 4, 5))) static int append(char *buf, size_t size, size_t *used, const char *fmt, ...)
{
  va_list ap;
  va_start(ap, fmt);
  int n = vsnprintf(buf + *used, size - *used, fmt, ap);
  va_end(ap);
  if (n < 0 || (size_t)n >= size - *used)
    return -1;
  *used += (size_t)n;
  return 0;
}

long REC_FormatHead(const REC_Meta *m, char *buf, size_t size)
{
  size_t u = 0;
  char iso[40];
  REC_FormatIso(m->started, iso, sizeof iso);
  int bad = append(buf, size, &u, "# format: %s\n# machine: %s\n# geometry: %s\n# grinding_width_mm: %.10g\n",
                   REC_FORMAT, m->machine, GRD_GeometryName(m->geometry), m->grinding_width_mm);
  if (!isnan(m->workpiece_diameter_mm))
    bad |= append(buf, size, &u, "# workpiece_diameter_mm: %.10g\n", m->workpiece_diameter_mm);
  if (!isnan(m->wheel_diameter_mm))
    bad |= append(buf, size, &u, "# wheel_diameter_mm: %.10g\n", m->wheel_diameter_mm);
  bad |= append(buf, size, &u, "# started: %s\n", iso);
  if (m->wheel[0])
    bad |= append(buf, size, &u, "# wheel: %s\n", m->wheel);
  if (m->job[0])
    bad |= append(buf, size, &u, "# job: %s\n", m->job);
  bad |= append(buf, size, &u, "%s\n", REC_HEADER);
  return bad ? -1 : (long)u;
}

/* Fixed decimals per column: enough for the instruments, and short. */
static const int decimals[REC_COLUMNS] = {6, 1, 1, 2, 6, 6, 4, 0, 0};

static const char *const column_names[REC_COLUMNS] = {
    "time", "spindle_power_w", "spindle_speed_rpm", "work_speed_mm_min", "infeed_position_mm",
    "depth_of_cut_mm", "wheel_diameter_mm", "dress_count", "grinding",
};

static double *column_slot(SMP_Sample *s, int col)
{
  switch (col) {
  case 0: return &s->time;
  case 1: return &s->spindle_power_w;
  case 2: return &s->spindle_speed_rpm;
  case 3: return &s->work_speed_mm_min;
  case 4: return &s->infeed_position_mm;
  case 5: return &s->depth_of_cut_mm;
  case 6: return &s->wheel_diameter_mm;
  case 7: return &s->dress_count;
  default: return &s->grinding;
  }
}

long REC_FormatSample(const SMP_Sample *s, char *buf, size_t size)
{
  size_t u = 0;
  SMP_Sample copy = *s;
  for (int c = 0; c < REC_COLUMNS; c++) {
    double v = *column_slot(&copy, c);
    if (c > 0 && append(buf, size, &u, ",") != 0)
      return -1;
    if (isfinite(v) && append(buf, size, &u, "%.*f", decimals[c], v) != 0)
      return -1;
  }
  if (append(buf, size, &u, "\n") != 0)
    return -1;
  return (long)u;
}

/* Parses [-]digits[.digits] quickly and exactly when it fits in 19 digits;
 * anything else goes to strtod. Returns 0, or -1 when the field is not a
 * finite number. */
static int parse_number(const char *p, size_t len, double *out)
{
  static const double pow10[] = {1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10,
                                 1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19};
  size_t i = 0;
  int neg = 0;
  if (i < len && (p[i] == '-' || p[i] == '+'))
    neg = p[i++] == '-';
  uint64_t m = 0;
  int digits = 0, frac = 0, dot = 0, any = 0;
  for (; i < len; i++) {
    char ch = p[i];
    if (ch >= '0' && ch <= '9') {
      any = 1;
      if (digits >= 19)
        goto slow;
      m = m * 10 + (uint64_t)(ch - '0');
      if (m)
        digits++;
      if (dot)
        frac++;
      if (frac > 19)
        goto slow;
    } else if (ch == '.' && !dot) {
      dot = 1;
    } else {
      goto slow;
    }
  }
  if (!any) /* "", ".", "+", "-.": no digit, no number */
    return -1;
  if (m < (1ull << 53)) {
    double v = (double)m / pow10[frac];
    *out = neg ? -v : v;
    return 0;
  }
slow:;
  char tmp[64];
  if (len >= sizeof tmp)
    return -1;
  memcpy(tmp, p, len);
  tmp[len] = '\0';
  char *end;
  errno = 0;
  double v = strtod(tmp, &end);
  if (end != tmp + len || !isfinite(v) || len == 0)
    return -1;
  *out = v;
  return 0;
}

int REC_ParseSample(const char *line, size_t len, SMP_Sample *s, int *bad_column)
{
  SMP_Clear(s, NAN);
  size_t pos = 0;
  for (int c = 0; c < REC_COLUMNS; c++) {
    const char *f = line + pos;
    const char *comma = memchr(f, ',', len - pos);
    size_t flen = comma ? (size_t)(comma - f) : len - pos;
    if ((c < REC_COLUMNS - 1) != (comma != NULL)) {
      *bad_column = 0;
      return -1;
    }
    if (flen > 0 || c == 0) {
      if (parse_number(f, flen, column_slot(s, c)) != 0) {
        *bad_column = c + 1;
        return -1;
      }
    }
    pos += flen + 1;
  }
  return 0;
}

long REC_FormatMark(double time, const char *kind, const char *text, char *buf, size_t size)
{
  size_t u = 0;
  if (append(buf, size, &u, "# mark: %.6f %s", time, kind) != 0)
    return -1;
  if (text && *text) {
    if (append(buf, size, &u, " ") != 0)
      return -1;
    for (const char *p = text; *p; p++) /* one line, whatever the text holds */
      if (append(buf, size, &u, "%c", (*p == '\n' || *p == '\r') ? ' ' : *p) != 0)
        return -1;
  }
  if (append(buf, size, &u, "\n") != 0)
    return -1;
  return (long)u;
}

/* ---- reading ---------------------------------------------------------- */

/* Returns the next line (without '\n') or NULL at the end; *complete tells
 * whether it ended with '\n'. */
static const char *next_line(REC_Reader *r, size_t *len, int *complete, int *error)
{
  *error = 0;
  for (;;) {
    char *nl = memchr(r->buf + r->start, '\n', r->end - r->start);
    if (nl && r->skip_rest) { /* the end of an over-long line already returned */
      r->start = (size_t)(nl - r->buf) + 1;
      r->skip_rest = 0;
      continue;
    }
    if (nl) {
      const char *line = r->buf + r->start;
      *len = (size_t)(nl - line);
      *complete = 1;
      r->start += *len + 1;
      r->line++;
      return line;
    }
    if (r->eof) {
      if (r->skip_rest)
        r->start = r->end;
      if (r->start == r->end)
        return NULL;
      const char *line = r->buf + r->start;
      *len = r->end - r->start;
      *complete = 0;
      r->start = r->end;
      r->line++;
      return line;
    }
    if (r->start > 0) {
      memmove(r->buf, r->buf + r->start, r->end - r->start);
      r->end -= r->start;
      r->start = 0;
    }
    if (r->end == REC_BUF && r->skip_rest) {
      r->start = r->end;
      continue;
    }
    if (r->end == REC_BUF) {
      /* A line longer than the buffer: its first REC_BUF bytes stand for it (the
       * parser refuses them), the rest is skipped, so later lines keep their numbers. */
      r->skip_rest = 1;
      *len = r->end;
      *complete = 1;
      r->start = r->end;
      r->line++;
      return r->buf;
    }
    ssize_t n = read(r->fd, r->buf + r->end, REC_BUF - r->end);
    if (n < 0) {
      if (errno == EINTR)
        continue;
      *error = 1;
      return NULL;
    }
    if (n == 0)
      r->eof = 1;
    r->end += (size_t)n;
  }
}

static void trim(char *s)
{
  size_t n = strlen(s);
  while (n && (s[n - 1] == ' ' || s[n - 1] == '\t' || s[n - 1] == '\r'))
    s[--n] = '\0';
}

/* "# key: value" -> key and value. Returns 0 or -1. */
static int split_meta(const char *line, size_t len, char *key, size_t klen, char *value, size_t vlen)
{
  if (len < 2 || line[0] != '#')
    return -1;
  size_t i = 1;
  while (i < len && line[i] == ' ')
    i++;
  size_t k0 = i;
  while (i < len && line[i] != ':')
    i++;
  if (i == len || i == k0 || i - k0 >= klen)
    return -1;
  memcpy(key, line + k0, i - k0);
  key[i - k0] = '\0';
  trim(key);
  i++;
  while (i < len && line[i] == ' ')
    i++;
  size_t n = len - i < vlen - 1 ? len - i : vlen - 1;
  memcpy(value, line + i, n);
  value[n] = '\0';
  trim(value);
  return 0;
}

/* Copies text, cut to fit: metadata values are free text of any length. */
static void copy_text(char *dst, size_t size, const char *src)
{
  size_t n = strnlen(src, size - 1);
  memcpy(dst, src, n);
  dst[n] = '\0';
}

static int meta_number(const char *v, double *out)
{
  char *end;
  double x = strtod(v, &end);
  if (end == v || *end || !isfinite(x))
    return -1;
  *out = x;
  return 0;
}

static int apply_meta(REC_Meta *m, const char *key, const char *value)
{
  if (strcmp(key, "format") == 0) {
    copy_text(m->format, sizeof m->format, value);
    return strncmp(value, "gritline-samples/1", 18) == 0 && (value[18] == '\0' || value[18] == '.') ? 0 : -1;
  }
  if (strcmp(key, "machine") == 0)
    copy_text(m->machine, sizeof m->machine, value);
  else if (strcmp(key, "geometry") == 0)
    return GRD_GeometryFromName(value, &m->geometry);
  else if (strcmp(key, "grinding_width_mm") == 0)
    return meta_number(value, &m->grinding_width_mm);
  else if (strcmp(key, "workpiece_diameter_mm") == 0)
    return meta_number(value, &m->workpiece_diameter_mm);
  else if (strcmp(key, "wheel_diameter_mm") == 0)
    return meta_number(value, &m->wheel_diameter_mm);
  else if (strcmp(key, "started") == 0)
    return REC_ParseIso(value, &m->started);
  else if (strcmp(key, "wheel") == 0)
    copy_text(m->wheel, sizeof m->wheel, value);
  else if (strcmp(key, "job") == 0)
    copy_text(m->job, sizeof m->job, value);
  /* Unknown keys are kept by the format's rule: ignored here. */
  return 0;
}

int REC_Open(REC_Reader *r, const char *path, char *err, size_t errlen)
{
  memset(r, 0, sizeof(*r));
  snprintf(r->path, sizeof r->path, "%s", path);
  REC_InitMeta(&r->meta);
  r->meta.format[0] = '\0';
  r->fd = open(path, O_RDONLY | O_CLOEXEC);
  if (r->fd < 0) {
    snprintf(err, errlen, "%s: %s", path, strerror(errno));
    return -1;
  }
  r->buf = malloc(REC_BUF);
  if (!r->buf) {
    snprintf(err, errlen, "%s: out of memory", path);
    REC_Close(r);
    return -1;
  }
  size_t len;
  int complete, error;
  const char *line;
  while ((line = next_line(r, &len, &complete, &error))) {
    if (len > 0 && line[0] == '#') {
      char key[64], value[256];
      if (split_meta(line, len, key, sizeof key, value, sizeof value) != 0) {
        snprintf(err, errlen, "%s:%ld: metadata line is not \"# key: value\"", path, r->line);
        REC_Close(r);
        return -1;
      }
      if (apply_meta(&r->meta, key, value) != 0) {
        snprintf(err, errlen, "%s:%ld: bad value for metadata \"%s\": \"%s\"", path, r->line, key, value);
        REC_Close(r);
        return -1;
      }
      continue;
    }
    if (len == strlen(REC_HEADER) && memcmp(line, REC_HEADER, len) == 0) {
      if (!r->meta.format[0]) {
        snprintf(err, errlen, "%s:%ld: no \"# format: %s\" line before the header", path, r->line, REC_FORMAT);
        REC_Close(r);
        return -1;
      }
      return 0;
    }
    snprintf(err, errlen, "%s:%ld: expected the header row \"%s\"", path, r->line, REC_HEADER);
    REC_Close(r);
    return -1;
  }
  snprintf(err, errlen, "%s:%ld: %s", path, r->line, error ? strerror(errno) : "no header row: not a recording");
  REC_Close(r);
  return -1;
}

static int parse_mark(const char *line, size_t len, REC_Item *it)
{
  static const char prefix[] = "# mark: ";
  size_t pl = sizeof prefix - 1;
  if (len <= pl || memcmp(line, prefix, pl) != 0)
    return 0; /* a comment */
  char tmp[REC_LINE_MAX];
  size_t n = len - pl < sizeof tmp - 1 ? len - pl : sizeof tmp - 1;
  memcpy(tmp, line + pl, n);
  tmp[n] = '\0';
  char *sp = strchr(tmp, ' ');
  if (!sp)
    return -1;
  *sp = '\0';
  if (parse_number(tmp, strlen(tmp), &it->mark_time) != 0)
    return -1;
  char *kind = sp + 1;
  char *text = strchr(kind, ' ');
  if (text)
    *text++ = '\0';
  if (!*kind || strlen(kind) >= sizeof it->mark_kind)
    return -1;
  snprintf(it->mark_kind, sizeof it->mark_kind, "%s", kind);
  snprintf(it->mark_text, sizeof it->mark_text, "%s", text ? text : "");
  return 1;
}

int REC_Next(REC_Reader *r, REC_Item *it, char *err, size_t errlen)
{
  size_t len;
  int complete, error;
  const char *line;
  while ((line = next_line(r, &len, &complete, &error))) {
    it->line = r->line;
    if (!complete) {
      it->kind = REC_ITEM_TORN;
      snprintf(err, errlen, "%s:%ld: incomplete last line (%zu bytes): the writer stopped mid-line", r->path,
               r->line, len);
      return 1;
    }
    if (len > 0 && line[0] == '#') {
      int m = parse_mark(line, len, it);
      if (m < 0) {
        it->kind = REC_ITEM_BAD;
        snprintf(err, errlen, "%s:%ld:1: malformed mark line", r->path, r->line);
        return 1;
      }
      if (m == 0)
        continue;
      it->kind = REC_ITEM_MARK;
      return 1;
    }
    if (len == strlen(REC_HEADER) && memcmp(line, REC_HEADER, len) == 0)
      continue; /* a header repeated after a restart */
    int col = 0;
    if (REC_ParseSample(line, len, &it->sample, &col) != 0) {
      it->kind = REC_ITEM_BAD;
      if (col == 0)
        snprintf(err, errlen, "%s:%ld: expected %d columns", r->path, r->line, REC_COLUMNS);
      else
        snprintf(err, errlen, "%s:%ld:%d: column %s is not a number", r->path, r->line, col,
                 column_names[col - 1]);
      return 1;
    }
    it->kind = REC_ITEM_SAMPLE;
    return 1;
  }
  if (error) {
    snprintf(err, errlen, "%s:%ld: %s", r->path, r->line, strerror(errno));
    return -1;
  }
  return 0;
}

void REC_Close(REC_Reader *r)
{
  if (r->fd >= 0)
    close(r->fd);
  r->fd = -1;
  free(r->buf);
  r->buf = NULL;
}
