/* stale.h: detection of frozen channels, values whose raw bits stop changing (pure, clock-free). */
#ifndef GRITLINE_STALE_H
#define GRITLINE_STALE_H

#include <stdint.h>

#define STL_MAX_CHANNELS 32

/* A live controller's analogue values jitter; a gateway or PLC that stopped updating its registers
 * keeps answering with the same bits. A channel is stale when the latest poll read it and its raw
 * value has not changed for longer than its limit. A channel that was not read in a poll starts a
 * new observation when it comes back: an outage is reported as such, not as frozen data. */
typedef struct STL_Tracker {
  unsigned n;                           /* channels tracked */
  double limit_s[STL_MAX_CHANNELS];     /* s a value may stay unchanged; <= 0 = never stale */
  uint64_t last_raw[STL_MAX_CHANNELS];  /* raw bits of the latest read */
  double changed_s[STL_MAX_CHANNELS];   /* s (caller's monotonic clock) of the last change */
  unsigned current;                     /* bit per channel with a limit read by the latest poll */
  unsigned watched;                     /* bit per channel with a limit (limit_s > 0) */
} STL_Tracker;

/* n channels (at most STL_MAX_CHANNELS), limit_s[i] per channel (s, <= 0 = off). */
void STL_Init(STL_Tracker *t, unsigned n, const double *limit_s);
/* One poll at now_s: channels whose bit is set in read_mask were read with raw[i]. */
void STL_Update(STL_Tracker *t, unsigned read_mask, const uint64_t *raw, double now_s);
/* Bit per channel frozen for longer than its limit at now_s. */
unsigned STL_Stale(const STL_Tracker *t, double now_s);

#endif
