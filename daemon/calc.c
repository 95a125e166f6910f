/* calc.c: `gritline calc`, the grinding calculator over the analysis formulas. */
#include "calc.h"

#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sysexits.h>

#include "grind.h"
#include "units.h"

static const char usage_text[] =
    "usage: gritline calc --wheel-diameter D (--wheel-speed V | --rpm N) --work-speed V\n"
    "                     (--depth A | --infeed-rate F) --width B [--geometry G]\n"
    "                     [--workpiece-diameter D] [--target-aggr N] [--max-speed V]\n"
    "                     [--units metric|imperial] [--json] [model options]\n"
    "\n"
    "Computes the grinding figures of one set of conditions.\n"
    "\n"
    "Conditions (metric units; with --units imperial the units in brackets):\n"
    "  --geometry G            surface (default), creep-feed, external, internal, plunge\n"
    "  --wheel-diameter D      wheel diameter ds, mm [in]\n"
    "  --wheel-speed V         wheel surface speed vs, m/s [ft/min]\n"
    "  --rpm N                 spindle speed, 1/min (instead of --wheel-speed)\n"
    "  --work-speed V          work speed vw, mm/min [in/min]: table speed (surface) or\n"
    "                          workpiece surface speed (cylindrical)\n"
    "  --depth A               depth of cut ae per pass, mm [in]; plunge: per work revolution\n"
    "  --infeed-rate F         plunge only: radial infeed rate, mm/min [in/min] (instead of --depth)\n"
    "  --width B               grinding width b, mm [in]; traverse cylindrical: axial feed per\n"
    "                          work revolution\n"
    "  --workpiece-diameter D  workpiece (internal: bore) diameter dw, mm [in]; cylindrical only\n"
    "\n"
    "Questions:\n"
    "  --target-aggr N         also print the work speed (at this depth) and the depth (at this\n"
    "                          work speed) that give aggressiveness N\n"
    "  --max-speed V           the wheel's marked maximum operating speed, m/s [ft/min]: prints\n"
    "                          the highest rpm for this diameter and warns when vs exceeds it\n"
    "\n"
    "Output:\n"
    "  --units metric|imperial units of input and output (default metric)\n"
    "  --json                  print one JSON object instead of text\n"
    "\n"
    "Model options (defaults in brackets, see docs/formulas.md for sources):\n"
    "  --grit-density C        active cutting points per mm^2 [2]\n"
    "  --chip-ratio R          chip width to thickness ratio [15]\n"
    "  --burn-a A              Malkin burn threshold A, J/mm^3 [6.2, steels]\n"
    "  --burn-b B              Malkin burn threshold B [1.76, steels]\n"
    "  -h, --help              this text\n"
    "\n"
    "Figures: de equivalent diameter, lg contact length, Q' specific removal rate, Q removal\n"
    "rate, heq equivalent chip thickness, Aggr aggressiveness number, hm maximum uncut chip\n"
    "thickness, u* workpiece-burn threshold (specific energy above it risks burn).\n"
    "\n"
    "Caution: never exceed the wheel's marked maximum operating speed. These figures are\n"
    "advisory; follow the machine builder's instructions, local codes and licensed practice.\n"
    "\n"
    "Exit status: 0 on success, 64 on a bad or missing argument.\n";

enum opt_id {
  OPT_GEOMETRY = 1000, OPT_WHEEL_DIAMETER, OPT_WHEEL_SPEED, OPT_RPM, OPT_WORK_SPEED, OPT_DEPTH,
  OPT_INFEED_RATE, OPT_WIDTH, OPT_WORKPIECE_DIAMETER, OPT_TARGET_AGGR, OPT_MAX_SPEED, OPT_UNITS,
  OPT_JSON, OPT_GRIT_DENSITY, OPT_CHIP_RATIO, OPT_BURN_A, OPT_BURN_B, OPT_HELP = 'h',
};

