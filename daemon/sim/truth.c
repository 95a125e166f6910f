/* truth.c: the ground-truth CSV files of the simulator. */
#include "truth.h"

#include <errno.h>
#include <math.h>
#include <string.h>

const char *SIM_TruthPassHeader(void)
{
  return "pass,part,start_time,end_time,depth_of_cut_mm,work_speed_mm_min,wheel_speed_m_s,"
         "wheel_diameter_mm,equivalent_diameter_mm,aggressiveness,specific_energy_j_mm3,energy_j,"
         "volume_mm3,wear_flat,dull_factor,burn_threshold_j_mm3,burnt,dress_count,kind,"
         "pass_in_part,spindle_rpm,chip_thickness_mm,grinding_power_w,g_ratio";
}

const char *SIM_TruthDressHeader(void)
{
  return "dress,part,start_time,end_time,dress_count,diameter_before_mm,diameter_after_mm,"
         "wear_flat_before,reason";
}

/* UNIX seconds with ms, exact from the ms epoch plus model seconds. */
static double unix_s(int64_t epoch_ms, double t) { return (double)epoch_ms / 1000.0 + t; }

int SIM_TruthFormatPass(char *buf, size_t size, const SIM_PassRecord *r, int64_t epoch_ms)
{
  int n = snprintf(buf, size,
                   "%lu,%lu,%.3f,%.3f,%.4f,%.1f,%.4f,%.4f,%.4f,%.4f,%.4f,%.3f,%.3f,%.6f,%.5f,%.4f,%d,"
                   "%u,%s,%u,%.2f,%.4e,%.2f,%.3f",
                   r->pass, r->part, unix_s(epoch_ms, r->start_s), unix_s(epoch_ms, r->end_s),
                   r->depth_mm, r->work_speed_mm_min, r->wheel_speed_m_s, r->wheel_diameter_mm,
                   r->equivalent_diameter_mm, r->aggressiveness, r->specific_energy_j_mm3,
                   r->energy_j, r->volume_mm3, r->wear_flat, r->dull_factor,
                   r->burn_threshold_j_mm3, r->burnt, r->dress_count, SIM_PassKindName(r->kind),
                   r->pass_in_part, r->spindle_rpm, r->chip_thickness_mm, r->power_w, r->g_ratio);
  return n >= 0 && (size_t)n < size ? n : -1;
}

int SIM_TruthFormatDress(char *buf, size_t size, unsigned long index, const SIM_DressRecord *d,
                         int64_t epoch_ms)
{
  int n = snprintf(buf, size, "%lu,%lu,%.3f,%.3f,%u,%.4f,%.4f,%.6f,%s", index, d->part,
                   unix_s(epoch_ms, d->start_s), unix_s(epoch_ms, d->end_s), d->dress_count,
                   d->diameter_before_mm, d->diameter_after_mm, d->wear_flat_before, d->reason);
  return n >= 0 && (size_t)n < size ? n : -1;
}

static FILE *open_out(const char *path, int *own, char *err, size_t errsize)
{
  *own = 0;
  if (path == NULL)
    return NULL;
  if (strcmp(path, "-") == 0)
    return stdout;
  FILE *f = fopen(path, "w");
  if (f == NULL) {
    snprintf(err, errsize, "%s: %s", path, strerror(errno));
    return NULL;
  }
  *own = 1;
  return f;
}

int SIM_TruthOpen(SIM_Truth *tr, const char *pass_path, const char *dress_path, int64_t epoch_ms,
                  char *err, size_t errsize)
{
  memset(tr, 0, sizeof *tr);
  tr->epoch_ms = epoch_ms;
  tr->passes = open_out(pass_path, &tr->own_passes, err, errsize);
  if (pass_path != NULL && tr->passes == NULL)
    return -1;
  tr->dresses = open_out(dress_path, &tr->own_dresses, err, errsize);
  if (dress_path != NULL && tr->dresses == NULL) {
    SIM_TruthClose(tr, err, 0);
    return -1;
  }
  if (tr->passes != NULL)
    fprintf(tr->passes, "%s\n", SIM_TruthPassHeader());
  if (tr->dresses != NULL)
    fprintf(tr->dresses, "%s\n", SIM_TruthDressHeader());
  return SIM_TruthFlush(tr, err, errsize);
}

int SIM_TruthWrite(SIM_Truth *tr, const SIM_Event *ev, char *err, size_t errsize)
{
  char line[512];
  FILE *f = NULL;
  int n = -1;
  if (ev->kind == SIM_EVENT_PASS) {
    f = tr->passes;
    n = SIM_TruthFormatPass(line, sizeof line, &ev->pass, tr->epoch_ms);
  } else {
    tr->dress_rows++;
    f = tr->dresses;
    n = SIM_TruthFormatDress(line, sizeof line, tr->dress_rows, &ev->dress, tr->epoch_ms);
  }
  if (f == NULL)
    return 0;
  if (n < 0 || fprintf(f, "%s\n", line) < 0) {
    snprintf(err, errsize, "truth file: %s", n < 0 ? "row too long" : strerror(errno));
    return -1;
  }
  return 0;
}

int SIM_TruthAdvance(SIM_Truth *tr, SIM_Model *m, double t, char *err, size_t errsize)
{
  SIM_Event ev;
  int dresses = 0;
  while (SIM_ModelStep(m, t, &ev)) {
    if (ev.kind == SIM_EVENT_DRESS)
      dresses++;
    if (SIM_TruthWrite(tr, &ev, err, errsize) != 0)
      return -1;
  }
  return dresses;
}

int SIM_TruthFlush(SIM_Truth *tr, char *err, size_t errsize)
{
  if ((tr->passes != NULL && fflush(tr->passes) != 0) ||
      (tr->dresses != NULL && fflush(tr->dresses) != 0)) {
    snprintf(err, errsize, "truth file: %s", strerror(errno));
    return -1;
  }
  return 0;
}

int SIM_TruthClose(SIM_Truth *tr, char *err, size_t errsize)
{
  int rc = 0;
  if (tr->passes != NULL && tr->own_passes && fclose(tr->passes) != 0)
    rc = -1;
  else if (tr->passes != NULL && !tr->own_passes && fflush(tr->passes) != 0)
    rc = -1;
  if (tr->dresses != NULL && tr->own_dresses && fclose(tr->dresses) != 0)
    rc = -1;
  if (rc != 0 && errsize > 0)
    snprintf(err, errsize, "truth file: %s", strerror(errno));
  tr->passes = tr->dresses = NULL;
  return rc;
}
