#!/usr/bin/python3
"""test_mqtt.py: gritlined publishing to a real mosquitto broker (Debian's mosquitto).

gritline-sim plays sg4 (conf/scenarios/demo.ini at 60x); gritlined runs with
conf/demo.conf and an [mqtt] section; the broker has its own configuration file,
a free port on 127.0.0.1 and persistence off; Debian's mosquitto_sub reads what
arrives. The payloads are read with Python's json module; the MQTT semantics
checked (QoS of delivery, retained flag, last will, clean disconnect) are those of
MQTT 3.1.1 (OASIS standard, sections 3.1.2.5 will, 3.3.1.3 retain; from memory) as
the broker applies them.

Run by meson, one class per test: Basic, Restart, Late, Auth.
"""
import csv
import glob
import json
import os
import re
import signal
import subprocess
import sys
import time
import unittest

from plantharness import (ROOT, Broker, Daemon, Gate, Subscriber, Workdir, demo_config, free_port, metric,
                          metrics, start_sim, wait_until)

PASS_KEYS = {"machine", "job", "wheel", "pass", "start_time", "end_time", "duration_s", "depth_of_cut_mm",
             "work_speed_mm_min", "wheel_speed_m_s", "aggressiveness", "specific_energy_j_mm3", "burn_ratio",
             "net_power_mean_w", "flags", "cycle", "pass_in_cycle", "dull_ratio", "dull_ratio_smoothed"}


def is_status(online):
    return lambda t, q, r, p: t == "gritline/sg4/status" and json.loads(p)["online"] is online


def passes_csv(work):
    rows = []
    for path in sorted(glob.glob(work.file("data/sg4/*/passes.csv"))):
        with open(path, newline="", encoding="utf-8") as f:
            rows += list(csv.DictReader(f))
    return {int(r["pass"]): r for r in rows}


class Plant(unittest.TestCase):
    """A work folder, and everything started is stopped at the end, in reverse."""

    def setUp(self):
        self.work = Workdir()
        self.stops = []

    def tearDown(self):
        for stop in reversed(self.stops):
            try:
                stop()
            except Exception as e:  # the first failure is the interesting one
                print("cleanup:", e, file=sys.stderr)
        self.work.close()

    def keep(self, thing, stop=None):
        self.stops.append(stop or thing.stop)
        return thing


