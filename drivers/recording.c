/* recording.c: the recording samples.csv: writing and reading. */
#include "recording.h"

#include <errno.h>
#include <stdarg.h>
#include <fcntl.h>
#include <math.h>
#include <stddef.h>
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

/* ---- the fast path of reading a sample row ------------------------------
 *
 * A replay spends much of its time here: a shift at 100 Hz is 2.9 million
 * rows of about 60 bytes. Rows as gritline writes them ([-]digits[.digits],
 * at most 19 digits a field) are read in one pass, without length checks;
 * anything else (an exponent, a '+', more digits, garbage) goes to
 * parse_row_general, the reference, which also words every error. The fast
 * path gives the very same double: both compute m / 10^frac from the same
 * integer m < 2^53 and frac <= 19, a quotient of two exact doubles, hence
 * correctly rounded (the value strtod gives too).
 *
 * The reader also uses the previous row (REC_Prev): consecutive rows mostly
 * end alike (speeds, infeed, diameter, dress count stand still between
 * samples), and trailing fields whose text equals the previous row's take its
 * values without being read; the time's whole seconds mostly repeat too.
 * Both are functions of the bytes alone, so the values are the same.
 *
 * The fast path needs the row followed by a byte that is not a digit, '.'
 * or ',' (the '\n', or a NUL), and REC_PAD readable bytes after that; and,
 * for the previous row, its text unmoved (REC_Next forgets it when the
 * buffer moves). */

#define ROW_FAST_MAX 248 /* REC_ParseSample copies rows up to this long */

static const double pow10_double[] = {1e0,  1e1,  1e2,  1e3,  1e4,  1e5,  1e6,  1e7,  1e8,  1e9,
                                      1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19};

#if defined(__BYTE_ORDER__) && __BYTE_ORDER__ == __ORDER_LITTLE_ENDIAN__
#define REC_LITTLE_ENDIAN 1
#endif

static inline uint64_t load8(const char *p)
{
  uint64_t x;
  memcpy(&x, p, sizeof x);
  return x;
}

/* The value of the 8 ASCII digits at p, or -1 when one of them is not a
 * digit: the time column starts with 10 digits, read here in one go. A byte
 * is a digit when b ^ '0' is 0..9: adding 0x76 sets its high bit otherwise.
 * The reduction combines pairs, quads, then the eight (the usual SWAR digit
 * reduction, first byte lowest). */
static inline int64_t eight_digits(const char *p)
{
#ifdef REC_LITTLE_ENDIAN
  uint64_t t = load8(p) ^ 0x3030303030303030ull;
  if (((t + 0x7676767676767676ull) | t) & 0x8080808080808080ull)
    return -1;
  t = t * 10u + (t >> 8);
  t = (((t & 0x000000FF000000FFull) * (100u + (1000000ull << 32))) +
       (((t >> 16) & 0x000000FF000000FFull) * (1u + (10000ull << 32)))) >> 32;
  return (int64_t)t;
#else
  (void)p;
  return -1;
#endif
}

/* Digits from p onto m (m * 10 + digit each, wrapping: the caller counts);
 * returns where they end. */
static inline const char *take_digits(const char *p, uint64_t *m)
{
  unsigned d;
  while ((d = (unsigned char)*p - (unsigned)'0') < 10u) {
    *m = *m * 10u + d;
    p++;
  }
  return p;
}

/* The end of a field: m over `digits` digits of which `frac` after the '.',
 * followed by ',' or the end of the row. Returns q, or NULL when it is not of
 * the fast form. Up to 19 digits m is exact in 64 bits (no wrap), and within
 * 2^53 it is exact in a double. */
static inline const char *finish_field(const char *q, const char *end, uint64_t m, size_t digits, size_t frac,
                                       int neg, double *out)
{
  if ((*q != ',' && q != end) || digits == 0 || digits > 19 || m >= (1ull << 53))
    return NULL;
  double v = (double)(int64_t)m / pow10_double[frac]; /* signed: one instruction, exact below 2^53 */
  *out = neg ? -v : v;
  return q;
}

