#!/usr/bin/python3
"""test_notify.py: the daemon's messages to systemd, received as systemd would receive them.

Run by meson as: test_notify.py GRITLINED_TEST GRITLINE_SIM SOURCE_ROOT. The test plays the
service manager: it binds an AF_UNIX datagram socket, names it in NOTIFY_SOCKET, and sets
WATCHDOG_USEC and WATCHDOG_PID, as sd_notify(3) and sd_watchdog_enabled(3) (systemd 252)
describe. gritlined-test (the daemon with its test switches) polls a real gritline-sim on
127.0.0.1 (port 0). Checked against those manual pages:

- READY=1 once started; STATUS= lines; WATCHDOG=1 at about half of WATCHDOG_USEC (the
  interval sd_watchdog_enabled(3) recommends), never a whole interval apart;
- after GRITLINE_TEST_STALL_AFTER polls the loop hangs: the keep-alives stop (systemd would
  kill it), while the process is still alive;
- SIGHUP: RELOADING=1 with MONOTONIC_USEC= (CLOCK_MONOTONIC in microseconds, compared with
  Python's time.monotonic(), the same clock on Linux), then READY=1; SIGTERM: STOPPING=1 and
  exit status 0.
"""
import os
import signal
import socket
import statistics
import subprocess
import sys
import tempfile
import time
import unittest

import simharness

DAEMON = sys.argv.pop(1) if len(sys.argv) > 1 else "gritlined-test"
SIM = sys.argv.pop(1) if len(sys.argv) > 1 else "gritline-sim"
ROOT = sys.argv.pop(1) if len(sys.argv) > 1 else os.path.join(os.path.dirname(__file__), "..", "..")
simharness.SIM = SIM

WATCHDOG_USEC = 600000
INTERVAL = WATCHDOG_USEC / 1e6


class Manager:
    """The service manager's side of the notification socket: datagrams with their arrival time."""

    def __init__(self, folder):
        self.path = os.path.join(folder, "notify.sock")
        self.sock = socket.socket(socket.AF_UNIX, socket.SOCK_DGRAM)
        self.sock.bind(self.path)
        self.messages = []  # (monotonic s, {key: value})

    def pump(self, seconds):
        """Receives for the given time."""
        end = time.monotonic() + seconds
        while True:
            left = end - time.monotonic()
            if left <= 0:
                return
            self.sock.settimeout(left)
            try:
                data = self.sock.recv(4096)
            except socket.timeout:
                return
            # sd_notify(3): newline-separated VARIABLE=VALUE assignments.
            fields = dict(line.split("=", 1) for line in data.decode().split("\n") if "=" in line)
            self.messages.append((time.monotonic(), fields))

    def wait_for(self, key, value=None, timeout=15.0, after=0):
        """Index of the first message from index `after` on that sets key (to value)."""
        end = time.monotonic() + timeout
        while True:
            for i in range(after, len(self.messages)):
                f = self.messages[i][1]
                if key in f and (value is None or f[key] == value):
                    return i
            if time.monotonic() >= end:
                raise AssertionError("no %s%s within %.0f s; got %r" % (key, "=" + value if value else "", timeout,
                                                                         [m[1] for m in self.messages[after:]]))
            self.pump(0.05)

    def times(self, key, start=0):
        return [t for t, f in self.messages[start:] if key in f]

    def close(self):
        self.sock.close()


def config(folder, port):
    """conf/demo.conf (gritline-sim's register map) with the simulator's port."""
    with open(os.path.join(ROOT, "conf", "demo.conf"), encoding="utf-8") as f:
        text = f.read()
    assert "\nport = 5020\n" in text
    path = os.path.join(folder, "sg4.conf")
    with open(path, "w", encoding="utf-8") as f:
        # No HTTP server: its fixed default port would clash with other tests running at once.
        f.write(text.replace("\nport = 5020\n", "\nport = %d\n" % port) + "\n[metrics]\nport = 0\n")
    return path


