"""test_aggressive.py: a job far above the window: high_aggressiveness and wheel_wear, with advice.

aggressive-short.ini runs at Aggr 147 on a wa46-soft wheel whose window is set
here to 15-35 (centre 25): high_aggressiveness must be raised with the work
speed and depth that bring the pass to 25, the same numbers `gritline calc
--target-aggr 25` prints for that pass's conditions (its mean diameter, spindle
speed and work speed, read back from the recording, and its depth); the wheel
loses 2.4 um of diameter a pass (simulator truth: G-ratio 2.69), so wheel_wear
must be raised on the measured G-ratio, below min_g_ratio 20.
"""
import math
import re
import sys
import unittest

import livetest as L

SPEED = 2.0   # a contact of 0.54 s of the simulator's time lasts 0.27 s: some 27 polls
CENTRE = 25.0
WIDTH = 20


class Aggressive(L.LiveCase):
    def test_high_aggressiveness_and_wear(self):
        sim = self.start_sim(L.scenario("aggressive-short.ini"), SPEED)
        d = self.start_daemon(L.sim_conf(sim.port, "aggressive-short.ini", speed=SPEED))

        high = L.wait_for(lambda: L.events_raised(d.data_dir, "high_aggressiveness"), 40 / SPEED + 15,
                          "high_aggressiveness")[0]
        wear = L.wait_for(lambda: L.events_raised(d.data_dir, "wheel_wear"), 10, "wheel_wear")[0]
        self.stop_daemon(d)
        sim.stop()
        folder = L.shift_folder(d.data_dir)
        L.whole_lines(self, folder)
        passes = {p["pass"]: p for p in L.file_rows(folder, "passes.csv")}
        truth = sim.truth_rows()

        # high_aggressiveness: the pass it names, its advice, and calc's answer for that pass.
        p = passes[high["pass"]]
        self.assertEqual(float(high["limit"]), 35.0)
        self.assertGreater(float(high["value"]), 35.0)
        m = re.search(L.ADVICE_RE, high["message"])
        self.assertTrue(m, high["message"])
        self.assertIn("above the window 15.0-35.0", high["message"])
        ws, depth_at, dt, ws_at, target = m.groups()
        self.assertEqual(float(target), CENTRE)
        self.assertEqual(depth_at, "%.4f" % float(p["depth_of_cut_mm"]))
        self.assertEqual(ws_at, "%.0f" % float(p["work_speed_mm_min"]))
        cond = L.pass_conditions(folder, p)
        calc_ws, calc_depth, j = L.calc_advice(self, cond, float(p["depth_of_cut_mm"]), WIDTH, CENTRE)
        # Source: gritline calc --target-aggr, the operator's own tool, on the same conditions.
        self.assertEqual(ws, "%.0f" % calc_ws)
        self.assertEqual(dt, "%.4f" % calc_depth)
        # And the definition of the aggressiveness number, Aggr = 1e6 (vw/vs) sqrt(ae/de)
        # (docs/formulas.md): Aggr is linear in vw and goes with the root of ae.
        aggr = float(p["aggressiveness"])
        self.assertAlmostEqual(float(ws), cond["vw"] * CENTRE / aggr, delta=0.6)
        self.assertAlmostEqual(float(dt), float(p["depth_of_cut_mm"]) * (CENTRE / aggr) ** 2, delta=6e-5)
        # Source: simulator truth: the same pass's aggressiveness.
        t = min(truth, key=lambda r: abs(float(r["start_time"]) - float(p["start_time"])))
        self.assertLess(abs(aggr / float(t["aggressiveness"]) - 1.0), 0.005)
        print("high_aggressiveness at pass %s (Aggr %.2f, truth %s): advice %s mm/min or %s mm; calc %.3f mm/min, "
              "%.6f mm (pass means over %d samples)" % (p["pass"], aggr, t["aggressiveness"], ws, dt, calc_ws,
                                                         calc_depth, cond["samples"]), file=sys.stderr)

        # wheel_wear on the G-ratio: below the minimum, near the truth's G.
        self.assertEqual(float(wear["limit"]), 20.0)
        g = float(wear["value"])
        g_truth = [float(r["g_ratio"]) for r in truth if r["kind"] == "rough"]
        self.assertTrue(re.match(r"G-ratio \d+\.\d below minimum 20\.0 ", wear["message"]), wear["message"])
        # Source: simulator truth. The diameter is recorded to 0.1 um against some 1.2 um of
        # radial wear a pass, so a G-ratio over a few passes is good to a few per cent.
        self.assertGreater(g, 0.85 * min(g_truth))
        self.assertLess(g, 1.15 * max(g_truth))
        wear_pass = passes[wear["pass"]]
        print("wheel_wear at pass %s: G-ratio %.2f (truth %.2f to %.2f); %s" %
              (wear["pass"], g, min(g_truth), max(g_truth), wear["message"]), file=sys.stderr)
        self.assertTrue(math.isfinite(float(wear_pass["g_ratio"])))


if __name__ == "__main__":
    unittest.main(verbosity=2)
