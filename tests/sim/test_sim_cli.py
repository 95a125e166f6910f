"""test_sim_cli.py: gritline-sim's command line: exit codes, scenario mistakes, and the truth of the
shipped scenarios as documented in docs/simulator.md and conf/scenarios/*.ini."""
import csv
import subprocess
import unittest

import simharness as h

EPOCH = "2024-03-04T06:00:00Z"
EPOCH_S = 1709532000


def run(*args, timeout=30):
    out = subprocess.run([h.SIM, *args], capture_output=True, text=True, timeout=timeout)
    h.check_sanitizers(out.stderr)
    return out


def truth(scenario, until, *extra):
    path = h.temp_path("truth.csv")
    out = run("--truth-only", "--until", until, "--epoch", EPOCH, "--truth", path, *extra, scenario)
    assert out.returncode == 0, out.stderr
    with open(path) as f:
        return list(csv.DictReader(f))


def write(text):
    path = h.temp_path("s.ini")
    with open(path, "w") as f:
        f.write(text)
    return path


class ScenarioMistakes(unittest.TestCase):
    CASES = [
        ("[machine]\nname = sg4\n[wheels]\n", 3, "unknown section [wheels]"),
        ("[wheel]\ndiameter = 300\n", 2, "unknown key \"diameter\""),
        ("[job]\nlength_mm = long\n", 2, "length_mm: expected a number > 0"),
        ("[wheel]\nsharp_wear_flat = 2\n", 2, "expected a number in (0, 1)"),
        ("[job]\nwidth_mm = 20\nwidth_mm = 21\n", 3, "repeated"),
        ("[machine]\n; " + "x" * 250 + "\n", 2, "characters long, over the limit"),
        ("[job]\nlength_mm = 200\n  width_mm = 20\n", 3, "indented line"),
        ("[job]\nlength_mm\n", 2, "syntax error"),
        ("[job]\nlength_mm = 200;mm\n", 2, "space before ';'"),
        ("[machine]\nspindle_rpm = 3000\n", 2, "over the wheel's marked maximum"),
        ("[faults]\nfault = melt\n", 2, "unknown kind"),
        ("[schedule]\nepoch = tomorrow\n", 2, "ISO 8601"),
    ]

    def test_each_mistake_names_file_and_line_and_exits_78(self):
        for text, line, what in self.CASES:
            with self.subTest(what=what):
                path = write(text)
                for args in (["--check"], ["--port", "0"]):
                    out = run(*args, path, timeout=10)
                    self.assertEqual(out.returncode, 78, out.stderr)  # EX_CONFIG, <sysexits.h>
                    first = out.stderr.splitlines()[0]
                    self.assertTrue(first.startswith("%s:%d: " % (path, line)), first)
                    self.assertIn(what, first)
                    self.assertEqual(out.stdout, "", "nothing served")

    def test_shipped_scenarios_check(self):
        for name in ("demo.ini", "stable.ini", "dulling.ini", "aggressive.ini"):
            out = run("--check", h.scenario(name))
            self.assertEqual(out.returncode, 0, out.stderr)


class Usage(unittest.TestCase):
    def test_exit_codes(self):
        quiet = h.scenario("quiet.ini")
        self.assertEqual(run().returncode, 64)
        self.assertEqual(run("--bogus", quiet).returncode, 64)
        self.assertEqual(run("--speed", "0", quiet).returncode, 64)
        self.assertEqual(run("--speed", "fast", quiet).returncode, 64)
        self.assertEqual(run("--port", "70000", quiet).returncode, 64)
        self.assertEqual(run("--fault", "melt", quiet).returncode, 64)
        self.assertEqual(run("--until", "+1h", quiet).returncode, 64)
        self.assertEqual(run("--truth-only", "--truth", "-", quiet).returncode, 64)
        self.assertEqual(run("--epoch", "someday", quiet).returncode, 64)
        self.assertEqual(run(quiet, quiet).returncode, 64)
        missing = run("/nonexistent/scenario.ini")
        self.assertEqual(missing.returncode, 66)  # EX_NOINPUT
        self.assertIn("/nonexistent/scenario.ini: No such file", missing.stderr)
        bad_truth = run("--truth-only", "--until", "+1h", "--truth", "/nonexistent/t.csv", quiet)
        self.assertEqual(bad_truth.returncode, 73)  # EX_CANTCREAT

    def test_help_carries_the_caution(self):
        out = run("--help")
        self.assertEqual(out.returncode, 0)
        self.assertIn("marked maximum operating", out.stdout)
        self.assertIn("advisory", out.stdout)
        self.assertIn("local\ncodes and licensed practice", out.stdout)

    def test_port_in_use_and_port_file(self):
        port_file = h.temp_path("port")
        with h.Sim(h.scenario("quiet.ini"), "--port-file", port_file) as a:
            with open(port_file) as f:
                self.assertEqual(int(f.read()), a.port)
            out = run("--port", str(a.port), h.scenario("quiet.ini"), timeout=10)
            self.assertEqual(out.returncode, 69, out.stderr)  # EX_UNAVAILABLE
            self.assertIn("--listen/--port", out.stderr)


