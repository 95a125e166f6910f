/* mqtt.c: the MQTT publisher: payloads, the bounded queue, and libmosquitto's network thread. */
#include "mqtt.h"

#include "textbuf.h"

#include <dlfcn.h>
#include <errno.h>
#include <math.h>
#include <mosquitto.h>
#include <pthread.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "statusjson.h"

/* ---- the library, loaded on demand ----------------------------------------- */

/* libmosquitto, and the TLS libraries it brings along, are loaded only when MQTT
 * is enabled: a daemon without MQTT keeps its resident memory small (see
 * docs/reliability.md, the soak figures). Loaded once, never unloaded: its
 * network thread may outlive any one client. */
static struct mosq_api {
  void *handle;
  __typeof__(mosquitto_lib_init) *lib_init;
  __typeof__(mosquitto_lib_cleanup) *lib_cleanup;
  __typeof__(mosquitto_new) *new;
  __typeof__(mosquitto_destroy) *destroy;
  __typeof__(mosquitto_int_option) *int_option;
  __typeof__(mosquitto_max_inflight_messages_set) *max_inflight_messages_set;
  __typeof__(mosquitto_connect_callback_set) *connect_callback_set;
  __typeof__(mosquitto_disconnect_callback_set) *disconnect_callback_set;
  __typeof__(mosquitto_publish_callback_set) *publish_callback_set;
  __typeof__(mosquitto_reconnect_delay_set) *reconnect_delay_set;
  __typeof__(mosquitto_will_set) *will_set;
  __typeof__(mosquitto_username_pw_set) *username_pw_set;
  __typeof__(mosquitto_strerror) *strerror;
  __typeof__(mosquitto_loop_start) *loop_start;
  __typeof__(mosquitto_loop_stop) *loop_stop;
  __typeof__(mosquitto_connect_async) *connect_async;
  __typeof__(mosquitto_disconnect) *disconnect;
  __typeof__(mosquitto_publish) *publish;
  __typeof__(mosquitto_connack_string) *connack_string;
} api;

static int load_api(char *err, size_t errlen)
{
  if (api.handle)
    return 0;
  void *h = dlopen("libmosquitto.so.1", RTLD_NOW | RTLD_LOCAL);
  if (!h) {
    snprintf(err, errlen, "[mqtt] cannot load libmosquitto.so.1: %s", dlerror());
    return -1;
  }
  const struct {
    const char *name;
    void *slot; /* address of the function pointer to fill */
  } syms[] = {
      {"mosquitto_lib_init", (void *)&api.lib_init},
      {"mosquitto_lib_cleanup", (void *)&api.lib_cleanup},
      {"mosquitto_new", (void *)&api.new},
      {"mosquitto_destroy", (void *)&api.destroy},
      {"mosquitto_int_option", (void *)&api.int_option},
      {"mosquitto_max_inflight_messages_set", (void *)&api.max_inflight_messages_set},
      {"mosquitto_connect_callback_set", (void *)&api.connect_callback_set},
      {"mosquitto_disconnect_callback_set", (void *)&api.disconnect_callback_set},
      {"mosquitto_publish_callback_set", (void *)&api.publish_callback_set},
      {"mosquitto_reconnect_delay_set", (void *)&api.reconnect_delay_set},
      {"mosquitto_will_set", (void *)&api.will_set},
      {"mosquitto_username_pw_set", (void *)&api.username_pw_set},
      {"mosquitto_strerror", (void *)&api.strerror},
      {"mosquitto_loop_start", (void *)&api.loop_start},
      {"mosquitto_loop_stop", (void *)&api.loop_stop},
      {"mosquitto_connect_async", (void *)&api.connect_async},
      {"mosquitto_disconnect", (void *)&api.disconnect},
      {"mosquitto_publish", (void *)&api.publish},
      {"mosquitto_connack_string", (void *)&api.connack_string},
  };
  for (size_t i = 0; i < sizeof syms / sizeof syms[0]; i++) {
    void *f = dlsym(h, syms[i].name);
    if (!f) {
      snprintf(err, errlen, "[mqtt] libmosquitto.so.1 lacks %s", syms[i].name);
      dlclose(h);
      return -1;
    }
    memcpy(syms[i].slot, &f, sizeof f); /* POSIX: a data pointer from dlsym holds a function */
  }
  api.handle = h;
  return 0;
}

