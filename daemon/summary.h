/* summary.h: the headline figures of shift folders (passes.csv, events.csv, dress_cycles.csv) and summary.json. */
#ifndef GRITLINE_SUMMARY_H
#define GRITLINE_SUMMARY_H

#include <stddef.h>
#include <stdio.h>

/* Every figure and key is described in docs/report.md. */

#define SUM_FORMAT "gritline-summary/1"
#define SUM_NAME 48       /* machine, wheel, job and trigger names, with the NUL */
#define SUM_LABEL 64      /* shift folder label "<YYYY-MM-DD>_<shift>" */
#define SUM_KINDS_MAX 24  /* distinct event kinds counted */

/* The wheel's aggressiveness window the share of passes is held against. */
typedef struct SUM_Window {
  double aggr_low;   /* low end (dimensionless aggressiveness number) */
  double aggr_high;  /* high end */
} SUM_Window;

/* One row of passes.csv, the columns the summary and the report use. NAN = empty. */
typedef struct SUM_Pass {
  unsigned long number;     /* pass number in its shift folder */
  int folder;               /* index of its folder in SUM_Data */
  double start_time;        /* s, UNIX */
  double end_time;          /* s, UNIX */
  unsigned long cycle;      /* dress cycle, 0 = not known */
  unsigned long in_cycle;   /* passes since the dress, 0 = not known */
  double depth_mm;          /* depth of cut ae, mm */
  double work_speed_mm_min; /* vw, mm/min */
  double wheel_speed_m_s;   /* vs, m/s */
  double de_mm;             /* equivalent diameter, mm */
  double q_prime_mm2_s;     /* specific removal rate Q', mm^2/s */
  double q_mm3_s;           /* removal rate Q, mm^3/s */
  double aggr;              /* aggressiveness number */
  double net_mean_w;        /* mean net power, W */
  double net_peak_w;        /* peak net power, W */
  double energy_j;          /* net energy, J */
  double volume_mm3;        /* volume removed, mm^3 */
  double u_j_mm3;           /* specific energy u, J/mm^3 */
  double u_star_j_mm3;      /* burn threshold u*, J/mm^3 */
  double burn_ratio;        /* u / u* */
  double u_ref_j_mm3;       /* sharp-wheel reference at this pass, J/mm^3 */
  double dull_ratio;        /* u / u_ref */
  double dull_smoothed;     /* smoothed dull ratio */
  double v_prime_mm3_mm;    /* V' since the dress, mm^3/mm */
  unsigned flags;           /* SEG_F_* bits (unknown names ignored) */
} SUM_Pass;

/* One row of events.csv. */
typedef struct SUM_Event {
  int folder;               /* index of its folder in SUM_Data */
  double time;              /* s, UNIX */
  char kind[32];            /* "dulling", "dress", ... */
  char severity[12];        /* "info", "warning", "critical" */
  char state[12];           /* "raised", "cleared", "info" */
  unsigned long pass;       /* latest pass when it came, 0 = none */
  double value;             /* the rule's figure, NAN = none */
  double limit;             /* its limit, NAN = none */
  char *message;            /* one line, owned by SUM_Data */
} SUM_Event;

/* One row of dress_cycles.csv. */
typedef struct SUM_Cycle {
  int folder;                       /* index of the folder it was closed in */
  unsigned long cycle;              /* cycle number */
  char wheel[SUM_NAME];             /* wheel profile */
  char job[SUM_NAME];               /* job */
  double start_time, end_time;      /* s, UNIX */
  unsigned long passes;             /* passes in the cycle */
  double v_prime_mm3_mm;            /* V' removed over the cycle, mm^3/mm */
  double volume_mm3;                /* volume removed, mm^3 */
  double u_ref_j_mm3;               /* sharp-wheel reference, J/mm^3 */
  double final_ratio;               /* smoothed dull ratio at its end */
  double g_ratio;                   /* G-ratio, NAN = not measured */
  char started_by[SUM_NAME];        /* trigger that began it */
  char ended_by[SUM_NAME];          /* trigger that ended it ("end": still open) */
  unsigned long forecast_pass;      /* pass of the halfway forecast, 0 = none */
  double forecast_v_prime_mm3_mm;   /* V' it predicted at the limit, NAN = none */
  int forecast_right;               /* 1 yes, 0 no, -1 not judged */
  unsigned long limit_pass;         /* pass at which the dull limit was reached, 0 = never */
  double limit_v_prime_mm3_mm;      /* V' then, NAN = never */
} SUM_Cycle;

/* A shift folder as read. */
typedef struct SUM_Folder {
  char path[512];           /* as given */
  char label[SUM_LABEL];    /* its name, "<YYYY-MM-DD>_<shift>" */
  char machine[SUM_NAME];   /* name of the folder above it */
  long long bytes[3];       /* size of passes.csv, events.csv, dress_cycles.csv read, -1 = absent */
} SUM_Folder;

/* Everything read from one or more shift folders; the rows keep their order. */
typedef struct SUM_Data {
  SUM_Folder *folders;
  int n_folders;
  SUM_Pass *passes;
  size_t n_passes;
  SUM_Event *events;
  size_t n_events;
  SUM_Cycle *cycles;        /* a cycle written twice (open at a stop, closed later) is kept once, the later row */
  size_t n_cycles;
  size_t cap_passes, cap_events, cap_cycles, cap_folders; /* allocated */
} SUM_Data;

/* Which of the three files a path holds, by its header row. */
typedef enum SUM_FileKind { SUM_PASSES = 0, SUM_EVENTS, SUM_CYCLES, SUM_FILE_KINDS } SUM_FileKind;
extern const char *const SUM_FILE_NAMES[SUM_FILE_KINDS];  /* "passes.csv", ... */
extern const char *const SUM_SOURCE_KEYS[SUM_FILE_KINDS]; /* their keys in summary.json "sources" */

