/* condition.h: the wheel-condition model: conditions with hold-off and hysteresis, and their events (pure). */
#ifndef GRITLINE_CONDITION_H
#define GRITLINE_CONDITION_H

#include "cycle.h"
#include "segment.h"

/* The daemon (and `gritline replay`) feeds every pass to CND_Pass, every sample
 * to CND_Sample, dresses marked by the operator to CND_Dress, and the state of
 * the link and the logs to CND_SetExternal. Each call returns the transitions
 * it caused as event records in a caller-given array; nothing here allocates,
 * prints or reads a clock, so a replay of the same passes gives the same
 * events byte for byte. Rules and defaults: docs/conditions.md. */

typedef enum CND_Kind {
  CND_DULLING = 0,      /* "dulling": the wheel needs dressing */
  CND_LOW_AGGR,         /* "low_aggressiveness": passes below the wheel's window */
  CND_HIGH_AGGR,        /* "high_aggressiveness": passes above the wheel's window */
  CND_WHEEL_WEAR,       /* "wheel_wear": G-ratio low, or energy drop at high aggressiveness */
  CND_BURN_RISK,        /* "burn_risk": specific energy near the burn threshold */
  CND_OVERLOAD,         /* "overload": net power over the spindle rating */
  CND_OVERSPEED,        /* "overspeed": wheel surface speed over its marked maximum (per sample) */
  CND_COMM_LOST,        /* "communication_lost": set by the daemon */
  CND_STALE_DATA,       /* "stale_data": set by the daemon */
  CND_LOGGING_FAILED,   /* "logging_failed": set by the daemon */
  CND_CONDITION_COUNT,
  /* Kinds of info events (state "info"), not conditions. */
  CND_DRESS = CND_CONDITION_COUNT, /* "dress": a dress closed a cycle */
  CND_FORECAST,                    /* "forecast": the halfway forecast of the dulling limit */
  CND_KIND_COUNT
} CND_Kind;
const char *CND_KindName(CND_Kind k);
int CND_KindFromName(const char *name, CND_Kind *k);

typedef enum CND_Severity { CND_INFO = 0, CND_WARNING, CND_CRITICAL, CND_SEVERITY_COUNT } CND_Severity;
const char *CND_SeverityName(CND_Severity s); /* "info", "warning", "critical" */
int CND_SeverityFromName(const char *name, CND_Severity *s);

typedef enum CND_Transition { CND_RAISED = 0, CND_CLEARED, CND_NOTE } CND_Transition;
const char *CND_TransitionName(CND_Transition t); /* "raised", "cleared", "info" */

#define CND_MESSAGE_MAX 512

/* One row of events.csv. */
typedef struct CND_Event {
  double time;              /* s, end of the pass, the sample, or the time given by the daemon */
  CND_Kind kind;            /* the condition, or dress / forecast */
  CND_Severity severity;    /* info, warning, critical */
  CND_Transition state;     /* raised, cleared or info */
  unsigned long pass;       /* number of the latest pass (0 before the first) */
  unsigned long cycle;      /* dress cycle number (0 before the first pass) */
  double value;             /* the figure the rule looked at (unit of the rule), NAN when none */
  double limit;             /* the limit it was compared with, NAN when none */
  char message[CND_MESSAGE_MAX]; /* one line, shop units */
} CND_Event;

/* How a condition is raised and cleared. */
typedef struct CND_Rule {
  CND_Severity severity;    /* of its events */
  unsigned raise_after;     /* hold-off: consecutive evaluations that hold before it is raised, >= 1 */
  unsigned clear_after;     /* consecutive evaluations without it before it is cleared, >= 1 */
  double band;              /* hysteresis: while active the limit is relaxed by this fraction */
} CND_Rule;

/* The wheel profile (a wheel specification with its operating window). */
typedef struct CND_WheelProfile {
  char name[CYC_NAME_MAX];  /* e.g. "cx60-vitrified" */
  double aggr_low;          /* aggressiveness window, low end [15] */
  double aggr_high;         /* high end [20] */
  double aggr_min;          /* working range of aggressiveness, low end [5] */
  double aggr_max;          /* high end [50] */
  double dull_limit;        /* dull ratio that calls for a dress [1.3] */
  double burn_margin;       /* fraction of Malkin's u* that raises burn_risk [0.8] */
  double min_g_ratio;       /* least acceptable G-ratio [20]; NAN = not checked */
  double max_speed_m_s;     /* marked maximum operating speed, m/s; NAN = not set (no check) */
  double wear_drop_ratio;   /* r below this at high aggressiveness = grits pulled out [0.8] */
} CND_WheelProfile;

typedef struct CND_Machine {
  double spindle_rating_w;  /* spindle power rating, W; NAN = not set (no overload check) */
  double wheel_diameter_mm; /* configured wheel diameter, mm, for the overspeed check when
                               neither the sample nor the passes carry one; NAN = none */
} CND_Machine;

