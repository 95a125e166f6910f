/* replay.c: `gritline replay`: feeds recordings through the daemon's own
 * pipeline (daemon/monitor.c, linked, not copied). */
#include "replay.h"

#include <errno.h>
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sysexits.h>
#include <time.h>
#include <unistd.h>
#include <poll.h>
#include <sys/stat.h>
#include <dirent.h>

#include "conf.h"
#include "control.h"
#include "monitor.h"
#include "recording.h"
#include "statusjson.h"

#define MAX_FILES 256
#define MAX_SETS 64
#define MAX_ALERTS 4096

static const char usage_text[] =
    "usage: gritline replay RECORDING... [--config FILE] [--set SECTION.KEY=VALUE]...\n"
    "                       [--speed N|max] [--socket PATH] [--out DIR] [--skip-bad]\n"
    "                       [--compare FILE2]\n"
    "\n"
    "Feeds recordings (samples.csv) through the daemon's own analysis and writes\n"
    "passes.csv, events.csv and dress_cycles.csv under DIR/<machine>/<date>_<shift>/,\n"
    "as the daemon would have. Same input and configuration, same bytes out.\n"
    "\n"
    "  RECORDING...       samples.csv files; they are replayed in the order of their\n"
    "                     'started' metadata (a shift split by restarts, several shifts)\n"
    "  --config FILE      gritlined's configuration (default: machine, geometry and wheel\n"
    "                     from the first recording's metadata, everything else default)\n"
    "  --set S.K=V        override one key, e.g. --set wheel.dull_limit=1.2 (wheel and job\n"
    "                     mean the active ones); repeatable; for what-if questions\n"
    "  --speed N|max      max (default): as fast as the processor allows; N: N times real\n"
    "                     time, to watch it live with gritline status --socket PATH\n"
    "  --socket PATH      serve the control socket while replaying (default with --speed N:\n"
    "                     DIR/replay.sock; none at max speed)\n"
    "  --out DIR          where the logs go (default ./replay); refused when DIR/<machine>\n"
    "                     already holds logs (a replay would append to them)\n"
    "  --skip-bad         skip malformed lines (counted and reported) instead of stopping\n"
    "  --compare FILE2    also replay under the configuration FILE2 (with the same --set\n"
    "                     keys) and print the alerts that differ and by how many passes;\n"
    "                     the second run's logs go to DIR/compare/\n"
    "  -h, --help         this text\n"
    "\n"
    "An incomplete last line (a crash mid-write) is reported with its line number and\n"
    "skipped. Any other malformed line stops the replay with file:line:column, unless\n"
    "--skip-bad is given.\n"
    "Exit status: 0 done, 64 usage, 65 malformed recording, 66 recording unreadable,\n"
    "73 output cannot be written, 78 bad configuration.\n"
    "\n"
    "Caution: replayed alerts and advice are advisory, like the live ones; never exceed the\n"
    "wheel's marked maximum operating speed; follow the machine builder's instructions,\n"
    "local codes and licensed practice.\n";

typedef struct alert {
  char kind[32];       /* condition */
  unsigned long pass;  /* pass number at which it was raised (0 = none) */
  double time;         /* s */
  char shift[40];      /* shift folder */
} alert;

typedef struct replay_run {
  alert alerts[MAX_ALERTS];
  int n_alerts;
  unsigned long passes;
  unsigned long events;
  int io_failed;
  MON_Monitor *mon;
  const CNF_Config *cfg;   /* for the status of a paced replay */
  double now;              /* time of the latest sample */
  unsigned long samples, failed;
} replay_run;

typedef struct replay_args {
  const char *files[MAX_FILES];
  int n_files;
  const char *config;
  const char *sets[MAX_SETS];
  int n_sets;
  double speed;  /* 0 = max */
  const char *out;
  int skip_bad;
  const char *compare;
  REC_Reader first;   /* a lone recording stays open from its metadata to its end: it may be a pipe */
  int first_open;
  const char *socket; /* control socket while replaying, NULL = none */
} replay_args;

static void on_pass(void *ctx, const SEG_Pass *p, const CYC_PassInfo *x)
{
  (void)p;
  (void)x;
  ((replay_run *)ctx)->passes++;
}

static void on_event(void *ctx, const PLG_Event *e)
{
  replay_run *r = ctx;
  r->events++;
  if (e->state != PLG_RAISED || r->n_alerts == MAX_ALERTS)
    return;
  alert *a = &r->alerts[r->n_alerts++];
  snprintf(a->kind, sizeof a->kind, "%s", e->kind);
  a->pass = e->pass;
  a->time = e->time;
  MON_Status st;
  MON_GetStatus(r->mon, &st);
  snprintf(a->shift, sizeof a->shift, "%s", st.shift);
  if (!a->pass)
    a->pass = st.last_pass.number;
}

