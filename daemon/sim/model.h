/* model.h: the simulated surface grinder: cycle, energy partition, dulling, wear, dressing. */
#ifndef GRITLINE_SIM_MODEL_H
#define GRITLINE_SIM_MODEL_H

#include "scenario.h"

/* Machine state register values. */
typedef enum SIM_State {
  SIM_STATE_IDLE = 0,
  SIM_STATE_GRINDING = 1, /* in the grinding cycle: table stroking */
  SIM_STATE_DRESSING = 2,
  SIM_STATE_LOADING = 3,
} SIM_State;

typedef enum SIM_PassKind { SIM_PASS_ROUGH = 0, SIM_PASS_FINISH, SIM_PASS_SPARK_OUT } SIM_PassKind;
const char *SIM_PassKindName(SIM_PassKind k); /* "rough", "finish", "spark_out" */

/* ---- physics (pure functions of the scenario and the conditions) ---- */

/* Conditions of one cut. */
typedef struct SIM_Cut {
  double ds_mm;    /* wheel diameter */
  double b_mm;     /* grinding width */
  double ae_mm;    /* depth of cut */
  double vw_mm_s;  /* work (table) speed */
  double vs_m_s;   /* wheel surface speed */
} SIM_Cut;

/* The energy of a cut (ae > 0). */
typedef struct SIM_Energy {
  double de_mm;          /* equivalent diameter (surface: ds) */
  double lg_mm;          /* contact length sqrt(ae*de) */
  double heq_mm;         /* equivalent chip thickness ae*vw/vs */
  double aggr;           /* aggressiveness 1e6*(vw/vs)*sqrt(ae/de) */
  double q_mm3_s;        /* removal rate b*ae*vw */
  double u_chip_j_mm3;   /* chip formation */
  double u_plough_j_mm3; /* ploughing (size effect) */
  double u_slide_j_mm3;  /* sliding on the wear flats */
  double u_j_mm3;        /* total specific energy */
  double power_w;        /* grinding power u*Q */
  double u_star_j_mm3;   /* burn threshold (times the scenario's burn_factor) */
} SIM_Energy;

/* Energy partition at wear-flat fraction wear_flat. */
void SIM_CutEnergy(const SIM_Scenario *s, const SIM_Cut *c, double wear_flat, SIM_Energy *e);
/* Malkin's threshold for plain carbon steels, 6.2 + 1.76 de^1/4 ae^-3/4 vw^-1/2 [J/mm^3]. */
double SIM_BurnThreshold(double de_mm, double ae_mm, double vw_mm_s);

/* What one cut does to the wheel. */
typedef struct SIM_Wear {
  double wear_flat_after;    /* A after the cut */
  double wheel_volume_mm3;   /* wheel volume lost (radial wear) */
  double diameter_after_mm;  /* diameter after the cut */
  double g_ratio;            /* work volume / wheel volume of this cut */
} SIM_Wear;

/* Wear over a cut of length length_mm at aggressiveness aggr, from wear flat A. */
void SIM_CutWear(const SIM_Scenario *s, const SIM_Cut *c, double aggr, double wear_flat,
                 double length_mm, SIM_Wear *w);

/* Idle spindle power at t [s since the epoch] without noise: warm-up + wander. */
double SIM_IdlePower(const SIM_Scenario *s, double t);
/* Spindle-power noise [W] at t: a function of (seed, t). */
double SIM_PowerNoise(const SIM_Scenario *s, double t);
/* Spindle speed [1/min] on a wheel of ds_mm: fixed, or for constant surface speed. */
double SIM_SpindleRpm(const SIM_Scenario *s, double ds_mm);

/* ---- the run ---- */

typedef struct SIM_PassRecord {
  unsigned long pass;        /* 1, 2, ... since the epoch */
  unsigned long part;        /* 1, 2, ... */
  unsigned pass_in_part;     /* 1-based within the part */
  SIM_PassKind kind;         /* rough, finish, spark-out */
  double start_s;            /* s since the epoch, contact start */
  double end_s;              /* s since the epoch, contact end */
  double depth_mm;           /* ae */
  double work_speed_mm_min;  /* vw */
  double wheel_speed_m_s;    /* vs */
  double spindle_rpm;        /* 1/min */
  double wheel_diameter_mm;  /* ds at the pass */
  double equivalent_diameter_mm; /* de */
  double aggressiveness;     /* 0 for spark-out */
  double chip_thickness_mm;  /* heq, 0 for spark-out */
  double specific_energy_j_mm3; /* u; NAN for spark-out */
  double power_w;            /* grinding (net) power at full contact */
  double energy_j;           /* grinding energy of the pass */
  double volume_mm3;         /* work volume removed */
  double wear_flat;          /* A during the pass */
  double dull_factor;        /* u / u of the sharp wheel, same conditions; NAN for spark-out */
  double burn_threshold_j_mm3; /* u*, NAN for spark-out */
  int burnt;                 /* 1 when u > u* */
  unsigned dress_count;      /* dresses before the pass */
  double g_ratio;            /* of this pass; NAN for spark-out */
} SIM_PassRecord;

