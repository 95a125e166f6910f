/* mbclient.c: Modbus TCP/RTU client of the machine: polls the register map into samples (libmodbus). */
#include "mbclient.h"

#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <poll.h>
#include <sys/socket.h>

#include <modbus.h>

#include "stale.h"

struct MBC_Client {
  MBC_Config cfg;                       /* copy of the configuration */
  RMP_Map map;                          /* copy of the register map */
  RMP_Plan plan;                        /* read requests, fixed at creation */
  modbus_t *ctx;                        /* libmodbus context, allocated once */
  int connected;                        /* 1 while the link is up */
  uint16_t tid;                         /* transaction identifier of the latest TCP read */
  int ever_connected;                   /* a later connect counts as a reconnect */
  double backoff_s;                     /* s the next failure waits */
  double next_attempt_s;                /* s (poll clock) of the next connect attempt */
  double last_now_s;                    /* s, clock of the latest poll (writes have none) */
  char where[300];                      /* "tcp host:port unit 1", prefix of error texts */
  RMP_BlockData data[RMP_MAX_BLOCKS];   /* one buffer per block: nothing allocated per poll */
  RMP_Values values;                    /* detail of the latest poll */
  STL_Tracker stale;                    /* frozen-value detection */
  MBC_Counters n;                       /* metrics */
  char last_error[512];                 /* one line, "" when none */
};

void MBC_ConfigInit(MBC_Config *cfg)
{
  memset(cfg, 0, sizeof *cfg);
  cfg->transport = MBC_TCP;
  snprintf(cfg->host, sizeof cfg->host, "localhost");
  cfg->port = 502; /* the port registered for Modbus/TCP (IANA "mbap"; from memory) */
  cfg->baud = 19200;
  cfg->parity = 'E';
  cfg->data_bits = 8;
  cfg->stop_bits = 1;
  cfg->unit_id = 1;
  cfg->response_timeout_s = 1.0;
  cfg->backoff_min_s = 1.0;
  cfg->backoff_max_s = 60.0;
  cfg->stale_s = 0.0;
  cfg->fallback_wheel_diameter_mm = 0.0;
}

const char *MBC_StatusName(MBC_Status s)
{
  switch (s) {
  case MBC_ALL_READ: return "all read";
  case MBC_PARTLY_READ: return "partly read";
  case MBC_FAIL_EXCEPTION: return "failed: exception answers";
  case MBC_FAIL_CONNECT: return "failed: connect";
  case MBC_FAIL_TIMEOUT: return "failed: timeout";
  case MBC_FAIL_IO: return "failed: link error";
  case MBC_DOWN: return "down";
  }
  return "?";
}

