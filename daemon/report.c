/* report.c: `gritline report`: shift reports from the logs as HTML with inline SVG charts, text or JSON. */
#include "report.h"

#include "textbuf.h"

#include <dirent.h>
#include <errno.h>
#include <getopt.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sysexits.h>
#include <time.h>
#include <unistd.h>

#include "conf.h"
#include "jsonget.h"
#include "segment.h"
#include "summary.h"
#include "svg.h"

#define MAX_ARGS 4096
#define MAX_TABLE_ALERTS 300 /* rows of the alert table; the rest are counted */
#define MAX_MARKS 400        /* markers on a chart */
#define CHART_W 1060
#define CHART_H 320

static const char usage_text[] =
    "usage: gritline report DIR|FILE... [--shift NAME] [--from DATE] [--to DATE]\n"
    "                       [--config FILE] [-o FILE] [--html | --text | --json]\n"
    "\n"
    "Reports one or more shifts from gritlined's logs (passes.csv, events.csv,\n"
    "dress_cycles.csv): headline figures, charts pass by pass, dress cycles, alerts,\n"
    "and advice on the dressing interval and the work speed.\n"
    "\n"
    "  DIR             a shift folder (<data_dir>/<machine>/<date>_<shift>), or a machine\n"
    "                  folder: every shift folder in it (narrowed by --shift, --from, --to)\n"
    "  FILE            passes.csv, events.csv or dress_cycles.csv (told apart by their\n"
    "                  header row); the files of one folder make one shift\n"
    "  --shift NAME    only shifts named NAME (night) or labelled NAME (2024-03-05_night)\n"
    "  --from DATE     only shifts that began on or after DATE (YYYY-MM-DD)\n"
    "  --to DATE       only shifts that began on or before DATE (YYYY-MM-DD)\n"
    "  --config FILE   gritlined's configuration, for the wheel's aggressiveness window,\n"
    "                  dull limit and burn margin (the wheel the logs name, else the\n"
    "                  active one). Without it: window 15-20, dull limit 1.3, burn margin\n"
    "                  0.8, and the report says so\n"
    "  -o FILE         (or --output FILE) write to FILE, atomically, instead of standard\n"
    "                  output: an HTML report, unless --text or --json is given\n"
    "  --html          a self-contained HTML page (inline SVG and CSS, printable)\n"
    "  --text          plain text for a terminal or an e-mail (the default without -o)\n"
    "  --json          the figures as one JSON object (keys in docs/report.md)\n"
    "  -h, --help      this text\n"
    "\n"
    "A shift folder's summary.json (written by gritlined at each change of shift) is\n"
    "used when it matches the logs and the window; otherwise the figures are computed.\n"
    "Times are shown in the local time zone (TZ).\n"
    "Exit status: 0 done, 64 usage, 65 malformed log (file:line), 66 no input,\n"
    "73 output cannot be written, 74 write error, 78 bad configuration.\n"
    "\n"
    "Caution: never exceed the wheel's marked maximum operating speed; the figures, advice\n"
    "and alerts are advisory; follow the machine builder's instructions, local codes and\n"
    "licensed practice.\n";

static const char caution_text[] =
    "Never exceed the wheel's marked maximum operating speed. The figures, advice and alerts in this "
    "report are advisory: they do not replace the machine's own guards. Follow the machine builder's "
    "instructions, local codes and licensed practice.";

typedef enum out_format { OUT_TEXT, OUT_HTML, OUT_JSON } out_format;

typedef struct args {
  const char *inputs[MAX_ARGS];
  int n_inputs;
  const char *shift, *from, *to, *config, *out;
  out_format format;
  int format_given;
} args;

/* One shift to read: a folder, or single files of one folder. */
typedef struct input {
  char dir[1024];                        /* the shift folder, or the files' folder */
  const char *files[SUM_FILE_KINDS];     /* single files; all NULL = the folder's */
  int files_mode;
  char label[SUM_LABEL];                 /* folder name */
  char machine[SUM_NAME];                /* name of the folder above */
  double start;                          /* s, first time in it (ordering), NAN = unknown */
} input;

/* The limits the figures are held against. */
typedef struct limits {
  double aggr_low, aggr_high;  /* aggressiveness window */
  double dull_limit;           /* dull ratio that asks for a dress */
  double burn_margin;          /* fraction of u* */
  int from_config;             /* 1: read from --config */
  char config[CNF_PATH];       /* that file */
  char wheel[CNF_NAME];        /* [wheel.NAME] used */
  int wheel_named_in_logs;     /* it is the wheel the logs name */
  char description[128];       /* [machine] description */
} limits;

/* A raised alert and where it cleared. */
typedef struct alert {
  size_t ev;          /* index of the raised event in the data */
  size_t cleared;     /* index of the event that cleared it, SIZE_MAX = still active */
} alert;

typedef struct report {
  args a;
  input *in;
  int n_in, cap_in;
  SUM_Data d;
  limits lim;
  SUM_Window win;
  SUM_Summary total;
  SUM_Summary *shift;          /* per folder */
  const char **shift_source;   /* "summary.json", or why computed */
  alert *alerts;
  size_t n_alerts;
  size_t *dresses;             /* indices of "dress" events */
  size_t n_dresses;
  int multi;                   /* several folders: charts on a time axis */
  double limit_pass_median;    /* median pass in the cycle at which the limit was reached */
} report;

/* ------------------------------------------------------------------ arguments */

static int usage(const char *fmt, const char *arg)
{
  fputs("gritline report: ", stderr);
  fprintf(stderr, fmt, arg);
  fputs(" (see gritline report --help)\n", stderr);
  return EX_USAGE;
}

static int valid_date(const char *t)
{
  int y, m, d;
  char end;
  return strlen(t) == 10 && sscanf(t, "%4d-%2d-%2d%c", &y, &m, &d, &end) == 3 && t[4] == '-' && t[7] == '-' &&
         m >= 1 && m <= 12 && d >= 1 && d <= 31;
}

static int parse_args(int argc, char **argv, args *a)
{
  enum { O_SHIFT = 1000, O_FROM, O_TO, O_CONFIG, O_HTML, O_TEXT, O_JSON };
  static const struct option opts[] = {
      {"shift", required_argument, NULL, O_SHIFT}, {"from", required_argument, NULL, O_FROM},
      {"to", required_argument, NULL, O_TO},       {"config", required_argument, NULL, O_CONFIG},
      {"output", required_argument, NULL, 'o'},    {"html", no_argument, NULL, O_HTML},
      {"text", no_argument, NULL, O_TEXT},         {"json", no_argument, NULL, O_JSON},
      {"help", no_argument, NULL, 'h'},            {NULL, 0, NULL, 0},
  };
  memset(a, 0, sizeof *a);
  optind = 1;
  opterr = 0;
  int c;
  while ((c = getopt_long(argc, argv, ":o:h", opts, NULL)) != -1) {
    out_format fmt = OUT_TEXT;
    switch (c) {
    case O_SHIFT:
      if (!*optarg || strchr(optarg, '/'))
        return usage("--shift: expected a shift name or label, not \"%s\"", optarg);
      a->shift = optarg;
      continue;
    case O_FROM:
    case O_TO:
      if (!valid_date(optarg))
        return usage(c == O_FROM ? "--from: expected a date YYYY-MM-DD, not \"%s\""
                                 : "--to: expected a date YYYY-MM-DD, not \"%s\"",
                     optarg);
      *(c == O_FROM ? &a->from : &a->to) = optarg;
      continue;
    case O_CONFIG: a->config = optarg; continue;
    case 'o':
      if (!*optarg)
        return usage("-o: empty file name%s", "");
      a->out = optarg;
      continue;
    case 'h': fputs(usage_text, stdout); return -1;
    case ':': return usage("%s: missing value", argv[optind - 1]);
    case O_HTML: fmt = OUT_HTML; break;
    case O_TEXT: fmt = OUT_TEXT; break;
    case O_JSON: fmt = OUT_JSON; break;
    default: return usage("unknown option \"%s\"", argv[optind - 1]);
    }
    if (a->format_given && a->format != fmt)
      return usage("give only one of --html, --text and --json%s", "");
    a->format = fmt;
    a->format_given = 1;
  }
  for (int i = optind; i < argc; i++) {
    if (a->n_inputs == MAX_ARGS)
      return usage("at most %s inputs at once", "4096");
    a->inputs[a->n_inputs++] = argv[i];
  }
  if (a->n_inputs == 0)
    return usage("no shift folder, machine folder or log file given%s", "");
  if (a->from && a->to && strcmp(a->from, a->to) > 0)
    return usage("--from %s is after --to", a->from);
  if (!a->format_given)
    a->format = a->out ? OUT_HTML : OUT_TEXT;
  return 0;
}

/* ------------------------------------------------------------------ inputs */

static void last_component(const char *path, char *buf, size_t size)
{
  size_t n = strlen(path);
  while (n > 1 && path[n - 1] == '/')
    n--;
  size_t s = n;
  while (s > 0 && path[s - 1] != '/')
    s--;
  snprintf(buf, size, "%.*s", (int)(n - s), path + s);
}

static void dir_of(const char *path, char *buf, size_t size)
{
  const char *slash = strrchr(path, '/');
  if (!slash)
    snprintf(buf, size, ".");
  else if (slash == path)
    snprintf(buf, size, "/");
  else
    snprintf(buf, size, "%.*s", (int)(slash - path), path);
}

static void machine_of(const char *dir, char *buf, size_t size)
{
  char abs[4096];
  if (!realpath(dir, abs))
    snprintf(abs, sizeof abs, "%s", dir);
  char parent[4096];
  dir_of(abs, parent, sizeof parent);
  last_component(parent, buf, size);
}

/* Whether a label begins "YYYY-MM-DD_". */
static int dated(const char *label)
{
  char date[11];
  if (strlen(label) < 12 || label[10] != '_')
    return 0;
  memcpy(date, label, 10);
  date[10] = '\0';
  return valid_date(date);
}

