/* server.c: the Modbus TCP server of the simulator: one select loop, faults, write log. */
#include "server.h"

#include "simtime.h"

#include <arpa/inet.h>
#include <errno.h>
#include <fcntl.h>
#include <netinet/in.h>
#include <stdlib.h>
#include <string.h>
#include <sys/select.h>
#include <sys/socket.h>
#include <sys/stat.h>
#include <unistd.h>

#define MAP_HOLDING (SIM_HR_WRITE_START + SIM_HR_WRITE_COUNT) /* 0..115 */
#define LOOP_MS 50        /* select timeout: model, truth, control file move on this often */
#define CONTROL_MAX 65536 /* largest control file read */

void SIM_ServerInit(SIM_Server *srv)
{
  memset(srv, 0, sizeof *srv);
  srv->listen_fd = -1;
  srv->speed = 1.0;
  srv->unit_id = 1;
  for (int i = 0; i < SIM_MAX_CLIENTS; i++)
    srv->clients[i].fd = -1;
  SIM_RngSeed(&srv->rng, (uint64_t)SIM_RealNowNs());
}

int SIM_ServerListen(SIM_Server *srv, const char *address, int port, char *err, size_t errsize)
{
  char service[16];
  snprintf(service, sizeof service, "%d", port);
  srv->ctx = modbus_new_tcp_pi(address, service);
  if (srv->ctx == NULL) {
    snprintf(err, errsize, "%s:%d: %s", address, port, modbus_strerror(errno));
    return -1;
  }
  /* A client that sends half a request must not hold the others up for long. */
  modbus_set_byte_timeout(srv->ctx, 0, 200000);
  srv->map = modbus_mapping_new(SIM_COIL_COUNT, SIM_DISCRETE_COUNT, MAP_HOLDING, SIM_IR_COUNT);
  if (srv->map == NULL) {
    snprintf(err, errsize, "register map: %s", modbus_strerror(errno));
    return -1;
  }
  srv->listen_fd = modbus_tcp_pi_listen(srv->ctx, 16);
  if (srv->listen_fd < 0) {
    snprintf(err, errsize, "%s:%d: cannot listen: %s", address, port, modbus_strerror(errno));
    return -1;
  }
  fcntl(srv->listen_fd, F_SETFD, FD_CLOEXEC);
  struct sockaddr_storage ss;
  socklen_t sl = sizeof ss;
  char host[64] = "?";
  if (getsockname(srv->listen_fd, (struct sockaddr *)&ss, &sl) == 0) {
    if (ss.ss_family == AF_INET6) {
      struct sockaddr_in6 *a6 = (struct sockaddr_in6 *)&ss;
      inet_ntop(AF_INET6, &a6->sin6_addr, host, sizeof host);
      srv->port = ntohs(a6->sin6_port);
      snprintf(srv->bound, sizeof srv->bound, "[%s]:%d", host, srv->port);
    } else {
      struct sockaddr_in *a4 = (struct sockaddr_in *)&ss;
      inet_ntop(AF_INET, &a4->sin_addr, host, sizeof host);
      srv->port = ntohs(a4->sin_port);
      snprintf(srv->bound, sizeof srv->bound, "%s:%d", host, srv->port);
    }
  }
  return 0;
}

static void close_client(SIM_Server *srv, int i)
{
  if (srv->clients[i].fd >= 0)
    close(srv->clients[i].fd);
  srv->clients[i].fd = -1;
}

static void close_all_clients(SIM_Server *srv)
{
  for (int i = 0; i < SIM_MAX_CLIENTS; i++)
    close_client(srv, i);
}

void SIM_ServerClose(SIM_Server *srv)
{
  close_all_clients(srv);
  if (srv->listen_fd >= 0)
    close(srv->listen_fd);
  srv->listen_fd = -1;
  if (srv->map != NULL)
    modbus_mapping_free(srv->map);
  srv->map = NULL;
  if (srv->ctx != NULL)
    modbus_free(srv->ctx);
  srv->ctx = NULL;
}

static int get16(const uint8_t *p) { return (p[0] << 8) | p[1]; }

static int in_holding(int addr, int count)
{
  int end = addr + count;
  return (addr >= 0 && end <= SIM_HR_COUNT) ||
         (addr >= SIM_HR_WRITE_START && end <= SIM_HR_WRITE_START + SIM_HR_WRITE_COUNT);
}

static int in_write_area(int addr, int count)
{
  return addr >= SIM_HR_WRITE_START && addr + count <= SIM_HR_WRITE_START + SIM_HR_WRITE_COUNT;
}

