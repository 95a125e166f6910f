/* statusjson.h: the live state as one JSON object (control socket, gritline status). */
#ifndef GRITLINE_STATUSJSON_H
#define GRITLINE_STATUSJSON_H

#include <stddef.h>

#include "conf.h"
#include "monitor.h"

/* What the daemon knows besides the pipeline. */
typedef struct STJ_Link {
  int connected;          /* the controller answers */
  double now;             /* s, in the samples' time base */
  unsigned long polls;    /* polls made */
  unsigned long failed;   /* polls that got nothing */
  const char *last_error; /* "" when none */
  const char *mode;       /* "live" or "replay" */
} STJ_Link;

/* Writes one line of JSON (no newline). Returns its length or -1 when buf is too small. */
long STJ_Format(const CNF_Config *cfg, const MON_Monitor *mon, const STJ_Link *link, char *buf, size_t size);

#endif