/* Whether a shift label passes --shift, --from and --to. */
static int wanted(const args *a, const char *label)
{
  int has_date = dated(label);
  if (a->shift && strcmp(label, a->shift) != 0 && !(has_date && strcmp(label + 11, a->shift) == 0))
    return 0;
  if ((a->from || a->to) && !has_date)
    return 0;
  if (a->from && strncmp(label, a->from, 10) < 0)
    return 0;
  if (a->to && strncmp(label, a->to, 10) > 0)
    return 0;
  return 1;
}

/* The first time in a folder or its files: the first event, else the first pass. */
static double probe_start(const input *in)
{
  char path[1100];
  double best = NAN;
  for (int k = SUM_EVENTS; k >= SUM_PASSES; k--) {
    const char *p = in->files[k];
    if (!in->files_mode) {
      snprintf(path, sizeof path, "%s/%s", in->dir, SUM_FILE_NAMES[k]);
      p = path;
    }
    FILE *f = p ? fopen(p, "r") : NULL;
    if (!f)
      continue;
    char line[512];
    if (fgets(line, sizeof line, f) && fgets(line, sizeof line, f)) {
      const char *t = line;
      if (k == SUM_PASSES) /* pass,start_time,... */
        t = strchr(line, ',') ? strchr(line, ',') + 1 : line;
      char *end;
      double v = strtod(t, &end);
      if (end != t && isfinite(v))
        best = v;
    }
    fclose(f);
    if (isfinite(best))
      break;
  }
  return best;
}

static int same_folder(const char *a, const char *b)
{
  char ra[4096], rb[4096];
  return realpath(a, ra) && realpath(b, rb) ? strcmp(ra, rb) == 0 : strcmp(a, b) == 0;
}

static int add_input(report *R, const input *in)
{
  for (int i = 0; i < R->n_in; i++)
    if (!in->files_mode && !R->in[i].files_mode && same_folder(R->in[i].dir, in->dir))
      return 0; /* given twice */
  if (R->n_in == R->cap_in) {
    int n = R->cap_in ? R->cap_in * 2 : 16;
    input *p = realloc(R->in, (size_t)n * sizeof *p);
    if (!p) {
      fputs("gritline report: out of memory\n", stderr);
      return EX_OSERR;
    }
    R->in = p;
    R->cap_in = n;
  }
  R->in[R->n_in++] = *in;
  return 0;
}

static int has_passes(const char *dir)
{
  char p[4200];
  snprintf(p, sizeof p, "%s/passes.csv", dir);
  return access(p, F_OK) == 0;
}

static int by_label(const void *x, const void *y) { return strcmp(*(char *const *)x, *(char *const *)y); }

/* A machine folder: each sub-folder with a passes.csv. */
static int scan_machine(report *R, const char *dir, int *seen)
{
  DIR *dp = opendir(dir);
  if (!dp) {
    fprintf(stderr, "gritline report: %s: %s\n", dir, strerror(errno));
    return EX_NOINPUT;
  }
  char *names[MAX_ARGS];
  int n = 0;
  struct dirent *e;
  while ((e = readdir(dp)) && n < MAX_ARGS) {
    if (e->d_name[0] == '.')
      continue;
    char sub[1100];
    snprintf(sub, sizeof sub, "%s/%s", dir, e->d_name);
    struct stat st;
    if (stat(sub, &st) != 0 || !S_ISDIR(st.st_mode) || !has_passes(sub))
      continue;
    (*seen)++;
    if (!wanted(&R->a, e->d_name))
      continue;
    names[n] = strdup(e->d_name);
    if (names[n])
      n++;
  }
  closedir(dp);
  qsort(names, (size_t)n, sizeof names[0], by_label);
  int rc = 0;
  for (int i = 0; i < n; i++) {
    input in;
    memset(&in, 0, sizeof in);
    snprintf(in.dir, sizeof in.dir, "%s/%s", dir, names[i]);
    snprintf(in.label, sizeof in.label, "%s", names[i]);
    last_component(dir, in.machine, sizeof in.machine);
    if (!rc)
      rc = add_input(R, &in);
    free(names[i]);
  }
  return rc;
}

static int by_start(const void *x, const void *y)
{
  const input *a = x, *b = y;
  if (isfinite(a->start) && isfinite(b->start) && a->start != b->start)
    return a->start < b->start ? -1 : 1;
  return strcmp(a->label, b->label);
}

static int collect_inputs(report *R)
{
  int seen = 0, rc;
  for (int i = 0; i < R->a.n_inputs; i++) {
    const char *p = R->a.inputs[i];
    struct stat st;
    if (stat(p, &st) != 0) {
      fprintf(stderr, "gritline report: %s: %s\n", p, strerror(errno));
      return EX_NOINPUT;
    }
    if (S_ISDIR(st.st_mode)) {
      if (!has_passes(p)) {
        if ((rc = scan_machine(R, p, &seen)) != 0)
          return rc;
        continue;
      }
      seen++;
      input in;
      memset(&in, 0, sizeof in);
      snprintf(in.dir, sizeof in.dir, "%s", p);
      last_component(p, in.label, sizeof in.label);
      machine_of(p, in.machine, sizeof in.machine);
      if (wanted(&R->a, in.label) && (rc = add_input(R, &in)) != 0)
        return rc;
      continue;
    }
    /* A single file: it joins the files of its folder. */
    int kind = SUM_SniffFile(p);
    if (kind < 0) {
      fprintf(stderr, "gritline report: %s:1: not one of gritline's logs (passes.csv, events.csv, dress_cycles.csv)\n",
              p);
      return access(p, R_OK) == 0 ? EX_DATAERR : EX_NOINPUT;
    }
    char dir[1024];
    dir_of(p, dir, sizeof dir);
    int k;
    for (k = 0; k < R->n_in; k++)
      if (R->in[k].files_mode && strcmp(R->in[k].dir, dir) == 0)
        break;
    if (k == R->n_in) {
      input in;
      memset(&in, 0, sizeof in);
      in.files_mode = 1;
      snprintf(in.dir, sizeof in.dir, "%s", dir);
      char abs[4096];
      last_component(realpath(dir, abs) ? abs : dir, in.label, sizeof in.label);
      machine_of(dir, in.machine, sizeof in.machine);
      if ((rc = add_input(R, &in)) != 0)
        return rc;
    }
    if (R->in[k].files[kind] && strcmp(R->in[k].files[kind], p) != 0) {
      fprintf(stderr, "gritline report: %s and %s: two %s files of one folder\n", R->in[k].files[kind], p,
              SUM_FILE_NAMES[kind]);
      return EX_USAGE;
    }
    R->in[k].files[kind] = p;
    seen++;
  }
  /* Files narrowed by --shift, --from, --to like folders; those without passes are refused. */
  int kept = 0;
  for (int i = 0; i < R->n_in; i++) {
    input *in = &R->in[i];
    if (in->files_mode && !in->files[SUM_PASSES]) {
      fprintf(stderr, "gritline report: %s: no passes.csv among the files given from this folder\n", in->dir);
      return EX_NOINPUT;
    }
    if (in->files_mode && !wanted(&R->a, in->label))
      continue;
    in->start = probe_start(in);
    R->in[kept++] = *in;
  }
  R->n_in = kept;
  if (R->n_in == 0) {
    if (seen && (R->a.shift || R->a.from || R->a.to))
      fprintf(stderr, "gritline report: no shift folder matches --shift/--from/--to (%d seen)\n", seen);
    else
      fprintf(stderr, "gritline report: %s: no shift folder (no passes.csv found)\n", R->a.inputs[0]);
    return EX_NOINPUT;
  }
  qsort(R->in, (size_t)R->n_in, sizeof R->in[0], by_start);
  return 0;
}

static int load(report *R)
{
  char err[1200];
  SUM_InitData(&R->d);
  for (int i = 0; i < R->n_in; i++) {
    const input *in = &R->in[i];
    int not_found = 0, rc;
    if (in->files_mode)
      rc = SUM_ReadFiles(&R->d, in->files, in->label, in->machine, &not_found, err, sizeof err);
    else
      rc = SUM_ReadFolder(&R->d, in->dir, &not_found, err, sizeof err);
    if (rc != 0) {
      fprintf(stderr, "gritline report: %s\n", err);
      return not_found ? EX_NOINPUT : EX_DATAERR;
    }
    if (!in->files_mode)
      snprintf(R->d.folders[R->d.n_folders - 1].machine, sizeof R->d.folders[0].machine, "%s", in->machine);
  }
  R->multi = R->d.n_folders > 1;
  return 0;
}

/* ------------------------------------------------------------------ limits and figures */

static int resolve_limits(report *R)
{
  limits *l = &R->lim;
  l->aggr_low = 15.0;
  l->aggr_high = 20.0;
  l->dull_limit = 1.3;
  l->burn_margin = 0.8;
  R->win.aggr_low = l->aggr_low;
  R->win.aggr_high = l->aggr_high;
  if (!R->a.config)
    return 0;
  static CNF_Config cfg;
  char err[800];
  if (CNF_LoadForReplay(&cfg, R->a.config, err, sizeof err) != 0) {
    fprintf(stderr, "gritline report: --config: %s\n", err);
    return EX_CONFIG;
  }
  /* The wheel the logs name, when the configuration knows it. */
  SUM_Summary s;
  if (SUM_FromData(&R->d, -1, &R->win, &s, err, sizeof err) != 0) {
    fprintf(stderr, "gritline report: %s\n", err);
    return EX_OSERR;
  }
  const CNF_Wheel *w = cfg.wheel;
  for (int i = 0; i < cfg.n_wheels; i++)
    if (*s.wheel && strcmp(cfg.wheels[i].name, s.wheel) == 0) {
      w = &cfg.wheels[i];
      l->wheel_named_in_logs = 1;
    }
  l->from_config = 1;
  snprintf(l->config, sizeof l->config, "%s", R->a.config);
  snprintf(l->description, sizeof l->description, "%s", cfg.description);
  if (w) {
    snprintf(l->wheel, sizeof l->wheel, "%s", w->name);
    l->aggr_low = w->aggr_low;
    l->aggr_high = w->aggr_high;
    l->dull_limit = w->dull_limit;
    l->burn_margin = w->burn_margin;
  }
  R->win.aggr_low = l->aggr_low;
  R->win.aggr_high = l->aggr_high;
  return 0;
}

