"""test_dress.py: dress cycles closed by the controller's dress counter and by the operator.

short.ini dresses after every 4th part (the simulator's truth-dresses file says
when); the counter's step closes cycle 1 with the passes ground since the start
(trigger counter). `gritline dress` then closes cycle 2 (trigger operator), and
the passes after it belong to cycle 3, counted from 1.
"""
import os
import sys
import unittest

import livetest as L

SPEED = 10.0


class Dress(L.LiveCase):
    def test_counter_then_operator(self):
        sim = self.start_sim(L.scenario("short.ini"), SPEED)
        d = self.start_daemon(L.sim_conf(sim.port, speed=SPEED))

        def folder():
            return L.shift_folder(d.data_dir)

        def cycles():
            f = L.try_shift_folder(d.data_dir)
            return L.file_rows(f, "dress_cycles.csv") if f else []
        # The first scheduled dress ends 122.8 s after the epoch; the next pass closes the cycle.
        L.wait_for(lambda: len(cycles()) >= 1, 160 / SPEED + 10, "the counter's dress")
        c1 = cycles()[0]
        dresses = sim.dress_rows()
        truth = sim.truth_rows()
        self.assertEqual(dresses[0]["reason"], "every")
        t_dress = float(dresses[0]["end_time"])
        # Source: simulator truth: the passes before its first dress (dress_count 0).
        before = [t for t in truth if t["dress_count"] == "0"]
        self.assertEqual((c1["cycle"], c1["started_by"], c1["ended_by"]), ("1", "start", "counter"))
        self.assertEqual(int(c1["passes"]), len(before))
        passes = L.file_rows(folder(), "passes.csv")
        first_after = [p for p in passes if float(p["start_time"]) > t_dress][0]
        self.assertEqual((first_after["dress_cycle"], first_after["passes_since_dress"]), ("2", "1"))
        self.assertIn("after_dress", first_after["flags"].split("|"))

        # The operator's dress, a few passes later.
        L.wait_for(lambda: len([p for p in L.file_rows(folder(), "passes.csv")
                                if p["dress_cycle"] == "2"]) >= 5, 10, "passes in cycle 2")
        rc, out, err = self.run_tool([L.GRITLINE, "dress", "--socket", d.socket, "--note", "wheel B4 trued"])
        self.assertIn("dress marked", out)
        n_cycle2 = len([p for p in L.file_rows(folder(), "passes.csv") if p["dress_cycle"] == "2"])
        L.wait_for(lambda: [p for p in L.file_rows(folder(), "passes.csv") if p["dress_cycle"] == "3"], 10,
                   "a pass of cycle 3")
        self.stop_daemon(d)
        sim.stop()
        f = folder()
        L.whole_lines(self, f)
        cyc = L.file_rows(f, "dress_cycles.csv")
        self.assertEqual([(c["cycle"], c["started_by"], c["ended_by"]) for c in cyc[:2]],
                         [("1", "start", "counter"), ("2", "counter", "operator")])
        self.assertEqual(int(cyc[1]["passes"]), n_cycle2)
        passes = L.file_rows(f, "passes.csv")
        third = [p for p in passes if p["dress_cycle"] == "3"]
        self.assertEqual([p["passes_since_dress"] for p in third], [str(i) for i in range(1, len(third) + 1)])
        marks = [m for m in L.read_recording(os.path.join(f, "samples.csv"))[1] if m[1] == "dress"]
        self.assertEqual([m[2] for m in marks], ["operator wheel B4 trued"])
        events = [e for e in L.file_rows(f, "events.csv") if e["kind"] == "dress"]
        self.assertEqual(len(events), 2)
        self.assertTrue(events[0]["message"].startswith("dress (counter): cycle 1 closed after %d passes" %
                                                        len(before)))
        self.assertTrue(events[1]["message"].startswith("dress (operator): cycle 2 closed after %d passes" % n_cycle2))
        print("cycle 1: %s passes (truth: %d before the first dress), ended by %s; cycle 2: %s passes, ended by %s; "
              "cycle 3 counts from %s" % (cyc[0]["passes"], len(before), cyc[0]["ended_by"], cyc[1]["passes"],
                                          cyc[1]["ended_by"], third[0]["passes_since_dress"]), file=sys.stderr)


if __name__ == "__main__":
    unittest.main(verbosity=2)