/* One field of the fast form at p, ended by ',' or by the end of the row.
 * Returns where it ends, or NULL when it is not of that form. */
static inline const char *scan_field(const char *p, const char *end, double *out)
{
  int neg = *p == '-';
  p += neg;
  const char *d0 = p;
  int64_t first = eight_digits(p);
  uint64_t m = 0;
  if (first >= 0) {
    m = (uint64_t)first;
    p += 8;
  }
  p = take_digits(p, &m);
  size_t digits = (size_t)(p - d0), frac = 0;
  if (*p == '.') {
    const char *f0 = ++p;
    p = take_digits(p, &m);
    frac = (size_t)(p - f0);
    digits += frac;
  }
  return finish_field(p, end, m, digits, frac, neg, out);
}

/* Whether the n bytes at a and b are equal; both have 16 readable bytes. */
static inline int same_bytes(const char *a, const char *b, size_t n)
{
#ifdef REC_LITTLE_ENDIAN
  if (n <= 16) {
    uint64_t m0 = n >= 8 ? ~0ull : (1ull << (8 * n)) - 1u;
    uint64_t m1 = n <= 8 ? 0 : n >= 16 ? ~0ull : (1ull << (8 * (n - 8))) - 1u;
    return ((load8(a) ^ load8(b)) & m0) == 0 && ((load8(a + 8) ^ load8(b + 8)) & m1) == 0;
  }
#endif
  return memcmp(a, b, n) == 0;
}

/* Count of equal bytes at the ends of a[0..alen) and b[0..blen). */
static inline size_t same_ending(const char *a, size_t alen, const char *b, size_t blen)
{
  size_t n = alen < blen ? alen : blen, k = 0;
#ifdef REC_LITTLE_ENDIAN
  for (; k + 8 <= n; k += 8) {
    uint64_t x = load8(a + alen - k - 8) ^ load8(b + blen - k - 8);
    if (x) /* the last byte is the highest: equal bytes are leading zero bytes */
      return k + ((unsigned)__builtin_clzll(x) >> 3);
  }
#endif
  while (k < n && a[alen - 1 - k] == b[blen - 1 - k])
    k++;
  return k;
}

/* The time (column 0) at the start of a row: when the previous row's time
 * had the same whole seconds (the same bytes up to its '.'), they are not
 * read again. Keeps this row's whole seconds in prev. */
static inline const char *scan_time(const char *row, const char *end, double *out, REC_Prev *prev)
{
  size_t whole = prev->time_whole_digits;
  uint64_t m;
  const char *p;
  if (whole && same_bytes(row, prev->text, whole + 1)) {
    m = prev->time_whole;
    p = row + whole + 1;
  } else {
    int64_t first = eight_digits(row);
    m = first >= 0 ? (uint64_t)first : 0;
    p = take_digits(row + (first >= 0 ? 8 : 0), &m);
    whole = (size_t)(p - row);
    if (*p != '.' || whole == 0 || whole > 19) { /* not the usual d...d.d...d */
      prev->time_whole_digits = 0;
      return scan_field(row, end, out);
    }
    prev->time_whole_digits = whole;
    prev->time_whole = m;
    p++;
  }
  const char *f0 = p;
  p = take_digits(p, &m);
  size_t frac = (size_t)(p - f0);
  return finish_field(p, end, m, whole + frac, frac, 0, out);
}

/* Where each column goes in a sample. */
static const size_t column_offset[REC_COLUMNS] = {
    offsetof(SMP_Sample, time),
    offsetof(SMP_Sample, spindle_power_w),
    offsetof(SMP_Sample, spindle_speed_rpm),
    offsetof(SMP_Sample, work_speed_mm_min),
    offsetof(SMP_Sample, infeed_position_mm),
    offsetof(SMP_Sample, depth_of_cut_mm),
    offsetof(SMP_Sample, wheel_diameter_mm),
    offsetof(SMP_Sample, dress_count),
    offsetof(SMP_Sample, grinding),
};

