/* textbuf.h: bounded text buffers that fill without overrunning, and JSON strings. */
#ifndef GRITLINE_TEXTBUF_H
#define GRITLINE_TEXTBUF_H

#include <stddef.h>
#include <stdio.h>

/* Text appended to a caller's buffer; once something did not fit, `bad` is
 * set and nothing more is written, so a caller checks once at the end. */
typedef struct TXB_Buf {
  char *b;       /* the caller's buffer */
  size_t size;   /* its size in bytes */
  size_t used;   /* bytes written, NUL excluded */
  int bad;       /* something did not fit */
} TXB_Buf;

#define TXB_INIT(buf, size) {(buf), (size), 0, 0}

void TXB_Put(TXB_Buf *t, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
/* Length written, or -1 when something did not fit. */
long TXB_Done(const TXB_Buf *t);
/* Appends text as a quoted JSON string (escapes quote, backslash, control bytes). */
void TXB_JsonString(TXB_Buf *t, const char *text);
/* The same to a stream. */
void TXB_FileJsonString(FILE *f, const char *text);

#endif
