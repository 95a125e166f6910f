/* log.c: the daemon's log on stderr, with sd-daemon priority prefixes for journald. */
#include "log.h"

#include <stdarg.h>
#include <stdio.h>
#include <unistd.h>

static int prefixes = 1;          /* the one piece of process state: set once at start */
static const char *name = "gritline";

void LOG_Initialise(const char *program)
{
  name = program;
  prefixes = !isatty(STDERR_FILENO);
}

void LOG_Message(LOG_Level level, const char *fmt, ...)
{
  char line[1024];
  va_list ap;
  va_start(ap, fmt);
  vsnprintf(line, sizeof line, fmt, ap);
  va_end(ap);
  if (prefixes)
    fprintf(stderr, "<%d>%s\n", (int)level, line);
  else
    fprintf(stderr, "%s: %s\n", name, line);
}