class Basic(Plant):
    def test_passes_alerts_retained_status_and_will(self):
        broker = self.keep(Broker(self.work).start())
        sub = self.keep(Subscriber(broker.port, ["gritline/#", "plant-test/probe"]).ready(broker.port))
        sim = self.keep(start_sim(self.work))
        conf = demo_config(self.work, sim.port, free_port(), {"port": broker.port, "keepalive_s": 10})
        daemon = Daemon(self.work, conf)
        self.keep(daemon)

        # The status goes out first, retained, QoS 1.
        topic, qos, retain, payload = sub.wait_for("the online status", is_status(True), 15)
        st = json.loads(payload)
        self.assertEqual(qos, 1)
        self.assertEqual(st["machine"], "sg4")
        self.assertEqual(st["connection"], "up")
        self.assertIsInstance(st["conditions"], list)

        # Pass records, QoS 0 as configured by default, in order, with the pipeline's figures.
        def three_passes():
            got = [m for m in sub.poll() if m[0] == "gritline/sg4/pass"]
            return got if len(got) >= 3 else None
        passes = wait_until("three pass messages", three_passes, 25)
        numbers = []
        for topic, qos, retain, payload in passes:
            p = json.loads(payload)
            self.assertEqual(qos, 0)
            self.assertEqual(retain, 0)
            self.assertLessEqual(PASS_KEYS, set(p), "keys missing from a pass message")
            self.assertEqual((p["machine"], p["job"], p["wheel"]), ("sg4", "plate-1200", "cx60-vitrified"))
            numbers.append(p["pass"])
        self.assertEqual(numbers, sorted(numbers))
        self.assertEqual(len(set(numbers)), len(numbers))

        # An alert raised by the condition model (the demo job runs below the wheel's
        # window: low_aggressiveness), QoS 1, its kind in the topic.
        topic, qos, retain, payload = sub.wait_for(
            "an alert", lambda t, q, r, p: t.startswith("gritline/sg4/alert/"), 30)
        ev = json.loads(payload)
        self.assertEqual(qos, 1)
        self.assertEqual(topic.rsplit("/", 1)[1], ev["kind"])
        self.assertEqual(ev["state"], "raised")
        self.assertIn(ev["severity"], ("warning", "critical"))
        self.assertTrue(ev["message"])

        # The same passes as passes.csv (the pass log).
        rows = wait_until("passes.csv", lambda: passes_csv(self.work) or None, 5)
        for _, _, _, payload in passes:
            p = json.loads(payload)
            row = rows[p["pass"]]
            self.assertAlmostEqual(float(row["end_time"]), p["end_time"], delta=0.002)
            if p["aggressiveness"] is not None:
                self.assertAlmostEqual(float(row["aggressiveness"]), p["aggressiveness"],
                                       delta=1e-4 * abs(p["aggressiveness"]))  # passes.csv: 4 digits

        # A subscriber that comes later gets the status from the broker: retained.
        late = Subscriber(broker.port, ["gritline/sg4/status"])
        m = late.wait_for("the retained status", lambda t, q, r, p: True, 5)
        late.stop()
        self.assertEqual(m[2], 1)
        self.assertTrue(json.loads(m[3])["online"])

        # kill -9: no clean disconnect, so the broker publishes the last will.
        self.assertEqual(daemon.stop(signal.SIGKILL), -signal.SIGKILL)
        topic, qos, retain, payload = sub.wait_for("the will", is_status(False), 10)
        self.assertEqual(qos, 1)
        self.assertEqual(json.loads(payload)["reason"], "connection lost")
        late = Subscriber(broker.port, ["gritline/sg4/status"])
        m = late.wait_for("the retained will", lambda t, q, r, p: True, 5)
        late.stop()
        self.assertEqual(m[2], 1)
        self.assertFalse(json.loads(m[3])["online"])

    def test_clean_stop_says_stopped(self):
        broker = self.keep(Broker(self.work).start())
        sub = self.keep(Subscriber(broker.port, ["gritline/#", "plant-test/probe"]).ready(broker.port))
        sim = self.keep(start_sim(self.work))
        conf = demo_config(self.work, sim.port, 0, {"port": broker.port})
        daemon = Daemon(self.work, conf)
        self.keep(daemon)
        sub.wait_for("the online status", is_status(True), 15)
        self.assertEqual(daemon.stop(signal.SIGTERM), 0)
        topic, qos, retain, payload = sub.wait_for("the offline status", is_status(False), 10)
        self.assertEqual(json.loads(payload)["reason"], "stopped")  # not the will
        time.sleep(0.5)
        wills = [m for m in sub.poll() if m[0] == topic and json.loads(m[3])["reason"] == "connection lost"]
        self.assertEqual(wills, [], "a clean stop must not trigger the will")


