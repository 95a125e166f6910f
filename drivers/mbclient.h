/* mbclient.h: Modbus TCP/RTU client of the machine: polls the register map into samples (libmodbus). */
#ifndef GRITLINE_MBCLIENT_H
#define GRITLINE_MBCLIENT_H

#include <stddef.h>
#include <stdint.h>

#include "regmap.h"
#include "sample.h"

typedef enum MBC_Transport { MBC_TCP, MBC_RTU } MBC_Transport;

/* Addresses the client may write (alert lamps); anything else is refused. */
#define MBC_MAX_WRITABLE 16

typedef struct MBC_Config {
  MBC_Transport transport;     /* MBC_TCP or MBC_RTU */
  /* TCP */
  char host[256];              /* host name, IPv4 or IPv6 address */
  unsigned port;               /* TCP port, 1..65535 (502 = the Modbus port) */
  /* RTU */
  char device[256];            /* serial device path */
  unsigned baud;               /* bit/s */
  char parity;                 /* 'N', 'E' or 'O' */
  unsigned data_bits;          /* 7 or 8 */
  unsigned stop_bits;          /* 1 or 2 */
  /* Both */
  unsigned unit_id;            /* unit (slave) id: RTU 1..247, TCP 0..247 or 255 */
  double response_timeout_s;   /* s to wait for each answer (and for a TCP connect) */
  double backoff_min_s;        /* s before the first reconnect attempt after a failure */
  double backoff_max_s;        /* s cap of the doubling backoff */
  double stale_s;              /* s a raw value may stay frozen before it is reported; 0 = off */
  double fallback_wheel_diameter_mm; /* mm for wheel_speed -> rpm without a wheel_diameter read; 0 = none */
  unsigned n_write_coils;                      /* entries used in write_coils */
  uint16_t write_coils[MBC_MAX_WRITABLE];      /* coil addresses MBC_WriteCoil may set */
  unsigned n_write_registers;                  /* entries used in write_registers */
  uint16_t write_registers[MBC_MAX_WRITABLE];  /* holding register addresses MBC_WriteRegister may set */
} MBC_Config;

/* TCP to localhost:502 unit 1; RTU defaults 19200 baud, 8 data bits, even parity, 1 stop bit
 * (Modbus over Serial Line V1.02, 2.5.1: even parity is the default; from memory); response timeout
 * 1 s, backoff 1..60 s, stale detection off, nothing writable. */
void MBC_ConfigInit(MBC_Config *cfg);

typedef enum MBC_Status {
  MBC_ALL_READ,       /* every block read */
  MBC_PARTLY_READ,    /* link fine, some blocks answered with an exception: their channels NAN */
  MBC_FAIL_EXCEPTION, /* link fine, every block answered with an exception */
  MBC_FAIL_CONNECT,   /* (re)connect failed; next attempt after the backoff */
  MBC_FAIL_TIMEOUT,   /* a request timed out; link closed, next attempt after the backoff */
  MBC_FAIL_IO,        /* link lost or malformed answer; link closed, next attempt after the backoff */
  MBC_DOWN,           /* waiting for the reconnect backoff: nothing was sent */
} MBC_Status;
const char *MBC_StatusName(MBC_Status s);

typedef struct MBC_Counters {
  unsigned long long requests;         /* read/write requests sent */
  unsigned long long failures;         /* requests or connects that failed (timeouts included) */
  unsigned long long timeouts;         /* requests with no answer in time */
  unsigned long long exceptions;       /* exception answers (V1.1b3, 7) */
  unsigned long long connect_attempts; /* calls to connect, first one included */
  unsigned long long reconnects;       /* successful connects after a lost link */
  unsigned long long rejected;         /* values rejected: NaN/inf or outside the plausible range */
  int connected;                       /* 1 while the link is up */
  double backoff_s;                    /* s the next failure will wait */
  double next_attempt_s;               /* s (poll clock) of the next connect attempt while down */
} MBC_Counters;

typedef struct MBC_Client MBC_Client;

/* Checks cfg and map, plans the requests and allocates everything the client will use; does not
 * connect (the first poll does). NULL with err filled on error. */
MBC_Client *MBC_Create(const MBC_Config *cfg, const RMP_Map *map, char *err, size_t errlen);
void MBC_Destroy(MBC_Client *c);

/* One poll at now_s (monotonic s). Fills out's channels (out->time is left to the caller) and
 * *clock_s (the controller clock in s, NAN when not read): NAN wherever nothing was obtained in this
 * poll; a previous value is never repeated. After a failure the link is closed and the poll spends
 * no more time; reconnects wait backoff_min_s, doubling up to backoff_max_s, and the backoff returns
 * to backoff_min_s after a poll that read something. Blocks at most about one response timeout. */
MBC_Status MBC_Poll(MBC_Client *c, double now_s, SMP_Sample *out, double *clock_s);

/* Bit (1u << RMP_ChannelId) per channel whose raw value has been frozen for longer than its limit
 * (channel stale_s, else the config's stale_s) as of now_s. */
unsigned MBC_StaleChannels(const MBC_Client *c, double now_s);

/* Write-back for alert lamps: only addresses listed in the config, only while connected.
 * Return 0, or -1 with MBC_LastError set. */
int MBC_WriteCoil(MBC_Client *c, unsigned address, int on);
int MBC_WriteRegister(MBC_Client *c, unsigned address, uint16_t value);

void MBC_GetCounters(const MBC_Client *c, MBC_Counters *out);
/* Last error, one line ("" when none yet). */
const char *MBC_LastError(const MBC_Client *c);
/* The request plan and the detail of the latest poll (raw values, rejections). */
const RMP_Plan *MBC_GetPlan(const MBC_Client *c);
const RMP_Values *MBC_LastValues(const MBC_Client *c);

#endif
