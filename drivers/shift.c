/* shift.c: the shift schedule in the local time zone. */
#include "shift.h"

#include <ctype.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <time.h>

static int parse_hhmm(const char *p, int len, int *minutes)
{
  int h, m;
  char tail;
  char buf[16];
  if (len <= 0 || len >= (int)sizeof buf)
    return -1;
  memcpy(buf, p, (size_t)len);
  buf[len] = '\0';
  if (sscanf(buf, "%d:%d%c", &h, &m, &tail) != 2 || h < 0 || h > 23 || m < 0 || m > 59)
    return -1;
  *minutes = h * 60 + m;
  return 0;
}

/* Splits at commas, trimming blanks; returns the number of items or -1. */
static int split(const char *text, const char *item[], int len[], int max)
{
  int n = 0;
  const char *p = text;
  for (;;) {
    while (*p == ' ' || *p == '\t')
      p++;
    const char *e = strchr(p, ',');
    const char *stop = e ? e : p + strlen(p);
    const char *q = stop;
    while (q > p && (q[-1] == ' ' || q[-1] == '\t'))
      q--;
    if (n == max)
      return -1;
    item[n] = p;
    len[n] = (int)(q - p);
    n++;
    if (!e)
      return n;
    p = e + 1;
  }
}

int SFT_Parse(SFT_Schedule *s, const char *starts, const char *names, char *err, unsigned long errlen)
{
  const char *item[SFT_MAX + 1];
  int len[SFT_MAX + 1];
  memset(s, 0, sizeof(*s));
  int n = split(starts, item, len, SFT_MAX);
  if (n < 0) {
    snprintf(err, errlen, "at most %d shifts a day", SFT_MAX);
    return -1;
  }
  for (int i = 0; i < n; i++) {
    if (parse_hhmm(item[i], len[i], &s->start_min[i]) != 0) {
      snprintf(err, errlen, "shift start \"%.*s\" is not a time HH:MM", len[i], item[i]);
      return -1;
    }
    if (i > 0 && s->start_min[i] <= s->start_min[i - 1]) {
      snprintf(err, errlen, "shift starts must be in ascending order within the day");
      return -1;
    }
    snprintf(s->name[i], SFT_NAME, "%d", i + 1);
  }
  s->count = n;
  if (names && *names) {
    int m = split(names, item, len, SFT_MAX);
    if (m != n) {
      snprintf(err, errlen, "%d shift names for %d shift starts", m < 0 ? SFT_MAX + 1 : m, n);
      return -1;
    }
    for (int i = 0; i < m; i++) {
      if (len[i] == 0 || len[i] >= SFT_NAME) {
        snprintf(err, errlen, "shift name %d must be 1 to %d characters", i + 1, SFT_NAME - 1);
        return -1;
      }
      for (int k = 0; k < len[i]; k++)
        if (!isalnum((unsigned char)item[i][k]) && item[i][k] != '-') {
          snprintf(err, errlen, "shift name \"%.*s\": only letters, digits and '-'", len[i], item[i]);
          return -1;
        }
      memcpy(s->name[i], item[i], (size_t)len[i]);
      s->name[i][len[i]] = '\0';
    }
  }
  return 0;
}

/* UNIX time of minute `minutes` of the local day `day` (mktime normalises
 * day and minute overflow and applies daylight saving). */
static double local_moment(const struct tm *day, int minutes)
{
  struct tm t = *day;
  t.tm_hour = 0;
  t.tm_min = minutes;
  t.tm_sec = 0;
  t.tm_isdst = -1;
  return (double)mktime(&t);
}

void SFT_Find(const SFT_Schedule *s, double t, SFT_Shift *out)
{
  time_t secs = (time_t)floor(t);
  struct tm day;
  localtime_r(&secs, &day);
  int now_min = day.tm_hour * 60 + day.tm_min;
  int idx = -1;
  for (int i = 0; i < s->count; i++)
    if (s->start_min[i] <= now_min)
      idx = i;
  struct tm start_day = day;
  if (idx < 0) {
    /* Before the first start of the day: the last shift of yesterday. */
    idx = s->count - 1;
    start_day.tm_mday -= 1;
  }
  out->index = idx;
  out->start = local_moment(&start_day, s->start_min[idx]);
  if (idx + 1 < s->count) {
    out->end = local_moment(&start_day, s->start_min[idx + 1]);
  } else {
    struct tm next = start_day;
    next.tm_mday += 1;
    out->end = local_moment(&next, s->start_min[0]);
  }
  time_t st = (time_t)out->start;
  struct tm sd;
  localtime_r(&st, &sd);
  snprintf(out->label, sizeof out->label, "%04d-%02d-%02d_%s", sd.tm_year + 1900, sd.tm_mon + 1, sd.tm_mday,
           s->name[idx]);
}

void SFT_Format(const SFT_Schedule *s, char *starts, unsigned long slen, char *names, unsigned long nlen)
{
  unsigned long a = 0, b = 0;
  starts[0] = names[0] = '\0';
  for (int i = 0; i < s->count; i++) {
    int n = snprintf(starts + a, slen - a, "%s%02d:%02d", i ? "," : "", s->start_min[i] / 60, s->start_min[i] % 60);
    if (n > 0 && (unsigned long)n < slen - a)
      a += (unsigned long)n;
    n = snprintf(names + b, nlen - b, "%s%s", i ? "," : "", s->name[i]);
    if (n > 0 && (unsigned long)n < nlen - b)
      b += (unsigned long)n;
  }
}
