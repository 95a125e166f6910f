"""test_sim_restart.py: the controller dies under gritlined and comes back.

gritline-sim is killed (SIGKILL, as a power cut of the controller would end it)
during a run and started again on the same port with the same --epoch and
--speed, so it continues the same run (docs/simulator.md, "Time"). gritlined must
live through it, reconnect by itself, raise and clear communication_lost exactly
once, record the outage as failed polls (rows with only the time), and leave every
file in whole lines.
"""
import os
import signal
import sys
import time
import unittest

import livetest as L

SPEED = 10.0
OUTAGE_S = 3.0  # real seconds without a controller; communication_lost is raised after 1 s


class SimRestart(L.LiveCase):
    def test_controller_killed_and_restarted(self):
        scen = L.scenario("short.ini")
        sim = self.start_sim(scen, SPEED)
        d = self.start_daemon(L.sim_conf(sim.port, speed=SPEED))
        L.wait_for(lambda: sim.sim_time() >= sim.epoch + 60.0, 15, "two parts before the outage")
        sim.stop(signal.SIGKILL)
        killed_at = sim.sim_time()
        time.sleep(OUTAGE_S)
        self.assertTrue(d.alive(), "gritlined died with the controller:\n" + d.stderr())
        sim2 = self.start_sim(scen, SPEED, epoch=sim.epoch, port=sim.port)
        back_at = sim2.sim_time()
        folder = L.shift_folder(d.data_dir)
        samples = os.path.join(folder, "samples.csv")

        def good_rows_after_restart():
            rows, _ = L.read_recording(samples)
            return [r for r in rows if r[1] != "" and float(r[0]) > back_at - 1.0]
        # Backoff at most 500 ms (the test configuration): values again within seconds.
        L.wait_for(lambda: len(good_rows_after_restart()) >= 20, 10, "samples after the restart")
        time.sleep(1.0)
        self.assertTrue(d.alive())
        self.stop_daemon(d)
        sim2.stop()

        L.whole_lines(self, folder)
        events = L.file_rows(folder, "events.csv")
        comm = [(e["state"], e["message"]) for e in events if e["kind"] == "communication_lost"]
        self.assertEqual([s for s, _ in comm], ["raised", "cleared"], comm)
        print("events: " + "; ".join("%s: %s" % c for c in comm), file=sys.stderr)

        # The outage in the recording: rows with the time alone (failed polls), between the
        # last values before the kill and the first after the restart (recording-format.md,
        # "Empty fields"); the time column stays in order.
        rows, marks = L.read_recording(samples)
        times = [float(r[0]) for r in rows]
        self.assertEqual(times, sorted(times), "sample times go back")
        # (A poll that timed out elsewhere, on a loaded machine, would be an empty row too.)
        empty = [r for r in rows if all(f == "" for f in r[1:]) and float(r[0]) >= killed_at - 0.5]
        self.assertGreaterEqual(len(empty), 5, "failed polls recorded as empty rows")
        first_empty = rows.index(empty[0])
        last_good_before = float(rows[first_empty - 1][0])
        self.assertLessEqual(last_good_before, killed_at + 0.5)
        after = [r for r in rows[first_empty:] if r[1] != ""]
        self.assertTrue(after, "values after the outage")
        self.assertGreaterEqual(float(after[0][0]), back_at - 0.5)
        print("outage: %d failed polls; last values at %.3f, killed at %.3f, values again at %.3f "
              "(simulator back at %.3f)" % (len(empty), last_good_before, killed_at, float(after[0][0]), back_at),
              file=sys.stderr)
        self.assertEqual([m[1] for m in marks], ["start", "stop"], "one daemon run: no restart mark")

        # Passes on both sides of the outage; a pass the outage cut, or one whose start it hid,
        # is flagged gap (docs/segmentation.md, "Gaps").
        passes = L.file_rows(folder, "passes.csv")
        first_after = float(after[0][0])
        self.assertGreaterEqual(len([p for p in passes if float(p["end_time"]) <= last_good_before]), 10)
        self.assertGreaterEqual(len([p for p in passes if float(p["start_time"]) >= first_after]), 1)
        for p in passes:
            if abs(float(p["end_time"]) - last_good_before) < 1e-3 or abs(float(p["start_time"]) - first_after) < 1e-3:
                self.assertIn("gap", p["flags"].split("|"), p)

if __name__ == "__main__":
    unittest.main(verbosity=2)
