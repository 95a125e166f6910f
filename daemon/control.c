/* control.c: the control socket and its line protocol. */
#include "control.h"

#include <errno.h>
#include <fcntl.h>
#include <stdio.h>
#include <string.h>
#include <sys/socket.h>
#include <sys/stat.h>
#include <sys/un.h>
#include <time.h>
#include <unistd.h>

static const char help_text[] = "ok requests: status, dress [operator|schedule] [NOTE], ping, help";

int CTL_Open(CTL_Server *s, const char *path, unsigned mode, const CTL_Handler *h, char *err, size_t errlen)
{
  memset(s, 0, sizeof *s);
  s->fd = -1;
  for (int i = 0; i < CTL_MAX_CLIENTS; i++)
    s->client[i].fd = -1;
  s->h = *h;
  struct sockaddr_un sa;
  memset(&sa, 0, sizeof sa);
  sa.sun_family = AF_UNIX;
  if (strlen(path) >= sizeof sa.sun_path) {
    snprintf(err, errlen, "%s: socket path longer than %zu characters", path, sizeof sa.sun_path - 1);
    return -1;
  }
  snprintf(sa.sun_path, sizeof sa.sun_path, "%s", path);
  snprintf(s->path, sizeof s->path, "%s", path);
  int fd = socket(AF_UNIX, SOCK_STREAM | SOCK_NONBLOCK | SOCK_CLOEXEC, 0);
  if (fd < 0) {
    snprintf(err, errlen, "%s: socket: %s", path, strerror(errno));
    return -1;
  }
  struct stat st;
  if (lstat(path, &st) == 0 && S_ISSOCK(st.st_mode))
    unlink(path); /* left by a daemon that did not stop cleanly */
  /* Created with no permissions for others, then opened up to `mode`. */
  mode_t old = umask(0177);
  int rc = bind(fd, (struct sockaddr *)&sa, sizeof sa);
  umask(old);
  if (rc != 0 || chmod(path, mode) != 0 || listen(fd, 8) != 0) {
    snprintf(err, errlen, "%s: %s", path, strerror(errno));
    close(fd);
    return -1;
  }
  s->fd = fd;
  return 0;
}

int CTL_PollFds(const CTL_Server *s, struct pollfd *fds, int max)
{
  int n = 0;
  if (s->fd < 0 || max < 1)
    return 0;
  fds[n++] = (struct pollfd){s->fd, POLLIN, 0};
  for (int i = 0; i < CTL_MAX_CLIENTS && n < max; i++)
    if (s->client[i].fd >= 0)
      fds[n++] = (struct pollfd){s->client[i].fd, POLLIN, 0};
  return n;
}

static void drop(CTL_Client *c)
{
  if (c->fd >= 0)
    close(c->fd);
  c->fd = -1;
  c->len = 0;
}

/* Replies are small and the socket is local: a client that cannot take a
 * whole reply at once is not read any further. */
static int reply(CTL_Client *c, const char *text, size_t len)
{
  while (len > 0) {
    ssize_t n = send(c->fd, text, len, MSG_NOSIGNAL | MSG_DONTWAIT);
    if (n < 0 && errno == EINTR)
      continue;
    if (n <= 0)
      return -1;
    text += n;
    len -= (size_t)n;
  }
  return 0;
}

static int reply_line(CTL_Server *s, CTL_Client *c, const char *text)
{
  int n = snprintf(s->reply, sizeof s->reply, "%s\n", text);
  return reply(c, s->reply, (size_t)n);
}

/* Keeps what an error message echoes printable and short. */
static void printable(const char *in, size_t len, char *out, size_t size)
{
  size_t u = 0;
  for (size_t i = 0; i < len && u + 1 < size && u < 40; i++)
    out[u++] = (in[i] >= 0x20 && in[i] < 0x7f) ? in[i] : '?';
  out[u] = '\0';
}

