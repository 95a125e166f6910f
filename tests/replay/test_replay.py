#!/usr/bin/python3
"""test_replay.py: `gritline replay` over synthetic recordings: determinism, file order, torn
and malformed lines, what-if settings and the comparison of two configurations."""
import os
import shutil
import subprocess
import sys
import json
import tempfile
import time
import unittest

GRITLINE = sys.argv.pop(1)
HERE = os.path.dirname(os.path.abspath(__file__))
GEN = os.path.join(HERE, "gen_recording.py")
LOGS = ("passes.csv", "events.csv", "dress_cycles.csv")


def gen(path, *args):
    subprocess.run(["/usr/bin/python3", GEN, path, *args], check=True, timeout=120)


def replay(*args):
    return subprocess.run([GRITLINE, "replay", *args], capture_output=True, text=True, timeout=120)


def folder(out):
    machine = os.path.join(out, "testbench")
    shifts = sorted(os.listdir(machine))
    return [os.path.join(machine, s) for s in shifts]


def read(path):
    with open(path, "rb") as f:
        return f.read()


def split_recording(src, parts):
    """Splits a recording into files that each carry the metadata and the header."""
    with open(src) as f:
        lines = f.readlines()
    head = [l for l in lines[:12] if l.startswith("#") and not l.startswith("# mark")]
    header = [l for l in lines if l.startswith("time,")][0]
    body = lines[lines.index(header) + 1:]
    size = len(body) // len(parts) + 1
    for i, p in enumerate(parts):
        chunk = body[i * size:(i + 1) * size]
        first = next(l for l in chunk if not l.startswith("#"))
        started = float(first.split(",")[0])
        import datetime
        iso = datetime.datetime.utcfromtimestamp(started).strftime("%Y-%m-%dT%H:%M:%S.%f")[:-3] + "Z"
        meta = [("# started: %s\n" % iso) if l.startswith("# started:") else l for l in head]
        with open(p, "w") as f:
            f.writelines(meta + [header] + chunk)