static void set_error(MBC_Client *c, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static void set_error(MBC_Client *c, const char *fmt, ...)
{
  int len = snprintf(c->last_error, sizeof c->last_error, "%s: ", c->where);
  if (len < 0 || (size_t)len >= sizeof c->last_error)
    return;
  va_list ap;
  va_start(ap, fmt);
  vsnprintf(c->last_error + len, sizeof c->last_error - (size_t)len, fmt, ap);
  va_end(ap);
}

static int baud_supported(unsigned b)
{
  static const unsigned bauds[] = {300, 600, 1200, 2400, 4800, 9600, 19200, 38400, 57600,
                                   115200, 230400, 460800, 921600};
  for (size_t i = 0; i < sizeof bauds / sizeof bauds[0]; i++)
    if (bauds[i] == b)
      return 1;
  return 0;
}

static int check_config(const MBC_Config *cfg, char *err, size_t errlen)
{
  if (cfg->transport == MBC_TCP) {
    if (cfg->host[0] == '\0' || memchr(cfg->host, '\0', sizeof cfg->host) == NULL) {
      snprintf(err, errlen, "host: empty or too long");
      return -1;
    }
    if (cfg->port < 1 || cfg->port > 65535) {
      snprintf(err, errlen, "port %u: expected 1..65535", cfg->port);
      return -1;
    }
    /* 255 addresses a TCP device by its IP alone (Modbus TCP implementation guide); 248..254 are
     * reserved (Modbus over Serial Line V1.02, 2.2). Both from memory. */
    if (cfg->unit_id > 247 && cfg->unit_id != 255) {
      snprintf(err, errlen, "unit_id %u: expected 0..247 or 255 on TCP", cfg->unit_id);
      return -1;
    }
  } else if (cfg->transport == MBC_RTU) {
    if (cfg->device[0] == '\0' || memchr(cfg->device, '\0', sizeof cfg->device) == NULL) {
      snprintf(err, errlen, "device: empty or too long");
      return -1;
    }
    if (!baud_supported(cfg->baud)) {
      snprintf(err, errlen, "baud %u: expected 300, 600, 1200, ..., 9600, 19200, 38400, 57600, "
               "115200, 230400, 460800 or 921600", cfg->baud);
      return -1;
    }
    if (cfg->parity != 'N' && cfg->parity != 'E' && cfg->parity != 'O') {
      snprintf(err, errlen, "parity '%c': expected N, E or O", cfg->parity);
      return -1;
    }
    if (cfg->data_bits != 7 && cfg->data_bits != 8) {
      snprintf(err, errlen, "data_bits %u: expected 7 or 8", cfg->data_bits);
      return -1;
    }
    if (cfg->stop_bits != 1 && cfg->stop_bits != 2) {
      snprintf(err, errlen, "stop_bits %u: expected 1 or 2", cfg->stop_bits);
      return -1;
    }
    /* 0 is the broadcast address: nobody answers it (Modbus over Serial Line V1.02, 2.2; from
     * memory). */
    if (cfg->unit_id < 1 || cfg->unit_id > 247) {
      snprintf(err, errlen, "unit_id %u: expected 1..247 on RTU", cfg->unit_id);
      return -1;
    }
  } else {
    snprintf(err, errlen, "transport %d: expected tcp or rtu", (int)cfg->transport);
    return -1;
  }
  if (!(cfg->response_timeout_s >= 0.001 && cfg->response_timeout_s <= 3600.0)) {
    snprintf(err, errlen, "response_timeout_s %g: expected 0.001..3600", cfg->response_timeout_s);
    return -1;
  }
  if (!(cfg->backoff_min_s > 0.0 && cfg->backoff_min_s <= 86400.0)) {
    snprintf(err, errlen, "backoff_min_s %g: expected > 0 and <= 86400", cfg->backoff_min_s);
    return -1;
  }
  if (!(cfg->backoff_max_s >= cfg->backoff_min_s && cfg->backoff_max_s <= 86400.0)) {
    snprintf(err, errlen, "backoff_max_s %g: expected backoff_min_s (%g)..86400", cfg->backoff_max_s,
             cfg->backoff_min_s);
    return -1;
  }
  if (!(cfg->stale_s >= 0.0 && isfinite(cfg->stale_s))) {
    snprintf(err, errlen, "stale_s %g: expected >= 0 (0 = off)", cfg->stale_s);
    return -1;
  }
  if (!(cfg->fallback_wheel_diameter_mm >= 0.0 && isfinite(cfg->fallback_wheel_diameter_mm))) {
    snprintf(err, errlen, "fallback_wheel_diameter_mm %g: expected >= 0 (0 = none)",
             cfg->fallback_wheel_diameter_mm);
    return -1;
  }
  if (cfg->n_write_coils > MBC_MAX_WRITABLE || cfg->n_write_registers > MBC_MAX_WRITABLE) {
    snprintf(err, errlen, "writable addresses: at most %d coils and %d registers", MBC_MAX_WRITABLE,
             MBC_MAX_WRITABLE);
    return -1;
  }
  return 0;
}

static void split_seconds(double s, uint32_t *sec, uint32_t *usec)
{
  double whole = floor(s);
  *sec = (uint32_t)whole;
  *usec = (uint32_t)((s - whole) * 1e6);
  if (*usec >= 1000000u)
    *usec = 999999u;
}

MBC_Client *MBC_Create(const MBC_Config *cfg, const RMP_Map *map, char *err, size_t errlen)
{
  if (check_config(cfg, err, errlen) < 0)
    return NULL;
  int any = 0;
  for (int i = 0; i < RMP_CHANNEL_COUNT; i++)
    any |= map->ch[i].enabled;
  if (!any) {
    snprintf(err, errlen, "no channel configured (expected at least one of %s)", RMP_ChannelList());
    return NULL;
  }
  MBC_Client *c = calloc(1, sizeof *c);
  if (c == NULL) {
    snprintf(err, errlen, "out of memory");
    return NULL;
  }
  c->cfg = *cfg;
  c->map = *map;
  if (RMP_MakePlan(&c->map, &c->plan, err, errlen) < 0) {
    free(c);
    return NULL;
  }

  if (cfg->transport == MBC_TCP) {
    char service[16];
    snprintf(service, sizeof service, "%u", cfg->port);
    /* _pi resolves names and IPv6; modbus_new_tcp takes dotted IPv4 only. */
    c->ctx = modbus_new_tcp_pi(cfg->host, service);
    if (strchr(cfg->host, ':') != NULL)
      snprintf(c->where, sizeof c->where, "tcp [%s]:%u unit %u", cfg->host, cfg->port, cfg->unit_id);
    else
      snprintf(c->where, sizeof c->where, "tcp %s:%u unit %u", cfg->host, cfg->port, cfg->unit_id);
  } else {
    c->ctx = modbus_new_rtu(cfg->device, (int)cfg->baud, cfg->parity, (int)cfg->data_bits,
                            (int)cfg->stop_bits);
    snprintf(c->where, sizeof c->where, "rtu %s unit %u", cfg->device, cfg->unit_id);
  }
  if (c->ctx == NULL) {
    snprintf(err, errlen, "%s: %s", c->where, modbus_strerror(errno));
    free(c);
    return NULL;
  }
  if (modbus_set_slave(c->ctx, (int)cfg->unit_id) < 0) {
    snprintf(err, errlen, "%s: unit_id: %s", c->where, modbus_strerror(errno));
    MBC_Destroy(c);
    return NULL;
  }
  /* Recovery off: libmodbus's link recovery can retry forever while the peer is down; this client
   * closes and reconnects itself, on its own backoff. */
  modbus_set_error_recovery(c->ctx, MODBUS_ERROR_RECOVERY_NONE);
  uint32_t sec, usec;
  split_seconds(cfg->response_timeout_s, &sec, &usec);
  modbus_set_response_timeout(c->ctx, sec, usec);
  /* Silence inside one answer never needs longer than the answer itself may take. */
  split_seconds(cfg->response_timeout_s < 0.5 ? cfg->response_timeout_s : 0.5, &sec, &usec);
  modbus_set_byte_timeout(c->ctx, sec, usec);

  double limits[RMP_CHANNEL_COUNT];
  for (int i = 0; i < RMP_CHANNEL_COUNT; i++) {
    double own = map->ch[i].stale_s;
    limits[i] = !map->ch[i].enabled ? 0.0 : own > 0.0 ? own : own < 0.0 ? 0.0 : cfg->stale_s;
  }
  STL_Init(&c->stale, RMP_CHANNEL_COUNT, limits);
  c->backoff_s = cfg->backoff_min_s;
  c->next_attempt_s = -INFINITY;
  c->last_now_s = 0.0;
  c->last_error[0] = '\0';
  return c;
}

void MBC_Destroy(MBC_Client *c)
{
  if (c == NULL)
    return;
  if (c->ctx != NULL) {
    modbus_close(c->ctx);
    modbus_free(c->ctx);
  }
  free(c);
}

/* Link lost or unusable: close it (a late answer must never be read as the next one) and wait. */
static void link_failed(MBC_Client *c, double now_s)
{
  modbus_close(c->ctx);
  c->connected = 0;
  c->n.failures++;
  c->next_attempt_s = now_s + c->backoff_s;
  c->backoff_s = fmin(c->backoff_s * 2.0, c->cfg.backoff_max_s);
}

static int try_connect(MBC_Client *c, double now_s)
{
  c->n.connect_attempts++;
  /* Close first: connecting over an open context would leak its socket. */
  modbus_close(c->ctx);
  if (modbus_connect(c->ctx) < 0) {
    set_error(c, "connect: %s", modbus_strerror(errno));
    link_failed(c, now_s);
    return -1;
  }
  /* Bytes left in a serial line's buffers belong to no request of this connection. */
  modbus_flush(c->ctx);
  if (c->ever_connected)
    c->n.reconnects++;
  c->ever_connected = 1;
  c->connected = 1;
  return 0;
}

static int is_exception(int e) { return e >= EMBXILFUN && e <= EMBXGTAR; }

/* Waits up to timeout_s for fd to be readable: 1, or -1 with errno (ETIMEDOUT). */
static int wait_readable(int fd, double timeout_s)
{
  struct pollfd p = {fd, POLLIN, 0};
  int ms = (int)ceil(timeout_s * 1000.0);
  for (;;) {
    int r = poll(&p, 1, ms);
    if (r > 0)
      return 1;
    if (r == 0) {
      errno = ETIMEDOUT;
      return -1;
    }
    if (errno != EINTR)
      return -1;
  }
}

/* Reads exactly n bytes into buf, waiting at most first_s for the first part
 * (0: take what has arrived, then wait) and byte_s before each further one.
 * Returns 0, or -1 with errno (ETIMEDOUT, ECONNRESET). */
static int recv_exact(int fd, uint8_t *buf, size_t n, double first_s, double byte_s)
{
  size_t got = 0;
  int wait_first = first_s > 0.0;
  double wait_s = first_s;
  while (got < n) {
    if (wait_first && wait_readable(fd, wait_s) < 0)
      return -1;
    wait_first = 1;
    wait_s = byte_s;
    ssize_t r = recv(fd, buf + got, n - got, MSG_DONTWAIT);
    if (r > 0) {
      got += (size_t)r;
      wait_first = 0; /* more may be there already */
    } else if (r == 0) {
      errno = ECONNRESET;
      return -1;
    } else if (errno != EAGAIN && errno != EWOULDBLOCK && errno != EINTR) {
      return -1;
    }
  }
  return 0;
}

/* One Modbus TCP answer: the MBAP header (7 bytes), whose length field tells
 * what follows (Modbus Messaging on TCP/IP Implementation Guide V1.0b, 3.1.3),
 * then exactly that: the answer of `bytes` data bytes (3 + bytes after the
 * unit) or an exception (3). Waits the response timeout for the first byte
 * and the byte timeout between parts, as libmodbus does, with one poll and
 * two recv when the answer comes whole (libmodbus: three select, three recv).
 * Returns its length, or -1 with errno. */
static int recv_answer(MBC_Client *c, int fd, uint8_t *rsp, unsigned bytes)
{
  double byte_s = c->cfg.response_timeout_s < 0.5 ? c->cfg.response_timeout_s : 0.5;
  if (recv_exact(fd, rsp, 7, c->cfg.response_timeout_s, byte_s) != 0)
    return -1;
  unsigned len = (unsigned)rsp[4] << 8 | rsp[5];
  if (len != 3u + bytes && len != 3u) {
    errno = EMBBADDATA; /* a length that fits neither answer: the frame cannot be trusted */
    return -1;
  }
  if (recv_exact(fd, rsp + 7, len - 1u, 0.0, byte_s) != 0)
    return -1;
  return (int)(6u + len);
}

/* libmodbus 3.1.6 checks the transaction identifier of a TCP answer but not its unit identifier,
 * which the server copies from the request (Modbus Messaging on TCP/IP Implementation Guide V1.0b,
 * 3.1.3): behind a gateway, another unit's answer would pass for this machine's values. So the TCP
 * request is built here (Modbus Application Protocol Specification V1.1b3, 6.1 to 6.4) and its
 * answer read and checked whole here (recv_answer); libmodbus connects and serves the RTU line. */
static int read_block_tcp(MBC_Client *c, const RMP_Block *b, RMP_BlockData *d)
{
  static const uint8_t function[RMP_TABLE_COUNT] = {0x03, 0x04, 0x01, 0x02};
  uint8_t fc = function[b->table];
  c->tid = (uint16_t)(c->tid + 1u);
  uint8_t req[12] = {(uint8_t)(c->tid >> 8), (uint8_t)c->tid, 0, 0, 0, 6, (uint8_t)c->cfg.unit_id, fc,
                     (uint8_t)(b->start >> 8), (uint8_t)b->start, (uint8_t)(b->count >> 8), (uint8_t)b->count};
  int fd = modbus_get_socket(c->ctx);
  for (size_t sent = 0; sent < sizeof req;) {
    ssize_t n = send(fd, req + sent, sizeof req - sent, MSG_NOSIGNAL);
    if (n < 0 && errno == EINTR)
      continue;
    if (n <= 0)
      return -1;
    sent += (size_t)n;
  }
  uint8_t rsp[MODBUS_TCP_MAX_ADU_LENGTH];
  int bits = RMP_TableIsBits((int)b->table);
  unsigned bytes = bits ? (b->count + 7u) / 8u : 2u * b->count;
  int n = recv_answer(c, fd, rsp, bytes);
  if (n < 0)
    return -1;
  if (n < 9 || rsp[0] != req[0] || rsp[1] != req[1] || rsp[2] || rsp[3] || rsp[6] != req[6] ||
      ((unsigned)rsp[4] << 8 | rsp[5]) != (unsigned)n - 6u) {
    errno = EMBBADDATA; /* another transaction, protocol or unit, or a length that lies */
    return -1;
  }
  if (rsp[7] == (fc | 0x80u)) {
    errno = MODBUS_ENOBASE + rsp[8];
    return -1;
  }
  if (rsp[7] != fc || rsp[8] != bytes || (unsigned)n != 9u + bytes) {
    errno = EMBBADDATA;
    return -1;
  }
  for (unsigned i = 0; i < b->count; i++) {
    if (bits)
      d->bit[i] = (uint8_t)((rsp[9 + i / 8] >> (i % 8)) & 1u);
    else
      d->reg[i] = (uint16_t)((rsp[9 + 2 * i] << 8) | rsp[10 + 2 * i]);
  }
  return (int)b->count;
}

static int read_block(MBC_Client *c, const RMP_Block *b, RMP_BlockData *d)
{
  if (c->cfg.transport == MBC_TCP)
    return read_block_tcp(c, b, d);
  switch (b->table) {
  case RMP_HOLDING: return modbus_read_registers(c->ctx, b->start, b->count, d->reg);
  case RMP_INPUT: return modbus_read_input_registers(c->ctx, b->start, b->count, d->reg);
  case RMP_COIL: return modbus_read_bits(c->ctx, b->start, b->count, d->bit);
  case RMP_DISCRETE: return modbus_read_input_bits(c->ctx, b->start, b->count, d->bit);
  case RMP_TABLE_COUNT: break;
  }
  errno = EINVAL;
  return -1;
}

static void clear_sample(SMP_Sample *out, double *clock_s)
{
  out->spindle_power_w = NAN;
  out->spindle_speed_rpm = NAN;
  out->work_speed_mm_min = NAN;
  out->infeed_position_mm = NAN;
  out->depth_of_cut_mm = NAN;
  out->wheel_diameter_mm = NAN;
  out->dress_count = NAN;
  out->grinding = NAN;
  *clock_s = NAN;
}

static unsigned popcount(unsigned v)
{
  unsigned n = 0;
  for (; v; v &= v - 1)
    n++;
  return n;
}

/* Decodes what this poll obtained and feeds the frozen-value detection. */
static void finish(MBC_Client *c, unsigned ok_blocks, double now_s, SMP_Sample *out, double *clock_s)
{
  RMP_Decode(&c->map, &c->plan, c->data, ok_blocks, c->cfg.fallback_wheel_diameter_mm, out, clock_s,
             &c->values);
  c->n.rejected += popcount(c->values.rejected_mask);
  STL_Update(&c->stale, c->values.read_mask, c->values.raw, now_s);
}

MBC_Status MBC_Poll(MBC_Client *c, double now_s, SMP_Sample *out, double *clock_s)
{
  clear_sample(out, clock_s);
  c->last_now_s = now_s;
  if (!c->connected) {
    if (now_s < c->next_attempt_s) {
      finish(c, 0, now_s, out, clock_s);
      return MBC_DOWN;
    }
    if (try_connect(c, now_s) < 0) {
      finish(c, 0, now_s, out, clock_s);
      return MBC_FAIL_CONNECT;
    }
  }
  if (c->cfg.transport == MBC_RTU)
    modbus_flush(c->ctx); /* a stray frame on the bus must not be taken for this poll's answer */

  unsigned ok = 0, excepted = 0;
  for (unsigned i = 0; i < c->plan.n; i++) {
    const RMP_Block *b = &c->plan.block[i];
    c->n.requests++;
    errno = 0;
    int rc = read_block(c, b, &c->data[i]);
    if (rc == (int)b->count) {
      ok |= 1u << i;
      continue;
    }
    int e = rc < 0 ? errno : EMBBADDATA;
    set_error(c, "read %s %u..%u: %s", RMP_TableName((int)b->table), (unsigned)b->start,
              (unsigned)b->start + b->count - 1u, modbus_strerror(e));
    if (is_exception(e)) {
      /* A valid answer: the link is fine, only this block has no value. */
      c->n.exceptions++;
      excepted |= 1u << i;
      continue;
    }
    int timed_out = e == ETIMEDOUT;
    if (timed_out)
      c->n.timeouts++;
    link_failed(c, now_s);
    /* Blocks read before the failure are this poll's genuine values: keep them. */
    finish(c, ok, now_s, out, clock_s);
    return timed_out ? MBC_FAIL_TIMEOUT : MBC_FAIL_IO;
  }
  finish(c, ok, now_s, out, clock_s);
  if (ok == 0)
    return MBC_FAIL_EXCEPTION;
  c->backoff_s = c->cfg.backoff_min_s;
  return excepted ? MBC_PARTLY_READ : MBC_ALL_READ;
}

unsigned MBC_StaleChannels(const MBC_Client *c, double now_s) { return STL_Stale(&c->stale, now_s); }

static int allowed(const uint16_t *list, unsigned n, unsigned address)
{
  for (unsigned i = 0; i < n; i++)
    if (list[i] == address)
      return 1;
  return 0;
}

static int after_write(MBC_Client *c, int rc, const char *what, unsigned address)
{
  if (rc == 1)
    return 0;
  int e = rc < 0 ? errno : EMBBADDATA;
  set_error(c, "write %s %u: %s", what, address, modbus_strerror(e));
  if (is_exception(e)) {
    c->n.exceptions++;
  } else {
    if (e == ETIMEDOUT)
      c->n.timeouts++;
    link_failed(c, c->last_now_s);
  }
  return -1;
}

int MBC_WriteCoil(MBC_Client *c, unsigned address, int on)
{
  if (!allowed(c->cfg.write_coils, c->cfg.n_write_coils, address)) {
    set_error(c, "write coil %u: refused, not in the writable coil list", address);
    return -1;
  }
  if (!c->connected) {
    set_error(c, "write coil %u: not connected", address);
    return -1;
  }
  c->n.requests++;
  return after_write(c, modbus_write_bit(c->ctx, (int)address, on ? 1 : 0), "coil", address);
}

int MBC_WriteRegister(MBC_Client *c, unsigned address, uint16_t value)
{
  if (!allowed(c->cfg.write_registers, c->cfg.n_write_registers, address)) {
    set_error(c, "write register %u: refused, not in the writable register list", address);
    return -1;
  }
  if (!c->connected) {
    set_error(c, "write register %u: not connected", address);
    return -1;
  }
  c->n.requests++;
  return after_write(c, modbus_write_register(c->ctx, (int)address, value), "register", address);
}

void MBC_GetCounters(const MBC_Client *c, MBC_Counters *out)
{
  *out = c->n;
  out->connected = c->connected;
  out->backoff_s = c->backoff_s;
  out->next_attempt_s = c->connected ? NAN : c->next_attempt_s;
}

const char *MBC_LastError(const MBC_Client *c) { return c->last_error; }
const RMP_Plan *MBC_GetPlan(const MBC_Client *c) { return &c->plan; }
const RMP_Values *MBC_LastValues(const MBC_Client *c) { return &c->values; }
