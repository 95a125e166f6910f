#!/usr/bin/python3
"""test_calc.py: `gritline calc` end to end: figures, units, every error path.

Run by meson with the path of the gritline binary as argument. Uses Debian's
python3-pint as an independent reference for the unit conversions.
"""
import json
import math
import subprocess
import sys
import unittest

GRITLINE = sys.argv.pop(1) if len(sys.argv) > 1 else "gritline"

BASE = ["--wheel-diameter", "200", "--wheel-speed", "30", "--work-speed", "1800",
        "--depth", "0.05", "--width", "25"]


def calc(*args):
    return subprocess.run([GRITLINE, "calc", *args], capture_output=True, text=True, timeout=10)


def calc_json(*args):
    r = calc(*args, "--json")
    if r.returncode != 0:
        raise AssertionError(r.stderr)
    return json.loads(r.stdout)


class Figures(unittest.TestCase):
    def test_surface_example(self):
        # Kalpakjian and Schmid's chip-dimension example (from memory): D = 200 mm,
        # d = 0.05 mm, v = 30 m/min, V = 1800 m/min, C = 2/mm^2, r = 15 gives
        # l = 3.2 mm and t = 0.006 mm.
        j = calc_json("--wheel-diameter", "200", "--wheel-speed", "30", "--work-speed", "30000",
                      "--depth", "0.05", "--width", "10")
        self.assertAlmostEqual(j["contact_length_mm"], 3.2, delta=0.05)
        self.assertAlmostEqual(j["max_chip_thickness_um"], 6.0, delta=0.5)
        self.assertEqual(j["equivalent_diameter_mm"], 200)
        # Aggr = 16.7 vw[mm/min]/vs[m/s] sqrt(ae/de) (common practice, no source; exact 1e6/60000)
        self.assertAlmostEqual(j["aggressiveness"], 1e6 / 60000 * 30000 / 30 * math.sqrt(0.05 / 200), places=6)

    def test_rpm_gives_surface_speed(self):
        j = calc_json("--wheel-diameter", "200", "--rpm", "3000", "--work-speed", "1800",
                      "--depth", "0.05", "--width", "25")
        self.assertAlmostEqual(j["wheel_speed_m_s"], math.pi * 200 * 3000 / 60000, places=7)

    def test_target_aggressiveness(self):
        j = calc_json(*BASE, "--target-aggr", "18")
        # The answers must reach the target when fed back in.
        back = calc_json("--wheel-diameter", "200", "--wheel-speed", "30", "--work-speed",
                         repr(j["target_work_speed_mm_min"]), "--depth", "0.05", "--width", "25")
        self.assertAlmostEqual(back["aggressiveness"], 18, places=5)
        back = calc_json("--wheel-diameter", "200", "--wheel-speed", "30", "--work-speed", "1800",
                         "--depth", repr(j["target_depth_of_cut_mm"]), "--width", "25")
        self.assertAlmostEqual(back["aggressiveness"], 18, places=5)

    def test_max_speed_warning(self):
        r = calc(*BASE, "--max-speed", "25")
        self.assertEqual(r.returncode, 0)
        self.assertIn("exceeds the marked maximum", r.stderr)
        j = calc_json(*BASE, "--max-speed", "35")
        self.assertFalse(j["overspeed"])
        self.assertAlmostEqual(j["max_spindle_speed_rpm"], 35 * 60000 / (math.pi * 200), places=6)

    def test_cylindrical_modes(self):
        j = calc_json("--geometry", "external", "--wheel-diameter", "400", "--workpiece-diameter", "50",
                      "--wheel-speed", "35", "--work-speed", "20000", "--depth", "0.01", "--width", "5")
        self.assertAlmostEqual(j["equivalent_diameter_mm"], 400 * 50 / 450, places=6)
        j = calc_json("--geometry", "internal", "--wheel-diameter", "30", "--workpiece-diameter", "50",
                      "--wheel-speed", "35", "--work-speed", "20000", "--depth", "0.01", "--width", "5")
        self.assertAlmostEqual(j["equivalent_diameter_mm"], 75, places=6)
        # Plunge: depth per work revolution from the radial infeed rate, ae = vf*pi*dw/vw.
        j = calc_json("--geometry", "plunge", "--wheel-diameter", "400", "--workpiece-diameter", "40",
                      "--wheel-speed", "35", "--work-speed", "30000", "--infeed-rate", "0.6", "--width", "15")
        self.assertAlmostEqual(j["depth_of_cut_mm"], 0.6 * math.pi * 40 / 30000, places=9)

    def test_help_documents_every_option_and_the_caution(self):
        r = calc("--help")
        self.assertEqual(r.returncode, 0)
        for opt in ["--geometry", "--wheel-diameter", "--wheel-speed", "--rpm", "--work-speed", "--depth",
                    "--infeed-rate", "--width", "--workpiece-diameter", "--target-aggr", "--max-speed",
                    "--units", "--json", "--grit-density", "--chip-ratio", "--burn-a", "--burn-b", "--help"]:
            self.assertIn(opt, r.stdout)
        self.assertIn("marked maximum operating speed", r.stdout)
        self.assertIn("advisory", r.stdout)
        self.assertIn("licensed practice", r.stdout)