static void on_io_error(void *ctx, const char *message)
{
  ((replay_run *)ctx)->io_failed = 1;
  fprintf(stderr, "gritline replay: %s\n", message);
}

static int usage(const char *fmt, const char *arg)
{
  fputs("gritline replay: ", stderr);
  fprintf(stderr, fmt, arg);
  fputs(" (see gritline replay --help)\n", stderr);
  return EX_USAGE;
}

static int parse_args(int argc, char **argv, replay_args *a)
{
  static const struct option opts[] = {
      {"config", required_argument, NULL, 'c'}, {"set", required_argument, NULL, 's'},
      {"speed", required_argument, NULL, 'S'},  {"out", required_argument, NULL, 'o'},
      {"skip-bad", no_argument, NULL, 'k'},     {"compare", required_argument, NULL, 'C'},
      {"socket", required_argument, NULL, 'K'},
      {"help", no_argument, NULL, 'h'},         {NULL, 0, NULL, 0},
  };
  memset(a, 0, sizeof *a);
  a->out = "replay";
  optind = 1;
  opterr = 0;
  int c;
  while ((c = getopt_long(argc, argv, ":c:o:h", opts, NULL)) != -1) {
    switch (c) {
    case 'c': a->config = optarg; break;
    case 'o': a->out = optarg; break;
    case 'k': a->skip_bad = 1; break;
    case 'C': a->compare = optarg; break;
    case 'K': a->socket = optarg; break;
    case 's':
      if (a->n_sets == MAX_SETS)
        return usage("--set: at most %s times", "64");
      a->sets[a->n_sets++] = optarg;
      break;
    case 'S':
      if (strcmp(optarg, "max") == 0) {
        a->speed = 0.0;
      } else {
        char *end;
        a->speed = strtod(optarg, &end);
        if (end == optarg || *end || !(a->speed > 0.0) || !isfinite(a->speed))
          return usage("--speed: expected a positive number or max, not \"%s\"", optarg);
      }
      break;
    case 'h': fputs(usage_text, stdout); return -1;
    case ':': return usage("%s: missing value", argv[optind - 1]);
    default: return usage("unknown option \"%s\"", argv[optind - 1]);
    }
  }
  for (int i = optind; i < argc; i++) {
    if (a->n_files == MAX_FILES)
      return usage("at most %s recordings at once", "256");
    a->files[a->n_files++] = argv[i];
  }
  if (a->n_files == 0)
    return usage("no recording given%s", "");
  return 0;
}

typedef struct opened {
  const char *path;
  double started;
} opened;

static int by_start(const void *x, const void *y)
{
  const opened *a = x, *b = y;
  if (a->started < b->started)
    return -1;
  return a->started > b->started;
}

/* Orders the recordings by their 'started' metadata; checks they open. */
static int order_files(replay_args *a, REC_Meta *first)
{
  opened o[MAX_FILES];
  char err[700];
  if (a->n_files == 1) {
    /* Nothing to order: opened once, so a FIFO or /dev/stdin is read from its start. */
    if (REC_Open(&a->first, a->files[0], err, sizeof err) != 0) {
      fprintf(stderr, "gritline replay: %s\n", err);
      return errno == ENOENT || errno == EACCES ? EX_NOINPUT : EX_DATAERR;
    }
    a->first_open = 1;
    *first = a->first.meta;
    return 0;
  }
  for (int i = 0; i < a->n_files; i++) {
    REC_Reader r;
    if (REC_Open(&r, a->files[i], err, sizeof err) != 0) {
      fprintf(stderr, "gritline replay: %s\n", err);
      return errno == ENOENT || errno == EACCES ? EX_NOINPUT : EX_DATAERR;
    }
    o[i].path = a->files[i];
    o[i].started = isnan(r.meta.started) ? 0.0 : r.meta.started;
    if (i == 0)
      *first = r.meta;
    REC_Close(&r);
  }
  qsort(o, (size_t)a->n_files, sizeof o[0], by_start);
  for (int i = 0; i < a->n_files; i++)
    a->files[i] = o[i].path;
  REC_Reader r;
  if (REC_Open(&r, a->files[0], err, sizeof err) == 0) {
    *first = r.meta;
    REC_Close(&r);
  }
  return 0;
}

static int make_config(const replay_args *a, const char *file, const REC_Meta *meta, CNF_Config *cfg)
{
  char err[700];
  int rc = file ? CNF_LoadForReplay(cfg, file, err, sizeof err) : CNF_FromRecording(cfg, meta, err, sizeof err);
  if (rc != 0) {
    fprintf(stderr, "gritline replay: %s\n", err);
    return EX_CONFIG;
  }
  for (int i = 0; i < a->n_sets; i++)
    if (CNF_Set(cfg, a->sets[i], err, sizeof err) != 0) {
      fprintf(stderr, "gritline replay: --set %s\n", err);
      return EX_USAGE;
    }
  if (a->n_sets && CNF_Recheck(cfg, 1, err, sizeof err) != 0) {
    fprintf(stderr, "gritline replay: after --set: %s\n", err);
    return EX_CONFIG;
  }
  return 0;
}

