/* summary.c: reads shift folders and computes their headline figures; writes summary.json. */
#include "summary.h"

#include "textbuf.h"

#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "grind.h"
#include "passlog.h"
#include "segment.h"

const char *const SUM_FILE_NAMES[SUM_FILE_KINDS] = {"passes.csv", "events.csv", "dress_cycles.csv"};
const char *const SUM_SOURCE_KEYS[SUM_FILE_KINDS] = {"passes_csv", "events_csv", "dress_cycles_csv"};

#define MAX_FIELDS 64

/* ---------------------------------------------------------------- CSV reading */

/* A CSV file read line by line, its columns looked up by header name so that a
 * later format with added columns still reads. */
typedef struct csv_in {
  FILE *f;
  const char *path;
  long line;              /* 1-based number of the line in buf */
  char *buf;
  size_t cap;
  int n_header;           /* fields of the header row */
  char *field[MAX_FIELDS + 1];
  long long good_bytes;   /* bytes up to the end of the last complete line */
  char *names;            /* copy of the header row (field names point into it) */
  char *name[MAX_FIELDS + 1];
} csv_in;

__attribute__((format(printf, 3, 4))) static int fail(char *err, size_t errlen, const char *fmt, ...)
{
  if (err && errlen) {
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(err, errlen, fmt, ap);
    va_end(ap);
  }
  return -1;
}

/* Next complete line into c->buf without its end; 1, 0 at the end (a last line
 * without '\n' is being written or was torn by a crash: it is left out), -1 on
 * a read error. */
static int next_line(csv_in *c)
{
  errno = 0;
  ssize_t n = getline(&c->buf, &c->cap, c->f);
  if (n < 0)
    return ferror(c->f) ? -1 : 0;
  if (c->buf[n - 1] != '\n')
    return 0;
  c->good_bytes += n;
  c->line++;
  c->buf[--n] = '\0';
  if (n > 0 && c->buf[n - 1] == '\r') /* saved back by a spreadsheet */
    c->buf[--n] = '\0';
  return 1;
}

static void csv_close(csv_in *c)
{
  if (c->f)
    fclose(c->f);
  free(c->buf);
  free(c->names);
  memset(c, 0, sizeof *c);
}

/* Opens path and reads its header. Returns 1, 0 when the file does not exist,
 * -1 with a message. An empty file (just created) has no header: n_header 0. */
static int csv_open(csv_in *c, const char *path, char *err, size_t errlen)
{
  memset(c, 0, sizeof *c);
  c->path = path;
  c->f = fopen(path, "r");
  if (!c->f) {
    if (errno == ENOENT)
      return 0;
    return fail(err, errlen, "%s: %s", path, strerror(errno));
  }
  int got = next_line(c);
  if (got < 0) {
    int e = errno;
    csv_close(c);
    return fail(err, errlen, "%s: %s", path, strerror(e));
  }
  if (got == 0)
    return 1;
  char *h = c->buf;
  if ((unsigned char)h[0] == 0xEF && (unsigned char)h[1] == 0xBB && (unsigned char)h[2] == 0xBF)
    h += 3;
  c->names = strdup(h);
  if (!c->names) {
    csv_close(c);
    return fail(err, errlen, "%s: out of memory", path);
  }
  int n = PLG_SplitCsv(c->names, c->name, MAX_FIELDS + 1);
  if (n <= 0 || n > MAX_FIELDS) {
    csv_close(c);
    return fail(err, errlen, "%s:1: not a header row of gritline's logs", path);
  }
  c->n_header = n;
  return 1;
}

/* Index of column name, or -1 with a message. */
static int column(const csv_in *c, const char *name, char *err, size_t errlen)
{
  for (int i = 0; i < c->n_header; i++)
    if (strcmp(c->name[i], name) == 0)
      return i;
  return fail(err, errlen, "%s:1: no column \"%s\" in the header", c->path, name);
}

/* Next row split into c->field. 1, 0 at the end, -1 with a message. Blank lines are passed over. */
static int csv_row(csv_in *c, char *err, size_t errlen)
{
  for (;;) {
    int got = next_line(c);
    if (got < 0)
      return fail(err, errlen, "%s:%ld: %s", c->path, c->line + 1, strerror(errno));
    if (got == 0)
      return 0;
    if (c->buf[0] == '\0')
      continue;
    int n = PLG_SplitCsv(c->buf, c->field, MAX_FIELDS + 1);
    if (n < 0)
      return fail(err, errlen, "%s:%ld: a quoted field is not closed", c->path, c->line);
    if (n != c->n_header)
      return fail(err, errlen, "%s:%ld: %d fields, the header has %d", c->path, c->line, n, c->n_header);
    return 1;
  }
}

