/* jsonget.c: reads values out of a JSON text by path. */
#include "jsonget.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static const char *ws(const char *p)
{
  while (*p == ' ' || *p == '\t' || *p == '\n' || *p == '\r')
    p++;
  return p;
}

/* Returns the end of the value starting at p, NULL when malformed. */
static const char *skip(const char *p, int depth)
{
  p = ws(p);
  if (depth > 64)
    return NULL;
  if (*p == '"') {
    for (p++; *p && *p != '"'; p++)
      if (*p == '\\' && !*++p)
        return NULL;
    return *p ? p + 1 : NULL;
  }
  if (*p == '{' || *p == '[') {
    char close = *p == '{' ? '}' : ']';
    p = ws(p + 1);
    if (*p == close)
      return p + 1;
    for (;;) {
      if (close == '}') {
        p = skip(p, depth + 1); /* key */
        if (!p || *(p = ws(p)) != ':')
          return NULL;
        p++;
      }
      p = skip(p, depth + 1);
      if (!p)
        return NULL;
      p = ws(p);
      if (*p == ',') {
        p = ws(p + 1);
        continue;
      }
      return *p == close ? p + 1 : NULL;
    }
  }
  const char *s = p;
  while (*p && !strchr(",}] \t\r\n", *p))
    p++;
  return p > s ? p : NULL;
}

/* Finds the value at path; returns its start or NULL. */
static const char *find(const char *json, const char *path)
{
  const char *p = ws(json);
  while (*path) {
    const char *dot = strchr(path, '.');
    size_t len = dot ? (size_t)(dot - path) : strlen(path);
    if (*p == '{') {
      p = ws(p + 1);
      const char *found = NULL;
      while (*p == '"') {
        const char *k = p + 1;
        const char *kend = skip(p, 0);
        if (!kend)
          return NULL;
        int match = (size_t)(kend - 1 - k) == len && strncmp(k, path, len) == 0;
        p = ws(kend);
        if (*p != ':')
          return NULL;
        p = ws(p + 1);
        if (match) {
          found = p;
          break;
        }
        p = skip(p, 0);
        if (!p)
          return NULL;
        p = ws(p);
        if (*p == ',')
          p = ws(p + 1);
      }
      if (!found)
        return NULL;
      p = found;
    } else if (*p == '[') {
      char *end;
      long idx = strtol(path, &end, 10);
      if (end != path + len || idx < 0)
        return NULL;
      p = ws(p + 1);
      for (long i = 0; i < idx; i++) {
        p = skip(p, 0);
        if (!p || *(p = ws(p)) != ',')
          return NULL;
        p = ws(p + 1);
      }
      if (*p == ']')
        return NULL;
    } else {
      return NULL;
    }
    path += len + (dot ? 1 : 0);
  }
  return p;
}

double JSG_Number(const char *json, const char *path)
{
  const char *p = find(json, path);
  if (!p)
    return NAN;
  char *end;
  double v = strtod(p, &end);
  return end == p ? NAN : v;
}

int JSG_String(const char *json, const char *path, char *buf, size_t size)
{
  const char *p = find(json, path);
  if (!p || size == 0)
    return -1;
  size_t u = 0;
  if (*p != '"') {
    const char *e = skip(p, 0);
    if (!e)
      return -1;
    size_t n = (size_t)(e - p) < size - 1 ? (size_t)(e - p) : size - 1;
    memcpy(buf, p, n);
    buf[n] = '\0';
    return 0;
  }
  for (p++; *p && *p != '"' && u + 1 < size; p++) {
    char c = *p;
    if (c == '\\') {
      c = *++p;
      if (c == 'n')
        c = '\n';
      else if (c == 't')
        c = '\t';
      else if (c == 'u') {
        unsigned code = 0;
        if (sscanf(p + 1, "%4x", &code) != 1)
          return -1;
        p += 4;
        c = code < 0x80 ? (char)code : '?';
      } else if (!c)
        return -1;
    }
    buf[u++] = c;
  }
  buf[u] = '\0';
  return 0;
}

int JSG_Length(const char *json, const char *path)
{
  const char *p = *path ? find(json, path) : ws(json);
  if (!p || *p != '[')
    return -1;
  p = ws(p + 1);
  if (*p == ']')
    return 0;
  int n = 0;
  for (;;) {
    p = skip(p, 0);
    if (!p)
      return -1;
    n++;
    p = ws(p);
    if (*p == ']')
      return n;
    if (*p != ',')
      return -1;
    p = ws(p + 1);
  }
}