static double mono(void)
{
  struct timespec now;
  clock_gettime(CLOCK_MONOTONIC, &now);
  return now.tv_sec + now.tv_nsec * 1e-9;
}

static long replay_status(void *ctx, char *buf, size_t size)
{
  replay_run *r = ctx;
  STJ_Link link = {1, r->now, r->samples, r->failed, "", "replay"};
  return STJ_Format(r->cfg, r->mon, &link, buf, size);
}

static int replay_dress(void *ctx, const char *trigger, const char *note, char *why, size_t whylen)
{
  (void)ctx;
  (void)trigger;
  (void)note;
  snprintf(why, whylen, "a replay follows the recording's own dress marks");
  return -1;
}

/* Waits until sample time t is due at `speed` times real time, answering
 * the control socket meanwhile. */
static void pace(double speed, double t, double *t0_data, double *t0_wall, CTL_Server *ctl)
{
  double wall = mono();
  if (isnan(*t0_data)) {
    *t0_data = t;
    *t0_wall = wall;
    return;
  }
  double due = *t0_wall + (t - *t0_data) / speed;
  while ((wall = mono()) < due) {
    struct pollfd fds[1 + CTL_MAX_CLIENTS];
    int n = CTL_PollFds(ctl, fds, 1 + CTL_MAX_CLIENTS);
    int ms = (int)ceil((due - wall) * 1000.0);
    if (n == 0) {
      double d = due - wall;
      struct timespec ts = {(time_t)d, (long)((d - floor(d)) * 1e9)};
      nanosleep(&ts, NULL);
      return;
    }
    if (poll(fds, (nfds_t)n, ms) > 0)
      CTL_Handle(ctl, fds, n, mono());
  }
}

/* One run over every file; returns a sysexits code. */
static int run(replay_args *a, const CNF_Config *cfg, const char *out, replay_run *r)
{
  char err[800];
  MON_Options mo = {out, 0, 0.0};
  MON_Sink sink = {r, on_pass, on_event, on_io_error};
  r->mon = MON_Create(cfg, &mo, &sink, err, sizeof err);
  if (!r->mon) {
    fprintf(stderr, "gritline replay: %s\n", err);
    return EX_SOFTWARE;
  }
  int rc = EX_OK, tty = isatty(STDERR_FILENO);
  unsigned long skipped = 0, samples = 0;
  double t0_data = NAN, t0_wall = NAN;
  r->cfg = cfg;
  static CTL_Server ctl;
  ctl.fd = -1;
  if (a->socket) {
    CTL_Handler h = {r, replay_status, replay_dress};
    if (CTL_Open(&ctl, a->socket, 0660, &h, err, sizeof err) != 0) {
      fprintf(stderr, "gritline replay: --socket: %s\n", err);
      MON_Destroy(r->mon);
      return EX_CANTCREAT;
    }
  }
  for (int i = 0; i < a->n_files && rc == EX_OK; i++) {
    REC_Reader rd;
    if (i == 0 && a->first_open) {
      rd = a->first;
      a->first_open = 0;
    } else if (REC_Open(&rd, a->files[i], err, sizeof err) != 0) {
      fprintf(stderr, "gritline replay: %s\n", err);
      rc = EX_DATAERR;
      break;
    }
    REC_Item it;
    int got;
    while ((got = REC_Next(&rd, &it, err, sizeof err)) == 1) {
      if (it.kind == REC_ITEM_SAMPLE) {
        if (a->speed > 0.0)
          pace(a->speed, it.sample.time, &t0_data, &t0_wall, &ctl);
        r->now = it.sample.time;
        r->samples++;
        if (SMP_IsEmpty(&it.sample))
          r->failed++;
        if (MON_Feed(r->mon, &it.sample) != 0 && r->io_failed) {
          rc = EX_CANTCREAT;
          break;
        }
        if (tty && ++samples % 500000 == 0)
          fprintf(stderr, "\r%s: %lu samples, %lu passes", a->files[i], samples, r->passes);
      } else if (it.kind == REC_ITEM_MARK) {
        MON_Mark(r->mon, it.mark_time, it.mark_kind, it.mark_text);
      } else if (it.kind == REC_ITEM_TORN) {
        fprintf(stderr, "gritline replay: %s; skipped\n", err);
      } else if (a->skip_bad) {
        skipped++;
        if (skipped <= 10)
          fprintf(stderr, "gritline replay: %s; skipped\n", err);
      } else {
        fprintf(stderr, "gritline replay: %s\n", err);
        rc = EX_DATAERR;
        break;
      }
    }
    if (got < 0) {
      fprintf(stderr, "gritline replay: %s\n", err);
      rc = EX_IOERR;
    }
    REC_Close(&rd);
  }
  if (tty && samples >= 500000)
    fputc('\n', stderr);
  if (skipped)
    fprintf(stderr, "gritline replay: %lu malformed lines skipped\n", skipped);
  CTL_Close(&ctl);
  MON_Destroy(r->mon);
  r->mon = NULL;
  if (rc == EX_OK && r->io_failed)
    rc = EX_CANTCREAT;
  return rc;
}