/* A number field: empty is NAN; anything else must be a finite number. */
static int num(const csv_in *c, int col, double *out, char *err, size_t errlen)
{
  const char *t = c->field[col];
  if (*t == '\0') {
    *out = NAN;
    return 0;
  }
  char *end;
  errno = 0;
  double v = strtod(t, &end);
  if (*end != '\0' || end == t || !isfinite(v))
    return fail(err, errlen, "%s:%ld: column \"%s\": not a number: \"%.40s\"", c->path, c->line, c->name[col], t);
  *out = v;
  return 0;
}

/* A count field: empty is 0. */
static int count(const csv_in *c, int col, unsigned long *out, char *err, size_t errlen)
{
  const char *t = c->field[col];
  if (*t == '\0') {
    *out = 0;
    return 0;
  }
  char *end;
  errno = 0;
  unsigned long v = strtoul(t, &end, 10);
  if (*end != '\0' || *t == '-' || *t == '+' || errno)
    return fail(err, errlen, "%s:%ld: column \"%s\": not a whole number: \"%.40s\"", c->path, c->line,
                c->name[col], t);
  *out = v;
  return 0;
}

static void text(const csv_in *c, int col, char *out, size_t size) { snprintf(out, size, "%s", c->field[col]); }

/* Flags joined with '|'; names this version does not know are passed over. */
static unsigned parse_flags(const char *t)
{
  unsigned flags = 0;
  while (*t) {
    const char *end = strchr(t, '|');
    size_t len = end ? (size_t)(end - t) : strlen(t);
    for (unsigned i = 0; i < SEG_FLAG_COUNT; i++)
      if (strlen(SEG_FlagName(i)) == len && strncmp(t, SEG_FlagName(i), len) == 0)
        flags |= 1u << i;
    t += len + (end ? 1 : 0);
  }
  return flags;
}

/* ---------------------------------------------------------------- growing arrays */

static int grow(void **p, size_t *cap, size_t need, size_t elem)
{
  if (need <= *cap)
    return 0;
  size_t n = *cap ? *cap * 2 : 64;
  while (n < need)
    n *= 2;
  void *q = realloc(*p, n * elem);
  if (!q)
    return -1;
  *p = q;
  *cap = n;
  return 0;
}

void SUM_InitData(SUM_Data *d) { memset(d, 0, sizeof *d); }

void SUM_FreeData(SUM_Data *d)
{
  for (size_t i = 0; i < d->n_events; i++)
    free(d->events[i].message);
  free(d->events);
  free(d->passes);
  free(d->cycles);
  free(d->folders);
  memset(d, 0, sizeof *d);
}

/* ---------------------------------------------------------------- the three files */

static const char *const pass_cols[] = {
    "pass", "start_time", "end_time", "dress_cycle", "passes_since_dress", "depth_of_cut_mm",
    "work_speed_mm_min", "wheel_speed_m_s", "equivalent_diameter_mm", "specific_removal_rate_mm2_s",
    "removal_rate_mm3_s", "aggressiveness", "net_power_mean_w", "net_power_peak_w", "energy_j", "volume_mm3",
    "specific_energy_j_mm3", "burn_threshold_j_mm3", "burn_ratio", "reference_specific_energy_j_mm3",
    "dull_ratio", "dull_ratio_smoothed", "volume_since_dress_mm3_mm", "flags",
};
#define PASS_COLS (sizeof pass_cols / sizeof pass_cols[0])

static int read_passes(SUM_Data *d, csv_in *c, int folder, char *err, size_t errlen)
{
  int col[PASS_COLS];
  for (size_t i = 0; i < PASS_COLS; i++)
    if ((col[i] = column(c, pass_cols[i], err, errlen)) < 0)
      return -1;
  int got;
  while ((got = csv_row(c, err, errlen)) == 1) {
    if (grow((void **)&d->passes, &d->cap_passes, d->n_passes + 1, sizeof *d->passes) != 0)
      return fail(err, errlen, "%s: out of memory", c->path);
    SUM_Pass *p = &d->passes[d->n_passes];
    memset(p, 0, sizeof *p);
    p->folder = folder;
    double *nums[] = {&p->start_time, &p->end_time, NULL, NULL, &p->depth_mm, &p->work_speed_mm_min,
                      &p->wheel_speed_m_s, &p->de_mm, &p->q_prime_mm2_s, &p->q_mm3_s, &p->aggr, &p->net_mean_w,
                      &p->net_peak_w, &p->energy_j, &p->volume_mm3, &p->u_j_mm3, &p->u_star_j_mm3,
                      &p->burn_ratio, &p->u_ref_j_mm3, &p->dull_ratio, &p->dull_smoothed, &p->v_prime_mm3_mm};
    if (count(c, col[0], &p->number, err, errlen) != 0 || count(c, col[3], &p->cycle, err, errlen) != 0 ||
        count(c, col[4], &p->in_cycle, err, errlen) != 0)
      return -1;
    for (size_t i = 1; i < PASS_COLS - 1; i++)
      if (nums[i - 1] && num(c, col[i], nums[i - 1], err, errlen) != 0)
        return -1;
    p->flags = parse_flags(c->field[col[PASS_COLS - 1]]);
    d->n_passes++;
  }
  return got;
}