void CTL_ParseRequest(const char *line, size_t len, CTL_Parsed *out)
{
  memset(out, 0, sizeof *out);
  while (len && (line[len - 1] == '\r' || line[len - 1] == ' '))
    len--;
  if (memchr(line, '\0', len)) {
    out->kind = CTL_BAD;
    snprintf(out->error, sizeof out->error, "error request holds a NUL byte");
    return;
  }
  const char *sp = memchr(line, ' ', len);
  size_t word = sp ? (size_t)(sp - line) : len;
  const char *arg = sp ? sp + 1 : NULL;
  size_t arglen = sp ? len - word - 1 : 0;
  char what[48];
  if (!arg && word == 6 && memcmp(line, "status", 6) == 0) {
    out->kind = CTL_STATUS;
  } else if (!arg && word == 4 && memcmp(line, "ping", 4) == 0) {
    out->kind = CTL_PING;
  } else if (!arg && word == 4 && memcmp(line, "help", 4) == 0) {
    out->kind = CTL_HELP;
  } else if (word == 5 && memcmp(line, "dress", 5) == 0) {
    out->kind = CTL_DRESS;
    snprintf(out->trigger, sizeof out->trigger, "operator");
    if (!arg)
      return;
    const char *sp2 = memchr(arg, ' ', arglen);
    size_t tlen = sp2 ? (size_t)(sp2 - arg) : arglen;
    if ((tlen == 8 && memcmp(arg, "operator", 8) == 0) || (tlen == 8 && memcmp(arg, "schedule", 8) == 0)) {
      memcpy(out->trigger, arg, tlen);
      out->trigger[tlen] = '\0';
      if (sp2) {
        size_t nlen = arglen - tlen - 1;
        if (nlen >= sizeof out->note)
          nlen = sizeof out->note - 1;
        memcpy(out->note, sp2 + 1, nlen);
        out->note[nlen] = '\0';
        for (size_t i = 0; i < nlen; i++)
          if ((unsigned char)out->note[i] < 0x20)
            out->note[i] = ' ';
      }
    } else {
      out->kind = CTL_BAD;
      printable(arg, tlen, what, sizeof what);
      snprintf(out->error, sizeof out->error, "error dress: unknown trigger \"%s\" (operator or schedule)", what);
    }
  } else {
    out->kind = CTL_BAD;
    printable(line, word, what, sizeof what);
    snprintf(out->error, sizeof out->error, "error unknown request \"%s\" (try help)", what);
  }
}

static int serve(CTL_Server *s, CTL_Client *c, const char *line, size_t len)
{
  s->requests++;
  CTL_Parsed r;
  CTL_ParseRequest(line, len, &r);
  switch (r.kind) {
  case CTL_STATUS: {
    long n = s->h.status ? s->h.status(s->h.ctx, s->reply, sizeof s->reply - 1) : -1;
    if (n < 0)
      return reply_line(s, c, "error status unavailable");
    s->reply[n++] = '\n';
    return reply(c, s->reply, (size_t)n);
  }
  case CTL_PING:
    return reply_line(s, c, "pong");
  case CTL_HELP:
    return reply_line(s, c, help_text);
  case CTL_DRESS: {
    char why[200];
    if (!s->h.dress || s->h.dress(s->h.ctx, r.trigger, r.note, why, sizeof why) != 0) {
      char msg[256];
      snprintf(msg, sizeof msg, "error dress: %s", s->h.dress ? why : "not available here");
      return reply_line(s, c, msg);
    }
    return reply_line(s, c, "ok dress marked");
  }
  default:
    s->refused++;
    return reply_line(s, c, r.error);
  }
}

static void accept_clients(CTL_Server *s, double now)
{
  for (;;) {
    int fd = accept4(s->fd, NULL, NULL, SOCK_NONBLOCK | SOCK_CLOEXEC);
    if (fd < 0)
      return;
    int slot = -1;
    for (int i = 0; i < CTL_MAX_CLIENTS; i++)
      if (s->client[i].fd < 0) {
        slot = i;
        break;
      }
    if (slot < 0) {
      static const char busy[] = "error busy: too many clients\n";
      if (send(fd, busy, sizeof busy - 1, MSG_NOSIGNAL | MSG_DONTWAIT) < 0)
        s->refused++;
      close(fd);
      continue;
    }
    s->client[slot] = (CTL_Client){fd, {0}, 0, now};
  }
}