/* A replay continues the logs it finds, as the daemon does after a restart:
 * into a folder that already holds a machine's logs it would append a second
 * copy of every pass. Returns 0 when out/machine is absent or empty. */
static int out_taken(const char *out, const char *machine)
{
  char path[1200];
  snprintf(path, sizeof path, "%s/%s", out, machine);
  DIR *d = opendir(path);
  if (!d)
    return 0;
  int taken = 0;
  struct dirent *e;
  while (!taken && (e = readdir(d)) != NULL)
    taken = strcmp(e->d_name, ".") != 0 && strcmp(e->d_name, "..") != 0;
  closedir(d);
  if (taken)
    fprintf(stderr,
            "gritline replay: --out %s: %s already holds logs of an earlier run, which a replay would append "
            "to; remove it or give another --out\n",
            out, path);
  return taken;
}

static void print_alerts(const replay_run *a, const replay_run *b, const char *name_a, const char *name_b)
{
  int differ = 0;
  int used[MAX_ALERTS] = {0};
  printf("alerts raised: %d under %s, %d under %s\n", a->n_alerts, name_a, b->n_alerts, name_b);
  for (int i = 0; i < a->n_alerts; i++) {
    int match = -1;
    for (int k = 0; k < b->n_alerts; k++)
      if (!used[k] && strcmp(a->alerts[i].kind, b->alerts[k].kind) == 0 &&
          strcmp(a->alerts[i].shift, b->alerts[k].shift) == 0) {
        match = k;
        break;
      }
    if (match < 0) {
      printf("  %s at pass %lu (%s): only under %s\n", a->alerts[i].kind, a->alerts[i].pass, a->alerts[i].shift,
             name_a);
      differ++;
      continue;
    }
    used[match] = 1;
    long d = (long)b->alerts[match].pass - (long)a->alerts[i].pass;
    if (d != 0) {
      printf("  %s: pass %lu under %s, pass %lu under %s (%+ld passes)\n", a->alerts[i].kind, a->alerts[i].pass,
             name_a, b->alerts[match].pass, name_b, d);
      differ++;
    }
  }
  for (int k = 0; k < b->n_alerts; k++)
    if (!used[k]) {
      printf("  %s at pass %lu (%s): only under %s\n", b->alerts[k].kind, b->alerts[k].pass, b->alerts[k].shift,
             name_b);
      differ++;
    }
  if (!differ)
    printf("  no difference\n");
}

int RPL_Main(int argc, char **argv)
{
  static replay_args a;
  int rc = parse_args(argc, argv, &a);
  if (rc == -1)
    return EX_OK;
  if (rc)
    return rc;
  REC_Meta meta;
  if ((rc = order_files(&a, &meta)) != 0)
    return rc;
  static CNF_Config cfg;
  if ((rc = make_config(&a, a.config, &meta, &cfg)) != 0)
    return rc;
  static CNF_Config cfg2;
  if (a.compare && (rc = make_config(&a, a.compare, &meta, &cfg2)) != 0)
    return rc;
  char out2[1024];
  snprintf(out2, sizeof out2, "%s/compare", a.out);
  if (out_taken(a.out, cfg.machine) || (a.compare && out_taken(out2, cfg2.machine)))
    return EX_CANTCREAT;
  static char sock[1024];
  if (!a.socket && a.speed > 0.0) {
    snprintf(sock, sizeof sock, "%s/replay.sock", a.out);
    char mk[1100];
    snprintf(mk, sizeof mk, "%s", a.out);
    mkdir(mk, 0755); /* the socket's folder; the logs go below it anyway */
    a.socket = sock;
  }
  static replay_run first, second;
  memset(&first, 0, sizeof first);
  rc = run(&a, &cfg, a.out, &first);
  if (rc != EX_OK)
    return rc;
  if (!a.compare) {
    fprintf(stderr, "gritline replay: %lu passes, %lu events, logs in %s/%s/\n", first.passes, first.events, a.out,
            cfg.machine);
    return EX_OK;
  }
  memset(&second, 0, sizeof second);
  if ((rc = run(&a, &cfg2, out2, &second)) != EX_OK)
    return rc;
  print_alerts(&first, &second, a.config ? a.config : "the recording's metadata", a.compare);
  return EX_OK;
}
