"""test_clock_step.py: the wall clock steps back and forward under a running gritlined.

Debian's libfaketime (package faketime) is preloaded into the daemon alone; it
shifts CLOCK_REALTIME by the offset written in a timestamp file, which the test
changes mid-run (FAKETIME_TIMESTAMP_FILE, FAKETIME_NO_CACHE), and leaves the
monotonic clock alone (FAKETIME_DONT_FAKE_MONOTONIC=1; faketime(1)). The simulator
and the test keep the real time.

Two daemons poll the same simulator through the same steps: back 30 s, then forward
13 hours (past the change of shift), then back to the true time.

- Polling runs on CLOCK_MONOTONIC: the polls per second and the period of the rows
  stay as configured through every step (status "polls", the rows' count).
- timestamp = local: the recording follows the wall clock (docs/reliability.md). A
  step back is a time going backwards in samples.csv, which the segmentation
  treats as a gap; the shift folder follows the wall clock: the forward step opens
  the next shift's folder, the step back to the true time writes into the first
  folder again.
- timestamp = controller: the controller's clock rules; the steps leave no trace
  in the recording, which has one folder and times in order.
"""
import json
import os
import sys
import time
import unittest

import livetest as L

LIBFAKETIME = "/usr/lib/x86_64-linux-gnu/faketime/libfaketime.so.1"
SPEED = 1.0
PERIOD_S = 0.01
STEPS = [("+0", 3.0), ("-30", 3.0), ("+46800", 3.0), ("+0", 3.0)]  # offsets of the wall clock, s


class ClockSteps(L.LiveCase):
    def test_steps(self):
        if not os.path.exists(LIBFAKETIME):
            raise unittest.SkipTest("libfaketime is not installed (Debian package faketime)")
        stamp = self.path("faketime.offset")
        L.write_file(stamp, "+0\n")
        env = {"LD_PRELOAD": LIBFAKETIME, "FAKETIME_TIMESTAMP_FILE": stamp, "FAKETIME_NO_CACHE": "1",
               "FAKETIME_DONT_FAKE_MONOTONIC": "1",
               # ASan wants to be the first library; libfaketime goes first here.
               "ASAN_OPTIONS": os.environ.get("ASAN_OPTIONS", "") + ":verify_asan_link_order=0"}
        sim = self.start_sim(L.scenario("short.ini"), SPEED)
        local = self.start_daemon(L.sim_conf(sim.port, speed=SPEED, extra={"machine": {"timestamp": "local"}}),
                                  name="local", env=env)
        ctrl = self.start_daemon(L.sim_conf(sim.port, speed=SPEED), name="ctrl", env=env)

        def status(d):
            try:
                return json.loads(L.control(d.socket, "status\n"))
            except (OSError, ValueError):
                return None
        L.wait_for(lambda: status(local) and status(ctrl) and L.try_shift_folder(local.data_dir), 10, "both daemons")
        first_folder = L.shift_folder(local.data_dir)
        marks = []
        for offset, seconds in STEPS:
            L.write_file(stamp, offset + "\n")
            t0 = time.monotonic()
            s0 = status(local)
            time.sleep(seconds)
            s1 = status(local)
            marks.append((offset, time.time(), time.monotonic() - t0, s1["polls"] - s0["polls"]))
        self.stop_daemon(local)
        self.stop_daemon(ctrl)
        sim.stop()

        # Polling keeps its period through every step (CLOCK_MONOTONIC).
        for offset, _, elapsed, polls in marks:
            expected = elapsed / PERIOD_S
            self.assertLess(abs(polls - expected), 0.05 * expected, "offset %s: %d polls in %.2f s" %
                            (offset, polls, elapsed))

        # timestamp = local: two folders, the first written again after the last step.
        root = os.path.join(local.data_dir, "sg4")
        folders = sorted(os.listdir(root))
        folders = [f for f in folders if os.path.isdir(os.path.join(root, f))]
        self.assertEqual(len(folders), 2, folders)
        second = [os.path.join(root, f) for f in folders if os.path.join(root, f) != first_folder][0]
        rows1, marks1 = L.read_recording(os.path.join(first_folder, "samples.csv"))
        rows2, marks2 = L.read_recording(os.path.join(second, "samples.csv"))
        t1 = [float(r[0]) for r in rows1]
        t2 = [float(r[0]) for r in rows2]
        backs = [(a, b) for a, b in zip(t1, t1[1:]) if b < a]
        # In the first folder: the step back (-30 s), and the jump back from +13 h is not there (those
        # rows are in the second folder), but the return to the true time continues after the last
        # row written before the forward step: forward in time by the time spent in the second folder.
        self.assertEqual(len(backs), 1, backs[:5])
        self.assertAlmostEqual(backs[0][0] - backs[0][1], 30.0, delta=0.5)
        jumps = [(a, b) for a, b in zip(t1, t1[1:]) if b - a > 1.0]
        self.assertEqual(len(jumps), 1, jumps)
        self.assertAlmostEqual(jumps[0][1] - jumps[0][0], 30.0 + STEPS[2][1], delta=1.0)
        self.assertEqual(t2, sorted(t2))
        self.assertGreater(t2[0] - t1[0], 46800 - 60)
        rows_total = len(rows1) + len(rows2)
        real_total = sum(m[2] for m in marks)
        self.assertGreater(rows_total, 0.95 * real_total / PERIOD_S)
        # The step back cut the stream: a pass that spanned it is flagged gap (docs/segmentation.md).
        passes = L.file_rows(first_folder, "passes.csv")
        for p in passes:
            if float(p["start_time"]) <= backs[0][0] <= float(p["end_time"]) + 0.05:
                self.assertIn("gap", p["flags"].split("|"), p)
        events1 = L.file_rows(first_folder, "events.csv")
        shift_notes = [e["message"] for e in events1 if e["kind"] == "shift"]
        print("timestamp = local: step back of 30 s seen once in %s (%d rows), %d rows in %s; shift notes %r" %
              (os.path.basename(first_folder), len(rows1), len(rows2), os.path.basename(second), shift_notes),
              file=sys.stderr)

        # timestamp = controller: nothing of the steps.
        cfolder = L.shift_folder(ctrl.data_dir)
        crows, _ = L.read_recording(os.path.join(cfolder, "samples.csv"))
        ct = [float(r[0]) for r in crows]
        self.assertEqual(ct, sorted(ct))
        self.assertLess(max(b - a for a, b in zip(ct, ct[1:])), 0.5)
        self.assertGreater(len(crows), 0.95 * real_total / PERIOD_S)
        print("timestamp = controller: %d rows in one folder, in order, longest step %.0f ms; polls per "
              "phase %s" % (len(crows), 1e3 * max(b - a for a, b in zip(ct, ct[1:])),
                            ", ".join("%s: %d in %.2f s" % (m[0], m[3], m[2]) for m in marks)), file=sys.stderr)


if __name__ == "__main__":
    unittest.main(verbosity=2)
