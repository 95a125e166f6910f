/* status_cmd.c: `gritline status` and `gritline dress`, clients of the daemon's control socket. */
#include "status_cmd.h"

#include <dirent.h>
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sysexits.h>
#include <time.h>
#include <unistd.h>

#include "control.h"
#include "jsonget.h"

#define RUNTIME_DIR "/run/gritline"

static const char status_usage[] =
    "usage: gritline status [--socket PATH] [--watch [SECONDS]] [--json]\n"
    "\n"
    "Shows what gritlined sees now: the connection, the age of the last sample, the\n"
    "pass in progress and the last one, passes and volume since the dress, the dull\n"
    "ratio and its forecast, the active conditions and the latest alerts.\n"
    "\n"
    "  --socket PATH     the daemon's control socket (default: $GRITLINE_SOCKET, else the\n"
    "                    only *.sock in " RUNTIME_DIR ")\n"
    "  --watch [SECONDS] refresh in place every SECONDS (default 1) until interrupted\n"
    "  --json            print the daemon's status object as it is\n"
    "  -h, --help        this text\n"
    "\n"
    "Exit status: 0 shown, 64 usage, 69 the daemon cannot be reached.\n"
    "Caution: alerts are advisory and never replace the machine's own guards.\n";

static const char dress_usage[] =
    "usage: gritline dress [--socket PATH] [--schedule] [--note TEXT]\n"
    "\n"
    "Tells gritlined that the wheel has just been dressed (for machines whose dress\n"
    "counter is not read): the dress cycle closes and a fresh one begins.\n"
    "\n"
    "  --socket PATH   the daemon's control socket (as for gritline status)\n"
    "  --schedule      the dress was a planned one (recorded as trigger \"schedule\";\n"
    "                  otherwise \"operator\")\n"
    "  --note TEXT     a short note kept with the mark (one line)\n"
    "  -h, --help      this text\n"
    "\n"
    "Exit status: 0 marked, 64 usage, 69 the daemon cannot be reached, 65 refused.\n";

/* The socket: given, from the environment, or the only one in the runtime folder. */
static int find_socket(const char *given, char *path, size_t size)
{
  if (given) {
    snprintf(path, size, "%s", given);
    return 0;
  }
  const char *env = getenv("GRITLINE_SOCKET");
  if (env && *env) {
    snprintf(path, size, "%s", env);
    return 0;
  }
  DIR *d = opendir(RUNTIME_DIR);
  int found = 0;
  if (d) {
    struct dirent *e;
    while ((e = readdir(d))) {
      size_t n = strlen(e->d_name);
      if (n > 5 && strcmp(e->d_name + n - 5, ".sock") == 0) {
        if (found++ == 0)
          snprintf(path, size, "%s/%s", RUNTIME_DIR, e->d_name);
      }
    }
    closedir(d);
  }
  if (found == 1)
    return 0;
  fprintf(stderr, "gritline: %s; give --socket PATH\n",
          found ? "several daemons run here (" RUNTIME_DIR " holds several sockets)"
                : "no control socket found in " RUNTIME_DIR);
  return -1;
}

static void fmt_num(char *buf, size_t size, double v, int dec, const char *unit)
{
  if (isfinite(v))
    snprintf(buf, size, "%.*f%s%s", dec, v, *unit ? " " : "", unit);
  else
    snprintf(buf, size, "-");
}

static void clock_text(double t, char *buf, size_t size)
{
  if (!isfinite(t)) {
    snprintf(buf, size, "--:--:--");
    return;
  }
  time_t s = (time_t)t;
  struct tm tm;
  localtime_r(&s, &tm);
  strftime(buf, size, "%H:%M:%S", &tm);
}