static const struct option long_options[] = {
    {"geometry", required_argument, NULL, OPT_GEOMETRY},
    {"wheel-diameter", required_argument, NULL, OPT_WHEEL_DIAMETER},
    {"wheel-speed", required_argument, NULL, OPT_WHEEL_SPEED},
    {"rpm", required_argument, NULL, OPT_RPM},
    {"work-speed", required_argument, NULL, OPT_WORK_SPEED},
    {"depth", required_argument, NULL, OPT_DEPTH},
    {"infeed-rate", required_argument, NULL, OPT_INFEED_RATE},
    {"width", required_argument, NULL, OPT_WIDTH},
    {"workpiece-diameter", required_argument, NULL, OPT_WORKPIECE_DIAMETER},
    {"target-aggr", required_argument, NULL, OPT_TARGET_AGGR},
    {"max-speed", required_argument, NULL, OPT_MAX_SPEED},
    {"units", required_argument, NULL, OPT_UNITS},
    {"json", no_argument, NULL, OPT_JSON},
    {"grit-density", required_argument, NULL, OPT_GRIT_DENSITY},
    {"chip-ratio", required_argument, NULL, OPT_CHIP_RATIO},
    {"burn-a", required_argument, NULL, OPT_BURN_A},
    {"burn-b", required_argument, NULL, OPT_BURN_B},
    {"help", no_argument, NULL, OPT_HELP},
    {NULL, 0, NULL, 0},
};

/* What the user gave, in the units given (NAN = not given). */
struct calc_args {
  GRD_Geometry geometry;
  int imperial;
  int json;
  double ds, vs, rpm, vw, ae, vf, b, dw, target, vmax;
  GRD_Params params;
};

static int usage_error(const char *fmt, const char *a, const char *b)
{
  fputs("gritline calc: ", stderr);
  fprintf(stderr, fmt, a, b);
  fputs(" (see gritline calc --help)\n", stderr);
  return EX_USAGE;
}

/* Parses a number that must be finite; sign rules are checked by the caller. */
static int parse_number(const char *opt, const char *text, double *out)
{
  char *end;
  if (*text == '\0')
    return usage_error("--%s: empty value%s", opt, "");
  double v = strtod(text, &end);
  if (*end != '\0' || !isfinite(v))
    return usage_error("--%s: not a number: \"%s\"", opt, text);
  *out = v;
  return 0;
}

static const char *long_name(int id)
{
  for (const struct option *o = long_options; o->name; o++)
    if (o->val == id)
      return o->name;
  return "?";
}

static int parse_args(int argc, char **argv, struct calc_args *a)
{
  a->geometry = GRD_SURFACE;
  a->imperial = a->json = 0;
  a->ds = a->vs = a->rpm = a->vw = a->ae = a->vf = a->b = a->dw = a->target = a->vmax = NAN;
  GRD_DefaultParams(&a->params);

  optind = 1;
  opterr = 0;
  int c;
  while ((c = getopt_long(argc, argv, ":h", long_options, NULL)) != -1) {
    double *slot = NULL;
    switch (c) {
    case OPT_HELP:
      fputs(usage_text, stdout);
      return -1;
    case OPT_GEOMETRY:
      if (GRD_GeometryFromName(optarg, &a->geometry) != 0)
        return usage_error("--geometry: unknown geometry \"%s\"%s", optarg,
                           " (expected surface, creep-feed, external, internal or plunge)");
      continue;
    case OPT_UNITS:
      if (strcmp(optarg, "metric") == 0)
        a->imperial = 0;
      else if (strcmp(optarg, "imperial") == 0)
        a->imperial = 1;
      else
        return usage_error("--units: unknown units \"%s\"%s", optarg, " (expected metric or imperial)");
      continue;
    case OPT_JSON:
      a->json = 1;
      continue;
    case OPT_WHEEL_DIAMETER: slot = &a->ds; break;
    case OPT_WHEEL_SPEED: slot = &a->vs; break;
    case OPT_RPM: slot = &a->rpm; break;
    case OPT_WORK_SPEED: slot = &a->vw; break;
    case OPT_DEPTH: slot = &a->ae; break;
    case OPT_INFEED_RATE: slot = &a->vf; break;
    case OPT_WIDTH: slot = &a->b; break;
    case OPT_WORKPIECE_DIAMETER: slot = &a->dw; break;
    case OPT_TARGET_AGGR: slot = &a->target; break;
    case OPT_MAX_SPEED: slot = &a->vmax; break;
    case OPT_GRIT_DENSITY: slot = &a->params.grit_density_mm2; break;
    case OPT_CHIP_RATIO: slot = &a->params.chip_width_ratio; break;
    case OPT_BURN_A: slot = &a->params.burn_a_j_mm3; break;
    case OPT_BURN_B: slot = &a->params.burn_b; break;
    case ':':
      return usage_error("%s: missing value%s", argv[optind - 1], "");
    default:
      return usage_error("unknown option \"%s\"%s", argv[optind - 1], "");
    }
    if (parse_number(long_name(c), optarg, slot) != 0)
      return EX_USAGE;
    /* The depth of a spark-out pass is zero; every other figure must be positive. */
    if (c == OPT_DEPTH ? *slot < 0.0 : c == OPT_BURN_A ? *slot < 0.0 : *slot <= 0.0)
      return usage_error("--%s: must be %s", long_name(c),
                         c == OPT_DEPTH || c == OPT_BURN_A ? "zero or positive" : "positive");
  }
  if (optind < argc)
    return usage_error("unexpected argument \"%s\"%s", argv[optind], "");
  return 0;
}