static void read_client(CTL_Server *s, CTL_Client *c, double now)
{
  for (;;) {
    ssize_t n = recv(c->fd, c->buf + c->len, CTL_REQUEST_MAX - c->len, MSG_DONTWAIT);
    if (n < 0 && errno == EINTR)
      continue;
    if (n < 0 && (errno == EAGAIN || errno == EWOULDBLOCK))
      return;
    if (n <= 0) {
      drop(c);
      return;
    }
    c->last = now;
    c->len += (size_t)n;
    char *nl;
    while (c->fd >= 0 && (nl = memchr(c->buf, '\n', c->len))) {
      size_t used = (size_t)(nl - c->buf) + 1;
      if (serve(s, c, c->buf, used - 1) != 0) {
        drop(c);
        return;
      }
      memmove(c->buf, c->buf + used, c->len - used);
      c->len -= used;
    }
    if (c->fd >= 0 && c->len >= CTL_REQUEST_MAX) {
      s->refused++;
      char msg[80];
      snprintf(msg, sizeof msg, "error request too long (at most %d bytes)", CTL_REQUEST_MAX - 1);
      reply_line(s, c, msg);
      drop(c);
      return;
    }
  }
}

void CTL_Handle(CTL_Server *s, const struct pollfd *fds, int n, double now)
{
  for (int k = 0; k < n; k++) {
    if (!fds[k].revents)
      continue;
    if (fds[k].fd == s->fd) {
      accept_clients(s, now);
      continue;
    }
    for (int i = 0; i < CTL_MAX_CLIENTS; i++)
      if (s->client[i].fd == fds[k].fd) {
        if (fds[k].revents & (POLLIN | POLLHUP | POLLERR))
          read_client(s, &s->client[i], now);
        break;
      }
  }
  for (int i = 0; i < CTL_MAX_CLIENTS; i++)
    if (s->client[i].fd >= 0 && now - s->client[i].last > CTL_IDLE_S)
      drop(&s->client[i]);
}

void CTL_Close(CTL_Server *s)
{
  for (int i = 0; i < CTL_MAX_CLIENTS; i++)
    drop(&s->client[i]);
  if (s->fd >= 0) {
    close(s->fd);
    unlink(s->path);
  }
  s->fd = -1;
}

static double mono(void)
{
  struct timespec ts;
  clock_gettime(CLOCK_MONOTONIC, &ts);
  return ts.tv_sec + ts.tv_nsec * 1e-9;
}

int CTL_Request(const char *path, const char *request, char *buf, size_t size, double timeout_s)
{
  struct sockaddr_un sa;
  memset(&sa, 0, sizeof sa);
  sa.sun_family = AF_UNIX;
  if (strlen(path) >= sizeof sa.sun_path) {
    snprintf(buf, size, "%s: path too long", path);
    return -1;
  }
  snprintf(sa.sun_path, sizeof sa.sun_path, "%s", path);
  int fd = socket(AF_UNIX, SOCK_STREAM | SOCK_CLOEXEC, 0);
  if (fd < 0 || connect(fd, (struct sockaddr *)&sa, sizeof sa) != 0) {
    snprintf(buf, size, "%s: %s (is gritlined running?)", path, strerror(errno));
    if (fd >= 0)
      close(fd);
    return -1;
  }
  char req[CTL_REQUEST_MAX + 2];
  int n = snprintf(req, sizeof req, "%s\n", request);
  if (n < 0 || (size_t)n >= sizeof req || send(fd, req, (size_t)n, MSG_NOSIGNAL) != n) {
    snprintf(buf, size, "%s: cannot send the request", path);
    close(fd);
    return -1;
  }
  size_t used = 0;
  double end = mono() + timeout_s;
  for (;;) {
    int left = (int)((end - mono()) * 1000);
    struct pollfd p = {fd, POLLIN, 0};
    if (left <= 0 || poll(&p, 1, left) <= 0) {
      snprintf(buf, size, "%s: no answer within %.0f s", path, timeout_s);
      close(fd);
      return -1;
    }
    ssize_t got = recv(fd, buf + used, size - 1 - used, 0);
    if (got <= 0) {
      snprintf(buf, size, "%s: connection closed without an answer", path);
      close(fd);
      return -1;
    }
    used += (size_t)got;
    buf[used] = '\0';
    char *nl = strchr(buf, '\n');
    if (nl) {
      *nl = '\0';
      close(fd);
      return 0;
    }
    if (used + 1 >= size) {
      snprintf(buf, size, "%s: answer too long", path);
      close(fd);
      return -1;
    }
  }
}