class Replay(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        cls.tmp = tempfile.mkdtemp(prefix="gritline-replay-")
        cls.rec = os.path.join(cls.tmp, "samples.csv")
        gen(cls.rec, "--passes", "260")

    @classmethod
    def tearDownClass(cls):
        shutil.rmtree(cls.tmp, ignore_errors=True)

    def out(self, name):
        return os.path.join(self.tmp, name)

    def test_deterministic(self):
        a, b = self.out("det-a"), self.out("det-b")
        for o in (a, b):
            r = replay(self.rec, "--out", o)
            self.assertEqual(r.returncode, 0, r.stderr)
        for fa, fb in zip(folder(a), folder(b)):
            for name in LOGS:
                self.assertEqual(read(os.path.join(fa, name)), read(os.path.join(fb, name)), name)
        # The synthetic wheel dulls: the dulling alert must be there (rises past 1.3 at pass ~170).
        events = read(os.path.join(folder(a)[0], "events.csv")).decode()
        self.assertIn(",dulling,warning,raised,", events)

    def test_files_in_time_order(self):
        parts = [self.out("part-%d.csv" % i) for i in range(3)]
        split_recording(self.rec, parts)
        whole, pieces = self.out("order-whole"), self.out("order-pieces")
        self.assertEqual(replay(self.rec, "--out", whole).returncode, 0)
        # Given in the wrong order on purpose: the 'started' metadata orders them.
        r = replay(parts[2], parts[0], parts[1], "--out", pieces)
        self.assertEqual(r.returncode, 0, r.stderr)
        for name in ("passes.csv", "dress_cycles.csv"):
            self.assertEqual(read(os.path.join(folder(whole)[0], name)), read(os.path.join(folder(pieces)[0], name)))

    def test_torn_last_line_is_reported_and_skipped(self):
        torn = self.out("torn.csv")
        data = read(self.rec)
        with open(torn, "wb") as f:
            f.write(data + b"1767300000.123,15")  # a crash mid-write
        lines = data.count(b"\n") + 1
        r = replay(torn, "--out", self.out("torn-out"))
        self.assertEqual(r.returncode, 0, r.stderr)
        self.assertIn("%s:%d: incomplete last line" % (torn, lines), r.stderr)
        ref = self.out("torn-ref")
        replay(self.rec, "--out", ref)
        self.assertEqual(read(os.path.join(folder(ref)[0], "passes.csv")),
                         read(os.path.join(folder(self.out("torn-out"))[0], "passes.csv")))

    def test_malformed_line_names_file_line_and_column(self):
        bad = self.out("bad.csv")
        lines = read(self.rec).split(b"\n")
        lines[500] = b"1767254404.890000,15x3.2,2300.0,5000.00,5.010000,,250.0000,0,"
        with open(bad, "wb") as f:
            f.write(b"\n".join(lines))
        r = replay(bad, "--out", self.out("bad-out"))
        self.assertEqual(r.returncode, 65)
        self.assertIn("%s:501:2: column spindle_power_w is not a number" % bad, r.stderr)
        r = replay(bad, "--out", self.out("bad-skip"), "--skip-bad")
        self.assertEqual(r.returncode, 0, r.stderr)
        self.assertIn("1 malformed lines skipped", r.stderr)

    def alert_pass(self, out, kind="dulling"):
        for line in read(os.path.join(folder(out)[0], "events.csv")).decode().splitlines():
            f = line.split(",")
            if f[1] == kind and f[3] == "raised":
                return int(f[4])
        return None

    def test_set_changes_the_limit(self):
        base, low = self.out("set-base"), self.out("set-low")
        self.assertEqual(replay(self.rec, "--out", base).returncode, 0)
        r = replay(self.rec, "--out", low, "--set", "wheel.dull_limit=1.2")
        self.assertEqual(r.returncode, 0, r.stderr)
        a, b = self.alert_pass(base), self.alert_pass(low)
        self.assertIsNotNone(a)
        self.assertIsNotNone(b)
        # r rises from 1 at pass 40 to 1.5 at pass 260: 1.2 is crossed about 88 passes
        # before 1.3 (0.1 of ratio every 44 passes); allow the smoothing lag on both.
        self.assertLess(b, a)
        self.assertAlmostEqual(a - b, 44, delta=12)

    def test_compare_prints_the_difference(self):
        cfg = self.out("low.conf")
        with open(cfg, "w") as f:
            f.write("[machine]\nname = testbench\njob = test-job\nwheel = test-wheel\n"
                    "[job.test-job]\ngeometry = surface\nwidth_mm = 20\n"
                    "[wheel.test-wheel]\ndiameter_mm = 250\nmax_speed_m_s = 35\ndull_limit = 1.2\n")
        r = replay(self.rec, "--out", self.out("cmp"), "--compare", cfg)
        self.assertEqual(r.returncode, 0, r.stderr)
        self.assertRegex(r.stdout, r"dulling: pass \d+ under the recording's metadata, pass \d+ under .*low.conf \(-\d+ passes\)")

    def test_paced_replay_is_watched_with_status(self):
        short = self.out("short.csv")
        gen(short, "--passes", "30")  # 93 s of data: about 4.7 s at 20x
        out = self.out("paced")
        p = subprocess.Popen([GRITLINE, "replay", short, "--out", out, "--speed", "20"],
                             stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
        try:
            sock = os.path.join(out, "replay.sock")
            deadline = time.monotonic() + 10
            status = None
            while time.monotonic() < deadline:
                r = subprocess.run([GRITLINE, "status", "--socket", sock, "--json"], capture_output=True,
                                   text=True, timeout=10)
                if r.returncode == 0:
                    status = json.loads(r.stdout)
                    if status["passes_shift"] >= 3:
                        break
                time.sleep(0.2)
            self.assertIsNotNone(status, "no status from the paced replay")
            self.assertEqual(status["mode"], "replay")
            self.assertEqual(status["machine"], "testbench")
            self.assertGreaterEqual(status["passes_shift"], 3)
            # A paced replay takes its time: it is still running, not done at once.
            self.assertIsNone(p.poll())
            r = subprocess.run([GRITLINE, "dress", "--socket", sock], capture_output=True, text=True, timeout=10)
            self.assertEqual(r.returncode, 65)  # refused: a replay follows the recording's own marks
        finally:
            stdout, stderr = p.communicate(timeout=30)
        self.assertEqual(p.returncode, 0, stderr)
        self.assertFalse(os.path.exists(os.path.join(out, "replay.sock")))

    def test_errors(self):
        r = replay(self.rec, "--set", "wheel.dull_limit=abc", "--out", self.out("e1"))
        self.assertEqual(r.returncode, 64)
        self.assertIn("dull_limit", r.stderr)
        r = replay(self.out("missing.csv"), "--out", self.out("e2"))
        self.assertEqual(r.returncode, 66)
        self.assertIn("missing.csv", r.stderr)
        r = replay("--out", self.out("e3"))
        self.assertEqual(r.returncode, 64)
        # A second replay into the same folder would append a copy of every pass: refused (73),
        # and the logs already there are left as they were.
        again = self.out("again")
        self.assertEqual(replay(self.rec, "--out", again).returncode, 0)
        before = {n: read(os.path.join(folder(again)[0], n)) for n in LOGS}
        r = replay(self.rec, "--out", again)
        self.assertEqual(r.returncode, 73)
        self.assertIn("--out %s: %s already holds logs" % (again, os.path.join(again, "testbench")), r.stderr)
        self.assertEqual(len(r.stderr.strip().splitlines()), 1, r.stderr)
        self.assertEqual(before, {n: read(os.path.join(folder(again)[0], n)) for n in LOGS})


if __name__ == "__main__":
    unittest.main()
