/* monitor.h: the monitoring pipeline shared by gritlined and gritline replay:
 * samples in; shift folders, recording, passes, events and dress cycles out. */
#ifndef GRITLINE_MONITOR_H
#define GRITLINE_MONITOR_H

#include <stddef.h>

#include "conf.h"
#include "passlog.h"
#include "sample.h"
#include "segment.h"

typedef struct MON_Monitor MON_Monitor;

/* What the caller hears about, besides the files (all optional). */
typedef struct MON_Sink {
  void *ctx;
  void (*pass)(void *ctx, const SEG_Pass *p, const PLG_PassExtra *x);
  void (*event)(void *ctx, const PLG_Event *e);
  /* A file could not be written (disk full...): message names the file. */
  void (*io_error)(void *ctx, const char *message);
} MON_Sink;

typedef struct MON_Options {
  const char *data_dir;  /* root of the shift folders; NULL = the config's */
  int record;            /* 1: write samples.csv (the daemon); 0: replay */
} MON_Options;

/* Allocates the pipeline once. Returns NULL with a message in err. */
MON_Monitor *MON_Create(const CNF_Config *cfg, const MON_Options *opt, const MON_Sink *sink, char *err,
                        size_t errlen);
/* One sample, already timestamped (UNIX s). A sample whose channels are all
 * NAN is a failed poll. Returns 0, or -1 when a file could not be written
 * (monitoring goes on; the sink heard why). */
int MON_Feed(MON_Monitor *m, const SMP_Sample *s);
/* A mark: an input of the pipeline that is not a sample ("start", "stop",
 * "dress", "config"). Recorded, and acted on. time < 0: the latest sample's. */
int MON_Mark(MON_Monitor *m, double time, const char *kind, const char *text);
/* Takes a new configuration (SIGHUP): the job, wheel and limits may change. */
void MON_Reconfigure(MON_Monitor *m, const CNF_Config *cfg);
/* Flushes and closes every file. */
void MON_Destroy(MON_Monitor *m);

/* Live state for the status line and the control socket. */
typedef struct MON_Status {
  double last_sample_time;     /* s, NAN before the first */
  int comm_lost;               /* communication_lost is active */
  int in_pass;                 /* a pass is open */
  unsigned long passes_shift;  /* passes in the current shift folder */
  char shift[40];              /* current shift label */
  SEG_Pass last_pass;          /* latest pass (number 0 = none yet) */
  PLG_PassExtra last_extra;    /* its condition figures */
  unsigned long samples;       /* samples fed */
  unsigned long failed_polls;  /* samples without any value */
  double baseline_w;           /* current idle power estimate */
} MON_Status;

void MON_GetStatus(const MON_Monitor *m, MON_Status *out);
/* Folder of the current shift ("" before the first sample). */
const char *MON_ShiftDir(const MON_Monitor *m);

#endif
