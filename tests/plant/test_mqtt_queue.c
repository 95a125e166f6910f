/* test_mqtt_queue.c: unit tests of the MQTT queue, the payloads, and a client with no broker (MQT_). */
#include "mqtt.h"

#include <criterion/criterion.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <time.h>

static double mono(void)
{
  struct timespec ts;
  clock_gettime(CLOCK_MONOTONIC, &ts);
  return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

static void push(MQT_Queue *q, int cls, const char *text)
{
  cr_assert_eq(MQT_QueuePush(q, cls, cls == MQT_CLASS_ALERT, 0, cls == MQT_CLASS_ALERT ? "t/alert" : "t/pass", text,
                             strlen(text)),
               0);
}

static const char *pop(MQT_Queue *q)
{
  static char out[64];
  int cls;
  MQT_Message *m = MQT_QueueHead(q, &cls);
  if (!m)
    return NULL;
  snprintf(out, sizeof out, "%.*s", (int)m->len, m->payload);
  MQT_QueuePop(q, cls);
  return out;
}

Test(queue, leaves_in_arrival_order_across_classes)
{
  MQT_Queue q;
  cr_assert_eq(MQT_QueueInit(&q, 4, 4), 0);
  push(&q, MQT_CLASS_PASS, "p1");
  push(&q, MQT_CLASS_ALERT, "a1");
  push(&q, MQT_CLASS_PASS, "p2");
  push(&q, MQT_CLASS_ALERT, "a2");
  const char *want[] = {"p1", "a1", "p2", "a2"};
  for (int i = 0; i < 4; i++)
    cr_assert_str_eq(pop(&q), want[i]);
  cr_assert_null(pop(&q));
  MQT_QueueFree(&q);
}

Test(queue, full_pass_queue_drops_its_oldest_and_keeps_alerts)
{
  MQT_Queue q;
  cr_assert_eq(MQT_QueueInit(&q, 3, 2), 0);
  push(&q, MQT_CLASS_ALERT, "a1");
  char t[8];
  for (int i = 1; i <= 10; i++) {
    snprintf(t, sizeof t, "p%d", i);
    push(&q, MQT_CLASS_PASS, t);
  }
  cr_assert_eq(q.ring[MQT_CLASS_PASS].dropped, 7);
  cr_assert_eq(q.ring[MQT_CLASS_PASS].count, 3);
  cr_assert_eq(q.ring[MQT_CLASS_ALERT].dropped, 0);
  const char *want[] = {"a1", "p8", "p9", "p10"};
  for (int i = 0; i < 4; i++)
    cr_assert_str_eq(pop(&q), want[i]);
  MQT_QueueFree(&q);
}

Test(queue, alerts_have_their_own_bound)
{
  MQT_Queue q;
  cr_assert_eq(MQT_QueueInit(&q, 2, 2), 0);
  push(&q, MQT_CLASS_ALERT, "a1");
  push(&q, MQT_CLASS_ALERT, "a2");
  push(&q, MQT_CLASS_ALERT, "a3");
  cr_assert_eq(q.ring[MQT_CLASS_ALERT].dropped, 1);
  cr_assert_str_eq(pop(&q), "a2");
  cr_assert_str_eq(pop(&q), "a3");
  int cls;
  MQT_Message *m;
  push(&q, MQT_CLASS_ALERT, "a4");
  m = MQT_QueueHead(&q, &cls);
  cr_assert_eq(m->qos, 1);
  cr_assert_eq(cls, MQT_CLASS_ALERT);
  MQT_QueueFree(&q);
}

Test(queue, refuses_what_does_not_fit)
{
  MQT_Queue q;
  cr_assert_eq(MQT_QueueInit(&q, 1, 1), 0);
  char topic[MQT_TOPIC_MAX + 1];
  memset(topic, 'x', sizeof topic - 1);
  topic[sizeof topic - 1] = '\0';
  cr_assert_eq(MQT_QueuePush(&q, MQT_CLASS_PASS, 0, 0, topic, "x", 1), -1);
  static char big[MQT_PAYLOAD_MAX + 1];
  cr_assert_eq(MQT_QueuePush(&q, MQT_CLASS_PASS, 0, 0, "t", big, sizeof big), -1);
  cr_assert_eq(q.ring[MQT_CLASS_PASS].count, 0);
  MQT_QueueFree(&q);
}

/* ---- payloads: the integration tests read them with Python's json module ---- */

static char buf[MQT_PAYLOAD_MAX];

Test(payload, pass_with_unknown_values_as_null)
{
  SEG_Pass p;
  memset(&p, 0, sizeof p);
  p.number = 7;
  p.end_time = 1796169304.125;
  p.start_time = 1796169274.0;
  p.aggressiveness = 9.75;
  p.depth_mm = NAN;
  p.work_speed_mm_s = 40.0;
  p.flags = SEG_F_DEPTH_UNKNOWN;
  CYC_PassInfo x;
  memset(&x, 0, sizeof x);
  x.cycle = 1;
  x.pass_in_cycle = 7;
  x.dull_ratio = NAN;
  long n = MQT_FormatPass("sg4", &p, &x, "plate-1200", "cx60-vitrified", buf, sizeof buf);
  cr_assert_gt(n, 0);
  cr_assert(strncmp(buf, "{\"machine\":\"sg4\",\"job\":\"plate-1200\",\"wheel\":\"cx60-vitrified\",\"pass\":7,", 70) == 0,
            "%s", buf);
  cr_assert(strstr(buf, "\"end_time\":1796169304.125,"), "%s", buf);
  cr_assert(strstr(buf, "\"depth_of_cut_mm\":null,"));
  cr_assert(strstr(buf, "\"work_speed_mm_min\":2400,"));
  cr_assert(strstr(buf, "\"aggressiveness\":9.75,"));
  cr_assert(strstr(buf, "\"flags\":\"depth_unknown\""));
  cr_assert(strstr(buf, "\"dull_ratio\":null"));
  cr_assert_eq(buf[n - 1], '}');
  cr_assert_eq(MQT_FormatPass("sg4", &p, &x, "plate-1200", "cx60-vitrified", buf, 100), -1);
}

Test(payload, event_text_is_escaped)
{
  PLG_Event e;
  memset(&e, 0, sizeof e);
  e.time = 1796169322.839;
  snprintf(e.kind, sizeof e.kind, "communication_lost");
  e.severity = PLG_WARNING;
  e.state = PLG_RAISED;
  e.pass = 3;
  e.value = e.limit = NAN;
  snprintf(e.message, sizeof e.message, "no \"values\"\tsince \\ 2 s");
  cr_assert_gt(MQT_FormatEvent("sg4", &e, buf, sizeof buf), 0);
  cr_assert_str_eq(buf, "{\"machine\":\"sg4\",\"time\":1796169322.839,\"kind\":\"communication_lost\",\"state\":\"raised\","
                        "\"severity\":\"warning\",\"pass\":3,\"value\":null,\"limit\":null,"
                        "\"message\":\"no \\\"values\\\"\\u0009since \\\\ 2 s\"}");
}

Test(payload, status_online_and_offline)
{
  cr_assert_gt(MQT_FormatStatus("sg4", 1, "running", 1, "[\"dulling\"]", 1796169000.5, buf, sizeof buf), 0);
  cr_assert_str_eq(buf, "{\"machine\":\"sg4\",\"online\":true,\"reason\":\"running\",\"connection\":\"up\","
                        "\"conditions\":[\"dulling\"],\"time\":1796169000.500}");
  cr_assert_gt(MQT_FormatStatus("sg4", 0, "connection lost", -1, NULL, NAN, buf, sizeof buf), 0);
  cr_assert_str_eq(buf, "{\"machine\":\"sg4\",\"online\":false,\"reason\":\"connection lost\",\"connection\":null,"
                        "\"conditions\":null,\"time\":null}");
}

/* ---- a client whose broker is not there ---- */

static MQT_Config config(void)
{
  MQT_Config c;
  memset(&c, 0, sizeof c);
  c.enabled = 1;
  snprintf(c.host, sizeof c.host, "127.0.0.1");
  c.port = 9; /* discard: nothing listens there in a test box; connects are refused */
  c.keepalive_s = 30;
  c.queue_passes = 5;
  c.queue_alerts = 5;
  c.reconnect_min_s = 1;
  c.reconnect_max_s = 2;
  return c;
}

Test(client, queues_without_a_broker_and_never_blocks)
{
  MQT_Config c = config();
  char err[256];
  MQT_Client *m = MQT_Create(&c, "sg4", err, sizeof err);
  cr_assert_not_null(m, "%s", err);
  cr_assert_str_eq(MQT_Prefix(m), "gritline/sg4");
  SEG_Pass p;
  memset(&p, 0, sizeof p);
  double worst = 0.0;
  for (unsigned long i = 1; i <= 8; i++) {
    p.number = i;
    double t0 = mono();
    MQT_Pass(m, &p, NULL, "plate-1200", "cx60-vitrified");
    MQT_Service(m, mono());
    double dt = mono() - t0;
    if (dt > worst)
      worst = dt;
  }
  cr_assert_lt(worst, 0.05, "a pass took %.3f s to queue", worst);
  MQT_Counters k;
  MQT_GetCounters(m, &k);
  cr_assert_eq(k.connected, 0);
  cr_assert_eq(k.queued_passes, 5);
  cr_assert_eq(k.dropped_passes, 3);
  cr_assert_eq(k.published, 0);
  double t0 = mono();
  MQT_Destroy(m, 2.0);
  cr_assert_lt(mono() - t0, 1.0, "nothing to wait for without a broker");
}

Test(client, unreadable_password_file)
{
  MQT_Config c = config();
  snprintf(c.username, sizeof c.username, "sg4");
  snprintf(c.password_file, sizeof c.password_file, "/nonexistent/gritline.secret");
  char err[256];
  cr_assert_null(MQT_Create(&c, "sg4", err, sizeof err));
  cr_assert(strstr(err, "[mqtt] password_file /nonexistent/gritline.secret: "), "%s", err);
}