static void show(const char *j)
{
  char machine[64] = "", job[64] = "", wheel[64] = "", mode[16] = "", shift[64] = "", conn[8] = "", lost[8] = "";
  char err[300] = "", summary[256] = "", a[64], b[64], c[64], e[64];
  JSG_String(j, "machine", machine, sizeof machine);
  JSG_String(j, "job", job, sizeof job);
  JSG_String(j, "wheel", wheel, sizeof wheel);
  JSG_String(j, "mode", mode, sizeof mode);
  JSG_String(j, "shift", shift, sizeof shift);
  JSG_String(j, "connected", conn, sizeof conn);
  JSG_String(j, "communication_lost", lost, sizeof lost);
  JSG_String(j, "last_error", err, sizeof err);
  JSG_String(j, "summary", summary, sizeof summary);
  double age = JSG_Number(j, "last_sample_age_s");
  fmt_num(a, sizeof a, age, 2, "s");
  printf("%s  job %s, wheel %s  (%s)\n", machine, job, wheel, mode);
  printf("controller  %s; last sample %s ago%s%s\n",
         strcmp(conn, "true") == 0 ? "connected" : "NOT CONNECTED", a, err[0] ? "; last error: " : "", err);
  if (strcmp(lost, "true") == 0)
    printf("            communication lost: no values are coming in\n");
  char inpass[8] = "";
  JSG_String(j, "in_pass", inpass, sizeof inpass);
  fmt_num(a, sizeof a, JSG_Number(j, "live.net_power_w"), 0, "W");
  fmt_num(b, sizeof b, JSG_Number(j, "live.wheel_speed_m_s"), 2, "m/s");
  fmt_num(c, sizeof c, JSG_Number(j, "live.work_speed_mm_min"), 0, "mm/min");
  printf("now         %s; net power %s, wheel %s, work %s\n", strcmp(inpass, "true") == 0 ? "GRINDING" : "idle", a,
         b, c);
  printf("shift       %s: %.0f passes\n", shift[0] ? shift : "-", JSG_Number(j, "passes_shift"));
  double lo = JSG_Number(j, "window.low"), hi = JSG_Number(j, "window.high");
  if (isfinite(JSG_Number(j, "last_pass.pass"))) {
    double ag = JSG_Number(j, "last_pass.aggressiveness");
    fmt_num(a, sizeof a, ag, 1, "");
    fmt_num(b, sizeof b, JSG_Number(j, "last_pass.specific_energy_j_mm3"), 2, "J/mm^3");
    fmt_num(c, sizeof c, JSG_Number(j, "last_pass.net_power_mean_w"), 0, "W");
    fmt_num(e, sizeof e, JSG_Number(j, "last_pass.burn_ratio"), 2, "");
    const char *where = !isfinite(ag) ? "" : ag < lo ? " BELOW the window" : ag > hi ? " ABOVE the window" : " in the window";
    printf("last pass   %.0f: Aggr %s%s %.1f-%.1f; u %s; P %s; u/u* %s\n", JSG_Number(j, "last_pass.pass"), a, where,
           lo, hi, b, c, e);
  } else {
    printf("last pass   none yet\n");
  }
  fmt_num(a, sizeof a, JSG_Number(j, "cycle.volume_mm3_mm"), 0, "mm^3/mm");
  fmt_num(b, sizeof b, JSG_Number(j, "cycle.dull_ratio_smoothed"), 3, "");
  fmt_num(c, sizeof c, JSG_Number(j, "window.dull_limit"), 2, "");
  printf("since dress cycle %.0f: %.0f passes, %s removed; dull ratio %s (limit %s)\n", JSG_Number(j, "cycle.number"),
         JSG_Number(j, "cycle.passes"), a, b, c);
  double left = JSG_Number(j, "cycle.forecast_passes_left");
  fmt_num(a, sizeof a, JSG_Number(j, "cycle.forecast_volume_left_mm3_mm"), 0, "mm^3/mm");
  if (isfinite(left))
    printf("forecast    dulling limit in about %.0f passes (%s)\n", left, a);
  else
    printf("forecast    none yet (needs a rising trend over enough passes)\n");
  printf("conditions  %s\n", summary[0] ? summary : "-");
  int n = JSG_Length(j, "recent_events");
  if (n > 0)
    printf("latest alerts:\n");
  for (int i = n > 5 ? n - 5 : 0; i < n; i++) {
    char path[64], kind[40], state[16], msg[600], when[16];
    snprintf(path, sizeof path, "recent_events.%d.kind", i);
    JSG_String(j, path, kind, sizeof kind);
    snprintf(path, sizeof path, "recent_events.%d.state", i);
    JSG_String(j, path, state, sizeof state);
    snprintf(path, sizeof path, "recent_events.%d.message", i);
    JSG_String(j, path, msg, sizeof msg);
    snprintf(path, sizeof path, "recent_events.%d.time", i);
    clock_text(JSG_Number(j, path), when, sizeof when);
    printf("  %s %s %s: %s\n", when, kind, state, msg);
  }
}