#define ACK_RING 256 /* confirmations the network thread can hold for the poll loop */

/* ---- payloads ------------------------------------------------------------ */

static void str(TXB_Buf *j, const char *key, const char *value)
{
  TXB_Put(j, ",\"%s\":", key);
  TXB_JsonString(j, value);
}

/* NAN and infinities are not JSON: null. */
static void num(TXB_Buf *j, const char *key, double v)
{
  if (isfinite(v))
    TXB_Put(j, ",\"%s\":%.7g", key, v);
  else
    TXB_Put(j, ",\"%s\":null", key);
}

/* Times to the millisecond, whatever their size. */
static void tnum(TXB_Buf *j, const char *key, double v)
{
  if (isfinite(v))
    TXB_Put(j, ",\"%s\":%.3f", key, v);
  else
    TXB_Put(j, ",\"%s\":null", key);
}

static void open_object(TXB_Buf *j, const char *machine)
{
  TXB_Put(j, "{\"machine\":");
  TXB_JsonString(j, machine);
}

long MQT_FormatPass(const char *machine, const SEG_Pass *p, const CYC_PassInfo *x, const char *job, const char *wheel,
                    char *buf, size_t size)
{
  TXB_Buf j = TXB_INIT(buf, size);
  char flags[160];
  open_object(&j, machine);
  str(&j, "job", job);
  str(&j, "wheel", wheel);
  TXB_Put(&j, ",\"pass\":%lu", p->number);
  tnum(&j, "start_time", p->start_time);
  tnum(&j, "end_time", p->end_time);
  num(&j, "duration_s", p->duration_s);
  num(&j, "depth_of_cut_mm", p->depth_mm);
  num(&j, "work_speed_mm_min", p->work_speed_mm_s * 60.0);
  num(&j, "wheel_speed_m_s", p->wheel_speed_m_s);
  num(&j, "wheel_diameter_mm", p->wheel_diameter_mm);
  num(&j, "specific_removal_rate_mm2_s", p->specific_removal_rate_mm2_s);
  num(&j, "aggressiveness", p->aggressiveness);
  num(&j, "equivalent_chip_thickness_um", p->chip_thickness_mm * 1e3);
  num(&j, "net_power_mean_w", p->net_power_mean_w);
  num(&j, "net_power_peak_w", p->net_power_peak_w);
  num(&j, "energy_j", p->energy_j);
  num(&j, "specific_energy_j_mm3", p->specific_energy_j_mm3);
  num(&j, "burn_ratio", p->burn_ratio);
  str(&j, "flags", SEG_FormatFlags(p->flags, flags, sizeof flags));
  if (x) {
    TXB_Put(&j, ",\"cycle\":%lu,\"pass_in_cycle\":%lu", x->cycle, x->pass_in_cycle);
    num(&j, "dull_ratio", x->dull_ratio);
    num(&j, "dull_ratio_smoothed", x->smoothed_ratio);
    num(&j, "forecast_passes_left", x->forecast_passes_left);
    num(&j, "g_ratio", x->g_ratio);
  }
  TXB_Put(&j, "}");
  return TXB_Done(&j);
}

long MQT_FormatEvent(const char *machine, const PLG_Event *e, char *buf, size_t size)
{
  TXB_Buf j = TXB_INIT(buf, size);
  open_object(&j, machine);
  tnum(&j, "time", e->time);
  str(&j, "kind", e->kind);
  TXB_Put(&j, ",\"state\":\"%s\",\"severity\":\"%s\",\"pass\":%lu", PLG_StateName(e->state),
      PLG_SeverityName(e->severity), e->pass);
  num(&j, "value", e->value);
  num(&j, "limit", e->limit);
  str(&j, "message", e->message);
  TXB_Put(&j, "}");
  return TXB_Done(&j);
}

