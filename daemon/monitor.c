/* monitor.c: the monitoring pipeline shared by gritlined and gritline replay. */
#include "monitor.h"

#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "logfile.h"
#include "recording.h"
#include "shift.h"
#include "stale.h"
#include "summary.h"

#define MON_BATCH 8192 /* bytes of samples.csv held at most: about 130 rows */
#define MAX_EVENTS 32
#define STATE_MAGIC "gritline condition state 1\n"

struct MON_Monitor {
  CNF_Config cfg;          /* a private copy: reloads replace it */
  MON_Options opt;
  char data_dir[CNF_PATH];
  MON_Sink sink;
  SEG_State seg;           /* pass segmentation */
  CND_State cnd;           /* wheel-condition model */
  CND_Settings cnd_set;    /* its settings */
  int restored;            /* cnd came from the state file */
  STL_Tracker stale;       /* frozen channels, from the sample values */
  unsigned stale_active;   /* channels reported stale */
  int comm_lost;           /* communication_lost raised */
  double fail_since;       /* time of the first failed poll of the current run, NAN = none */
  unsigned long fail_run;  /* failed polls in the current run */
  int log_failed;          /* logging_failed raised */
  unsigned long lost_lines; /* lines dropped while it is */
  double lost_from;        /* time of the first dropped sample */
  double last_time;        /* latest sample time */
  int have_shift;          /* files are open */
  SFT_Shift shift;         /* the shift they belong to */
  char dir[CNF_PATH + 128];
  char state_path[CNF_PATH + 128];
  LGF_File samples, passes, events, cycles;
  char batch[MON_BATCH];   /* lines of samples.csv not yet written (opt.record_batch_s) */
  char joined[REC_LINE_MAX + (MON_BATCH > PLG_LINE_MAX ? MON_BATCH : PLG_LINE_MAX)]; /* gap mark + lines */
  size_t batch_len;        /* bytes in it */
  unsigned long batch_lines; /* lines in it */
  double batch_from;       /* time of its first line */
  MON_Status status;
  CND_Event ev[MAX_EVENTS];
  char line[PLG_LINE_MAX];
};

/* ---- files --------------------------------------------------------------- */

static void logging_failed(MON_Monitor *m, const LGF_File *f, unsigned long lines, double t);
static void logging_back(MON_Monitor *m, double t, const char *text);

/* Appends n_lines whole lines (len bytes) to samples.csv, the first at time t.
 * After a failure, writing resumes only on a file system with room for two
 * batches again, and the gap mark goes first, in the same write: both or
 * neither (LGF_Append). A full disk still takes a few bytes into the last
 * block of the file: a short write that fits there must not clear
 * logging_failed only for the next batch to raise it again. */
static int write_samples(MON_Monitor *m, const char *lines, size_t len, unsigned long n_lines, double t)
{
  const char *out = lines;
  size_t out_len = len;
  char text[160];
  int was_failed = m->log_failed;
  if (was_failed) {
    long long room = LGF_Room(&m->samples);
    if (room >= 0 && room < 2 * MON_BATCH) {
      errno = ENOSPC;
      logging_failed(m, &m->samples, n_lines, t);
      return -1;
    }
    snprintf(text, sizeof text, "%lu samples not recorded since %.3f", m->lost_lines, m->lost_from);
    long k = REC_FormatMark(t, "gap", text, m->joined, REC_LINE_MAX);
    if (k > 0 && (size_t)k + len <= sizeof m->joined) {
      memcpy(m->joined + k, lines, len);
      out = m->joined;
      out_len = (size_t)k + len;
    }
  }
  if (!LGF_IsOpen(&m->samples) || LGF_Append(&m->samples, out, out_len) != 0) {
    logging_failed(m, &m->samples, n_lines, t);
    return -1;
  }
  if (was_failed)
    logging_back(m, t, text);
  return 0;
}

