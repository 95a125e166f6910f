"""test_sigterm.py: gritlined stopped by a signal while it writes as fast as it polls.

With a poll every millisecond the recording grows by about a thousand rows a
second. Three runs in the same shift folder, each stopped in the middle of a pass
(SIGTERM, SIGTERM, SIGINT): status 0, every file ends with a complete line, the
last event is "monitoring stopped", the recording's last line is the stop mark, and
the pass the signal cut is written, flagged truncated. The second and third runs
start while the wheel is in contact (holding register 17 of the simulator reads 1):
the pass seen only in part must not become a pass measured against a contact power
taken for idle (every pass written runs at the truth's grinding power).
"""
import json
import os
import signal
import sys
import time
import unittest

import livetest as L

SPEED = 10.0


class StopWhileWriting(L.LiveCase):
    def test_stop_mid_pass(self):
        sim = self.start_sim(L.scenario("short.ini"), SPEED)
        conf = L.sim_conf(sim.port, speed=SPEED, extra={"machine": {"poll_interval_ms": "1"}})
        data = self.path("data")
        truncated = 0
        rows_earlier = 0
        for i, sig in enumerate((signal.SIGTERM, signal.SIGTERM, signal.SIGINT)):
            if i:
                L.wait_for(lambda: L.modbus_read(sim.port, 3, 17, 1)[0] == 1, 10, "the wheel in contact")
            d = self.start_daemon(conf, data_dir=data)
            t0 = time.monotonic()

            def in_pass():
                try:
                    st = json.loads(L.control(d.socket, "status\n"))
                except (OSError, ValueError):
                    return False
                return st["in_pass"] and st["passes_shift"] >= 2
            L.wait_for(in_pass, 15, "a pass in progress")
            time.sleep(0.08)  # 0.8 s of the simulator's time into the pass
            folder = L.shift_folder(data)
            rows_before = len(L.read_recording(os.path.join(folder, "samples.csv"))[0])
            d.send(sig)
            self.assertEqual(d.wait(15), 0, d.stderr())
            L.check_sanitizers("gritlined", d.stderr())
            elapsed = time.monotonic() - t0
            L.whole_lines(self, folder)
            rows, marks = L.read_recording(os.path.join(folder, "samples.csv"))
            with open(os.path.join(folder, "samples.csv")) as f:
                last_line = f.read().rstrip("\n").rsplit("\n", 1)[-1]
            self.assertTrue(last_line.startswith("# mark: ") and " stop gritlined stopped" in last_line, last_line)
            events = L.file_rows(folder, "events.csv")
            self.assertEqual((events[-1]["kind"], events[-1]["message"]),
                             ("monitoring", "monitoring stopped: gritlined stopped"))
            last_pass = L.file_rows(folder, "passes.csv")[-1]
            if "truncated" in last_pass["flags"].split("|"):
                truncated += 1
            print("run %d (%s): %d rows in %.1f s (%.0f rows/s); last pass %s flags %r" %
                  (i + 1, signal.Signals(sig).name, len(rows) - rows_earlier, elapsed,
                   (rows_before - rows_earlier) / max(elapsed, 0.1), last_pass["pass"], last_pass["flags"]),
                  file=sys.stderr)
            rows_earlier = len(rows)
        self.assertEqual(truncated, 3, "each signal cut a pass, written as truncated")
        events = L.file_rows(folder, "events.csv")
        starts = [e for e in events if e["message"].startswith("monitoring started")]
        stops = [e for e in events if e["message"].startswith("monitoring stopped")]
        self.assertEqual((len(starts), len(stops)), (3, 3))
        # Source: simulator truth: each pass, whole or cut, ran at the truth's grinding power.
        last_end = float(L.file_rows(folder, "passes.csv")[-1]["end_time"])
        L.wait_for(lambda: sim.sim_time() > last_end + 4.0, 5, "the truth of the last pass")
        sim.stop()
        truth = sim.truth_rows()
        for p in L.file_rows(folder, "passes.csv"):
            t0, t1 = float(p["start_time"]), float(p["end_time"])
            t = [t for t in truth if float(t["start_time"]) < t1 and t0 < float(t["end_time"])]
            self.assertEqual(len(t), 1, p)
            ratio = float(p["net_power_mean_w"]) / float(t[0]["grinding_power_w"])
            self.assertLess(abs(ratio - 1.0), 0.2, "pass %s: net power %s W, truth %s W" %
                            (p["pass"], p["net_power_mean_w"], t[0]["grinding_power_w"]))


if __name__ == "__main__":
    unittest.main(verbosity=2)
