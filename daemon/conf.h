/* conf.h: the configuration file of gritlined (INI), strictly validated. See gritline.conf(5). */
#ifndef GRITLINE_CONF_H
#define GRITLINE_CONF_H

#include <stddef.h>
#include <stdio.h>

#include "condition.h"
#include "mbclient.h"
#include "metrics.h"
#include "mqtt.h"
#include "recording.h"
#include "regmap.h"
#include "segment.h"
#include "shift.h"

#define CNF_NAME 33       /* machine, job and wheel names: 1..32 of [A-Za-z0-9_-] */
#define CNF_MAX_JOBS 16
#define CNF_MAX_WHEELS 16
#define CNF_PATH 256
#define CNF_LINE_MAX 200  /* inih's line buffer, bytes: lines over CNF_LINE_MAX - 2 characters are refused */

typedef struct CNF_Job {
  char name[CNF_NAME];   /* [job.NAME] */
  int line;              /* line of its section header */
  SEG_Config seg;        /* geometry, width, diameters, fixed depth, model constants */
  char material[16];     /* "steel" (Malkin's constants) or "custom" */
} CNF_Job;

typedef struct CNF_Wheel {
  char name[CNF_NAME];     /* [wheel.NAME] */
  int line;                /* line of its section header */
  double diameter_mm;      /* mm, when no wheel_diameter channel is read */
  double max_speed_m_s;    /* m/s, the marked maximum operating speed */
  double aggr_low;         /* aggressiveness window, low end */
  double aggr_high;        /* aggressiveness window, high end */
  double dull_limit;       /* dull ratio that asks for a dress */
  double burn_margin;      /* fraction of Malkin's threshold that raises burn risk */
  double min_g_ratio;      /* G-ratio below which wear is excessive */
  double wear_drop;        /* fraction of the reference energy that signals grit pull-out */
  double aggr_min;         /* overall working range of aggressiveness, low end */
  double aggr_max;         /* high end */
} CNF_Wheel;

/* Write-back of one condition to the controller while it is active. */
typedef enum CNF_WriteKind { CNF_WB_NONE = 0, CNF_WB_COIL, CNF_WB_REGISTER } CNF_WriteKind;
typedef struct CNF_WriteBack {
  CNF_WriteKind kind;  /* none, coil or holding register */
  unsigned address;    /* protocol address */
  unsigned value;      /* register value while active (coils: on) */
} CNF_WriteBack;

typedef struct CNF_Config {
  char path[CNF_PATH];        /* the file read */
  /* [machine] */
  char machine[CNF_NAME];     /* name, used in folders and metrics */
  char description[128];      /* free text */
  double spindle_rating_w;    /* W, NAN = not given */
  double poll_interval_s;     /* s between polls */
  int timestamp_controller;   /* 1: samples carry the controller's clock channel */
  char data_dir[CNF_PATH];    /* root of <machine>/<date_shift>/ */
  char runtime_dir[CNF_PATH]; /* control socket */
  char job_name[CNF_NAME];    /* active job */
  char wheel_name[CNF_NAME];  /* active wheel */
  /* [modbus] and [channel.*] */
  MBC_Config modbus;
  RMP_Map map;
  /* [job.*] and [wheel.*] */
  CNF_Job jobs[CNF_MAX_JOBS];
  int n_jobs;
  CNF_Wheel wheels[CNF_MAX_WHEELS];
  int n_wheels;
  const CNF_Job *job;         /* the active ones, set by CNF_Load */
  const CNF_Wheel *wheel;
  /* [shifts] */
  SFT_Schedule shifts;
  /* [segmentation]: detection settings, copied into the active job's SEG_Config */
  SEG_Config detect;
  /* [condition]: the wheel-condition model (wheel, machine and job parts are
   * filled from the active sections by CNF_CondSettings) */
  CND_Settings cond;
  double comm_lost_after_s;   /* [machine]: failed polls for this long raise communication_lost */
  /* [alerts] */
  char hook[CNF_PATH];        /* program run for each alert event ("" = none) */
  double hook_timeout_s;      /* s before the hook is killed */
  /* [writeback] */
  CNF_WriteBack writeback[CND_CONDITION_COUNT];
  /* [metrics]: the HTTP server */
  MET_Config metrics;
  /* [mqtt]: the publisher (client_id and topic_prefix are filled from the machine name when not given) */
  MQT_Config mqtt;
} CNF_Config;

/* The condition-model settings for the active job and wheel. */
void CNF_CondSettings(const CNF_Config *c, CND_Settings *out);

/* Reads and validates path. Returns 0, or -1 with "file:line: message" in err
 * (the file alone when no line applies). */
int CNF_Load(CNF_Config *c, const char *path, char *err, size_t errlen);
/* The same for a replay: no Modbus map is needed, nor a marked wheel speed. */
int CNF_LoadForReplay(CNF_Config *c, const char *path, char *err, size_t errlen);
/* A configuration from a recording's metadata alone (machine, geometry, width,
 * diameters); everything else at its default. */
int CNF_FromRecording(CNF_Config *c, const REC_Meta *m, char *err, size_t errlen);
/* Sets one key: "segmentation.min_pass_s=0.5", "wheel.dull_limit=1.2" (the active
 * wheel), "wheel.NAME.KEY", "job.KEY". Returns 0, or -1 with a message. */
int CNF_Set(CNF_Config *c, const char *assignment, char *err, size_t errlen);
/* The checks across keys again, after CNF_Set. */
int CNF_Recheck(CNF_Config *c, int replay, char *err, size_t errlen);
/* The segmentation settings of the active job with the detection settings. */
void CNF_SegConfig(const CNF_Config *c, SEG_Config *out);
/* Prints the effective configuration (every key, defaults included) as INI. */
void CNF_Print(const CNF_Config *c, FILE *out);
/* Every key the parser accepts, one "section key" per line (for the docs test). */
void CNF_PrintKeys(FILE *out);

#endif
