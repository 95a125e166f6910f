"""test_replay.py: live versus replay, with a daemon restart in the same shift folder.

gritlined records what it analyses (docs/recording-format.md): `gritline replay`
of the shift's one samples.csv under the same configuration must write
byte-identical passes.csv, events.csv and dress_cycles.csv, also when the daemon
was stopped and started again within the shift (the start mark tells the replay
that the wheel-condition model was restored), and across a dress counted by the
controller.
"""
import os
import signal
import sys
import unittest

import livetest as L

SPEED = 10.0


class ReplayAfterRestart(L.LiveCase):
    def test_live_equals_replay(self):
        sim = self.start_sim(L.scenario("short.ini"), SPEED)
        conf = L.sim_conf(sim.port, speed=SPEED)
        data = self.path("data")
        # First run: two parts; second run: through the dress after part 4 (112.8 s to 122.8 s).
        for until in (60.0, 150.0):
            d = self.start_daemon(conf, data_dir=data)
            L.wait_for(lambda: sim.sim_time() >= sim.epoch + until or not d.alive(), 20, "the run")
            self.stop_daemon(d, signal.SIGTERM)
        sim.stop()
        folder = L.shift_folder(data)
        L.whole_lines(self, folder)
        rows, marks = L.read_recording(os.path.join(folder, "samples.csv"))
        self.assertEqual([m[1] for m in marks], ["start", "stop", "start", "stop"])
        self.assertTrue(marks[0][2].endswith("state=fresh") and marks[2][2].endswith("state=restored"), marks)
        passes = L.file_rows(folder, "passes.csv")
        self.assertEqual([int(p["pass"]) for p in passes], list(range(1, len(passes) + 1)),
                         "numbering goes on after the restart")
        cycles = L.file_rows(folder, "dress_cycles.csv")
        self.assertEqual([(c["started_by"], c["ended_by"]) for c in cycles], [("start", "counter")])

        out = self.path("replay")
        self.run_tool([L.GRITLINE, "replay", os.path.join(folder, "samples.csv"), "--config", d.conf, "--out", out])
        rfolder = L.shift_folder(out)
        self.assertEqual(os.path.basename(rfolder), os.path.basename(folder))
        sizes = []
        for name in ("passes.csv", "events.csv", "dress_cycles.csv"):
            with open(os.path.join(folder, name), "rb") as a, open(os.path.join(rfolder, name), "rb") as b:
                live, replayed = a.read(), b.read()
            self.assertEqual(live, replayed, name + ": live and replay differ")
            sizes.append("%s %d lines" % (name, live.count(b"\n")))
        print("replay identical: %s; %d samples, 2 daemon runs" % (", ".join(sizes), len(rows)), file=sys.stderr)


if __name__ == "__main__":
    unittest.main(verbosity=2)
