/* main.c: gritline-sim, a simulated surface grinder that serves its values over Modbus TCP. */
#include "faults.h"
#include "model.h"
#include "scenario.h"
#include "server.h"
#include "simtime.h"
#include "truth.h"
#include "writelog.h"

#include <errno.h>
#include <getopt.h>
#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sysexits.h>

#define PROG "gritline-sim"

static volatile sig_atomic_t stop_flag;

static void on_signal(int sig)
{
  (void)sig;
  stop_flag = 1;
}

static void usage(FILE *f)
{
  fprintf(f,
    "usage: " PROG " [OPTION]... SCENARIO.ini\n"
    "A simulated reciprocating surface grinder that serves spindle power, speeds, infeed,\n"
    "wheel diameter and its cycle state over Modbus TCP, and writes the true condition of\n"
    "its wheel (the ground truth) for tests of gritline.\n"
    "\n"
    "  --speed N            sim seconds per real second (default 1)\n"
    "  --epoch UNIX|ISO     start of the run (default: [schedule] epoch, else now); sim time\n"
    "                       is epoch + (now - epoch) * speed, so a restart with the same\n"
    "                       epoch and speed continues the same run\n"
    "  --listen ADDRESS     address to listen on (default 127.0.0.1)\n"
    "  --port N             TCP port (default 5020, 0 = a free port)\n"
    "  --port-file FILE     also write the bound port to FILE\n"
    "  --unit-id N          Modbus unit identifier answered (default: [machine] unit_id)\n"
    "  --truth FILE         one CSV row per completed pass (\"-\" = standard output)\n"
    "  --truth-dresses FILE one CSV row per dress\n"
    "  --truth-only         write the truth up to --until as fast as possible, serve nothing\n"
    "  --until T            end of --truth-only: UNIX, ISO 8601, or +DURATION after the epoch\n"
    "                       (+8h, +90m, +3600)\n"
    "  --write-log FILE     append every write request (accepted or not) to FILE\n"
    "  --fault SPEC         inject a fault, repeatable: KIND[:ARG][@START[+DURATION]]\n"
    "                       KIND: drop silent exception[:CODE] garbage freeze nan inf huge;\n"
    "                       START in sim seconds after the epoch, or +S after start-up\n"
    "  --control FILE       run-time faults: one SPEC per line, re-read when FILE changes\n"
    "  --seed N             seed of the noise (default: [noise] seed)\n"
    "  --check              check the scenario and exit\n"
    "  -h, --help           this help;  -V, --version  the version\n"
    "\n"
    "Output: \"listening on ADDRESS:PORT\" on standard output once serving.\n"
    "Exit: 0 stopped by SIGTERM/SIGINT, 64 usage, 66 scenario unreadable, 69 cannot listen,\n"
    "73 output file cannot be created, 74 write error, 78 bad scenario.\n"
    "\n"
    "Caution: a simulation, not a machine. Never exceed the wheel's marked maximum operating\n"
    "speed; figures and alerts are advisory; follow the machine builder's instructions, local\n"
    "codes and licensed practice.\n");
}

enum {
  OPT_SPEED = 256, OPT_EPOCH, OPT_LISTEN, OPT_PORT, OPT_PORT_FILE, OPT_UNIT, OPT_TRUTH,
  OPT_TRUTH_DRESSES, OPT_TRUTH_ONLY, OPT_UNTIL, OPT_WRITE_LOG, OPT_FAULT, OPT_CONTROL, OPT_SEED,
  OPT_CHECK,
};

static const struct option options[] = {
  { "speed", required_argument, NULL, OPT_SPEED },
  { "epoch", required_argument, NULL, OPT_EPOCH },
  { "listen", required_argument, NULL, OPT_LISTEN },
  { "port", required_argument, NULL, OPT_PORT },
  { "port-file", required_argument, NULL, OPT_PORT_FILE },
  { "unit-id", required_argument, NULL, OPT_UNIT },
  { "truth", required_argument, NULL, OPT_TRUTH },
  { "truth-dresses", required_argument, NULL, OPT_TRUTH_DRESSES },
  { "truth-only", no_argument, NULL, OPT_TRUTH_ONLY },
  { "until", required_argument, NULL, OPT_UNTIL },
  { "write-log", required_argument, NULL, OPT_WRITE_LOG },
  { "fault", required_argument, NULL, OPT_FAULT },
  { "control", required_argument, NULL, OPT_CONTROL },
  { "seed", required_argument, NULL, OPT_SEED },
  { "check", no_argument, NULL, OPT_CHECK },
  { "help", no_argument, NULL, 'h' },
  { "version", no_argument, NULL, 'V' },
  { NULL, 0, NULL, 0 },
};