typedef struct CND_Settings {
  CND_WheelProfile wheel;   /* the wheel profile */
  CND_Machine machine;      /* the machine */
  CYC_Job job;              /* the job */
  CYC_Settings model;       /* model settings of the dress cycles */
  double cusum_gate;        /* a CUSUM alarm raises dulling once the smoothed ratio is above
                               1 + cusum_gate * (dull_limit - 1) [0.5] */
  CND_Rule rule[CND_CONDITION_COUNT]; /* severity, hold-off and hysteresis per condition */
} CND_Settings;

void CND_DefaultSettings(CND_Settings *s);
/* Returns 0, or -1 with a one-line message naming the field ("wheel.aggr_low: ..."). */
int CND_CheckSettings(const CND_Settings *s, char *err, unsigned long errsize);

/* Work speed and depth that bring a pass to a target aggressiveness, computed
 * with GRD_WorkSpeedForAggressiveness and GRD_DepthForAggressiveness (the same
 * functions as `gritline calc --target-aggr`). */
typedef struct CND_Advice {
  double target_aggr;        /* the centre of the window */
  double work_speed_mm_min;  /* work speed at the pass's depth, mm/min */
  double depth_mm;           /* depth at the pass's work speed, mm */
} CND_Advice;
/* Returns 0, or -1 when the pass lacks a speed, depth or diameter (advice NAN). */
int CND_AggrAdvice(const SEG_Pass *p, double target_aggr, CND_Advice *a);

typedef struct CND_Track {
  int active;               /* raised and not cleared */
  unsigned hold;            /* consecutive evaluations that held while not active */
  unsigned gone;            /* consecutive evaluations without it while active */
  double value;             /* latest value evaluated */
  double limit;             /* its limit */
} CND_Track;

/* State of the model. Large (about 72 kB): keep it static or allocate it once. */
typedef struct CND_State {
  CND_Settings set;               /* settings, as checked */
  CYC_State cycle;                /* the dress-cycle model */
  CND_Track track[CND_CONDITION_COUNT]; /* one per condition */
  unsigned long last_pass;        /* number of the latest pass */
  double last_diameter_mm;        /* wheel diameter of the latest pass that had one, mm */
  unsigned long events_dropped;   /* events that did not fit the caller's array */
} CND_State;

/* Checks the settings (CND_CheckSettings) and starts the model. */
int CND_Init(CND_State *st, const CND_Settings *s, char *err, unsigned long errsize);

/* What one pass gives besides events. */
typedef struct CND_PassResult {
  CYC_PassInfo info;        /* the model's columns of passes.csv */
  int cycle_closed;         /* 1 when the pass's dress counter closed a cycle */
  CYC_Record closed;        /* that cycle (a row of dress_cycles.csv) */
} CND_PassResult;

/* Feeds one pass. Writes up to max_ev events and returns how many; more than fit
 * are counted in events_dropped. */
unsigned CND_Pass(CND_State *st, const SEG_Pass *p, CND_PassResult *res, CND_Event *ev, unsigned max_ev);

/* A dress the daemon was told about at time t: trigger CYC_OPERATOR (`gritline
 * dress`) or CYC_SCHEDULE (any other but CYC_COUNTER is taken as CYC_OPERATOR).
 * Sets *closed and fills *rec when a cycle was closed;
 * a second mark, or the counter change that follows, with no pass in between is
 * the same dress. Returns the number of events written. */
unsigned CND_Dress(CND_State *st, double t, CYC_Trigger trigger, CYC_Record *rec, int *closed, CND_Event *ev,
                   unsigned max_ev);

/* Overspeed check for one sample: spindle speed in 1/min and wheel diameter in mm
 * (NAN: the latest pass's, else the configured one). Cheap, no allocation; returns
 * 1 and fills *ev only when the condition is raised or cleared. */
int CND_Sample(CND_State *st, double t, double spindle_rpm, double wheel_diameter_mm, CND_Event *ev);

/* Sets communication_lost, stale_data or logging_failed (active 1 or 0) at time t,
 * detail being one line of what happened. Returns 1 with *ev on a transition, 0
 * without one, -1 for another kind. */
int CND_SetExternal(CND_State *st, CND_Kind kind, int active, double t, const char *detail, CND_Event *ev);

int CND_IsActive(const CND_State *st, CND_Kind kind);
/* Writes the active conditions in kind order; returns how many are active. */
unsigned CND_ActiveList(const CND_State *st, CND_Kind *kinds, unsigned max);
/* "dulling r=1.34, low_aggressiveness", or "ok" when none; returns buf. */
char *CND_Summary(const CND_State *st, char *buf, unsigned long size);
/* The open cycle as a record (ended_by "end") for the end of a run; 0 when none. */
int CND_Finish(const CND_State *st, CYC_Record *rec);

#endif
