/* test_mbclient.c: Criterion tests of the Modbus client that need no server: config checks,
 * write allow list, connect failures and the reconnect backoff. */
#include <criterion/criterion.h>
#include <math.h>
#include <netinet/in.h>
#include <stdio.h>
#include <string.h>
#include <sys/socket.h>
#include <unistd.h>

#include "mbclient.h"

static RMP_Map one_channel_map(void)
{
  RMP_Map m;
  RMP_MapInit(&m);
  m.ch[RMP_SPINDLE_POWER].enabled = 1;
  return m;
}

static void expect_create_error(const MBC_Config *cfg, const RMP_Map *m, const char *word)
{
  char err[256] = "";
  MBC_Client *c = MBC_Create(cfg, m, err, sizeof err);
  cr_expect(c == NULL);
  cr_expect(strstr(err, word) != NULL, "error \"%s\" should name %s", err, word);
  MBC_Destroy(c);
}

Test(mbclient, config_errors_name_the_option)
{
  RMP_Map m = one_channel_map();
  MBC_Config cfg;
  MBC_ConfigInit(&cfg);
  cfg.port = 0;
  expect_create_error(&cfg, &m, "port");
  MBC_ConfigInit(&cfg);
  cfg.unit_id = 248;
  expect_create_error(&cfg, &m, "unit_id");
  MBC_ConfigInit(&cfg);
  cfg.backoff_max_s = 0.5;
  expect_create_error(&cfg, &m, "backoff_max_s");
  MBC_ConfigInit(&cfg);
  cfg.response_timeout_s = 0.0;
  expect_create_error(&cfg, &m, "response_timeout_s");
  MBC_ConfigInit(&cfg);
  cfg.transport = MBC_RTU;
  snprintf(cfg.device, sizeof cfg.device, "/dev/null");
  cfg.parity = 'X';
  expect_create_error(&cfg, &m, "parity");
  cfg.parity = 'N';
  cfg.baud = 12345;
  expect_create_error(&cfg, &m, "baud");
  cfg.baud = 9600;
  cfg.unit_id = 0; /* broadcast: never answered */
  expect_create_error(&cfg, &m, "unit_id");
  MBC_ConfigInit(&cfg);
  RMP_Map empty;
  RMP_MapInit(&empty);
  expect_create_error(&cfg, &empty, "no channel");
  m.ch[RMP_SPINDLE_POWER].unit = RMP_UNIT_RPM;
  expect_create_error(&cfg, &m, "spindle_power");
}

/* A TCP port on 127.0.0.1 where nothing listens: bound by the kernel, then released. */
static unsigned closed_port(void)
{
  int s = socket(AF_INET, SOCK_STREAM, 0);
  cr_assert(s >= 0);
  struct sockaddr_in a;
  memset(&a, 0, sizeof a);
  a.sin_family = AF_INET;
  a.sin_addr.s_addr = htonl(INADDR_LOOPBACK);
  cr_assert(bind(s, (struct sockaddr *)&a, sizeof a) == 0);
  socklen_t len = sizeof a;
  cr_assert(getsockname(s, (struct sockaddr *)&a, &len) == 0);
  close(s);
  return ntohs(a.sin_port);
}

