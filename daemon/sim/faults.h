/* faults.h: fault injection for tests: fault specifications, their timing, the faults in force. */
#ifndef GRITLINE_SIM_FAULTS_H
#define GRITLINE_SIM_FAULTS_H

#include <stddef.h>

typedef enum SIM_FaultKind {
  SIM_FAULT_DROP = 0,  /* "drop": close every client connection */
  SIM_FAULT_SILENT,    /* "silent": read requests, never reply */
  SIM_FAULT_EXCEPTION, /* "exception[:CODE]": every answer is exception CODE (default 4) */
  SIM_FAULT_GARBAGE,   /* "garbage": random bytes instead of a reply */
  SIM_FAULT_FREEZE,    /* "freeze": the registers stop updating (clock included) */
  SIM_FAULT_NAN,       /* "nan": every float register holds a quiet NaN */
  SIM_FAULT_INF,       /* "inf": every float register holds +infinity */
  SIM_FAULT_HUGE,      /* "huge": floats 3e38, integers at their maximum */
  SIM_FAULT_KIND_COUNT
} SIM_FaultKind;

/* One fault: KIND[:ARG][@START[+DURATION]]. */
typedef struct SIM_FaultSpec {
  SIM_FaultKind kind; /* what goes wrong */
  int arg;            /* exception code for SIM_FAULT_EXCEPTION, else 0 */
  double start_s;     /* s; sim seconds after the epoch, or after the origin when relative */
  int relative;       /* 1: START written "+S": from the origin (start-up, control-file read) */
  double duration_s;  /* s of sim time; < 0: for ever (a drop without duration fires once) */
} SIM_FaultSpec;

#define SIM_FAULT_MAX 32 /* per source: scenario + command line, and the control file */

const char *SIM_FaultName(SIM_FaultKind kind);
/* Parses one specification; returns 0, or -1 with a one-line reason in err. */
int SIM_FaultParse(const char *text, SIM_FaultSpec *f, char *err, size_t errsize);

/* Faults in force at one instant. */
typedef struct SIM_FaultState {
  unsigned active;    /* bit (1u << kind) for each kind in force */
  int exception_code; /* Modbus exception code while SIM_FAULT_EXCEPTION is in force */
  int drop_once;      /* 1: a one-shot drop fell due at this evaluation: close every client once */
} SIM_FaultState;

/* The faults of a run: group 0 from the scenario and the command line, group 1
 * from the control file (replaced whenever the file changes). */
typedef struct SIM_FaultSet {
  SIM_FaultSpec spec[2 * SIM_FAULT_MAX]; /* the specifications */
  double origin_s[2 * SIM_FAULT_MAX];    /* s since the epoch that a relative START counts from */
  int group[2 * SIM_FAULT_MAX];          /* 0 fixed, 1 control file */
  unsigned char fired[2 * SIM_FAULT_MAX]; /* one-shot drop already done */
  int count;                             /* used entries */
} SIM_FaultSet;

void SIM_FaultSetInit(SIM_FaultSet *set);
/* Adds one fault; returns 0, or -1 when the group is full. */
int SIM_FaultSetAdd(SIM_FaultSet *set, const SIM_FaultSpec *f, double origin_s, int group);
/* Replaces group 1 by the specifications in text (one per line, '#' starts a
 * comment, blank lines ignored), relative ones counted from origin_s. On a bad
 * line returns -1 with "line N: reason" in err and leaves group 1 empty. */
int SIM_FaultSetLoadControl(SIM_FaultSet *set, const char *text, double origin_s, char *err,
                            size_t errsize);
/* The faults in force at t [s since the epoch]. Marks one-shot drops as fired. */
void SIM_FaultSetEval(SIM_FaultSet *set, double t, SIM_FaultState *out);

#endif