int SIM_CheckRequest(const uint8_t *pdu, int len)
{
  if (len < 1)
    return MODBUS_EXCEPTION_ILLEGAL_FUNCTION;
  int fc = pdu[0];
  /* Every function served below carries at least address and one more field. */
  int need = fc == 0x17 ? 10 : 5;
  if ((fc >= 0x01 && fc <= 0x06) || fc == 0x0F || fc == 0x10 || fc == 0x16 || fc == 0x17) {
    if (fc == 0x16)
      need = 7;
    if (fc == 0x0F || fc == 0x10)
      need = 6;
    if (len < need)
      return MODBUS_EXCEPTION_ILLEGAL_DATA_VALUE;
  }
  int addr = len >= 3 ? get16(pdu + 1) : 0;
  int qty = len >= 5 ? get16(pdu + 3) : 0;
  switch (fc) {
  case 0x01: /* read coils */
    if (qty < 1 || qty > 2000)
      return MODBUS_EXCEPTION_ILLEGAL_DATA_VALUE;
    return addr + qty <= SIM_COIL_COUNT ? 0 : MODBUS_EXCEPTION_ILLEGAL_DATA_ADDRESS;
  case 0x02: /* read discrete inputs */
    if (qty < 1 || qty > 2000)
      return MODBUS_EXCEPTION_ILLEGAL_DATA_VALUE;
    return addr + qty <= SIM_DISCRETE_COUNT ? 0 : MODBUS_EXCEPTION_ILLEGAL_DATA_ADDRESS;
  case 0x03: /* read holding registers */
    if (qty < 1 || qty > 125)
      return MODBUS_EXCEPTION_ILLEGAL_DATA_VALUE;
    return in_holding(addr, qty) ? 0 : MODBUS_EXCEPTION_ILLEGAL_DATA_ADDRESS;
  case 0x04: /* read input registers */
    if (qty < 1 || qty > 125)
      return MODBUS_EXCEPTION_ILLEGAL_DATA_VALUE;
    return addr + qty <= SIM_IR_COUNT ? 0 : MODBUS_EXCEPTION_ILLEGAL_DATA_ADDRESS;
  case 0x05: /* write single coil: the value field must be 0x0000 or 0xFF00 */
    if (qty != 0x0000 && qty != 0xFF00)
      return MODBUS_EXCEPTION_ILLEGAL_DATA_VALUE;
    return addr < SIM_COIL_COUNT ? 0 : MODBUS_EXCEPTION_ILLEGAL_DATA_ADDRESS;
  case 0x06: /* write single register */
    return in_write_area(addr, 1) ? 0 : MODBUS_EXCEPTION_ILLEGAL_DATA_ADDRESS;
  case 0x0F: /* write multiple coils */
    if (qty < 1 || qty > 0x07B0 || pdu[5] != (qty + 7) / 8 || len < 6 + pdu[5])
      return MODBUS_EXCEPTION_ILLEGAL_DATA_VALUE;
    return addr + qty <= SIM_COIL_COUNT ? 0 : MODBUS_EXCEPTION_ILLEGAL_DATA_ADDRESS;
  case 0x10: /* write multiple registers */
    if (qty < 1 || qty > 0x7B || pdu[5] != 2 * qty || len < 6 + pdu[5])
      return MODBUS_EXCEPTION_ILLEGAL_DATA_VALUE;
    return in_write_area(addr, qty) ? 0 : MODBUS_EXCEPTION_ILLEGAL_DATA_ADDRESS;
  case 0x16: /* mask write register */
    return in_write_area(addr, 1) ? 0 : MODBUS_EXCEPTION_ILLEGAL_DATA_ADDRESS;
  case 0x17: { /* read/write multiple registers */
    int waddr = get16(pdu + 5), wqty = get16(pdu + 7);
    if (qty < 1 || qty > 0x7D || wqty < 1 || wqty > 0x79 || pdu[9] != 2 * wqty ||
        len < 10 + pdu[9])
      return MODBUS_EXCEPTION_ILLEGAL_DATA_VALUE;
    if (!in_write_area(waddr, wqty) || !in_holding(addr, qty))
      return MODBUS_EXCEPTION_ILLEGAL_DATA_ADDRESS;
    return 0;
  }
  default:
    return MODBUS_EXCEPTION_ILLEGAL_FUNCTION;
  }
}