/* Checks presence and combinations; returns 0 or EX_USAGE. */
static int check_args(const struct calc_args *a)
{
  int plunge = a->geometry == GRD_PLUNGE;
  if (isnan(a->ds))
    return usage_error("missing --wheel-diameter%s%s", "", "");
  if (isnan(a->vs) == isnan(a->rpm))
    return usage_error("give exactly one of --wheel-speed and --rpm%s%s", "", "");
  if (isnan(a->vw))
    return usage_error("missing --work-speed%s%s", "", "");
  if (isnan(a->b))
    return usage_error("missing --width%s%s", "", "");
  if (!plunge && !isnan(a->vf))
    return usage_error("--infeed-rate: only for --geometry plunge%s%s", "", "");
  if (plunge ? isnan(a->ae) == isnan(a->vf) : isnan(a->ae))
    return usage_error(plunge ? "give exactly one of --depth and --infeed-rate%s%s" : "missing --depth%s%s",
                       "", "");
  if (GRD_GeometryIsCylindrical(a->geometry) && isnan(a->dw))
    return usage_error("missing --workpiece-diameter (needed for %s grinding)%s",
                       GRD_GeometryName(a->geometry), "");
  if (!GRD_GeometryIsCylindrical(a->geometry) && !isnan(a->dw))
    return usage_error("--workpiece-diameter: not used in %s grinding%s", GRD_GeometryName(a->geometry), "");
  if (a->geometry == GRD_INTERNAL && !(a->dw > a->ds))
    return usage_error("--workpiece-diameter: internal grinding needs a bore larger than the wheel%s%s",
                       " (workpiece diameter <= wheel diameter)", "");
  return 0;
}

/* Everything in SI-millimetre units. */
struct calc_result {
  GRD_Conditions k;
  GRD_Figures f;
  double rpm, vw_mm_min;
  double target_vw_mm_s, target_ae_mm, target_rpm;
  double vmax_m_s, rpm_max;
};

