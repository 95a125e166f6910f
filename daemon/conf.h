/* conf.h: the configuration file of gritlined (INI), strictly validated. See gritline.conf(5). */
#ifndef GRITLINE_CONF_H
#define GRITLINE_CONF_H

#include <stddef.h>
#include <stdio.h>

#include "mbclient.h"
#include "regmap.h"
#include "segment.h"
#include "shift.h"

#define CNF_NAME 33       /* machine, job and wheel names: 1..32 of [A-Za-z0-9_-] */
#define CNF_MAX_JOBS 16
#define CNF_MAX_WHEELS 16
#define CNF_PATH 256
#define CNF_LINE_MAX 200  /* inih's line limit: longer lines are refused with their number */

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
} CNF_Wheel;

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
} CNF_Config;

/* Reads and validates path. Returns 0, or -1 with "file:line: message" in err
 * (the file alone when no line applies). */
int CNF_Load(CNF_Config *c, const char *path, char *err, size_t errlen);
/* The segmentation settings of the active job with the detection settings. */
void CNF_SegConfig(const CNF_Config *c, SEG_Config *out);
/* Prints the effective configuration (every key, defaults included) as INI. */
void CNF_Print(const CNF_Config *c, FILE *out);
/* Every key the parser accepts, one "section key" per line (for the docs test). */
void CNF_PrintKeys(FILE *out);

#endif
