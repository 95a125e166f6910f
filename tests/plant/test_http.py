#!/usr/bin/python3
"""test_http.py: gritlined's HTTP server against gritline-sim, read with curl and promtool.

gritline-sim plays sg4 (conf/scenarios/demo.ini at 60x), gritlined runs with
conf/demo.conf and a [metrics] section on a free port of 127.0.0.1. References
outside the project: `promtool check metrics` (Debian's prometheus package) judges
the exposition text and its naming; curl speaks HTTP; Python's json reads the
status; /proc/net/tcp (Linux proc(5)) shows what the socket is bound to; the
methods and codes follow RFC 9110 (405 with Allow, section 15.5.6).
"""
import json
import os
import re
import signal
import socket
import subprocess
import time
import unittest

from plantharness import (GRITLINED, DEMO_CONF, ROOT, Daemon, Workdir, curl, demo_config, free_port, metric, metrics,
                          start_sim, status, wait_until)

EX_CONFIG = 78  # <sysexits.h>


def control(path, request, timeout=5):
    """One request on the daemon's control socket (docs: the control protocol); one line back."""
    with socket.socket(socket.AF_UNIX, socket.SOCK_STREAM) as s:
        s.settimeout(timeout)
        s.connect(path)
        s.sendall(request.encode() + b"\n")
        data = b""
        while not data.endswith(b"\n"):
            chunk = s.recv(65536)
            if not chunk:
                break
            data += chunk
    return data.decode()


def listening(port):
    """Local addresses listening on port, from /proc/net/tcp and tcp6 (state 0A = LISTEN)."""
    found = []
    for name in ("/proc/net/tcp", "/proc/net/tcp6"):
        with open(name, encoding="ascii") as f:
            next(f)
            for line in f:
                local, state = line.split()[1], line.split()[3]
                addr, p = local.split(":")
                if int(p, 16) == port and state == "0A":
                    found.append(addr)
    return found


def documented_metrics():
    """The metric names of the tables of docs/metrics.md."""
    with open(os.path.join(ROOT, "docs", "metrics.md"), encoding="utf-8") as f:
        rows = [l for l in f if l.startswith("| `gritline_")]
    return set(n for l in rows for n in re.findall(r"`(gritline_\w+)`", l.split("|")[1]))


