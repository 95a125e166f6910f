/* simtime.c: the simulator's clock and its time formats. */
#include "simtime.h"

#include <ctype.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

/* Reads exactly n digits; returns the value or -1. */
static int digits(const char **p, int n)
{
  int v = 0;
  for (int i = 0; i < n; i++) {
    if (!isdigit((unsigned char)(*p)[i]))
      return -1;
    v = v * 10 + ((*p)[i] - '0');
  }
  *p += n;
  return v;
}

static int parse_iso(const char *s, int64_t *unix_ms)
{
  const char *p = s;
  int year = digits(&p, 4);
  if (year < 1970 || *p++ != '-')
    return -1;
  int mon = digits(&p, 2);
  if (mon < 1 || mon > 12 || *p++ != '-')
    return -1;
  int day = digits(&p, 2);
  if (day < 1 || day > 31)
    return -1;
  int hour = 0, min = 0, sec = 0;
  double frac = 0.0;
  if (*p == 'T' || *p == 't' || *p == ' ') {
    p++;
    hour = digits(&p, 2);
    if (hour < 0 || hour > 23 || *p++ != ':')
      return -1;
    min = digits(&p, 2);
    if (min < 0 || min > 59)
      return -1;
    if (*p == ':') {
      p++;
      sec = digits(&p, 2);
      if (sec < 0 || sec > 60)
        return -1;
      if (*p == '.' || *p == ',') {
        double scale = 0.1;
        p++;
        if (!isdigit((unsigned char)*p))
          return -1;
        while (isdigit((unsigned char)*p)) {
          frac += (*p - '0') * scale;
          scale /= 10.0;
          p++;
        }
      }
    }
  }
  int offset_min = 0;
  if (*p == 'Z' || *p == 'z') {
    p++;
  } else if (*p == '+' || *p == '-') {
    int sign = *p == '-' ? -1 : 1;
    p++;
    int oh = digits(&p, 2);
    if (oh < 0 || oh > 23)
      return -1;
    if (*p == ':')
      p++;
    int om = digits(&p, 2);
    if (om < 0 || om > 59)
      return -1;
    offset_min = sign * (oh * 60 + om);
  }
  if (*p != '\0')
    return -1;
  struct tm tm;
  memset(&tm, 0, sizeof tm);
  tm.tm_year = year - 1900;
  tm.tm_mon = mon - 1;
  tm.tm_mday = day;
  tm.tm_hour = hour;
  tm.tm_min = min;
  tm.tm_sec = sec;
  time_t t = timegm(&tm);
  if (t == (time_t)-1 || tm.tm_mday != day) /* timegm normalises 31 Feb into March */
    return -1;
  *unix_ms = (int64_t)t * 1000 - (int64_t)offset_min * 60000 + (int64_t)llround(frac * 1000.0);
  return 0;
}

int SIM_ParseTime(const char *text, int64_t *unix_ms)
{
  if (text == NULL || *text == '\0')
    return -1;
  if (strchr(text, '-') != NULL && isdigit((unsigned char)text[0]))
    return parse_iso(text, unix_ms);
  char *end = NULL;
  double v = strtod(text, &end);
  if (end == text || *end != '\0' || !isfinite(v) || v < 0.0 || v > 1.0e13)
    return -1;
  *unix_ms = (int64_t)llround(v * 1000.0);
  return 0;
}

int SIM_ParseDuration(const char *text, double *seconds)
{
  if (text == NULL || *text == '\0')
    return -1;
  char *end = NULL;
  double v = strtod(text, &end);
  if (end == text || !isfinite(v) || v < 0.0)
    return -1;
  double scale;
  if (*end == '\0' || strcmp(end, "s") == 0)
    scale = 1.0;
  else if (strcmp(end, "ms") == 0)
    scale = 0.001;
  else if (strcmp(end, "m") == 0)
    scale = 60.0;
  else if (strcmp(end, "h") == 0)
    scale = 3600.0;
  else if (strcmp(end, "d") == 0)
    scale = 86400.0;
  else
    return -1;
  *seconds = v * scale;
  return 0;
}

int64_t SIM_SimTimeMs(int64_t epoch_ms, double speed, int64_t real_ns)
{
  int64_t since_ns = real_ns - epoch_ms * 1000000;
  return epoch_ms + (int64_t)llround((double)since_ns * speed / 1.0e6);
}

int64_t SIM_RealNowNs(void)
{
  struct timespec ts;
  clock_gettime(CLOCK_REALTIME, &ts);
  return (int64_t)ts.tv_sec * 1000000000 + ts.tv_nsec;
}

char *SIM_FormatTime(int64_t unix_ms, char *buf, size_t size)
{
  time_t secs = (time_t)(unix_ms >= 0 ? unix_ms / 1000 : -((-unix_ms + 999) / 1000));
  int ms = (int)(unix_ms - (int64_t)secs * 1000);
  struct tm tm;
  gmtime_r(&secs, &tm);
  snprintf(buf, size, "%04d-%02d-%02dT%02d:%02d:%02d.%03dZ", tm.tm_year + 1900, tm.tm_mon + 1,
           tm.tm_mday, tm.tm_hour, tm.tm_min, tm.tm_sec, ms);
  return buf;
}