static int read_events(SUM_Data *d, csv_in *c, int folder, char *err, size_t errlen)
{
  static const char *const cols[] = {"time", "kind", "severity", "state", "pass", "value", "limit", "message"};
  int col[8];
  for (int i = 0; i < 8; i++)
    if ((col[i] = column(c, cols[i], err, errlen)) < 0)
      return -1;
  int got;
  while ((got = csv_row(c, err, errlen)) == 1) {
    if (grow((void **)&d->events, &d->cap_events, d->n_events + 1, sizeof *d->events) != 0)
      return fail(err, errlen, "%s: out of memory", c->path);
    SUM_Event *e = &d->events[d->n_events];
    memset(e, 0, sizeof *e);
    e->folder = folder;
    if (num(c, col[0], &e->time, err, errlen) != 0 || count(c, col[4], &e->pass, err, errlen) != 0 ||
        num(c, col[5], &e->value, err, errlen) != 0 || num(c, col[6], &e->limit, err, errlen) != 0)
      return -1;
    text(c, col[1], e->kind, sizeof e->kind);
    text(c, col[2], e->severity, sizeof e->severity);
    text(c, col[3], e->state, sizeof e->state);
    e->message = strdup(c->field[col[7]]);
    if (!e->message)
      return fail(err, errlen, "%s: out of memory", c->path);
    d->n_events++;
  }
  return got;
}

static int read_cycles(SUM_Data *d, csv_in *c, int folder, char *err, size_t errlen)
{
  static const char *const cols[] = {
      "cycle", "wheel", "job", "start_time", "end_time", "passes", "volume_mm3_mm", "volume_mm3",
      "reference_specific_energy_j_mm3", "final_dull_ratio", "g_ratio", "started_by", "ended_by",
      "forecast_pass", "forecast_volume_mm3_mm", "forecast_right", "limit_pass", "limit_volume_mm3_mm"};
  int col[18];
  for (int i = 0; i < 18; i++)
    if ((col[i] = column(c, cols[i], err, errlen)) < 0)
      return -1;
  int got;
  while ((got = csv_row(c, err, errlen)) == 1) {
    SUM_Cycle y;
    memset(&y, 0, sizeof y);
    y.folder = folder;
    if (count(c, col[0], &y.cycle, err, errlen) != 0 || num(c, col[3], &y.start_time, err, errlen) != 0 ||
        num(c, col[4], &y.end_time, err, errlen) != 0 || count(c, col[5], &y.passes, err, errlen) != 0 ||
        num(c, col[6], &y.v_prime_mm3_mm, err, errlen) != 0 || num(c, col[7], &y.volume_mm3, err, errlen) != 0 ||
        num(c, col[8], &y.u_ref_j_mm3, err, errlen) != 0 || num(c, col[9], &y.final_ratio, err, errlen) != 0 ||
        num(c, col[10], &y.g_ratio, err, errlen) != 0 || count(c, col[13], &y.forecast_pass, err, errlen) != 0 ||
        num(c, col[14], &y.forecast_v_prime_mm3_mm, err, errlen) != 0 ||
        count(c, col[16], &y.limit_pass, err, errlen) != 0 ||
        num(c, col[17], &y.limit_v_prime_mm3_mm, err, errlen) != 0)
      return -1;
    text(c, col[1], y.wheel, sizeof y.wheel);
    text(c, col[2], y.job, sizeof y.job);
    text(c, col[11], y.started_by, sizeof y.started_by);
    text(c, col[12], y.ended_by, sizeof y.ended_by);
    const char *fr = c->field[col[15]];
    y.forecast_right = strcmp(fr, "yes") == 0 ? 1 : strcmp(fr, "no") == 0 ? 0 : -1;
    /* Within a folder a cycle written open at a stop and again when it closed is kept once. */
    SUM_Cycle *same = NULL;
    for (size_t i = d->n_cycles; i-- > 0 && d->cycles[i].folder == folder;)
      if (d->cycles[i].cycle == y.cycle && fabs(d->cycles[i].start_time - y.start_time) < 0.0005) {
        same = &d->cycles[i];
        break;
      }
    if (same) {
      *same = y;
      continue;
    }
    if (grow((void **)&d->cycles, &d->cap_cycles, d->n_cycles + 1, sizeof *d->cycles) != 0)
      return fail(err, errlen, "%s: out of memory", c->path);
    d->cycles[d->n_cycles++] = y;
  }
  return got;
}