class Units(unittest.TestCase):
    """Imperial in, imperial out, checked against python3-pint."""

    @classmethod
    def setUpClass(cls):
        import pint
        cls.u = pint.UnitRegistry()

    def test_imperial_matches_metric_through_pint(self):
        u = self.u
        ds, vs, vw, ae, b = 8 * u.inch, 6000 * u.foot / u.minute, 60 * u.inch / u.minute, 0.002 * u.inch, 1 * u.inch
        imp = calc_json("--units", "imperial", "--wheel-diameter", "8", "--wheel-speed", "6000",
                        "--work-speed", "60", "--depth", "0.002", "--width", "1", "--target-aggr", "20")
        met = calc_json("--wheel-diameter", repr(ds.to("mm").magnitude),
                        "--wheel-speed", repr(vs.to("m/s").magnitude),
                        "--work-speed", repr(vw.to("mm/min").magnitude),
                        "--depth", repr(ae.to("mm").magnitude), "--width", repr(b.to("mm").magnitude),
                        "--target-aggr", "20")
        self.assertAlmostEqual(imp["aggressiveness"], met["aggressiveness"], places=9)
        q_imp = (imp["removal_rate_in3_min"] * u.inch ** 3 / u.minute).to("mm**3/s").magnitude
        self.assertAlmostEqual(q_imp, met["removal_rate_mm3_s"], places=9)
        qp = (imp["specific_removal_rate_in2_min"] * u.inch ** 2 / u.minute).to("mm**2/s").magnitude
        self.assertAlmostEqual(qp, met["specific_removal_rate_mm2_s"], places=9)
        heq = (imp["equivalent_chip_thickness_uin"] * u.microinch).to("micrometer").magnitude
        self.assertAlmostEqual(heq, met["equivalent_chip_thickness_um"], places=9)
        burn = (imp["burn_threshold_hp_min_in3"] * u.horsepower * u.minute / u.inch ** 3).to("J/mm**3").magnitude
        self.assertAlmostEqual(burn, met["burn_threshold_j_mm3"], places=9)
        tv = (imp["target_work_speed_in_min"] * u.inch / u.minute).to("mm/min").magnitude
        self.assertAlmostEqual(tv, met["target_work_speed_mm_min"], places=6)
        self.assertAlmostEqual(met["wheel_speed_m_s"], vs.to("m/s").magnitude, places=12)
        self.assertAlmostEqual(imp["spindle_speed_rpm"], met["spindle_speed_rpm"], places=9)


class Errors(unittest.TestCase):
    """Every bad input: one line naming the argument, exit 64 (EX_USAGE)."""

    def bad(self, args, must_name):
        r = calc(*args)
        self.assertEqual(r.returncode, 64, f"{args}: {r.stderr}")
        self.assertEqual(r.stdout, "")
        lines = r.stderr.strip().split("\n")
        self.assertEqual(len(lines), 1, r.stderr)
        self.assertIn(must_name, lines[0])

    def replace(self, opt, value):
        args = list(BASE)
        if opt in args:
            args[args.index(opt) + 1] = value
        else:
            args += [opt, value]
        return args

    def without(self, opt):
        args = list(BASE)
        i = args.index(opt)
        return args[:i] + args[i + 2:]

    def test_missing(self):
        for opt in ["--wheel-diameter", "--work-speed", "--depth", "--width"]:
            self.bad(self.without(opt), opt)
        self.bad(self.without("--wheel-speed"), "--wheel-speed")

    def test_not_numbers(self):
        for opt in ["--wheel-diameter", "--wheel-speed", "--work-speed", "--depth", "--width", "--rpm",
                    "--target-aggr", "--max-speed", "--grit-density", "--chip-ratio", "--burn-a", "--burn-b"]:
            for v in ["abc", "1.5x", "", "nan", "inf"]:
                self.bad(self.replace(opt, v), opt)

    def test_zero_or_negative(self):
        for opt in ["--wheel-diameter", "--wheel-speed", "--work-speed", "--width", "--target-aggr",
                    "--max-speed", "--grit-density", "--chip-ratio", "--burn-b"]:
            for v in ["0", "-1"]:
                self.bad(self.replace(opt, v), opt)
        self.bad(self.replace("--depth", "-0.01"), "--depth")
        self.bad(self.replace("--burn-a", "-1"), "--burn-a")

    def test_zero_depth_is_a_spark_out(self):
        self.assertEqual(calc(*self.replace("--depth", "0")).returncode, 0)

    def test_combinations(self):
        self.bad(BASE + ["--rpm", "3000"], "--rpm")
        self.bad(BASE + ["--geometry", "external"], "--workpiece-diameter")
        self.bad(BASE + ["--workpiece-diameter", "50"], "--workpiece-diameter")
        self.bad(self.replace("--wheel-diameter", "60") + ["--geometry", "internal", "--workpiece-diameter", "50"],
                 "--workpiece-diameter")
        self.bad(self.replace("--wheel-diameter", "50") + ["--geometry", "internal", "--workpiece-diameter", "50"],
                 "--workpiece-diameter")
        self.bad(BASE + ["--infeed-rate", "0.5"], "--infeed-rate")
        plunge = BASE + ["--geometry", "plunge", "--workpiece-diameter", "40", "--infeed-rate", "0.5"]
        self.bad(plunge, "--infeed-rate")

    def test_unknown(self):
        self.bad(BASE + ["--frobnicate", "1"], "--frobnicate")
        self.bad(BASE + ["--geometry", "cylindrical"], "--geometry")
        self.bad(BASE + ["--units", "furlongs"], "--units")
        self.bad(BASE + ["stray"], "stray")
        self.bad(BASE + ["--depth"], "--depth")

    def test_unknown_command(self):
        r = subprocess.run([GRITLINE, "frobnicate"], capture_output=True, text=True)
        self.assertEqual(r.returncode, 64)
        self.assertIn("frobnicate", r.stderr)


if __name__ == "__main__":
    unittest.main()
