/* passlog.h: the logs passes.csv, events.csv and dress_cycles.csv (docs/log-formats.md). */
#ifndef GRITLINE_PASSLOG_H
#define GRITLINE_PASSLOG_H

#include <stddef.h>

#include "segment.h"

#define PLG_LINE_MAX 2048

/* What the wheel-condition model adds to a pass record. NAN / 0 when unknown. */
typedef struct PLG_PassExtra {
  unsigned long dress_cycle;        /* 1 = the cycle monitoring started in, +1 per dress */
  unsigned long passes_since_dress; /* passes in this cycle, this one included */
  double reference_u_j_mm3;         /* sharp-wheel specific energy at this pass's aggressiveness */
  double dull_ratio;                /* u / u_ref */
  double dull_ratio_smoothed;       /* robustly smoothed */
  double volume_since_dress_mm3_mm; /* removed volume per unit width in this cycle */
  double forecast_passes_left;      /* before the dulling limit */
  double forecast_volume_left_mm3_mm;
  double rubbing_intercept_w_mm;    /* intercept of net power per width against Q' */
} PLG_PassExtra;

void PLG_InitExtra(PLG_PassExtra *x);

extern const char PLG_PASSES_HEADER[];
extern const char PLG_EVENTS_HEADER[];
extern const char PLG_CYCLES_HEADER[];

/* One row with '\n'; returns the length, or -1 when buf is too small. */
long PLG_FormatPass(const SEG_Pass *p, const PLG_PassExtra *x, char *buf, size_t size);

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
  char message[320];      /* one line */
} PLG_Event;

long PLG_FormatEvent(const PLG_Event *e, char *buf, size_t size);

typedef struct PLG_Cycle {
  unsigned long cycle;          /* number */
  double start_time, end_time;  /* s, UNIX: first pass start, dress time */
  unsigned long passes;         /* passes in the cycle */
  double volume_mm3_mm;         /* removed volume per unit width */
  double reference_u_j_mm3;     /* the sharp-wheel reference */
  double final_dull_ratio;      /* smoothed ratio at the dress */
  double g_ratio;               /* NAN when not measured */
  char trigger[16];             /* alert, schedule, operator, counter, start */
  double forecast_volume_mm3_mm; /* forecast made halfway to the limit, NAN = none */
  double limit_volume_mm3_mm;   /* where the limit was reached, NAN = never */
  int forecast_right;           /* 1 right, 0 wrong, -1 no forecast */
} PLG_Cycle;

long PLG_FormatCycle(const PLG_Cycle *c, char *buf, size_t size);

/* Writes text as one CSV field (quoted when needed). Returns the length or -1. */
long PLG_CsvField(const char *text, char *buf, size_t size);
/* Splits one CSV line into fields in place (handles quotes); returns the count,
 * or -1 when a quote is not closed. */
int PLG_SplitCsv(char *line, char **field, int max);

#endif
