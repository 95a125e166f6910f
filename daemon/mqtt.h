/* mqtt.h: publishes passes, alerts and a retained status to an MQTT broker (libmosquitto); docs/plant.md. */
#ifndef GRITLINE_MQTT_H
#define GRITLINE_MQTT_H

#include <stddef.h>

#include "cycle.h"
#include "passlog.h"
#include "segment.h"

#define MQT_TOPIC_MAX 192     /* bytes of one topic, NUL included */
#define MQT_PAYLOAD_MAX 2048  /* bytes of one message */
#define MQT_PREFIX_MAX 101    /* topic_prefix: up to 100 characters */
#define MQT_CLIENT_ID_MAX 65  /* client_id: up to 64 characters */
#define MQT_MAX_INFLIGHT 32   /* messages handed to libmosquitto and not yet confirmed */

/* The [mqtt] section (defaults set by the configuration parser, conf.c). */
typedef struct MQT_Config {
  int enabled;                        /* 1: publish; 0: nothing is connected (default) */
  char host[256];                     /* broker host name or address [127.0.0.1] */
  unsigned port;                      /* broker TCP port [1883] */
  char client_id[MQT_CLIENT_ID_MAX];  /* MQTT client identifier ["" = gritline-<machine>] */
  char topic_prefix[MQT_PREFIX_MAX];  /* root of this machine's topics ["" = gritline/<machine>] */
  char username[128];                 /* "" = connect without a user name */
  char password_file[256];            /* absolute path; its first line is the password; "" = none */
  unsigned keepalive_s;               /* s between keep-alive pings [30] */
  unsigned qos_passes;                /* QoS of the pass messages, 0..2 [0] (alerts and status: 1) */
  unsigned queue_passes;              /* pass messages kept while the broker is away [1000] */
  unsigned queue_alerts;              /* alert and event messages kept [200] */
  unsigned reconnect_min_s;           /* s before the first reconnect attempt [1] */
  unsigned reconnect_max_s;           /* s cap of the doubling reconnect delay [30] */
} MQT_Config;

/* What the client has done since it was created. */
typedef struct MQT_Counters {
  int connected;                        /* 1 while the broker has accepted the connection */
  unsigned long long connects;          /* connections accepted by the broker */
  unsigned long long published;         /* messages handed to the broker's connection */
  unsigned long long dropped_passes;    /* pass messages dropped from a full queue (oldest first) */
  unsigned long long dropped_alerts;    /* alert and event messages dropped from a full queue */
  unsigned long long unconfirmed;       /* QoS 1/2 messages whose acknowledgement never came */
  unsigned queued_passes;               /* pass messages waiting now */
  unsigned queued_alerts;               /* alert and event messages waiting now */
  int last_connack;                     /* latest CONNACK return code, -1 before the first */
} MQT_Counters;

typedef struct MQT_Client MQT_Client;

/* Allocates the queues (queue_passes + queue_alerts slots, once), reads the
 * password file, sets the last will (a retained offline status) and starts
 * libmosquitto's network thread, which connects and reconnects by itself with a
 * doubling delay. A broker that is down is not an error: messages wait.
 * machine names the topics' default root and the client id. Returns NULL with
 * err filled when the settings or the password file cannot be used. Call with
 * the signals the caller handles blocked: the thread inherits the mask. */
MQT_Client *MQT_Create(const MQT_Config *cfg, const char *machine, char *err, size_t errlen);
/* Publishes the offline status, waits at most linger_s for it to be confirmed,
 * disconnects, stops the thread and frees everything. NULL is ignored. */
void MQT_Destroy(MQT_Client *c, double linger_s);

/* Queue one message each; they never block and never allocate. time is UNIX s. */
void MQT_Pass(MQT_Client *c, const SEG_Pass *p, const CYC_PassInfo *x, const char *job, const char *wheel);
void MQT_Event(MQT_Client *c, const PLG_Event *e);
/* The retained status: the controller link and the active conditions (a JSON
 * array text such as ["dulling"]). Sent again only when something changed, and
 * after each reconnect. */
void MQT_Status(MQT_Client *c, int controller_connected, const char *conditions_json, double time);

/* Hands waiting messages to the connection while it is up; called from the poll
 * loop at each turn. Never blocks. now is monotonic s. */
void MQT_Service(MQT_Client *c, double now);
void MQT_GetCounters(const MQT_Client *c, MQT_Counters *out);
/* The root of the topics in use, e.g. "gritline/sg4". */
const char *MQT_Prefix(const MQT_Client *c);
/* What a CONNACK return code means (libmosquitto's words). */
const char *MQT_ConnackText(int code);

/* Payloads, for the tests and the docs: one JSON object each, no newline.
 * Return the length, or -1 when buf is too small. */
long MQT_FormatPass(const char *machine, const SEG_Pass *p, const CYC_PassInfo *x, const char *job, const char *wheel,
                    char *buf, size_t size);
long MQT_FormatEvent(const char *machine, const PLG_Event *e, char *buf, size_t size);
long MQT_FormatStatus(const char *machine, int online, const char *reason, int controller_connected,
                      const char *conditions_json, double time, char *buf, size_t size);

/* The bounded queue of two classes: pass messages, dropped oldest first when
 * full, and alert/event messages with their own bound. Messages leave in the
 * order they came, whatever their class. */
typedef struct MQT_Message {
  unsigned long long seq;       /* order of arrival */
  int qos;                      /* 0..2 */
  int retain;                   /* 1: the broker keeps it for new subscribers */
  char topic[MQT_TOPIC_MAX];
  size_t len;                   /* bytes of payload */
  char payload[MQT_PAYLOAD_MAX];
} MQT_Message;

typedef struct MQT_Ring {
  MQT_Message *slot;            /* capacity slots */
  unsigned capacity, head, count;
  unsigned long long dropped;   /* messages pushed out when full */
} MQT_Ring;

typedef struct MQT_Queue {
  MQT_Ring ring[2];             /* 0: passes, 1: alerts and events */
  unsigned long long next_seq;
} MQT_Queue;

enum { MQT_CLASS_PASS = 0, MQT_CLASS_ALERT = 1 };

/* Allocates both rings once. Returns 0, or -1 when memory is short. */
int MQT_QueueInit(MQT_Queue *q, unsigned passes, unsigned alerts);
void MQT_QueueFree(MQT_Queue *q);
/* Appends a copy of one message to a class; when that class is full its
 * oldest message is dropped (and counted). Returns 0, or -1 when the topic or
 * the payload is too long (nothing is queued). */
int MQT_QueuePush(MQT_Queue *q, int cls, int qos, int retain, const char *topic, const char *payload, size_t len);
/* The oldest message of either class, NULL when both are empty; *cls says which. */
MQT_Message *MQT_QueueHead(MQT_Queue *q, int *cls);
void MQT_QueuePop(MQT_Queue *q, int cls);

#endif
