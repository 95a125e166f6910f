/* metrics.c: the read-only HTTP server: Prometheus exposition, the status JSON and the live page. */
#include "metrics.h"

#include "textbuf.h"

#include <arpa/inet.h>
#include <errno.h>
#include <math.h>
#include <microhttpd.h>
#include <netinet/in.h>
#include <pthread.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/socket.h>
#include <time.h>

#include "livepage.h"

void MET_SnapshotInit(MET_Snapshot *s)
{
  memset(s, 0, sizeof *s);
  s->spindle_power_w = s->idle_power_w = s->net_power_w = NAN;
  s->wheel_speed_m_s = s->work_speed_m_s = s->last_sample_age_s = NAN;
  s->pass_end_time = s->aggressiveness = s->specific_energy_j_m3 = NAN;
  s->dull_ratio = s->dull_ratio_smoothed = s->burn_ratio = s->pass_net_power_w = NAN;
  s->forecast_passes_left = s->aggr_low = s->aggr_high = s->dull_limit = NAN;
  s->mqtt.last_connack = -1;
  s->status_len = -1;
}

/* ---- the exposition text ------------------------------------------------ */

/* Label values escape backslash, double quote and line feed (exposition
 * format 0.0.4, "Text format details"; from memory). */
static void label_value(TXB_Buf *t, const char *v)
{
  for (; *v; v++) {
    if (*v == '\\' || *v == '"')
      TXB_Put(t, "\\%c", *v);
    else if (*v == '\n')
      TXB_Put(t, "\\n");
    else
      TXB_Put(t, "%c", *v);
  }
}

static void head(TXB_Buf *t, const char *name, const char *type, const char *help)
{
  TXB_Put(t, "# HELP %s %s\n# TYPE %s %s\n", name, help, name, type);
}

/* One sample: the machine label, then an optional second label. */
static void sample_start(TXB_Buf *t, const MET_Snapshot *s, const char *name, const char *lname, const char *lvalue)
{
  TXB_Put(t, "%s{machine=\"", name);
  label_value(t, s->machine);
  TXB_Put(t, "\"");
  if (lname) {
    TXB_Put(t, ",%s=\"", lname);
    label_value(t, lvalue);
    TXB_Put(t, "\"");
  }
  TXB_Put(t, "} ");
}

/* Go's float syntax as Prometheus reads it: NaN, +Inf, -Inf. */
static void value(TXB_Buf *t, double v)
{
  if (isnan(v))
    TXB_Put(t, "NaN\n");
  else if (isinf(v))
    TXB_Put(t, "%sInf\n", v > 0 ? "+" : "-");
  else
    TXB_Put(t, "%.10g\n", v);
}

static void gauge(TXB_Buf *t, const MET_Snapshot *s, const char *name, const char *help, double v)
{
  head(t, name, "gauge", help);
  sample_start(t, s, name, NULL, NULL);
  value(t, v);
}

static void counter(TXB_Buf *t, const MET_Snapshot *s, const char *name, const char *help, unsigned long long v)
{
  head(t, name, "counter", help);
  sample_start(t, s, name, NULL, NULL);
  TXB_Put(t, "%llu\n", v);
}

