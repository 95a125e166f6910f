/* recgen.c: writes a synthetic recording (samples.csv) of surface-grinding shifts for the report tests. */
/*
 * usage: recgen OUT.csv START_UNIX HOURS [SEED]
 *
 * Alder Street Works, cell B, surface grinder sg4, wheel cx60-vitrified, job
 * plate-1200 (the machine of conf/demo.conf). Parts of 6 rough passes (0.015
 * mm), 2 finish passes (0.005 mm) and 2 spark-out passes on a 300 mm stroke,
 * in batches at three table speeds (below, inside and above the window
 * 15-20). Specific energy grows with the volume removed since the dress (a
 * dulling wheel); the wheel is dressed (dress counter) after alternately 48
 * and 30 parts, so some cycles reach the dull limit and some do not. A
 * coolant fault on a few parts raises the energy towards the burn threshold,
 * and a 30 s loss of communication leaves a gap. gritline replay turns the
 * recording into the logs the report reads. The model is ours and simple: it
 * only has to give the logs a realistic shape, the tests check the report
 * against the logs, not against this model.
 */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "recording.h"

#define DT 0.4            /* s between polls */
#define WIDTH 40.0        /* mm, grinding width */
#define STROKE 300.0      /* mm of contact per pass */
#define RPM 1200.0        /* 1/min */
#define IDLE_W 2400.0     /* W */

static uint64_t rng = 0x9e3779b97f4a7c15ull;
static double uniform(void)
{
  rng = rng * 6364136223846793005ull + 1442695040888963407ull;
  return (double)(rng >> 11) / 9007199254740992.0;
}
/* Roughly normal noise, standard deviation sd (sum of four uniforms). */
static double noise(double sd) { return (uniform() + uniform() + uniform() + uniform() - 2.0) * sd * 1.732; }

typedef struct gen {
  FILE *f;
  double t;            /* s, UNIX */
  double t_end;        /* s */
  double ds;           /* mm, wheel diameter */
  double dress_count;  /* controller's counter */
  double v_prime;      /* mm^3/mm since the dress */
  double drift;        /* W of idle drift */
  double gap_from, gap_to; /* s: polls fail in between */
  char line[REC_LINE_MAX];
} gen;

static void sample(gen *g, double net_w, double vw, double ae, int grinding)
{
  SMP_Sample s;
  SMP_Clear(&s, g->t);
  if (!(g->t >= g->gap_from && g->t < g->gap_to)) {
    g->drift = 0.995 * g->drift + noise(2.0);
    s.spindle_power_w = IDLE_W + g->drift + net_w + noise(20.0);
    s.spindle_speed_rpm = RPM + noise(0.3);
    s.work_speed_mm_min = vw;
    s.depth_of_cut_mm = ae;
    s.wheel_diameter_mm = g->ds;
    s.dress_count = g->dress_count;
    s.grinding = grinding;
  }
  long n = REC_FormatSample(&s, g->line, sizeof g->line);
  if (n > 0)
    fwrite(g->line, 1, (size_t)n, g->f);
  g->t += DT;
}

static void idle(gen *g, double seconds, double vw, double ae)
{
  for (double end = g->t + seconds; g->t < end;)
    sample(g, 0.0, vw, ae, 0);
}

/* One pass: contact for STROKE / vw, then the reversal. */
static void pass(gen *g, double vw_mm_min, double ae, double fault)
{
  double vs = M_PI * g->ds * RPM / 60000.0;                               /* m/s */
  double vw = vw_mm_min / 60.0;                                           /* mm/s */
  double q = WIDTH * ae * vw;                                             /* mm^3/s */
  double aggr = ae > 0.0 ? 1e6 * (vw / 1000.0 / vs) * sqrt(ae / g->ds) : 0.0;
  double u_sharp = 13.8 + (aggr > 0.0 ? 40.0 / aggr : 0.0);              /* J/mm^3: size effect */
  double dull = 1.0 + 0.35 * pow(g->v_prime / 1500.0, 1.3);
  double net = ae > 0.0 ? u_sharp * dull * fault * q : 120.0 * dull;     /* spark-out: rubbing only */
  double contact = STROKE / vw;
  for (double end = g->t + contact; g->t < end;)
    sample(g, net, vw_mm_min, ae, 1);
  g->v_prime += ae * STROKE;
  g->ds -= 2.0 * (ae * STROKE * WIDTH / 70.0) / (M_PI * g->ds * WIDTH); /* wear at a G-ratio of 70 */
  idle(g, 1.6, vw_mm_min, ae);
}

int main(int argc, char **argv)
{
  if (argc < 4) {
    fputs("usage: recgen OUT.csv START_UNIX HOURS [SEED]\n", stderr);
    return 64;
  }
  gen g;
  memset(&g, 0, sizeof g);
  g.t = strtod(argv[2], NULL);
  g.t_end = g.t + strtod(argv[3], NULL) * 3600.0;
  if (argc > 4)
    rng ^= strtoull(argv[4], NULL, 10) * 0x2545f4914f6cdd1dull;
  g.ds = 400.0;
  g.gap_from = g.t + 2.2 * 3600.0;
  g.gap_to = g.gap_from + 30.0;
  g.f = fopen(argv[1], "w");
  if (!g.f) {
    perror(argv[1]);
    return 73;
  }
  REC_Meta m;
  REC_InitMeta(&m);
  snprintf(m.machine, sizeof m.machine, "sg4");
  m.grinding_width_mm = WIDTH;
  m.wheel_diameter_mm = 400.0;
  m.started = g.t;
  snprintf(m.wheel, sizeof m.wheel, "cx60-vitrified");
  snprintf(m.job, sizeof m.job, "plate-1200");
  long n = REC_FormatHead(&m, g.line, sizeof g.line);
  fwrite(g.line, 1, (size_t)n, g.f);
  n = REC_FormatMark(g.t, "start", "recgen, job plate-1200, wheel cx60-vitrified state=fresh", g.line, sizeof g.line);
  fwrite(g.line, 1, (size_t)n, g.f);

  static const double speeds[] = {2400.0, 4300.0, 5600.0}; /* mm/min: Aggr about 9.7, 17.5, 22.7 (rough) */
  int part = 0, since_dress = 0, cycle = 0;
  idle(&g, 60.0, 0.0, 0.0);
  while (g.t < g.t_end) {
    double vw = speeds[(part / 8) % 3];
    double fault = part % 53 >= 45 && part % 53 < 49 ? 1.45 : 1.0; /* coolant nozzle blocked */
    for (int i = 0; i < 6; i++)
      pass(&g, vw, 0.015, fault);
    for (int i = 0; i < 2; i++)
      pass(&g, vw, 0.005, fault);
    for (int i = 0; i < 2; i++)
      pass(&g, vw, 0.0, fault);
    part++;
    since_dress++;
    idle(&g, 20.0, vw, 0.015);
    if (since_dress == (cycle % 2 ? 30 : 48)) {
      idle(&g, 120.0, 0.0, 0.015);
      g.dress_count += 1.0;
      g.ds -= 0.04;
      g.v_prime = 0.0;
      since_dress = 0;
      cycle++;
      idle(&g, 120.0, 0.0, 0.015);
    }
  }
  n = REC_FormatMark(g.t, "stop", "gritlined stopped", g.line, sizeof g.line);
  fwrite(g.line, 1, (size_t)n, g.f);
  if (fclose(g.f) != 0) {
    perror(argv[1]);
    return 74;
  }
  return 0;
}