long MQT_FormatStatus(const char *machine, int online, const char *reason, int controller_connected,
                      const char *conditions_json, double time, char *buf, size_t size)
{
  TXB_Buf j = TXB_INIT(buf, size);
  open_object(&j, machine);
  TXB_Put(&j, ",\"online\":%s", online ? "true" : "false");
  str(&j, "reason", reason);
  if (controller_connected >= 0)
    TXB_Put(&j, ",\"connection\":\"%s\"", controller_connected ? "up" : "down");
  else
    TXB_Put(&j, ",\"connection\":null");
  TXB_Put(&j, ",\"conditions\":%s", conditions_json && *conditions_json ? conditions_json : "null");
  tnum(&j, "time", time);
  TXB_Put(&j, "}");
  return TXB_Done(&j);
}

/* ---- the queue ----------------------------------------------------------- */

int MQT_QueueInit(MQT_Queue *q, unsigned passes, unsigned alerts)
{
  memset(q, 0, sizeof *q);
  unsigned cap[2] = {passes ? passes : 1, alerts ? alerts : 1};
  for (int k = 0; k < 2; k++) {
    q->ring[k].slot = calloc(cap[k], sizeof(MQT_Message));
    if (!q->ring[k].slot) {
      MQT_QueueFree(q);
      return -1;
    }
    q->ring[k].capacity = cap[k];
  }
  return 0;
}

void MQT_QueueFree(MQT_Queue *q)
{
  for (int k = 0; k < 2; k++) {
    free(q->ring[k].slot);
    q->ring[k].slot = NULL;
    q->ring[k].capacity = q->ring[k].count = q->ring[k].head = 0;
  }
}

int MQT_QueuePush(MQT_Queue *q, int cls, int qos, int retain, const char *topic, const char *payload, size_t len)
{
  MQT_Ring *r = &q->ring[cls];
  size_t tlen = strlen(topic);
  if (tlen >= MQT_TOPIC_MAX || len > MQT_PAYLOAD_MAX || !r->capacity)
    return -1;
  if (r->count == r->capacity) { /* the oldest of this class makes room */
    r->head = (r->head + 1) % r->capacity;
    r->count--;
    r->dropped++;
  }
  MQT_Message *m = &r->slot[(r->head + r->count) % r->capacity];
  m->seq = q->next_seq++;
  m->qos = qos;
  m->retain = retain;
  memcpy(m->topic, topic, tlen + 1);
  memcpy(m->payload, payload, len);
  m->len = len;
  r->count++;
  return 0;
}

MQT_Message *MQT_QueueHead(MQT_Queue *q, int *cls)
{
  MQT_Message *best = NULL;
  for (int k = 0; k < 2; k++) {
    MQT_Ring *r = &q->ring[k];
    if (!r->count)
      continue;
    MQT_Message *m = &r->slot[r->head];
    if (!best || m->seq < best->seq) {
      best = m;
      *cls = k;
    }
  }
  return best;
}

void MQT_QueuePop(MQT_Queue *q, int cls)
{
  MQT_Ring *r = &q->ring[cls];
  if (!r->count)
    return;
  r->head = (r->head + 1) % r->capacity;
  r->count--;
}

/* ---- the client ------------------------------------------------------------ */

typedef struct inflight {
  int mid;      /* libmosquitto's message id */
  int qos;      /* 0..2 */
  double sent;  /* monotonic s when handed over */
} inflight;