long MET_FormatMetrics(const MET_Snapshot *s, double now, char *buf, size_t size)
{
  TXB_Buf t = {buf, size, 0, 0};
  head(&t, "gritline_info", "gauge", "Always 1; the labels name the version, the active job and the wheel.");
  TXB_Put(&t, "gritline_info{machine=\"");
  label_value(&t, s->machine);
  TXB_Put(&t, "\",version=\"");
  label_value(&t, s->version);
  TXB_Put(&t, "\",job=\"");
  label_value(&t, s->job);
  TXB_Put(&t, "\",wheel=\"");
  label_value(&t, s->wheel);
  TXB_Put(&t, "\"} 1\n");

  /* Live values. */
  gauge(&t, s, "gritline_controller_connected", "1 while the machine controller answers over Modbus.", s->connected);
  gauge(&t, s, "gritline_grinding", "1 while a grinding pass is open.", s->in_pass);
  gauge(&t, s, "gritline_spindle_power_watts", "Spindle power of the latest sample.", s->spindle_power_w);
  gauge(&t, s, "gritline_idle_power_watts", "Idle spindle power (the baseline) at the latest sample.", s->idle_power_w);
  gauge(&t, s, "gritline_net_power_watts", "Spindle power minus idle power at the latest sample.", s->net_power_w);
  gauge(&t, s, "gritline_wheel_surface_speed_meters_per_second", "Wheel surface speed at the latest sample.",
        s->wheel_speed_m_s);
  gauge(&t, s, "gritline_work_speed_meters_per_second", "Work (table) speed at the latest sample.", s->work_speed_m_s);
  double age = s->last_sample_age_s + (now - s->taken);
  gauge(&t, s, "gritline_last_sample_age_seconds", "Age of the latest sample, in the samples' time base.", age);

  /* The latest pass. */
  gauge(&t, s, "gritline_last_pass_number", "Number of the latest pass since the daemon started (0: none yet).",
        (double)s->last_pass);
  gauge(&t, s, "gritline_last_pass_end_timestamp_seconds", "End of the latest pass, UNIX time.", s->pass_end_time);
  gauge(&t, s, "gritline_last_pass_aggressiveness", "Aggressiveness number of the latest pass (dimensionless).",
        s->aggressiveness);
  gauge(&t, s, "gritline_last_pass_specific_energy_joules_per_cubic_meter", "Specific grinding energy of the latest pass.",
        s->specific_energy_j_m3);
  gauge(&t, s, "gritline_last_pass_dull_ratio", "Specific energy of the latest pass over the sharp wheel's reference.",
        s->dull_ratio);
  gauge(&t, s, "gritline_last_pass_burn_ratio", "Specific energy of the latest pass over the burn threshold.",
        s->burn_ratio);
  gauge(&t, s, "gritline_last_pass_net_power_watts", "Mean net power of the latest pass.", s->pass_net_power_w);
  gauge(&t, s, "gritline_dull_ratio_smoothed", "Smoothed dull ratio of the open dress cycle.", s->dull_ratio_smoothed);
  gauge(&t, s, "gritline_dull_ratio_limit", "Dull ratio at which the wheel asks for a dress.", s->dull_limit);
  gauge(&t, s, "gritline_passes_since_dress", "Passes in the open dress cycle.", (double)s->passes_since_dress);
  gauge(&t, s, "gritline_dress_cycle", "Number of the open dress cycle.", (double)s->cycle);
  gauge(&t, s, "gritline_forecast_passes_left", "Passes forecast before the dulling limit (NaN: no forecast).",
        s->forecast_passes_left);
  head(&t, "gritline_aggressiveness_window", "gauge", "The wheel's aggressiveness window (bound low or high).");
  sample_start(&t, s, "gritline_aggressiveness_window", "bound", "low");
  value(&t, s->aggr_low);
  sample_start(&t, s, "gritline_aggressiveness_window", "bound", "high");
  value(&t, s->aggr_high);
  head(&t, "gritline_condition_active", "gauge", "1 while the condition is active.");
  for (int k = 0; k < CND_CONDITION_COUNT; k++) {
    sample_start(&t, s, "gritline_condition_active", "kind", CND_KindName((CND_Kind)k));
    TXB_Put(&t, "%d\n", s->active[k] ? 1 : 0);
  }

  /* Counters since the daemon started. */
  counter(&t, s, "gritline_passes_total", "Passes found.", s->passes_total);
  counter(&t, s, "gritline_dresses_total", "Dresses (counter changes and marks) that closed a cycle.", s->dresses_total);
  head(&t, "gritline_alerts_total", "counter", "Conditions raised, by kind.");
  for (int k = 0; k < CND_CONDITION_COUNT; k++) {
    sample_start(&t, s, "gritline_alerts_total", "kind", CND_KindName((CND_Kind)k));
    TXB_Put(&t, "%llu\n", s->alerts_total[k]);
  }
  counter(&t, s, "gritline_polls_total", "Modbus polls of the register map.", s->polls);
  counter(&t, s, "gritline_failed_polls_total", "Polls that obtained no value.", s->failed_polls);
  counter(&t, s, "gritline_modbus_requests_total", "Modbus requests sent.", s->modbus.requests);
  counter(&t, s, "gritline_modbus_errors_total", "Modbus requests or connects that failed, timeouts included.",
          s->modbus.failures);
  counter(&t, s, "gritline_modbus_timeouts_total", "Modbus requests without an answer in time.", s->modbus.timeouts);
  counter(&t, s, "gritline_modbus_exceptions_total", "Modbus exception answers.", s->modbus.exceptions);
  counter(&t, s, "gritline_modbus_reconnects_total", "Modbus connections made again after a lost link.",
          s->modbus.reconnects);
  counter(&t, s, "gritline_modbus_rejected_values_total", "Values rejected as NaN, infinite or out of range.",
          s->modbus.rejected);

  if (s->mqtt_enabled) {
    gauge(&t, s, "gritline_mqtt_connected", "1 while the MQTT broker has accepted the connection.", s->mqtt.connected);
    counter(&t, s, "gritline_mqtt_connects_total", "Connections accepted by the MQTT broker.", s->mqtt.connects);
    counter(&t, s, "gritline_mqtt_messages_published_total", "Messages handed to the MQTT connection.",
            s->mqtt.published);
    head(&t, "gritline_mqtt_messages_dropped_total", "counter",
         "Messages dropped from a full queue while the broker was away, by class.");
    sample_start(&t, s, "gritline_mqtt_messages_dropped_total", "class", "pass");
    TXB_Put(&t, "%llu\n", s->mqtt.dropped_passes);
    sample_start(&t, s, "gritline_mqtt_messages_dropped_total", "class", "alert");
    TXB_Put(&t, "%llu\n", s->mqtt.dropped_alerts);
    counter(&t, s, "gritline_mqtt_unconfirmed_total", "QoS 1 messages whose acknowledgement never came.",
            s->mqtt.unconfirmed);
    head(&t, "gritline_mqtt_queued_messages", "gauge", "Messages waiting for the broker, by class.");
    sample_start(&t, s, "gritline_mqtt_queued_messages", "class", "pass");
    TXB_Put(&t, "%u\n", s->mqtt.queued_passes);
    sample_start(&t, s, "gritline_mqtt_queued_messages", "class", "alert");
    TXB_Put(&t, "%u\n", s->mqtt.queued_alerts);
  }
  return t.bad ? -1 : (long)t.used;
}