class Served(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        cls.work = Workdir()
        cls.sim = start_sim(cls.work)
        cls.port = free_port()
        cls.conf = demo_config(cls.work, cls.sim.port, cls.port)
        cls.daemon = Daemon(cls.work, cls.conf)
        wait_until("two passes", lambda: (metric(metrics(cls.port)[0], "gritline_passes_total") or 0) >= 2
                   if listening(cls.port) else None, 30)

    @classmethod
    def tearDownClass(cls):
        try:
            assert cls.daemon.stop() == 0
        finally:
            cls.sim.stop()
            cls.work.close()

    def test_metrics_pass_promtool(self):
        code, head, body = curl("http://127.0.0.1:%d/metrics" % self.port)
        self.assertEqual(code, 200)
        self.assertRegex(head, r"(?i)content-type: text/plain; version=0\.0\.4")
        r = subprocess.run(["promtool", "check", "metrics"], input=body, capture_output=True, timeout=20)
        # promtool prints its lint findings (names, units, _total) and fails on a bad text.
        self.assertEqual(r.returncode, 0, r.stdout.decode() + r.stderr.decode())
        self.assertEqual(r.stdout.decode().strip() + r.stderr.decode().strip(), "")

    def test_metrics_agree_with_the_status(self):
        # A pass may end between two reads: take a pair that saw the same pass.
        for _ in range(20):
            before, _ = metrics(self.port)
            st = status(self.port)
            after, _ = metrics(self.port)
            n = metric(before, "gritline_last_pass_number")
            if st["last_pass"] and n == st["last_pass"]["pass"] == metric(after, "gritline_last_pass_number"):
                break
            time.sleep(0.2)
        else:
            self.fail("no quiet moment between passes")
        p = st["last_pass"]
        self.assertEqual(metric(before, "gritline_info", version=st["version"], job="plate-1200",
                                wheel="cx60-vitrified"), 1)
        if p["aggressiveness"] is not None:
            self.assertAlmostEqual(metric(before, "gritline_last_pass_aggressiveness"), p["aggressiveness"], 6)
            # J/mm^3 to J/m^3: 1 mm^3 = 1e-9 m^3.
            self.assertAlmostEqual(metric(before, "gritline_last_pass_specific_energy_joules_per_cubic_meter") / 1e9,
                                   p["specific_energy_j_mm3"], 6)
        self.assertEqual(metric(before, "gritline_controller_connected"), 1)
        self.assertLess(metric(before, "gritline_last_sample_age_seconds"), 5.0)
        self.assertAlmostEqual(metric(before, "gritline_wheel_surface_speed_meters_per_second"), 25.1, delta=0.2)
        self.assertEqual(metric(before, "gritline_aggressiveness_window", bound="low"), st["window"]["low"])
        self.assertGreaterEqual(metric(before, "gritline_passes_total"), p["pass"])
        self.assertGreaterEqual(metric(before, "gritline_modbus_requests_total"), metric(before, "gritline_polls_total"))
        # Counters only go up; the daemon polls every 10 ms and hands a snapshot over every 0.25 s.
        time.sleep(0.6)
        later, _ = metrics(self.port)
        self.assertGreater(metric(later, "gritline_polls_total"), metric(before, "gritline_polls_total"))
        for kind in st["conditions"]:
            self.assertEqual(metric(before, "gritline_condition_active", kind=kind), 1)
        self.assertIsNone(metric(before, "gritline_mqtt_connected"), "MQTT is off: no MQTT series")

    def test_every_metric_is_documented(self):
        _, text = metrics(self.port)
        exposed = set(re.findall(r"^# TYPE (\w+) ", text, re.M))
        documented = documented_metrics()
        self.assertEqual(exposed, set(n for n in documented if not n.startswith("gritline_mqtt_")))

    def test_status_json(self):
        code, head, body = curl("http://127.0.0.1:%d/status.json" % self.port)
        self.assertEqual(code, 200)
        self.assertRegex(head, r"(?i)content-type: application/json")
        st = json.loads(body)
        self.assertEqual((st["machine"], st["job"], st["wheel"], st["mode"]), ("sg4", "plate-1200", "cx60-vitrified",
                                                                           "live"))
        # The same object as the control socket's status.
        sock = json.loads(control(self.work.file("sg4.sock"), "status"))
        self.assertEqual(set(sock), set(st))

    def test_get_only(self):
        for method in ("POST", "PUT", "DELETE", "PATCH", "OPTIONS"):
            code, head, _ = curl("http://127.0.0.1:%d/metrics" % self.port, "-X", method, "--data", "x")
            self.assertEqual(code, 405, method)
            self.assertRegex(head, r"(?im)^allow: GET$")
        code, _, _ = curl("http://127.0.0.1:%d/" % self.port, "-I")  # HEAD
        self.assertEqual(code, 405)
        code, _, _ = curl("http://127.0.0.1:%d/etc/passwd" % self.port)
        self.assertEqual(code, 404)
        code, head, body = curl("http://127.0.0.1:%d/" % self.port)
        self.assertEqual(code, 200)
        self.assertRegex(head, r"(?i)content-type: text/html; charset=utf-8")
        self.assertIn(b"<!DOCTYPE html>", body)

    def test_bound_to_loopback_only(self):
        self.assertEqual(listening(self.port), ["0100007F"])  # 127.0.0.1, little-endian hex

    def test_slow_clients_do_not_stop_the_poll_loop(self):
        hold = []
        try:
            for _ in range(24):
                s = socket.create_connection(("127.0.0.1", self.port), timeout=2)
                s.sendall(b"GET /metr")  # and never more
                hold.append(s)
            sock = self.work.file("sg4.sock")
            polls0 = json.loads(control(sock, "status"))["polls"]
            time.sleep(1.0)
            polls1 = json.loads(control(sock, "status"))["polls"]
            self.assertGreater(polls1 - polls0, 50, "the poll loop should go on at 100 polls/s")
        finally:
            for s in hold:
                s.close()
        wait_until("the server answering again", lambda: curl("http://127.0.0.1:%d/metrics" % self.port)[0] == 200,
                   15, 0.5)

    def test_zz_reload_moves_the_server(self):
        new_port = free_port()
        with open(self.conf, encoding="utf-8") as f:
            text = f.read()
        with open(self.conf, "w", encoding="utf-8") as f:
            f.write(text.replace("[metrics]\nport = %d\n" % self.port, "[metrics]\nport = %d\n" % new_port))
        old_port, type(self).port = self.port, new_port
        self.daemon.proc.send_signal(signal.SIGHUP)
        wait_until("the new port", lambda: listening(new_port), 10)
        self.assertEqual(status(new_port)["machine"], "sg4")
        self.assertEqual(listening(old_port), [])


class DocsExamples(unittest.TestCase):
    """The Prometheus configuration and rules of docs/metrics.md, checked by promtool."""

    def test_scrape_config_and_rules(self):
        with open(os.path.join(ROOT, "docs", "metrics.md"), encoding="utf-8") as f:
            blocks = re.findall(r"^```yaml\n(.*?)^```$", f.read(), re.M | re.S)
        config = next(b for b in blocks if "scrape_configs:" in b)
        rules = next(b for b in blocks if "groups:" in b)
        work = Workdir()
        try:
            with open(work.file("prometheus.yml"), "w", encoding="utf-8") as f:
                f.write(config)
            with open(work.file("gritline-rules.yml"), "w", encoding="utf-8") as f:
                f.write(rules)
            r = subprocess.run(["promtool", "check", "rules", work.file("gritline-rules.yml")], capture_output=True,
                               text=True, timeout=20)
            self.assertEqual(r.returncode, 0, r.stdout + r.stderr)
            r = subprocess.run(["promtool", "check", "config", work.file("prometheus.yml")], capture_output=True,
                               text=True, timeout=20)
            self.assertEqual(r.returncode, 0, r.stdout + r.stderr)
            # The rules use documented names only.
            self.assertLessEqual(set(re.findall(r"\b(gritline_\w+)", rules)), documented_metrics())
        finally:
            work.close()


class Config(unittest.TestCase):
    """The [metrics] and [mqtt] keys: typed, bounded, refused with file:line (exit 78)."""

    def check(self, text):
        work = Workdir()
        try:
            with open(DEMO_CONF, encoding="utf-8") as f:
                demo = f.read()
            path = work.file("g.conf")
            with open(path, "w", encoding="utf-8") as f:
                f.write(demo + text)
            r = subprocess.run([GRITLINED, "--check-config", path], capture_output=True, text=True, timeout=10)
            return r, path, demo.count("\n")
        finally:
            work.close()

    def test_defaults(self):
        r = subprocess.run([GRITLINED, "--check-config", DEMO_CONF], capture_output=True, text=True, timeout=10)
        self.assertEqual(r.returncode, 0, r.stderr)
        self.assertIn("[metrics]\nlisten = 127.0.0.1\nport = 9641\n", r.stdout)
        self.assertIn("[mqtt]\nenabled = no\nhost = 127.0.0.1\nport = 1883\nclient_id = gritline-sg4\n"
                      "topic_prefix = gritline/sg4\n", r.stdout)

    def test_errors_name_file_line_section_and_key(self):
        cases = [
            ("\n[metrics]\nlisten = localhost\n", 3, "[metrics] listen: not a numeric IPv4 or IPv6 address"),
            ("\n[metrics]\nport = 70000\n", 3, "[metrics] port: must be between 0 and 65535"),
            ("\n[mqtt]\nenabled = true\n", 3, "[mqtt] enabled: expected yes or no"),
            ("\n[mqtt]\ntopic_prefix = plant/#\n", 3, "[mqtt] topic_prefix"),
            ("\n[mqtt]\ntopic_prefix = /plant\n", 3, "[mqtt] topic_prefix"),
            ("\n[mqtt]\nqos_passes = 3\n", 3, "[mqtt] qos_passes: must be between 0 and 2"),
            ("\n[mqtt]\npassword_file = relative.txt\n", 3, "[mqtt] password_file: must be an absolute path"),
            ("\n[mqtt]\nusername = sg4\nbogus = 1\n", 4, "[mqtt] unknown key \"bogus\""),
            ("\n[mqtt]\npassword_file = /etc/gritline/mqtt.secret\n", 2, "[mqtt] password_file: needs a username"),
            ("\n[mqtt]\nreconnect_min_s = 60\nreconnect_max_s = 10\n", 2,
             "[mqtt] reconnect_max_s: must not be below reconnect_min_s"),
        ]
        for text, line, words in cases:
            r, path, base = self.check(text)
            self.assertEqual(r.returncode, EX_CONFIG, text)
            self.assertEqual(r.stderr.count("\n"), 1, r.stderr)
            self.assertTrue(r.stderr.startswith("gritlined: %s:%d: " % (path, base + line)), (text, r.stderr))
            self.assertIn(words, r.stderr)


if __name__ == "__main__":
    unittest.main()