static int parse_long(const char *text, long lo, long hi, long *v)
{
  char *end = NULL;
  errno = 0;
  long x = strtol(text, &end, 10);
  if (end == text || *end != '\0' || errno != 0 || x < lo || x > hi)
    return -1;
  *v = x;
  return 0;
}

/* Reads the whole scenario file; returns a malloc'd text or NULL with err. */
static char *read_text(const char *path, char *err, size_t errsize)
{
  FILE *f = fopen(path, "r");
  if (f == NULL) {
    snprintf(err, errsize, "%s: %s", path, strerror(errno));
    return NULL;
  }
  char *text = malloc(SIM_TEXT_MAX + 1);
  if (text == NULL) {
    fclose(f);
    snprintf(err, errsize, "%s: out of memory", path);
    return NULL;
  }
  size_t n = fread(text, 1, SIM_TEXT_MAX + 1, f);
  int bad = ferror(f);
  fclose(f);
  if (bad || n > SIM_TEXT_MAX) {
    snprintf(err, errsize, "%s: %s", path, bad ? "read error" : "larger than 1 MiB");
    free(text);
    return NULL;
  }
  text[n] = '\0';
  if (strlen(text) != n) {
    snprintf(err, errsize, "%s: contains a NUL byte, not a text file", path);
    free(text);
    return NULL;
  }
  return text;
}

static int write_port_file(const char *path, int port, char *err, size_t errsize)
{
  char tmp[4096];
  snprintf(tmp, sizeof tmp, "%s.tmp", path);
  FILE *f = fopen(tmp, "w");
  if (f == NULL || fprintf(f, "%d\n", port) < 0 || fclose(f) != 0 || rename(tmp, path) != 0) {
    snprintf(err, errsize, "--port-file %s: %s", path, strerror(errno));
    return -1;
  }
  return 0;
}

