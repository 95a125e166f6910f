/* simtest.c: helpers shared by the simulator's Criterion tests. */
#include "simtest.h"

#include <criterion/criterion.h>
#include <stdio.h>
#include <stdlib.h>

void simtest_load(const char *name, SIM_Scenario *s)
{
  char path[1024];
  snprintf(path, sizeof path, "%s/%s", SIM_SCENARIO_DIR, name);
  FILE *f = fopen(path, "r");
  cr_assert(f != NULL, "cannot open %s", path);
  static char text[SIM_TEXT_MAX + 1];
  size_t n = fread(text, 1, SIM_TEXT_MAX, f);
  fclose(f);
  text[n] = '\0';
  char err[600];
  SIM_ScenarioDefaults(s);
  cr_assert(SIM_ScenarioParse(text, path, s, err, sizeof err) == 0, "%s", err);
}

int simtest_parse(const char *text, SIM_Scenario *s, char *err, size_t errsize)
{
  SIM_ScenarioDefaults(s);
  return SIM_ScenarioParse(text, "t.ini", s, err, errsize);
}