void SUM_InitData(SUM_Data *d);
void SUM_FreeData(SUM_Data *d);
/* Reads the shift folder dir (its passes.csv, and events.csv and dress_cycles.csv
 * when present) into d, appending. Returns 0; -1 with a message in err and
 * *not_found set when passes.csv is missing or unreadable, or with
 * "file:line: ..." when a file is malformed. */
int SUM_ReadFolder(SUM_Data *d, const char *dir, int *not_found, char *err, size_t errlen);
/* Reads single files as one folder: files[k] is the path of kind k or NULL.
 * label and machine name the folder (may be ""). Same returns. */
int SUM_ReadFiles(SUM_Data *d, const char *const files[SUM_FILE_KINDS], const char *label, const char *machine,
                  int *not_found, char *err, size_t errlen);
/* The kind of a CSV file by its first line; -1 when it is none of the three or unreadable. */
int SUM_SniffFile(const char *path);

/* Whether a later row of d, in any folder, repeats cycle row i (same cycle
 * number and start): over several folders only the last of such rows counts. */
int SUM_CycleRepeatedLater(const SUM_Data *d, size_t i);

/* Raised alerts of one kind. */
typedef struct SUM_KindCount {
  char kind[32];            /* event kind */
  unsigned long raised;     /* times raised */
} SUM_KindCount;

/* The headline figures. NAN where there is nothing to compute from. */
typedef struct SUM_Summary {
  char label[SUM_LABEL];          /* shift folder label, or "first .. last" over several */
  char machine[SUM_NAME];         /* from the folder names */
  char wheel[SUM_NAME];           /* wheel of the latest cycle, "" when no cycle row */
  char job[SUM_NAME];             /* job of the latest cycle */
  int folders;                    /* shift folders summed */
  SUM_Window window;              /* aggressiveness window used */
  double first_time, last_time;   /* s, UNIX: first pass start, last pass end */
  unsigned long passes;           /* rows of passes.csv */
  unsigned long depth_known;      /* passes with a depth of cut */
  unsigned long spark_out;        /* passes flagged spark_out */
  unsigned long aggr_passes;      /* passes with aggressiveness > 0 (not spark-out): the share's base */
  unsigned long in_window;        /* of those, aggr_low <= aggr <= aggr_high */
  unsigned long below_window;     /* aggr < aggr_low */
  unsigned long above_window;     /* aggr > aggr_high */
  double window_share;            /* in_window / aggr_passes */
  double volume_mm3;              /* sum of volume_mm3 */
  double volume_mm3_mm;           /* sum of volume_mm3 * Q' / Q: removed volume per unit width */
  double energy_j;                /* sum of energy_j */
  double aggr_mean, aggr_median;  /* over the aggr_passes */
  unsigned long u_passes;         /* passes with a specific energy */
  double u_mean, u_median;        /* J/mm^3 */
  double burn_ratio_max;          /* highest u/u* */
  double net_peak_max_w;          /* highest peak net power, W */
  unsigned long dresses;          /* "dress" events */
  unsigned long alerts_raised;    /* events with state "raised" */
  SUM_KindCount kinds[SUM_KINDS_MAX]; /* by kind, in order of first appearance */
  int n_kinds;
  unsigned long cycles;           /* cycle rows (after removing repeats) */
  unsigned long closed_cycles;    /* those not ended_by "end" */
  unsigned long limit_cycles;     /* cycles that reached the dull limit */
  double limit_v_prime_median;    /* median V' at the limit over those, mm^3/mm */
  double limit_v_prime_min, limit_v_prime_max; /* range, mm^3/mm */
  unsigned long forecasts_judged, forecasts_right; /* halfway forecasts judged, and right */
  double work_speed_median_mm_min; /* median vw over the passes with depth > 0 */
  double centre_aggr;             /* centre of the window */
  unsigned long centre_passes;    /* passes with depth > 0, vs and de known */
  double centre_work_speed_mm_min; /* median over them of the vw giving centre_aggr at their ae, vs, de */
  double depth_median_mm;         /* median depth of those passes, mm */
  long long bytes[3];             /* sizes of the files read (single folder), -1 absent */
} SUM_Summary;

/* The figures of folder index `folder` of d, or of all of them (folder < 0).
 * Returns 0, or -1 when out of memory (message in err). */
int SUM_FromData(const SUM_Data *d, int folder, const SUM_Window *w, SUM_Summary *s, char *err, size_t errlen);
/* Reads one shift folder and computes its figures. Returns 0, or -1 with a
 * message in err (*not_found as for SUM_ReadFolder, may be NULL). */
int SUM_Compute(const char *dir, const SUM_Window *w, SUM_Summary *s, int *not_found, char *err, size_t errlen);
/* Writes s as one JSON object (the keys of summary.json; cycles from d when
 * given, restricted to folder (>= 0) or all). indent: spaces before each key. */
void SUM_WriteJson(FILE *f, const SUM_Summary *s, const SUM_Data *d, int folder, int indent);
/* Computes dir's figures and writes dir/summary.json atomically (temporary file,
 * fsync, rename). For the daemon at each change of shift. Returns 0, or -1 with
 * a message in err. */
int SUM_WriteFolder(const char *dir, const SUM_Window *w, char *err, size_t errlen);

/* A JSON number that reads back exactly (the shortest of 15 to 17 significant
 * digits), or null when v is not finite. */
void SUM_JsonNumber(FILE *f, double v);

/* Median of x[0..n-1] (mean of the two middle values when n is even); reorders x. NAN when n == 0. */
double SUM_Median(double *x, size_t n);

#endif