/* Writes the held lines of samples.csv, in one write. */
static int flush_batch(MON_Monitor *m)
{
  size_t len = m->batch_len;
  if (len == 0)
    return 0;
  m->batch_len = 0; /* first: a failure writes events, which flush */
  unsigned long lines = m->batch_lines;
  m->batch_lines = 0;
  return write_samples(m, m->batch, len, lines, m->batch_from);
}

static int write_line(MON_Monitor *m, LGF_File *f, const char *line, long len, double t)
{
  if (len < 0)
    return -1;
  /* A record never reaches the disk before the samples it came from, so a
   * replay of the recording finds every pass and event the daemon wrote. */
  int rc = 0;
  char keep[sizeof m->line];
  if (f != &m->samples && m->batch_len > 0 && (size_t)len <= sizeof keep) {
    memcpy(keep, line, (size_t)len); /* line is often m->line, which the events of a failed flush overwrite */
    line = keep;
    rc = flush_batch(m);
  }
  if (!LGF_IsOpen(f) || LGF_Append(f, line, (size_t)len) != 0) {
    logging_failed(m, f, 1, t);
    return -1;
  }
  return rc;
}

/* A line of samples.csv (a sample or a mark): held in the batch when batching,
 * which is written when full, when record_batch_s of data time has gone by
 * since its first line, and before any other file is written. */
static int record_line(MON_Monitor *m, const char *line, long len, double t)
{
  char keep[sizeof m->line];
  if (len <= 0 || (size_t)len > sizeof keep)
    return -1;
  memcpy(keep, line, (size_t)len); /* line is often m->line, which the events of a failure overwrite */
  if (!(m->opt.record_batch_s > 0.0))
    return write_samples(m, keep, (size_t)len, 1, t);
  int rc = 0;
  if (m->batch_len + (size_t)len > sizeof m->batch)
    rc = flush_batch(m);
  if (m->batch_len == 0)
    m->batch_from = t;
  memcpy(m->batch + m->batch_len, keep, (size_t)len);
  m->batch_len += (size_t)len;
  m->batch_lines++;
  if (!(t - m->batch_from < m->opt.record_batch_s)) /* also a clock that went back */
    rc |= flush_batch(m);
  return rc;
}

static void to_plg(const CND_Event *c, PLG_Event *e)
{
  memset(e, 0, sizeof *e);
  e->time = c->time;
  snprintf(e->kind, sizeof e->kind, "%s", CND_KindName(c->kind));
  e->severity = c->severity == CND_CRITICAL ? PLG_CRITICAL : c->severity == CND_WARNING ? PLG_WARNING : PLG_INFO;
  e->state = c->state == CND_RAISED ? PLG_RAISED : c->state == CND_CLEARED ? PLG_CLEARED : PLG_NOTE;
  e->pass = c->pass;
  e->value = c->value;
  e->limit = c->limit;
  snprintf(e->message, sizeof e->message, "%s", c->message);
}

static void emit(MON_Monitor *m, const PLG_Event *e)
{
  write_line(m, &m->events, m->line, PLG_FormatEvent(e, m->line, sizeof m->line), e->time);
  if (e->state != PLG_NOTE || strcmp(e->kind, "dress") == 0) {
    if (m->status.n_recent == 8) {
      memmove(m->status.recent, m->status.recent + 1, 7 * sizeof m->status.recent[0]);
      m->status.n_recent--;
    }
    m->status.recent[m->status.n_recent++] = *e;
  }
  if (m->sink.event)
    m->sink.event(m->sink.ctx, e);
}

static void save_state(MON_Monitor *m);

static void emit_cnd(MON_Monitor *m, const CND_Event *ev, unsigned n)
{
  for (unsigned i = 0; i < n; i++) {
    PLG_Event e;
    to_plg(&ev[i], &e);
    emit(m, &e);
  }
  CND_Summary(&m->cnd, m->status.conditions, sizeof m->status.conditions);
  if (n)
    save_state(m);
}

