/* textbuf.c: bounded text buffers that fill without overrunning, and JSON strings. */
#include "textbuf.h"

#include <stdarg.h>
#include <string.h>

void TXB_Put(TXB_Buf *t, const char *fmt, ...)
{
  if (t->bad)
    return;
  va_list ap;
  va_start(ap, fmt);
  int n = vsnprintf(t->b + t->used, t->size - t->used, fmt, ap);
  va_end(ap);
  if (n < 0 || (size_t)n >= t->size - t->used)
    t->bad = 1;
  else
    t->used += (size_t)n;
}

long TXB_Done(const TXB_Buf *t) { return t->bad ? -1 : (long)t->used; }

/* The escape of one byte, or NULL when it stands for itself. */
static const char *json_escape(unsigned char c, char tmp[8])
{
  if (c == '"')
    return "\\\"";
  if (c == '\\')
    return "\\\\";
  if (c < 0x20) {
    snprintf(tmp, 8, "\\u%04x", c);
    return tmp;
  }
  return NULL;
}

void TXB_JsonString(TXB_Buf *t, const char *text)
{
  char tmp[8];
  TXB_Put(t, "\"");
  for (const unsigned char *p = (const unsigned char *)(text ? text : ""); *p && !t->bad; p++) {
    const char *e = json_escape(*p, tmp);
    if (e)
      TXB_Put(t, "%s", e);
    else
      TXB_Put(t, "%c", *p);
  }
  TXB_Put(t, "\"");
}

void TXB_FileJsonString(FILE *f, const char *text)
{
  char tmp[8];
  fputc('"', f);
  for (const unsigned char *p = (const unsigned char *)(text ? text : ""); *p; p++) {
    const char *e = json_escape(*p, tmp);
    if (e)
      fputs(e, f);
    else
      fputc(*p, f);
  }
  fputc('"', f);
}