int main(int argc, char **argv)
{
  double speed = 1.0;
  const char *epoch_text = NULL, *listen_addr = "127.0.0.1", *port_file = NULL;
  const char *truth_path = NULL, *dress_path = NULL, *until_text = NULL, *write_log_path = NULL;
  const char *control_path = NULL, *seed_text = NULL;
  long port = 5020, unit_id = -1;
  int truth_only = 0, check_only = 0;
  const char *fault_texts[SIM_FAULT_MAX];
  int n_fault_texts = 0;
  char err[600];

  int opt;
  while ((opt = getopt_long(argc, argv, "hV", options, NULL)) != -1) {
    switch (opt) {
    case OPT_SPEED: {
      char *end = NULL;
      speed = strtod(optarg, &end);
      if (end == optarg || *end != '\0' || !isfinite(speed) || speed <= 0.0 || speed > 1.0e6) {
        fprintf(stderr, PROG ": --speed: expected a number > 0 and <= 1e6, got \"%s\"\n", optarg);
        return EX_USAGE;
      }
      break;
    }
    case OPT_EPOCH:
      epoch_text = optarg;
      break;
    case OPT_LISTEN:
      listen_addr = optarg;
      break;
    case OPT_PORT:
      if (parse_long(optarg, 0, 65535, &port) != 0) {
        fprintf(stderr, PROG ": --port: expected 0..65535, got \"%s\"\n", optarg);
        return EX_USAGE;
      }
      break;
    case OPT_PORT_FILE:
      port_file = optarg;
      break;
    case OPT_UNIT:
      if (parse_long(optarg, 0, 255, &unit_id) != 0) {
        fprintf(stderr, PROG ": --unit-id: expected 0..255, got \"%s\"\n", optarg);
        return EX_USAGE;
      }
      break;
    case OPT_TRUTH:
      truth_path = optarg;
      break;
    case OPT_TRUTH_DRESSES:
      dress_path = optarg;
      break;
    case OPT_TRUTH_ONLY:
      truth_only = 1;
      break;
    case OPT_UNTIL:
      until_text = optarg;
      break;
    case OPT_WRITE_LOG:
      write_log_path = optarg;
      break;
    case OPT_FAULT:
      if (n_fault_texts >= SIM_FAULT_MAX) {
        fprintf(stderr, PROG ": --fault: more than %d faults\n", SIM_FAULT_MAX);
        return EX_USAGE;
      }
      fault_texts[n_fault_texts++] = optarg;
      break;
    case OPT_CONTROL:
      control_path = optarg;
      break;
    case OPT_SEED:
      seed_text = optarg;
      break;
    case OPT_CHECK:
      check_only = 1;
      break;
    case 'h':
      usage(stdout);
      return 0;
    case 'V':
      printf(PROG " 0.1.0\n");
      return 0;
    default:
      fprintf(stderr, "Try '" PROG " --help'.\n");
      return EX_USAGE;
    }
  }
  if (optind != argc - 1) {
    fprintf(stderr, PROG ": %s; try '" PROG " --help'\n",
            optind >= argc ? "a scenario file is needed" : "only one scenario file is taken");
    return EX_USAGE;
  }
  if (until_text != NULL && !truth_only) {
    fprintf(stderr, PROG ": --until: only with --truth-only\n");
    return EX_USAGE;
  }
  if (truth_only && until_text == NULL) {
    fprintf(stderr, PROG ": --truth-only: needs --until\n");
    return EX_USAGE;
  }
  if (truth_only && truth_path == NULL && dress_path == NULL) {
    fprintf(stderr, PROG ": --truth-only: needs --truth or --truth-dresses\n");
    return EX_USAGE;
  }
  SIM_FaultSpec cli_faults[SIM_FAULT_MAX];
  for (int i = 0; i < n_fault_texts; i++) {
    if (SIM_FaultParse(fault_texts[i], &cli_faults[i], err, sizeof err) != 0) {
      fprintf(stderr, PROG ": --fault: %s\n", err);
      return EX_USAGE;
    }
  }

  const char *scenario_path = argv[optind];
  char *text = read_text(scenario_path, err, sizeof err);
  if (text == NULL) {
    fprintf(stderr, PROG ": %s\n", err);
    return EX_NOINPUT;
  }
  static SIM_Scenario sc;
  SIM_ScenarioDefaults(&sc);
  int rc = SIM_ScenarioParse(text, scenario_path, &sc, err, sizeof err);
  free(text);
  if (rc != 0) {
    fprintf(stderr, "%s\n", err);
    return EX_CONFIG;
  }
  if (seed_text != NULL) {
    char *end = NULL;
    errno = 0;
    unsigned long long seed = strtoull(seed_text, &end, 10);
    if (end == seed_text || *end != '\0' || *seed_text == '-' || errno != 0) {
      fprintf(stderr, PROG ": --seed: expected an unsigned integer, got \"%s\"\n", seed_text);
      return EX_USAGE;
    }
    sc.noise.seed = (uint64_t)seed;
  }
  if (check_only) {
    printf("%s: ok\n", scenario_path);
    return 0;
  }

  int64_t epoch_ms;
  if (epoch_text != NULL) {
    if (SIM_ParseTime(epoch_text, &epoch_ms) != 0) {
      fprintf(stderr, PROG ": --epoch: expected UNIX seconds or ISO 8601, got \"%s\"\n", epoch_text);
      return EX_USAGE;
    }
  } else if (sc.schedule.has_epoch) {
    epoch_ms = sc.schedule.epoch_ms;
  } else {
    epoch_ms = SIM_RealNowNs() / 1000000;
  }

  static SIM_Model model;
  SIM_ModelInit(&model, &sc);
  SIM_Truth truth;
  if (SIM_TruthOpen(&truth, truth_path, dress_path, epoch_ms, err, sizeof err) != 0) {
    fprintf(stderr, PROG ": --truth: %s\n", err);
    return EX_CANTCREAT;
  }

  if (truth_only) {
    double until_s;
    int64_t until_ms;
    if (until_text[0] == '+') {
      if (SIM_ParseDuration(until_text + 1, &until_s) != 0) {
        fprintf(stderr, PROG ": --until: bad duration \"%s\" (+seconds, or with s, m, h, d)\n",
                until_text);
        return EX_USAGE;
      }
    } else if (SIM_ParseTime(until_text, &until_ms) == 0) {
      until_s = (double)(until_ms - epoch_ms) / 1000.0;
    } else {
      fprintf(stderr, PROG ": --until: expected UNIX, ISO 8601 or +DURATION, got \"%s\"\n",
              until_text);
      return EX_USAGE;
    }
    if (SIM_TruthAdvance(&truth, &model, until_s, err, sizeof err) < 0 ||
        SIM_TruthClose(&truth, err, sizeof err) != 0) {
      fprintf(stderr, PROG ": %s\n", err);
      return EX_IOERR;
    }
    return 0;
  }

  static SIM_FaultSet faults;
  SIM_FaultSetInit(&faults);
  int64_t start_ms = SIM_SimTimeMs(epoch_ms, speed, SIM_RealNowNs());
  double t_start = (double)(start_ms - epoch_ms) / 1000.0;
  for (int i = 0; i < sc.n_faults; i++)
    SIM_FaultSetAdd(&faults, &sc.faults[i], t_start, 0);
  for (int i = 0; i < n_fault_texts; i++) {
    if (SIM_FaultSetAdd(&faults, &cli_faults[i], t_start, 0) != 0) {
      fprintf(stderr, PROG ": --fault: more than %d faults with the scenario's\n", SIM_FAULT_MAX);
      return EX_USAGE;
    }
  }
  SIM_WriteLog wlog;
  if (SIM_WriteLogOpen(&wlog, write_log_path, err, sizeof err) != 0) {
    fprintf(stderr, PROG ": --write-log: %s\n", err);
    return EX_CANTCREAT;
  }

  /* Fast-forward before listening, so the first answer does not wait for it. */
  if (SIM_TruthAdvance(&truth, &model, t_start, err, sizeof err) < 0 ||
      SIM_TruthFlush(&truth, err, sizeof err) != 0) {
    fprintf(stderr, PROG ": %s\n", err);
    return EX_IOERR;
  }

  static SIM_Server srv;
  SIM_ServerInit(&srv);
  srv.sc = &sc;
  srv.model = &model;
  srv.truth = &truth;
  srv.faults = &faults;
  srv.write_log = &wlog;
  srv.epoch_ms = epoch_ms;
  srv.speed = speed;
  srv.unit_id = unit_id >= 0 ? (int)unit_id : sc.machine.unit_id;
  srv.control_path = control_path;
  srv.diag = stderr;
  if (SIM_ServerListen(&srv, listen_addr, (int)port, err, sizeof err) != 0) {
    fprintf(stderr, PROG ": --listen/--port: %s\n", err);
    SIM_ServerClose(&srv);
    return EX_UNAVAILABLE;
  }
  if (port_file != NULL && write_port_file(port_file, srv.port, err, sizeof err) != 0) {
    fprintf(stderr, PROG ": %s\n", err);
    SIM_ServerClose(&srv);
    return EX_CANTCREAT;
  }

  struct sigaction sa;
  memset(&sa, 0, sizeof sa);
  sa.sa_handler = on_signal;
  sigemptyset(&sa.sa_mask);
  sigaction(SIGTERM, &sa, NULL);
  sigaction(SIGINT, &sa, NULL);
  signal(SIGPIPE, SIG_IGN);

  char when[40];
  printf("listening on %s\n", srv.bound);
  printf("epoch %lld.%03lld (%s), speed %g, unit %d\n", (long long)(epoch_ms / 1000),
         (long long)(epoch_ms % 1000), SIM_FormatTime(epoch_ms, when, sizeof when), speed,
         srv.unit_id);
  fflush(stdout);

  int status = 0;
  if (SIM_ServerRun(&srv, &stop_flag, err, sizeof err) != 0) {
    fprintf(stderr, PROG ": %s\n", err);
    status = EX_IOERR;
  }
  SIM_ServerClose(&srv);
  SIM_WriteLogClose(&wlog);
  if (SIM_TruthClose(&truth, err, sizeof err) != 0 && status == 0) {
    fprintf(stderr, PROG ": %s\n", err);
    status = EX_IOERR;
  }
  return status;
}
