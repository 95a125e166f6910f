/* writelog.h: the log of every Modbus write request the simulator received, accepted or not. */
#ifndef GRITLINE_SIM_WRITELOG_H
#define GRITLINE_SIM_WRITELOG_H

#include <stddef.h>
#include <stdint.h>
#include <stdio.h>

/* One write request as received. */
typedef struct SIM_WriteEntry {
  int64_t real_ms;         /* ms since the UNIX epoch, wall clock */
  int64_t sim_ms;          /* ms since the UNIX epoch, sim clock */
  const char *client;      /* "127.0.0.1:40312" */
  int unit;                /* unit identifier of the request */
  int function;            /* Modbus function code */
  int address;             /* first address written (0-based PDU address) */
  int count;               /* registers or coils written */
  const uint16_t *values;  /* count values (coils 0/1); for function 22 the AND and OR masks */
  int n_values;            /* entries in values */
  int exception;           /* 0 accepted, > 0 exception code answered, SIM_WRITE_* below */
} SIM_WriteEntry;

/* Results that are not a Modbus answer (fault injection). */
#define SIM_WRITE_NO_REPLY (-1) /* "no reply": the silent fault swallowed it */
#define SIM_WRITE_GARBAGE (-2)  /* "garbage": random bytes were sent back */

typedef struct SIM_WriteLog {
  FILE *f; /* NULL: nothing is logged */
} SIM_WriteLog;

/* Opens path for appending (restarts add to the same log); writes the header
 * when the file is empty. NULL path: no log. Returns 0, or -1 with err. */
int SIM_WriteLogOpen(SIM_WriteLog *log, const char *path, char *err, size_t errsize);
/* Appends one line and flushes, so a test sees it at once. Returns 0 or -1. */
int SIM_WriteLogAdd(SIM_WriteLog *log, const SIM_WriteEntry *e);
void SIM_WriteLogClose(SIM_WriteLog *log);
/* The header line, without newline. */
const char *SIM_WriteLogHeader(void);

#endif
