#!/usr/bin/python3
"""test_units.py: the systemd units of conf/ as systemd itself judges them.

Run by meson as: test_units.py SOURCE_ROOT. systemd's own analyser (Debian package
systemd, `systemd-analyze security --offline=yes`, systemd 252) rates each unit's sandbox;
the rating must be 1.5 or lower, and docs/systemd.md must quote the figure it gives now.
The settings the daemon relies on are checked line by line against systemd.service(5) and
systemd.exec(5) (systemd 252).
"""
import os
import re
import shutil
import subprocess
import sys
import tempfile
import unittest

ROOT = sys.argv.pop(1) if len(sys.argv) > 1 else os.path.join(os.path.dirname(__file__), "..", "..")
ANALYZE = shutil.which("systemd-analyze")
MAX_EXPOSURE = 1.5
UNITS = ["gritlined.service", "gritlined@.service"]


def exposure(path):
    """The figure of systemd-analyze's "Overall exposure level for NAME: X.Y OK" line."""
    run = subprocess.run([ANALYZE, "security", "--offline=yes", "--no-pager", path],
                         capture_output=True, text=True, timeout=60)
    found = re.findall(r"Overall exposure level for \S+: (\d+\.\d)", run.stdout)
    if not found:
        raise AssertionError("no exposure level in systemd-analyze output:\n" + run.stdout + run.stderr)
    return float(found[-1]), run


def settings(path):
    """The unit's [Service] assignments as (key, value) pairs, in order."""
    out, section = [], None
    with open(path, encoding="utf-8") as f:
        for line in f:
            line = line.strip()
            if not line or line[0] in "#;":
                continue
            if line.startswith("["):
                section = line
                continue
            key, _, value = line.partition("=")
            out.append((section, key, value))
    return out


@unittest.skipIf(ANALYZE is None, "systemd-analyze not installed (Debian package systemd)")
class Security(unittest.TestCase):
    def test_exposure_at_most_1_5(self):
        with tempfile.TemporaryDirectory() as tmp:
            for unit in UNITS:
                path = os.path.join(ROOT, "conf", unit)
                if unit.endswith("@.service"):
                    # The analyser wants an instance of a template: the same file, named as one.
                    path = shutil.copy(path, os.path.join(tmp, "gritlined@sg4.service"))
                level, run = exposure(path)
                with self.subTest(unit=unit):
                    self.assertLessEqual(level, MAX_EXPOSURE, run.stdout)

    def test_documented_figure_is_current(self):
        level, _ = exposure(os.path.join(ROOT, "conf", "gritlined.service"))
        with open(os.path.join(ROOT, "docs", "systemd.md"), encoding="utf-8") as f:
            doc = f.read()
        quoted = re.findall(r"Overall exposure level for gritlined\.service: (\d+\.\d)", doc)
        self.assertTrue(quoted, "docs/systemd.md quotes no exposure level")
        for q in quoted:
            self.assertEqual(float(q), level, "docs/systemd.md quotes %s, systemd-analyze says %.1f" % (q, level))


def serial_dropin():
    """The drop-in for a serial line, as docs/systemd.md prints it (its fenced ini block)."""
    with open(os.path.join(ROOT, "docs", "systemd.md"), encoding="utf-8") as f:
        doc = f.read()
    m = re.search(r"```ini\n(# /etc/systemd/system/gritlined\.service\.d/serial\.conf\n.*?)```", doc, re.S)
    if not m:
        raise AssertionError("docs/systemd.md has no serial.conf block")
    quoted = re.search(r"Overall exposure level for gritlined\.service with serial\.conf: (\d+\.\d)", doc)
    if not quoted:
        raise AssertionError("docs/systemd.md quotes no exposure level for serial.conf")
    return m.group(1), float(quoted.group(1))


