/* print_keys.c: lists every key the configuration parser accepts, for the manual page test. */
#include <stdio.h>
#include <sysexits.h>

#include "conf.h"

int main(void)
{
  CNF_PrintKeys(stdout);
  return fflush(stdout) == 0 && !ferror(stdout) ? EX_OK : EX_IOERR;
}