int SUM_SniffFile(const char *path)
{
  csv_in c;
  char err[8];
  if (csv_open(&c, path, err, sizeof err) != 1)
    return -1;
  int kind = -1;
  if (c.n_header > 0) {
    if (strcmp(c.name[0], "pass") == 0)
      kind = SUM_PASSES;
    else if (strcmp(c.name[0], "time") == 0 && c.n_header > 1 && strcmp(c.name[1], "kind") == 0)
      kind = SUM_EVENTS;
    else if (strcmp(c.name[0], "cycle") == 0)
      kind = SUM_CYCLES;
  }
  csv_close(&c);
  return kind;
}

static const char *base_name(const char *path, char *buf, size_t size)
{
  size_t n = strlen(path);
  while (n > 1 && path[n - 1] == '/')
    n--;
  size_t s = n;
  while (s > 0 && path[s - 1] != '/')
    s--;
  snprintf(buf, size, "%.*s", (int)(n - s), path + s);
  return buf;
}

/* The folder above dir's last component, for the machine name. */
static void parent_name(const char *dir, char *buf, size_t size)
{
  char tmp[1024];
  snprintf(tmp, sizeof tmp, "%s", dir);
  size_t n = strlen(tmp);
  while (n > 1 && tmp[n - 1] == '/')
    tmp[--n] = '\0';
  char *slash = strrchr(tmp, '/');
  if (!slash) {
    char cwd[1024];
    if (getcwd(cwd, sizeof cwd))
      base_name(cwd, buf, size);
    else
      snprintf(buf, size, "%s", "");
    return;
  }
  *slash = '\0';
  if (tmp[0] == '\0')
    snprintf(buf, size, "%s", "");
  else
    base_name(tmp, buf, size);
}

int SUM_ReadFiles(SUM_Data *d, const char *const files[SUM_FILE_KINDS], const char *label, const char *machine,
                  int *not_found, char *err, size_t errlen)
{
  if (not_found)
    *not_found = 0;
  if (grow((void **)&d->folders, &d->cap_folders, (size_t)d->n_folders + 1, sizeof *d->folders) != 0)
    return fail(err, errlen, "out of memory");
  int folder = d->n_folders;
  SUM_Folder *fo = &d->folders[folder];
  memset(fo, 0, sizeof *fo);
  snprintf(fo->path, sizeof fo->path, "%s", files[SUM_PASSES] ? files[SUM_PASSES] : "");
  snprintf(fo->label, sizeof fo->label, "%s", label ? label : "");
  snprintf(fo->machine, sizeof fo->machine, "%s", machine ? machine : "");
  for (int k = 0; k < SUM_FILE_KINDS; k++) {
    fo->bytes[k] = -1;
    if (!files[k]) {
      if (k == SUM_PASSES) {
        if (not_found)
          *not_found = 1;
        return fail(err, errlen, "no passes.csv given");
      }
      continue;
    }
    csv_in c;
    int rc = csv_open(&c, files[k], err, errlen);
    if (rc == 0 && k != SUM_PASSES)
      continue; /* gone since it was listed: as if absent */
    if (rc <= 0) {
      if (rc == 0)
        fail(err, errlen, "%s: no such file", files[k]);
      if (not_found)
        *not_found = 1;
      return -1;
    }
    if (c.n_header > 0) {
      rc = k == SUM_PASSES ? read_passes(d, &c, folder, err, errlen)
           : k == SUM_EVENTS ? read_events(d, &c, folder, err, errlen)
                             : read_cycles(d, &c, folder, err, errlen);
      if (rc < 0) {
        csv_close(&c);
        return -1;
      }
    }
    fo->bytes[k] = c.good_bytes;
    csv_close(&c);
  }
  d->n_folders++;
  return 0;
}

int SUM_ReadFolder(SUM_Data *d, const char *dir, int *not_found, char *err, size_t errlen)
{
  char path[SUM_FILE_KINDS][1100];
  const char *files[SUM_FILE_KINDS];
  for (int k = 0; k < SUM_FILE_KINDS; k++) {
    snprintf(path[k], sizeof path[k], "%s/%s", dir, SUM_FILE_NAMES[k]);
    files[k] = path[k];
    if (k != SUM_PASSES && access(path[k], F_OK) != 0)
      files[k] = NULL; /* no event or no closed cycle yet */
  }
  char label[SUM_LABEL], machine[SUM_NAME];
  base_name(dir, label, sizeof label);
  parent_name(dir, machine, sizeof machine);
  if (access(path[SUM_PASSES], F_OK) != 0) {
    if (not_found)
      *not_found = 1;
    return fail(err, errlen, "%s: not a shift folder (no passes.csv)", dir);
  }
  int rc = SUM_ReadFiles(d, files, label, machine, not_found, err, errlen);
  if (rc == 0)
    snprintf(d->folders[d->n_folders - 1].path, sizeof d->folders[0].path, "%s", dir);
  return rc;
}