static int is_write(int fc)
{
  return fc == 0x05 || fc == 0x06 || fc == 0x0F || fc == 0x10 || fc == 0x16 || fc == 0x17;
}

/* What a write request asks, for the log. values must hold 2000 entries. */
static void describe_write(const uint8_t *pdu, int len, SIM_WriteEntry *e, uint16_t *values)
{
  int fc = pdu[0];
  e->function = fc;
  e->values = values;
  e->n_values = 0;
  if (len < 5)
    return;
  e->address = get16(pdu + 1);
  switch (fc) {
  case 0x05:
    e->count = 1;
    values[0] = (uint16_t)(get16(pdu + 3) == 0xFF00 ? 1 : get16(pdu + 3));
    e->n_values = 1;
    break;
  case 0x06:
    e->count = 1;
    values[0] = (uint16_t)get16(pdu + 3);
    e->n_values = 1;
    break;
  case 0x0F: {
    e->count = get16(pdu + 3);
    int n = e->count < 2000 ? e->count : 2000;
    for (int i = 0; i < n && 6 + i / 8 < len; i++)
      values[e->n_values++] = (uint16_t)((pdu[6 + i / 8] >> (i % 8)) & 1);
    break;
  }
  case 0x10: {
    e->count = get16(pdu + 3);
    int n = e->count < 2000 ? e->count : 2000;
    for (int i = 0; i < n && 7 + 2 * i < len; i++)
      values[e->n_values++] = (uint16_t)get16(pdu + 6 + 2 * i);
    break;
  }
  case 0x16:
    e->count = 1;
    if (len >= 7) {
      values[0] = (uint16_t)get16(pdu + 3);
      values[1] = (uint16_t)get16(pdu + 5);
      e->n_values = 2;
    }
    break;
  case 0x17:
    if (len < 9)
      return;
    e->address = get16(pdu + 5);
    e->count = get16(pdu + 7);
    int n = e->count < 2000 ? e->count : 2000;
    for (int i = 0; i < n && 11 + 2 * i < len; i++)
      values[e->n_values++] = (uint16_t)get16(pdu + 10 + 2 * i);
    break;
  default:
    break;
  }
}

static void diag(SIM_Server *srv, const char *msg)
{
  if (srv->diag != NULL) {
    fprintf(srv->diag, "gritline-sim: %s\n", msg);
    fflush(srv->diag);
  }
}

/* Sim time now. A wall clock stepped back (NTP) must not take the model back. */
static int64_t sim_now(SIM_Server *srv, int64_t real_ns)
{
  int64_t ms = SIM_SimTimeMs(srv->epoch_ms, srv->speed, real_ns);
  if (ms < srv->last_sim_ms)
    ms = srv->last_sim_ms;
  srv->last_sim_ms = ms;
  return ms;
}

/* Steps the model to sim time sim_ms; returns 0 or -1 (truth not writable). */
static int advance(SIM_Server *srv, int64_t sim_ms, char *err, size_t errsize)
{
  double t = (double)(sim_ms - srv->epoch_ms) / 1000.0;
  unsigned before = srv->model->dress_count;
  int dresses = SIM_TruthAdvance(srv->truth, srv->model, t, err, errsize);
  if (dresses < 0)
    return -1;
  if (dresses > 0 && SIM_TruthFlush(srv->truth, err, errsize) != 0)
    return -1;
  if (srv->model->dress_count != before) {
    /* The operator dressed: the request lamp goes out. */
    int coil = srv->sc->schedule.dress_on_coil;
    if (coil >= 0) {
      srv->map->tab_bits[coil] = 0;
      srv->coil_was_set = 0;
    }
  }
  return 0;
}

static void reload_control(SIM_Server *srv, double t)
{
  if (srv->control_path == NULL)
    return;
  struct stat st;
  int present = stat(srv->control_path, &st) == 0;
  if (!present) {
    if (srv->control_seen) {
      char err[8];
      SIM_FaultSetLoadControl(srv->faults, "", t, err, sizeof err);
      srv->control_seen = 0;
    }
    return;
  }
  if (srv->control_seen && st.st_mtim.tv_sec == srv->control_mtime.tv_sec &&
      st.st_mtim.tv_nsec == srv->control_mtime.tv_nsec && st.st_size == srv->control_size &&
      st.st_ino == srv->control_ino)
    return;
  srv->control_seen = 1;
  srv->control_mtime = st.st_mtim;
  srv->control_size = st.st_size;
  srv->control_ino = st.st_ino;
  static char text[CONTROL_MAX + 1];
  FILE *f = fopen(srv->control_path, "r");
  size_t n = 0;
  if (f != NULL) {
    n = fread(text, 1, CONTROL_MAX, f);
    fclose(f);
  }
  text[n] = '\0';
  char err[300], msg[400];
  if (SIM_FaultSetLoadControl(srv->faults, text, t, err, sizeof err) != 0) {
    /* "line N: reason" -> "FILE:N: reason" */
    snprintf(msg, sizeof msg, "%s:%s (faults of the control file ignored)", srv->control_path,
             strncmp(err, "line ", 5) == 0 ? err + 5 : err);
    diag(srv, msg);
  }
}

