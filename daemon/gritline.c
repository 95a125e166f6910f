/* gritline.c: the operator command; dispatches to its subcommands. */
#include <stdio.h>
#include <string.h>
#include <sysexits.h>

#include "calc.h"
#include "replay.h"
#include "report.h"
#include "status_cmd.h"

static const char usage_text[] =
    "usage: gritline COMMAND [options]\n"
    "\n"
    "Commands:\n"
    "  calc      grinding figures for one set of conditions (aggressiveness, chip\n"
    "            thickness, burn threshold, ...)\n"
    "  replay    feed recordings through the daemon's analysis again (diagnosis, what-if)\n"
    "  status    what the running daemon sees now (add --watch to follow it)\n"
    "  dress     tell the running daemon the wheel has just been dressed\n"
    "  report    shift report from the logs: HTML with charts, text or JSON\n"
    "\n"
    "gritline COMMAND --help describes each command.\n"
    "Caution: never exceed the wheel's marked maximum operating speed; gritline's figures\n"
    "and alerts are advisory; follow the machine builder's instructions, local codes and\n"
    "licensed practice.\n";

struct command {
  const char *name;
  int (*main)(int argc, char **argv);
};

static const struct command commands[] = {
    {"calc", CALC_Main},
    {"replay", RPL_Main},
    {"status", STC_StatusMain},
    {"dress", STC_DressMain},
    {"report", RPT_Main},
};

int main(int argc, char **argv)
{
  if (argc < 2) {
    fputs(usage_text, stderr);
    return EX_USAGE;
  }
  if (strcmp(argv[1], "-h") == 0 || strcmp(argv[1], "--help") == 0) {
    fputs(usage_text, stdout);
    return EX_OK;
  }
  if (strcmp(argv[1], "--version") == 0) {
    puts("gritline " GRITLINE_VERSION);
    return EX_OK;
  }
  for (size_t i = 0; i < sizeof(commands) / sizeof(commands[0]); i++)
    if (strcmp(argv[1], commands[i].name) == 0)
      return commands[i].main(argc - 1, argv + 1);
  fprintf(stderr, "gritline: unknown command \"%s\" (see gritline --help)\n", argv[1]);
  return EX_USAGE;
}
