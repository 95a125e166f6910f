/* passlog.h: the logs passes.csv, events.csv and dress_cycles.csv (docs/log-formats.md). */
#ifndef GRITLINE_PASSLOG_H
#define GRITLINE_PASSLOG_H

#include <stddef.h>

#include "cycle.h"
#include "segment.h"

#define PLG_LINE_MAX 2048



extern const char PLG_PASSES_HEADER[];
extern const char PLG_EVENTS_HEADER[];
extern const char PLG_CYCLES_HEADER[];

/* One row with '\n'; returns the length, or -1 when buf is too small. The
 * condition model's columns come from x (NULL: empty). */
long PLG_FormatPass(const SEG_Pass *p, const CYC_PassInfo *x, char *buf, size_t size);

typedef enum PLG_Severity { PLG_INFO, PLG_WARNING, PLG_CRITICAL } PLG_Severity;
typedef enum PLG_State { PLG_RAISED, PLG_CLEARED, PLG_NOTE } PLG_State;
const char *PLG_SeverityName(PLG_Severity s);
const char *PLG_StateName(PLG_State s);

typedef struct PLG_Event {
  double time;            /* s, UNIX */
  char kind[32];          /* e.g. "dulling", "communication_lost", "shift", "dress", "config" */
  PLG_Severity severity;
  PLG_State state;        /* raised, cleared, or a plain note ("info") */
  unsigned long pass;     /* pass it refers to, 0 = none */
  double value;           /* the measured figure, NAN = none */
  double limit;           /* the limit it was held against, NAN = none */
  char message[512];      /* one line */
} PLG_Event;

long PLG_FormatEvent(const PLG_Event *e, char *buf, size_t size);

/* One row of dress_cycles.csv. */
long PLG_FormatCycle(const CYC_Record *c, char *buf, size_t size);

/* Writes text as one CSV field (quoted when needed). Returns the length or -1. */
long PLG_CsvField(const char *text, char *buf, size_t size);
/* Splits one CSV line into fields in place (handles quotes); returns the count,
 * or -1 when a quote is not closed. */
int PLG_SplitCsv(char *line, char **field, int max);

#endif
