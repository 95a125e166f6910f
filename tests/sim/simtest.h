/* simtest.h: helpers shared by the simulator's Criterion tests (scenario loading). */
#ifndef GRITLINE_TESTS_SIMTEST_H
#define GRITLINE_TESTS_SIMTEST_H

#include "scenario.h"

/* Loads conf/scenarios/NAME over the defaults; a failure fails the test. */
void simtest_load(const char *name, SIM_Scenario *s);
/* Parses text over the defaults; returns SIM_ScenarioParse's result, message in err. */
int simtest_parse(const char *text, SIM_Scenario *s, char *err, size_t errsize);

#endif
