/* monitor.c: the monitoring pipeline shared by gritlined and gritline replay. */
#include "monitor.h"

#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "logfile.h"
#include "recording.h"
#include "shift.h"
#include "stale.h"

/* Failed polls for this long make "communication lost" (s). */
#define COMM_LOST_AFTER_S 2.0

struct MON_Monitor {
  CNF_Config cfg;          /* a private copy: reloads replace it */
  MON_Options opt;
  char data_dir[CNF_PATH];
  MON_Sink sink;
  SEG_State seg;           /* pass segmentation */
  STL_Tracker stale;       /* frozen channels, from the sample values */
  unsigned stale_active;   /* channels reported stale */
  int comm_lost;           /* communication_lost raised */
  double fail_since;       /* time of the first failed poll of the current run, NAN = none */
  unsigned long fail_run;  /* failed polls in the current run */
  double last_time;        /* latest sample time */
  int have_shift;          /* files are open */
  SFT_Shift shift;         /* the shift they belong to */
  char dir[CNF_PATH + 128];
  LGF_File samples, passes, events, cycles;
  int io_failed;           /* a write failed and has not succeeded since */
  /* dress cycles, kept here until the condition model takes them */
  int have_dress;
  double dress_count;
  unsigned long cycle, passes_since_dress;
  double volume_since_dress;
  MON_Status status;
  char line[PLG_LINE_MAX];
};

static void report_io(MON_Monitor *m, const LGF_File *f, const char *what)
{
  if (m->io_failed)
    return; /* once per episode */
  m->io_failed = 1;
  if (m->sink.io_error) {
    char msg[700];
    snprintf(msg, sizeof msg, "%s: %s: %s", f->path, what, strerror(errno));
    m->sink.io_error(m->sink.ctx, msg);
  }
}

static int write_line(MON_Monitor *m, LGF_File *f, const char *line, long len)
{
  if (len < 0 || !LGF_IsOpen(f))
    return -1;
  if (LGF_Append(f, line, (size_t)len) != 0) {
    report_io(m, f, "write failed, line dropped");
    return -1;
  }
  if (m->io_failed && f != &m->samples) {
    m->io_failed = 0; /* the note below goes to the events file, so it can only be written here */
  }
  return 0;
}

static void emit(MON_Monitor *m, PLG_Event *e)
{
  write_line(m, &m->events, m->line, PLG_FormatEvent(e, m->line, sizeof m->line));
  if (m->sink.event)
    m->sink.event(m->sink.ctx, e);
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
  LGF_Close(&m->samples);
  LGF_Close(&m->passes);
  LGF_Close(&m->events);
  LGF_Close(&m->cycles);
  m->have_shift = 0;
}

static int open_log(MON_Monitor *m, LGF_File *f, const char *name, const char *header)
{
  char path[sizeof m->dir + 32];
  snprintf(path, sizeof path, "%s/%s", m->dir, name);
  if (LGF_Open(f, path) != 0) {
    LGF_Init(f);
    snprintf(f->path, sizeof f->path, "%s", path);
    report_io(m, f, "cannot open");
    return -1;
  }
  if (f->created && header) {
    int n = snprintf(m->line, sizeof m->line, "%s\n", header);
    write_line(m, f, m->line, n);
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
  if (mkdirs(m->dir) != 0) {
    snprintf(m->samples.path, sizeof m->samples.path, "%s", m->dir);
    report_io(m, &m->samples, "cannot create the shift folder");
    return;
  }
  if (m->opt.record && open_log(m, &m->samples, "samples.csv", NULL) == 0 && m->samples.created) {
    REC_Meta meta;
    recording_meta(m, t, &meta);
    char head[2048];
    write_line(m, &m->samples, head, REC_FormatHead(&meta, head, sizeof head));
  }
  open_log(m, &m->passes, "passes.csv", PLG_PASSES_HEADER);
  open_log(m, &m->events, "events.csv", PLG_EVENTS_HEADER);
  open_log(m, &m->cycles, "dress_cycles.csv", PLG_CYCLES_HEADER);
  m->seg.next_number = next_pass_number(m);
  m->status.passes_shift = m->seg.next_number - 1;
  snprintf(m->status.shift, sizeof m->status.shift, "%s", m->shift.label);
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
  }
  open_shift(m, t);
}

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
}

static const char *const field_names[SMP_CHANNELS] = {
    "spindle_power", "spindle_speed", "work_speed", "infeed_position",
    "depth_of_cut", "wheel_diameter", "dress_count", "grinding",
};

