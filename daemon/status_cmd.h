/* status_cmd.h: `gritline status` and `gritline dress`, clients of the daemon's control socket. */
#ifndef GRITLINE_STATUS_CMD_H
#define GRITLINE_STATUS_CMD_H

int STC_StatusMain(int argc, char **argv);
int STC_DressMain(int argc, char **argv);

#endif
