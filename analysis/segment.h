/* segment.h: splits the sample stream into grinding passes (streaming, no allocation). */
#ifndef GRITLINE_SEGMENT_H
#define GRITLINE_SEGMENT_H

#include <stdint.h>

#include "grind.h"
#include "sample.h"

/* Pass flags (bit set). Names as written in passes.csv: see SEG_FlagName. */
enum {
  SEG_F_GAP = 1u << 0,           /* "gap": missing samples ended or cut the pass */
  SEG_F_DEPTH_UNKNOWN = 1u << 1, /* "depth_unknown": ae could not be known, not guessed */
  SEG_F_NEW_PART = 1u << 2,      /* "new_part": first pass of a new part (infeed went back) */
  SEG_F_SPARK_OUT = 1u << 3,     /* "spark_out": zero-depth pass */
  SEG_F_AFTER_DRESS = 1u << 4,   /* "after_dress": dress counter changed since the previous pass */
  SEG_F_NO_SPEED = 1u << 5,      /* "no_speed": wheel or work speed unknown */
  SEG_F_TRUNCATED = 1u << 6,     /* "truncated": the stream ended during the pass */
};
#define SEG_FLAG_COUNT 7
const char *SEG_FlagName(unsigned bit_index);
/* Writes the set flags as "gap|spark_out" (empty when none) into buf; returns buf. */
char *SEG_FormatFlags(unsigned flags, char *buf, unsigned long size);
/* Parses the text of SEG_FormatFlags; returns 0, or -1 for an unknown name. */
int SEG_ParseFlags(const char *text, unsigned *flags);

typedef struct SEG_Config {
  /* The job. */
  GRD_Geometry geometry;        /* kinematics of the job */
  double width_mm;              /* grinding width b (traverse: axial feed per work revolution) */
  double workpiece_diameter_mm; /* dw, cylindrical geometries */
  double wheel_diameter_mm;     /* ds when no wheel_diameter channel is read */
  double fixed_depth_mm;        /* ae when neither infeed nor depth is read; NAN = unknown */
  GRD_Params params;            /* chip-thickness and burn constants */
  /* Contact detection. Net power = spindle power - idle baseline. */
  double contact_on_w;      /* net power that starts contact (at least), W */
  double contact_off_w;     /* net power under which contact ends (at least), W */
  double noise_on;          /* start threshold in idle noise standard deviations */
  double noise_off;         /* end threshold in idle noise standard deviations */
  double min_pass_s;        /* shorter contacts are not passes, s */
  unsigned min_pass_samples; /* nor are contacts seen in fewer samples */
  double end_hold_s;        /* power must stay under the end threshold this long, s */
  double baseline_tau_s;    /* time constant of the idle baseline, s */
  double speed_change;      /* relative spindle-speed change that re-seeds the baseline */
  double max_interval_s;    /* a step between samples longer than this is a gap, s */
  double depth_tolerance_mm; /* infeed steps smaller than this count as zero (spark-out) */
} SEG_Config;

/* Documented defaults for every field (see docs/segmentation.md). */
void SEG_DefaultConfig(SEG_Config *c);
/* Returns NULL when the configuration is usable, else a message naming the field. */
const char *SEG_CheckConfig(const SEG_Config *c);

/* One grinding pass. Units in the names; NAN where unknown. */
typedef struct SEG_Pass {
  unsigned long number;          /* 1, 2, ... in the order the passes ended */
  double start_time;             /* s, start of contact (half-power crossing) */
  double end_time;               /* s, end of contact */
  double duration_s;             /* end_time - start_time */
  double depth_mm;               /* ae, plunge: per work revolution */
  double work_speed_mm_s;        /* vw, mean over the pass */
  double wheel_speed_m_s;        /* vs, mean over the pass */
  double spindle_speed_rpm;      /* mean over the pass */
  double wheel_diameter_mm;      /* ds during the pass */
  double equivalent_diameter_mm; /* de */
  double contact_length_mm;      /* lg */
  double specific_removal_rate_mm2_s; /* Q' */
  double removal_rate_mm3_s;     /* Q */
  double aggressiveness;         /* Aggr */
  double chip_thickness_mm;      /* heq */
  double max_chip_thickness_mm;  /* hmax */
  double idle_power_w;           /* baseline subtracted during the pass */
  double net_power_mean_w;       /* energy / duration */
  double net_power_peak_w;       /* highest net sample */
  double energy_j;               /* integral of net power over the pass */
  double volume_mm3;             /* Q * duration */
  double specific_energy_j_mm3;  /* energy / volume */
  double burn_threshold_j_mm3;   /* u* (Malkin) */
  double burn_ratio;             /* u / u* */
  double infeed_position_mm;     /* infeed at the pass, NAN when not read */
  double dress_count;            /* dress counter at the pass, NAN when not read */
  unsigned samples;              /* samples in contact */
  unsigned flags;                /* SEG_F_* */
} SEG_Pass;

