/* hookstamp.c: an exec hook for the live benchmark: notes when the daemon started it for an alert. */
#include <fcntl.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

/* Run by gritlined for every alert (docs/configuration.md, [alerts] hook),
 * without a shell: the first thing it does is read the clock, then it appends
 * "kind,state,pass,started" to hookstamps.csv in the shift folder, in one
 * write (O_APPEND), so hooks running at once do not mix their lines. */
int main(int argc, char **argv)
{
  struct timespec now;
  clock_gettime(CLOCK_REALTIME, &now);
  const char *dir = getenv("GRITLINE_SHIFT_DIR");
  const char *state = getenv("GRITLINE_STATE");
  const char *pass = getenv("GRITLINE_PASS");
  if (argc < 2 || !dir)
    return 64;
  char path[1024], line[256];
  snprintf(path, sizeof path, "%s/hookstamps.csv", dir);
  int n = snprintf(line, sizeof line, "%s,%s,%s,%lld.%09ld\n", argv[1], state ? state : "", pass ? pass : "",
                   (long long)now.tv_sec, now.tv_nsec);
  int fd = open(path, O_WRONLY | O_CREAT | O_APPEND | O_CLOEXEC, 0644);
  if (fd < 0 || n <= 0 || write(fd, line, (size_t)n) != n)
    return 74;
  close(fd);
  return 0;
}