/* ---------------------------------------------------------------- figures */

static int by_value(const void *a, const void *b)
{
  double x = *(const double *)a, y = *(const double *)b;
  return (x > y) - (x < y);
}

double SUM_Median(double *x, size_t n)
{
  if (n == 0)
    return NAN;
  qsort(x, n, sizeof *x, by_value);
  return n % 2 ? x[n / 2] : 0.5 * (x[n / 2 - 1] + x[n / 2]);
}

static double mean(const double *x, size_t n)
{
  if (n == 0)
    return NAN;
  double s = 0.0;
  for (size_t i = 0; i < n; i++)
    s += x[i];
  return s / (double)n;
}

int SUM_CycleRepeatedLater(const SUM_Data *d, size_t i)
{
  for (size_t k = i + 1; k < d->n_cycles; k++)
    if (d->cycles[k].cycle == d->cycles[i].cycle && fabs(d->cycles[k].start_time - d->cycles[i].start_time) < 0.0005)
      return 1;
  return 0;
}

/* "... job JOB, wheel WHEEL ..." in a monitoring or config note. */
static void names_from_message(const char *msg, char *job, char *wheel)
{
  const char *p = strstr(msg, "job ");
  const char *q = strstr(msg, "wheel ");
  if (p && (p == msg || p[-1] == ' '))
    sscanf(p + 4, "%47[A-Za-z0-9_-]", job);
  if (q && (q == msg || q[-1] == ' '))
    sscanf(q + 6, "%47[A-Za-z0-9_-]", wheel);
}

static void count_kind(SUM_Summary *s, const char *kind)
{
  for (int i = 0; i < s->n_kinds; i++)
    if (strcmp(s->kinds[i].kind, kind) == 0) {
      s->kinds[i].raised++;
      return;
    }
  if (s->n_kinds == SUM_KINDS_MAX)
    return;
  snprintf(s->kinds[s->n_kinds].kind, sizeof s->kinds[0].kind, "%s", kind);
  s->kinds[s->n_kinds++].raised = 1;
}

