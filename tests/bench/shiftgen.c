/* shiftgen.c: writes a realistic recording (samples.csv) of a surface-grinding shift for the benchmarks. */
#include <getopt.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sysexits.h>

#include "recording.h"

/* What the generated machine does. Alder Street Works, cell B, surface grinder
 * sg4, wheel cx60-vitrified, job plate-1200 (conf/demo.conf). The figures are
 * a plausible medium job chosen for the benchmark, not measurements. */
typedef struct gen_conf {
  double hours;              /* h, length of the recording */
  double rate_hz;            /* samples per second */
  double start;              /* UNIX s of the first sample */
  double load_s;             /* s, unload and load between parts */
  int rough, finish, spark;  /* passes per part at each depth */
  double rough_mm, finish_mm; /* mm, depth of cut */
  double table_mm_min;       /* mm/min, table speed vw */
  int dress_every;           /* parts between dresses (0 = never) */
  double dress_s;            /* s, the dress itself */
  double reversal_s;         /* s, table stopped at each reversal */
  long lost_every;           /* samples between lost polls, on average (0 = none) */
  uint64_t seed;             /* noise */
} gen_conf;

/* Fixed geometry of the job and the machine. */
#define WIDTH_MM 40.0        /* b, grinding width (conf/demo.conf plate-1200) */
#define LENGTH_MM 300.0      /* L, workpiece length */
#define OVERRUN_MM 40.0      /* o, at each end of the stroke */
#define RPM 1450.0           /* 1/min, spindle */
#define WHEEL_MM 400.0       /* ds at the start */

/* ---- noise: a counter-based generator, so the output depends on the seed only */

static uint64_t rng_state;

static uint64_t splitmix(void)
{
  uint64_t z = (rng_state += 0x9e3779b97f4a7c15ull);
  z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ull;
  z = (z ^ (z >> 27)) * 0x94d049bb133111ebull;
  return z ^ (z >> 31);
}

static double uniform(void) { return (double)(splitmix() >> 11) / 9007199254740992.0; }

static double gauss(void)
{
  double u = uniform(), v = uniform();
  return sqrt(-2.0 * log(u + 1e-300)) * cos(2.0 * M_PI * v);
}

/* ---- the machine's cycle, walked forward in time ------------------------- */

typedef enum phase { IDLE, LOAD, PASS, DRESS } phase;

typedef struct machine {
  phase ph;
  double ph_start, ph_end;   /* s since the start of the recording */
  int part, pass_in_part;    /* part 1.., pass 0.. within it */
  double ae_mm;              /* depth of the current pass */
  double infeed_mm;          /* axis position */
  double wheel_mm;           /* diameter */
  double v_prime;            /* mm^3/mm removed since the last dress */
  int dress_count;
  double net_w;              /* plateau net power of the current pass */
  double spark_w;            /* net power of spark-out passes (last finishing power * 0.3) */
  long passes;               /* passes begun */
  int dresses;
} machine;

static double stroke_s(const gen_conf *g)
{
  return g->reversal_s + (LENGTH_MM + 2.0 * OVERRUN_MM) / (g->table_mm_min / 60.0);
}

/* Specific energy of a pass, J/mm^3: chip formation, ploughing growing as the
 * chips thin, sliding growing with the wear flat (a wheel that dulls since
 * its last dress). A simple stand-in for the simulator's model, enough for
 * passes that look real. */
static double specific_energy(const machine *m, const gen_conf *g, double ae)
{
  double vw = g->table_mm_min / 60.0;
  double vs = M_PI * m->wheel_mm * RPM / 60.0; /* mm/s */
  double heq = ae * vw / vs;
  double aggr = 1e6 * (vw / vs) * sqrt(ae / m->wheel_mm);
  double wear = 0.01 + 0.05 * (1.0 - exp(-m->v_prime / 4000.0));
  return 13.8 + 1e-4 / heq + 4.0e3 * wear / aggr;
}

static void begin_pass(machine *m, const gen_conf *g, double t)
{
  int k = m->pass_in_part;
  double ae = k < g->rough ? g->rough_mm : k < g->rough + g->finish ? g->finish_mm : 0.0;
  m->ph = PASS;
  m->ph_start = t;
  m->ph_end = t + stroke_s(g);
  m->ae_mm = ae;
  m->infeed_mm += ae; /* the infeed steps at the reversal */
  if (ae > 0.0) {
    m->net_w = specific_energy(m, g, ae) * WIDTH_MM * ae * g->table_mm_min / 60.0;
    if (k >= g->rough)
      m->spark_w = 0.3 * m->net_w;
    m->v_prime += ae * LENGTH_MM;
    m->wheel_mm -= 2.0 * 1e-6 * ae * LENGTH_MM * WIDTH_MM; /* radial wear, G-ratio ~ 80 */
  } else {
    m->net_w = m->spark_w;
  }
  m->passes++;
}

