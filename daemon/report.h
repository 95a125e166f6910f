/* report.h: `gritline report`, shift reports from the logs (HTML with inline SVG charts, text, JSON). */
#ifndef GRITLINE_REPORT_H
#define GRITLINE_REPORT_H

/* Runs the subcommand; argv[0] is "report". Returns a sysexits code. */
int RPT_Main(int argc, char **argv);

#endif