int SUM_FromData(const SUM_Data *d, int folder, const SUM_Window *w, SUM_Summary *s, char *err, size_t errlen)
{
  memset(s, 0, sizeof *s);
  s->window = *w;
  s->centre_aggr = 0.5 * (w->aggr_low + w->aggr_high);
  s->first_time = s->last_time = NAN;
  s->burn_ratio_max = s->net_peak_max_w = NAN;
  for (int k = 0; k < 3; k++)
    s->bytes[k] = -1;
  if (folder >= 0 && folder < d->n_folders) {
    const SUM_Folder *fo = &d->folders[folder];
    snprintf(s->label, sizeof s->label, "%s", fo->label);
    snprintf(s->machine, sizeof s->machine, "%s", fo->machine);
    for (int k = 0; k < 3; k++)
      s->bytes[k] = fo->bytes[k];
    s->folders = 1;
  } else if (d->n_folders > 0) {
    if (d->n_folders == 1)
      snprintf(s->label, sizeof s->label, "%s", d->folders[0].label);
    else
      snprintf(s->label, sizeof s->label, "%.29s to %.29s", d->folders[0].label,
               d->folders[d->n_folders - 1].label);
    snprintf(s->machine, sizeof s->machine, "%s", d->folders[0].machine);
    s->folders = d->n_folders;
  }

  size_t n = d->n_passes ? d->n_passes : 1;
  double *aggr = malloc(n * sizeof *aggr), *u = malloc(n * sizeof *u), *vw = malloc(n * sizeof *vw);
  double *centre = malloc(n * sizeof *centre), *depth = malloc(n * sizeof *depth);
  if (!aggr || !u || !vw || !centre || !depth) {
    free(aggr), free(u), free(vw), free(centre), free(depth);
    return fail(err, errlen, "out of memory");
  }
  size_t na = 0, nu = 0, nv = 0, nc = 0;
  for (size_t i = 0; i < d->n_passes; i++) {
    const SUM_Pass *p = &d->passes[i];
    if (folder >= 0 && p->folder != folder)
      continue;
    s->passes++;
    if (isnan(s->first_time) || p->start_time < s->first_time)
      s->first_time = p->start_time;
    if (isnan(s->last_time) || p->end_time > s->last_time)
      s->last_time = p->end_time;
    if (isfinite(p->depth_mm))
      s->depth_known++;
    int spark = (p->flags & SEG_F_SPARK_OUT) != 0;
    if (spark)
      s->spark_out++;
    if (!spark && isfinite(p->aggr) && p->aggr > 0.0) {
      aggr[na++] = p->aggr;
      if (p->aggr < w->aggr_low)
        s->below_window++;
      else if (p->aggr > w->aggr_high)
        s->above_window++;
      else
        s->in_window++;
    }
    if (isfinite(p->volume_mm3)) {
      s->volume_mm3 += p->volume_mm3;
      if (isfinite(p->q_mm3_s) && isfinite(p->q_prime_mm2_s) && p->q_mm3_s > 0.0)
        s->volume_mm3_mm += p->volume_mm3 * p->q_prime_mm2_s / p->q_mm3_s;
    }
    if (isfinite(p->energy_j))
      s->energy_j += p->energy_j;
    if (isfinite(p->u_j_mm3))
      u[nu++] = p->u_j_mm3;
    if (isfinite(p->burn_ratio) && !(p->burn_ratio <= s->burn_ratio_max))
      s->burn_ratio_max = p->burn_ratio;
    if (isfinite(p->net_peak_w) && !(p->net_peak_w <= s->net_peak_max_w))
      s->net_peak_max_w = p->net_peak_w;
    if (isfinite(p->depth_mm) && p->depth_mm > 0.0 && isfinite(p->work_speed_mm_min)) {
      vw[nv++] = p->work_speed_mm_min;
      if (isfinite(p->wheel_speed_m_s) && p->wheel_speed_m_s > 0.0 && isfinite(p->de_mm) && p->de_mm > 0.0) {
        /* The inverse of the aggressiveness number, as `gritline calc --target-aggr` solves it. */
        centre[nc] = 60.0 * GRD_WorkSpeedForAggressiveness(s->centre_aggr, p->wheel_speed_m_s, p->depth_mm, p->de_mm);
        depth[nc++] = p->depth_mm;
      }
    }
  }
  s->aggr_passes = na;
  s->window_share = na ? (double)s->in_window / (double)na : NAN;
  s->aggr_mean = mean(aggr, na);
  s->aggr_median = SUM_Median(aggr, na);
  s->u_passes = nu;
  s->u_mean = mean(u, nu);
  s->u_median = SUM_Median(u, nu);
  s->work_speed_median_mm_min = SUM_Median(vw, nv);
  s->centre_passes = nc;
  s->centre_work_speed_mm_min = SUM_Median(centre, nc);
  s->depth_median_mm = SUM_Median(depth, nc);
  free(aggr), free(u), free(vw), free(centre), free(depth);

  char job[SUM_NAME] = "", wheel[SUM_NAME] = "";
  for (size_t i = 0; i < d->n_events; i++) {
    const SUM_Event *e = &d->events[i];
    if (folder >= 0 && e->folder != folder)
      continue;
    if (strcmp(e->kind, "dress") == 0)
      s->dresses++;
    if (strcmp(e->state, "raised") == 0) {
      s->alerts_raised++;
      count_kind(s, e->kind);
    }
    if (strcmp(e->kind, "monitoring") == 0 || strcmp(e->kind, "config") == 0)
      names_from_message(e->message, job, wheel);
  }

  double *lim = malloc((d->n_cycles ? d->n_cycles : 1) * sizeof *lim);
  if (!lim)
    return fail(err, errlen, "out of memory");
  size_t nl = 0;
  s->limit_v_prime_min = s->limit_v_prime_max = NAN;
  char cjob[SUM_NAME] = "", cwheel[SUM_NAME] = "";
  for (size_t i = 0; i < d->n_cycles; i++) {
    const SUM_Cycle *y = &d->cycles[i];
    if (folder >= 0 ? y->folder != folder : SUM_CycleRepeatedLater(d, i))
      continue;
    s->cycles++;
    if (strcmp(y->ended_by, "end") != 0)
      s->closed_cycles++;
    if (isfinite(y->limit_v_prime_mm3_mm)) {
      lim[nl++] = y->limit_v_prime_mm3_mm;
      if (!(y->limit_v_prime_mm3_mm >= s->limit_v_prime_min))
        s->limit_v_prime_min = y->limit_v_prime_mm3_mm;
      if (!(y->limit_v_prime_mm3_mm <= s->limit_v_prime_max))
        s->limit_v_prime_max = y->limit_v_prime_mm3_mm;
    }
    if (y->forecast_right >= 0) {
      s->forecasts_judged++;
      s->forecasts_right += (unsigned long)y->forecast_right;
    }
    snprintf(cjob, sizeof cjob, "%s", y->job);
    snprintf(cwheel, sizeof cwheel, "%s", y->wheel);
  }
  s->limit_cycles = nl;
  s->limit_v_prime_median = SUM_Median(lim, nl);
  free(lim);
  /* The notes name the job and wheel in use; a cycle row is the fallback. */
  snprintf(s->job, sizeof s->job, "%s", *job ? job : cjob);
  snprintf(s->wheel, sizeof s->wheel, "%s", *wheel ? wheel : cwheel);
  return 0;
}