static void compute(const struct calc_args *a, struct calc_result *r)
{
  double len = a->imperial ? UNT_MM_PER_INCH : 1.0;
  GRD_Conditions *k = &r->k;
  k->geometry = a->geometry;
  k->ds_mm = a->ds * len;
  k->dw_mm = a->dw * len;
  k->b_mm = a->b * len;
  k->vw_mm_s = a->imperial ? UNT_InPerMinToMmPerS(a->vw) : UNT_MmPerMinToMmPerS(a->vw);
  if (!isnan(a->vs)) {
    k->vs_m_s = a->imperial ? UNT_FtPerMinToMPerS(a->vs) : a->vs;
    r->rpm = UNT_SpindleSpeedFor(k->ds_mm, k->vs_m_s);
  } else {
    r->rpm = a->rpm;
    k->vs_m_s = UNT_SurfaceSpeed(k->ds_mm, a->rpm);
  }
  if (!isnan(a->vf)) {
    double vf_mm_s = a->imperial ? UNT_InPerMinToMmPerS(a->vf) : UNT_MmPerMinToMmPerS(a->vf);
    k->ae_mm = GRD_PlungeDepthPerRevolution(vf_mm_s, k->dw_mm, k->vw_mm_s);
  } else {
    k->ae_mm = a->ae * len;
  }
  r->vw_mm_min = UNT_MmPerSToMmPerMin(k->vw_mm_s);
  GRD_Compute(k, &a->params, &r->f, NULL);
  r->target_vw_mm_s = r->target_ae_mm = NAN;
  if (!isnan(a->target)) {
    r->target_vw_mm_s = GRD_WorkSpeedForAggressiveness(a->target, k->vs_m_s, k->ae_mm, r->f.de_mm);
    r->target_ae_mm = GRD_DepthForAggressiveness(a->target, k->vs_m_s, k->vw_mm_s, r->f.de_mm);
  }
  r->vmax_m_s = r->rpm_max = NAN;
  if (!isnan(a->vmax)) {
    r->vmax_m_s = a->imperial ? UNT_FtPerMinToMPerS(a->vmax) : a->vmax;
    r->rpm_max = UNT_SpindleSpeedFor(k->ds_mm, r->vmax_m_s);
  }
}

/* One printed figure: label, JSON key, value in output units, unit, digits. */
struct figure {
  const char *label;
  const char *key;
  double value;
  const char *unit;
  int digits;
};

static int collect(const struct calc_args *a, const struct calc_result *r, struct figure *out)
{
  const GRD_Conditions *k = &r->k;
  const GRD_Figures *f = &r->f;
  int imp = a->imperial;
  double len = imp ? 1.0 / UNT_MM_PER_INCH : 1.0;
  const char *lu = imp ? "in" : "mm";
  int n = 0;
#define FIG(l, km, ki, v, um, ui, d) out[n++] = (struct figure){l, imp ? ki : km, v, imp ? ui : um, d}
  FIG("wheel diameter ds", "wheel_diameter_mm", "wheel_diameter_in", k->ds_mm * len, "mm", "in", imp ? 4 : 2);
  if (GRD_GeometryIsCylindrical(k->geometry))
    FIG("workpiece diameter dw", "workpiece_diameter_mm", "workpiece_diameter_in", k->dw_mm * len, "mm", "in",
        imp ? 4 : 2);
  FIG("equivalent diameter de", "equivalent_diameter_mm", "equivalent_diameter_in", f->de_mm * len, "mm",
      "in", imp ? 4 : 2);
  FIG("wheel speed vs", "wheel_speed_m_s", "wheel_speed_ft_min", imp ? UNT_MPerSToFtPerMin(k->vs_m_s) : k->vs_m_s,
      "m/s", "ft/min", imp ? 0 : 2);
  FIG("spindle speed", "spindle_speed_rpm", "spindle_speed_rpm", r->rpm, "1/min", "1/min", 0);
  FIG("work speed vw", "work_speed_mm_min", "work_speed_in_min", imp ? UNT_MmPerSToInPerMin(k->vw_mm_s) : r->vw_mm_min,
      "mm/min", "in/min", imp ? 2 : 0);
  FIG("depth of cut ae", "depth_of_cut_mm", "depth_of_cut_in", k->ae_mm * len, lu, lu, imp ? 5 : 4);
  FIG("grinding width b", "width_mm", "width_in", k->b_mm * len, lu, lu, imp ? 4 : 2);
  FIG("contact length lg", "contact_length_mm", "contact_length_in", f->lg_mm * len, lu, lu, imp ? 4 : 3);
  FIG("specific removal rate Q'", "specific_removal_rate_mm2_s", "specific_removal_rate_in2_min",
      imp ? f->q_prime_mm2_s * 60.0 / (UNT_MM_PER_INCH * UNT_MM_PER_INCH) : f->q_prime_mm2_s, "mm^2/s",
      "in^2/min", imp ? 4 : 3);
  FIG("removal rate Q", "removal_rate_mm3_s", "removal_rate_in3_min",
      imp ? f->q_mm3_s * 60.0 / UNT_MM3_PER_IN3 : f->q_mm3_s, "mm^3/s", "in^3/min", imp ? 4 : 2);
  FIG("equivalent chip thickness heq", "equivalent_chip_thickness_um", "equivalent_chip_thickness_uin",
      f->heq_mm * (imp ? 1e6 / UNT_MM_PER_INCH : 1e3), "um", "uin", 4);
  FIG("aggressiveness Aggr", "aggressiveness", "aggressiveness", f->aggr, "", "", 2);
  FIG("max uncut chip thickness hm", "max_chip_thickness_um", "max_chip_thickness_uin",
      f->hmax_mm * (imp ? 1e6 / UNT_MM_PER_INCH : 1e3), "um", "uin", 3);
  FIG("burn threshold u*", "burn_threshold_j_mm3", "burn_threshold_hp_min_in3",
      imp ? UNT_JPerMm3ToHpMinPerIn3(f->u_star_j_mm3) : f->u_star_j_mm3, "J/mm^3", "hp*min/in^3", 2);
  if (!isnan(a->target)) {
    FIG("target aggressiveness", "target_aggressiveness", "target_aggressiveness", a->target, "", "", 2);
    FIG("work speed for target (same ae)", "target_work_speed_mm_min", "target_work_speed_in_min",
        imp ? UNT_MmPerSToInPerMin(r->target_vw_mm_s) : UNT_MmPerSToMmPerMin(r->target_vw_mm_s), "mm/min",
        "in/min", imp ? 2 : 0);
    FIG("depth for target (same vw)", "target_depth_of_cut_mm", "target_depth_of_cut_in", r->target_ae_mm * len,
        lu, lu, imp ? 5 : 4);
  }
  if (!isnan(r->vmax_m_s)) {
    FIG("marked maximum speed", "max_wheel_speed_m_s", "max_wheel_speed_ft_min",
        imp ? UNT_MPerSToFtPerMin(r->vmax_m_s) : r->vmax_m_s, "m/s", "ft/min", imp ? 0 : 2);
    FIG("highest spindle speed at ds", "max_spindle_speed_rpm", "max_spindle_speed_rpm", r->rpm_max, "1/min",
        "1/min", 0);
  }
#undef FIG
  return n;
}