__attribute__((format(printf, 7, 8))) static void note(MON_Monitor *m, double t, const char *kind,
                                                        PLG_Severity sev, PLG_State state, unsigned long pass,
                                                        const char *fmt, ...)
{
  PLG_Event e;
  memset(&e, 0, sizeof e);
  e.time = t;
  snprintf(e.kind, sizeof e.kind, "%s", kind);
  e.severity = sev;
  e.state = state;
  e.pass = pass;
  e.value = e.limit = NAN;
  va_list ap;
  va_start(ap, fmt);
  vsnprintf(e.message, sizeof e.message, fmt, ap);
  va_end(ap);
  emit(m, &e);
}

/* Monitoring goes on when the disk fails: the condition is raised once, and
 * lines are dropped (never half-written) until writing works again. */
static void logging_failed(MON_Monitor *m, const LGF_File *f, unsigned long lines, double t)
{
  if (f == &m->samples)
    m->lost_lines += lines;
  if (m->log_failed)
    return;
  m->log_failed = 1;
  m->lost_from = t;
  char detail[700];
  snprintf(detail, sizeof detail, "%s: %s", f->path[0] ? f->path : m->dir, strerror(errno ? errno : EIO));
  if (m->sink.io_error)
    m->sink.io_error(m->sink.ctx, detail);
  CND_Event e;
  if (CND_SetExternal(&m->cnd, CND_LOGGING_FAILED, 1, t, detail, &e) == 1)
    emit_cnd(m, &e, 1);
}

/* The gap mark (text) is written: logging works again. */
static void logging_back(MON_Monitor *m, double t, const char *text)
{
  m->log_failed = 0;
  m->lost_lines = 0;
  CND_Event e;
  if (CND_SetExternal(&m->cnd, CND_LOGGING_FAILED, 0, t, text, &e) == 1)
    emit_cnd(m, &e, 1);
}

static int mkdirs(const char *path)
{
  char tmp[CNF_PATH + 128];
  snprintf(tmp, sizeof tmp, "%s", path);
  for (char *p = tmp + 1; *p; p++) {
    if (*p != '/')
      continue;
    *p = '\0';
    if (mkdir(tmp, 0755) != 0 && errno != EEXIST)
      return -1;
    *p = '/';
  }
  return mkdir(tmp, 0755) != 0 && errno != EEXIST ? -1 : 0;
}

static void close_files(MON_Monitor *m)
{
  flush_batch(m);
  LGF_Close(&m->samples);
  LGF_Close(&m->passes);
  LGF_Close(&m->events);
  LGF_Close(&m->cycles);
  m->have_shift = 0;
}

/* The headline figures of the folder, so that reports over weeks stay fast. */
static void write_summary(MON_Monitor *m)
{
  char err[300];
  SUM_Window w = {m->cfg.wheel->aggr_low, m->cfg.wheel->aggr_high};
  if (m->have_shift && SUM_WriteFolder(m->dir, &w, err, sizeof err) != 0 && m->sink.io_error)
    m->sink.io_error(m->sink.ctx, err);
}

static int open_log(MON_Monitor *m, LGF_File *f, const char *name, const char *header, double t)
{
  char path[sizeof m->dir + 32];
  snprintf(path, sizeof path, "%s/%s", m->dir, name);
  if (LGF_Open(f, path) != 0) {
    LGF_Init(f);
    snprintf(f->path, sizeof f->path, "%s", path);
    logging_failed(m, f, 1, t);
    return -1;
  }
  if (f->created && header) {
    int n = snprintf(m->line, sizeof m->line, "%s\n", header);
    write_line(m, f, m->line, n, t);
  }
  return 0;
}

/* Pass numbers run on from the last row of an existing passes.csv. */
static unsigned long next_pass_number(MON_Monitor *m)
{
  char last[PLG_LINE_MAX];
  if (LGF_LastLine(&m->passes, last, sizeof last) <= 0)
    return 1;
  char *end;
  unsigned long n = strtoul(last, &end, 10);
  return end != last && *end == ',' ? n + 1 : 1;
}