static void send_garbage(SIM_Server *srv, int fd)
{
  uint8_t junk[48];
  uint64_t r = SIM_RngNext(&srv->rng);
  size_t n = 5 + (size_t)(r % 40);
  for (size_t i = 0; i < n; i += 8) {
    uint64_t v = SIM_RngNext(&srv->rng);
    for (size_t k = 0; k < 8 && i + k < n; k++)
      junk[i + k] = (uint8_t)(v >> (8 * k));
  }
  ssize_t sent = send(fd, junk, n, MSG_NOSIGNAL);
  (void)sent; /* a client that went away is noticed at its next read */
}

/* The registers at sim time sim_ms (the model already stepped there). */
static void build_image(SIM_Server *srv, int64_t sim_ms)
{
  SIM_Snapshot snap;
  SIM_ModelSnapshot(srv->model, (double)(sim_ms - srv->epoch_ms) / 1000.0, &snap);
  SIM_ImageFill(&srv->image, (uint64_t)sim_ms, &snap);
  srv->image_valid = 1;
}

/* Serves one request of client i. Returns 0, or -1 on a fatal error. */
static int serve(SIM_Server *srv, int i, const uint8_t *req, int len, char *err, size_t errsize)
{
  int hl = modbus_get_header_length(srv->ctx);
  const uint8_t *pdu = req + hl;
  int pdu_len = len - hl;
  int unit = req[hl - 1];
  int fc = pdu_len > 0 ? pdu[0] : 0;

  int64_t real_ns = SIM_RealNowNs();
  int64_t sim_ms = sim_now(srv, real_ns);
  if (advance(srv, sim_ms, err, errsize) != 0)
    return -1;
  double t = (double)(sim_ms - srv->epoch_ms) / 1000.0;
  SIM_FaultState fs;
  SIM_FaultSetEval(srv->faults, t, &fs);
  if (fs.drop_once || (fs.active & (1u << SIM_FAULT_DROP))) {
    close_all_clients(srv);
    return 0;
  }

  static uint16_t values[2000];
  SIM_WriteEntry we;
  memset(&we, 0, sizeof we);
  we.real_ms = real_ns / 1000000;
  we.sim_ms = sim_ms;
  we.client = srv->clients[i].name;
  we.unit = unit;
  if (is_write(fc))
    describe_write(pdu, pdu_len, &we, values);

  int code = 0;
  if (fs.active & (1u << SIM_FAULT_SILENT)) {
    code = SIM_WRITE_NO_REPLY;
  } else if (fs.active & (1u << SIM_FAULT_GARBAGE)) {
    send_garbage(srv, srv->clients[i].fd);
    code = SIM_WRITE_GARBAGE;
  } else if (fs.active & (1u << SIM_FAULT_EXCEPTION)) {
    code = fs.exception_code;
    modbus_reply_exception(srv->ctx, req, code);
  } else if (unit != srv->unit_id) {
    /* Not our unit: answer as a gateway whose target does not respond. */
    code = MODBUS_EXCEPTION_GATEWAY_TARGET;
    modbus_reply_exception(srv->ctx, req, code);
  } else if ((code = SIM_CheckRequest(pdu, pdu_len)) != 0) {
    modbus_reply_exception(srv->ctx, req, code);
  } else {
    if (!srv->image_valid || !(fs.active & (1u << SIM_FAULT_FREEZE)))
      build_image(srv, sim_ms);
    SIM_Image served = srv->image;
    SIM_ImageCorrupt(&served, fs.active);
    memcpy(srv->map->tab_registers, served.holding, sizeof served.holding);
    memcpy(srv->map->tab_input_registers, served.input, sizeof served.input);
    memcpy(srv->map->tab_input_bits, served.discrete, sizeof served.discrete);
    if (modbus_reply(srv->ctx, req, len, srv->map) < 0)
      close_client(srv, i); /* the peer went away */
  }
  we.exception = code;
  if (is_write(fc) && SIM_WriteLogAdd(srv->write_log, &we) != 0) {
    snprintf(err, errsize, "write log: %s", strerror(errno));
    return -1;
  }
  return 0;
}