/* ---- the server ------------------------------------------------------------ */

typedef struct body_slot {
  struct MET_Server *owner;       /* whose lock guards used */
  int used;                       /* lent to a response until libmicrohttpd frees it */
  char data[MET_BODY_MAX];        /* the response body, bytes */
} body_slot;

struct MET_Server {
  struct MHD_Daemon *mhd;         /* libmicrohttpd with its own thread */
  unsigned port;                  /* TCP port bound */
  pthread_mutex_t lock;           /* guards snap, the slots' used flags and the counters */
  MET_Snapshot snap;              /* the poll loop's latest copy */
  body_slot slot[MET_CONNECTIONS + 2]; /* a response holds one until it is freed */
  unsigned long long served, refused;  /* requests answered 200, and the others */
  struct MHD_Response *page, *not_allowed, *not_found, *busy; /* built once */
  char page_text[LVP_PAGE_MAX];   /* the live page, HTML */
};

static double mono(void)
{
  struct timespec ts;
  clock_gettime(CLOCK_MONOTONIC, &ts);
  return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

static void slot_free(void *cls)
{
  body_slot *b = cls;
  pthread_mutex_lock(&b->owner->lock);
  b->used = 0;
  pthread_mutex_unlock(&b->owner->lock);
}

static enum MHD_Result refuse(MET_Server *m, struct MHD_Connection *con, unsigned code, struct MHD_Response *r)
{
  pthread_mutex_lock(&m->lock);
  m->refused++;
  pthread_mutex_unlock(&m->lock);
  return MHD_queue_response(con, code, r);
}

static void common_headers(struct MHD_Response *r, const char *type)
{
  MHD_add_response_header(r, MHD_HTTP_HEADER_CONTENT_TYPE, type);
  MHD_add_response_header(r, MHD_HTTP_HEADER_CACHE_CONTROL, "no-store");
  MHD_add_response_header(r, "X-Content-Type-Options", "nosniff");
}

static enum MHD_Result handle(void *cls, struct MHD_Connection *con, const char *url, const char *method,
                              const char *version, const char *upload_data, size_t *upload_data_size, void **con_cls)
{
  (void)version;
  (void)upload_data;
  (void)con_cls;
  MET_Server *m = cls;
  *upload_data_size = 0; /* a body is never read: the server only answers GET */
  if (strcmp(method, MHD_HTTP_METHOD_GET) != 0)
    return refuse(m, con, MHD_HTTP_METHOD_NOT_ALLOWED, m->not_allowed);
  if (strcmp(url, "/") == 0) {
    pthread_mutex_lock(&m->lock);
    m->served++;
    pthread_mutex_unlock(&m->lock);
    return MHD_queue_response(con, MHD_HTTP_OK, m->page);
  }
  int is_metrics = strcmp(url, "/metrics") == 0;
  if (!is_metrics && strcmp(url, "/status.json") != 0)
    return refuse(m, con, MHD_HTTP_NOT_FOUND, m->not_found);
  /* Formatted under the lock from the snapshot, into a buffer of the pool. */
  pthread_mutex_lock(&m->lock);
  body_slot *b = NULL;
  for (int i = 0; i < MET_CONNECTIONS + 2 && !b; i++)
    if (!m->slot[i].used)
      b = &m->slot[i];
  long n = -1;
  if (b) {
    if (is_metrics) {
      n = MET_FormatMetrics(&m->snap, mono(), b->data, sizeof b->data);
    } else if (m->snap.status_len >= 0) {
      memcpy(b->data, m->snap.status_json, (size_t)m->snap.status_len);
      n = m->snap.status_len;
    }
    if (n >= 0) {
      b->used = 1;
      m->served++;
    }
  }
  pthread_mutex_unlock(&m->lock);
  if (n < 0)
    return refuse(m, con, MHD_HTTP_SERVICE_UNAVAILABLE, m->busy);
  struct MHD_Response *r = MHD_create_response_from_buffer_with_free_callback_cls((size_t)n, b->data, slot_free, b);
  if (!r) {
    slot_free(b);
    return MHD_NO;
  }
  common_headers(r, is_metrics ? "text/plain; version=0.0.4; charset=utf-8" : "application/json");
  enum MHD_Result rc = MHD_queue_response(con, MHD_HTTP_OK, r);
  MHD_destroy_response(r); /* MHD keeps its own reference until the answer is sent */
  return rc;
}

static struct MHD_Response *fixed(const char *text, const char *type)
{
  struct MHD_Response *r = MHD_create_response_from_buffer(strlen(text), (void *)text, MHD_RESPMEM_PERSISTENT);
  if (r)
    common_headers(r, type);
  return r;
}

/* libmicrohttpd's own messages go nowhere: only programs print. */
static void quiet(void *cls, const char *fmt, va_list ap)
{
  (void)cls;
  (void)fmt;
  (void)ap;
}

MET_Server *MET_Start(const MET_Config *cfg, char *err, size_t errlen)
{
  struct sockaddr_storage sa;
  memset(&sa, 0, sizeof sa);
  unsigned flags = MHD_USE_INTERNAL_POLLING_THREAD | MHD_USE_POLL | MHD_USE_ERROR_LOG;
  struct sockaddr_in *v4 = (struct sockaddr_in *)&sa;
  struct sockaddr_in6 *v6 = (struct sockaddr_in6 *)&sa;
  if (inet_pton(AF_INET, cfg->listen, &v4->sin_addr) == 1) {
    v4->sin_family = AF_INET;
    v4->sin_port = htons((uint16_t)cfg->port);
  } else if (inet_pton(AF_INET6, cfg->listen, &v6->sin6_addr) == 1) {
    v6->sin6_family = AF_INET6;
    v6->sin6_port = htons((uint16_t)cfg->port);
    flags |= MHD_USE_IPv6;
  } else {
    snprintf(err, errlen, "[metrics] listen: not a numeric IPv4 or IPv6 address: \"%s\"", cfg->listen);
    return NULL;
  }
  MET_Server *m = calloc(1, sizeof *m);
  if (!m) {
    snprintf(err, errlen, "[metrics] out of memory");
    return NULL;
  }
  pthread_mutex_init(&m->lock, NULL);
  MET_SnapshotInit(&m->snap);
  for (int i = 0; i < MET_CONNECTIONS + 2; i++)
    m->slot[i].owner = m;
  if (LVP_Write(m->page_text, sizeof m->page_text) >= 0)
    m->page = fixed(m->page_text, "text/html; charset=utf-8");
  m->not_allowed = fixed("405 method not allowed: this server only answers GET\n", "text/plain; charset=utf-8");
  m->not_found = fixed("404 not found: try /, /metrics or /status.json\n", "text/plain; charset=utf-8");
  m->busy = fixed("503 busy or no data yet\n", "text/plain; charset=utf-8");
  if (!m->page || !m->not_allowed || !m->not_found || !m->busy) {
    snprintf(err, errlen, "[metrics] out of memory");
    MET_Stop(m);
    return NULL;
  }
  MHD_add_response_header(m->page, "Content-Security-Policy",
                          "default-src 'none'; script-src 'unsafe-inline'; style-src 'unsafe-inline'; "
                          "connect-src 'self'; img-src data:");
  MHD_add_response_header(m->not_allowed, MHD_HTTP_HEADER_ALLOW, "GET");
  m->mhd = MHD_start_daemon(flags, (uint16_t)cfg->port, NULL, NULL, handle, m,
                            MHD_OPTION_SOCK_ADDR, (struct sockaddr *)&sa,
                            MHD_OPTION_CONNECTION_LIMIT, (unsigned)MET_CONNECTIONS,
                            MHD_OPTION_CONNECTION_TIMEOUT, (unsigned)10,
                            MHD_OPTION_CONNECTION_MEMORY_LIMIT, (size_t)32768,
                            MHD_OPTION_EXTERNAL_LOGGER, quiet, NULL,
                            MHD_OPTION_END);
  if (!m->mhd) {
    int e = errno;
    snprintf(err, errlen, "[metrics] cannot listen on %s port %u: %s", cfg->listen, cfg->port,
             e ? strerror(e) : "libmicrohttpd refused to start");
    MET_Stop(m);
    return NULL;
  }
  const union MHD_DaemonInfo *info = MHD_get_daemon_info(m->mhd, MHD_DAEMON_INFO_BIND_PORT);
  m->port = info ? info->port : cfg->port;
  return m;
}

unsigned MET_Port(const MET_Server *m) { return m ? m->port : 0; }

void MET_Publish(MET_Server *m, const MET_Snapshot *s)
{
  if (!m)
    return;
  pthread_mutex_lock(&m->lock);
  /* The status text is copied only as far as it goes. */
  memcpy(&m->snap, s, offsetof(MET_Snapshot, status_json));
  if (s->status_len > 0)
    memcpy(m->snap.status_json, s->status_json, (size_t)s->status_len);
  pthread_mutex_unlock(&m->lock);
}

void MET_Requests(MET_Server *m, unsigned long long *served, unsigned long long *refused)
{
  pthread_mutex_lock(&m->lock);
  *served = m->served;
  *refused = m->refused;
  pthread_mutex_unlock(&m->lock);
}

void MET_Stop(MET_Server *m)
{
  if (!m)
    return;
  if (m->mhd)
    MHD_stop_daemon(m->mhd); /* joins the thread; responses in flight are freed */
  struct MHD_Response *r[] = {m->page, m->not_allowed, m->not_found, m->busy};
  for (size_t i = 0; i < sizeof r / sizeof r[0]; i++)
    if (r[i])
      MHD_destroy_response(r[i]);
  pthread_mutex_destroy(&m->lock);
  free(m);
}