int SUM_Compute(const char *dir, const SUM_Window *w, SUM_Summary *s, int *not_found, char *err, size_t errlen)
{
  SUM_Data d;
  SUM_InitData(&d);
  int rc = SUM_ReadFolder(&d, dir, not_found, err, errlen);
  if (rc == 0)
    rc = SUM_FromData(&d, 0, w, s, err, errlen);
  SUM_FreeData(&d);
  return rc;
}

/* ---------------------------------------------------------------- JSON */

void SUM_JsonNumber(FILE *f, double v)
{
  if (!isfinite(v)) {
    fputs("null", f);
    return;
  }
  char buf[40];
  for (int digits = 15; digits <= 17; digits++) { /* the shortest that reads back the same */
    snprintf(buf, sizeof buf, "%.*g", digits, v);
    if (strtod(buf, NULL) == v)
      break;
  }
  fputs(buf, f);
}

static void json_number(FILE *f, double v) { SUM_JsonNumber(f, v); }

typedef struct jw {
  FILE *f;
  int indent;
  int first;
} jw;

static void key(jw *j, const char *k)
{
  fprintf(j->f, "%s\n%*s", j->first ? "" : ",", j->indent, "");
  j->first = 0;
  TXB_FileJsonString(j->f, k);
  fputs(": ", j->f);
}
static void kn(jw *j, const char *k, double v) { key(j, k), json_number(j->f, v); }
static void ku(jw *j, const char *k, unsigned long v) { key(j, k), fprintf(j->f, "%lu", v); }
static void ks(jw *j, const char *k, const char *v) { key(j, k), TXB_FileJsonString(j->f, v); }

