/* calc.h: `gritline calc`, the grinding calculator. */
#ifndef GRITLINE_CALC_H
#define GRITLINE_CALC_H

/* Runs the subcommand; argv[0] is "calc". Returns a sysexits code. */
int CALC_Main(int argc, char **argv);

#endif