static void recording_meta(const MON_Monitor *m, double t, REC_Meta *meta)
{
  const CNF_Config *c = &m->cfg;
  REC_InitMeta(meta);
  snprintf(meta->machine, sizeof meta->machine, "%s", c->machine);
  meta->geometry = c->job->seg.geometry;
  meta->grinding_width_mm = c->job->seg.width_mm;
  meta->workpiece_diameter_mm = GRD_GeometryIsCylindrical(meta->geometry) ? c->job->seg.workpiece_diameter_mm : NAN;
  meta->wheel_diameter_mm = c->wheel->diameter_mm;
  meta->started = t;
  snprintf(meta->wheel, sizeof meta->wheel, "%s", c->wheel->name);
  snprintf(meta->job, sizeof meta->job, "%s", c->job->name);
}

static void open_shift(MON_Monitor *m, double t)
{
  SFT_Find(&m->cfg.shifts, t, &m->shift);
  snprintf(m->dir, sizeof m->dir, "%s/%s/%s", m->data_dir, m->cfg.machine, m->shift.label);
  m->have_shift = 1;
  LGF_Init(&m->samples);
  LGF_Init(&m->passes);
  LGF_Init(&m->events);
  LGF_Init(&m->cycles);
  snprintf(m->status.shift, sizeof m->status.shift, "%s", m->shift.label);
  if (mkdirs(m->dir) != 0) {
    snprintf(m->samples.path, sizeof m->samples.path, "%s", m->dir);
    logging_failed(m, &m->samples, 1, t);
    return;
  }
  if (m->opt.record && open_log(m, &m->samples, "samples.csv", NULL, t) == 0 && m->samples.created) {
    REC_Meta meta;
    recording_meta(m, t, &meta);
    char head[2048];
    write_line(m, &m->samples, head, REC_FormatHead(&meta, head, sizeof head), t);
  }
  open_log(m, &m->passes, "passes.csv", PLG_PASSES_HEADER, t);
  open_log(m, &m->events, "events.csv", PLG_EVENTS_HEADER, t);
  open_log(m, &m->cycles, "dress_cycles.csv", PLG_CYCLES_HEADER, t);
  m->seg.next_number = next_pass_number(m);
  m->status.passes_shift = m->seg.next_number - 1;
  /* Once per folder: a daemon restarted within the shift adds no second
   * note, and neither does a replay, which never reopens it. */
  if (m->events.created)
    note(m, t, "shift", PLG_INFO, PLG_NOTE, 0, "shift %s", m->shift.label);
}

/* The sample's shift folder, rotating at the change of shift. */
static void ensure_shift(MON_Monitor *m, double t)
{
  if (m->have_shift && t >= m->shift.start && t < m->shift.end)
    return;
  if (m->have_shift) {
    note(m, m->shift.end < t ? m->shift.end : t, "shift", PLG_INFO, PLG_NOTE, 0, "end of shift %s",
         m->shift.label);
    close_files(m);
    m->have_shift = 1; /* the folder is still known */
    write_summary(m);
    m->have_shift = 0;
  }
  open_shift(m, t);
}

/* ---- condition state on disk ------------------------------------------ */

static void save_state(MON_Monitor *m)
{
  if (!m->opt.record || !m->state_path[0])
    return;
  char tmp[sizeof m->state_path + 8];
  snprintf(tmp, sizeof tmp, "%s.new", m->state_path);
  int fd = open(tmp, O_WRONLY | O_CREAT | O_TRUNC | O_CLOEXEC, 0644);
  if (fd < 0)
    return;
  int ok = write(fd, STATE_MAGIC, sizeof STATE_MAGIC - 1) == (ssize_t)(sizeof STATE_MAGIC - 1) &&
           write(fd, &m->cnd, sizeof m->cnd) == (ssize_t)sizeof m->cnd;
  close(fd);
  if (!ok || rename(tmp, m->state_path) != 0)
    unlink(tmp);
}

