/* passclose.c: replays a recording through the daemon's pipeline and prints which sample closed each pass and alert, for the live benchmark. */
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <sysexits.h>

#include "conf.h"
#include "monitor.h"
#include "recording.h"

/* The pipeline is deterministic: a replay of the daemon's recording meets
 * every pass and alert at the very sample the daemon met it live (the files
 * come out byte for byte the same). The time of that sample, stamped by the
 * daemon right after its read (timestamp = local), is when the daemon could
 * first know of the pass: the benchmark measures from there to the moment the
 * record reached the disk. */
typedef struct closer {
  double sample_time; /* s, the sample being fed */
} closer;

static void on_pass(void *ctx, const SEG_Pass *p, const CYC_PassInfo *x)
{
  (void)x;
  const closer *c = ctx;
  printf("pass,%lu,%.6f,%.6f\n", p->number, p->end_time, c->sample_time);
}

static void on_event(void *ctx, const PLG_Event *e)
{
  const closer *c = ctx;
  if (e->state == PLG_RAISED || e->state == PLG_CLEARED)
    printf("alert,%s,%s,%lu,%.6f\n", e->kind, PLG_StateName(e->state), e->pass, c->sample_time);
}

int main(int argc, char **argv)
{
  if (argc != 4) {
    fputs("usage: passclose RECORDING CONFIG OUT_DIR\n"
          "Prints pass,NUMBER,END_TIME,CLOSING_SAMPLE_TIME and alert,KIND,STATE,PASS,CLOSING_SAMPLE_TIME.\n",
          stderr);
    return EX_USAGE;
  }
  static CNF_Config cfg;
  char err[800];
  if (CNF_LoadForReplay(&cfg, argv[2], err, sizeof err) != 0) {
    fprintf(stderr, "passclose: %s\n", err);
    return EX_CONFIG;
  }
  closer c = {NAN};
  MON_Options mo = {argv[3], 0, 0.0};
  MON_Sink sink = {&c, on_pass, on_event, NULL};
  MON_Monitor *m = MON_Create(&cfg, &mo, &sink, err, sizeof err);
  if (!m) {
    fprintf(stderr, "passclose: %s\n", err);
    return EX_SOFTWARE;
  }
  REC_Reader r;
  if (REC_Open(&r, argv[1], err, sizeof err) != 0) {
    fprintf(stderr, "passclose: %s\n", err);
    MON_Destroy(m);
    return EX_NOINPUT;
  }
  REC_Item it;
  int got;
  while ((got = REC_Next(&r, &it, err, sizeof err)) == 1) {
    if (it.kind == REC_ITEM_SAMPLE) {
      c.sample_time = it.sample.time;
      MON_Feed(m, &it.sample);
    } else if (it.kind == REC_ITEM_MARK) {
      c.sample_time = it.mark_time;
      MON_Mark(m, it.mark_time, it.mark_kind, it.mark_text);
    }
  }
  REC_Close(&r);
  MON_Destroy(m);
  if (got < 0) {
    fprintf(stderr, "passclose: %s\n", err);
    return EX_IOERR;
  }
  return 0;
}
