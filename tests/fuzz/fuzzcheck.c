/* fuzzcheck.c: what the fuzz targets check alike: one-line messages, numbers finite or NAN, inputs as files. */
#include "fuzzcheck.h"

#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>
#include <unistd.h>

void FZ_Fail(const char *fmt, ...)
{
  va_list ap;
  va_start(ap, fmt);
  fputs("fuzz check failed: ", stderr);
  vfprintf(stderr, fmt, ap);
  fputc('\n', stderr);
  va_end(ap);
  abort();
}

void FZ_CheckMessage(const char *what, const char *msg, size_t size, const char *prefix)
{
  const char *end = memchr(msg, '\0', size);
  if (!end)
    FZ_Fail("%s: message not NUL-terminated within %zu bytes", what, size);
  if (end == msg)
    FZ_Fail("%s: failed without a message", what);
  if (memchr(msg, '\n', (size_t)(end - msg)))
    FZ_Fail("%s: message spans lines: \"%s\"", what, msg);
  if (strncmp(msg, prefix, strlen(prefix)) != 0)
    FZ_Fail("%s: message does not start with \"%s\": \"%s\"", what, prefix, msg);
}

void FZ_CheckValue(const char *what, double v)
{
  if (isinf(v))
    FZ_Fail("%s: infinite value %g handed on", what, v);
}

int FZ_OpenMemFile(const char *name, char *path, size_t size)
{
  int fd = memfd_create(name, MFD_CLOEXEC);
  if (fd < 0)
    FZ_Fail("memfd_create %s failed", name);
  snprintf(path, size, "/proc/self/fd/%d", fd);
  return fd;
}

void FZ_Rewrite(int fd, const void *data, size_t len)
{
  if (ftruncate(fd, 0) != 0)
    FZ_Fail("ftruncate of the input file failed");
  size_t done = 0;
  while (done < len) {
    ssize_t n = pwrite(fd, (const char *)data + done, len - done, (off_t)done);
    if (n <= 0)
      FZ_Fail("pwrite of the input file failed");
    done += (size_t)n;
  }
}