typedef struct SIM_DressRecord {
  unsigned long part;         /* part after which it happened */
  double start_s;             /* s since the epoch */
  double end_s;               /* s since the epoch */
  unsigned dress_count;       /* counter after the dress */
  double diameter_before_mm;  /* mm */
  double diameter_after_mm;   /* mm */
  double wear_flat_before;    /* A before */
  const char *reason;         /* "every", "at", "request" */
} SIM_DressRecord;

typedef enum SIM_EventKind { SIM_EVENT_PASS = 1, SIM_EVENT_DRESS = 2 } SIM_EventKind;

typedef struct SIM_Event {
  SIM_EventKind kind;     /* which record holds */
  SIM_PassRecord pass;    /* SIM_EVENT_PASS */
  SIM_DressRecord dress;  /* SIM_EVENT_DRESS */
} SIM_Event;

/* What the machine shows at an instant. */
typedef struct SIM_Snapshot {
  double t;                  /* s since the epoch */
  SIM_State state;           /* idle, grinding, dressing, loading */
  int grinding;              /* 1 while the wheel is in contact */
  double spindle_power_w;    /* W, idle + grinding + noise */
  double spindle_rpm;        /* 1/min */
  double work_speed_mm_min;  /* mm/min, 0 while the table stands */
  double infeed_mm;          /* mm, infeed axis, larger = deeper */
  double depth_mm;           /* mm, programmed depth of the current (or next) pass */
  double wheel_diameter_mm;  /* mm */
  unsigned dress_count;      /* dresses since the epoch */
  unsigned long pass;        /* number of the current or last pass */
  unsigned long part;        /* number of the current or last part */
  double wear_flat;          /* A now (truth, not served) */
} SIM_Snapshot;

/* Internal phases of the cycle. */
enum { SIM_PH_START = 0, SIM_PH_LOAD, SIM_PH_PASS, SIM_PH_DRESS, SIM_PH_DONE };

typedef struct SIM_Model {
  const SIM_Scenario *sc;    /* the scenario (not owned) */
  double t;                  /* s since the epoch, events up to here are done */
  int phase;                 /* SIM_PH_* */
  double seg_start;          /* s, start of the current phase segment */
  double seg_end;            /* s, its end */
  unsigned long part;        /* current part, 0 before the first */
  unsigned pass_in_part;     /* 1-based index of the current pass in the part */
  unsigned passes_per_part;  /* rough + finish + spark-out */
  unsigned long pass;        /* global number of the current or last pass */
  double travel_start;       /* s, table starts moving (after the reversal stop) */
  double contact_start;      /* s */
  double contact_end;        /* s */
  int contact_done;          /* 1 once the current pass's contact is over */
  double ramp_s;             /* s, lg/vw: entry and exit power ramps */
  double pass_power_w;       /* W, grinding power at full contact of the current pass */
  double last_power_w;       /* W, full power of the last pass with infeed */
  double last_lg_mm;         /* mm, contact length of the last pass with infeed */
  double infeed_mm;          /* mm, depth ground into the current part */
  double vw_mm_s;            /* mm/s, table speed of the current part */
  double ds_mm;              /* mm, wheel diameter now */
  double wear_flat;          /* A now */
  unsigned dress_count;      /* dresses since the epoch */
  int dress_requested;       /* 1: dress at the next part change */
  int worn_out;              /* 1: diameter under the minimum, stops after the part */
  SIM_PassRecord cur;        /* the pass in progress, filled at its start */
  SIM_DressRecord dress;     /* the dress in progress */
} SIM_Model;

/* Starts a run at the epoch (t = 0), wheel as in the scenario. */
void SIM_ModelInit(SIM_Model *m, const SIM_Scenario *s);
/* Processes the next event at or before t [s since the epoch]: returns 1 with
 * *ev filled (a pass's contact ended, or a dress finished), or 0 when none is
 * left before t. Call until 0. Events depend only on the scenario, never on the
 * calls: stepping to t in one call or many gives the same state. */
int SIM_ModelStep(SIM_Model *m, double t, SIM_Event *ev);
/* What the machine shows at t (after SIM_ModelStep(m, t) returned 0). */
void SIM_ModelSnapshot(const SIM_Model *m, double t, SIM_Snapshot *snap);
/* The operator asks for a dress at the next part change. */
void SIM_ModelRequestDress(SIM_Model *m);
/* Depth [mm] of pass `index` (1-based) of part `part`, 0 for spark-out. */
double SIM_PassDepth(const SIM_Scenario *s, unsigned long part, unsigned index);
/* Table speed [mm/min] of part `part`. */
double SIM_PartTableSpeed(const SIM_Scenario *s, unsigned long part);

#endif