/* The next part is loaded from t0 on. */
static void load_part(machine *m, const gen_conf *g, double t0)
{
  m->ph = LOAD;
  m->ph_start = t0;
  m->ph_end = t0 + g->load_s;
  m->part++;
  m->pass_in_part = 0;
  m->infeed_mm = 0.0;
}

/* Moves the machine to the phase that holds time t. */
static void advance(machine *m, const gen_conf *g, double t)
{
  while (t >= m->ph_end) {
    double t0 = m->ph_end;
    switch (m->ph) {
    case IDLE:
    case DRESS:
      load_part(m, g, t0);
      break;
    case LOAD:
      begin_pass(m, g, t0);
      break;
    case PASS:
      if (++m->pass_in_part < g->rough + g->finish + g->spark) {
        begin_pass(m, g, t0);
      } else if (g->dress_every && m->part % g->dress_every == 0) {
        m->ph = DRESS;
        m->ph_start = t0;
        m->ph_end = t0 + g->dress_s;
        m->dress_count++;
        m->dresses++;
        m->wheel_mm -= 0.04; /* 0.02 mm radial per dress */
        m->v_prime = 0.0;
        m->infeed_mm = 0.0;
      } else {
        load_part(m, g, t0);
      }
      break;
    }
  }
}

/* Idle power: a warm-up that fades, a slow wander, a faster one. */
static double idle_w(double t)
{
  return 1800.0 + 250.0 * exp(-t / 1800.0) + 40.0 * sin(2.0 * M_PI * t / 5400.0) +
         12.0 * sin(2.0 * M_PI * t / 1300.0 + 1.0);
}

/* Fills the sample at time t (s since the start) of the machine. */
static void sample_at(const machine *m, const gen_conf *g, double t, SMP_Sample *s)
{
  double vw = g->table_mm_min / 60.0;
  double net = 0.0, table = 0.0;
  if (m->ph == PASS) {
    double u = t - m->ph_start - g->reversal_s; /* time since the table started */
    if (u >= 0.0) {
      table = g->table_mm_min * (1.0 + 2e-4 * gauss());
      double lg = sqrt(fmax(m->ae_mm, 1e-4) * m->wheel_mm);
      double x = u * vw;                   /* table travel, mm */
      double in = x - (OVERRUN_MM - lg / 2.0); /* how far the contact has run over the work */
      double len = LENGTH_MM + lg;
      if (in > 0.0 && in < len) {
        double ramp = fmin(fmin(in, len - in) / lg, 1.0); /* power ramps over one contact length */
        net = m->net_w * ramp * (1.0 + 0.02 * gauss()); /* 2 % process noise */
      }
    }
  }
  s->time = g->start + t;
  s->spindle_power_w = idle_w(t) + net + 15.0 * gauss();
  s->spindle_speed_rpm = RPM - 0.004 * net + 0.4 * gauss(); /* the spindle droops a little under load */
  s->work_speed_mm_min = table;
  s->infeed_position_mm = m->infeed_mm;
  s->depth_of_cut_mm = NAN; /* not mapped, as in conf/demo.conf */
  s->wheel_diameter_mm = m->wheel_mm;
  s->dress_count = m->dress_count;
  s->grinding = NAN;
}

static const char usage_text[] =
    "usage: shiftgen [--hours H] [--rate HZ] [--load-s S] [--parts-passes R,F,S] [--dress-every N]\n"
    "                [--lost-every N] [--pace F] [--seed N] [--start UNIX] OUT.csv\n"
    "Writes a recording (gritline-samples/1) of a surface grinder: strokes of about 3 s with\n"
    "2 s of contact, infeed steps, parts, dresses, idle warm-up, drift and noise, lost polls.\n"
    "Defaults: 8 h at 100 Hz, 45 s loading, 6 rough, 2 finish, 2 spark-out passes per part,\n"
    "a dress every 200 parts, a lost poll every 100000 samples. --pace F runs the table F times\n"
    "as fast and shortens reversals, loading and dressing F times: F times the passes per hour\n"
    "with the same share of time in contact. Prints a summary to stderr.\n";