static void check_stale(MON_Monitor *m, const SMP_Sample *s)
{
  const double *v = &s->spindle_power_w;
  uint64_t raw[SMP_CHANNELS];
  unsigned mask = 0;
  for (int i = 0; i < SMP_CHANNELS; i++) {
    raw[i] = 0;
    if (!isnan(v[i])) {
      memcpy(&raw[i], &v[i], sizeof raw[i]);
      mask |= 1u << i;
    }
  }
  STL_Update(&m->stale, mask, raw, s->time);
  unsigned now = STL_Stale(&m->stale, s->time);
  if (now == m->stale_active)
    return;
  char names[200] = "";
  for (int i = 0; i < SMP_CHANNELS; i++)
    if (now & (1u << i)) {
      size_t u = strlen(names);
      snprintf(names + u, sizeof names - u, "%s%s", u ? ", " : "", field_names[i]);
    }
  if (now && !m->stale_active)
    note(m, s->time, "stale_data", PLG_WARNING, PLG_RAISED, 0, "values frozen: %s; check the controller or gateway",
         names);
  else if (!now)
    note(m, s->time, "stale_data", PLG_WARNING, PLG_CLEARED, 0, "values moving again");
  else
    note(m, s->time, "stale_data", PLG_WARNING, PLG_RAISED, 0, "values frozen: %s", names);
  m->stale_active = now;
}

static void check_comm(MON_Monitor *m, const SMP_Sample *s, int failed)
{
  if (failed) {
    if (m->fail_run++ == 0)
      m->fail_since = s->time;
    if (!m->comm_lost && s->time - m->fail_since >= COMM_LOST_AFTER_S) {
      m->comm_lost = 1;
      note(m, s->time, "communication_lost", PLG_WARNING, PLG_RAISED, 0,
           "no values from the controller since %.3f (%lu polls)", m->fail_since, m->fail_run);
    }
    return;
  }
  if (m->comm_lost)
    note(m, s->time, "communication_lost", PLG_WARNING, PLG_CLEARED, 0,
         "values from the controller again after %.1f s (%lu polls lost)", s->time - m->fail_since, m->fail_run);
  m->comm_lost = 0;
  m->fail_run = 0;
  m->fail_since = NAN;
}

static void take_pass(MON_Monitor *m, SEG_Pass *p)
{
  PLG_PassExtra x;
  PLG_InitExtra(&x);
  if (!isnan(p->dress_count)) {
    if (m->have_dress && p->dress_count != m->dress_count) {
      m->cycle++;
      m->passes_since_dress = 0;
      m->volume_since_dress = 0.0;
      note(m, p->start_time, "dress", PLG_INFO, PLG_NOTE, p->number, "dress counter %.0f -> %.0f",
           m->dress_count, p->dress_count);
    }
    m->have_dress = 1;
    m->dress_count = p->dress_count;
  }
  m->passes_since_dress++;
  if (isfinite(p->volume_mm3))
    m->volume_since_dress += p->volume_mm3 / m->cfg.job->seg.width_mm;
  x.dress_cycle = m->cycle;
  x.passes_since_dress = m->passes_since_dress;
  x.volume_since_dress_mm3_mm = m->volume_since_dress;
  write_line(m, &m->passes, m->line, PLG_FormatPass(p, &x, m->line, sizeof m->line));
  m->status.last_pass = *p;
  m->status.last_extra = x;
  m->status.passes_shift++;
  if (m->sink.pass)
    m->sink.pass(m->sink.ctx, p, &x);
}

static void setup_seg(MON_Monitor *m)
{
  SEG_Config sc;
  CNF_SegConfig(&m->cfg, &sc);
  unsigned long next = m->seg.next_number ? m->seg.next_number : 1;
  SEG_Init(&m->seg, &sc, next);
}