/* The folder's summary.json when it was written from the same files with the
 * same window; returns 1 and fills s, else 0 with why in *why. */
static int read_summary_json(const SUM_Folder *fo, const SUM_Window *w, SUM_Summary *s, const char **why)
{
  char path[1100];
  snprintf(path, sizeof path, "%s/summary.json", fo->path);
  FILE *f = fopen(path, "r");
  if (!f) {
    *why = "computed (no summary.json)";
    return 0;
  }
  static char json[1 << 20];
  size_t n = fread(json, 1, sizeof json - 1, f);
  int whole = feof(f);
  fclose(f);
  json[n] = '\0';
  char text[128];
  *why = "computed (summary.json unreadable)";
  if (!whole || JSG_String(json, "format", text, sizeof text) != 0 || strcmp(text, SUM_FORMAT) != 0)
    return 0;
  *why = "computed (summary.json is for other limits)";
  if (JSG_Number(json, "aggr_low") != w->aggr_low || JSG_Number(json, "aggr_high") != w->aggr_high)
    return 0;
  *why = "computed (the logs changed since summary.json)";
  for (int k = 0; k < SUM_FILE_KINDS; k++) {
    char key[64];
    snprintf(key, sizeof key, "sources.%s", SUM_SOURCE_KEYS[k]);
    double v = JSG_Number(json, key);
    if (fo->bytes[k] < 0 ? !isnan(v) : v != (double)fo->bytes[k])
      return 0;
  }
  memset(s, 0, sizeof *s);
  s->window = *w;
  JSG_String(json, "label", s->label, sizeof s->label);
  JSG_String(json, "machine", s->machine, sizeof s->machine);
  JSG_String(json, "wheel", s->wheel, sizeof s->wheel);
  JSG_String(json, "job", s->job, sizeof s->job);
  struct { const char *key; double *v; } nums[] = {
      {"first_pass_start", &s->first_time}, {"last_pass_end", &s->last_time},
      {"window_share", &s->window_share}, {"volume_mm3", &s->volume_mm3}, {"volume_mm3_mm", &s->volume_mm3_mm},
      {"energy_j", &s->energy_j}, {"aggressiveness_mean", &s->aggr_mean},
      {"aggressiveness_median", &s->aggr_median}, {"specific_energy_mean_j_mm3", &s->u_mean},
      {"specific_energy_median_j_mm3", &s->u_median}, {"burn_ratio_max", &s->burn_ratio_max},
      {"net_power_peak_max_w", &s->net_peak_max_w}, {"limit_v_prime_median_mm3_mm", &s->limit_v_prime_median},
      {"limit_v_prime_min_mm3_mm", &s->limit_v_prime_min}, {"limit_v_prime_max_mm3_mm", &s->limit_v_prime_max},
      {"work_speed_median_mm_min", &s->work_speed_median_mm_min}, {"depth_median_mm", &s->depth_median_mm},
      {"window_centre", &s->centre_aggr}, {"centre_work_speed_mm_min", &s->centre_work_speed_mm_min},
  };
  for (size_t i = 0; i < sizeof nums / sizeof nums[0]; i++)
    *nums[i].v = JSG_Number(json, nums[i].key);
  struct { const char *key; unsigned long *v; } counts[] = {
      {"passes", &s->passes}, {"passes_depth_known", &s->depth_known}, {"spark_out_passes", &s->spark_out},
      {"aggr_passes", &s->aggr_passes}, {"in_window_passes", &s->in_window},
      {"below_window_passes", &s->below_window}, {"above_window_passes", &s->above_window},
      {"specific_energy_passes", &s->u_passes}, {"dresses", &s->dresses}, {"alerts_raised", &s->alerts_raised},
      {"cycles", &s->cycles}, {"closed_cycles", &s->closed_cycles}, {"limit_cycles", &s->limit_cycles},
      {"forecasts_judged", &s->forecasts_judged}, {"forecasts_right", &s->forecasts_right},
      {"centre_passes", &s->centre_passes},
  };
  for (size_t i = 0; i < sizeof counts / sizeof counts[0]; i++) {
    double v = JSG_Number(json, counts[i].key);
    if (!(v >= 0.0)) {
      *why = "computed (summary.json incomplete)";
      return 0;
    }
    *counts[i].v = (unsigned long)v;
  }
  int nk = JSG_Length(json, "alerts_by_kind");
  for (int i = 0; i < nk && s->n_kinds < SUM_KINDS_MAX; i++) {
    char key[64];
    snprintf(key, sizeof key, "alerts_by_kind.%d.kind", i);
    SUM_KindCount *kc = &s->kinds[s->n_kinds];
    if (JSG_String(json, key, kc->kind, sizeof kc->kind) != 0)
      continue;
    snprintf(key, sizeof key, "alerts_by_kind.%d.raised", i);
    double v = JSG_Number(json, key);
    kc->raised = v >= 0.0 ? (unsigned long)v : 0;
    s->n_kinds++;
  }
  s->folders = 1;
  for (int k = 0; k < SUM_FILE_KINDS; k++)
    s->bytes[k] = fo->bytes[k];
  *why = "summary.json";
  return 1;
}

static double median_limit_pass(const SUM_Data *d)
{
  double *v = malloc((d->n_cycles ? d->n_cycles : 1) * sizeof *v);
  if (!v)
    return NAN;
  size_t n = 0;
  for (size_t i = 0; i < d->n_cycles; i++)
    if (d->cycles[i].limit_pass && !SUM_CycleRepeatedLater(d, i))
      v[n++] = (double)d->cycles[i].limit_pass;
  double m = SUM_Median(v, n);
  free(v);
  return m;
}

static int summarise(report *R)
{
  char err[300];
  int n = R->d.n_folders;
  R->shift = calloc((size_t)n, sizeof *R->shift);
  R->shift_source = calloc((size_t)n, sizeof *R->shift_source);
  R->alerts = malloc((R->d.n_events ? R->d.n_events : 1) * sizeof *R->alerts);
  R->dresses = malloc((R->d.n_events ? R->d.n_events : 1) * sizeof *R->dresses);
  if (!R->shift || !R->shift_source || !R->alerts || !R->dresses) {
    fputs("gritline report: out of memory\n", stderr);
    return EX_OSERR;
  }
  for (int i = 0; i < n; i++) {
    if (R->d.folders[i].path[0] && !R->in[i].files_mode &&
        read_summary_json(&R->d.folders[i], &R->win, &R->shift[i], &R->shift_source[i]))
      continue;
    if (R->in[i].files_mode)
      R->shift_source[i] = "computed (files)";
    if (SUM_FromData(&R->d, i, &R->win, &R->shift[i], err, sizeof err) != 0) {
      fprintf(stderr, "gritline report: %s\n", err);
      return EX_OSERR;
    }
  }
  if (n == 1)
    R->total = R->shift[0];
  else if (SUM_FromData(&R->d, -1, &R->win, &R->total, err, sizeof err) != 0) {
    fprintf(stderr, "gritline report: %s\n", err);
    return EX_OSERR;
  }
  /* alerts with their clearing, and the dresses */
  const SUM_Data *d = &R->d;
  char *used = calloc(d->n_events ? d->n_events : 1, 1);
  if (!used) {
    fputs("gritline report: out of memory\n", stderr);
    return EX_OSERR;
  }
  for (size_t i = 0; i < d->n_events; i++) {
    const SUM_Event *e = &d->events[i];
    if (strcmp(e->kind, "dress") == 0)
      R->dresses[R->n_dresses++] = i;
    if (strcmp(e->state, "raised") != 0)
      continue;
    alert *a = &R->alerts[R->n_alerts++];
    a->ev = i;
    a->cleared = SIZE_MAX;
    for (size_t k = i + 1; k < d->n_events; k++)
      if (!used[k] && strcmp(d->events[k].kind, e->kind) == 0 && strcmp(d->events[k].state, "cleared") == 0) {
        a->cleared = k;
        used[k] = 1;
        break;
      }
  }
  free(used);
  R->limit_pass_median = median_limit_pass(d);
  return 0;
}

/* ------------------------------------------------------------------ formatting */

static const char *fmt_num(char *buf, size_t size, double v, int dec, const char *none)
{
  if (!isfinite(v))
    snprintf(buf, size, "%s", none);
  else
    snprintf(buf, size, "%.*f", dec, fabs(v) < 0.5 * pow(10.0, -dec) ? 0.0 : v);
  return buf;
}

static const char *fmt_time(char *buf, size_t size, double t, const char *fmt)
{
  if (!isfinite(t)) {
    snprintf(buf, size, "-");
    return buf;
  }
  time_t s = (time_t)floor(t);
  struct tm tm;
  localtime_r(&s, &tm);
  strftime(buf, size, fmt, &tm);
  return buf;
}

static const char *or_unknown(const char *s) { return s && *s ? s : "unknown"; }
static const char *plural(unsigned long n) { return n == 1 ? "" : "s"; }

/* Sentences of advice, plain text (the HTML adds emphasis around the figures). */
typedef struct advice {
  char dress[700];
  char speed[700];
  char burn[400];
} advice;

