/* simtime.h: the simulator's clock (sim time from real time) and its time formats. */
#ifndef GRITLINE_SIM_SIMTIME_H
#define GRITLINE_SIM_SIMTIME_H

#include <stddef.h>
#include <stdint.h>

/* Parses an instant: UNIX seconds ("1709532000", fraction allowed) or ISO 8601
 * ("2024-03-04T06:00:00Z", "2024-03-04 07:00:00+01:00", "2024-03-04"; no zone
 * means UTC). Returns 0 and sets *unix_ms, or -1. */
int SIM_ParseTime(const char *text, int64_t *unix_ms);

/* Parses a non-negative duration: seconds, or a number with a suffix
 * ms, s, m, h, d ("90", "1.5h", "500ms"). Returns 0 and sets *seconds, or -1. */
int SIM_ParseDuration(const char *text, double *seconds);

/* Sim time [ms since the UNIX epoch] at real time real_ns [ns since the UNIX
 * epoch]: epoch + (real - epoch) * speed. The run starts at the epoch in both
 * clocks, so a restart with the same epoch and speed lands on the same sim time. */
int64_t SIM_SimTimeMs(int64_t epoch_ms, double speed, int64_t real_ns);

/* Real time now [ns since the UNIX epoch] (CLOCK_REALTIME). */
int64_t SIM_RealNowNs(void);

/* Writes "2024-03-04T06:00:00.000Z" into buf (at least 32 bytes); returns buf. */
char *SIM_FormatTime(int64_t unix_ms, char *buf, size_t size);

#endif
