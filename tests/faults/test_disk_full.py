"""test_disk_full.py: the data folder on a tiny file system that fills up and frees again.

The test mounts a 1 MiB tmpfs (mount(8); it needs root: without the right to
mount it is skipped with status 77) and runs gritlined with --data-dir there,
against gritline-sim. Another file then fills the file system (write(2) ends
with ENOSPC). The daemon must go on monitoring: the control socket answers, polls
go on, passes and alerts reach the daemon's log (the journal's lines); it logs the
failure once and raises logging_failed once; no file holds a partial line. When
the other file is deleted, writing resumes: a "# mark: T gap N samples not
recorded since T0" line (docs/recording-format.md, "Mark lines") says what was
lost, and logging_failed is cleared.
"""
import errno
import json
import os
import re
import subprocess
import sys
import time
import unittest

import livetest as L

SPEED = 10.0
SIZE = "1m"


def try_mount(path):
    """Mounts a tmpfs of SIZE at path; returns None or why it cannot."""
    os.makedirs(path, exist_ok=True)
    r = subprocess.run(["mount", "-t", "tmpfs", "-o", "size=%s,mode=0755" % SIZE, "tmpfs", path],
                       capture_output=True, text=True)
    return None if r.returncode == 0 else (r.stderr.strip() or "mount status %d" % r.returncode)


def fill(path):
    """Writes zeros into path until the file system is full; returns the bytes written."""
    n = 0
    chunk = b"\0" * 65536
    with open(path, "wb", buffering=0) as f:
        while True:
            try:
                n += f.write(chunk)
            except OSError as e:
                if e.errno != errno.ENOSPC:
                    raise
                # Fill the last partial block too.
                for size in (4096, 512, 64, 1):
                    try:
                        while True:
                            n += f.write(b"\0" * size)
                    except OSError:
                        pass
                return n


class DiskFull(L.LiveCase):
    def test_fill_and_free(self):
        tiny = self.path("tiny")
        why = try_mount(tiny)
        if why:
            raise unittest.SkipTest("cannot mount a tmpfs: %s" % why)

        def unmount():
            for p in self.procs:  # nothing may hold a file there
                if p.alive():
                    p.proc.kill()
                    p.proc.wait()
            subprocess.run(["umount", "-l", tiny], capture_output=True)
        self.addCleanup(unmount)

        sim = self.start_sim(L.scenario("short.ini"), SPEED)
        d = self.start_daemon(L.sim_conf(sim.port, speed=SPEED), data_dir=tiny)

        def status():
            return json.loads(L.control(d.socket, "status\n"))

        def try_status():
            try:
                return status()
            except OSError:
                return None
        L.wait_for(try_status, 10, "the control socket")
        L.wait_for(lambda: status()["passes_shift"] >= 2, 20, "two passes")
        folder = L.shift_folder(tiny)
        filler = os.path.join(tiny, "filler")
        err_before = len(d.stderr())
        st0 = status()
        filled = fill(filler)
        t_full = time.time()
        # While the disk is full: monitoring goes on.
        L.wait_for(lambda: "logging_failed" in status()["conditions"], 5, "logging_failed raised")
        time.sleep(2.5)  # about 9 passes of the simulator
        st1 = status()
        self.assertTrue(d.alive())
        self.assertGreater(st1["polls"], st0["polls"] + 150, "polling goes on")
        self.assertGreater(st1["passes_shift"], st0["passes_shift"] + 3, "passes go on")
        self.assertIn("logging_failed", st1["conditions"])
        during = d.stderr()[err_before:]
        self.assertGreaterEqual(len(re.findall(r"^<\d>pass \d+:", during, re.M)), 3,
                                "passes in the daemon's log while the disk is full:\n" + during[-2000:])
        L.whole_lines(self, folder)
        size_full = os.path.getsize(os.path.join(folder, "samples.csv"))
        time.sleep(0.3)
        self.assertEqual(os.path.getsize(os.path.join(folder, "samples.csv")), size_full, "nothing written")

        os.unlink(filler)
        t_free = time.time()
        L.wait_for(lambda: "logging_failed" not in status()["conditions"], 5, "logging_failed cleared")
        time.sleep(1.0)
        self.stop_daemon(d)
        sim.stop()

        L.whole_lines(self, folder)
        err = d.stderr()
        self.assertEqual(len(re.findall(r"^<\d>logging failed: ", err, re.M)), 1, err[-3000:])
        self.assertEqual(len(re.findall(r"^<\d>logging_failed raised", err, re.M)), 1, err[-3000:])
        self.assertEqual(len(re.findall(r"^<\d>logging_failed cleared", err, re.M)), 1, err[-3000:])
        self.assertIn("No space left on device", err)
        rows, marks = L.read_recording(os.path.join(folder, "samples.csv"))
        gaps = [m for m in marks if m[1] == "gap"]
        self.assertEqual(len(gaps), 1, marks)
        m = re.fullmatch(r"(\d+) samples not recorded since (\d+\.\d+)", gaps[0][2])
        self.assertTrue(m, gaps[0])
        lost, since = int(m.group(1)), float(m.group(2))
        times = [float(r[0]) for r in rows]
        before = max(t for t in times if t < since)
        after = min(t for t in times if t >= gaps[0][0])
        # One poll every 10 ms of real time is 0.1 s of the simulator's (timestamp = controller).
        expected = (after - before) / (0.01 * SPEED) - 1
        self.assertLess(abs(lost - expected), 0.1 * expected + 5,
                        "%d samples lost between %.3f and %.3f" % (lost, before, after))
        events = L.file_rows(folder, "events.csv")
        lf = [(e["state"], e["message"]) for e in events if e["kind"] == "logging_failed"]
        # The raise is written only when events.csv still had room in its last block; the clearance is.
        self.assertIn([s for s, _ in lf], (["cleared"], ["raised", "cleared"]), lf)
        print("filled %d bytes at %.1f s; %d samples not recorded over %.1f s of the simulator's time "
              "(%.1f s real), polls %d -> %d, passes %d -> %d while full; %r" %
              (filled, t_full - sim.epoch, lost, after - before, t_free - t_full, st0["polls"], st1["polls"],
               st0["passes_shift"], st1["passes_shift"], lf[-1][1]), file=sys.stderr)


if __name__ == "__main__":
    # meson counts status 77 as a skipped test.
    r = unittest.main(verbosity=2, exit=False).result
    sys.exit(77 if r.skipped and r.wasSuccessful() and r.testsRun == len(r.skipped) else 0 if r.wasSuccessful()
             else 1)