static void make_advice(const report *R, advice *v)
{
  const SUM_Summary *s = &R->total;
  char a[32], b[32], c[32];
  v->dress[0] = v->speed[0] = v->burn[0] = '\0';
  if (s->limit_cycles > 0) {
    char passes[96] = "";
    if (isfinite(R->limit_pass_median))
      snprintf(passes, sizeof passes, ", about %.0f passes after the dress", R->limit_pass_median);
    char range[96] = "";
    if (s->limit_cycles > 1)
      snprintf(range, sizeof range, "; range %s to %s", fmt_num(b, sizeof b, s->limit_v_prime_min, 0, "-"),
               fmt_num(c, sizeof c, s->limit_v_prime_max, 0, "-"));
    snprintf(v->dress, sizeof v->dress,
             "Dress after about V' = %s mm^3/mm removed per mm of width%s: on this wheel and job the "
             "dull ratio reached its limit %.2f at this median V' (%lu of %lu cycle%s%s).",
             fmt_num(a, sizeof a, s->limit_v_prime_median, 0, "-"), passes, R->lim.dull_limit, s->limit_cycles,
             s->cycles, plural(s->cycles), range);
  } else if (s->cycles > 0) {
    double longest = NAN;
    for (size_t i = 0; i < R->d.n_cycles; i++)
      if (!(R->d.cycles[i].v_prime_mm3_mm <= longest))
        longest = R->d.cycles[i].v_prime_mm3_mm;
    snprintf(v->dress, sizeof v->dress,
             "No dress cycle reached the dulling limit (dull ratio %.2f); the longest ran to V' = %s mm^3/mm. "
             "There is no evidence here for a shorter dressing interval; collect more cycles before changing it.",
             R->lim.dull_limit, fmt_num(a, sizeof a, longest, 0, "-"));
  } else {
    snprintf(v->dress, sizeof v->dress,
             "No dress cycle was closed in these logs: no dressing interval can be derived from them yet.");
  }
  if (isfinite(s->centre_work_speed_mm_min)) {
    char share[32], depth[32];
    snprintf(v->speed, sizeof v->speed,
             "A work speed of about %s mm/min centres the job in the window %.4g-%.4g (aggressiveness %.4g) at the "
             "usual depth of cut %s mm (median over %lu passes); the median work speed was %s mm/min and %s %% of "
             "the grinding passes ran inside the window. Check it with gritline calc --target-aggr %.4g and "
             "against the machine's limits.",
             fmt_num(a, sizeof a, s->centre_work_speed_mm_min, 0, "-"), s->window.aggr_low, s->window.aggr_high,
             s->centre_aggr, fmt_num(depth, sizeof depth, s->depth_median_mm, 4, "-"), s->centre_passes,
             fmt_num(c, sizeof c, s->work_speed_median_mm_min, 0, "-"),
             fmt_num(share, sizeof share, s->window_share * 100.0, 1, "-"), s->centre_aggr);
  } else {
    snprintf(v->speed, sizeof v->speed,
             "No pass had a known depth of cut, wheel speed and diameter: no work speed can be suggested.");
  }
  if (isfinite(s->burn_ratio_max) && s->burn_ratio_max >= R->lim.burn_margin)
    snprintf(v->burn, sizeof v->burn,
             "Specific energy came to %s of the burn threshold u* (margin %.2f): check the coolant, dress "
             "sooner or take lighter cuts before burn marks the work.",
             fmt_num(a, sizeof a, s->burn_ratio_max, 2, "-"), R->lim.burn_margin);
}

/* ------------------------------------------------------------------ text */

static void wrap(FILE *f, const char *lead, const char *text);

static void text_limits(const report *R, FILE *f)
{
  const limits *l = &R->lim;
  char line[700];
  if (l->from_config)
    snprintf(line, sizeof line, "%s, wheel %s%s: window %.4g-%.4g, dull limit %.2f, burn margin %.2f", l->config,
             l->wheel, l->wheel_named_in_logs ? "" : " (the active wheel: the logs name none the file knows)",
             l->aggr_low, l->aggr_high, l->dull_limit, l->burn_margin);
  else
    snprintf(line, sizeof line, "no --config given, defaults used: window %.4g-%.4g, dull limit %.2f, burn margin %.2f",
             l->aggr_low, l->aggr_high, l->dull_limit, l->burn_margin);
  wrap(f, "Limits: ", line);
}

/* text after lead, wrapped at 78 columns under the lead's width */
static void wrap(FILE *f, const char *lead, const char *text)
{
  size_t indent = strlen(lead), col = indent;
  int first = 1;
  fputs(lead, f);
  for (const char *p = text; *p;) {
    while (*p == ' ')
      p++;
    if (!*p)
      break;
    size_t len = strcspn(p, " ");
    if (!first && col + 1 + len > 78) {
      fprintf(f, "\n%*s", (int)indent, "");
      col = indent;
    } else if (!first) {
      fputc(' ', f);
      col++;
    }
    fwrite(p, 1, len, f);
    col += len;
    p += len;
    first = 0;
  }
  fputc('\n', f);
}

static void write_text(const report *R, FILE *f)
{
  const SUM_Summary *s = &R->total;
  char a[48], b[48], c[48], t0[64], t1[64];
  fprintf(f, "gritline shift report: %s, job %s, wheel %s\n", or_unknown(s->machine), or_unknown(s->job),
          or_unknown(s->wheel));
  if (R->lim.description[0])
    fprintf(f, "%s\n", R->lim.description);
  fprintf(f, "%s %s: %s to %s\n", R->multi ? "Shifts" : "Shift", s->label,
          fmt_time(t0, sizeof t0, s->first_time, "%Y-%m-%d %H:%M"),
          fmt_time(t1, sizeof t1, s->last_time, "%Y-%m-%d %H:%M %Z"));
  text_limits(R, f);
  fputc('\n', f);
  fprintf(f, "  %-24s %lu (%lu with a known depth of cut, %lu spark-out)\n", "Passes", s->passes, s->depth_known,
          s->spark_out);
  fprintf(f, "  %-24s %s mm^3 (%s mm^3/mm of width)\n", "Removed volume", fmt_num(a, sizeof a, s->volume_mm3, 1, "-"),
          fmt_num(b, sizeof b, s->volume_mm3_mm, 2, "-"));
  fprintf(f, "  %-24s %s %% of %lu grinding passes\n", "Inside the window",
          fmt_num(a, sizeof a, s->window_share * 100.0, 1, "-"), s->aggr_passes);
  fprintf(f, "  %-24s %lu below %.4g, %lu above %.4g\n", "", s->below_window, s->window.aggr_low, s->above_window,
          s->window.aggr_high);
  fprintf(f, "  %-24s median %s, mean %s\n", "Aggressiveness", fmt_num(a, sizeof a, s->aggr_median, 2, "-"),
          fmt_num(b, sizeof b, s->aggr_mean, 2, "-"));
  fprintf(f, "  %-24s median %s, mean %s J/mm^3 (%lu passes)\n", "Specific energy",
          fmt_num(a, sizeof a, s->u_median, 2, "-"), fmt_num(b, sizeof b, s->u_mean, 2, "-"), s->u_passes);
  fprintf(f, "  %-24s %s\n", "Highest burn ratio u/u*", fmt_num(a, sizeof a, s->burn_ratio_max, 3, "-"));
  fprintf(f, "  %-24s %s W\n", "Highest peak net power", fmt_num(a, sizeof a, s->net_peak_max_w, 0, "-"));
  fprintf(f, "  %-24s %lu (%lu cycle%s closed, %lu reached the dull limit)\n", "Dresses", s->dresses,
          s->closed_cycles, plural(s->closed_cycles), s->limit_cycles);
  char kinds[1200] = "";
  size_t used = 0;
  for (int i = 0; i < s->n_kinds && used < sizeof kinds; i++)
    used += (size_t)snprintf(kinds + used, sizeof kinds - used, "%s%s %lu", i ? ", " : ": ", s->kinds[i].kind,
                             s->kinds[i].raised);
  char lead[64], alerts[1300];
  snprintf(lead, sizeof lead, "  %-24s ", "Alerts raised");
  snprintf(alerts, sizeof alerts, "%lu%s", s->alerts_raised, kinds);
  wrap(f, lead, alerts);

  if (R->multi) {
    fprintf(f, "\nShifts\n  %-22s %-16s %7s %12s %8s %7s %6s  %s\n", "shift", "start", "passes", "volume mm^3",
            "window%", "dresses", "alerts", "figures");
    for (int i = 0; i < R->d.n_folders; i++) {
      const SUM_Summary *x = &R->shift[i];
      fprintf(f, "  %-22s %-16s %7lu %12s %8s %7lu %6lu  %s\n", x->label,
              fmt_time(t0, sizeof t0, x->first_time, "%Y-%m-%d %H:%M"), x->passes,
              fmt_num(a, sizeof a, x->volume_mm3, 1, "-"), fmt_num(b, sizeof b, x->window_share * 100.0, 1, "-"),
              x->dresses, x->alerts_raised, R->shift_source[i]);
    }
  }

  fputs("\nDress cycles\n", f);
  if (!R->d.n_cycles)
    fputs("  none closed in these logs\n", f);
  else
    fprintf(f, "  %5s %6s %9s %6s %6s %-8s %-8s %8s %9s\n", "cycle", "passes", "V'mm3/mm", "ratio", "G", "begun",
            "ended", "forecast", "limit V'");
  for (size_t i = 0; i < R->d.n_cycles; i++) {
    const SUM_Cycle *y = &R->d.cycles[i];
    if (SUM_CycleRepeatedLater(&R->d, i))
      continue;
    fprintf(f, "  %5lu %6lu %9s %6s %6s %-8.8s %-8.8s %8s %9s\n", y->cycle, y->passes,
            fmt_num(a, sizeof a, y->v_prime_mm3_mm, 1, "-"), fmt_num(b, sizeof b, y->final_ratio, 3, "-"),
            fmt_num(c, sizeof c, y->g_ratio, 1, "-"), y->started_by, y->ended_by,
            y->forecast_right < 0 ? "-" : y->forecast_right ? "right" : "wrong",
            fmt_num(t0, sizeof t0, y->limit_v_prime_mm3_mm, 1, "never"));
  }

  fputs("\nAlerts\n", f);
  if (!R->n_alerts)
    fputs("  none raised\n", f);
  for (size_t i = 0; i < R->n_alerts; i++) {
    const SUM_Event *e = &R->d.events[R->alerts[i].ev];
    char lead[300], cl[64];
    if (R->alerts[i].cleared != SIZE_MAX)
      snprintf(cl, sizeof cl, "cleared at pass %lu", R->d.events[R->alerts[i].cleared].pass);
    else
      snprintf(cl, sizeof cl, "still active");
    snprintf(lead, sizeof lead, "  A%-3zu %s pass %lu %s %s (%s)\n", i + 1,
             fmt_time(t0, sizeof t0, e->time, R->multi ? "%m-%d %H:%M" : "%H:%M:%S"), e->pass, e->kind, e->severity,
             cl);
    fputs(lead, f);
    wrap(f, "        ", e->message);
  }

  advice v;
  make_advice(R, &v);
  fputs("\nAdvice\n", f);
  wrap(f, "  - ", v.dress);
  wrap(f, "  - ", v.speed);
  if (v.burn[0])
    wrap(f, "  - ", v.burn);
  fputc('\n', f);
  wrap(f, "Caution: ", caution_text);
}

