/* cycle.h: dress cycles, the sharp-wheel reference, dull ratio, trend, forecast and wear (pure). */
#ifndef GRITLINE_CYCLE_H
#define GRITLINE_CYCLE_H

#include "robust.h"
#include "segment.h"

/* A dress cycle runs from one dress of the wheel to the next. Inside it the
 * first passes build a reference of the sharp wheel's specific energy, and
 * every later pass is compared with it (dull ratio r = u / u_ref(Aggr)).
 * See docs/conditions.md for every rule and default. */

#define CYC_NAME_MAX 48           /* wheel and job names, with the terminating NUL */
#define CYC_REFERENCE_MAX 64      /* most reference passes */
#define CYC_TREND_MAX 128         /* longest Theil-Sen window, passes */
#define CYC_POWER_MAX 128         /* longest power-fit window, passes */

/* What began or ended a cycle. */
typedef enum CYC_Trigger {
  CYC_START = 0,  /* "start": first pass of the run */
  CYC_ALERT,      /* "alert": dressed while the dulling condition was active */
  CYC_SCHEDULE,   /* "schedule": a planned dress the daemon was told about */
  CYC_OPERATOR,   /* "operator": the operator's mark (gritline dress) */
  CYC_COUNTER,    /* "counter": the controller's dress counter changed */
  CYC_END,        /* "end": the run ended with the cycle still open */
  CYC_TRIGGER_COUNT
} CYC_Trigger;
const char *CYC_TriggerName(CYC_Trigger t);
/* Returns 0 and sets *t, or -1 for an unknown name. */
int CYC_TriggerFromName(const char *name, CYC_Trigger *t);

/* Model settings of the cycle (documented defaults: CYC_DefaultSettings). */
typedef struct CYC_Settings {
  unsigned settle_passes;      /* grinding passes after a dress left out of the reference [3] */
  unsigned reference_passes;   /* usable passes forming the reference, 2..CYC_REFERENCE_MAX [8] */
  double min_ln_range;         /* spread of ln Aggr over the reference that allows a fit [0.1] */
  double exponent_min;         /* lowest exponent of u_ref = c * Aggr^m [-1.0] */
  double exponent_max;         /* highest exponent [0.0] */
  double scatter_floor;        /* least reference scatter of ln u, used when the data scatter less [0.02] */
  unsigned median_len;         /* running median of r, passes, 1..RBS_RUNMED_MAX [5] */
  double ewma_alpha;           /* weight of the newest running median in the smoothed ratio [0.3] */
  double cusum_k;              /* CUSUM allowance, reference scatters [0.5] */
  double cusum_h;              /* CUSUM decision interval, reference scatters [5.0] */
  unsigned trend_window;       /* usable passes in the Theil-Sen trend, 2..CYC_TREND_MAX [64] */
  unsigned min_forecast_passes; /* usable passes in the trend before a forecast is made [10] */
  unsigned power_window;       /* usable passes in the power-vs-Q' fit, 2..CYC_POWER_MAX [20] */
  unsigned min_power_passes;   /* passes in the window before the fit is reported [5] */
  double min_power_spread;     /* (max - min) / mean of Q' in the window that allows the fit [0.05] */
  double min_wear_um;          /* radial wear since the dress before a G-ratio is formed, um [1.0] */
  double forecast_tolerance;   /* relative error for a forecast to count as right [0.25] */
} CYC_Settings;

void CYC_DefaultSettings(CYC_Settings *s);
/* Returns 0, or -1 with a one-line message naming the field ("model.ewma_alpha: ..."). */
int CYC_CheckSettings(const CYC_Settings *s, char *err, unsigned long errsize);

/* The job and wheel a cycle belongs to. */
typedef struct CYC_Job {
  char name[CYC_NAME_MAX];     /* job name, as in the configuration */
  double width_mm;             /* grinding width b (the SEG_Config width), mm */
  double wear_width_mm;        /* wheel width in contact for the worn volume, mm; NAN = width_mm */
  int diameter_measured;       /* 1 when the passes carry a measured wheel diameter */
} CYC_Job;

/* What the cycle reports for one pass (a column set of passes.csv). NAN = not known. */
typedef struct CYC_PassInfo {
  unsigned long cycle;            /* cycle number, 1, 2, ... */
  unsigned long pass_in_cycle;    /* passes since the dress, this one included */
  int usable;                     /* the pass has a specific energy the model can use */
  int settling;                   /* the pass is one of the settle passes */
  int reference;                  /* the pass went into the reference */
  int reference_ready;            /* the reference exists */
  double v_prime_mm3_mm;          /* V', removed volume per unit width since the dress, mm^3/mm */
  double u_ref_j_mm3;             /* u_ref at this pass's aggressiveness, J/mm^3 */
  double dull_ratio;              /* r = u / u_ref */
  double smoothed_ratio;          /* running median then EWMA of r */
  double cusum;                   /* CUSUM sum on ln r, reference scatters */
  int cusum_alarm;                /* CUSUM above its decision interval */
  double trend_per_v_prime;       /* Theil-Sen slope of r against V', 1/(mm^3/mm) */
  double forecast_passes_left;    /* passes until r reaches the dulling limit */
  double forecast_v_prime_left;   /* V' until r reaches the dulling limit, mm^3/mm */
  double power_intercept_w_mm;    /* intercept of P'/b against Q': rubbing and sliding, W/mm */
  double power_slope_j_mm3;       /* slope: incremental specific energy, J/mm^3 */
  double power_intercept_rise_w_mm; /* intercept minus the cycle's first fitted intercept, W/mm */
  double radial_wear_um;          /* wheel radius lost since the previous pass, um */
  double wear_since_dress_um;     /* wheel radius lost since the first pass of the cycle, um */
  double g_ratio;                 /* removed volume / worn wheel volume so far in the cycle */
  int forecast_made;              /* the halfway forecast was made at this pass */
  int limit_reached;              /* the smoothed ratio reached the limit first at this pass */
} CYC_PassInfo;