int main(int argc, char **argv)
{
  gen_conf g = {8.0, 100.0, 1709618400.0 /* 2024-03-05T06:00:00Z */, 45.0, 6, 2, 2, 0.015, 0.005, 9000.0, 200,
                300.0, 0.5, 100000, 1};
  double pace = 1.0;
  static const struct option opts[] = {
      {"hours", required_argument, NULL, 'H'},        {"rate", required_argument, NULL, 'r'},
      {"load-s", required_argument, NULL, 'l'},       {"parts-passes", required_argument, NULL, 'p'},
      {"dress-every", required_argument, NULL, 'd'},  {"lost-every", required_argument, NULL, 'L'},
      {"seed", required_argument, NULL, 's'},         {"start", required_argument, NULL, 'S'},
      {"pace", required_argument, NULL, 'P'},
      {"help", no_argument, NULL, 'h'},               {NULL, 0, NULL, 0},
  };
  int c;
  while ((c = getopt_long(argc, argv, "h", opts, NULL)) != -1) {
    switch (c) {
    case 'H': g.hours = atof(optarg); break;
    case 'r': g.rate_hz = atof(optarg); break;
    case 'l': g.load_s = atof(optarg); break;
    case 'p':
      if (sscanf(optarg, "%d,%d,%d", &g.rough, &g.finish, &g.spark) != 3 || g.rough < 0 || g.finish < 0 ||
          g.spark < 0 || g.rough + g.finish < 1) {
        fprintf(stderr, "shiftgen: --parts-passes: expected ROUGH,FINISH,SPARK, not \"%s\"\n", optarg);
        return EX_USAGE;
      }
      break;
    case 'd': g.dress_every = atoi(optarg); break;
    case 'L': g.lost_every = atol(optarg); break;
    case 's': g.seed = strtoull(optarg, NULL, 10); break;
    case 'S': g.start = atof(optarg); break;
    case 'P': pace = atof(optarg); break;
    case 'h': fputs(usage_text, stdout); return 0;
    default: fputs(usage_text, stderr); return EX_USAGE;
    }
  }
  if (optind + 1 != argc || !(g.hours > 0.0) || !(g.rate_hz > 0.0) || !(g.load_s >= 0.0) || !(pace > 0.0)) {
    fputs(usage_text, stderr);
    return EX_USAGE;
  }
  g.table_mm_min *= pace;
  g.reversal_s /= pace;
  g.load_s /= pace;
  g.dress_s /= pace;
  const char *path = argv[optind];
  FILE *f = fopen(path, "w");
  if (!f) {
    perror(path);
    return EX_CANTCREAT;
  }
  static char iobuf[1 << 20];
  setvbuf(f, iobuf, _IOFBF, sizeof iobuf);
  rng_state = g.seed * 0x2545f4914f6cdd1dull;

  REC_Meta meta;
  REC_InitMeta(&meta);
  snprintf(meta.machine, sizeof meta.machine, "sg4");
  meta.grinding_width_mm = WIDTH_MM;
  meta.wheel_diameter_mm = WHEEL_MM;
  meta.started = g.start;
  snprintf(meta.wheel, sizeof meta.wheel, "cx60-vitrified");
  snprintf(meta.job, sizeof meta.job, "plate-1200");
  char line[REC_LINE_MAX * 4];
  long n = REC_FormatHead(&meta, line, sizeof line);
  fwrite(line, 1, (size_t)n, f);
  n = REC_FormatMark(g.start, "start", "shiftgen benchmark recording state=fresh", line, sizeof line);
  fwrite(line, 1, (size_t)n, f);

  machine m;
  memset(&m, 0, sizeof m);
  m.ph = IDLE;
  m.ph_end = 20.0; /* the first part is loaded 20 s in */
  m.wheel_mm = WHEEL_MM;
  long count = (long)llround(g.hours * 3600.0 * g.rate_hz);
  long lost = 0, lost_left = 0;
  double period = 1.0 / g.rate_hz;
  for (long i = 0; i < count; i++) {
    /* The poll timer is periodic; the stamp comes after the read, a little late. */
    double t = i * period + 150e-6 * uniform();
    advance(&m, &g, t);
    SMP_Sample s;
    sample_at(&m, &g, t, &s);
    if (lost_left == 0 && g.lost_every > 0 && uniform() * (double)g.lost_every < 1.0)
      lost_left = 1 + (long)(3.0 * uniform()); /* a timeout costs one to three polls */
    if (lost_left > 0) {
      SMP_Clear(&s, s.time);
      lost_left--;
      lost++;
    }
    n = REC_FormatSample(&s, line, sizeof line);
    if (n < 0 || fwrite(line, 1, (size_t)n, f) != (size_t)n) {
      fprintf(stderr, "shiftgen: %s: write failed\n", path);
      fclose(f);
      return EX_IOERR;
    }
  }
  if (fclose(f) != 0) {
    perror(path);
    return EX_IOERR;
  }
  fprintf(stderr, "shiftgen: %s: %ld samples, %ld passes begun, %d parts, %d dresses, %ld lost polls\n", path,
          count, m.passes, m.part, m.dresses, lost);
  return 0;
}
