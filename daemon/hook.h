/* hook.h: the exec hook: a program run for each alert, without a shell, with
 * the alert in its environment; it never blocks the poll loop. */
#ifndef GRITLINE_HOOK_H
#define GRITLINE_HOOK_H

#include <sys/types.h>

#include "passlog.h"

#define HOK_RUNNING 4   /* hooks running at once */
#define HOK_QUEUE 32    /* alerts waiting; beyond, the oldest is dropped (counted) */

typedef struct HOK_Run {
  pid_t pid;          /* 0 = free */
  double started;     /* monotonic s */
  int killed;         /* the time limit was reached */
  char kind[32];      /* alert it runs for, for messages */
} HOK_Run;

typedef struct HOK_Hooks {
  char path[256];            /* program; "" = no hook */
  double timeout_s;          /* time limit of one run */
  char machine[40];          /* GRITLINE_MACHINE */
  HOK_Run run[HOK_RUNNING];
  PLG_Event queue[HOK_QUEUE];
  char queue_dir[HOK_QUEUE][256];
  int head, len;
  unsigned long runs, failures, dropped; /* counters */
} HOK_Hooks;

void HOK_Init(HOK_Hooks *h, const char *path, double timeout_s, const char *machine);
/* Queues an alert (raised or cleared condition); other events are ignored. */
void HOK_Alert(HOK_Hooks *h, const PLG_Event *e, const char *shift_dir, double now);
/* Reaps finished hooks, kills overdue ones, starts queued ones. Call often. */
void HOK_Service(HOK_Hooks *h, double now);
/* Waits up to timeout_s for running hooks, then kills them (at shutdown). */
void HOK_Finish(HOK_Hooks *h, double timeout_s);

#endif