/* One dress cycle (a row of dress_cycles.csv). */
typedef struct CYC_Record {
  unsigned long cycle;            /* cycle number */
  char wheel[CYC_NAME_MAX];       /* wheel profile name */
  char job[CYC_NAME_MAX];         /* job name */
  double start_time;              /* s, the dress that began it (or the first pass) */
  double end_time;                /* s, the dress that ended it (or the last pass) */
  unsigned long passes;           /* passes in the cycle */
  double v_prime_mm3_mm;          /* V' removed, mm^3/mm */
  double volume_mm3;              /* volume removed, mm^3 */
  double u_ref_j_mm3;             /* reference u at the window centre (fit) or the median, J/mm^3 */
  double ref_exponent;            /* m of u_ref = c * Aggr^m (0 when the median was used) */
  double ref_scatter;             /* reference scatter of ln u used by the CUSUM */
  double final_ratio;             /* smoothed dull ratio at the end */
  double g_ratio;                 /* G-ratio of the cycle, NAN when not measured */
  double wear_um;                 /* radial wheel wear over the cycle, um, NAN when not measured */
  CYC_Trigger started_by;         /* start, alert, schedule, operator or counter */
  CYC_Trigger ended_by;           /* alert, schedule, operator, counter or end */
  int forecast_made;              /* the halfway forecast exists */
  unsigned long forecast_pass;    /* pass in the cycle at which it was made */
  double forecast_v_prime_mm3_mm; /* predicted V' at the limit, mm^3/mm */
  double forecast_limit_pass;     /* predicted pass in the cycle at the limit */
  int forecast_right;             /* 1 right, 0 wrong, -1 not judged (see docs/conditions.md) */
  double v_prime_at_limit;        /* V' when the smoothed ratio reached the limit, NAN if never */
  unsigned long pass_at_limit;    /* pass in the cycle when it did, 0 if never */
} CYC_Record;

/* State of the cycle model. Large (about 72 kB): keep it static or allocate it once. */
typedef struct CYC_State {
  CYC_Settings set;               /* model settings */
  CYC_Job job;                    /* the job */
  char wheel[CYC_NAME_MAX];       /* wheel profile name */
  double dull_limit;              /* dull ratio that calls for a dress */
  double aggr_low, aggr_high;     /* the wheel's aggressiveness window */
  /* dress detection */
  int have_dress_count;           /* a dress counter value has been seen */
  double last_dress_count;        /* latest known counter value */
  int mark_pending;               /* a dress was marked and no pass has come since */
  double mark_time;               /* s, time of that mark */
  CYC_Trigger next_started_by;    /* trigger of the cycle the next pass opens */
  /* the open cycle */
  int open;                       /* a cycle is open */
  unsigned long cycle;            /* its number */
  CYC_Trigger started_by;         /* what began it */
  double start_time, last_end_time; /* s, its start and the end of its latest pass */
  unsigned long passes;           /* passes so far */
  unsigned long grinding_passes;  /* passes other than spark-out so far */
  double v_prime;                 /* mm^3/mm */
  double volume;                  /* mm^3 */
  double wear_volume;             /* mm^3 removed since the first pass with a diameter */
  /* reference */
  unsigned n_ref;                 /* reference passes so far */
  double ref_ln_aggr[CYC_REFERENCE_MAX]; /* ln Aggr of each */
  double ref_ln_u[CYC_REFERENCE_MAX];    /* ln u, u in J/mm^3 */
  double ref_u[CYC_REFERENCE_MAX];       /* u, J/mm^3 */
  int ref_ready, ref_fitted;      /* reference built; by the power-law fit (else the median) */
  double ref_ln_c;                /* ln of c in u_ref = c * Aggr^m */
  double ref_m;                   /* m */
  double ref_scatter;             /* standard deviation of ln u used by the CUSUM */
  double ref_median_u;            /* J/mm^3 */
  /* dull ratio */
  RBS_RunMedian median;           /* running median of r */
  RBS_Ewma ewma;                  /* EWMA of the running median */
  RBS_Cusum cusum;                /* on ln r / ref_scatter */
  double smoothed;                /* latest smoothed ratio */
  /* trend: the latest usable passes after the reference */
  double tr_v[CYC_TREND_MAX], tr_r[CYC_TREND_MAX]; /* ring of V' (mm^3/mm) and r */
  unsigned long tr_pass[CYC_TREND_MAX];           /* pass in the cycle of each */
  unsigned tr_n, tr_head;                         /* entries held, next slot */
  double ts_work[(unsigned long)CYC_TREND_MAX * (CYC_TREND_MAX - 1) / 2]; /* Theil-Sen pairwise slopes */
  /* power against removal rate */
  double pw_q[CYC_POWER_MAX], pw_p[CYC_POWER_MAX]; /* ring of Q' (mm^2/s) and P/b (W/mm) */
  unsigned pw_n, pw_head;                          /* entries held, next slot */
  double first_intercept;         /* W/mm, NAN until the first fit */
  /* wear */
  double ds_first, ds_prev;       /* mm, NAN until known */
  double g_ratio, wear_um;        /* latest */
  /* aggressiveness over the cycle */
  unsigned long n_aggr, n_aggr_below; /* usable passes, and those below the window */
  double sum_ln_aggr;             /* sum of ln Aggr over them */
  /* forecast and limit */
  int half_passed;                /* the smoothed ratio has reached halfway to the limit */
  int forecast_made;              /* the halfway forecast exists */
  unsigned long forecast_pass;    /* pass in the cycle it was made at */
  double forecast_v_limit, forecast_limit_pass; /* predicted V' (mm^3/mm) and pass at the limit */
  double v_at_limit;              /* V' when the limit was reached, mm^3/mm, NAN until then */
  unsigned long pass_at_limit;    /* pass in the cycle when it was, 0 until then */
  CYC_PassInfo last;              /* figures of the latest pass */
} CYC_State;

