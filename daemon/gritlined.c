/* gritlined.c: the daemon: polls the machine over Modbus, runs the monitoring
 * pipeline, writes the shift logs; systemd notification, reload and watchdog. */
#include <errno.h>
#include <getopt.h>
#include <math.h>
#include <poll.h>
#include <signal.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/signalfd.h>
#include <sys/timerfd.h>
#include <sysexits.h>
#include <systemd/sd-daemon.h>
#include <time.h>
#include <unistd.h>

#include "conf.h"
#include "control.h"
#include "hook.h"
#include "log.h"
#include "mbclient.h"
#include "metrics.h"
#include "monitor.h"
#include "mqtt.h"
#include "statusjson.h"

#define DEFAULT_CONFIG "/etc/gritline/gritline.conf"

static const char usage_text[] =
    "usage: gritlined [-c FILE] [--data-dir DIR] [--socket PATH] [--run-for SECONDS]\n"
    "       gritlined --check-config FILE\n"
    "\n"
    "Monitors a grinding machine: polls spindle power and axis feeds over Modbus,\n"
    "splits the stream into passes, and writes per shift the recording samples.csv,\n"
    "passes.csv, events.csv and dress_cycles.csv under <data_dir>/<machine>/<date>_<shift>/.\n"
    "Serves /metrics (Prometheus), /status.json and a live page over HTTP ([metrics],\n"
    "127.0.0.1:9641 by default) and, with [mqtt] enabled, publishes passes, alerts and a\n"
    "retained status to an MQTT broker (docs/metrics.md, docs/plant.md).\n"
    "\n"
    "  -c, --config FILE      configuration file (default " DEFAULT_CONFIG ")\n"
    "      --check-config FILE  validate FILE, print the effective configuration, exit\n"
    "      --data-dir DIR     use DIR instead of the configured data_dir\n"
    "      --socket PATH      control socket (default <runtime_dir>/<machine>.sock)\n"
    "      --run-for SECONDS  stop by itself after SECONDS (demos and tests)\n"
    "  -h, --help             this text\n"
    "      --version          print the version\n"
    "\n"
    "Signals: SIGTERM and SIGINT stop after flushing every file; SIGHUP reloads the\n"
    "configuration (a bad one is refused and the running one kept).\n"
    "Exit status: 0 stopped, 64 usage, 78 bad configuration, 70 internal error,\n"
    "71 system error.\n"
    "\n"
    "Caution: gritline's alerts are advisory and never replace the machine's own guards;\n"
    "never exceed the wheel's marked maximum operating speed; follow the machine builder's\n"
    "instructions, local codes and licensed practice.\n";

typedef struct daemon_state {
  CNF_Config cfg;           /* running configuration */
  CNF_Config next;          /* a reload is read here first */
  MBC_Client *client;
  MON_Monitor *mon;
  int started;              /* the start mark has been written */
  int connected_logged;     /* last connection state logged: -1 none, 0 down, 1 up */
  double last_clock;        /* controller clock of the latest good poll, s */
  double last_clock_mono;   /* monotonic time of that poll */
  uint64_t missed_ticks;    /* polls skipped because a poll overran */
  double watchdog_s;        /* 0 = no watchdog */
  double next_watchdog;     /* monotonic s */
  double next_status;       /* monotonic s */
  unsigned long passes;
  char last_event[200];
  CTL_Server ctl;           /* control socket */
  const char *socket_path;  /* --socket */
  HOK_Hooks hooks;          /* exec hook */
  int wb_want[CND_CONDITION_COUNT];  /* write-back: 1 on, 0 off, per condition */
  int wb_done[CND_CONDITION_COUNT];  /* what the controller holds: -1 unknown */
  unsigned long long reconnects;     /* seen, to know when the controller forgot */
  unsigned long polls, failed_polls;
  int connected;
  /* The plant side: HTTP server and MQTT publisher (NULL when off). */
  MET_Server *met;
  MQT_Client *mqt;
  MET_Snapshot snap;                 /* filled here, copied by the HTTP server */
  int plant_dirty;                   /* a pass or an event since the latest snapshot */
  double next_snapshot;              /* monotonic s */
  int mqtt_logged;                   /* MQTT state last logged: -1 none, 0 down, 1 up */
  int connack_logged;                /* CONNACK refusal last logged, 0 = none */
  unsigned long long dresses;        /* dress events since the start */
  unsigned long long alerts[CND_CONDITION_COUNT]; /* conditions raised since the start */
} daemon_state;

