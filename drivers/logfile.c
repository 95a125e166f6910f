/* logfile.c: append-only text files written in whole lines. */
#include "logfile.h"

#include <errno.h>
#include <fcntl.h>
#include <stdio.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/statvfs.h>
#include <unistd.h>

void LGF_Init(LGF_File *f)
{
  memset(f, 0, sizeof(*f));
  f->fd = -1;
}

int LGF_IsOpen(const LGF_File *f) { return f->fd >= 0; }

/* Offset just after the last '\n' at or before `end`. */
static long long last_newline_end(int fd, long long end)
{
  char buf[4096];
  long long pos = end;
  while (pos > 0) {
    size_t want = pos > (long long)sizeof buf ? sizeof buf : (size_t)pos;
    ssize_t got = pread(fd, buf, want, pos - (long long)want);
    if (got != (ssize_t)want)
      return -1;
    for (ssize_t i = got; i-- > 0;)
      if (buf[i] == '\n')
        return pos - (long long)want + i + 1;
    pos -= (long long)want;
  }
  return 0;
}

int LGF_Open(LGF_File *f, const char *path)
{
  LGF_Init(f);
  snprintf(f->path, sizeof f->path, "%s", path);
  int fd = open(path, O_RDWR | O_APPEND | O_CREAT | O_CLOEXEC, 0644);
  if (fd < 0)
    return -1;
  struct stat st;
  if (fstat(fd, &st) != 0) {
    int e = errno;
    close(fd);
    errno = e;
    return -1;
  }
  long long size = st.st_size;
  if (size > 0) {
    long long whole = last_newline_end(fd, size);
    if (whole < 0) {
      close(fd);
      errno = EIO;
      return -1;
    }
    if (whole < size) {
      if (ftruncate(fd, whole) != 0) {
        int e = errno;
        close(fd);
        errno = e;
        return -1;
      }
      f->trimmed = size - whole;
      size = whole;
    }
  }
  f->fd = fd;
  f->size = size;
  f->created = size == 0;
  return 0;
}

int LGF_Append(LGF_File *f, const char *line, size_t len)
{
  if (f->fd < 0) {
    errno = EBADF;
    return -1;
  }
  size_t done = 0;
  while (done < len) {
    ssize_t n = write(f->fd, line + done, len - done);
    if (n < 0 && errno == EINTR)
      continue;
    if (n <= 0) {
      int e = n < 0 ? errno : ENOSPC;
      /* Keep the file in whole lines: take back the part that got out. */
      if (done > 0 && ftruncate(f->fd, f->size) != 0)
        e = errno;
      errno = e;
      return -1;
    }
    done += (size_t)n;
  }
  f->size += (long long)len;
  return 0;
}

void LGF_Close(LGF_File *f)
{
  if (f->fd >= 0) {
    fdatasync(f->fd);
    close(f->fd);
  }
  f->fd = -1;
}

long LGF_LastLine(const LGF_File *f, char *buf, size_t size)
{
  if (f->fd < 0 || f->size == 0 || size == 0)
    return -1;
  long long end = f->size - 1; /* the final '\n' */
  long long start = last_newline_end(f->fd, end);
  if (start < 0)
    return -1;
  size_t len = (size_t)(end - start);
  if (len >= size)
    len = size - 1;
  if (pread(f->fd, buf, len, start) != (ssize_t)len)
    return -1;
  buf[len] = '\0';
  return (long)len;
}

long long LGF_Room(const LGF_File *f)
{
  struct statvfs v;
  if (f->fd < 0 || fstatvfs(f->fd, &v) != 0)
    return -1;
  return (long long)v.f_bavail * (long long)v.f_frsize;
}
