/* replay.h: `gritline replay`, recordings through the daemon's own pipeline. */
#ifndef GRITLINE_REPLAY_H
#define GRITLINE_REPLAY_H

int RPL_Main(int argc, char **argv);

#endif