@unittest.skipIf(ANALYZE is None, "systemd-analyze not installed (Debian package systemd)")
class SerialDropIn(unittest.TestCase):
    """The documented drop-in for Modbus RTU, applied to the unit as systemd would merge it
    (a drop-in's [Service] lines add to the unit's, systemd.unit(5))."""

    def test_dropin(self):
        dropin, documented = serial_dropin()
        with open(os.path.join(ROOT, "conf", "gritlined.service"), encoding="utf-8") as f:
            unit = f.read()
        with tempfile.TemporaryDirectory() as tmp:
            path = os.path.join(tmp, "gritlined.service")
            # /bin/true stands in for the daemon, which systemd-analyze verify wants to exist.
            with open(path, "w", encoding="utf-8") as f:
                f.write(unit.replace("ExecStart=/usr/sbin/gritlined ", "ExecStart=/bin/true ") + "\n" + dropin)
            run = subprocess.run([ANALYZE, "verify", "--man=no", "--generators=no", path], capture_output=True,
                                 text=True, timeout=60)
            own = [line for line in (run.stdout + run.stderr).splitlines() if "gritlined" in line]
            self.assertEqual(run.returncode, 0, run.stdout + run.stderr)
            self.assertEqual(own, [], "\n".join(own))
            level, out = exposure(path)
            self.assertLessEqual(level, MAX_EXPOSURE, out.stdout)
            self.assertEqual(level, documented, "docs/systemd.md quotes %.1f for serial.conf, systemd-analyze says %.1f"
                             % (documented, level))
            self.assertIn("char-ttyUSB:rw", out.stdout)
            self.assertIn("PrivateDevices=", out.stdout)


class Settings(unittest.TestCase):
    def check(self, unit):
        s = settings(os.path.join(ROOT, "conf", unit))
        service = {k: v for sec, k, v in s if sec == "[Service]"}
        # systemd.service(5): Type=notify waits for READY=1; the daemon sends it, and
        # WATCHDOG=1 only when WatchdogSec= gives it WATCHDOG_USEC.
        self.assertEqual(service.get("Type"), "notify")
        self.assertRegex(service.get("WatchdogSec", ""), r"^\d+s$")
        self.assertEqual(service.get("Restart"), "on-failure")
        self.assertEqual(service.get("ExecReload"), "/bin/kill -HUP $MAINPID")
        # systemd.exec(5): StateDirectory=gritline is /var/lib/gritline, RuntimeDirectory=gritline
        # /run/gritline: the defaults of data_dir and runtime_dir in daemon/conf.c.
        self.assertEqual(service.get("StateDirectory"), "gritline")
        self.assertEqual(service.get("RuntimeDirectory"), "gritline")
        self.assertEqual(service.get("LogsDirectory"), "gritline")
        self.assertEqual(service.get("DynamicUser"), "yes")
        self.assertEqual(service.get("CapabilityBoundingSet"), "")
        self.assertEqual(service.get("RestrictAddressFamilies"), "AF_UNIX AF_INET AF_INET6")
        filters = [v for sec, k, v in s if k == "SystemCallFilter"]
        self.assertIn("@system-service", filters)
        for key in ("ProtectSystem", "ProtectHome", "PrivateTmp", "PrivateDevices", "NoNewPrivileges",
                    "MemoryDenyWriteExecute", "ProtectKernelTunables", "ProtectKernelModules",
                    "ProtectKernelLogs", "ProtectControlGroups", "ProtectClock", "ProtectHostname",
                    "RestrictNamespaces", "RestrictRealtime", "RestrictSUIDSGID", "LockPersonality"):
            with self.subTest(unit=unit, key=key):
                self.assertIn(service.get(key), ("yes", "strict"), key)
        self.assertEqual(service.get("SystemCallArchitectures"), "native")
        return service

    def test_single_unit(self):
        service = self.check("gritlined.service")
        self.assertEqual(service["ExecStart"], "/usr/sbin/gritlined --config /etc/gritline/gritline.conf")

    def test_template(self):
        service = self.check("gritlined@.service")
        # systemd.unit(5): %i is the instance name.
        self.assertEqual(service["ExecStart"],
                         "/usr/sbin/gritlined --config /etc/gritline/%i.conf --socket /run/gritline/%i.sock")

    def test_same_sandbox(self):
        """The template differs from the single unit only in its comments, description and command."""
        a = [x for x in settings(os.path.join(ROOT, "conf", "gritlined.service"))
             if x[1] not in ("Description", "ExecStart")]
        b = [x for x in settings(os.path.join(ROOT, "conf", "gritlined@.service"))
             if x[1] not in ("Description", "ExecStart")]
        self.assertEqual(a, b)


if __name__ == "__main__":
    unittest.main(verbosity=2)
