/* monitor.h: the monitoring pipeline shared by gritlined and gritline replay:
 * samples in; shift folders, recording, passes, events and dress cycles out. */
#ifndef GRITLINE_MONITOR_H
#define GRITLINE_MONITOR_H

#include <stddef.h>

#include "condition.h"
#include "conf.h"
#include "passlog.h"
#include "sample.h"
#include "segment.h"

typedef struct MON_Monitor MON_Monitor;

/* What the caller hears about, besides the files (all optional). */
typedef struct MON_Sink {
  void *ctx;
  void (*pass)(void *ctx, const SEG_Pass *p, const CYC_PassInfo *x);
  void (*event)(void *ctx, const PLG_Event *e);
  /* A file could not be written (disk full...): message names the file. */
  void (*io_error)(void *ctx, const char *message);
} MON_Sink;

typedef struct MON_Options {
  const char *data_dir;  /* root of the shift folders; NULL = the config's */
  int record;            /* 1: write samples.csv and keep the condition state on
                            disk (the daemon); 0: replay */
  double record_batch_s; /* s of samples held before samples.csv is written (> 0: in
                            batches, flushed before any other file is written and at
                            close); 0 = a write per line */
} MON_Options;

/* Allocates the pipeline once. In record mode the condition model's state
 * is restored from <data_dir>/<machine>/condition.state when it was saved
 * under the same settings, so a restarted daemon keeps its dress cycle. Returns NULL with a message in err. */
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
  CYC_PassInfo last_info;      /* its condition figures */
  char conditions[256];        /* active conditions, "ok" when none */
  double forecast_passes_left; /* before the dulling limit, NAN when none */
  double forecast_volume_left; /* mm^3/mm */
  unsigned long cycle;         /* dress cycle */
  unsigned long passes_in_cycle;
  double volume_in_cycle;      /* mm^3/mm */
  PLG_Event recent[8];         /* latest condition events, newest last */
  int n_recent;
  unsigned long samples;       /* samples fed */
  unsigned long failed_polls;  /* samples without any value */
  double baseline_w;           /* current idle power estimate */
  SMP_Sample last_sample;      /* latest sample as analysed */
} MON_Status;

/* The incomplete last lines (a crash mid-write) cut away from the files opened
 * since the previous call, as one line into buf; returns how many files, 0 = none. */
int MON_Repairs(MON_Monitor *m, char *buf, size_t size);
void MON_GetStatus(const MON_Monitor *m, MON_Status *out);
/* The condition model (read only), e.g. for the active-condition list. */
const CND_State *MON_Conditions(const MON_Monitor *m);
/* 1 when the condition state was restored at creation. */
int MON_Restored(const MON_Monitor *m);
/* Folder of the current shift ("" before the first sample). */
const char *MON_ShiftDir(const MON_Monitor *m);

#endif