static double now_mono(void)
{
  struct timespec ts;
  clock_gettime(CLOCK_MONOTONIC, &ts);
  return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

static double now_real(void)
{
  struct timespec ts;
  clock_gettime(CLOCK_REALTIME, &ts);
  return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

static void on_pass(void *ctx, const SEG_Pass *p, const CYC_PassInfo *x)
{
  daemon_state *d = ctx;
  char flags[160];
  d->passes++;
  LOG_Message(LOG_INFO,
              "pass %lu: %.2f s, ae %.4f mm, vw %.0f mm/min, vs %.2f m/s, Aggr %.2f, P %.0f W, u %.2f J/mm^3, "
              "u/u* %.2f, r %.3f, cycle %lu pass %lu%s%s",
              p->number, p->duration_s, p->depth_mm, p->work_speed_mm_s * 60.0, p->wheel_speed_m_s,
              p->aggressiveness, p->net_power_mean_w, p->specific_energy_j_mm3, p->burn_ratio, x->smoothed_ratio,
              x->cycle, x->pass_in_cycle, p->flags ? " " : "", SEG_FormatFlags(p->flags, flags, sizeof flags));
  MQT_Pass(d->mqt, p, x, d->cfg.job->name, d->cfg.wheel->name);
  d->plant_dirty = 1;
}

static void on_event(void *ctx, const PLG_Event *e)
{
  daemon_state *d = ctx;
  CND_Kind k;
  if (e->state != PLG_NOTE && CND_KindFromName(e->kind, &k) == 0 && k < CND_CONDITION_COUNT)
    d->wb_want[k] = e->state == PLG_RAISED;
  if (d->mon)
    HOK_Alert(&d->hooks, e, MON_ShiftDir(d->mon), now_mono());
  LOG_Level lv = e->severity == PLG_CRITICAL ? LOG_ERR : e->severity == PLG_WARNING ? LOG_WARNING : LOG_NOTICE;
  if (e->state == PLG_CLEARED)
    lv = LOG_NOTICE;
  LOG_Message(lv, "%s %s: %s", e->kind, PLG_StateName(e->state), e->message);
  if (e->state != PLG_NOTE)
    snprintf(d->last_event, sizeof d->last_event, "%s %s", e->kind, PLG_StateName(e->state));
  if (e->state == PLG_RAISED && CND_KindFromName(e->kind, &k) == 0 && k < CND_CONDITION_COUNT)
    d->alerts[k]++;
  if (e->state == PLG_NOTE && strcmp(e->kind, "dress") == 0)
    d->dresses++;
  MQT_Event(d->mqt, e);
  d->plant_dirty = 1;
}

static void on_io_error(void *ctx, const char *message)
{
  (void)ctx;
  LOG_Message(LOG_ERR, "logging failed: %s", message);
}

static void send_status(daemon_state *d)
{
  MON_Status st;
  MON_GetStatus(d->mon, &st);
  char text[400];
  const SEG_Pass *p = &st.last_pass;
  int n = snprintf(text, sizeof text, "STATUS=%s, shift %s: %lu passes", st.comm_lost ? "controller lost" : "polling",
                   st.shift[0] ? st.shift : "-", st.passes_shift);
  if (p->number && n > 0 && (size_t)n < sizeof text)
    n += snprintf(text + n, sizeof text - (size_t)n, "; last pass Aggr %.1f, u %.1f J/mm^3", p->aggressiveness,
                  p->specific_energy_j_mm3);
  if (n > 0 && (size_t)n < sizeof text)
    n += snprintf(text + n, sizeof text - (size_t)n, "; conditions: %s", st.conditions);
  if (d->last_event[0] && n > 0 && (size_t)n < sizeof text)
    snprintf(text + n, sizeof text - (size_t)n, "; last event %s", d->last_event);
  sd_notify(0, text);
}

/* Only the addresses of the [writeback] section may ever be written. */
static void writeback_allow(const CNF_Config *c, MBC_Config *mc)
{
  mc->n_write_coils = mc->n_write_registers = 0;
  for (int k = 0; k < CND_CONDITION_COUNT; k++) {
    const CNF_WriteBack *w = &c->writeback[k];
    if (w->kind == CNF_WB_COIL && mc->n_write_coils < MBC_MAX_WRITABLE)
      mc->write_coils[mc->n_write_coils++] = (uint16_t)w->address;
    else if (w->kind == CNF_WB_REGISTER && mc->n_write_registers < MBC_MAX_WRITABLE)
      mc->write_registers[mc->n_write_registers++] = (uint16_t)w->address;
  }
}

/* Brings the controller's lamps in line with the active conditions; what
 * fails is tried again after the next good poll. */
static void writeback_sync(daemon_state *d)
{
  MBC_Counters cnt;
  MBC_GetCounters(d->client, &cnt);
  if (cnt.reconnects != d->reconnects) {
    d->reconnects = cnt.reconnects;
    for (int k = 0; k < CND_CONDITION_COUNT; k++)
      d->wb_done[k] = -1; /* a controller that restarted may have forgotten */
  }
  for (int k = 0; k < CND_CONDITION_COUNT; k++) {
    const CNF_WriteBack *w = &d->cfg.writeback[k];
    if (w->kind == CNF_WB_NONE || d->wb_done[k] == d->wb_want[k])
      continue;
    int rc = w->kind == CNF_WB_COIL ? MBC_WriteCoil(d->client, w->address, d->wb_want[k])
                                    : MBC_WriteRegister(d->client, w->address, (uint16_t)(d->wb_want[k] ? w->value : 0));
    if (rc == 0)
      d->wb_done[k] = d->wb_want[k];
    else
      LOG_Message(LOG_WARNING, "write-back of %s to %s %u failed: %s", CND_KindName(k),
                  w->kind == CNF_WB_COIL ? "coil" : "register", w->address, MBC_LastError(d->client));
  }
}

/* Now in the samples' time base (the controller's clock when it is read). */
static double sample_clock(const daemon_state *d)
{
  return d->cfg.timestamp_controller
             ? (isnan(d->last_clock) ? NAN : d->last_clock + (now_mono() - d->last_clock_mono))
             : now_real();
}

static long status_json(void *ctx, char *buf, size_t size)
{
  daemon_state *d = ctx;
  MBC_Counters cnt;
  MBC_GetCounters(d->client, &cnt);
  double now = sample_clock(d);
  STJ_Link link = {cnt.connected, now, d->polls, d->failed_polls, MBC_LastError(d->client), "live"};
  return STJ_Format(&d->cfg, d->mon, &link, buf, size);
}

static int mark_dress(void *ctx, const char *trigger, const char *note, char *why, size_t whylen)
{
  daemon_state *d = ctx;
  if (!d->started) {
    snprintf(why, whylen, "no sample yet: the time of the dress is unknown");
    return -1;
  }
  char text[300];
  snprintf(text, sizeof text, "%s%s%s", trigger, note && *note ? " " : "", note ? note : "");
  MON_Mark(d->mon, -1.0, "dress", text);
  LOG_Message(LOG_NOTICE, "dress marked (%s)", text);
  return 0;
}

static int make_client(daemon_state *d, const CNF_Config *c)
{
  char err[256];
  MBC_Config mc = c->modbus;
  writeback_allow(c, &mc);
  mc.stale_s = 0.0; /* frozen values are judged by the pipeline, so replays judge alike */
  MBC_Client *cl = MBC_Create(&mc, &c->map, err, sizeof err);
  if (!cl) {
    LOG_Message(LOG_ERR, "%s: modbus: %s", c->path, err);
    return -1;
  }
  if (d->client)
    MBC_Destroy(d->client);
  d->client = cl;
  d->connected_logged = -1;
  d->reconnects = 0;
  for (int k = 0; k < CND_CONDITION_COUNT; k++)
    d->wb_done[k] = -1;
  return 0;
}

static void log_connection(daemon_state *d, MBC_Status st)
{
  int up = st == MBC_ALL_READ || st == MBC_PARTLY_READ || st == MBC_FAIL_EXCEPTION;
  if (st == MBC_DOWN || up == d->connected_logged)
    return;
  if (up)
    LOG_Message(LOG_NOTICE, "connected to the controller (%s)", MBC_StatusName(st));
  else
    LOG_Message(LOG_WARNING, "controller: %s: %s", MBC_StatusName(st), MBC_LastError(d->client));
  d->connected_logged = up;
}

#ifdef GRITLINE_FAULT_INJECTION
/* Test builds only (gritlined-test): after GRITLINE_TEST_STALL_AFTER polls the
 * loop hangs, as a read stuck forever would, so tests can see the watchdog
 * keep-alives stop. */
static void maybe_stall(const daemon_state *d)
{
  const char *after = getenv("GRITLINE_TEST_STALL_AFTER");
  if (after && d->polls >= strtoul(after, NULL, 10))
    for (;;)
      pause();
}
#else
static void maybe_stall(const daemon_state *d) { (void)d; }
#endif

static void poll_once(daemon_state *d)
{
  maybe_stall(d);
  SMP_Sample s;
  double clock_s = NAN;
  SMP_Clear(&s, NAN);
  MBC_Status st = MBC_Poll(d->client, now_mono(), &s, &clock_s);
  double mono = now_mono();
  log_connection(d, st);
  d->polls++;
  if (SMP_IsEmpty(&s))
    d->failed_polls++;
  if (d->cfg.timestamp_controller) {
    if (!isnan(clock_s)) {
      d->last_clock = clock_s;
      d->last_clock_mono = mono;
      s.time = clock_s;
    } else if (!isnan(d->last_clock)) {
      /* No clock in this poll: carry the controller's time on with ours. */
      s.time = d->last_clock + (mono - d->last_clock_mono);
      SMP_Clear(&s, s.time); /* values without their clock cannot be placed */
    } else {
      return; /* nothing to place in time yet */
    }
  } else {
    s.time = now_real();
  }
  if (!d->started) {
    char text[400];
    snprintf(text, sizeof text, "gritlined %s, %s, job %s, wheel %s", GRITLINE_VERSION, d->cfg.path,
             d->cfg.job->name, d->cfg.wheel->name);
    MON_Mark(d->mon, s.time, "start", text);
    d->started = 1;
  }
  MON_Feed(d->mon, &s);
  char repaired[1200];
  if (MON_Repairs(d->mon, repaired, sizeof repaired) > 0)
    LOG_Message(LOG_WARNING, "%s", repaired);
  if (st == MBC_ALL_READ || st == MBC_PARTLY_READ)
    writeback_sync(d);
}

/* ---- the plant side: HTTP server and MQTT ---------------------------------- */

/* Fills the snapshot the HTTP server serves and the MQTT status from the
 * pipeline; no allocation (the snapshot lives in the daemon's state). */
static void plant_snapshot(daemon_state *d, double mono)
{
  d->plant_dirty = 0;
  d->next_snapshot = mono + 0.25;
  if (!d->met && !d->mqt)
    return;
  MET_Snapshot *s = &d->snap;
  MON_Status st;
  MON_GetStatus(d->mon, &st);
  MBC_GetCounters(d->client, &s->modbus);
  s->taken = mono;
  snprintf(s->machine, sizeof s->machine, "%s", d->cfg.machine);
  snprintf(s->job, sizeof s->job, "%s", d->cfg.job->name);
  snprintf(s->wheel, sizeof s->wheel, "%s", d->cfg.wheel->name);
  snprintf(s->version, sizeof s->version, "%s", GRITLINE_VERSION);
  s->connected = s->modbus.connected;
  s->in_pass = st.in_pass;
  const SMP_Sample *x = &st.last_sample;
  s->spindle_power_w = x->spindle_power_w;
  s->idle_power_w = st.baseline_w;
  s->net_power_w = x->spindle_power_w - st.baseline_w;
  double ds = isnan(x->wheel_diameter_mm) ? d->cfg.wheel->diameter_mm : x->wheel_diameter_mm;
  s->wheel_speed_m_s = M_PI * ds * x->spindle_speed_rpm / 60000.0;
  s->work_speed_m_s = x->work_speed_mm_min / 60000.0;
  s->last_sample_age_s = sample_clock(d) - st.last_sample_time;
  const SEG_Pass *p = &st.last_pass;
  s->last_pass = p->number;
  s->pass_end_time = p->number ? p->end_time : NAN;
  s->aggressiveness = p->number ? p->aggressiveness : NAN;
  s->specific_energy_j_m3 = p->number ? p->specific_energy_j_mm3 * 1e9 : NAN; /* 1 mm^3 = 1e-9 m^3 */
  s->burn_ratio = p->number ? p->burn_ratio : NAN;
  s->pass_net_power_w = p->number ? p->net_power_mean_w : NAN;
  s->dull_ratio = p->number ? st.last_info.dull_ratio : NAN;
  s->dull_ratio_smoothed = p->number ? st.last_info.smoothed_ratio : NAN;
  s->passes_since_dress = st.passes_in_cycle;
  s->cycle = st.cycle;
  s->forecast_passes_left = st.forecast_passes_left;
  s->aggr_low = d->cfg.wheel->aggr_low;
  s->aggr_high = d->cfg.wheel->aggr_high;
  s->dull_limit = d->cfg.wheel->dull_limit;
  const CND_State *cs = MON_Conditions(d->mon);
  char cond[400] = "[";
  size_t used = 1;
  for (int k = 0; k < CND_CONDITION_COUNT; k++) {
    s->active[k] = CND_IsActive(cs, (CND_Kind)k);
    s->alerts_total[k] = d->alerts[k];
    if (s->active[k] && used < sizeof cond)
      used += (size_t)snprintf(cond + used, sizeof cond - used, "%s\"%s\"", used > 1 ? "," : "", CND_KindName(k));
  }
  if (used < sizeof cond - 1)
    snprintf(cond + used, sizeof cond - used, "]");
  s->passes_total = d->passes;
  s->dresses_total = d->dresses;
  s->polls = d->polls;
  s->failed_polls = d->failed_polls;
  s->mqtt_enabled = d->mqt != NULL;
  MQT_GetCounters(d->mqt, &s->mqtt);
  if (d->mqt && s->mqtt.connected != d->mqtt_logged) {
    if (s->mqtt.connected)
      LOG_Message(LOG_NOTICE, "MQTT: connected to %s port %u", d->cfg.mqtt.host, d->cfg.mqtt.port);
    else if (d->mqtt_logged == 1)
      LOG_Message(LOG_WARNING, "MQTT: connection to the broker lost; messages wait in the queue");
    d->mqtt_logged = s->mqtt.connected;
  }
  if (d->mqt && s->mqtt.last_connack > 0 && s->mqtt.last_connack != d->connack_logged)
    LOG_Message(LOG_ERR, "MQTT: the broker refused the connection: %s", MQT_ConnackText(s->mqtt.last_connack));
  d->connack_logged = s->mqtt.last_connack > 0 ? s->mqtt.last_connack : 0;
  s->status_len = d->met ? status_json(d, s->status_json, sizeof s->status_json) : -1;
  MET_Publish(d->met, s);
  /* The retained status follows the communication_lost condition (held off),
   * not every reconnect of the link. */
  MQT_Status(d->mqt, d->started ? !st.comm_lost : s->connected, cond, now_real());
}

/* Starts what [metrics] and [mqtt] ask for. The HTTP server is optional like
 * the control socket: a port in use is reported and monitoring goes on. */
static int plant_start(daemon_state *d)
{
  char err[512];
  MET_SnapshotInit(&d->snap);
  if (d->cfg.metrics.port) {
    d->met = MET_Start(&d->cfg.metrics, err, sizeof err);
    if (!d->met)
      LOG_Message(LOG_WARNING, "HTTP server unavailable, monitoring goes on without it: %s: %s", d->cfg.path, err);
    else
      LOG_Message(LOG_NOTICE, "HTTP server on %s port %u: /metrics, /status.json, live page at /",
                  d->cfg.metrics.listen, MET_Port(d->met));
  }
  d->mqtt_logged = -1;
  d->connack_logged = 0;
  if (d->cfg.mqtt.enabled) {
    d->mqt = MQT_Create(&d->cfg.mqtt, d->cfg.machine, err, sizeof err);
    if (!d->mqt) {
      LOG_Message(LOG_ERR, "%s: %s", d->cfg.path, err);
      return -1;
    }
    LOG_Message(LOG_NOTICE, "MQTT: publishing to %s port %u under %s/", d->cfg.mqtt.host, d->cfg.mqtt.port,
                MQT_Prefix(d->mqt));
  }
  plant_snapshot(d, now_mono());
  return 0;
}

static void plant_stop(daemon_state *d)
{
  if (d->mqt)
    MQT_Service(d->mqt, now_mono()); /* what the pipeline said last goes out first */
  MQT_Destroy(d->mqt, 2.0);
  d->mqt = NULL;
  MET_Stop(d->met);
  d->met = NULL;
}

static void reload(daemon_state *d)
{
  char err[512], text[600];
  sd_notifyf(0, "RELOADING=1\nMONOTONIC_USEC=%llu", (unsigned long long)(now_mono() * 1e6));
  if (CNF_Load(&d->next, d->cfg.path, err, sizeof err) != 0) {
    LOG_Message(LOG_ERR, "reload refused, keeping the running configuration: %s", err);
    snprintf(text, sizeof text, "refused, running one kept: %s", err);
    if (d->started)
      MON_Mark(d->mon, -1.0, "config", text);
  } else {
    int writeback_changed = memcmp(d->next.writeback, d->cfg.writeback, sizeof d->cfg.writeback) != 0;
    int modbus_changed = memcmp(&d->next.modbus, &d->cfg.modbus, sizeof d->cfg.modbus) != 0 ||
                         memcmp(&d->next.map, &d->cfg.map, sizeof d->cfg.map) != 0 || writeback_changed;
    /* A lamp that moves or goes away is put out first, while the old client
     * may still write its address. */
    for (int k = 0; writeback_changed && k < CND_CONDITION_COUNT; k++) {
      const CNF_WriteBack *o = &d->cfg.writeback[k];
      if (o->kind != CNF_WB_NONE && memcmp(o, &d->next.writeback[k], sizeof *o) != 0 && d->wb_done[k] != 0)
        (void)(o->kind == CNF_WB_COIL ? MBC_WriteCoil(d->client, o->address, 0)
                                      : MBC_WriteRegister(d->client, o->address, 0));
    }
    if (modbus_changed && make_client(d, &d->next) != 0) {
      LOG_Message(LOG_ERR, "reload refused: the new Modbus settings cannot be used");
      if (d->started)
        MON_Mark(d->mon, -1.0, "config", "refused: the new Modbus settings cannot be used");
    } else {
      int plant_changed = memcmp(&d->next.metrics, &d->cfg.metrics, sizeof d->cfg.metrics) != 0 ||
                          memcmp(&d->next.mqtt, &d->cfg.mqtt, sizeof d->cfg.mqtt) != 0;
      if (plant_changed)
        plant_stop(d);
      d->cfg = d->next;
      d->cfg.job = &d->cfg.jobs[d->next.job - d->next.jobs];
      d->cfg.wheel = &d->cfg.wheels[d->next.wheel - d->next.wheels];
      MON_Reconfigure(d->mon, &d->cfg);
      /* The running hooks stay supervised: only what starts next changes. */
      snprintf(d->hooks.path, sizeof d->hooks.path, "%s", d->cfg.hook);
      d->hooks.timeout_s = d->cfg.hook_timeout_s;
      snprintf(d->hooks.machine, sizeof d->hooks.machine, "%s", d->cfg.machine);
      if (!d->hooks.path[0])
        d->hooks.len = 0; /* no hook any more: nothing waits to start */
      if (plant_changed && plant_start(d) != 0)
        LOG_Message(LOG_ERR, "MQTT stays off until the next reload or restart");
      snprintf(text, sizeof text, "loaded: %s, job %s, wheel %s", d->cfg.path, d->cfg.job->name, d->cfg.wheel->name);
      LOG_Message(LOG_NOTICE, "configuration %s", text);
      if (d->started)
        MON_Mark(d->mon, -1.0, "config", text);
    }
  }
  sd_notify(0, "READY=1");
}

static int run(daemon_state *d, double run_for)
{
  sigset_t mask;
  sigemptyset(&mask);
  sigaddset(&mask, SIGTERM);
  sigaddset(&mask, SIGINT);
  sigaddset(&mask, SIGHUP);
  sigprocmask(SIG_BLOCK, &mask, NULL);
  int sfd = signalfd(-1, &mask, SFD_CLOEXEC | SFD_NONBLOCK);
  int tfd = timerfd_create(CLOCK_MONOTONIC, TFD_CLOEXEC | TFD_NONBLOCK);
  if (sfd < 0 || tfd < 0) {
    LOG_Message(LOG_ERR, "signalfd/timerfd: %s", strerror(errno));
    return EX_OSERR;
  }
  /* Absolute, periodic deadlines: the kernel keeps the schedule, so a late
   * poll does not push the next ones back; overruns are counted. */
  struct timespec start;
  clock_gettime(CLOCK_MONOTONIC, &start);
  double period = d->cfg.poll_interval_s;
  struct itimerspec its;
  its.it_interval.tv_sec = (time_t)period;
  its.it_interval.tv_nsec = (long)((period - floor(period)) * 1e9);
  its.it_value = start;
  its.it_value.tv_nsec += 1000000;
  if (its.it_value.tv_nsec >= 1000000000L) {
    its.it_value.tv_sec++;
    its.it_value.tv_nsec -= 1000000000L;
  }
  if (timerfd_settime(tfd, TFD_TIMER_ABSTIME, &its, NULL) != 0) {
    LOG_Message(LOG_ERR, "timerfd_settime: %s", strerror(errno));
    return EX_OSERR;
  }
  /* After the signals are blocked: the HTTP and MQTT threads inherit the mask. */
  if (plant_start(d) != 0)
    return EX_CONFIG;
  uint64_t wd_usec = 0;
  if (sd_watchdog_enabled(0, &wd_usec) > 0)
    d->watchdog_s = wd_usec / 2e6;
  sd_notify(0, "READY=1");
  LOG_Message(LOG_NOTICE, "monitoring %s every %.0f ms (%s, job %s, wheel %s)", d->cfg.machine, period * 1e3,
              d->cfg.path, d->cfg.job->name, d->cfg.wheel->name);
  double t0 = now_mono();
  int stop = 0;
  while (!stop) {
    struct pollfd pfd[2 + 1 + CTL_MAX_CLIENTS] = {{tfd, POLLIN, 0}, {sfd, POLLIN, 0}};
    int nctl = CTL_PollFds(&d->ctl, pfd + 2, 1 + CTL_MAX_CLIENTS);
    if (poll(pfd, (nfds_t)(2 + nctl), d->hooks.len || d->hooks.runs ? 200 : 1000) < 0 && errno != EINTR) {
      LOG_Message(LOG_ERR, "poll: %s", strerror(errno));
      break;
    }
    if (nctl)
      CTL_Handle(&d->ctl, pfd + 2, nctl, now_mono());
    HOK_Service(&d->hooks, now_mono());
    if (pfd[0].revents & POLLIN) {
      uint64_t ticks = 0;
      if (read(tfd, &ticks, sizeof ticks) == (ssize_t)sizeof ticks) {
        if (ticks > 1)
          d->missed_ticks += ticks - 1;
        poll_once(d);
      }
    }
    if (pfd[1].revents & POLLIN) {
      struct signalfd_siginfo si;
      while (read(sfd, &si, sizeof si) == (ssize_t)sizeof si) {
        if (si.ssi_signo == SIGHUP)
          reload(d);
        else
          stop = 1;
      }
    }
    double m = now_mono();
    if (d->watchdog_s > 0 && m >= d->next_watchdog) {
      sd_notify(0, "WATCHDOG=1");
      d->next_watchdog = m + d->watchdog_s;
    }
    if (m >= d->next_status) {
      send_status(d);
      d->next_status = m + 2.0;
    }
    if (d->plant_dirty || m >= d->next_snapshot)
      plant_snapshot(d, m);
    MQT_Service(d->mqt, m);
    if (run_for > 0 && m - t0 >= run_for)
      stop = 1;
  }
  sd_notify(0, "STOPPING=1");
  if (d->started)
    MON_Mark(d->mon, -1.0, "stop", "gritlined stopped");
  HOK_Finish(&d->hooks, 2.0);
  plant_snapshot(d, now_mono());
  plant_stop(d);
  if (d->missed_ticks)
    LOG_Message(LOG_NOTICE, "%llu polls skipped because a poll overran its period",
                (unsigned long long)d->missed_ticks);
  close(tfd);
  close(sfd);
  return EX_OK;
}

int main(int argc, char **argv)
{
  static const struct option opts[] = {
      {"config", required_argument, NULL, 'c'},   {"check-config", required_argument, NULL, 'C'},
      {"data-dir", required_argument, NULL, 'd'}, {"run-for", required_argument, NULL, 'r'},
      {"socket", required_argument, NULL, 's'},
      {"help", no_argument, NULL, 'h'},           {"version", no_argument, NULL, 'V'},
      {NULL, 0, NULL, 0},
  };
  static daemon_state d; /* large: holds two configurations */
  const char *config = DEFAULT_CONFIG, *check = NULL, *data_dir = NULL;
  double run_for = 0.0;
  LOG_Initialise("gritlined");
  opterr = 0;
  int c;
  while ((c = getopt_long(argc, argv, ":c:h", opts, NULL)) != -1) {
    switch (c) {
    case 'c': config = optarg; break;
    case 'C': check = optarg; break;
    case 'd': data_dir = optarg; break;
    case 's': d.socket_path = optarg; break;
    case 'r': {
      char *end;
      run_for = strtod(optarg, &end);
      if (end == optarg || *end || !(run_for > 0.0) || !isfinite(run_for)) {
        fprintf(stderr, "gritlined: --run-for: not a positive number of seconds: \"%s\"\n", optarg);
        return EX_USAGE;
      }
      break;
    }
    case 'h': fputs(usage_text, stdout); return EX_OK;
    case 'V': puts("gritlined " GRITLINE_VERSION); return EX_OK;
    case ':': fprintf(stderr, "gritlined: %s: missing value\n", argv[optind - 1]); return EX_USAGE;
    default: fprintf(stderr, "gritlined: unknown option \"%s\" (see gritlined --help)\n", argv[optind - 1]); return EX_USAGE;
    }
  }
  if (optind < argc) {
    fprintf(stderr, "gritlined: unexpected argument \"%s\" (see gritlined --help)\n", argv[optind]);
    return EX_USAGE;
  }
  char err[512];
  if (check) {
    if (CNF_Load(&d.cfg, check, err, sizeof err) != 0) {
      fprintf(stderr, "gritlined: %s\n", err);
      return EX_CONFIG;
    }
    CNF_Print(&d.cfg, stdout);
    return EX_OK;
  }
  if (CNF_Load(&d.cfg, config, err, sizeof err) != 0) {
    LOG_Message(LOG_ERR, "%s", err);
    return EX_CONFIG;
  }
  d.last_clock = NAN;
  if (make_client(&d, &d.cfg) != 0)
    return EX_CONFIG;
  /* samples.csv in batches of 0.2 s: a write per sample was a fifth of the
   * daemon's CPU at 100 Hz (docs/performance.md); a crash loses at most those
   * 0.2 s, and no pass or event is written before its samples. */
  MON_Options mo = {data_dir, 1, 0.2};
  MON_Sink sink = {&d, on_pass, on_event, on_io_error};
  d.mon = MON_Create(&d.cfg, &mo, &sink, err, sizeof err);
  if (!d.mon) {
    LOG_Message(LOG_ERR, "%s", err);
    return EX_SOFTWARE;
  }
  HOK_Init(&d.hooks, d.cfg.hook, d.cfg.hook_timeout_s, d.cfg.machine);
  /* The lamps show what the restored model holds, and are put out otherwise. */
  const CND_State *cs = MON_Conditions(d.mon);
  for (int k = 0; k < CND_CONDITION_COUNT; k++)
    d.wb_want[k] = CND_IsActive(cs, (CND_Kind)k);
  char sock[CNF_PATH + 64];
  if (d.socket_path)
    snprintf(sock, sizeof sock, "%s", d.socket_path);
  else
    snprintf(sock, sizeof sock, "%s/%s.sock", d.cfg.runtime_dir, d.cfg.machine);
  CTL_Handler h = {&d, status_json, mark_dress};
  if (CTL_Open(&d.ctl, sock, 0660, &h, err, sizeof err) != 0) {
    LOG_Message(LOG_WARNING, "control socket unavailable, monitoring goes on without it: %s", err);
    d.ctl.fd = -1;
  }
  int rc = run(&d, run_for);
  CTL_Close(&d.ctl);
  MON_Destroy(d.mon);
  MBC_Destroy(d.client);
  LOG_Message(LOG_NOTICE, "stopped");
  return rc;
}