struct MQT_Client {
  MQT_Config cfg;                 /* as given */
  char machine[64];               /* [machine] name, in every payload */
  char prefix[MQT_PREFIX_MAX];    /* root of the topics */
  char client_id[MQT_CLIENT_ID_MAX + 64]; /* MQTT client identifier */
  struct mosquitto *mosq;         /* libmosquitto's client */
  int thread_started;             /* its network thread runs */
  MQT_Queue q;                    /* messages waiting for the connection */
  char topic[MQT_TOPIC_MAX];      /* scratch for the poll loop's formatting */
  char payload[MQT_PAYLOAD_MAX];  /* the same, bytes */
  /* The retained status: the latest only, never queued. */
  char status[MQT_PAYLOAD_MAX];   /* its payload */
  size_t status_len;              /* bytes */
  int status_pending;             /* to be sent (changed, or a new connection) */
  int have_status;                /* MQT_Status was called */
  int st_link;                    /* the controller link it says: 1 up, 0 down */
  char st_conditions[512];        /* the conditions it says, JSON array */
  inflight fly[MQT_MAX_INFLIGHT]; /* handed over, not yet confirmed */
  unsigned n_fly;                 /* entries of fly in use */
  unsigned seen_gen;              /* connection generation the poll loop has acted on */
  MQT_Counters cnt;               /* the poll loop's counters */
  /* Shared with libmosquitto's thread, under lock; never held while calling libmosquitto. */
  pthread_mutex_t lock;
  int connected;                  /* 1 between CONNACK 0 and the disconnect */
  unsigned gen;                   /* incremented at each accepted connection */
  unsigned long long connects;    /* accepted connections */
  int last_connack;               /* latest CONNACK code, -1 before the first */
  int acks[ACK_RING];             /* mids confirmed since the poll loop looked */
  unsigned ack_count;             /* entries of acks in use */
};

static void on_connect(struct mosquitto *mosq, void *obj, int rc)
{
  (void)mosq;
  MQT_Client *c = obj;
  pthread_mutex_lock(&c->lock);
  c->last_connack = rc;
  if (rc == 0) {
    c->connected = 1;
    c->gen++;
    c->connects++;
  }
  pthread_mutex_unlock(&c->lock);
}

static void on_disconnect(struct mosquitto *mosq, void *obj, int rc)
{
  (void)mosq;
  (void)rc;
  MQT_Client *c = obj;
  pthread_mutex_lock(&c->lock);
  c->connected = 0;
  pthread_mutex_unlock(&c->lock);
}

/* QoS 0: written to the socket; QoS 1 and 2: acknowledged by the broker. */
static void on_publish(struct mosquitto *mosq, void *obj, int mid)
{
  (void)mosq;
  MQT_Client *c = obj;
  pthread_mutex_lock(&c->lock);
  if (c->ack_count < ACK_RING)
    c->acks[c->ack_count++] = mid;
  pthread_mutex_unlock(&c->lock);
}

