"""test_truth.py: gritlined against gritline-sim's ground truth, then the same run replayed.

The simulator computes every pass from its own physics (daemon/sim/model.c) and
writes the truth; gritlined only sees the registers. Passes are matched by their
start time; depths, speeds and specific energy are held to the truth. Then
`gritline replay` of the run's samples.csv under the same configuration must
write byte-identical passes.csv, events.csv and dress_cycles.csv.
"""
import os
import sys
import unittest

import livetest as L

SPEED = 8.0
RUN_SIM_S = 300.0       # simulated seconds: ten parts of short.ini, about 38 s of real time; long
                        # enough that 20 passes stay densely sampled on a loaded machine
MATCH_S = 0.25          # a start within 0.25 s is the same pass (passes are 2.9 s apart)


def rel(a, b):
    return abs(float(a) / float(b) - 1.0)


class Truth(L.LiveCase):
    def test_passes_against_truth_and_replay(self):
        sim = self.start_sim(L.scenario("short.ini"), SPEED)
        d = self.start_daemon(L.sim_conf(sim.port, speed=SPEED))
        end = sim.epoch + RUN_SIM_S
        L.wait_for(lambda: sim.sim_time() >= end or not d.alive(), RUN_SIM_S / SPEED + 10, "the run")
        self.assertTrue(d.alive(), d.stderr())
        self.stop_daemon(d)
        sim.stop()
        folder = L.shift_folder(d.data_dir)
        L.whole_lines(self, folder)
        truth = sim.truth_rows()
        passes = L.file_rows(folder, "passes.csv")
        rows, marks = L.read_recording(os.path.join(folder, "samples.csv"))
        t_first, t_last = float(rows[0][0]), float(rows[-1][0])
        self.assertEqual([m[1] for m in marks], ["start", "stop"])

        # Every pass of the truth that lies wholly inside the recording is found, once; every
        # pass gritlined reports is a pass of the truth (source: simulator truth). Both ways
        # over the passes around which no poll stalled (see livetest.densely_sampled).
        times = L.sample_times(rows)
        nominal = 0.01 * SPEED

        def dense(x):
            # From the pass before (2.9 s earlier), whose infeed gives this one's depth.
            return L.densely_sampled(times, float(x["start_time"]) - 3.0, float(x["end_time"]), nominal)
        inside = [t for t in truth if float(t["start_time"]) > t_first + 0.7 and float(t["end_time"]) < t_last - 0.7]
        checked = [t for t in inside if dense(t)]
        self.assertGreaterEqual(len(checked), 20)
        matched = []
        for t in checked:
            m = [p for p in passes if abs(float(p["start_time"]) - float(t["start_time"])) < MATCH_S]
            self.assertEqual(len(m), 1, "truth pass %s (start %s): %d matches" % (t["pass"], t["start_time"], len(m)))
            matched.append((t, m[0]))
        for p in passes:
            if t_first + 0.7 < float(p["start_time"]) and float(p["end_time"]) < t_last - 0.7 and dense(p):
                m = [t for t in truth if abs(float(p["start_time"]) - float(t["start_time"])) < MATCH_S]
                self.assertEqual(len(m), 1, "pass %s at %s: %d passes of the truth" %
                                 (p["pass"], p["start_time"], len(m)))

        worst = {"ae": 0.0, "vw": 0.0, "vs": 0.0, "aggr": 0.0, "u": 0.0, "start_s": 0.0, "end_s": 0.0}
        known = 0
        for t, p in matched:
            flags = p["flags"].split("|") if p["flags"] else []
            worst["start_s"] = max(worst["start_s"], abs(float(p["start_time"]) - float(t["start_time"])))
            worst["end_s"] = max(worst["end_s"], abs(float(p["end_time"]) - float(t["end_time"])))
            # Spark-outs and first passes of a part, as the truth names them.
            self.assertEqual("spark_out" in flags, t["kind"] == "spark_out", (t["pass"], flags))
            first_of_part = t["pass_in_part"] == "1"
            self.assertEqual("depth_unknown" in flags, first_of_part, (t["pass"], flags))
            if first_of_part:
                prev = truth[truth.index(t) - 1] if t["part"] != "1" else None
                # The infeed went back for the new part: seen when no gap (a poll stalled over
                # max_interval_s) since the part before made the previous infeed unknown.
                if prev and L.densely_sampled(times, float(prev["start_time"]), float(t["end_time"]), nominal):
                    self.assertIn("new_part", flags)
                self.assertEqual(p["depth_of_cut_mm"], "")
                continue
            # Simulator truth: depth within 0.5 %, zero for a spark-out.
            if t["kind"] == "spark_out":
                self.assertEqual(float(p["depth_of_cut_mm"]), 0.0)
                self.assertEqual(p["specific_energy_j_mm3"], "")
            else:
                known += 1
                for key, col_p, col_t in (("ae", "depth_of_cut_mm", "depth_of_cut_mm"),
                                          ("aggr", "aggressiveness", "aggressiveness")):
                    worst[key] = max(worst[key], rel(p[col_p], t[col_t]))
                worst["u"] = max(worst["u"], rel(p["specific_energy_j_mm3"], t["specific_energy_j_mm3"]))
            worst["vw"] = max(worst["vw"], rel(p["work_speed_mm_min"], t["work_speed_mm_min"]))
            worst["vs"] = max(worst["vs"], rel(p["wheel_speed_m_s"], t["wheel_speed_m_s"]))
        print("truth: %d passes matched (%d with a known depth; %d left out for a stalled poll); worst ae %.4f %%, "
              "vw %.4f %%, vs %.4f %%, Aggr %.4f %%, u %.3f %%; start within %.3f s, end within %.3f s" %
              (len(matched), known, len(inside) - len(checked), 100 * worst["ae"], 100 * worst["vw"],
               100 * worst["vs"], 100 * worst["aggr"], 100 * worst["u"], worst["start_s"], worst["end_s"]),
              file=sys.stderr)
        self.assertGreaterEqual(known, 15)
        # Source: simulator truth. Depth, speeds: 0.5 %; specific energy: 3 % (the noise of
        # 5 W over about 20 samples a pass and the idle baseline are well inside it).
        for key in ("ae", "vw", "vs", "aggr"):
            self.assertLess(worst[key], 0.005, key)
        self.assertLess(worst["u"], 0.03)

        # The same recording replayed with the same configuration: the same bytes.
        out = self.path("replay")
        self.run_tool([L.GRITLINE, "replay", os.path.join(folder, "samples.csv"), "--config", d.conf, "--out", out])
        rfolder = L.shift_folder(out)
        self.assertEqual(os.path.basename(rfolder), os.path.basename(folder))
        for name in ("passes.csv", "events.csv", "dress_cycles.csv"):
            with open(os.path.join(folder, name), "rb") as a, open(os.path.join(rfolder, name), "rb") as b:
                self.assertEqual(a.read(), b.read(), name + ": live and replay differ")


if __name__ == "__main__":
    unittest.main(verbosity=2)