static void print_json_number(double v)
{
  if (isfinite(v))
    printf("%.15g", v);
  else
    fputs("null", stdout);
}

static void print_result(const struct calc_args *a, const struct calc_result *r, int over)
{
  struct figure fig[32];
  int n = collect(a, r, fig);
  if (a->json) {
    printf("{\"geometry\":\"%s\",\"units\":\"%s\"", GRD_GeometryName(a->geometry),
           a->imperial ? "imperial" : "metric");
    for (int i = 0; i < n; i++) {
      printf(",\"%s\":", fig[i].key);
      print_json_number(fig[i].value);
    }
    printf(",\"overspeed\":%s}\n", over ? "true" : "false");
    return;
  }
  printf("%s grinding\n", GRD_GeometryName(a->geometry));
  for (int i = 0; i < n; i++) {
    if (isfinite(fig[i].value))
      printf("  %-34s %12.*f%s%s\n", fig[i].label, fig[i].digits, fig[i].value, *fig[i].unit ? " " : "",
             fig[i].unit);
    else
      printf("  %-34s %12s%s%s\n", fig[i].label, "-", *fig[i].unit ? " " : "", fig[i].unit);
  }
  puts("  (burn threshold: Malkin's model with the constants for steels; advisory)");
}

int CALC_Main(int argc, char **argv)
{
  struct calc_args a;
  int rc = parse_args(argc, argv, &a);
  if (rc == -1)
    return EX_OK;
  if (rc != 0)
    return rc;
  if ((rc = check_args(&a)) != 0)
    return rc;
  struct calc_result r;
  compute(&a, &r);
  int over = !isnan(r.vmax_m_s) && r.k.vs_m_s > r.vmax_m_s;
  print_result(&a, &r, over);
  if (over)
    fprintf(stderr,
            "gritline calc: warning: wheel speed %.2f m/s exceeds the marked maximum %.2f m/s: "
            "never run a wheel above its marked maximum operating speed\n",
            r.k.vs_m_s, r.vmax_m_s);
  return EX_OK;
}
