"""test_sim_restart.py: a killed and restarted gritline-sim with the same --epoch continues the same run.

The clock must follow sim = epoch + (real - epoch) * speed across restarts, the
counters must go on, and the truth each instance writes (rewritten from the
epoch at start-up) must be the same as a --truth-only run of the scenario.
"""
import csv
import signal
import subprocess
import time
import unittest

import simharness as h


class Restart(unittest.TestCase):
    def test_kill_and_restart_many_times(self):
        demo = h.scenario("demo.ini")
        speed = 60.0
        # 240 s of real time before now at speed 60: the shift is 4 h in, during the
        # dress after part 24 (13920 s to 14520 s), which ends during the restarts below.
        epoch = round(time.time() - 240.0, 3)
        truth = h.temp_path("truth.csv")
        dresses = h.temp_path("dresses.csv")
        last_clock, last_pass, last_dress = 0, 0, 0
        reads = 0
        for i in range(12):
            sim = h.Sim(demo, "--speed", "%g" % speed, "--epoch", "%.3f" % epoch,
                        "--truth", truth, "--truth-dresses", dresses).start()
            try:
                with h.connect(sim.port) as s:
                    for _ in range(3):
                        before = time.time()
                        hr = h.read_registers(s, 0, 20)
                        after = time.time()
                        clock = h.u64(hr[0:4])
                        self.assertGreaterEqual(clock / 1000.0,
                                                epoch + (before - epoch) * speed - 0.002)
                        self.assertLessEqual(clock / 1000.0, epoch + (after - epoch) * speed + 0.002)
                        self.assertGreater(clock, last_clock)
                        self.assertGreaterEqual(hr[19], last_pass, "pass number goes on")
                        self.assertGreaterEqual(hr[16], last_dress, "dress count goes on")
                        last_clock, last_pass, last_dress = clock, hr[19], hr[16]
                        reads += 1
                        time.sleep(0.1)
            finally:
                if i % 3 == 0:
                    self.assertEqual(sim.stop(signal.SIGTERM), 0)
                elif i % 3 == 1:
                    self.assertEqual(sim.stop(signal.SIGINT), 0)
                else:
                    sim.stop(signal.SIGKILL)
        self.assertEqual(reads, 36)
        self.assertGreaterEqual(last_dress, 1, "the run went through the dress after part 24")

        # The last instance's truth against a straight --truth-only run.
        with open(truth) as f:
            served = list(csv.DictReader(f))
        ref_path = h.temp_path("ref.csv")
        subprocess.run([h.SIM, "--truth-only", "--until", "%.3f" % (last_clock / 1000.0 + 60),
                        "--epoch", "%.3f" % epoch, "--truth", ref_path, demo], check=True, timeout=30)
        with open(ref_path) as f:
            ref = list(csv.DictReader(f))
        self.assertGreater(len(served), 200)
        self.assertEqual(served, ref[:len(served)])
        done = [r for r in ref if float(r["end_time"]) <= last_clock / 1000.0]
        self.assertGreaterEqual(len(served), len(done), "every pass completed by then is written")


if __name__ == "__main__":
    unittest.main(verbosity=2)