int STC_StatusMain(int argc, char **argv)
{
  static const struct option opts[] = {
      {"socket", required_argument, NULL, 's'}, {"watch", optional_argument, NULL, 'w'},
      {"json", no_argument, NULL, 'j'},         {"help", no_argument, NULL, 'h'},
      {NULL, 0, NULL, 0},
  };
  const char *sock = NULL;
  double watch = 0.0;
  int json = 0, c;
  optind = 1;
  opterr = 0;
  while ((c = getopt_long(argc, argv, ":h", opts, NULL)) != -1) {
    switch (c) {
    case 's': sock = optarg; break;
    case 'j': json = 1; break;
    case 'w': {
      watch = 1.0;
      const char *v = optarg ? optarg : (optind < argc && argv[optind][0] != '-' ? argv[optind++] : NULL);
      if (v) {
        char *end;
        watch = strtod(v, &end);
        if (end == v || *end || !(watch >= 0.1) || !isfinite(watch)) {
          fprintf(stderr, "gritline status: --watch: expected seconds (at least 0.1), not \"%s\"\n", v);
          return EX_USAGE;
        }
      }
      break;
    }
    case 'h': fputs(status_usage, stdout); return EX_OK;
    case ':': fprintf(stderr, "gritline status: %s: missing value\n", argv[optind - 1]); return EX_USAGE;
    default:
      fprintf(stderr, "gritline status: unknown option \"%s\" (see gritline status --help)\n", argv[optind - 1]);
      return EX_USAGE;
    }
  }
  if (optind < argc) {
    fprintf(stderr, "gritline status: unexpected argument \"%s\"\n", argv[optind]);
    return EX_USAGE;
  }
  char path[512];
  if (find_socket(sock, path, sizeof path) != 0)
    return EX_UNAVAILABLE;
  static char reply[CTL_REPLY_MAX];
  int tty = isatty(STDOUT_FILENO);
  for (;;) {
    if (CTL_Request(path, "status", reply, sizeof reply, 5.0) != 0) {
      fprintf(stderr, "gritline status: %s\n", reply);
      return EX_UNAVAILABLE;
    }
    if (strncmp(reply, "error", 5) == 0) {
      fprintf(stderr, "gritline status: the daemon says: %s\n", reply);
      return EX_UNAVAILABLE;
    }
    if (watch > 0.0 && tty)
      fputs("\033[H\033[J", stdout);
    if (json)
      puts(reply);
    else
      show(reply);
    fflush(stdout);
    if (watch <= 0.0)
      return EX_OK;
    if (!tty)
      puts("");
    struct timespec ts = {(time_t)watch, (long)((watch - floor(watch)) * 1e9)};
    nanosleep(&ts, NULL);
  }
}

int STC_DressMain(int argc, char **argv)
{
  static const struct option opts[] = {
      {"socket", required_argument, NULL, 's'}, {"schedule", no_argument, NULL, 'S'},
      {"note", required_argument, NULL, 'n'},   {"help", no_argument, NULL, 'h'},
      {NULL, 0, NULL, 0},
  };
  const char *sock = NULL, *note = "";
  int schedule = 0, c;
  optind = 1;
  opterr = 0;
  while ((c = getopt_long(argc, argv, ":h", opts, NULL)) != -1) {
    switch (c) {
    case 's': sock = optarg; break;
    case 'S': schedule = 1; break;
    case 'n': note = optarg; break;
    case 'h': fputs(dress_usage, stdout); return EX_OK;
    case ':': fprintf(stderr, "gritline dress: %s: missing value\n", argv[optind - 1]); return EX_USAGE;
    default:
      fprintf(stderr, "gritline dress: unknown option \"%s\" (see gritline dress --help)\n", argv[optind - 1]);
      return EX_USAGE;
    }
  }
  if (optind < argc) {
    fprintf(stderr, "gritline dress: unexpected argument \"%s\"\n", argv[optind]);
    return EX_USAGE;
  }
  if (strchr(note, '\n') || strlen(note) > 180) {
    fprintf(stderr, "gritline dress: --note: one line of at most 180 characters\n");
    return EX_USAGE;
  }
  char path[512], request[256], reply[512];
  if (find_socket(sock, path, sizeof path) != 0)
    return EX_UNAVAILABLE;
  snprintf(request, sizeof request, "dress %s%s%s", schedule ? "schedule" : "operator", *note ? " " : "", note);
  if (CTL_Request(path, request, reply, sizeof reply, 5.0) != 0) {
    fprintf(stderr, "gritline dress: %s\n", reply);
    return EX_UNAVAILABLE;
  }
  if (strncmp(reply, "ok", 2) != 0) {
    fprintf(stderr, "gritline dress: the daemon refused: %s\n", reply);
    return EX_DATAERR;
  }
  puts("dress marked: a fresh dress cycle begins");
  return EX_OK;
}