class Restart(Plant):
    """The broker goes away and comes back: alerts raised meanwhile are kept and
    arrive after the reconnect; the pass queue keeps its newest messages."""

    def test_broker_restart_keeps_alerts(self):
        broker = self.keep(Broker(self.work).start())
        gate = Gate(broker.port)
        self.keep(gate, gate.shutdown)
        gate.open()
        sim = self.keep(start_sim(self.work, "--control", self.work.file("faults")))
        mport = free_port()
        conf = demo_config(self.work, sim.port, mport,
                           {"port": gate.port, "queue_passes": 3, "reconnect_min_s": 1, "reconnect_max_s": 2})
        daemon = Daemon(self.work, conf)
        self.keep(daemon)
        wait_until("MQTT connected", lambda: metric(metrics(mport)[0], "gritline_mqtt_connected") == 1, 15)
        wait_until("two passes", lambda: metric(metrics(mport)[0], "gritline_passes_total") >= 2, 20)

        # The broker goes: the gate cuts the connection and refuses new ones; the broker restarts.
        gate.close()
        last_before = metric(metrics(mport)[0], "gritline_last_pass_number")
        broker.stop()
        wait_until("MQTT down", lambda: metric(metrics(mport)[0], "gritline_mqtt_connected") == 0, 10)
        # The controller goes silent (the simulator's fault): communication_lost is raised ...
        with open(self.work.file("faults.tmp"), "w") as f:
            f.write("silent\n")
        os.rename(self.work.file("faults.tmp"), self.work.file("faults"))
        wait_until("communication_lost raised", lambda: metric(
            metrics(mport)[0], "gritline_condition_active", kind="communication_lost") == 1, 15)
        # ... and cleared when it answers again.
        os.unlink(self.work.file("faults"))
        wait_until("communication_lost cleared", lambda: metric(
            metrics(mport)[0], "gritline_condition_active", kind="communication_lost") == 0, 15)
        # More passes than the pass queue holds: the oldest are dropped and counted.
        wait_until("pass messages dropped", lambda: metric(
            metrics(mport)[0], "gritline_mqtt_messages_dropped_total", **{"class": "pass"}) >= 1, 20)
        values, _ = metrics(mport)
        self.assertEqual(metric(values, "gritline_mqtt_messages_dropped_total", **{"class": "alert"}), 0)
        self.assertGreaterEqual(metric(values, "gritline_mqtt_queued_messages", **{"class": "alert"}), 2)
        self.assertEqual(metric(values, "gritline_mqtt_queued_messages", **{"class": "pass"}), 3)

        broker.start()
        sub = self.keep(Subscriber(broker.port, ["gritline/#", "plant-test/probe"]).ready(broker.port))
        gate.open()
        raised = sub.wait_for("communication_lost raised", lambda t, q, r, p: t.endswith(
            "/alert/communication_lost") and json.loads(p)["state"] == "raised", 15)
        cleared = sub.wait_for("communication_lost cleared", lambda t, q, r, p: t.endswith(
            "/alert/communication_lost") and json.loads(p)["state"] == "cleared", 5)
        self.assertEqual((raised[1], cleared[1]), (1, 1))
        self.assertLess(json.loads(raised[3])["time"], json.loads(cleared[3])["time"])
        wait_until("the queue emptied", lambda: metric(
            metrics(mport)[0], "gritline_mqtt_queued_messages", **{"class": "alert"}) == 0, 10)
        values, _ = metrics(mport)
        self.assertEqual(metric(values, "gritline_mqtt_connects_total"), 2)
        self.assertEqual(metric(values, "gritline_mqtt_unconfirmed_total"), 0)
        # Of the passes made while the broker was away, the newest three came, in order,
        # after a gap where the dropped ones were.
        time.sleep(0.5)
        after = [json.loads(m[3])["pass"] for m in sub.poll() if m[0] == "gritline/sg4/pass"]
        self.assertGreaterEqual(len(after), 3)
        self.assertEqual(after, sorted(set(after)))
        self.assertEqual(after[:3], list(range(after[0], after[0] + 3)))
        self.assertGreater(after[0], last_before + 1)
        self.assertIn("MQTT: connection to the broker lost", daemon.text())
        # docs/metrics.md lists every MQTT series.
        with open(os.path.join(ROOT, "docs", "metrics.md"), encoding="utf-8") as f:
            documented = set(re.findall(r"`(gritline_mqtt_\w+)`", f.read()))
        exposed = set(re.findall(r"^# TYPE (gritline_mqtt_\w+) ", metrics(mport)[1], re.M))
        self.assertEqual(exposed, documented)