static inline double *column_value(SMP_Sample *s, int c)
{
  return (double *)(void *)((char *)s + column_offset[c]);
}

/* The general reading of a row, field by field, as the format says. */
static int parse_row_general(const char *line, size_t len, SMP_Sample *s, int *bad_column)
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
      if (parse_number(f, flen, column_value(s, c)) != 0) {
        *bad_column = c + 1;
        return -1;
      }
    }
    pos += flen + 1;
  }
  return 0;
}

/* Forgets the previous row: its bytes may be gone. */
static void forget_prev(REC_Prev *prev)
{
  prev->text = NULL;
  prev->time_whole_digits = 0; /* scan_time compares with prev->text only when set */
}

/* The fast path (see above), with the previous row or none (prev NULL).
 * Returns 0, or -1 when the row is not of the fast form; then prev is half
 * updated and the caller must forget it. prev is updated value by value: a
 * copy of a whole sample just written would stall on its stores. */
static int parse_row_fast(const char *row, size_t len, SMP_Sample *s, REC_Prev *prev)
{
  const char *end = row + len;
  int same_from = REC_COLUMNS; /* the columns from here on are the previous row's */
  if (prev && prev->text) {
    size_t same = same_ending(row, len, prev->text, prev->len);
    while (same_from > 1 && prev->comma[same_from - 1] <= same)
      same_from--;
  }
  const char *p = prev ? scan_time(row, end, &s->time, prev) : scan_field(row, end, &s->time);
  if (!p || *p != ',')
    return -1;
  for (int c = 1; c < same_from; c++) {
    if (prev)
      prev->comma[c] = (unsigned)(end - p);
    p++;
    double *v = column_value(s, c);
    const char *q = p;
    if (*p == ',' || p == end)
      *v = NAN; /* an empty field: a channel not read */
    else if (!(q = scan_field(p, end, v)))
      return -1;
    /* A comma must follow every field but the last, which ends the row. */
    if (c < REC_COLUMNS - 1 ? *q != ',' : q != end)
      return -1;
    if (prev)
      *column_value(&prev->sample, c) = *v;
    p = q;
  }
  if (same_from < REC_COLUMNS) {
    /* The rest equals the previous row's from the comma before same_from
     * on: that comma must be where this row's fields read so far end. */
    if ((size_t)(end - p) != prev->comma[same_from])
      return -1;
    for (int c = same_from; c < REC_COLUMNS; c++)
      *column_value(s, c) = *column_value(&prev->sample, c);
  }
  if (prev) {
    prev->text = row;
    prev->len = len;
  }
  return 0;
}

int REC_ParseSample(const char *line, size_t len, SMP_Sample *s, int *bad_column)
{
  if (len > ROW_FAST_MAX)
    return parse_row_general(line, len, s, bad_column);
  char row[ROW_FAST_MAX + 1 + REC_PAD]; /* the row, a NUL and the padding */
  memcpy(row, line, len);
  memset(row + len, 0, 1 + REC_PAD);
  if (parse_row_fast(row, len, s, NULL) == 0)
    return 0;
  return parse_row_general(line, len, s, bad_column);
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
      memset(r->buf + r->end, 0, 1 + REC_PAD);
      forget_prev(&r->prev); /* its bytes moved */
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
    memset(r->buf + r->end, 0, 1 + REC_PAD); /* the padding the fast path reads (parse_row_fast) */
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
  r->buf = malloc(REC_BUF_ALLOC);
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
    /* The row is followed by its '\n' and by the buffer's padding, as the fast path needs. */
    int col = 0;
    int bad = parse_row_fast(line, len, &it->sample, &r->prev) != 0;
    if (bad) {
      forget_prev(&r->prev);
      bad = parse_row_general(line, len, &it->sample, &col) != 0;
    }
    if (bad) {
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
