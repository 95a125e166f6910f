/* filetest.c: helpers shared by the file-driver tests: a private temporary folder, whole-file I/O. */
#include "filetest.h"

#include <fcntl.h>
#include <stddef.h>
#include <ftw.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

static char dir[256];

const char *FTS_TempDir(void)
{
  const char *base = getenv("TMPDIR");
  snprintf(dir, sizeof dir, "%s/gritline-files-XXXXXX", base && *base ? base : "/tmp");
  if (!mkdtemp(dir)) {
    perror("mkdtemp");
    abort();
  }
  return dir;
}

static int remove_entry(const char *path, const struct stat *st, int flag, struct FTW *ftw)
{
  (void)st;
  (void)flag;
  (void)ftw;
  return remove(path);
}

void FTS_RemoveTempDir(void)
{
  if (!dir[0])
    return;
  if (nftw(dir, remove_entry, 16, FTW_DEPTH | FTW_PHYS) != 0)
    fprintf(stderr, "could not remove %s\n", dir);
  dir[0] = '\0';
}

const char *FTS_Path(const char *name)
{
  static char slots[4][512];
  static int next;
  char *p = slots[next++ % 4];
  snprintf(p, sizeof slots[0], "%s/%s", dir, name);
  return p;
}

int FTS_WriteFile(const char *path, const void *data, size_t len)
{
  int fd = open(path, O_WRONLY | O_CREAT | O_TRUNC | O_CLOEXEC, 0644);
  if (fd < 0)
    return -1;
  const char *p = data;
  size_t done = 0;
  while (done < len) {
    ssize_t n = write(fd, p + done, len - done);
    if (n <= 0) {
      close(fd);
      return -1;
    }
    done += (size_t)n;
  }
  return close(fd);
}

char *FTS_ReadFile(const char *path, size_t *len)
{
  FILE *f = fopen(path, "rb");
  if (!f)
    return NULL;
  size_t cap = 4096, n = 0;
  char *buf = malloc(cap);
  for (;;) {
    if (!buf) {
      fclose(f);
      return NULL;
    }
    n += fread(buf + n, 1, cap - n - 1, f);
    if (n < cap - 1)
      break;
    cap *= 2;
    char *bigger = realloc(buf, cap);
    if (!bigger)
      free(buf);
    buf = bigger;
  }
  fclose(f);
  buf[n] = '\0';
  if (len)
    *len = n;
  return buf;
}

double *FTS_Column(SMP_Sample *s, int col)
{
  static const size_t offset[REC_COLUMNS] = {
      offsetof(SMP_Sample, time),          offsetof(SMP_Sample, spindle_power_w),
      offsetof(SMP_Sample, spindle_speed_rpm), offsetof(SMP_Sample, work_speed_mm_min),
      offsetof(SMP_Sample, infeed_position_mm), offsetof(SMP_Sample, depth_of_cut_mm),
      offsetof(SMP_Sample, wheel_diameter_mm), offsetof(SMP_Sample, dress_count),
      offsetof(SMP_Sample, grinding),
  };
  return (double *)(void *)((char *)s + offset[col]);
}
