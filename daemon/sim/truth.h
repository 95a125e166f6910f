/* truth.h: the ground-truth log: one CSV row per completed pass, one per dress. */
#ifndef GRITLINE_SIM_TRUTH_H
#define GRITLINE_SIM_TRUTH_H

#include "model.h"

#include <stddef.h>
#include <stdint.h>
#include <stdio.h>

/* Header lines (no newline). */
const char *SIM_TruthPassHeader(void);
const char *SIM_TruthDressHeader(void);
/* Formats one row (no newline); times become UNIX seconds with epoch_ms.
 * Returns the length, or -1 when buf is too small. */
int SIM_TruthFormatPass(char *buf, size_t size, const SIM_PassRecord *r, int64_t epoch_ms);
int SIM_TruthFormatDress(char *buf, size_t size, unsigned long index, const SIM_DressRecord *d,
                         int64_t epoch_ms);

typedef struct SIM_Truth {
  FILE *passes;        /* pass rows, NULL when not written */
  FILE *dresses;       /* dress rows, NULL when not written */
  int own_passes;      /* 1: passes was opened here (closed by SIM_TruthClose) */
  int own_dresses;     /* 1: dresses was opened here */
  int64_t epoch_ms;    /* ms since the UNIX epoch, t = 0 of the model */
  unsigned long dress_rows; /* dress rows written */
} SIM_Truth;

/* Opens (truncating) the files; a NULL path writes nothing, "-" is stdout.
 * Writes the header lines. Returns 0, or -1 with "path: reason" in err. */
int SIM_TruthOpen(SIM_Truth *tr, const char *pass_path, const char *dress_path, int64_t epoch_ms,
                  char *err, size_t errsize);
/* Writes the row of an event. Returns 0, or -1 with the reason in err. */
int SIM_TruthWrite(SIM_Truth *tr, const SIM_Event *ev, char *err, size_t errsize);
/* Steps the model to t [s since the epoch], writing every event. Returns the
 * number of dresses done, or -1 on a write error (message in err). */
int SIM_TruthAdvance(SIM_Truth *tr, SIM_Model *m, double t, char *err, size_t errsize);
int SIM_TruthFlush(SIM_Truth *tr, char *err, size_t errsize);
/* Closes what was opened; returns 0, or -1 when the last writes failed. */
int SIM_TruthClose(SIM_Truth *tr, char *err, size_t errsize);

#endif