class Truth(unittest.TestCase):
    HEADER = ["pass", "part", "start_time", "end_time", "depth_of_cut_mm", "work_speed_mm_min",
              "wheel_speed_m_s", "wheel_diameter_mm", "equivalent_diameter_mm", "aggressiveness",
              "specific_energy_j_mm3", "energy_j", "volume_mm3", "wear_flat", "dull_factor",
              "burn_threshold_j_mm3", "burnt", "dress_count"]

    def first(self, rows, threshold, kind=None):
        for r in rows:
            if r["kind"] != "spark_out" and (kind is None or r["kind"] == kind) and \
                    float(r["dull_factor"]) >= threshold:
                return int(r["pass"]), int(r["part"])
        return None

    def test_demo_as_documented(self):
        demo = h.scenario("demo.ini")
        dresses = h.temp_path("dresses.csv")
        rows = truth(demo, "+8h", "--truth-dresses", dresses)
        self.assertEqual(len(rows), 480)
        self.assertEqual(list(rows[0].keys())[:len(self.HEADER)], self.HEADER)
        self.assertEqual(self.first(rows, 1.20), (97, 10))
        self.assertEqual(self.first(rows, 1.30), (157, 16))
        self.assertFalse(any(r["burnt"] == "1" for r in rows))
        grinding = [r for r in rows if r["kind"] != "spark_out"]
        worst = max(float(r["specific_energy_j_mm3"]) / float(r["burn_threshold_j_mm3"])
                    for r in grinding)
        self.assertLess(worst, 0.88)
        with open(dresses) as f:
            d = list(csv.DictReader(f))
        self.assertEqual(len(d), 1)
        self.assertEqual(d[0]["part"], "24")
        self.assertAlmostEqual(float(d[0]["diameter_before_mm"]) - float(d[0]["diameter_after_mm"]),
                               0.04, places=4)
        after = [r for r in rows if int(r["part"]) == 25]
        self.assertEqual(after[0]["dress_count"], "1")
        self.assertAlmostEqual(float(after[0]["dull_factor"]), 1.0, places=5)
        self.assertLess(float(rows[-1]["end_time"]) - EPOCH_S, 8 * 3600)
        self.assertGreater(float(rows[-1]["end_time"]) - EPOCH_S, 7.5 * 3600)
        # Without the dress: first burnt pass 406 (part 41).
        with open(demo) as f:
            text = f.read().replace("dress_at_parts = 24", "")
        rows = truth(write(text), "+9h")
        burnt = [r for r in rows if r["burnt"] == "1"]
        self.assertEqual((burnt[0]["pass"], burnt[0]["part"]), ("406", "41"))

    def test_dulling_onset_as_documented(self):
        rows = truth(h.scenario("dulling.ini"), "+1h")
        self.assertEqual(self.first(rows, 1.20), (61, 5))
        self.assertEqual(self.first(rows, 1.20, "rough"), (66, 6))
        burnt = [r for r in rows if r["burnt"] == "1"]
        self.assertEqual((burnt[0]["pass"], burnt[0]["part"]), ("248", "20"))

    def test_stable_for_a_week(self):
        rows = truth(h.scenario("stable.ini"), "+7d")
        self.assertGreater(len(rows), 80000)
        self.assertLess(max(float(r["dull_factor"]) for r in rows if r["kind"] != "spark_out"), 1.01)
        self.assertFalse(any(r["burnt"] == "1" for r in rows))
        self.assertAlmostEqual(float(rows[-1]["wheel_diameter_mm"]), 335.4, delta=0.2)

    def test_aggressive_self_sharpens_and_wears(self):
        rows = [r for r in truth(h.scenario("aggressive.ini"), "+2h") if r["kind"] != "spark_out"]
        self.assertGreater(min(float(r["aggressiveness"]) for r in rows), 150)
        self.assertLess(max(float(r["dull_factor"]) for r in rows), 1.01)
        self.assertLess(max(float(r["g_ratio"]) for r in rows), 3.0)
        self.assertLess(float(rows[-1]["wheel_diameter_mm"]), 247.0)
        self.assertFalse(any(r["burnt"] == "1" for r in rows))

    def test_until_forms_agree(self):
        demo = h.scenario("demo.ini")
        a = truth(demo, "+1h")
        b = truth(demo, "2024-03-04T07:00:00Z")
        c = truth(demo, str(EPOCH_S + 3600))
        self.assertEqual(a, b)
        self.assertEqual(a, c)

    def test_wear_factor_compresses_life(self):
        with open(h.scenario("demo.ini")) as f:
            text = f.read().replace("wear_factor = 1", "wear_factor = 10")
        fast = truth(write(text), "+1h")
        slow = truth(h.scenario("demo.ini"), "+1h")
        self.assertEqual([r["start_time"] for r in fast], [r["start_time"] for r in slow],
                         "passes run at the same times")
        # A tenth of the passes dulls the wheel about as much.
        n = len(slow) - 1
        self.assertGreater(float(fast[n]["wear_flat"]), float(slow[n]["wear_flat"]))
        self.assertGreater(self.first(slow, 1.05)[0], 3 * self.first(fast, 1.05)[0])


if __name__ == "__main__":
    unittest.main(verbosity=2)