/* Restores the state saved under the very same settings; anything else
 * starts the model afresh. */
static int load_state(MON_Monitor *m)
{
  int fd = open(m->state_path, O_RDONLY | O_CLOEXEC);
  if (fd < 0)
    return 0;
  char magic[sizeof STATE_MAGIC - 1];
  static CND_State st;
  int ok = read(fd, magic, sizeof magic) == (ssize_t)sizeof magic &&
           memcmp(magic, STATE_MAGIC, sizeof magic) == 0 && read(fd, &st, sizeof st) == (ssize_t)sizeof st;
  char extra;
  ok = ok && read(fd, &extra, 1) == 0;
  close(fd);
  if (!ok || memcmp(&st.set, &m->cnd.set, sizeof st.set) != 0)
    return 0;
  m->cnd = st;
  return 1;
}

static int init_conditions(MON_Monitor *m, char *err, size_t errlen)
{
  memset(&m->cnd_set, 0, sizeof m->cnd_set);
  CNF_CondSettings(&m->cfg, &m->cnd_set);
  memset(&m->cnd, 0, sizeof m->cnd);
  if (CND_Init(&m->cnd, &m->cnd_set, err, errlen) != 0)
    return -1;
  CND_Summary(&m->cnd, m->status.conditions, sizeof m->status.conditions);
  return 0;
}

/* ---- per sample ---------------------------------------------------------- */

static const char *const field_names[SMP_CHANNELS] = {
    "spindle_power", "spindle_speed", "work_speed", "infeed_position",
    "depth_of_cut", "wheel_diameter", "dress_count", "grinding",
};

static void stale_init(MON_Monitor *m)
{
  double limit[SMP_CHANNELS];
  /* Spindle power is a measurement that always jitters: frozen bits there
   * mean a gateway stopped updating. Setpoints (speeds, diameter, counters)
   * may rightly stand still, so only a limit of their own applies. */
  static const int chan_of_field[SMP_CHANNELS] = {RMP_SPINDLE_POWER,  RMP_SPINDLE_SPEED,  RMP_WORK_SPEED,
                                                  RMP_INFEED_POSITION, RMP_DEPTH_OF_CUT, RMP_WHEEL_DIAMETER,
                                                  RMP_DRESS_COUNT,    RMP_GRINDING};
  for (int i = 0; i < SMP_CHANNELS; i++) {
    const RMP_ChannelConfig *ch = &m->cfg.map.ch[chan_of_field[i]];
    double own = ch->enabled ? ch->stale_s : 0.0;
    limit[i] = own > 0.0 ? own : (i == 0 && own == 0.0 ? m->cfg.modbus.stale_s : 0.0);
  }
  STL_Init(&m->stale, SMP_CHANNELS, limit);
  m->stale_active = 0;
}

/* The channels that hold a value (bit per channel, in the order of
 * SMP_Sample); no bit at all is a failed poll. */
static unsigned channels_read(const SMP_Sample *s)
{
  const double *v = &s->spindle_power_w;
  unsigned mask = 0;
  for (int i = 0; i < SMP_CHANNELS; i++)
    if (!isnan(v[i]))
      mask |= 1u << i;
  return mask;
}