MON_Monitor *MON_Create(const CNF_Config *cfg, const MON_Options *opt, const MON_Sink *sink, char *err,
                        size_t errlen)
{
  MON_Monitor *m = calloc(1, sizeof *m);
  if (!m) {
    snprintf(err, errlen, "out of memory");
    return NULL;
  }
  m->cfg = *cfg;
  /* The copy's pointers must point into the copy. */
  m->cfg.job = &m->cfg.jobs[cfg->job - cfg->jobs];
  m->cfg.wheel = &m->cfg.wheels[cfg->wheel - cfg->wheels];
  m->opt = *opt;
  snprintf(m->data_dir, sizeof m->data_dir, "%s", opt->data_dir ? opt->data_dir : cfg->data_dir);
  if (sink)
    m->sink = *sink;
  setup_seg(m);
  stale_init(m);
  m->fail_since = NAN;
  m->last_time = NAN;
  m->cycle = 1;
  m->status.last_sample_time = NAN;
  LGF_Init(&m->samples);
  LGF_Init(&m->passes);
  LGF_Init(&m->events);
  LGF_Init(&m->cycles);
  return m;
}

void MON_Reconfigure(MON_Monitor *m, const CNF_Config *cfg)
{
  m->cfg = *cfg;
  m->cfg.job = &m->cfg.jobs[cfg->job - cfg->jobs];
  m->cfg.wheel = &m->cfg.wheels[cfg->wheel - cfg->wheels];
  /* The open pass keeps its settings; new ones apply from the next sample on. */
  SEG_Config sc;
  CNF_SegConfig(&m->cfg, &sc);
  m->seg.cfg = sc;
  stale_init(m);
}

int MON_Feed(MON_Monitor *m, const SMP_Sample *in)
{
  if (isnan(in->time))
    return 0;
  ensure_shift(m, in->time);
  SMP_Sample s = *in;
  int rc = 0;
  if (m->opt.record) {
    /* What gets analysed is exactly what a replay will read back. */
    long n = REC_FormatSample(in, m->line, sizeof m->line);
    if (n > 0) {
      int col;
      REC_ParseSample(m->line, (size_t)n - 1, &s, &col);
      if (write_line(m, &m->samples, m->line, n) != 0)
        rc = -1;
    }
  }
  int failed = SMP_IsEmpty(&s);
  m->status.samples++;
  if (failed)
    m->status.failed_polls++;
  m->last_time = s.time;
  m->status.last_sample_time = s.time;
  check_comm(m, &s, failed);
  check_stale(m, &s);
  SEG_Pass p;
  if (SEG_Feed(&m->seg, &s, &p))
    take_pass(m, &p);
  m->status.comm_lost = m->comm_lost;
  m->status.in_pass = SEG_InPass(&m->seg);
  m->status.baseline_w = SEG_Baseline(&m->seg);
  return rc;
}

int MON_Mark(MON_Monitor *m, double time, const char *kind, const char *text)
{
  double t = time >= 0.0 ? time : m->last_time;
  if (isnan(t))
    return -1;
  ensure_shift(m, t);
  if (m->opt.record) {
    long n = REC_FormatMark(t, kind, text, m->line, sizeof m->line);
    write_line(m, &m->samples, m->line, n);
  }
  if (strcmp(kind, "start") == 0) {
    /* A fresh daemon: the segmentation starts afresh, as it did live. */
    setup_seg(m);
    m->comm_lost = 0;
    m->fail_run = 0;
    m->fail_since = NAN;
    note(m, t, "monitoring", PLG_INFO, PLG_NOTE, 0, "monitoring started%s%s", text && *text ? ": " : "",
         text ? text : "");
  } else if (strcmp(kind, "stop") == 0) {
    SEG_Pass p;
    if (SEG_Finish(&m->seg, &p))
      take_pass(m, &p);
    note(m, t, "monitoring", PLG_INFO, PLG_NOTE, 0, "monitoring stopped%s%s", text && *text ? ": " : "",
         text ? text : "");
  } else if (strcmp(kind, "config") == 0) {
    int refused = text && strncmp(text, "refused", 7) == 0;
    note(m, t, "config", refused ? PLG_WARNING : PLG_INFO, PLG_NOTE, 0, "configuration %s", text ? text : "");
  } else if (strcmp(kind, "dress") == 0) {
    m->cycle++;
    m->passes_since_dress = 0;
    m->volume_since_dress = 0.0;
    note(m, t, "dress", PLG_INFO, PLG_NOTE, 0, "dress marked%s%s", text && *text ? " by " : "", text ? text : "");
  } else {
    return -1;
  }
  return 0;
}

void MON_Destroy(MON_Monitor *m)
{
  if (!m)
    return;
  close_files(m);
  free(m);
}

void MON_GetStatus(const MON_Monitor *m, MON_Status *out) { *out = m->status; }
const char *MON_ShiftDir(const MON_Monitor *m) { return m->have_shift ? m->dir : ""; }
