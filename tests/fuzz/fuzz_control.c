/* fuzz_control.c: libFuzzer target for the control socket's request parser, CTL_ParseRequest. */
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "control.h"
#include "fuzzcheck.h"

static void check_text(const char *what, const char *s, size_t size)
{
  const char *end = memchr(s, '\0', size);
  if (!end)
    FZ_Fail("%s: not NUL-terminated", what);
  for (const char *p = s; p < end; p++)
    if ((unsigned char)*p < 0x20)
      FZ_Fail("%s: control byte 0x%02x", what, (unsigned char)*p);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
  /* Exactly the bytes given, so that a read past len is caught. */
  char *line = malloc(size ? size : 1);
  if (!line)
    FZ_Fail("out of memory");
  memcpy(line, data, size);
  CTL_Parsed r;
  CTL_ParseRequest(line, size, &r);
  switch (r.kind) {
  case CTL_STATUS:
  case CTL_PING:
  case CTL_HELP:
    break;
  case CTL_DRESS:
    if (strcmp(r.trigger, "operator") != 0 && strcmp(r.trigger, "schedule") != 0)
      FZ_Fail("dress with trigger \"%s\"", r.trigger);
    /* The note goes into a recording mark and the status JSON: one line. */
    check_text("dress note", r.note, sizeof r.note);
    if (size < 5 || memcmp(line, "dress", 5) != 0)
      FZ_Fail("a dress request that does not say dress");
    break;
  case CTL_BAD:
    /* The reply is one line, sent back as it is. */
    FZ_CheckMessage("CTL_ParseRequest", r.error, sizeof r.error, "error ");
    check_text("error reply", r.error, sizeof r.error);
    break;
  default:
    FZ_Fail("unknown request kind %d", (int)r.kind);
  }
  free(line);
  return 0;
}
