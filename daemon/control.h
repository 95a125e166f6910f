/* control.h: the control socket: a Unix stream socket speaking a line protocol
 * (docs/control-protocol.md); it never blocks the poll loop. */
#ifndef GRITLINE_CONTROL_H
#define GRITLINE_CONTROL_H

#include <poll.h>
#include <stddef.h>

#define CTL_MAX_CLIENTS 16
#define CTL_REQUEST_MAX 256   /* bytes of one request line, newline included */
#define CTL_REPLY_MAX 65536
#define CTL_IDLE_S 60.0       /* a client silent this long is closed */

/* One request, parsed (pure: no I/O), so that it can be tested and fuzzed alone. */
typedef enum CTL_Kind { CTL_STATUS, CTL_PING, CTL_HELP, CTL_DRESS, CTL_BAD } CTL_Kind;
typedef struct CTL_Parsed {
  CTL_Kind kind;
  char trigger[16];     /* CTL_DRESS: "operator" or "schedule" */
  char note[200];       /* CTL_DRESS: free text, may be empty */
  char error[160];      /* CTL_BAD: the reply to send */
} CTL_Parsed;
/* Parses one request line (without its newline, len bytes, may hold any bytes). */
void CTL_ParseRequest(const char *line, size_t len, CTL_Parsed *out);

typedef struct CTL_Handler {
  void *ctx;
  /* Writes the status JSON (no newline); returns its length or -1. */
  long (*status)(void *ctx, char *buf, size_t size);
  /* Marks a dress; trigger is "operator" or "schedule", note may be empty.
   * Returns 0, or -1 with a reason in why. */
  int (*dress)(void *ctx, const char *trigger, const char *note, char *why, size_t whylen);
} CTL_Handler;

typedef struct CTL_Client {
  int fd;                         /* -1 = free slot */
  char buf[CTL_REQUEST_MAX + 1];  /* bytes of the request being read */
  size_t len;
  double last;                    /* monotonic s of the latest activity */
} CTL_Client;

typedef struct CTL_Server {
  int fd;                         /* listening socket, -1 when closed */
  char path[108];                 /* socket path */
  CTL_Handler h;
  CTL_Client client[CTL_MAX_CLIENTS];
  char reply[CTL_REPLY_MAX];
  unsigned long requests, refused; /* counters */
} CTL_Server;

/* Binds path (an old socket file there is replaced) with the given mode
 * (e.g. 0660). Returns 0, or -1 with a message. */
int CTL_Open(CTL_Server *s, const char *path, unsigned mode, const CTL_Handler *h, char *err, size_t errlen);
/* Fills fds with what to poll; returns how many (at most 1 + CTL_MAX_CLIENTS). */
int CTL_PollFds(const CTL_Server *s, struct pollfd *fds, int max);
/* Serves what poll() reported; now is monotonic s. */
void CTL_Handle(CTL_Server *s, const struct pollfd *fds, int n, double now);
void CTL_Close(CTL_Server *s);

/* Client side: sends one request and reads one reply line into buf (without
 * the newline). Returns 0, or -1 with a message in buf. */
int CTL_Request(const char *path, const char *request, char *buf, size_t size, double timeout_s);

#endif