Test(mbclient, refused_connects_back_off_doubling_to_the_cap)
{
  RMP_Map m = one_channel_map();
  MBC_Config cfg;
  MBC_ConfigInit(&cfg);
  snprintf(cfg.host, sizeof cfg.host, "127.0.0.1");
  cfg.port = closed_port();
  cfg.response_timeout_s = 0.5;
  cfg.backoff_min_s = 1.0;
  cfg.backoff_max_s = 4.0;
  char err[256];
  MBC_Client *c = MBC_Create(&cfg, &m, err, sizeof err);
  cr_assert(c != NULL, "%s", err);
  SMP_Sample s;
  s.time = 7.0;
  double clock = 0;
  MBC_Counters n;

  cr_expect_eq(MBC_Poll(c, 100.0, &s, &clock), MBC_FAIL_CONNECT);
  cr_expect(SMP_IsEmpty(&s) && isnan(clock) && s.time == 7.0);
  cr_expect(strstr(MBC_LastError(c), "connect") != NULL, "%s", MBC_LastError(c));
  MBC_GetCounters(c, &n);
  cr_expect(n.next_attempt_s == 101.0 && n.backoff_s == 2.0);
  cr_expect_eq(MBC_Poll(c, 100.9, &s, &clock), MBC_DOWN);
  cr_expect_eq(MBC_Poll(c, 101.0, &s, &clock), MBC_FAIL_CONNECT);
  MBC_GetCounters(c, &n);
  cr_expect(n.next_attempt_s == 103.0 && n.backoff_s == 4.0);
  cr_expect_eq(MBC_Poll(c, 102.0, &s, &clock), MBC_DOWN);
  cr_expect_eq(MBC_Poll(c, 103.0, &s, &clock), MBC_FAIL_CONNECT);
  MBC_GetCounters(c, &n);
  cr_expect(n.next_attempt_s == 107.0 && n.backoff_s == 4.0); /* capped */
  cr_expect_eq(MBC_Poll(c, 107.0, &s, &clock), MBC_FAIL_CONNECT);
  MBC_GetCounters(c, &n);
  cr_expect(n.next_attempt_s == 111.0);
  cr_expect_eq(n.connect_attempts, 4);
  cr_expect_eq(n.failures, 4);
  cr_expect_eq(n.requests, 0);
  cr_expect_eq(n.reconnects, 0);
  cr_expect_eq(n.connected, 0);
  MBC_Destroy(c);
}

Test(mbclient, writes_outside_the_allow_list_are_refused)
{
  RMP_Map m = one_channel_map();
  MBC_Config cfg;
  MBC_ConfigInit(&cfg);
  cfg.n_write_coils = 1;
  cfg.write_coils[0] = 100;
  cfg.n_write_registers = 1;
  cfg.write_registers[0] = 300;
  char err[256];
  MBC_Client *c = MBC_Create(&cfg, &m, err, sizeof err);
  cr_assert(c != NULL, "%s", err);
  cr_expect(MBC_WriteCoil(c, 101, 1) == -1);
  cr_expect(strstr(MBC_LastError(c), "refused") != NULL, "%s", MBC_LastError(c));
  cr_expect(MBC_WriteRegister(c, 100, 1) == -1); /* a coil address is not a register address */
  cr_expect(strstr(MBC_LastError(c), "refused") != NULL, "%s", MBC_LastError(c));
  /* Allowed but not connected yet: refused for another reason. */
  cr_expect(MBC_WriteCoil(c, 100, 1) == -1);
  cr_expect(strstr(MBC_LastError(c), "not connected") != NULL, "%s", MBC_LastError(c));
  MBC_Counters n;
  MBC_GetCounters(c, &n);
  cr_expect_eq(n.requests, 0);
  MBC_Destroy(c);
}

Test(mbclient, names_and_ipv6_are_accepted_without_connecting)
{
  /* modbus_new_tcp_pi keeps the node and service; nothing is resolved before the first poll. */
  RMP_Map m = one_channel_map();
  MBC_Config cfg;
  MBC_ConfigInit(&cfg);
  const char *hosts[] = {"localhost", "::1", "sg4-gateway.cell-b.alder-street.invalid"};
  for (size_t i = 0; i < sizeof hosts / sizeof hosts[0]; i++) {
    char err[256] = "";
    snprintf(cfg.host, sizeof cfg.host, "%s", hosts[i]);
    MBC_Client *c = MBC_Create(&cfg, &m, err, sizeof err);
    cr_expect(c != NULL, "%s: %s", hosts[i], err);
    MBC_Counters n;
    MBC_GetCounters(c, &n);
    cr_expect_eq(n.connect_attempts, 0);
    MBC_Destroy(c);
  }
}
