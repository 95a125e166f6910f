/* conf_keys.c: prints every key the configuration parser accepts, for the documentation check. */
#include <stdio.h>

#include "conf.h"

int main(void)
{
  CNF_PrintKeys(stdout);
  return fflush(stdout) == 0 ? 0 : 74;
}