class Notify(unittest.TestCase):
    def setUp(self):
        self.tmp = tempfile.TemporaryDirectory(prefix="gritline-notify-")
        self.sim = simharness.Sim(simharness.scenario("demo.ini")).start()
        self.manager = Manager(self.tmp.name)
        self.proc = None

    def tearDown(self):
        if self.proc and self.proc.poll() is None:
            self.proc.kill()
            self.proc.wait()
        if self.proc:
            simharness.check_sanitizers(self.proc.stderr.read())
            self.proc.stderr.close()
        self.sim.stop()
        self.manager.close()
        self.tmp.cleanup()

    def start(self, stall_after=None):
        env = {k: v for k, v in os.environ.items() if not k.startswith(("NOTIFY_", "WATCHDOG_", "GRITLINE_TEST"))}
        env["NOTIFY_SOCKET"] = self.manager.path
        env["WATCHDOG_USEC"] = str(WATCHDOG_USEC)
        if stall_after is not None:
            env["GRITLINE_TEST_STALL_AFTER"] = str(stall_after)
        data = os.path.join(self.tmp.name, "data")
        os.mkdir(data)
        args = [DAEMON, "--config", config(self.tmp.name, self.sim.port), "--data-dir", data,
                "--socket", os.path.join(self.tmp.name, "sg4.sock")]
        # sd_watchdog_enabled(3) ignores WATCHDOG_USEC unless WATCHDOG_PID is the daemon's own
        # PID: the shell learns it and execs the daemon in its place.
        self.proc = subprocess.Popen(["/bin/sh", "-c", 'WATCHDOG_PID=$$; export WATCHDOG_PID; exec "$@"', "sh"] + args,
                                     env=env, stdin=subprocess.DEVNULL, stdout=subprocess.DEVNULL,
                                     stderr=subprocess.PIPE, text=True)

    def check_keepalives(self, times):
        gaps = [b - a for a, b in zip(times, times[1:])]
        self.assertGreaterEqual(len(gaps), 3, times)
        # Never a whole interval apart: systemd would have declared the service hung.
        self.assertLess(max(gaps), INTERVAL, gaps)
        # Half the interval, as sd_watchdog_enabled(3) recommends (loose: a loaded machine).
        self.assertAlmostEqual(statistics.median(gaps), INTERVAL / 2, delta=INTERVAL / 4)

    def test_watchdog_stops_when_the_loop_hangs(self):
        # 200 polls of 10 ms: about two seconds of keep-alives, then the hang.
        self.start(stall_after=200)
        ready = self.manager.wait_for("READY", "1")
        self.manager.wait_for("STATUS", after=0)
        # Keep-alives until they stop; a stop is a silence of five intervals.
        deadline = time.monotonic() + 20
        while time.monotonic() < deadline:
            self.manager.pump(0.1)
            beats = self.manager.times("WATCHDOG", ready)
            if beats and time.monotonic() - beats[-1] > 5 * INTERVAL:
                break
        beats = self.manager.times("WATCHDOG", ready)
        self.assertTrue(beats, "no WATCHDOG=1 at all")
        self.assertGreater(time.monotonic() - beats[-1], 5 * INTERVAL, "keep-alives never stopped")
        self.check_keepalives(beats)
        # Hung, not dead: systemd's watchdog, not a crash, is what would end it.
        self.assertIsNone(self.proc.poll(), "the daemon exited instead of hanging")
        self.manager.pump(1.0)
        self.assertEqual(self.manager.times("WATCHDOG")[-1], beats[-1], "a keep-alive came after the hang")
        self.proc.kill()
        self.proc.wait(10)

    def test_reload_and_stop(self):
        self.start()
        ready = self.manager.wait_for("READY", "1")
        self.manager.wait_for("STATUS")
        self.manager.pump(1.5)
        self.check_keepalives(self.manager.times("WATCHDOG", ready))
        before = len(self.manager.messages)
        sent = time.monotonic()
        self.proc.send_signal(signal.SIGHUP)
        i = self.manager.wait_for("RELOADING", "1", after=before)
        t, fields = self.manager.messages[i]
        # sd_notify(3): RELOADING=1 comes with MONOTONIC_USEC=, CLOCK_MONOTONIC at the reload.
        self.assertIn("MONOTONIC_USEC", fields)
        usec = int(fields["MONOTONIC_USEC"])
        self.assertLessEqual(sent - 0.05, usec / 1e6)
        self.assertLessEqual(usec / 1e6, t + 0.05)
        j = self.manager.wait_for("READY", "1", after=i + 1)
        self.assertGreater(j, i)
        self.assertIsNone(self.proc.poll())
        # Keep-alives go on after the reload.
        self.manager.pump(2.0)
        self.assertGreaterEqual(len(self.manager.times("WATCHDOG", j)), 3)
        before = len(self.manager.messages)
        self.proc.send_signal(signal.SIGTERM)
        self.manager.wait_for("STOPPING", "1", after=before)
        self.assertEqual(self.proc.wait(15), 0)


if __name__ == "__main__":
    unittest.main(verbosity=2)