/* ------------------------------------------------------------------ JSON */

static void json_num(FILE *f, double v) { SUM_JsonNumber(f, v); }

static void write_json(const report *R, FILE *f)
{
  const limits *l = &R->lim;
  fputs("{\n  \"format\": \"gritline-report/1\",\n  \"machine\": ", f);
  TXB_FileJsonString(f, R->total.machine);
  fputs(",\n  \"job\": ", f);
  TXB_FileJsonString(f, R->total.job);
  fputs(",\n  \"wheel\": ", f);
  TXB_FileJsonString(f, R->total.wheel);
  fputs(",\n  \"limits\": {\"source\": ", f);
  TXB_FileJsonString(f, l->from_config ? "config" : "defaults");
  fputs(", \"config\": ", f);
  if (l->from_config)
    TXB_FileJsonString(f, l->config);
  else
    fputs("null", f);
  fputs(", \"wheel\": ", f);
  if (l->from_config)
    TXB_FileJsonString(f, l->wheel);
  else
    fputs("null", f);
  fputs(", \"aggr_low\": ", f), json_num(f, l->aggr_low);
  fputs(", \"aggr_high\": ", f), json_num(f, l->aggr_high);
  fputs(", \"dull_limit\": ", f), json_num(f, l->dull_limit);
  fputs(", \"burn_margin\": ", f), json_num(f, l->burn_margin);
  fputs("},\n  \"summary\": ", f);
  SUM_WriteJson(f, &R->total, &R->d, -1, 2);
  fputs(",\n  \"shifts\": [", f);
  for (int i = 0; i < R->d.n_folders; i++) {
    fprintf(f, "%s\n    {\"folder\": ", i ? "," : "");
    TXB_FileJsonString(f, R->d.folders[i].path);
    fputs(", \"figures_from\": ", f);
    TXB_FileJsonString(f, R->shift_source[i]);
    fputs(", \"summary\": ", f);
    SUM_WriteJson(f, &R->shift[i], NULL, i, 4);
    fputc('}', f);
  }
  fputs("\n  ],\n  \"alerts\": [", f);
  for (size_t i = 0; i < R->n_alerts; i++) {
    const SUM_Event *e = &R->d.events[R->alerts[i].ev];
    fprintf(f, "%s\n    {\"tag\": \"A%zu\", \"time\": ", i ? "," : "", i + 1);
    json_num(f, e->time);
    fputs(", \"shift\": ", f);
    TXB_FileJsonString(f, R->d.folders[e->folder].label);
    fprintf(f, ", \"pass\": %lu, \"kind\": ", e->pass);
    TXB_FileJsonString(f, e->kind);
    fputs(", \"severity\": ", f);
    TXB_FileJsonString(f, e->severity);
    fputs(", \"value\": ", f), json_num(f, e->value);
    fputs(", \"limit\": ", f), json_num(f, e->limit);
    if (R->alerts[i].cleared != SIZE_MAX) {
      const SUM_Event *c = &R->d.events[R->alerts[i].cleared];
      fprintf(f, ", \"cleared_pass\": %lu, \"cleared_time\": ", c->pass);
      json_num(f, c->time);
    } else {
      fputs(", \"cleared_pass\": null, \"cleared_time\": null", f);
    }
    fputs(", \"message\": ", f);
    TXB_FileJsonString(f, e->message);
    fputc('}', f);
  }
  advice v;
  make_advice(R, &v);
  fputs("\n  ],\n  \"advice\": [", f);
  TXB_FileJsonString(f, v.dress);
  fputs(", ", f);
  TXB_FileJsonString(f, v.speed);
  if (v.burn[0]) {
    fputs(", ", f);
    TXB_FileJsonString(f, v.burn);
  }
  fputs("],\n  \"caution\": ", f);
  TXB_FileJsonString(f, caution_text);
  fputs("\n}\n", f);
}

/* ------------------------------------------------------------------ HTML */

static const char css[] =
    ":root{--ink:#1c2329;--muted:#56606b;--line:#cfd6dd;--accent:#1f4e8c;--warn:#b3001b;--paper:#fff}\n"
    "*{box-sizing:border-box}\n"
    "html{background:#eef1f4}\n"
    "body{margin:0 auto;max-width:1140px;padding:26px 34px 34px;background:var(--paper);color:var(--ink);"
    "font:14px/1.45 'DejaVu Sans','Liberation Sans',Arial,sans-serif}\n"
    "header.top{display:flex;justify-content:space-between;align-items:flex-end;gap:20px;"
    "border-bottom:4px solid var(--ink);padding-bottom:10px}\n"
    ".kicker{font-size:11px;letter-spacing:.14em;text-transform:uppercase;color:var(--muted)}\n"
    "h1{font-size:27px;line-height:1.15;margin:3px 0 4px}\n"
    "h1 .sub{font-weight:400;color:var(--muted)}\n"
    ".meta{margin:0;color:var(--ink)}\n"
    ".stamp{text-align:right;font-size:12px;color:var(--muted);white-space:nowrap}\n"
    ".stamp b{display:block;font-size:20px;color:var(--ink)}\n"
    ".limits{margin:8px 0 0;padding:6px 10px;border-left:4px solid var(--muted);background:#f4f6f8;font-size:13px}\n"
    ".limits.defaults{border-left-color:#c05600;background:#fdf4ec}\n"
    "h2{font-size:16px;letter-spacing:.03em;text-transform:uppercase;margin:24px 0 10px;padding-bottom:4px;"
    "border-bottom:1px solid var(--line)}\n"
    ".figures{display:grid;grid-template-columns:repeat(4,1fr);gap:10px;margin-top:16px}\n"
    ".fig{border:1px solid var(--line);border-top:4px solid var(--accent);padding:8px 11px 9px;border-radius:2px;"
    "break-inside:avoid}\n"
    ".fig.warn{border-top-color:var(--warn)}\n"
    ".fig.ok{border-top-color:#2e6b2a}\n"
    ".fig .label{font-size:11px;letter-spacing:.08em;text-transform:uppercase;color:var(--muted)}\n"
    ".fig .value{font-size:25px;font-weight:700;line-height:1.2;font-variant-numeric:tabular-nums}\n"
    ".fig .unit{font-size:13px;font-weight:400;color:var(--muted)}\n"
    ".fig .more{font-size:12px;color:var(--muted)}\n"
    ".advice{margin-top:18px;border:2px solid var(--ink);border-radius:3px;padding:4px 16px 8px;background:#f7f9fb;"
    "break-inside:avoid}\n"
    ".advice h2{border:0;margin:8px 0 4px}\n"
    ".advice ol{margin:0;padding-left:20px}.advice li{margin:5px 0}\n"
    "figure{margin:0 0 18px;break-inside:avoid}\n"
    "figcaption{font-weight:700;margin:0 0 2px}\n"
    "figcaption span{font-weight:400;color:var(--muted)}\n"
    "svg.chart{display:block;width:100%;height:auto;border:1px solid var(--line)}\n"
    ".note{font-size:12.5px;color:var(--muted);margin:4px 0}\n"
    "table{border-collapse:collapse;width:100%;font-size:12.5px}\n"
    "th,td{padding:4px 7px;border-bottom:1px solid var(--line);text-align:left;vertical-align:top}\n"
    "thead th{border-bottom:2px solid var(--ink);font-size:11px;letter-spacing:.05em;text-transform:uppercase}\n"
    "td.n,th.n{text-align:right;font-variant-numeric:tabular-nums}td.n{white-space:nowrap}\n"
    "td.tag{font-weight:700;white-space:nowrap}td.nw{white-space:nowrap}\n"
    "tr.warning td.tag{color:var(--warn)}tr.critical td.tag{color:#7a0019}\n"
    "td.msg{color:var(--muted);font-size:12px}\n"
    "footer.caution{margin-top:26px;border-top:4px solid var(--ink);padding-top:8px;font-size:13px}\n"
    "footer.caution b{color:var(--warn)}\n"
    ".small{font-size:11.5px;color:var(--muted)}\n"
    "@media screen and (max-width:800px){.figures{grid-template-columns:repeat(2,1fr)}header.top{display:block}"
    ".stamp{text-align:left}}\n"
    "@media print{html{background:#fff}body{max-width:none;padding:0;font-size:9.5pt}@page{size:A4;margin:11mm}"
    "h1{font-size:18pt}.figures{grid-template-columns:repeat(4,1fr);gap:6px}.fig{padding:5px 8px}"
    ".fig .value{font-size:17pt}table{font-size:7.5pt}th,td{padding:2px 4px}thead th{font-size:6.5pt}"
    "td.msg{font-size:7pt}thead{display:table-header-group}tr{break-inside:avoid}h2{break-after:avoid}"
    "svg.chart{border:0}}\n";

static void esc(FILE *f, const char *t) { SVG_Escape(f, t); }

/* A headline number: data-figure names the JSON key, data-value holds it in full. */
static void figure_value(FILE *f, const char *key, double v, int dec)
{
  char buf[48];
  fprintf(f, "<span data-figure=\"%s\" data-value=\"", key);
  SUM_JsonNumber(f, v);
  fprintf(f, "\">%s</span>", fmt_num(buf, sizeof buf, v, dec, "&ndash;"));
}

static void tile_begin(FILE *f, const char *label, const char *cls)
{
  fprintf(f, "<div class=\"fig%s%s\"><div class=\"label\">%s</div><div class=\"value\">", *cls ? " " : "", cls, label);
}

