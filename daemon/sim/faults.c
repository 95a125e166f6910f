/* faults.c: fault specifications, their timing, and the faults in force at an instant. */
#include "faults.h"

#include "simtime.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static const char *const kind_names[SIM_FAULT_KIND_COUNT] = {
  "drop", "silent", "exception", "garbage", "freeze", "nan", "inf", "huge",
};

const char *SIM_FaultName(SIM_FaultKind kind)
{
  return (unsigned)kind < SIM_FAULT_KIND_COUNT ? kind_names[kind] : "?";
}

int SIM_FaultParse(const char *text, SIM_FaultSpec *f, char *err, size_t errsize)
{
  char buf[128];
  if (strlen(text) >= sizeof buf) {
    snprintf(err, errsize, "fault \"%.20s...\": too long", text);
    return -1;
  }
  strcpy(buf, text);
  memset(f, 0, sizeof *f);
  f->duration_s = -1.0;

  char *when = strchr(buf, '@');
  if (when != NULL)
    *when++ = '\0';
  char *arg = strchr(buf, ':');
  if (arg != NULL)
    *arg++ = '\0';

  int kind = -1;
  for (int k = 0; k < SIM_FAULT_KIND_COUNT; k++)
    if (strcmp(buf, kind_names[k]) == 0)
      kind = k;
  if (kind < 0) {
    snprintf(err, errsize,
             "fault \"%s\": unknown kind \"%s\""
             " (drop, silent, exception, garbage, freeze, nan, inf, huge)",
             text, buf);
    return -1;
  }
  f->kind = (SIM_FaultKind)kind;
  if (f->kind == SIM_FAULT_EXCEPTION) {
    f->arg = 4; /* server device failure, the usual answer of a faulty PLC */
    if (arg != NULL) {
      char *end = NULL;
      long code = strtol(arg, &end, 10);
      if (end == arg || *end != '\0' || code < 1 || code > 255) {
        snprintf(err, errsize, "fault \"%s\": exception code must be 1..255", text);
        return -1;
      }
      f->arg = (int)code;
    }
  } else if (arg != NULL) {
    snprintf(err, errsize, "fault \"%s\": %s takes no argument", text, kind_names[kind]);
    return -1;
  }

  if (when != NULL) {
    if (*when == '+') {
      f->relative = 1;
      when++;
    }
    /* The duration is after the first '+' that follows START. */
    char *dur = strchr(when, '+');
    if (dur != NULL)
      *dur++ = '\0';
    if (SIM_ParseDuration(when, &f->start_s) != 0) {
      snprintf(err, errsize, "fault \"%s\": bad start \"%s\" (seconds, or with s, m, h, d)", text,
               when);
      return -1;
    }
    if (dur != NULL) {
      if (SIM_ParseDuration(dur, &f->duration_s) != 0 || f->duration_s <= 0.0) {
        snprintf(err, errsize, "fault \"%s\": bad duration \"%s\" (> 0 seconds, or with s, m, h, d)",
                 text, dur);
        return -1;
      }
    }
  } else {
    f->relative = 1; /* no time: from start-up on */
  }
  return 0;
}

void SIM_FaultSetInit(SIM_FaultSet *set) { memset(set, 0, sizeof *set); }

static int group_count(const SIM_FaultSet *set, int group)
{
  int n = 0;
  for (int i = 0; i < set->count; i++)
    n += set->group[i] == group;
  return n;
}

int SIM_FaultSetAdd(SIM_FaultSet *set, const SIM_FaultSpec *f, double origin_s, int group)
{
  if (group_count(set, group) >= SIM_FAULT_MAX || set->count >= 2 * SIM_FAULT_MAX)
    return -1;
  int i = set->count++;
  set->spec[i] = *f;
  set->origin_s[i] = origin_s;
  set->group[i] = group;
  set->fired[i] = 0;
  return 0;
}

static void drop_group(SIM_FaultSet *set, int group)
{
  int j = 0;
  for (int i = 0; i < set->count; i++) {
    if (set->group[i] == group)
      continue;
    set->spec[j] = set->spec[i];
    set->origin_s[j] = set->origin_s[i];
    set->group[j] = set->group[i];
    set->fired[j] = set->fired[i];
    j++;
  }
  set->count = j;
}

int SIM_FaultSetLoadControl(SIM_FaultSet *set, const char *text, double origin_s, char *err,
                            size_t errsize)
{
  drop_group(set, 1);
  int line = 0;
  const char *p = text;
  while (*p != '\0') {
    line++;
    const char *eol = strchr(p, '\n');
    size_t len = eol != NULL ? (size_t)(eol - p) : strlen(p);
    char buf[160];
    if (len >= sizeof buf) {
      snprintf(err, errsize, "line %d: too long", line);
      drop_group(set, 1);
      return -1;
    }
    memcpy(buf, p, len);
    buf[len] = '\0';
    char *hash = strchr(buf, '#');
    if (hash != NULL)
      *hash = '\0';
    /* Trim blanks at both ends. */
    char *s = buf;
    while (*s == ' ' || *s == '\t' || *s == '\r')
      s++;
    char *e = s + strlen(s);
    while (e > s && (e[-1] == ' ' || e[-1] == '\t' || e[-1] == '\r'))
      *--e = '\0';
    if (*s != '\0') {
      SIM_FaultSpec f;
      char why[200];
      if (SIM_FaultParse(s, &f, why, sizeof why) != 0) {
        snprintf(err, errsize, "line %d: %s", line, why);
        drop_group(set, 1);
        return -1;
      }
      if (SIM_FaultSetAdd(set, &f, origin_s, 1) != 0) {
        snprintf(err, errsize, "line %d: more than %d faults", line, SIM_FAULT_MAX);
        drop_group(set, 1);
        return -1;
      }
    }
    p += len;
    if (*p == '\n')
      p++;
  }
  return 0;
}

void SIM_FaultSetEval(SIM_FaultSet *set, double t, SIM_FaultState *out)
{
  memset(out, 0, sizeof *out);
  for (int i = 0; i < set->count; i++) {
    const SIM_FaultSpec *f = &set->spec[i];
    double start = f->start_s + (f->relative ? set->origin_s[i] : 0.0);
    if (t < start)
      continue;
    if (f->kind == SIM_FAULT_DROP && f->duration_s < 0.0) {
      if (!set->fired[i]) {
        set->fired[i] = 1;
        out->drop_once = 1;
      }
      continue;
    }
    if (f->duration_s >= 0.0 && t >= start + f->duration_s)
      continue;
    out->active |= 1u << f->kind;
    if (f->kind == SIM_FAULT_EXCEPTION)
      out->exception_code = f->arg;
  }
}
