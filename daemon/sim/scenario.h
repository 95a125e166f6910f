/* scenario.h: a simulated machine, wheel, job, schedule and faults, read from an INI file. */
#ifndef GRITLINE_SIM_SCENARIO_H
#define GRITLINE_SIM_SCENARIO_H

#include "faults.h"

#include <stddef.h>
#include <stdint.h>

#define SIM_NAME_MAX 64  /* names, with the terminating NUL */
#define SIM_LIST_MAX 32  /* entries of a list key (dress_at_parts, *_at) */
#define SIM_TEXT_MAX (1 << 20) /* largest scenario file read, bytes */

/* "From part `part` on, the value is `value`." */
typedef struct SIM_PartValue {
  int part;     /* first part (1-based) the value applies to */
  double value; /* in the unit of the key it belongs to */
} SIM_PartValue;

typedef struct SIM_Machine {
  char shop[SIM_NAME_MAX];  /* shop name, descriptive */
  char name[SIM_NAME_MAX];  /* machine name, e.g. "sg4" */
  double idle_power_w;      /* W, spindle power turning in air, warm */
  double warmup_power_w;    /* W, extra idle power of the cold spindle at the epoch */
  double warmup_s;          /* s, time constant of the warm-up decay */
  double drift_w;           /* W, amplitude of the slow idle-power wander */
  double drift_period_s;    /* s, period of the wander's main component */
  double spindle_rpm;       /* 1/min, fixed spindle speed (wheel_speed_m_s = 0) */
  double wheel_speed_m_s;   /* m/s, constant surface speed control; 0 = fixed rpm */
  double power_rating_w;    /* W, spindle motor rating (sanity check of idle power) */
  int unit_id;              /* Modbus unit identifier answered */
} SIM_Machine;

typedef struct SIM_Wheel {
  char name[SIM_NAME_MAX];        /* wheel profile name */
  double diameter_mm;             /* mm, diameter at the epoch (freshly dressed) */
  double width_mm;                /* mm, wheel width */
  double min_diameter_mm;         /* mm, worn out below this: the machine stops */
  double max_speed_m_s;           /* m/s, marked maximum operating speed */
  double sharp_wear_flat;         /* A0, wear-flat area fraction of the sharp wheel */
  double max_wear_flat;           /* A at which attritious growth stops (glazed wheel) */
  double dulling_rate;            /* dA/dV' at aggressiveness dulling_aggressiveness, per mm^3/mm */
  double dulling_aggressiveness;  /* reference aggressiveness of dulling_rate */
  double dulling_exponent;        /* attritious growth ~ (ref/Aggr)^exponent */
  double fracture_aggressiveness; /* aggressiveness at which grit fracture takes over */
  double fracture_exponent;       /* fracture ~ (Aggr/fracture_aggressiveness)^exponent */
  double fracture_rate;           /* rate at which fracture removes wear flats, per mm^3/mm */
  double g_ratio;                 /* G-ratio without fracture (attritious wear only) */
  double fracture_g_ratio;        /* G of the fracture wear at Aggr = fracture_aggressiveness */
  double dress_depth_mm;          /* mm, radial dressing depth (diameter falls by twice this) */
  double dress_s;                 /* s, time a dress takes */
  double wear_factor;             /* multiplies every wheel wear per volume (life compression) */
} SIM_Wheel;

typedef struct SIM_Job {
  char geometry[SIM_NAME_MAX];  /* kinematics; "surface" (reciprocating) is simulated */
  char material[SIM_NAME_MAX];  /* workpiece material, descriptive */
  double chip_energy_j_mm3;     /* J/mm^3, chip-formation energy */
  double ploughing_force_n_mm;  /* N/mm, ploughing force per unit width */
  double friction_coefficient;  /* mu, wear flat on work */
  double contact_pressure_mpa;  /* MPa, mean pressure on the wear flats */
  double burn_factor;           /* multiplies Malkin's burn threshold */
  double length_mm;             /* mm, workpiece length L along the table stroke */
  double width_mm;              /* mm, grinding width b (full width per stroke) */
  double overrun_mm;            /* mm, table overrun at each end of the stroke */
  double table_speed_mm_min;    /* mm/min, work (table) speed vw */
  double reversal_s;            /* s, table stop at each reversal (infeed happens here) */
  int rough_passes;             /* passes at rough_depth_mm */
  double rough_depth_mm;        /* mm, depth of cut per roughing pass */
  int finish_passes;            /* passes at finish_depth_mm */
  double finish_depth_mm;       /* mm, depth of cut per finishing pass */
  int spark_out_passes;         /* zero-infeed passes at the end of the part */
  double spark_out_fraction;    /* power of each spark-out pass / power of the pass before */
  double load_s;                /* s, unload + load between parts */
  double infeed_zero_mm;        /* mm, infeed axis position at the start of each part */
} SIM_Job;

typedef struct SIM_Schedule {
  int has_epoch;                          /* 1 when epoch_ms was given */
  int64_t epoch_ms;                       /* ms since the UNIX epoch, start of the run */
  int parts;                              /* parts to grind, 0 = no limit */
  double start_delay_s;                   /* s, idle before the first load */
  int dress_every_parts;                  /* dress after every N parts, 0 = never */
  int dress_at[SIM_LIST_MAX];             /* dress after these parts */
  int n_dress_at;                         /* entries in dress_at */
  int dress_on_coil;                      /* coil asking for a dress at the next part change, -1 none */
  SIM_PartValue table_speed[SIM_LIST_MAX];  /* mm/min, table speed from a part on */
  int n_table_speed;                      /* entries */
  SIM_PartValue rough_depth[SIM_LIST_MAX];  /* mm, roughing depth from a part on */
  int n_rough_depth;                      /* entries */
  SIM_PartValue finish_depth[SIM_LIST_MAX]; /* mm, finishing depth from a part on */
  int n_finish_depth;                     /* entries */
} SIM_Schedule;

typedef struct SIM_Noise {
  uint64_t seed;     /* seed of every pseudo-random value */
  double power_sd_w; /* W, standard deviation of the spindle-power noise */
  double rpm_sd;     /* 1/min, standard deviation of the spindle-speed noise */
  double step_s;     /* s of sim time over which one noise value holds */
} SIM_Noise;

typedef struct SIM_Scenario {
  SIM_Machine machine;   /* [machine] */
  SIM_Wheel wheel;       /* [wheel] */
  SIM_Job job;           /* [job] */
  SIM_Schedule schedule; /* [schedule] */
  SIM_Noise noise;       /* [noise] */
  SIM_FaultSpec faults[SIM_FAULT_MAX]; /* [faults] fault = ... */
  int n_faults;                        /* entries in faults */
} SIM_Scenario;

/* Every default, as documented in docs/simulator.md. */
void SIM_ScenarioDefaults(SIM_Scenario *s);

/* Parses scenario text (the contents of file `name`) over the defaults already
 * in *s. Strict: unknown sections and keys, repeated keys, bad values, lines
 * longer than inih's limit and inconsistent settings are errors. Returns 0, or
 * -1 with "name:line: message" in err. */
int SIM_ScenarioParse(const char *text, const char *name, SIM_Scenario *s, char *err,
                      size_t errsize);

/* Checks the settings that involve several keys (also run by SIM_ScenarioParse);
 * returns 0, or -1 with a message in err naming the key. Lets a test or a
 * program that changed *s check it again. */
int SIM_ScenarioCheck(const SIM_Scenario *s, char *err, size_t errsize);

#endif