static void check_stale(MON_Monitor *m, const SMP_Sample *s, unsigned mask)
{
  /* The raw bits of the channels the tracker watches (the others it skips). */
  const double *v = &s->spindle_power_w;
  uint64_t raw[SMP_CHANNELS];
  for (unsigned left = mask & m->stale.watched; left; left &= left - 1u) {
    unsigned i = (unsigned)__builtin_ctz(left);
    memcpy(&raw[i], &v[i], sizeof raw[i]);
  }
  STL_Update(&m->stale, mask, raw, s->time);
  unsigned now = STL_Stale(&m->stale, s->time);
  if ((now != 0) == (m->stale_active != 0)) {
    m->stale_active = now;
    return;
  }
  char detail[200] = "values moving again";
  if (now) {
    size_t u = (size_t)snprintf(detail, sizeof detail, "values frozen: ");
    for (int i = 0; i < SMP_CHANNELS; i++)
      if (now & (1u << i))
        u += (size_t)snprintf(detail + u, sizeof detail - u, "%s%s", (now & ((1u << i) - 1)) ? ", " : "",
                              field_names[i]);
  }
  m->stale_active = now;
  CND_Event e;
  if (CND_SetExternal(&m->cnd, CND_STALE_DATA, now != 0, s->time, detail, &e) == 1)
    emit_cnd(m, &e, 1);
}

static void check_comm(MON_Monitor *m, const SMP_Sample *s, int failed)
{
  char detail[160];
  CND_Event e;
  if (failed) {
    if (m->fail_run++ == 0)
      m->fail_since = s->time;
    if (!m->comm_lost && s->time - m->fail_since >= m->cfg.comm_lost_after_s) {
      m->comm_lost = 1;
      snprintf(detail, sizeof detail, "no values from the controller since %.3f (%lu polls)", m->fail_since,
               m->fail_run);
      if (CND_SetExternal(&m->cnd, CND_COMM_LOST, 1, s->time, detail, &e) == 1)
        emit_cnd(m, &e, 1);
    }
    return;
  }
  if (m->comm_lost) {
    snprintf(detail, sizeof detail, "values again after %.1f s (%lu polls lost)", s->time - m->fail_since,
             m->fail_run);
    if (CND_SetExternal(&m->cnd, CND_COMM_LOST, 0, s->time, detail, &e) == 1)
      emit_cnd(m, &e, 1);
  }
  m->comm_lost = 0;
  m->fail_run = 0;
  m->fail_since = NAN;
}

static void take_pass(MON_Monitor *m, SEG_Pass *p)
{
  CND_PassResult res;
  unsigned n = CND_Pass(&m->cnd, p, &res, m->ev, MAX_EVENTS);
  write_line(m, &m->passes, m->line, PLG_FormatPass(p, &res.info, m->line, sizeof m->line), p->end_time);
  if (res.cycle_closed)
    write_line(m, &m->cycles, m->line, PLG_FormatCycle(&res.closed, m->line, sizeof m->line), p->end_time);
  m->status.last_pass = *p;
  m->status.last_info = res.info;
  m->status.passes_shift++;
  m->status.cycle = res.info.cycle;
  m->status.passes_in_cycle = res.info.pass_in_cycle;
  m->status.volume_in_cycle = res.info.v_prime_mm3_mm;
  m->status.forecast_passes_left = res.info.forecast_passes_left;
  m->status.forecast_volume_left = res.info.forecast_v_prime_left;
  if (m->sink.pass)
    m->sink.pass(m->sink.ctx, p, &res.info);
  emit_cnd(m, m->ev, n);
  if (!n)
    save_state(m);
}

static void setup_seg(MON_Monitor *m)
{
  SEG_Config sc;
  CNF_SegConfig(&m->cfg, &sc);
  unsigned long next = m->seg.next_number ? m->seg.next_number : 1;
  SEG_Init(&m->seg, &sc, next);
}

static void adopt_config(MON_Monitor *m, const CNF_Config *cfg)
{
  m->cfg = *cfg;
  /* The copy's pointers must point into the copy. */
  m->cfg.job = &m->cfg.jobs[cfg->job - cfg->jobs];
  m->cfg.wheel = &m->cfg.wheels[cfg->wheel - cfg->wheels];
}

