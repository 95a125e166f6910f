/* sumwrite.c: writes a shift folder's summary.json as the daemon does (SUM_WriteFolder), for test_report.py. */
#include <stdio.h>
#include <stdlib.h>

#include "summary.h"

int main(int argc, char **argv)
{
  if (argc != 4) {
    fputs("usage: sumwrite SHIFT_FOLDER AGGR_LOW AGGR_HIGH\n", stderr);
    return 64;
  }
  SUM_Window w = {strtod(argv[2], NULL), strtod(argv[3], NULL)};
  char err[600];
  if (SUM_WriteFolder(argv[1], &w, err, sizeof err) != 0) {
    fprintf(stderr, "sumwrite: %s\n", err);
    return 1;
  }
  return 0;
}
