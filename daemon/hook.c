/* hook.c: the exec hook for alerts. */
#include "hook.h"

#include <errno.h>
#include <math.h>
#include <signal.h>
#include <spawn.h>
#include <stdio.h>
#include <string.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#include "log.h"
#include "recording.h"

void HOK_Init(HOK_Hooks *h, const char *path, double timeout_s, const char *machine)
{
  memset(h, 0, sizeof *h);
  snprintf(h->path, sizeof h->path, "%s", path ? path : "");
  h->timeout_s = timeout_s;
  snprintf(h->machine, sizeof h->machine, "%s", machine);
}

void HOK_Alert(HOK_Hooks *h, const PLG_Event *e, const char *shift_dir, double now)
{
  if (!h->path[0] || (e->state != PLG_RAISED && e->state != PLG_CLEARED))
    return;
  if (h->len == HOK_QUEUE) {
    h->head = (h->head + 1) % HOK_QUEUE;
    h->len--;
    h->dropped++;
    LOG_Message(LOG_WARNING, "hook %s: too many alerts waiting, the oldest was dropped", h->path);
  }
  int slot = (h->head + h->len) % HOK_QUEUE;
  h->queue[slot] = *e;
  snprintf(h->queue_dir[slot], sizeof h->queue_dir[slot], "%s", shift_dir);
  h->len++;
  HOK_Service(h, now);
}

/* Starts the hook for one alert. The environment is built here, whole: the
 * hook sees nothing of the daemon's own. */
static int start(HOK_Hooks *h, HOK_Run *r, const PLG_Event *e, const char *dir, double now)
{
  char env[12][700];
  char iso[40];
  REC_FormatIso(e->time, iso, sizeof iso);
  int n = 0;
  snprintf(env[n++], sizeof env[0], "PATH=/usr/local/bin:/usr/bin:/bin");
  snprintf(env[n++], sizeof env[0], "GRITLINE_MACHINE=%s", h->machine);
  snprintf(env[n++], sizeof env[0], "GRITLINE_KIND=%s", e->kind);
  snprintf(env[n++], sizeof env[0], "GRITLINE_SEVERITY=%s", PLG_SeverityName(e->severity));
  snprintf(env[n++], sizeof env[0], "GRITLINE_STATE=%s", PLG_StateName(e->state));
  snprintf(env[n++], sizeof env[0], "GRITLINE_TIME=%.3f", e->time);
  snprintf(env[n++], sizeof env[0], "GRITLINE_TIME_ISO=%s", iso);
  snprintf(env[n++], sizeof env[0], "GRITLINE_PASS=%lu", e->pass);
  if (isfinite(e->value))
    snprintf(env[n++], sizeof env[0], "GRITLINE_VALUE=%.6g", e->value);
  if (isfinite(e->limit))
    snprintf(env[n++], sizeof env[0], "GRITLINE_LIMIT=%.6g", e->limit);
  snprintf(env[n++], sizeof env[0], "GRITLINE_MESSAGE=%s", e->message);
  snprintf(env[n++], sizeof env[0], "GRITLINE_SHIFT_DIR=%s", dir);
  char *envp[13];
  for (int i = 0; i < n; i++)
    envp[i] = env[i];
  envp[n] = NULL;
  char *argv[] = {h->path, (char *)e->kind, NULL};
  posix_spawnattr_t attr;
  posix_spawn_file_actions_t fa;
  posix_spawnattr_init(&attr);
  posix_spawn_file_actions_init(&fa);
  /* Its own process group, so the time limit reaches whatever it started;
   * default signal handling and an empty mask, as a fresh program expects. */
  sigset_t none, all;
  sigemptyset(&none);
  sigfillset(&all);
  posix_spawnattr_setflags(&attr, POSIX_SPAWN_SETPGROUP | POSIX_SPAWN_SETSIGMASK | POSIX_SPAWN_SETSIGDEF);
  posix_spawnattr_setpgroup(&attr, 0);
  posix_spawnattr_setsigmask(&attr, &none);
  posix_spawnattr_setsigdefault(&attr, &all);
  posix_spawn_file_actions_addopen(&fa, STDIN_FILENO, "/dev/null", 0, 0);
  pid_t pid;
  int rc = posix_spawn(&pid, h->path, &fa, &attr, argv, envp);
  posix_spawn_file_actions_destroy(&fa);
  posix_spawnattr_destroy(&attr);
  if (rc != 0) {
    h->failures++;
    LOG_Message(LOG_WARNING, "hook %s for %s: cannot start: %s", h->path, e->kind, strerror(rc));
    return -1;
  }
  r->pid = pid;
  r->started = now;
  r->killed = 0;
  snprintf(r->kind, sizeof r->kind, "%s", e->kind);
  h->runs++;
  return 0;
}

static void reap(HOK_Hooks *h, HOK_Run *r)
{
  int status;
  pid_t got = waitpid(r->pid, &status, WNOHANG);
  if (got == 0)
    return;
  if (got < 0) {
    r->pid = 0;
    return;
  }
  if (r->killed) {
    h->failures++;
    LOG_Message(LOG_WARNING, "hook %s for %s: killed after %.0f s (time limit)", h->path, r->kind, h->timeout_s);
  } else if (WIFEXITED(status) && WEXITSTATUS(status) != 0) {
    h->failures++;
    LOG_Message(LOG_WARNING, "hook %s for %s: exit status %d%s", h->path, r->kind, WEXITSTATUS(status),
                WEXITSTATUS(status) == 127 ? " (could it be executed?)" : "");
  } else if (WIFSIGNALED(status)) {
    h->failures++;
    LOG_Message(LOG_WARNING, "hook %s for %s: ended by signal %d", h->path, r->kind, WTERMSIG(status));
  }
  r->pid = 0;
}

void HOK_Service(HOK_Hooks *h, double now)
{
  for (int i = 0; i < HOK_RUNNING; i++) {
    HOK_Run *r = &h->run[i];
    if (!r->pid)
      continue;
    reap(h, r);
    if (r->pid && !r->killed && now - r->started > h->timeout_s) {
      kill(-r->pid, SIGKILL);
      r->killed = 1;
    }
  }
  for (int i = 0; i < HOK_RUNNING && h->len > 0; i++) {
    if (h->run[i].pid)
      continue;
    int slot = h->head;
    h->head = (h->head + 1) % HOK_QUEUE;
    h->len--;
    start(h, &h->run[i], &h->queue[slot], h->queue_dir[slot], now);
  }
}

static double mono(void)
{
  struct timespec ts;
  clock_gettime(CLOCK_MONOTONIC, &ts);
  return ts.tv_sec + ts.tv_nsec * 1e-9;
}

void HOK_Finish(HOK_Hooks *h, double timeout_s)
{
  double end = mono() + timeout_s;
  for (;;) {
    int running = 0;
    HOK_Service(h, mono());
    for (int i = 0; i < HOK_RUNNING; i++)
      running += h->run[i].pid != 0;
    if (!running && h->len == 0)
      return;
    if (mono() > end)
      break;
    struct timespec ts = {0, 20000000};
    nanosleep(&ts, NULL);
  }
  for (int i = 0; i < HOK_RUNNING; i++)
    if (h->run[i].pid) {
      kill(-h->run[i].pid, SIGKILL);
      waitpid(h->run[i].pid, NULL, 0);
      h->run[i].pid = 0;
    }
}