/* Size of the edge buffers used to place the half-power crossings. */
#define SEG_EDGE 8

typedef struct SEG_EdgeSample {
  double t; /* s */
  double p; /* W, net */
} SEG_EdgeSample;

/* exp and expm1 of one idle step, remembered (see segment.c). */
#define SEG_STEP_MEMO_BITS 10
typedef struct SEG_StepMemo {
  uint64_t dt_bits;          /* the step dt (s) between idle samples, as the bits of the double */
  double exp_x;              /* exp(-dt / baseline_tau_s) */
  double expm1_x;            /* expm1(-dt / baseline_tau_s) */
} SEG_StepMemo;

/* State of the segmentation; a plain struct so the caller owns the memory. */
typedef struct SEG_State {
  SEG_Config cfg;
  /* idle baseline: exponentially weighted straight-line fit of idle power
   * against time, so that warm-up drift is followed without lag and can be
   * extrapolated over a pass. Sums are relative to bl_ref. */
  int have_baseline;       /* at least one idle sample */
  double bl_ref;           /* s, time the sums are centred on (the latest idle sample) */
  double bl_w, bl_wt, bl_wp, bl_wtt, bl_wtp; /* weighted sums of 1, u, p, u^2, u*p */
  double bl_level, bl_slope; /* W and W/s at bl_ref: the line of the sums, fitted when they change */
  double baseline_w;       /* idle power predicted at the latest sample */
  double noise_w;          /* idle noise standard deviation estimate */
  double baseline_rpm;     /* spindle speed the baseline belongs to */
  double settle_until;     /* no contact may start before this time (baseline re-seeding) */
  /* stream */
  int have_last;           /* a valid sample precedes */
  SMP_Sample last;         /* previous valid sample */
  int in_gap;              /* samples are missing since gap_from */
  double gap_from;         /* time of the last valid sample before the gap */
  double last_net_w;       /* its net power */
  /* current pass */
  int in_pass;             /* contact started */
  int below;               /* samples currently under the end threshold */
  double below_since;      /* time the power went under the end threshold */
  double pass_bl_level;    /* idle power at pass_bl_ref, frozen at the start */
  double pass_bl_slope;    /* W/s, idle drift frozen at the start */
  double pass_bl_ref;      /* s */
  double t_first, t_last;  /* first and last contact samples */
  double energy_j;         /* trapezoid integral of net power, committed part */
  double pend_energy_j;    /* integral over the current dip (not yet committed) */
  double peak_w;           /* highest net power in contact */
  double sum_net;          /* sum of net power over contact samples */
  double edge_energy_j;    /* integral from the last contact sample to the first one under */
  SEG_EdgeSample edge;     /* first sample under the end threshold */
  int start_after_gap;     /* the pass began right after a gap: its start is unknown */
  double sum_vw, sum_rpm, sum_ds, sum_doc; /* sums over contact samples */
  unsigned n_vw, n_rpm, n_ds, n_doc, n_samples, pend_samples;
  double infeed_first, infeed_first_t, infeed_last, infeed_last_t;
  double dress_first;
  SEG_EdgeSample rise[SEG_EDGE]; /* last idle sample then the first contact samples */
  unsigned n_rise;
  SEG_EdgeSample fall[SEG_EDGE]; /* ring of the latest samples */
  unsigned n_fall, fall_head;
  /* between passes */
  unsigned long next_number;
  int have_prev_infeed;
  double prev_infeed_mm;
  int have_prev_dress;
  double prev_dress;
  double step_memo_tau_s;  /* the baseline_tau_s of step_memo (0 = none yet) */
  SEG_StepMemo step_memo[1u << SEG_STEP_MEMO_BITS]; /* by the bits of dt */
} SEG_State;

void SEG_Init(SEG_State *s, const SEG_Config *c, unsigned long first_number);
/* Feeds one sample. Returns 1 and fills *out when a pass has ended, else 0.
 * A sample with every channel NAN, or a step longer than max_interval_s, is a gap. */
int SEG_Feed(SEG_State *s, const SMP_Sample *x, SEG_Pass *out);
/* End of the stream: returns 1 and fills *out when a pass was open (flagged truncated). */
int SEG_Finish(SEG_State *s, SEG_Pass *out);
/* Net idle baseline and noise currently estimated, W (NAN before the first sample). */
double SEG_Baseline(const SEG_State *s);
/* True while a pass is open. */
int SEG_InPass(const SEG_State *s);

#endif