static void accept_client(SIM_Server *srv, int drop_active)
{
  struct sockaddr_storage ss;
  socklen_t sl = sizeof ss;
  int fd = accept(srv->listen_fd, (struct sockaddr *)&ss, &sl);
  if (fd < 0)
    return;
  fcntl(fd, F_SETFD, FD_CLOEXEC);
  int slot = -1;
  for (int i = 0; i < SIM_MAX_CLIENTS && slot < 0; i++)
    if (srv->clients[i].fd < 0)
      slot = i;
  if (slot < 0 || drop_active) {
    close(fd);
    return;
  }
  SIM_Client *c = &srv->clients[slot];
  c->fd = fd;
  char host[64] = "?";
  int port = 0;
  if (ss.ss_family == AF_INET6) {
    struct sockaddr_in6 *a6 = (struct sockaddr_in6 *)&ss;
    inet_ntop(AF_INET6, &a6->sin6_addr, host, sizeof host);
    port = ntohs(a6->sin6_port);
    snprintf(c->name, sizeof c->name, "[%s]:%d", host, port);
  } else {
    struct sockaddr_in *a4 = (struct sockaddr_in *)&ss;
    inet_ntop(AF_INET, &a4->sin_addr, host, sizeof host);
    port = ntohs(a4->sin_port);
    snprintf(c->name, sizeof c->name, "%s:%d", host, port);
  }
}

int SIM_ServerRun(SIM_Server *srv, volatile sig_atomic_t *stop, char *err, size_t errsize)
{
  static uint8_t req[MODBUS_TCP_MAX_ADU_LENGTH];
  while (!*stop) {
    fd_set rfds;
    FD_ZERO(&rfds);
    FD_SET(srv->listen_fd, &rfds);
    int maxfd = srv->listen_fd;
    for (int i = 0; i < SIM_MAX_CLIENTS; i++) {
      if (srv->clients[i].fd >= 0) {
        FD_SET(srv->clients[i].fd, &rfds);
        if (srv->clients[i].fd > maxfd)
          maxfd = srv->clients[i].fd;
      }
    }
    struct timeval tv = { 0, LOOP_MS * 1000 };
    int n = select(maxfd + 1, &rfds, NULL, NULL, &tv);
    if (n < 0 && errno != EINTR) {
      snprintf(err, errsize, "select: %s", strerror(errno));
      return -1;
    }
    if (*stop)
      break;

    int64_t sim_ms = sim_now(srv, SIM_RealNowNs());
    double t = (double)(sim_ms - srv->epoch_ms) / 1000.0;
    if (advance(srv, sim_ms, err, errsize) != 0)
      return -1;
    reload_control(srv, t);
    int coil = srv->sc->schedule.dress_on_coil;
    if (coil >= 0) {
      /* One request per switch-on: the coil stays set until the dress is done. */
      int set = srv->map->tab_bits[coil] != 0;
      if (set && !srv->coil_was_set)
        SIM_ModelRequestDress(srv->model);
      srv->coil_was_set = set;
    }
    SIM_FaultState fs;
    SIM_FaultSetEval(srv->faults, t, &fs);
    int drop_active = (fs.active & (1u << SIM_FAULT_DROP)) != 0;
    /* A freeze holds the registers of the moment it began. */
    if (!(fs.active & (1u << SIM_FAULT_FREEZE)))
      srv->image_valid = 0;
    else if (!srv->image_valid)
      build_image(srv, sim_ms);
    if (fs.drop_once || drop_active)
      close_all_clients(srv);
    if (n <= 0)
      continue;

    if (FD_ISSET(srv->listen_fd, &rfds))
      accept_client(srv, drop_active);
    for (int i = 0; i < SIM_MAX_CLIENTS; i++) {
      int fd = srv->clients[i].fd;
      if (fd < 0 || !FD_ISSET(fd, &rfds))
        continue;
      modbus_set_socket(srv->ctx, fd);
      int len = modbus_receive(srv->ctx, req);
      if (len < 0) {
        close_client(srv, i); /* closed by the peer, or a request that was not Modbus */
        continue;
      }
      if (len == 0)
        continue;
      if (serve(srv, i, req, len, err, errsize) != 0)
        return -1;
    }
  }
  return 0;
}