/* Time or pass of an event on the chart's x axis. */
static double event_x(const report *R, const SUM_Event *e, int after)
{
  if (R->multi)
    return e->time;
  return e->pass ? (double)e->pass + (after ? 0.5 : 0.0) : 0.5;
}

typedef struct series_data {
  double *x, *u, *uref, *ulim, *ustar, *umargin, *aggr, *pmean, *ppeak, *group;
  size_t n;
} series_data;

static int build_series(const report *R, series_data *s)
{
  size_t n = R->d.n_passes ? R->d.n_passes : 1;
  double **arr[] = {&s->x, &s->u, &s->uref, &s->ulim, &s->ustar, &s->umargin, &s->aggr, &s->pmean, &s->ppeak, &s->group};
  for (size_t i = 0; i < sizeof arr / sizeof arr[0]; i++)
    if (!(*arr[i] = malloc(n * sizeof(double))))
      return -1;
  s->n = R->d.n_passes;
  for (size_t i = 0; i < s->n; i++) {
    const SUM_Pass *p = &R->d.passes[i];
    s->x[i] = R->multi ? p->end_time : (double)p->number;
    s->u[i] = p->u_j_mm3;
    s->uref[i] = p->u_ref_j_mm3;
    s->ulim[i] = p->u_ref_j_mm3 * R->lim.dull_limit;
    s->ustar[i] = p->u_star_j_mm3;
    s->umargin[i] = p->u_star_j_mm3 * R->lim.burn_margin;
    s->aggr[i] = (p->flags & SEG_F_SPARK_OUT) || !(p->aggr > 0.0) ? NAN : p->aggr;
    s->pmean[i] = p->net_mean_w;
    s->ppeak[i] = p->net_peak_w;
    /* Thresholds depend on the depth of cut: one line per depth (to the micrometre). */
    s->group[i] = isfinite(p->depth_mm) ? round(p->depth_mm * 1000.0) : NAN;
  }
  return 0;
}

static void free_series(series_data *s)
{
  free(s->x), free(s->u), free(s->uref), free(s->ulim), free(s->ustar), free(s->umargin);
  free(s->aggr), free(s->pmean), free(s->ppeak), free(s->group);
}

static int write_charts(const report *R, FILE *f)
{
  series_data sd;
  memset(&sd, 0, sizeof sd);
  SVG_Mark *marks = malloc((R->n_alerts + R->n_dresses + 1) * sizeof *marks);
  char(*tags)[16] = malloc((R->n_alerts + R->n_dresses + 1) * sizeof *tags);
  char(*titles)[200] = malloc((R->n_alerts + R->n_dresses + 1) * sizeof *titles);
  SVG_Band *bands = malloc((size_t)(R->d.n_folders + 1) * sizeof *bands);
  if (!marks || !tags || !titles || !bands || build_series(R, &sd) != 0) {
    free(marks), free(tags), free(titles), free(bands), free_series(&sd);
    return -1;
  }
  /* x range */
  double x0, x1;
  if (R->multi) {
    x0 = R->total.first_time;
    x1 = R->total.last_time;
    if (!isfinite(x0) || !(x1 > x0)) {
      x0 = isfinite(x0) ? x0 : 0.0;
      x1 = x0 + 3600.0;
    }
    double pad = 0.01 * (x1 - x0);
    x0 -= pad;
    x1 += pad;
  } else {
    double last = 0.0;
    for (size_t i = 0; i < sd.n; i++)
      last = fmax(last, sd.x[i]);
    x0 = 0.0;
    x1 = last + 1.0;
  }
  int nm = 0;
  for (size_t i = 0; i < R->n_dresses && nm < MAX_MARKS; i++, nm++) {
    const SUM_Event *e = &R->d.events[R->dresses[i]];
    snprintf(tags[nm], sizeof tags[0], "D%zu", i + 1);
    snprintf(titles[nm], sizeof titles[0], "D%zu dress after pass %lu: %.150s", i + 1, e->pass, e->message);
    marks[nm] = (SVG_Mark){event_x(R, e, 1), tags[nm], titles[nm], 0};
  }
  for (size_t i = 0; i < R->n_alerts && nm < MAX_MARKS; i++, nm++) {
    const SUM_Event *e = &R->d.events[R->alerts[i].ev];
    snprintf(tags[nm], sizeof tags[0], "A%zu", i + 1);
    snprintf(titles[nm], sizeof titles[0], "A%zu %s raised at pass %lu", i + 1, e->kind, e->pass);
    marks[nm] = (SVG_Mark){event_x(R, e, 0), tags[nm], titles[nm], strcmp(e->severity, "critical") == 0 ? 2 : 1};
  }
  int nb = 0;
  if (R->multi)
    for (int i = 0; i < R->d.n_folders; i++)
      if (isfinite(R->shift[i].first_time))
        bands[nb++] = (SVG_Band){R->shift[i].first_time, R->shift[i].last_time, R->d.folders[i].label};
  struct tm tm;
  time_t t0 = (time_t)(isfinite(x0) ? x0 : 0.0);
  localtime_r(&t0, &tm);
  char xlabel[96];
  if (R->multi)
    snprintf(xlabel, sizeof xlabel, "time of the pass (local time, %s)", tm.tm_zone ? tm.tm_zone : "");
  else
    snprintf(xlabel, sizeof xlabel, "pass number in the shift");

  char lim_name[64], margin_name[64], window_name[64], ref_name[64] = "sharp-wheel reference u_ref";
  snprintf(lim_name, sizeof lim_name, "dulling limit u_ref x %.2f", R->lim.dull_limit);
  snprintf(margin_name, sizeof margin_name, "burn margin u* x %.2f", R->lim.burn_margin);
  snprintf(window_name, sizeof window_name, "window %.4g-%.4g", R->lim.aggr_low, R->lim.aggr_high);
  const SVG_Series energy[] = {
      {"specific energy u", "u", sd.x, sd.u, NULL, sd.n, "#1f4e8c", NULL, 0.0, SVG_CIRCLE, 0},
      {ref_name, "u_ref", sd.x, sd.uref, sd.group, sd.n, "#2e6b2a", NULL, 2.0, SVG_NONE, 0},
      {lim_name, "dull_limit", sd.x, sd.ulim, sd.group, sd.n, "#c05600", "9 4", 2.0, SVG_NONE, 0},
      {"burn threshold u*", "u_star", sd.x, sd.ustar, sd.group, sd.n, "#8e1b1b", "14 3 3 3", 2.0, SVG_NONE, 0},
      {margin_name, "burn_margin", sd.x, sd.umargin, sd.group, sd.n, "#8e1b1b", "2.5 3", 2.2, SVG_NONE, 0},
  };
  const SVG_Series aggr[] = {
      {"aggressiveness", "aggr", sd.x, sd.aggr, NULL, sd.n, "#1f4e8c", NULL, 0.0, SVG_CIRCLE, 0},
  };
  const SVG_Series power[] = { /* the peaks first: the means are drawn over them */
      {"peak net power", "power_peak", sd.x, sd.ppeak, NULL, sd.n, "#c05600", NULL, 0.0, SVG_TRIANGLE, 1},
      {"mean net power", "power_mean", sd.x, sd.pmean, NULL, sd.n, "#1f4e8c", NULL, 0.0, SVG_CIRCLE, 0},
  };
  SVG_Band window = {R->lim.aggr_low, R->lim.aggr_high, window_name};
  long off = tm.tm_gmtoff;
  SVG_Chart charts[3] = {
      {"chart-energy", "Specific energy per pass with the reference, dulling limit and burn threshold", xlabel,
       "specific energy, J/mm\xc2\xb3", CHART_W, CHART_H, x0, x1, R->multi, off, 1, energy, 5, NULL, bands, nb,
       marks, nm},
      {"chart-aggr", "Aggressiveness per pass and the wheel's window", xlabel, "aggressiveness number, dimensionless", CHART_W,
       CHART_H - 40, x0, x1, R->multi, off, 1, aggr, 1, &window, bands, nb, marks, nm},
      {"chart-power", "Net grinding power per pass, mean and peak", xlabel, "net power, W", CHART_W, CHART_H - 40, x0,
       x1, R->multi, off, 1, power, 2, NULL, bands, nb, marks, nm},
  };
  char cap_a[300];
  snprintf(cap_a, sizeof cap_a,
           "with the sharp-wheel reference u_ref of the dress cycle, the dulling limit (u_ref &times; %.2f), the "
           "burn threshold u* and its margin (u* &times; %.2f)",
           R->lim.dull_limit, R->lim.burn_margin);
  char cap_b[160];
  snprintf(cap_b, sizeof cap_b, "and the wheel's window %.4g&ndash;%.4g (hatched)", R->lim.aggr_low, R->lim.aggr_high);
  const char *captions[3][2] = {
      {"(a) Specific energy", cap_a},
      {"(b) Aggressiveness", cap_b},
      {"(c) Net grinding power", "mean and peak of each pass"},
  };
  int downsampled = 0, columns = 0;
  int rc = 0;
  for (int i = 0; i < 3 && rc == 0; i++) {
    fprintf(f, "<figure><figcaption>%s <span>%s</span></figcaption>\n", captions[i][0], captions[i][1]);
    SVG_Result res;
    rc = SVG_WriteChart(f, &charts[i], &res);
    downsampled |= res.downsampled;
    columns = res.columns;
    fputs("</figure>\n", f);
  }
  fputs("<p class=\"note\">Lines of the reference and the limits are drawn per depth of cut, as they depend on it "
        "(rough and finish passes each have their own). Spark-out passes remove nothing: they show in the power "
        "chart only. D: dress, A: alert raised (tables below); hover a marker for its text.</p>\n",
        f);
  if (downsampled)
    fprintf(f,
            "<p class=\"note\" id=\"downsampled\"><b>%zu passes</b> are more than the %d pixel columns of a chart: each "
            "column shows the lowest and the highest value of the passes that fall in it (min/max per pixel "
            "column), so that spikes stay visible and the file stays small. The figures and tables use every "
            "pass.</p>\n",
            sd.n, columns);
  if (nm < (int)(R->n_alerts + R->n_dresses))
    fprintf(f, "<p class=\"note\">Only the first %d dresses and alerts are marked on the charts.</p>\n", MAX_MARKS);
  free(marks), free(tags), free(titles), free(bands), free_series(&sd);
  return rc;
}

