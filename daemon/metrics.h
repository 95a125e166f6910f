/* metrics.h: the read-only HTTP server of gritlined (libmicrohttpd): /metrics, /status.json and the live page. */
#ifndef GRITLINE_METRICS_H
#define GRITLINE_METRICS_H

#include <stddef.h>

#include "condition.h"
#include "mbclient.h"
#include "mqtt.h"

#define MET_DEFAULT_PORT 9641  /* our choice (docs/metrics.md) */
#define MET_STATUS_MAX 32768   /* bytes of the status JSON */
#define MET_BODY_MAX 65536     /* bytes of one response */
#define MET_CONNECTIONS 8      /* connections served at once; more wait in the listen backlog */

/* The [metrics] section. */
typedef struct MET_Config {
  char listen[64];  /* numeric IPv4 or IPv6 address to bind [127.0.0.1] */
  unsigned port;    /* TCP port, 0 = no HTTP server [MET_DEFAULT_PORT] */
} MET_Config;

/* What the poll loop hands over: copied whole under the server's mutex, so
 * the HTTP thread never touches the pipeline. Units in the names; NAN = unknown. */
typedef struct MET_Snapshot {
  double taken;                     /* monotonic s when it was filled */
  char machine[40], job[40], wheel[40], version[24]; /* label values */
  int connected;                    /* the controller answers */
  int in_pass;                      /* a pass is open (grinding) */
  double spindle_power_w;           /* W, latest sample */
  double idle_power_w;              /* W, idle baseline */
  double net_power_w;               /* W, spindle minus idle */
  double wheel_speed_m_s;           /* m/s, wheel surface speed */
  double work_speed_m_s;            /* m/s, table or work speed */
  double last_sample_age_s;         /* s, age of the latest sample when taken */
  unsigned long last_pass;          /* number of the latest pass, 0 = none */
  double pass_end_time;             /* UNIX s, its end */
  double aggressiveness;            /* of the latest pass */
  double specific_energy_j_m3;      /* J/m^3 of the latest pass */
  double dull_ratio;                /* u / u_ref of the latest pass */
  double dull_ratio_smoothed;       /* smoothed dull ratio */
  double burn_ratio;                /* u / u* of the latest pass */
  double pass_net_power_w;          /* W, mean net power of the latest pass */
  unsigned long passes_since_dress; /* passes in the open dress cycle */
  unsigned long cycle;              /* dress cycle number */
  double forecast_passes_left;      /* passes before the dulling limit */
  double aggr_low, aggr_high;       /* the wheel's aggressiveness window */
  double dull_limit;                /* dull ratio that asks for a dress */
  int active[CND_CONDITION_COUNT];  /* 1 while a condition is active */
  unsigned long long passes_total;  /* passes since the daemon started */
  unsigned long long dresses_total; /* dresses since the daemon started */
  unsigned long long alerts_total[CND_CONDITION_COUNT]; /* conditions raised since the daemon started */
  unsigned long long polls, failed_polls; /* Modbus polls, and those that got nothing */
  MBC_Counters modbus;              /* the Modbus client's counters */
  int mqtt_enabled;                 /* [mqtt] enabled */
  MQT_Counters mqtt;                /* the MQTT client's counters */
  long status_len;                  /* bytes of status_json, -1 = none */
  char status_json[MET_STATUS_MAX]; /* the STJ_Format object */
} MET_Snapshot;

/* Empties a snapshot (everything unknown, counters zero). */
void MET_SnapshotInit(MET_Snapshot *s);

/* The Prometheus text exposition (format 0.0.4) of a snapshot, now being
 * monotonic s (the sample age grows from s->taken). Returns the length, or -1
 * when buf is too small. */
long MET_FormatMetrics(const MET_Snapshot *s, double now, char *buf, size_t size);

typedef struct MET_Server MET_Server;

/* Binds cfg->listen:cfg->port (0: a port the kernel chooses, for tests; the
 * daemon starts no server then) and starts libmicrohttpd's own thread, with the
 * response buffers allocated once. Call with the signals the caller handles
 * blocked: the thread inherits the mask. Returns NULL with err filled. */
MET_Server *MET_Start(const MET_Config *cfg, char *err, size_t errlen);
/* The port bound. */
unsigned MET_Port(const MET_Server *m);
/* Hands a snapshot over (a copy under the mutex; never blocks on a client). */
void MET_Publish(MET_Server *m, const MET_Snapshot *s);
/* Requests served and refused (405, 404, busy) since the start. */
void MET_Requests(MET_Server *m, unsigned long long *served, unsigned long long *refused);
void MET_Stop(MET_Server *m);

#endif
