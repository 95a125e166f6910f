/* recording.h: the recording samples.csv (docs/recording-format.md): writing and reading. */
#ifndef GRITLINE_RECORDING_H
#define GRITLINE_RECORDING_H

#include <stddef.h>
#include <stdint.h>

#include "grind.h"
#include "sample.h"

#define REC_FORMAT "gritline-samples/1"
#define REC_HEADER                                                                                      \
  "time,spindle_power_w,spindle_speed_rpm,work_speed_mm_min,infeed_position_mm,depth_of_cut_mm,"       \
  "wheel_diameter_mm,dress_count,grinding"
#define REC_COLUMNS 9
#define REC_LINE_MAX 512 /* longest sample or mark line written */

/* The metadata at the head of a recording. */
typedef struct REC_Meta {
  char format[40];              /* "gritline-samples/1" */
  char machine[64];             /* machine name */
  GRD_Geometry geometry;        /* kinematics of the job */
  double grinding_width_mm;     /* b */
  double workpiece_diameter_mm; /* dw, NAN when not cylindrical */
  double wheel_diameter_mm;     /* ds at the start */
  double started;               /* UNIX s */
  char wheel[64];               /* wheel profile name ("" when unknown) */
  char job[64];                 /* job name ("" when unknown) */
} REC_Meta;

void REC_InitMeta(REC_Meta *m);
/* Writes the metadata lines and the header row; returns the length or -1. */
long REC_FormatHead(const REC_Meta *m, char *buf, size_t size);
/* Writes one sample row with its '\n'; returns the length or -1. */
long REC_FormatSample(const SMP_Sample *s, char *buf, size_t size);
/* Parses one sample row (without '\n'). Returns 0, or -1 with *bad_column set
 * to the 1-based column at fault (0 when the count of columns is wrong). */
int REC_ParseSample(const char *line, size_t len, SMP_Sample *s, int *bad_column);
/* Marks record the pipeline's inputs that are not samples, so that a replay
 * sees what the daemon saw: "# mark: <time> <kind> <text>". Kinds: start,
 * stop, dress, config. The text is one line. Returns the length or -1. */
long REC_FormatMark(double time, const char *kind, const char *text, char *buf, size_t size);
/* Formats a UNIX time as ISO 8601 UTC with milliseconds. */
void REC_FormatIso(double t, char *buf, size_t size);
/* Parses ISO 8601 UTC "YYYY-MM-DDTHH:MM:SS[.fff]Z"; returns 0 or -1. */
int REC_ParseIso(const char *text, double *t);

/* Reading, line by line, with positions for messages. */
typedef enum REC_ItemKind {
  REC_ITEM_SAMPLE = 1, /* a sample row */
  REC_ITEM_MARK,       /* a mark line */
  REC_ITEM_TORN,       /* the last line has no end: a crash mid-write; skip it */
  REC_ITEM_BAD,        /* a malformed row: err says where; the caller may skip it */
} REC_ItemKind;

typedef struct REC_Item {
  REC_ItemKind kind;
  SMP_Sample sample;   /* REC_ITEM_SAMPLE */
  double mark_time;    /* REC_ITEM_MARK */
  char mark_kind[16];
  char mark_text[256];
  long line;           /* 1-based line number */
} REC_Item;

#define REC_BUF (1 << 20)
#define REC_PAD 16 /* bytes readable after any row, for the reader's fast path */
#define REC_BUF_ALLOC (REC_BUF + 1 + REC_PAD) /* the reader's buffer: REC_BUF, a NUL and the padding */

/* The previous sample row read by the fast path (see drivers/recording.c). */
typedef struct REC_Prev {
  const char *text;           /* the row in the reader's buffer; NULL = none */
  size_t len;                 /* its length */
  SMP_Sample sample;          /* what it read as (all but the time) */
  unsigned comma[REC_COLUMNS]; /* per column from 1: bytes from the comma before it to the end */
  size_t time_whole_digits;   /* digits of its time before the '.'; 0 = not known */
  uint64_t time_whole;        /* their value */
} REC_Prev;

typedef struct REC_Reader {
  int fd;              /* the open file */
  char path[512];      /* for messages */
  REC_Meta meta;       /* filled by REC_Open */
  long line;           /* lines consumed */
  char *buf;           /* REC_BUF bytes and padding, allocated once by REC_Open */
  size_t start, end;   /* unread bytes buf[start..end) */
  int eof;             /* read() returned 0 */
  int skip_rest;       /* an over-long line was returned: skip to its end */
  REC_Prev prev;       /* the previous sample row, to read repeated fields fast */
} REC_Reader;

/* Opens a recording and reads its metadata and header. Returns 0, or -1 with
 * "file:line: message" in err. */
int REC_Open(REC_Reader *r, const char *path, char *err, size_t errlen);
/* Next item. Returns 1 with *it filled, 0 at the end, -1 on a read error
 * (message in err). A malformed row is returned as REC_ITEM_BAD with
 * "file:line:column: message" in err. */
int REC_Next(REC_Reader *r, REC_Item *it, char *err, size_t errlen);
void REC_Close(REC_Reader *r);

#endif