static void html_limits(const report *R, FILE *f)
{
  const limits *l = &R->lim;
  if (l->from_config) {
    fprintf(f, "<p class=\"limits\" id=\"limits\" data-source=\"config\">Limits from <code>");
    esc(f, l->config);
    fprintf(f, "</code>, wheel <b>");
    esc(f, l->wheel);
    fprintf(f, "</b>%s: aggressiveness window %.4g&ndash;%.4g, dull limit %.2f, burn margin %.2f.</p>\n",
            l->wheel_named_in_logs ? "" : " (the active wheel: the logs name none the file knows)", l->aggr_low,
            l->aggr_high, l->dull_limit, l->burn_margin);
  } else {
    fprintf(f,
            "<p class=\"limits defaults\" id=\"limits\" data-source=\"defaults\"><b>No configuration given</b> "
            "(<code>--config</code>): the default limits are used: aggressiveness window %.4g&ndash;%.4g, dull limit "
            "%.2f, burn margin %.2f. Give the daemon's configuration for this wheel's own limits.</p>\n",
            l->aggr_low, l->aggr_high, l->dull_limit, l->burn_margin);
  }
}

static void html_figures(const report *R, FILE *f)
{
  const SUM_Summary *s = &R->total;
  char a[48];
  fputs("<section class=\"figures\" id=\"figures\">\n", f);
  tile_begin(f, "Passes", "");
  figure_value(f, "passes", (double)s->passes, 0);
  fputs("</div><div class=\"more\">", f);
  figure_value(f, "passes_depth_known", (double)s->depth_known, 0);
  fputs(" with a known depth &middot; ", f);
  figure_value(f, "spark_out_passes", (double)s->spark_out, 0);
  fputs(" spark-out</div></div>\n", f);

  tile_begin(f, "Removed volume", "");
  figure_value(f, "volume_mm3", s->volume_mm3, 0);
  fputs(" <span class=\"unit\">mm&sup3;</span></div><div class=\"more\">", f);
  figure_value(f, "volume_mm3_mm", s->volume_mm3_mm, 1);
  fputs(" mm&sup3;/mm of width</div></div>\n", f);

  int low = isfinite(s->window_share) && s->window_share < 0.5;
  tile_begin(f, "Inside the window", low ? "warn" : isfinite(s->window_share) ? "ok" : "");
  figure_value(f, "window_share", s->window_share * 100.0, 1);
  fputs(" <span class=\"unit\">%</span></div><div class=\"more\">of ", f);
  figure_value(f, "aggr_passes", (double)s->aggr_passes, 0);
  fprintf(f, " grinding passes &middot; %lu below, %lu above %.4g&ndash;%.4g</div></div>\n", s->below_window,
          s->above_window, s->window.aggr_low, s->window.aggr_high);

  tile_begin(f, "Aggressiveness", "");
  figure_value(f, "aggressiveness_median", s->aggr_median, 2);
  fputs(" <span class=\"unit\">median</span></div><div class=\"more\">mean ", f);
  figure_value(f, "aggressiveness_mean", s->aggr_mean, 2);
  fputs("</div></div>\n", f);

  tile_begin(f, "Specific energy", "");
  figure_value(f, "specific_energy_median_j_mm3", s->u_median, 2);
  fputs(" <span class=\"unit\">J/mm&sup3; median</span></div><div class=\"more\">mean ", f);
  figure_value(f, "specific_energy_mean_j_mm3", s->u_mean, 2);
  fprintf(f, " over %lu passes</div></div>\n", s->u_passes);

  int burn = isfinite(s->burn_ratio_max) && s->burn_ratio_max >= R->lim.burn_margin;
  tile_begin(f, "Highest u / u*", burn ? "warn" : "");
  figure_value(f, "burn_ratio_max", s->burn_ratio_max, 2);
  fprintf(f, "</div><div class=\"more\">burn margin %.2f &middot; peak net power %s W</div></div>\n",
          R->lim.burn_margin, fmt_num(a, sizeof a, s->net_peak_max_w, 0, "&ndash;"));

  tile_begin(f, "Dresses", "");
  figure_value(f, "dresses", (double)s->dresses, 0);
  fputs("</div><div class=\"more\">", f);
  figure_value(f, "closed_cycles", (double)s->closed_cycles, 0);
  fprintf(f, " cycle%s closed &middot; ", plural(s->closed_cycles));
  figure_value(f, "limit_cycles", (double)s->limit_cycles, 0);
  fputs(" reached the dull limit</div></div>\n", f);

  tile_begin(f, "Alerts raised", s->alerts_raised ? "warn" : "ok");
  figure_value(f, "alerts_raised", (double)s->alerts_raised, 0);
  fputs("</div><div class=\"more\">", f);
  if (!s->n_kinds)
    fputs("none", f);
  for (int i = 0; i < s->n_kinds; i++) {
    fprintf(f, "%s<span data-kind=\"", i ? ", " : "");
    esc(f, s->kinds[i].kind);
    fprintf(f, "\" data-value=\"%lu\">", s->kinds[i].raised);
    esc(f, s->kinds[i].kind);
    fprintf(f, " %lu</span>", s->kinds[i].raised);
  }
  fputs("</div></div>\n</section>\n", f);
}

static void html_advice(const report *R, FILE *f)
{
  const SUM_Summary *s = &R->total;
  advice v;
  make_advice(R, &v);
  char a[48], b[48], c[48];
  fputs("<section class=\"advice\" id=\"advice\"><h2>Recommendations</h2><ol>\n<li>", f);
  if (s->limit_cycles > 0) {
    fputs("<b>Dress after about V&prime; = ", f);
    figure_value(f, "limit_v_prime_median_mm3_mm", s->limit_v_prime_median, 0);
    fputs(" mm&sup3;/mm</b> removed per mm of width", f);
    if (isfinite(R->limit_pass_median))
      fprintf(f, " (about %.0f passes after the dress)", R->limit_pass_median);
    fputs(": on wheel <b>", f);
    esc(f, or_unknown(s->wheel));
    fputs("</b> and job <b>", f);
    esc(f, or_unknown(s->job));
    fprintf(f, "</b> the dull ratio reached its limit %.2f at this median V&prime; (%lu of %lu cycle%s",
            R->lim.dull_limit, s->limit_cycles, s->cycles, plural(s->cycles));
    if (s->limit_cycles > 1)
      fprintf(f, "; range %s&ndash;%s mm&sup3;/mm", fmt_num(a, sizeof a, s->limit_v_prime_min, 0, "&ndash;"),
              fmt_num(b, sizeof b, s->limit_v_prime_max, 0, "&ndash;"));
    fputs(").", f);
  } else {
    esc(f, v.dress);
  }
  fputs("</li>\n<li>", f);
  if (isfinite(s->centre_work_speed_mm_min)) {
    fputs("<b>Work speed about ", f);
    figure_value(f, "centre_work_speed_mm_min", s->centre_work_speed_mm_min, 0);
    fprintf(f, " mm/min</b> centres the job in the window %.4g&ndash;%.4g (aggressiveness %.4g) at the usual depth of "
               "cut %s mm (median over %lu passes). The median work speed was ",
            s->window.aggr_low, s->window.aggr_high, s->centre_aggr, fmt_num(a, sizeof a, s->depth_median_mm, 4, "&ndash;"),
            s->centre_passes);
    figure_value(f, "work_speed_median_mm_min", s->work_speed_median_mm_min, 0);
    fprintf(f, " mm/min and %s %% of the grinding passes ran inside the window. Check it with "
               "<code>gritline calc --target-aggr %.4g</code> and against the machine's limits.",
            fmt_num(c, sizeof c, s->window_share * 100.0, 1, "&ndash;"), s->centre_aggr);
  } else {
    esc(f, v.speed);
  }
  fputs("</li>\n", f);
  if (v.burn[0]) {
    fputs("<li>", f);
    esc(f, v.burn);
    fputs("</li>\n", f);
  }
  fputs("</ol></section>\n", f);
}

