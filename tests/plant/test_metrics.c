/* test_metrics.c: unit tests of the Prometheus exposition text and of the HTTP server (MET_). */
#include "livepage.h"
#include "metrics.h"

#include <arpa/inet.h>
#include <criterion/criterion.h>
#include <math.h>
#include <netinet/in.h>
#include <poll.h>
#include <stdio.h>
#include <string.h>
#include <sys/socket.h>
#include <time.h>
#include <unistd.h>

static double mono(void)
{
  struct timespec ts;
  clock_gettime(CLOCK_MONOTONIC, &ts);
  return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

static MET_Snapshot snap; /* large: static */
static char text[MET_BODY_MAX];

static void fill(MET_Snapshot *s)
{
  MET_SnapshotInit(s);
  snprintf(s->machine, sizeof s->machine, "sg4");
  snprintf(s->job, sizeof s->job, "plate-1200");
  snprintf(s->wheel, sizeof s->wheel, "cx60-vitrified");
  snprintf(s->version, sizeof s->version, "0.1.0");
  s->connected = 1;
  s->net_power_w = 5321.5;
  s->last_pass = 12;
  s->aggressiveness = 9.75;
  s->specific_energy_j_m3 = 22.1e9;
  s->passes_total = 12;
  s->alerts_total[CND_LOW_AGGR] = 1;
  s->active[CND_LOW_AGGR] = 1;
  s->modbus.requests = 3456;
  s->mqtt_enabled = 1;
  s->mqtt.dropped_passes = 4;
}

/* The exposition format 0.0.4 (Prometheus documentation, "Exposition formats",
 * from memory): each metric family has one TYPE line before its samples; the
 * naming practice asks counters to end in _total and names to carry base
 * units. promtool checks the same in tests/plant/test_http.py. */
Test(format, every_sample_has_help_and_type_before_it)
{
  fill(&snap);
  long n = MET_FormatMetrics(&snap, 0.0, text, sizeof text);
  cr_assert_gt(n, 0);
  cr_assert_eq((size_t)n, strlen(text));
  char type_of[64] = "", help_of[64] = "", kind[16] = "";
  int samples = 0;
  for (char *line = strtok(text, "\n"); line; line = strtok(NULL, "\n")) {
    char name[64];
    if (sscanf(line, "# HELP %63s", name) == 1) {
      snprintf(help_of, sizeof help_of, "%s", name);
      continue;
    }
    if (sscanf(line, "# TYPE %63s %15s", name, kind) == 2) {
      cr_assert_str_eq(name, help_of, "TYPE of %s without its HELP", name);
      snprintf(type_of, sizeof type_of, "%s", name);
      continue;
    }
    size_t len = strcspn(line, "{ ");
    cr_assert_lt(len, sizeof name);
    memcpy(name, line, len);
    name[len] = '\0';
    cr_assert_str_eq(name, type_of, "sample of %s outside its family", name);
    cr_assert(strstr(line, "{machine=\"sg4\"") == line + len, "no machine label: %s", line);
    size_t nl = strlen(name);
    int total = nl > 6 && strcmp(name + nl - 6, "_total") == 0;
    cr_assert_eq(total, strcmp(kind, "counter") == 0, "%s: counters and only counters end in _total", name);
    samples++;
  }
  cr_assert_gt(samples, 40);
}

Test(format, values_units_and_labels)
{
  fill(&snap);
  cr_assert_gt(MET_FormatMetrics(&snap, 0.0, text, sizeof text), 0);
  cr_assert(strstr(text, "gritline_net_power_watts{machine=\"sg4\"} 5321.5\n"));
  cr_assert(strstr(text, "gritline_last_pass_specific_energy_joules_per_cubic_meter{machine=\"sg4\"} 2.21e+10\n"));
  cr_assert(strstr(text, "gritline_alerts_total{machine=\"sg4\",kind=\"low_aggressiveness\"} 1\n"));
  cr_assert(strstr(text, "gritline_alerts_total{machine=\"sg4\",kind=\"burn_risk\"} 0\n"));
  cr_assert(strstr(text, "gritline_condition_active{machine=\"sg4\",kind=\"low_aggressiveness\"} 1\n"));
  cr_assert(strstr(text, "gritline_modbus_requests_total{machine=\"sg4\"} 3456\n"));
  cr_assert(strstr(text, "gritline_mqtt_messages_dropped_total{machine=\"sg4\",class=\"pass\"} 4\n"));
  cr_assert(strstr(text, "gritline_info{machine=\"sg4\",version=\"0.1.0\",job=\"plate-1200\",wheel=\"cx60-vitrified\"} 1\n"));
  /* Unknown values are NaN (Go's ParseFloat syntax, which Prometheus reads). */
  cr_assert(strstr(text, "gritline_last_pass_burn_ratio{machine=\"sg4\"} NaN\n"));
  snap.mqtt_enabled = 0;
  cr_assert_gt(MET_FormatMetrics(&snap, 0.0, text, sizeof text), 0);
  cr_assert_null(strstr(text, "gritline_mqtt_"), "no MQTT series when MQTT is off");
}

Test(format, label_values_are_escaped)
{
  fill(&snap);
  snprintf(snap.job, sizeof snap.job, "a\"b\\c\nd");
  snap.net_power_w = INFINITY;
  cr_assert_gt(MET_FormatMetrics(&snap, 0.0, text, sizeof text), 0);
  cr_assert(strstr(text, "job=\"a\\\"b\\\\c\\nd\""), "%s", text);
  cr_assert(strstr(text, "gritline_net_power_watts{machine=\"sg4\"} +Inf\n"));
}

Test(format, sample_age_grows_after_the_snapshot)
{
  fill(&snap);
  snap.taken = 100.0;
  snap.last_sample_age_s = 1.5;
  cr_assert_gt(MET_FormatMetrics(&snap, 103.0, text, sizeof text), 0);
  cr_assert(strstr(text, "gritline_last_sample_age_seconds{machine=\"sg4\"} 4.5\n"));
}

Test(format, too_small_a_buffer_is_refused)
{
  fill(&snap);
  char small[512];
  cr_assert_eq(MET_FormatMetrics(&snap, 0.0, small, sizeof small), -1);
}

Test(page, fits_and_loads_nothing_from_elsewhere)
{
  static char page[LVP_PAGE_MAX];
  long n = LVP_Write(page, sizeof page);
  cr_assert_gt(n, 1000);
  cr_assert(strncmp(page, "<!DOCTYPE html>", 15) == 0);
  cr_assert(strstr(page, "/status.json"));
  cr_assert_null(strstr(page, "http://"));
  cr_assert_null(strstr(page, "https://"));
  cr_assert_null(strstr(page, "src="), "no external script or image");
  cr_assert_eq(LVP_Write(page, 100), -1);
}

/* ---- the server, over a real socket on 127.0.0.1 ---- */

/* One HTTP/1.1 request (RFC 9112: request line, Host, an empty line); returns the status code. */
static int request(unsigned port, const char *method, const char *path, char *reply, size_t size)
{
  int fd = socket(AF_INET, SOCK_STREAM, 0);
  struct sockaddr_in sa = {.sin_family = AF_INET, .sin_port = htons((uint16_t)port)};
  sa.sin_addr.s_addr = htonl(INADDR_LOOPBACK);
  cr_assert_eq(connect(fd, (struct sockaddr *)&sa, sizeof sa), 0);
  char req[256];
  const char *body = strcmp(method, "POST") == 0 ? "hello" : "";
  int n = snprintf(req, sizeof req, "%s %s HTTP/1.1\r\nHost: 127.0.0.1\r\nConnection: close\r\nContent-Length: %zu\r\n\r\n%s",
                   method, path, strlen(body), body);
  cr_assert_eq(write(fd, req, (size_t)n), n);
  size_t used = 0;
  for (;;) {
    struct pollfd p = {fd, POLLIN, 0};
    cr_assert_gt(poll(&p, 1, 5000), 0, "no answer within 5 s");
    ssize_t r = read(fd, reply + used, size - 1 - used);
    if (r <= 0)
      break;
    used += (size_t)r;
  }
  reply[used] = '\0';
  close(fd);
  int code = 0;
  sscanf(reply, "HTTP/1.1 %d", &code);
  return code;
}

static char reply[MET_BODY_MAX + 4096];

Test(server, answers_get_only)
{
  MET_Config cfg = {"127.0.0.1", 0};
  char err[256];
  MET_Server *m = MET_Start(&cfg, err, sizeof err);
  cr_assert_not_null(m, "%s", err);
  unsigned port = MET_Port(m);
  cr_assert_gt(port, 0);
  /* Before the first snapshot there is no status to give. */
  cr_assert_eq(request(port, "GET", "/status.json", reply, sizeof reply), 503);
  fill(&snap);
  snap.status_len = (long)strlen("{\"machine\":\"sg4\"}");
  memcpy(snap.status_json, "{\"machine\":\"sg4\"}", (size_t)snap.status_len);
  MET_Publish(m, &snap);
  cr_assert_eq(request(port, "GET", "/status.json", reply, sizeof reply), 200);
  cr_assert(strstr(reply, "\r\n\r\n{\"machine\":\"sg4\"}"));
  cr_assert(strstr(reply, "Content-Type: application/json"));
  cr_assert_eq(request(port, "GET", "/metrics", reply, sizeof reply), 200);
  cr_assert(strstr(reply, "Content-Type: text/plain; version=0.0.4"));
  cr_assert(strstr(reply, "gritline_passes_total{machine=\"sg4\"} 12\n"));
  cr_assert_eq(request(port, "GET", "/", reply, sizeof reply), 200);
  cr_assert(strstr(reply, "<!DOCTYPE html>"));
  cr_assert(strstr(reply, "Content-Security-Policy: default-src 'none'"));
  /* RFC 9110, 15.5.6: a 405 carries Allow with the methods the resource takes. */
  const char *methods[] = {"POST", "PUT", "DELETE", "PATCH", "OPTIONS"};
  for (size_t i = 0; i < sizeof methods / sizeof methods[0]; i++) {
    cr_assert_eq(request(port, methods[i], "/metrics", reply, sizeof reply), 405, "%s", methods[i]);
    cr_assert(strstr(reply, "Allow: GET"));
  }
  cr_assert_eq(request(port, "GET", "/nothing", reply, sizeof reply), 404);
  unsigned long long served, refused;
  MET_Requests(m, &served, &refused);
  cr_assert_eq(served, 3);
  cr_assert_eq(refused, 7);
  MET_Stop(m);
}

/* Clients that connect and never finish their request must not hold up the
 * poll loop: MET_Publish only takes the mutex, never waits for a client. */
Test(server, slow_clients_never_block_publish)
{
  MET_Config cfg = {"127.0.0.1", 0};
  char err[256];
  MET_Server *m = MET_Start(&cfg, err, sizeof err);
  cr_assert_not_null(m, "%s", err);
  int fds[MET_CONNECTIONS + 4];
  for (size_t i = 0; i < sizeof fds / sizeof fds[0]; i++) {
    fds[i] = socket(AF_INET, SOCK_STREAM, 0);
    struct sockaddr_in sa = {.sin_family = AF_INET, .sin_port = htons((uint16_t)MET_Port(m))};
    sa.sin_addr.s_addr = htonl(INADDR_LOOPBACK);
    cr_assert_eq(connect(fds[i], (struct sockaddr *)&sa, sizeof sa), 0);
    cr_assert_eq(write(fds[i], "GET /met", 8), 8); /* and nothing more */
  }
  fill(&snap);
  double worst = 0.0;
  for (int i = 0; i < 200; i++) {
    double t0 = mono();
    MET_Publish(m, &snap);
    double dt = mono() - t0;
    if (dt > worst)
      worst = dt;
  }
  cr_assert_lt(worst, 0.05, "MET_Publish took %.3f s", worst);
  for (size_t i = 0; i < sizeof fds / sizeof fds[0]; i++)
    close(fds[i]);
  MET_Stop(m);
}

Test(server, refuses_a_name_or_a_busy_port)
{
  char err[256];
  MET_Config name = {"localhost", 0};
  cr_assert_null(MET_Start(&name, err, sizeof err));
  cr_assert(strstr(err, "[metrics] listen"), "%s", err);
  MET_Config any = {"127.0.0.1", 0};
  MET_Server *m = MET_Start(&any, err, sizeof err);
  cr_assert_not_null(m, "%s", err);
  MET_Config same = {"127.0.0.1", MET_Port(m)};
  cr_assert_null(MET_Start(&same, err, sizeof err));
  cr_assert(strstr(err, "cannot listen on 127.0.0.1 port"), "%s", err);
  MET_Stop(m);
}