void SUM_WriteJson(FILE *f, const SUM_Summary *s, const SUM_Data *d, int folder, int indent)
{
  jw j = {f, indent + 2, 1};
  fputc('{', f);
  ks(&j, "format", SUM_FORMAT);
  ks(&j, "label", s->label);
  ks(&j, "machine", s->machine);
  ks(&j, "wheel", s->wheel);
  ks(&j, "job", s->job);
  ku(&j, "folders", (unsigned long)s->folders);
  kn(&j, "aggr_low", s->window.aggr_low);
  kn(&j, "aggr_high", s->window.aggr_high);
  kn(&j, "first_pass_start", s->first_time);
  kn(&j, "last_pass_end", s->last_time);
  ku(&j, "passes", s->passes);
  ku(&j, "passes_depth_known", s->depth_known);
  ku(&j, "spark_out_passes", s->spark_out);
  ku(&j, "aggr_passes", s->aggr_passes);
  ku(&j, "in_window_passes", s->in_window);
  ku(&j, "below_window_passes", s->below_window);
  ku(&j, "above_window_passes", s->above_window);
  kn(&j, "window_share", s->window_share);
  kn(&j, "volume_mm3", s->volume_mm3);
  kn(&j, "volume_mm3_mm", s->volume_mm3_mm);
  kn(&j, "energy_j", s->energy_j);
  kn(&j, "aggressiveness_mean", s->aggr_mean);
  kn(&j, "aggressiveness_median", s->aggr_median);
  ku(&j, "specific_energy_passes", s->u_passes);
  kn(&j, "specific_energy_mean_j_mm3", s->u_mean);
  kn(&j, "specific_energy_median_j_mm3", s->u_median);
  kn(&j, "burn_ratio_max", s->burn_ratio_max);
  kn(&j, "net_power_peak_max_w", s->net_peak_max_w);
  ku(&j, "dresses", s->dresses);
  ku(&j, "alerts_raised", s->alerts_raised);
  key(&j, "alerts_by_kind");
  fputc('[', f);
  for (int i = 0; i < s->n_kinds; i++) {
    fprintf(f, "%s{\"kind\": ", i ? ", " : "");
    TXB_FileJsonString(f, s->kinds[i].kind);
    fprintf(f, ", \"raised\": %lu}", s->kinds[i].raised);
  }
  fputc(']', f);
  ku(&j, "cycles", s->cycles);
  ku(&j, "closed_cycles", s->closed_cycles);
  ku(&j, "limit_cycles", s->limit_cycles);
  kn(&j, "limit_v_prime_median_mm3_mm", s->limit_v_prime_median);
  kn(&j, "limit_v_prime_min_mm3_mm", s->limit_v_prime_min);
  kn(&j, "limit_v_prime_max_mm3_mm", s->limit_v_prime_max);
  ku(&j, "forecasts_judged", s->forecasts_judged);
  ku(&j, "forecasts_right", s->forecasts_right);
  kn(&j, "work_speed_median_mm_min", s->work_speed_median_mm_min);
  kn(&j, "depth_median_mm", s->depth_median_mm);
  kn(&j, "window_centre", s->centre_aggr);
  ku(&j, "centre_passes", s->centre_passes);
  kn(&j, "centre_work_speed_mm_min", s->centre_work_speed_mm_min);
  key(&j, "sources");
  fputc('{', f);
  for (int k = 0; k < 3; k++) {
    fprintf(f, "%s\"%s\": ", k ? ", " : "", SUM_SOURCE_KEYS[k]);
    if (s->bytes[k] < 0)
      fputs("null", f);
    else
      fprintf(f, "%lld", s->bytes[k]);
  }
  fputc('}', f);
  if (d) {
    key(&j, "cycle_rows");
    fputc('[', f);
    int first = 1;
    for (size_t i = 0; i < d->n_cycles; i++) {
      const SUM_Cycle *y = &d->cycles[i];
      if (folder >= 0 ? y->folder != folder : SUM_CycleRepeatedLater(d, i))
        continue;
      fprintf(f, "%s\n%*s{\"cycle\": %lu, \"shift\": ", first ? "" : ",", j.indent + 2, "", y->cycle);
      first = 0;
      TXB_FileJsonString(f, y->folder >= 0 && y->folder < d->n_folders ? d->folders[y->folder].label : "");
      fputs(", \"wheel\": ", f);
      TXB_FileJsonString(f, y->wheel);
      fputs(", \"job\": ", f);
      TXB_FileJsonString(f, y->job);
      fputs(", \"start_time\": ", f), json_number(f, y->start_time);
      fputs(", \"end_time\": ", f), json_number(f, y->end_time);
      fprintf(f, ", \"passes\": %lu", y->passes);
      fputs(", \"volume_mm3_mm\": ", f), json_number(f, y->v_prime_mm3_mm);
      fputs(", \"reference_specific_energy_j_mm3\": ", f), json_number(f, y->u_ref_j_mm3);
      fputs(", \"final_dull_ratio\": ", f), json_number(f, y->final_ratio);
      fputs(", \"g_ratio\": ", f), json_number(f, y->g_ratio);
      fputs(", \"started_by\": ", f), TXB_FileJsonString(f, y->started_by);
      fputs(", \"ended_by\": ", f), TXB_FileJsonString(f, y->ended_by);
      fputs(", \"forecast_volume_mm3_mm\": ", f), json_number(f, y->forecast_v_prime_mm3_mm);
      fprintf(f, ", \"forecast_right\": %s", y->forecast_right < 0 ? "null" : y->forecast_right ? "true" : "false");
      fputs(", \"limit_volume_mm3_mm\": ", f), json_number(f, y->limit_v_prime_mm3_mm);
      fputc('}', f);
    }
    if (!first)
      fprintf(f, "\n%*s", j.indent, "");
    fputc(']', f);
  }
  fprintf(f, "\n%*s}", indent, "");
}

int SUM_WriteFolder(const char *dir, const SUM_Window *w, char *err, size_t errlen)
{
  SUM_Data d;
  SUM_Summary s;
  SUM_InitData(&d);
  if (SUM_ReadFolder(&d, dir, NULL, err, errlen) != 0 || SUM_FromData(&d, 0, w, &s, err, errlen) != 0) {
    SUM_FreeData(&d);
    return -1;
  }
  char tmp[1100], path[1100];
  snprintf(path, sizeof path, "%s/summary.json", dir);
  snprintf(tmp, sizeof tmp, "%s/.summary.json.XXXXXX", dir);
  int fd = mkstemp(tmp);
  if (fd < 0) {
    SUM_FreeData(&d);
    return fail(err, errlen, "%s: cannot create a temporary file: %s", dir, strerror(errno));
  }
  FILE *f = fdopen(fd, "w");
  if (!f) {
    int e = errno;
    close(fd);
    unlink(tmp);
    SUM_FreeData(&d);
    return fail(err, errlen, "%s: %s", tmp, strerror(e));
  }
  SUM_WriteJson(f, &s, &d, 0, 0);
  fputc('\n', f);
  SUM_FreeData(&d);
  int bad = fflush(f) != 0 || ferror(f);
  int e = errno;
  if (!bad && fsync(fileno(f)) != 0) {
    bad = 1;
    e = errno;
  }
  fchmod(fileno(f), 0644); /* mkstemp makes it 0600; the shop's other tools read it */
  if (fclose(f) != 0 && !bad) {
    bad = 1;
    e = errno;
  }
  if (bad || rename(tmp, path) != 0) {
    if (!bad)
      e = errno;
    unlink(tmp);
    return fail(err, errlen, "%s: %s", path, strerror(e));
  }
  return 0;
}
