/* fuzz_conf.c: libFuzzer target for the configuration parser: CNF_Load, CNF_LoadForReplay, CNF_Set. */
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "conf.h"
#include "fuzzcheck.h"

/* The input is a configuration file. After a line "%%" come CNF_Set
 * assignments ("wheel.dull_limit=1.2"), one a line, applied to the
 * configuration read, or to base_conf when the file is refused, as
 * `gritline replay --set` applies them. */

static const char base_conf[] =
    "[machine]\nname = sg4\njob = plate-1200\nwheel = cx60-vitrified\n"
    "[channel.spindle_power]\naddress = 4\ntype = f32\nunit = W\n"
    "[channel.spindle_speed]\naddress = 6\ntype = f32\nunit = rpm\n"
    "[job.plate-1200]\ngeometry = surface\nwidth_mm = 40\n"
    "[wheel.cx60-vitrified]\ndiameter_mm = 400\nmax_speed_m_s = 35\n"
    "[wheel.wa46-soft]\ndiameter_mm = 350\nmax_speed_m_s = 35\n";

static int file_fd = -1;
static char file_path[64], base_path[64];
static FILE *sink;
static CNF_Config cfg, saved; /* large: kept out of the stack */

static void setup(void)
{
  file_fd = FZ_OpenMemFile("fuzz-conf", file_path, sizeof file_path);
  int base_fd = FZ_OpenMemFile("fuzz-conf-base", base_path, sizeof base_path);
  FZ_Rewrite(base_fd, base_conf, sizeof base_conf - 1);
  sink = fopen("/dev/null", "w");
  if (!sink)
    FZ_Fail("cannot open /dev/null");
}

/* What a loaded configuration promises the daemon. */
static void check_loaded(const CNF_Config *c, int replay)
{
  if (!c->job || !c->wheel)
    FZ_Fail("loaded without an active job or wheel");
  if (strcmp(c->job->name, c->job_name) != 0 || strcmp(c->wheel->name, c->wheel_name) != 0)
    FZ_Fail("active job or wheel is not the one named in [machine]");
  if (c->n_jobs < 1 || c->n_jobs > CNF_MAX_JOBS || c->n_wheels < 1 || c->n_wheels > CNF_MAX_WHEELS)
    FZ_Fail("job or wheel count out of range");
  if (!replay) {
    RMP_Plan plan;
    char why[256];
    if (RMP_MakePlan(&c->map, &plan, why, sizeof why) != 0)
      FZ_Fail("accepted a register map that cannot be planned: %s", why);
  }
  CND_Settings cs;
  CNF_CondSettings(c, &cs);
  SEG_Config seg;
  CNF_SegConfig(c, &seg);
  CNF_Print(c, sink);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
  if (file_fd < 0)
    setup();
  const uint8_t *sep = size >= 4 ? memmem(data, size, "\n%%\n", 4) : NULL;
  size_t file_len = sep ? (size_t)(sep - data) + 1 : size;
  FZ_Rewrite(file_fd, data, file_len);

  char err[512];
  int daemon_ok = CNF_Load(&cfg, file_path, err, sizeof err) == 0;
  if (daemon_ok)
    check_loaded(&cfg, 0);
  else
    FZ_CheckMessage("CNF_Load", err, sizeof err, file_path);

  int replay_ok = CNF_LoadForReplay(&cfg, file_path, err, sizeof err) == 0;
  if (replay_ok)
    check_loaded(&cfg, 1);
  else
    FZ_CheckMessage("CNF_LoadForReplay", err, sizeof err, file_path);
  if (daemon_ok && !replay_ok)
    FZ_Fail("a file gritlined accepts is refused for a replay: %s", err);
  if (!sep)
    return 0;

  if (!replay_ok && CNF_LoadForReplay(&cfg, base_path, err, sizeof err) != 0)
    FZ_Fail("the base configuration is refused: %s", err);
  size_t rest = size - file_len - 3;
  char *text = malloc(rest + 1);
  if (!text)
    FZ_Fail("out of memory");
  memcpy(text, sep + 4, rest);
  text[rest] = '\0';
  for (char *line = text, *next; line; line = next) {
    next = strchr(line, '\n');
    if (next)
      *next++ = '\0';
    saved = cfg;
    if (CNF_Set(&cfg, line, err, sizeof err) != 0) {
      FZ_CheckMessage("CNF_Set", err, sizeof err, "");
      cfg = saved;
      continue;
    }
    if (CNF_Recheck(&cfg, 1, err, sizeof err) != 0) {
      FZ_CheckMessage("CNF_Recheck", err, sizeof err, "");
      cfg = saved; /* replay stops here; the fuzzer goes on from the last good one */
      continue;
    }
    check_loaded(&cfg, 1);
  }
  free(text);
  return 0;
}