static void html_tables(const report *R, FILE *f)
{
  const SUM_Data *d = &R->d;
  char a[48], b[48], c[48], t[64];
  if (R->multi) {
    fputs("<section id=\"shifts\"><h2>Shifts</h2><table><thead><tr><th>shift</th><th>start</th><th class=\"n\">passes"
          "</th><th class=\"n\">removed mm&sup3;</th><th class=\"n\">in window %</th><th class=\"n\">dresses</th>"
          "<th class=\"n\">alerts</th><th>figures</th></tr></thead><tbody>\n",
          f);
    for (int i = 0; i < d->n_folders; i++) {
      const SUM_Summary *x = &R->shift[i];
      fputs("<tr><td class=\"nw\">", f);
      esc(f, x->label);
      fprintf(f, "</td><td>%s</td><td class=\"n\">%lu</td><td class=\"n\">%s</td><td class=\"n\">%s</td>"
                 "<td class=\"n\">%lu</td><td class=\"n\">%lu</td><td class=\"small\">%s</td></tr>\n",
              fmt_time(t, sizeof t, x->first_time, "%Y-%m-%d %H:%M"), x->passes,
              fmt_num(a, sizeof a, x->volume_mm3, 0, "&ndash;"), fmt_num(b, sizeof b, x->window_share * 100.0, 1, "&ndash;"),
              x->dresses, x->alerts_raised, R->shift_source[i]);
    }
    fputs("</tbody></table></section>\n", f);
  }

  fputs("<section id=\"cycles\"><h2>Dress cycles</h2>\n", f);
  if (!d->n_cycles) {
    fputs("<p>No dress cycle was closed in these logs (a cycle is written when the dress that ends it comes).</p>\n",
          f);
  } else {
    fprintf(f, "<table><thead><tr><th>cycle</th>%s<th class=\"n\">passes</th><th class=\"n\">V&prime; mm&sup3;/mm</th>"
               "<th class=\"n\">u_ref J/mm&sup3;</th><th class=\"n\">final dull ratio</th><th class=\"n\">G-ratio</th>"
               "<th>begun by</th><th>ended by</th><th class=\"n\">forecast V&prime;</th><th>forecast right</th>"
               "<th class=\"n\">limit reached at V&prime;</th></tr></thead><tbody>\n",
            R->multi ? "<th>shift</th>" : "");
    for (size_t i = 0; i < d->n_cycles; i++) {
      const SUM_Cycle *y = &d->cycles[i];
      if (SUM_CycleRepeatedLater(d, i))
        continue;
      char dtag[32] = "";
      for (size_t k = 0; k < R->n_dresses; k++)
        if (fabs(d->events[R->dresses[k]].time - y->end_time) < 0.002)
          snprintf(dtag, sizeof dtag, " (D%zu)", k + 1);
      fprintf(f, "<tr data-cycle=\"%lu\"><td class=\"tag\">%lu</td>", y->cycle, y->cycle);
      if (R->multi) {
        fputs("<td class=\"nw\">", f);
        esc(f, d->folders[y->folder].label);
        fputs("</td>", f);
      }
      fprintf(f, "<td class=\"n\">%lu</td><td class=\"n\">%s</td><td class=\"n\">%s</td><td class=\"n\">%s</td>",
              y->passes, fmt_num(a, sizeof a, y->v_prime_mm3_mm, 1, "&ndash;"),
              fmt_num(b, sizeof b, y->u_ref_j_mm3, 2, "&ndash;"), fmt_num(c, sizeof c, y->final_ratio, 3, "&ndash;"));
      fprintf(f, "<td class=\"n\">%s</td><td>", fmt_num(a, sizeof a, y->g_ratio, 1, "&ndash;"));
      esc(f, y->started_by);
      fputs("</td><td>", f);
      esc(f, y->ended_by);
      fprintf(f, "%s</td><td class=\"n\">%s</td><td>%s</td><td class=\"n\">%s</td></tr>\n", dtag,
              fmt_num(a, sizeof a, y->forecast_v_prime_mm3_mm, 1, "&ndash;"),
              y->forecast_right < 0 ? "&ndash;" : y->forecast_right ? "yes" : "no",
              fmt_num(b, sizeof b, y->limit_v_prime_mm3_mm, 1, "never"));
    }
    fputs("</tbody></table>\n", f);
  }
  fputs("</section>\n", f);

  fputs("<section id=\"alerts\"><h2>Alerts</h2>\n", f);
  if (!R->n_alerts) {
    fputs("<p>No alert was raised.</p>\n", f);
  } else {
    fprintf(f, "<table><thead><tr><th>tag</th><th>time</th>%s<th class=\"n\">pass</th><th>condition</th>"
               "<th class=\"n\">value</th><th class=\"n\">limit</th><th>cleared</th><th>message</th></tr></thead>"
               "<tbody>\n",
            R->multi ? "<th>shift</th>" : "");
    for (size_t i = 0; i < R->n_alerts && i < MAX_TABLE_ALERTS; i++) {
      const SUM_Event *e = &d->events[R->alerts[i].ev];
      fprintf(f, "<tr class=\"%s\"><td class=\"tag\">A%zu</td><td class=\"n\">%s</td>",
              strcmp(e->severity, "critical") == 0 ? "critical" : "warning", i + 1,
              fmt_time(t, sizeof t, e->time, R->multi ? "%m-%d %H:%M" : "%H:%M:%S"));
      if (R->multi) {
        fputs("<td class=\"nw\">", f);
        esc(f, d->folders[e->folder].label);
        fputs("</td>", f);
      }
      fprintf(f, "<td class=\"n\">%lu</td><td><b>", e->pass);
      esc(f, e->kind);
      fprintf(f, "</b> <span class=\"small\">%s</span></td><td class=\"n\">%s</td><td class=\"n\">%s</td><td>",
              strcmp(e->severity, "critical") == 0 ? "critical" : "", fmt_num(a, sizeof a, e->value, 3, "&ndash;"),
              fmt_num(b, sizeof b, e->limit, 3, "&ndash;"));
      if (R->alerts[i].cleared != SIZE_MAX)
        fprintf(f, "at pass %lu", d->events[R->alerts[i].cleared].pass);
      else
        fputs("<b>still active</b>", f);
      fputs("</td><td class=\"msg\">", f);
      esc(f, e->message);
      fputs("</td></tr>\n", f);
    }
    fputs("</tbody></table>\n", f);
    if (R->n_alerts > MAX_TABLE_ALERTS)
      fprintf(f, "<p class=\"note\">%zu more alerts are in events.csv.</p>\n", R->n_alerts - MAX_TABLE_ALERTS);
  }
  fputs("</section>\n", f);
}

static int write_html(const report *R, FILE *f)
{
  const SUM_Summary *s = &R->total;
  char t0[64], t1[64], t2[64];
  fputs("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
        "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
        "<meta name=\"generator\" content=\"gritline " GRITLINE_VERSION "\">\n<title>",
        f);
  esc(f, or_unknown(s->machine));
  fputs(" &middot; shift report &middot; ", f);
  esc(f, s->label);
  fprintf(f, "</title>\n<style>\n%s</style>\n</head>\n<body>\n", css);

  fputs("<header class=\"top\"><div><div class=\"kicker\">gritline &middot; ", f);
  fputs(R->multi ? "report over several shifts" : "shift report", f);
  fputs("</div>\n<h1 id=\"title\"><span data-field=\"machine\">", f);
  esc(f, or_unknown(s->machine));
  fputs("</span> <span class=\"sub\">&middot; job</span> <span data-field=\"job\">", f);
  esc(f, or_unknown(s->job));
  fputs("</span> <span class=\"sub\">&middot; wheel</span> <span data-field=\"wheel\">", f);
  esc(f, or_unknown(s->wheel));
  fputs("</span></h1>\n<p class=\"meta\">", f);
  if (R->lim.description[0]) {
    esc(f, R->lim.description);
    fputs(" &middot; ", f);
  }
  fprintf(f, "%s <b data-field=\"shift\">", R->multi ? "shifts" : "shift");
  esc(f, s->label);
  fprintf(f, "</b> &middot; passes from %s to %s</p></div>\n",
          fmt_time(t0, sizeof t0, s->first_time, "%Y-%m-%d %H:%M"),
          fmt_time(t1, sizeof t1, s->last_time, "%Y-%m-%d %H:%M %Z"));
  fprintf(f, "<div class=\"stamp\"><b>%s</b>%s</div></header>\n",
          fmt_time(t2, sizeof t2, s->first_time, "%Y-%m-%d"), R->multi ? "first shift" : "shift date");
  html_limits(R, f);
  html_figures(R, f);
  html_advice(R, f);
  fputs("<section id=\"charts\"><h2>Pass by pass</h2>\n", f);
  if (write_charts(R, f) != 0)
    return -1;
  fputs("</section>\n", f);
  html_tables(R, f);
  fprintf(f, "<footer class=\"caution\" id=\"caution\"><b>Caution.</b> %s<br><span class=\"small\">Made by gritline "
             "%s from the logs of %d shift folder%s; figures are defined in docs/report.md. Times in local time "
             "(%s).</span></footer>\n</body>\n</html>\n",
          caution_text, GRITLINE_VERSION, R->d.n_folders, R->d.n_folders == 1 ? "" : "s",
          fmt_time(t0, sizeof t0, s->first_time, "%Z"));
  return 0;
}

/* ------------------------------------------------------------------ output */

static int emit(const report *R, FILE *f)
{
  switch (R->a.format) {
  case OUT_JSON: write_json(R, f); return 0;
  case OUT_TEXT: write_text(R, f); return 0;
  case OUT_HTML: return write_html(R, f);
  }
  return 0;
}

static int write_output(const report *R)
{
  if (!R->a.out || strcmp(R->a.out, "-") == 0) {
    if (emit(R, stdout) != 0) {
      fputs("gritline report: out of memory\n", stderr);
      return EX_OSERR;
    }
    if (fflush(stdout) != 0 || ferror(stdout)) {
      fprintf(stderr, "gritline report: standard output: %s\n", strerror(errno));
      return EX_IOERR;
    }
    return EX_OK;
  }
  const char *out = R->a.out;
  char tmp[4200];
  snprintf(tmp, sizeof tmp, "%s.XXXXXX", out);
  int fd = mkstemp(tmp);
  if (fd < 0) {
    fprintf(stderr, "gritline report: -o %s: %s\n", out, strerror(errno));
    return EX_CANTCREAT;
  }
  FILE *f = fdopen(fd, "w");
  if (!f) {
    fprintf(stderr, "gritline report: -o %s: %s\n", out, strerror(errno));
    close(fd);
    unlink(tmp);
    return EX_CANTCREAT;
  }
  int bad = emit(R, f) != 0;
  int e = ENOMEM;
  if (!bad && (fflush(f) != 0 || ferror(f) || fsync(fd) != 0)) {
    bad = 1;
    e = errno;
  }
  fchmod(fd, 0644);
  if (fclose(f) != 0 && !bad) {
    bad = 1;
    e = errno;
  }
  if (!bad && rename(tmp, out) != 0) {
    bad = 1;
    e = errno;
  }
  if (bad) {
    unlink(tmp);
    fprintf(stderr, "gritline report: -o %s: %s\n", out, strerror(e));
    return EX_CANTCREAT;
  }
  return EX_OK;
}

int RPT_Main(int argc, char **argv)
{
  static report R;
  memset(&R, 0, sizeof R);
  int rc = parse_args(argc, argv, &R.a);
  if (rc == -1)
    return EX_OK;
  if (rc)
    return rc;
  if ((rc = collect_inputs(&R)) == 0 && (rc = load(&R)) == 0 && (rc = resolve_limits(&R)) == 0 &&
      (rc = summarise(&R)) == 0)
    rc = write_output(&R);
  SUM_FreeData(&R.d);
  free(R.in), free(R.shift), free(R.shift_source), free(R.alerts), free(R.dresses);
  return rc;
}