/* set must pass CYC_CheckSettings, and job->width_mm be positive. wheel_name and
 * job->name are copied (cut to CYC_NAME_MAX - 1). aggr_low and aggr_high are the
 * wheel's aggressiveness window (the reference is quoted at its centre, and the
 * cycle counts the passes below it). */
void CYC_Init(CYC_State *s, const CYC_Settings *set, const CYC_Job *job, const char *wheel_name,
              double dull_limit, double aggr_low, double aggr_high);

/* Whether pass p begins a new cycle by the dress counter: returns 1 when its
 * dress_count differs from the latest known one (or it is flagged after_dress),
 * unless a dress was marked with no pass since (the same dress, not counted twice). */
int CYC_CounterDress(const CYC_State *s, const SEG_Pass *p);

/* Closes the open cycle at a dress at time t. ended_by is the trigger of the
 * dress (CYC_COUNTER, CYC_OPERATOR or CYC_SCHEDULE), turned into CYC_ALERT when
 * dulling_active. Fills *rec and returns 1 when a cycle with passes was closed,
 * else 0 (nothing open, or a mark already pending: the same dress). In both
 * cases the next pass opens a cycle that starts at t. */
int CYC_Dress(CYC_State *s, double t, CYC_Trigger ended_by, int dulling_active, CYC_Record *rec);

/* Feeds one pass of the open cycle (opening one when none is, with the time and
 * trigger of the pending dress, or "start" for the first pass of the run).
 * The caller checks CYC_CounterDress and calls CYC_Dress first. */
void CYC_Feed(CYC_State *s, const SEG_Pass *p, CYC_PassInfo *info);

/* The record of the open cycle as it stands (ended_by CYC_END, end time = end of
 * its last pass), without closing it. Returns 0 when no cycle is open. */
int CYC_Snapshot(const CYC_State *s, CYC_Record *rec);

/* u_ref at aggressiveness aggr, J/mm^3; NAN before the reference exists. */
double CYC_ReferenceEnergy(const CYC_State *s, double aggr);
/* True when most usable passes of the open cycle ran below the window; *geo_mean
 * gets the geometric mean of their aggressiveness (NAN when none). */
int CYC_AggrBelow(const CYC_State *s, double *geo_mean);

/* History: V' at which past cycles of one wheel and job reached their limit. */
typedef struct CYC_Recommendation {
  unsigned cycles;          /* cycles of this wheel and job in the history */
  unsigned reached;         /* those that reached the dulling limit */
  double v_prime_mm3_mm;    /* median V' at the limit over those, NAN when none */
  double v_prime_min, v_prime_max; /* their range, mm^3/mm */
} CYC_Recommendation;
/* Looks at the last CYC_HISTORY_MAX matching records (newest last in recs). */
#define CYC_HISTORY_MAX 256
void CYC_Recommend(const CYC_Record *recs, unsigned n, const char *wheel, const char *job,
                   CYC_Recommendation *out);
/* One line: "wheel cx60-vitrified on job ... typically reaches its dulling limit
 * after about 1230 mm^3/mm (median of 5 of 6 cycles, 1100 to 1400)". Returns buf. */
char *CYC_FormatRecommendation(const CYC_Recommendation *r, const char *wheel, const char *job, char *buf,
                               unsigned long size);

#endif