MON_Monitor *MON_Create(const CNF_Config *cfg, const MON_Options *opt, const MON_Sink *sink, char *err,
                        size_t errlen)
{
  MON_Monitor *m = calloc(1, sizeof *m);
  if (!m) {
    snprintf(err, errlen, "out of memory");
    return NULL;
  }
  adopt_config(m, cfg);
  m->opt = *opt;
  snprintf(m->data_dir, sizeof m->data_dir, "%s", opt->data_dir ? opt->data_dir : cfg->data_dir);
  if (sink)
    m->sink = *sink;
  setup_seg(m);
  stale_init(m);
  if (init_conditions(m, err, errlen) != 0) {
    free(m);
    return NULL;
  }
  if (m->opt.record) {
    char dir[CNF_PATH + 64];
    snprintf(dir, sizeof dir, "%s/%s", m->data_dir, m->cfg.machine);
    snprintf(m->state_path, sizeof m->state_path, "%s/condition.state", dir);
    mkdirs(dir);
    m->restored = load_state(m);
    CND_Summary(&m->cnd, m->status.conditions, sizeof m->status.conditions);
  }
  m->fail_since = NAN;
  m->last_time = NAN;
  m->status.last_sample_time = NAN;
  m->status.forecast_passes_left = m->status.forecast_volume_left = NAN;
  m->status.volume_in_cycle = NAN;
  LGF_Init(&m->samples);
  LGF_Init(&m->passes);
  LGF_Init(&m->events);
  LGF_Init(&m->cycles);
  return m;
}

void MON_Reconfigure(MON_Monitor *m, const CNF_Config *cfg)
{
  adopt_config(m, cfg);
  /* The open pass keeps its figures; the new settings apply from the next sample. */
  SEG_Config sc;
  CNF_SegConfig(&m->cfg, &sc);
  m->seg.cfg = sc;
  stale_init(m);
  CND_Settings ns;
  memset(&ns, 0, sizeof ns);
  CNF_CondSettings(&m->cfg, &ns);
  if (memcmp(&ns, &m->cnd_set, sizeof ns) != 0) {
    char err[256];
    /* A new wheel, job or limit: the model starts a fresh reference. */
    CND_State keep = m->cnd;
    if (init_conditions(m, err, sizeof err) != 0)
      m->cnd = keep;
    else
      save_state(m);
  }
}

int MON_Feed(MON_Monitor *m, const SMP_Sample *in)
{
  if (isnan(in->time))
    return 0;
  ensure_shift(m, in->time);
  const SMP_Sample *x = in; /* what is analysed */
  SMP_Sample parsed;
  int rc = 0;
  if (m->opt.record) {
    /* What gets analysed is exactly what a replay will read back. */
    parsed = *in;
    x = &parsed;
    long n = REC_FormatSample(in, m->line, sizeof m->line);
    if (n > 0) {
      int col;
      REC_ParseSample(m->line, (size_t)n - 1, &parsed, &col);
      if (record_line(m, m->line, n, x->time) != 0)
        rc = -1;
    }
  }
  unsigned mask = channels_read(x);
  int failed = mask == 0; /* SMP_IsEmpty, from the mask needed anyway */
  m->status.samples++;
  if (failed)
    m->status.failed_polls++;
  m->last_time = x->time;
  m->status.last_sample_time = x->time;
  check_comm(m, x, failed);
  check_stale(m, x, mask);
  CND_Event e;
  if (!failed && CND_Sample(&m->cnd, x->time, x->spindle_speed_rpm, x->wheel_diameter_mm, &e) == 1)
    emit_cnd(m, &e, 1);
  SEG_Pass p;
  if (SEG_Feed(&m->seg, x, &p))
    take_pass(m, &p);
  m->status.comm_lost = m->comm_lost;
  m->status.in_pass = SEG_InPass(&m->seg);
  m->status.baseline_w = SEG_Baseline(&m->seg);
  /* Copied last: read back at once, a sample the caller has just stored
   * would stall the copy (its stores not yet in the cache); nothing reads
   * the status during MON_Feed. */
  m->status.last_sample = *x;
  return rc;
}