static double mono(void)
{
  struct timespec ts;
  clock_gettime(CLOCK_MONOTONIC, &ts);
  return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

static double wall(void)
{
  struct timespec ts;
  clock_gettime(CLOCK_REALTIME, &ts);
  return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

static int read_password(const char *path, char *out, size_t size, char *err, size_t errlen)
{
  FILE *f = fopen(path, "r");
  if (!f) {
    snprintf(err, errlen, "[mqtt] password_file %s: %s", path, strerror(errno));
    return -1;
  }
  out[0] = '\0';
  if (!fgets(out, (int)size, f) && ferror(f)) {
    snprintf(err, errlen, "[mqtt] password_file %s: %s", path, strerror(errno));
    fclose(f);
    return -1;
  }
  fclose(f);
  out[strcspn(out, "\r\n")] = '\0';
  if (!out[0]) {
    snprintf(err, errlen, "[mqtt] password_file %s: the first line is empty", path);
    return -1;
  }
  return 0;
}

static int set_status(MQT_Client *c, int online, const char *reason, int link, const char *cond, double time)
{
  long n = MQT_FormatStatus(c->machine, online, reason, link, cond, time, c->status, sizeof c->status);
  if (n < 0)
    return -1;
  c->status_len = (size_t)n;
  return 0;
}

MQT_Client *MQT_Create(const MQT_Config *cfg, const char *machine, char *err, size_t errlen)
{
  MQT_Client *c = calloc(1, sizeof *c);
  if (!c) {
    snprintf(err, errlen, "[mqtt] out of memory");
    return NULL;
  }
  c->cfg = *cfg;
  pthread_mutex_init(&c->lock, NULL);
  c->last_connack = -1;
  c->cnt.last_connack = -1;
  snprintf(c->machine, sizeof c->machine, "%s", machine);
  if (cfg->topic_prefix[0])
    snprintf(c->prefix, sizeof c->prefix, "%s", cfg->topic_prefix);
  else
    snprintf(c->prefix, sizeof c->prefix, "gritline/%.80s", machine);
  if (cfg->client_id[0])
    snprintf(c->client_id, sizeof c->client_id, "%s", cfg->client_id);
  else
    snprintf(c->client_id, sizeof c->client_id, "gritline-%s", machine);
  char password[256] = "";
  if (cfg->password_file[0] && read_password(cfg->password_file, password, sizeof password, err, errlen) != 0) {
    MQT_Destroy(c, 0);
    return NULL;
  }
  if (MQT_QueueInit(&c->q, cfg->queue_passes, cfg->queue_alerts) != 0) {
    snprintf(err, errlen, "[mqtt] out of memory for queues of %u + %u messages", cfg->queue_passes,
             cfg->queue_alerts);
    MQT_Destroy(c, 0);
    return NULL;
  }
  if (load_api(err, errlen) != 0) {
    MQT_Destroy(c, 0);
    return NULL;
  }
  api.lib_init();
  /* A clean session: what the broker must not lose waits in our own queue. */
  c->mosq = api.new(c->client_id, true, c);
  if (!c->mosq) {
    snprintf(err, errlen, "[mqtt] cannot create the client: %s", strerror(errno));
    MQT_Destroy(c, 0);
    return NULL;
  }
  api.int_option(c->mosq, MOSQ_OPT_PROTOCOL_VERSION, MQTT_PROTOCOL_V311);
  api.max_inflight_messages_set(c->mosq, MQT_MAX_INFLIGHT);
  api.connect_callback_set(c->mosq, on_connect);
  api.disconnect_callback_set(c->mosq, on_disconnect);
  api.publish_callback_set(c->mosq, on_publish);
  api.reconnect_delay_set(c->mosq, cfg->reconnect_min_s, cfg->reconnect_max_s, true);
  char will[MQT_PAYLOAD_MAX];
  long wn = MQT_FormatStatus(c->machine, 0, "connection lost", -1, NULL, NAN, will, sizeof will);
  snprintf(c->topic, sizeof c->topic, "%s/status", c->prefix);
  int rc = wn < 0 ? MOSQ_ERR_INVAL : api.will_set(c->mosq, c->topic, (int)wn, will, 1, true);
  if (rc == MOSQ_ERR_SUCCESS && cfg->username[0])
    rc = api.username_pw_set(c->mosq, cfg->username, password[0] ? password : NULL);
  memset(password, 0, sizeof password);
  if (rc != MOSQ_ERR_SUCCESS) {
    snprintf(err, errlen, "[mqtt] %s", api.strerror(rc));
    MQT_Destroy(c, 0);
    return NULL;
  }
  /* The thread first: with libmosquitto 2.0.11 a first attempt that fails
   * before the thread runs is never tried again (a broker that starts after
   * the daemon, tests/plant/test_mqtt.py). The attempt itself runs here (a name
   * is resolved here too); when it fails the thread goes on trying with the
   * doubling delay, so a broker that is down is not an error. */
  rc = api.loop_start(c->mosq);
  if (rc != MOSQ_ERR_SUCCESS) {
    snprintf(err, errlen, "[mqtt] cannot start the network thread: %s", api.strerror(rc));
    MQT_Destroy(c, 0);
    return NULL;
  }
  c->thread_started = 1;
  rc = api.connect_async(c->mosq, cfg->host, (int)cfg->port, (int)cfg->keepalive_s);
  if (rc != MOSQ_ERR_SUCCESS && rc != MOSQ_ERR_ERRNO && rc != MOSQ_ERR_EAI && rc != MOSQ_ERR_NO_CONN &&
      rc != MOSQ_ERR_CONN_REFUSED) {
    snprintf(err, errlen, "[mqtt] cannot connect to %s:%u: %s", cfg->host, cfg->port, api.strerror(rc));
    MQT_Destroy(c, 0);
    return NULL;
  }
  return c;
}

static void fly_remove(MQT_Client *c, unsigned i)
{
  c->fly[i] = c->fly[--c->n_fly];
}

/* Takes the network thread's news: confirmations and new connections. */
static int take_news(MQT_Client *c, double now)
{
  int acks[ACK_RING];
  pthread_mutex_lock(&c->lock);
  unsigned n = c->ack_count;
  memcpy(acks, c->acks, n * sizeof acks[0]);
  c->ack_count = 0;
  int connected = c->connected;
  unsigned gen = c->gen;
  c->cnt.connects = c->connects;
  c->cnt.last_connack = c->last_connack;
  pthread_mutex_unlock(&c->lock);
  for (unsigned a = 0; a < n; a++)
    for (unsigned i = 0; i < c->n_fly; i++)
      if (c->fly[i].mid == acks[a]) {
        fly_remove(c, i);
        break;
      }
  if (gen != c->seen_gen) {
    c->seen_gen = gen;
    /* QoS 0 messages of the lost connection are gone; libmosquitto sends the
     * unconfirmed QoS 1 and 2 messages again by itself. */
    for (unsigned i = c->n_fly; i-- > 0;)
      if (c->fly[i].qos == 0)
        fly_remove(c, i);
    if (c->have_status)
      c->status_pending = 1; /* the will may have replaced it */
  }
  /* A confirmation that never comes must not hold a place for ever. */
  double limit = 2.0 * c->cfg.keepalive_s + 10.0;
  for (unsigned i = c->n_fly; i-- > 0;)
    if (now - c->fly[i].sent > limit) {
      fly_remove(c, i);
      c->cnt.unconfirmed++;
    }
  c->cnt.connected = connected;
  return connected;
}

static int send_one(MQT_Client *c, const char *topic, const char *payload, size_t len, int qos, int retain, double now)
{
  int mid = 0;
  int rc = api.publish(c->mosq, &mid, topic, (int)len, payload, qos, retain);
  if (rc != MOSQ_ERR_SUCCESS)
    return -1;
  c->fly[c->n_fly++] = (inflight){mid, qos, now};
  c->cnt.published++;
  return 0;
}

void MQT_Service(MQT_Client *c, double now)
{
  if (!c || !c->mosq)
    return;
  if (!take_news(c, now))
    return;
  while (c->n_fly < MQT_MAX_INFLIGHT) {
    if (c->status_pending) {
      snprintf(c->topic, sizeof c->topic, "%s/status", c->prefix);
      if (send_one(c, c->topic, c->status, c->status_len, 1, 1, now) != 0)
        return;
      c->status_pending = 0;
      continue;
    }
    int cls;
    MQT_Message *m = MQT_QueueHead(&c->q, &cls);
    if (!m)
      return;
    if (send_one(c, m->topic, m->payload, m->len, m->qos, m->retain, now) != 0)
      return; /* not connected after all: it stays at the head */
    MQT_QueuePop(&c->q, cls);
  }
}

void MQT_Pass(MQT_Client *c, const SEG_Pass *p, const CYC_PassInfo *x, const char *job, const char *wheel)
{
  if (!c)
    return;
  long n = MQT_FormatPass(c->machine, p, x, job, wheel, c->payload, sizeof c->payload);
  snprintf(c->topic, sizeof c->topic, "%s/pass", c->prefix);
  if (n >= 0)
    MQT_QueuePush(&c->q, MQT_CLASS_PASS, (int)c->cfg.qos_passes, 0, c->topic, c->payload, (size_t)n);
}

void MQT_Event(MQT_Client *c, const PLG_Event *e)
{
  if (!c)
    return;
  long n = MQT_FormatEvent(c->machine, e, c->payload, sizeof c->payload);
  if (n < 0) { /* only the message can be that long: send it shortened */
    PLG_Event shorter = *e;
    snprintf(shorter.message + 200, sizeof shorter.message - 200, "...");
    n = MQT_FormatEvent(c->machine, &shorter, c->payload, sizeof c->payload);
  }
  snprintf(c->topic, sizeof c->topic, "%s/%s/%s", c->prefix, e->state == PLG_NOTE ? "event" : "alert", e->kind);
  if (n >= 0)
    MQT_QueuePush(&c->q, MQT_CLASS_ALERT, 1, 0, c->topic, c->payload, (size_t)n);
}

void MQT_Status(MQT_Client *c, int controller_connected, const char *conditions_json, double time)
{
  if (!c)
    return;
  const char *cond = conditions_json ? conditions_json : "[]";
  if (c->have_status && c->st_link == controller_connected && strcmp(c->st_conditions, cond) == 0)
    return;
  if (set_status(c, 1, "running", controller_connected, cond, time) != 0)
    return;
  c->have_status = 1;
  c->st_link = controller_connected;
  snprintf(c->st_conditions, sizeof c->st_conditions, "%s", cond);
  c->status_pending = 1;
}

void MQT_GetCounters(const MQT_Client *c, MQT_Counters *out)
{
  memset(out, 0, sizeof *out);
  out->last_connack = -1;
  if (!c)
    return;
  *out = c->cnt;
  out->dropped_passes = c->q.ring[MQT_CLASS_PASS].dropped;
  out->dropped_alerts = c->q.ring[MQT_CLASS_ALERT].dropped;
  out->queued_passes = c->q.ring[MQT_CLASS_PASS].count;
  out->queued_alerts = c->q.ring[MQT_CLASS_ALERT].count;
}

const char *MQT_Prefix(const MQT_Client *c) { return c ? c->prefix : ""; }

const char *MQT_ConnackText(int code) { return api.handle ? api.connack_string(code) : "?"; }

void MQT_Destroy(MQT_Client *c, double linger_s)
{
  if (!c)
    return;
  if (c->mosq && c->thread_started) {
    double t0 = mono();
    /* What is waiting gets the linger time too, then the offline status goes last. */
    while (mono() - t0 < linger_s * 0.5 && take_news(c, mono()) &&
           (c->q.ring[0].count || c->q.ring[1].count || c->status_pending)) {
      MQT_Service(c, mono());
      nanosleep(&(struct timespec){0, 10000000L}, NULL);
    }
    if (take_news(c, mono()) && set_status(c, 0, "stopped", -1, NULL, wall()) == 0) {
      snprintf(c->topic, sizeof c->topic, "%s/status", c->prefix);
      int mid = 0;
      if (api.publish(c->mosq, &mid, c->topic, (int)c->status_len, c->status, 1, true) == MOSQ_ERR_SUCCESS) {
        c->fly[0] = (inflight){mid, 1, mono()};
        c->n_fly = 1;
        while (mono() - t0 < linger_s) {
          take_news(c, mono());
          if (!c->n_fly)
            break;
          nanosleep(&(struct timespec){0, 10000000L}, NULL);
        }
      }
    }
    api.disconnect(c->mosq); /* a clean end: the broker drops the will */
    api.loop_stop(c->mosq, false);
  }
  if (c->mosq) {
    api.destroy(c->mosq);
    api.lib_cleanup();
  }
  MQT_QueueFree(&c->q);
  pthread_mutex_destroy(&c->lock);
  free(c);
}
