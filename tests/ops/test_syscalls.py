#!/usr/bin/python3
"""test_syscalls.py: every system call the daemon and a shell hook make passes the units' filter.

Run by meson as: test_syscalls.py GRITLINED_TEST GRITLINE_SIM SOURCE_ROOT. The units allow
SystemCallFilter=@system-service minus ~@privileged @resources; a call outside it fails with
EPERM in production. strace(1) (Debian package strace) records every call of a real run
against gritline-sim: start, polls, a status request on the control socket, a reload, the
controller lost (which runs the hook, a /bin/sh script), and a stop. The groups are expanded
by systemd's own table (`systemd-analyze syscall-filter`, systemd 252). Skipped when strace
or systemd-analyze is missing, or under a sanitizer (its runtime makes calls of its own).
"""
import http.client
import os
import re
import shutil
import signal
import socket
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
STRACE = shutil.which("strace")
ANALYZE = shutil.which("systemd-analyze")


def unit_filter(unit):
    """The SystemCallFilter= lines of a unit: (allow list, deny list) of names and @groups."""
    allow, deny = [], []
    with open(unit, encoding="utf-8") as f:
        for line in f:
            if line.startswith("SystemCallFilter="):
                value = line.split("=", 1)[1].strip()
                if value.startswith("~"):
                    deny += value[1:].split()
                else:
                    allow += value.split()
    return allow, deny


def groups():
    """systemd's system call groups: {"@name": [members]}, members may be groups."""
    out = subprocess.run([ANALYZE, "syscall-filter", "--no-pager"], capture_output=True, text=True, check=True,
                         timeout=60).stdout
    table, current = {}, None
    for line in out.splitlines():
        if line.startswith("@"):
            current = line.strip()
            table[current] = []
        elif current and line.startswith("    ") and not line.strip().startswith("#"):
            table[current].append(line.strip())
    return table


def expand(names, table):
    out = set()
    for n in names:
        if n.startswith("@"):
            out |= expand(table[n], table)
        else:
            out.add(n)
    return out


def free_port():
    """A port nothing listens on now (the kernel's pick for a socket bound to port 0)."""
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def sanitized(path):
    """A -Db_sanitize build links the sanitizer runtimes."""
    run = subprocess.run(["ldd", path], capture_output=True, text=True, timeout=30)
    return bool(re.search(r"lib(asan|ubsan)", run.stdout))


@unittest.skipIf(STRACE is None, "strace not installed")
@unittest.skipIf(ANALYZE is None, "systemd-analyze not installed (package systemd)")
class Syscalls(unittest.TestCase):
    def test_all_calls_allowed(self):
        if sanitized(DAEMON):
            self.skipTest("sanitizer build: its runtime's own calls would be counted")
        allow, deny = unit_filter(os.path.join(ROOT, "conf", "gritlined.service"))
        table = groups()
        allowed = expand(allow, table) - expand(deny, table)
        self.assertIn("read", allowed)
        with tempfile.TemporaryDirectory(prefix="gritline-syscalls-") as tmp:
            hook = os.path.join(tmp, "hook.sh")
            with open(hook, "w", encoding="utf-8") as f:
                f.write('#!/bin/sh\necho "$1 $GRITLINE_STATE" >> "%s/hook.log"\n' % tmp)
            os.chmod(hook, 0o755)
            sim = simharness.Sim(simharness.scenario("demo.ini")).start()
            try:
                with open(os.path.join(ROOT, "conf", "demo.conf"), encoding="utf-8") as f:
                    text = f.read()
                text = text.replace("\nport = 5020\n", "\nport = %d\n" % sim.port)
                text = text.replace("[machine]\n", "[machine]\ncomm_lost_after_s = 0.5\n", 1)
                text += "\n[alerts]\nhook = %s\n" % hook
                # The HTTP server and the MQTT client run threads of their own: both are
                # exercised, the server on a free port, the client against a closed one.
                http_port, closed_port = free_port(), free_port()
                text += "\n[metrics]\nlisten = 127.0.0.1\nport = %d\n" % http_port
                text += "\n[mqtt]\nenabled = yes\nport = %d\nreconnect_min_s = 1\n" % closed_port
                conf = os.path.join(tmp, "sg4.conf")
                with open(conf, "w", encoding="utf-8") as f:
                    f.write(text)
                data = os.path.join(tmp, "data")
                os.mkdir(data)
                ctl = os.path.join(tmp, "sg4.sock")
                trace = os.path.join(tmp, "trace")
                proc = subprocess.Popen([STRACE, "-f", "-qq", "-o", trace, DAEMON, "--config", conf,
                                         "--data-dir", data, "--socket", ctl],
                                        stdin=subprocess.DEVNULL, stdout=subprocess.DEVNULL,
                                        stderr=subprocess.DEVNULL)
                try:
                    deadline = time.monotonic() + 15
                    while not os.path.exists(ctl) and time.monotonic() < deadline:
                        time.sleep(0.05)
                    self.assertTrue(os.path.exists(ctl), "no control socket")
                    time.sleep(1.0)
                    with socket.socket(socket.AF_UNIX, socket.SOCK_STREAM) as c:
                        c.settimeout(5)
                        c.connect(ctl)
                        c.sendall(b"status\n")
                        self.assertTrue(c.recv(65536).startswith(b"{"))
                    conn = http.client.HTTPConnection("127.0.0.1", http_port, timeout=5)
                    conn.request("GET", "/metrics")
                    self.assertEqual(conn.getresponse().status, 200)
                    conn.close()
                    # The daemon's pid is the one strace started first.
                    os.kill(self.daemon_pid(trace), signal.SIGHUP)
                    time.sleep(0.5)
                    sim.stop()
                    log = os.path.join(tmp, "hook.log")
                    deadline = time.monotonic() + 15
                    while not os.path.exists(log) and time.monotonic() < deadline:
                        time.sleep(0.1)
                    self.assertTrue(os.path.exists(log), "the hook did not run")
                    os.kill(self.daemon_pid(trace), signal.SIGTERM)
                    proc.wait(20)
                finally:
                    if proc.poll() is None:
                        proc.kill()
                        proc.wait()
            finally:
                sim.stop()
            used = set()
            with open(trace, encoding="utf-8", errors="replace") as f:
                for line in f:
                    m = re.match(r"\d+\s+(?:<\.\.\. )?([a-z_0-9]+)[( ]", line)
                    if m and not line.split(None, 1)[1].startswith(("+++", "---")):
                        used.add(m.group(1))
            # The run's start (execve of the daemon by strace) happens before systemd's
            # sandbox in production too, but it is in the list anyway.
            self.assertIn("execve", used)
            refused = sorted(used - allowed)
            self.assertEqual(refused, [], "calls the units' SystemCallFilter refuses: %s" % refused)

    @staticmethod
    def daemon_pid(trace):
        with open(trace, encoding="utf-8", errors="replace") as f:
            return int(f.readline().split()[0])


if __name__ == "__main__":
    # Nothing to run: tell meson the test was skipped (exit status 77).
    if STRACE is None or ANALYZE is None or sanitized(DAEMON):
        print("skipped: strace or systemd-analyze missing, or a sanitizer build", file=sys.stderr)
        sys.exit(77)
    unittest.main(verbosity=2)