class Late(Plant):
    """The daemon starts while the broker is down; keep-alive pings once connected."""

    def test_broker_that_starts_later(self):
        # Configured, not started: the port refuses connections.
        broker = Broker(self.work, extra="allow_anonymous true\nlog_type all\n")
        self.keep(broker)
        sim = self.keep(start_sim(self.work))
        mport = free_port()
        conf = demo_config(self.work, sim.port, mport,
                           {"port": broker.port, "keepalive_s": 5, "reconnect_min_s": 1, "reconnect_max_s": 2})
        daemon = Daemon(self.work, conf)
        self.keep(daemon)
        wait_until("a pass while the broker is away", lambda: metric(
            metrics(mport)[0], "gritline_mqtt_queued_messages", **{"class": "pass"}) >= 1, 20)
        broker.start()
        wait_until("the queue sent", lambda: metric(metrics(mport)[0], "gritline_mqtt_connected") == 1 and metric(
            metrics(mport)[0], "gritline_mqtt_queued_messages", **{"class": "pass"}) == 0, 10)
        late = Subscriber(broker.port, ["gritline/sg4/status"])
        m = late.wait_for("the retained status", lambda t, q, r, p: True, 5)
        late.stop()
        self.assertEqual(m[2], 1)
        self.assertTrue(json.loads(m[3])["online"])
        # MQTT 3.1.1, 3.1.2.10: a client sends PINGREQ when it has sent nothing for keepalive_s
        # (from memory); the broker's log shows them.
        log = broker.log.name

        def pinged():
            with open(log, encoding="utf-8", errors="replace") as f:
                return "Received PINGREQ from gritline-sg4" in f.read()
        wait_until("a keep-alive ping", pinged, 15, 0.5)
        self.assertEqual(metric(metrics(mport)[0], "gritline_mqtt_connects_total"), 1)


class Auth(Plant):
    """A broker that wants a user name and password (mosquitto_passwd)."""

    def test_password_file(self):
        pw = self.work.file("broker.passwd")
        subprocess.run(["mosquitto_passwd", "-c", "-b", pw, "sg4", "alder-b-4"], check=True, timeout=10,
                       capture_output=True)
        acl = self.work.file("broker.acl")
        with open(acl, "w") as f:
            f.write("user sg4\ntopic readwrite gritline/#\ntopic readwrite plant-test/#\n")
        # mosquitto started as root reads these files as the user mosquitto.
        os.chmod(self.work.path, 0o755)
        for path in (pw, acl):
            os.chmod(path, 0o644)
        broker = self.keep(Broker(self.work, extra="allow_anonymous false\npassword_file %s\nacl_file %s\n"
                                  % (pw, acl)).start())
        creds = ["-u", "sg4", "-P", "alder-b-4"]
        sub = self.keep(Subscriber(broker.port, ["gritline/#"], extra=creds))
        time.sleep(0.5)
        secret = self.work.file("mqtt.secret")
        with open(secret, "w") as f:
            f.write("alder-b-4\n")
        sim = self.keep(start_sim(self.work))
        mport = free_port()
        conf = demo_config(self.work, sim.port, mport,
                           {"port": broker.port, "username": "sg4", "password_file": secret})
        daemon = Daemon(self.work, conf)
        self.keep(daemon)
        sub.wait_for("the online status", is_status(True), 15)
        self.assertEqual(daemon.stop(), 0)
        self.assertNotIn("alder-b-4", daemon.text())  # the password is never logged

        # A wrong password: refused by the broker, said once in the log, monitoring goes on.
        with open(secret, "w") as f:
            f.write("wrong\n")
        os.unlink(self.work.file("gritlined.log"))
        daemon = Daemon(self.work, conf)
        self.keep(daemon)
        wait_until("the refusal in the log", lambda: "refused the connection" in daemon.text(), 15)
        values, _ = metrics(mport)
        self.assertEqual(metric(values, "gritline_mqtt_connected"), 0)
        self.assertEqual(metric(values, "gritline_controller_connected"), 1)


if __name__ == "__main__":
    unittest.main()