int MON_Mark(MON_Monitor *m, double time, const char *kind, const char *text)
{
  double t = time >= 0.0 ? time : m->last_time;
  if (isnan(t))
    return -1;
  ensure_shift(m, t);
  char full[400];
  if (m->opt.record && strcmp(kind, "start") == 0) {
    /* The replay must know whether the model went on or began afresh. */
    snprintf(full, sizeof full, "%s%sstate=%s", text ? text : "", text && *text ? " " : "",
             m->restored ? "restored" : "fresh");
    text = full;
  }
  if (m->opt.record) {
    long n = REC_FormatMark(t, kind, text, m->line, sizeof m->line);
    record_line(m, m->line, n, t);
  }
  unsigned n = 0;
  if (strcmp(kind, "start") == 0) {
    /* A fresh daemon: the segmentation starts afresh, as it did live. */
    setup_seg(m);
    stale_init(m);
    m->comm_lost = 0;
    m->fail_run = 0;
    m->fail_since = NAN;
    if (!m->opt.record && text && strstr(text, "state=fresh")) {
      char err[256];
      init_conditions(m, err, sizeof err);
    }
    note(m, t, "monitoring", PLG_INFO, PLG_NOTE, 0, "monitoring started%s%s", text && *text ? ": " : "",
         text ? text : "");
  } else if (strcmp(kind, "stop") == 0) {
    SEG_Pass p;
    if (SEG_Finish(&m->seg, &p))
      take_pass(m, &p);
    note(m, t, "monitoring", PLG_INFO, PLG_NOTE, 0, "monitoring stopped%s%s", text && *text ? ": " : "",
         text ? text : "");
    save_state(m);
    write_summary(m);
  } else if (strcmp(kind, "config") == 0) {
    int refused = text && strncmp(text, "refused", 7) == 0;
    note(m, t, "config", refused ? PLG_WARNING : PLG_INFO, PLG_NOTE, 0, "configuration %s", text ? text : "");
  } else if (strcmp(kind, "dress") == 0) {
    CYC_Record rec;
    int closed = 0;
    CYC_Trigger trig = text && strstr(text, "schedule") ? CYC_SCHEDULE : CYC_OPERATOR;
    n = CND_Dress(&m->cnd, t, trig, &rec, &closed, m->ev, MAX_EVENTS);
    if (closed)
      write_line(m, &m->cycles, m->line, PLG_FormatCycle(&rec, m->line, sizeof m->line), t);
    emit_cnd(m, m->ev, n);
    save_state(m);
  } else if (strcmp(kind, "gap") == 0) {
    /* Written when logging resumed; the missing samples speak for themselves. */
  } else {
    return -1;
  }
  return 0;
}

void MON_Destroy(MON_Monitor *m)
{
  if (!m)
    return;
  save_state(m);
  close_files(m);
  free(m);
}

int MON_Repairs(MON_Monitor *m, char *buf, size_t size)
{
  LGF_File *files[] = {&m->samples, &m->passes, &m->events, &m->cycles};
  int n = 0;
  size_t used = 0;
  buf[0] = '\0';
  for (size_t i = 0; i < sizeof files / sizeof files[0]; i++) {
    if (files[i]->trimmed <= 0)
      continue;
    int w = snprintf(buf + used, size - used, "%s%s: incomplete last line (%lld bytes) cut away: the writer stopped "
                     "mid-line", n ? "; " : "", files[i]->path, files[i]->trimmed);
    if (w > 0)
      used = used + (size_t)w < size ? used + (size_t)w : size - 1;
    files[i]->trimmed = 0;
    n++;
  }
  return n;
}

void MON_GetStatus(const MON_Monitor *m, MON_Status *out) { *out = m->status; }
const char *MON_ShiftDir(const MON_Monitor *m) { return m->have_shift ? m->dir : ""; }
const CND_State *MON_Conditions(const MON_Monitor *m) { return &m->cnd; }
int MON_Restored(const MON_Monitor *m) { return m->restored; }
