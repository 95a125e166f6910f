#!/usr/bin/python3
"""test_report.py: `gritline report` end to end: its numbers equal the logs'.

The logs come from the real pipeline (`gritline replay` of a synthetic recording,
reportdata.make_logs). The figures are recomputed here with Python's csv module
(reportdata.figures) and, when Debian's python3-pandas is installed, with pandas as a
second, independent reading; the report's --json, its text and the numbers marked in
its HTML (data-figure / data-value) must agree with them. Also: summary.json used when
valid and ignored when stale, the input forms (machine folder, shift folder, files,
--shift/--from/--to), a shift of 40000 passes drawn per pixel column, and the exit
codes of <sysexits.h>.
"""
import html.parser
import json
import math
import os
import re
import shutil
import subprocess
import sys
import time
import unittest

import reportdata as rd

try:
    import pandas as pd
except ImportError:  # listed in tests/tools/packages.txt; only that cross-check is skipped without it
    pd = None

G = rd.GRITLINE
SUMWRITE = os.environ.get("SUMWRITE", "sumwrite")
TMP = MACHINE = None
SHIFTS = []


def setUpModule():
    global TMP, MACHINE, SHIFTS
    TMP, MACHINE, SHIFTS = rd.make_logs()
    assert [os.path.basename(s) for s in SHIFTS] == ["2024-03-05_early", "2024-03-05_late"], SHIFTS


def tearDownModule():
    rd.remove(TMP)


def report(*args, ok=True):
    r = rd.run([G, "report", *args])
    if ok and r.returncode != 0:
        raise AssertionError(f"gritline report {' '.join(args)}: exit {r.returncode}: {r.stderr}")
    return r


def report_json(*args):
    return json.loads(report(*args, "--json").stdout)


class FigureCheck(unittest.TestCase):
    def assert_figures(self, got, want, where):
        for k in rd.NUMBER_KEYS:
            self.assertIn(k, got, f"{where}: key {k} missing")
            self.assertTrue(rd.same(want[k], got[k]), f"{where}: {k}: report {got[k]!r}, logs {want[k]!r}")
        kinds = {k["kind"]: k["raised"] for k in got["alerts_by_kind"]}
        self.assertEqual(kinds, want["alerts_by_kind"], where)
        self.assertEqual(got["job"], want["job"], where)
        self.assertEqual(got["wheel"], want["wheel"], where)


class Json(FigureCheck):
    def test_each_shift_folder(self):
        for d in SHIFTS:
            j = report_json(d, "--config", rd.DEMO_CONF)
            self.assertEqual(j["format"], "gritline-report/1")
            self.assert_figures(j["summary"], rd.figures([d]), d)
            self.assertEqual(len(j["shifts"]), 1)
            # The replay that made the folders writes summary.json at the change of shift and at
            # the end, as the daemon does; the figures must agree with the logs either way.
            self.assertIn(j["shifts"][0]["figures_from"], ("summary.json",) , j["shifts"][0])
            self.assertTrue(os.path.exists(os.path.join(d, "summary.json")), d)
            self.assertEqual(j["limits"]["source"], "config")
            self.assertEqual(j["limits"]["wheel"], "cx60-vitrified")

    def test_machine_folder(self):
        j = report_json(MACHINE, "--config", rd.DEMO_CONF)
        want = rd.figures(SHIFTS)
        self.assert_figures(j["summary"], want, "machine folder")
        self.assertEqual(j["summary"]["folders"], 2)
        self.assertEqual(len(j["summary"]["cycle_rows"]), want["cycles"])
        self.assertEqual([os.path.basename(s["folder"]) for s in j["shifts"]], ["2024-03-05_early", "2024-03-05_late"])
        for s, d in zip(j["shifts"], SHIFTS):
            self.assert_figures(s["summary"], rd.figures([d]), d)
        # the data has something of everything: the test would be weak otherwise
        self.assertGreater(want["passes"], 2500)
        self.assertGreater(want["limit_cycles"], 2)
        self.assertLess(want["limit_cycles"], want["cycles"])
        self.assertTrue(0.1 < want["window_share"] < 0.5)
        for kind in ("dulling", "burn_risk", "low_aggressiveness", "high_aggressiveness", "communication_lost"):
            self.assertIn(kind, want["alerts_by_kind"])

    def test_alert_list(self):
        j = report_json(MACHINE)
        events = []
        for d in SHIFTS:
            events += rd.read_csv(os.path.join(d, "events.csv"))
        raised = [e for e in events if e["state"] == "raised"]
        self.assertEqual(len(j["alerts"]), len(raised))
        used = set()
        for a, e in zip(j["alerts"], raised):
            self.assertEqual(a["kind"], e["kind"])
            self.assertEqual(a["pass"], int(e["pass"]))
            self.assertEqual(a["message"], e["message"])
            self.assertTrue(rd.same(a["time"], float(e["time"])))
            # cleared by the next "cleared" event of its kind
            i = events.index(e)
            clear = next((k for k in range(i + 1, len(events)) if k not in used and events[k]["kind"] == e["kind"]
                          and events[k]["state"] == "cleared"), None)
            if clear is None:
                self.assertIsNone(a["cleared_pass"])
            else:
                used.add(clear)
                self.assertEqual(a["cleared_pass"], int(events[clear]["pass"]))

    def test_defaults_without_config(self):
        j = report_json(SHIFTS[0])
        self.assertEqual(j["limits"], {"source": "defaults", "config": None, "wheel": None, "aggr_low": 15,
                                       "aggr_high": 20, "dull_limit": 1.3, "burn_margin": 0.8})
        self.assert_figures(j["summary"], rd.figures([SHIFTS[0]]), "defaults")

    def test_other_window_from_config(self):
        conf = os.path.join(TMP, "narrow.conf")
        with open(rd.DEMO_CONF) as f:
            text = f.read()
        text = text.replace("aggr_low = 15", "aggr_low = 16").replace("aggr_high = 20", "aggr_high = 19\ndull_limit = 1.25")
        with open(conf, "w") as f:
            f.write(text)
        j = report_json(SHIFTS[0], "--config", conf)
        self.assertEqual(j["limits"]["aggr_low"], 16)
        self.assertEqual(j["limits"]["dull_limit"], 1.25)
        self.assert_figures(j["summary"], rd.figures([SHIFTS[0]], 16, 19), "window 16-19")

    @unittest.skipIf(pd is None, "python3-pandas not installed")
    def test_pandas_reading_agrees(self):
        """A second reading of the logs, with pandas (Debian's python3-pandas)."""
        p = pd.concat([pd.read_csv(os.path.join(d, "passes.csv"), keep_default_na=False,
                                   na_values={c: [""] for c in ["depth_of_cut_mm", "aggressiveness", "volume_mm3",
                                                                "specific_energy_j_mm3"]}) for d in SHIFTS])
        flags = p["flags"].astype(str)
        grinding = p[(~flags.str.contains("spark_out")) & (p["aggressiveness"] > 0)]
        j = report_json(MACHINE)["summary"]
        self.assertEqual(j["passes"], len(p))
        self.assertEqual(j["passes_depth_known"], int(p["depth_of_cut_mm"].notna().sum()))
        self.assertAlmostEqual(j["volume_mm3"], p["volume_mm3"].sum(), delta=1e-6 * j["volume_mm3"])
        self.assertAlmostEqual(j["aggressiveness_median"], grinding["aggressiveness"].median(), places=9)
        self.assertAlmostEqual(j["specific_energy_median_j_mm3"], p["specific_energy_j_mm3"].median(), places=9)
        self.assertAlmostEqual(j["specific_energy_mean_j_mm3"], p["specific_energy_j_mm3"].mean(), places=9)
        share = grinding["aggressiveness"].between(15, 20).mean()
        self.assertAlmostEqual(j["window_share"], share, places=12)


class Figure(html.parser.HTMLParser):
    """Collects data-figure elements (key -> (data-value, text)) and a few more facts."""

    def __init__(self):
        super().__init__()
        self.figures, self.kinds, self.fields = {}, {}, {}
        self.open = None
        self.svgs = self.scripts = 0
        self.external = []
        self.ids = set()

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "svg":
            self.svgs += 1
        if tag == "script":
            self.scripts += 1
        for k in ("src", "href"):
            if k in a and re.match(r"(https?:)?//", a[k] or ""):
                self.external.append(a[k])
        if "id" in a:
            self.ids.add(a["id"])
        if "data-figure" in a:
            self.open = ("figure", a["data-figure"], a["data-value"])
        elif "data-kind" in a:
            self.open = ("kind", a["data-kind"], a["data-value"])
        elif "data-field" in a:
            self.open = ("field", a["data-field"], None)
        self.text = ""

    def handle_data(self, data):
        if self.open:
            self.text += data

    def handle_endtag(self, tag):
        if self.open:
            what, key, value = self.open
            if what == "figure":
                self.figures[key] = (value, self.text)
            elif what == "kind":
                self.kinds[key] = (value, self.text)
            else:
                self.fields[key] = self.text
            self.open = None


class Html(unittest.TestCase):
    def parse(self, *args):
        out = os.path.join(TMP, "r.html")
        report(*args, "-o", out)
        with open(out, encoding="utf-8") as f:
            page = f.read()
        p = Figure()
        p.feed(page)
        return page, p

    def check(self, p, want):
        self.assertGreaterEqual(len(p.figures), 15)
        for key, (value, text) in p.figures.items():
            self.assertIn(key, want, f"data-figure {key} is not a figure of docs/report.md")
            w = want[key] * (100.0 if key == "window_share" else 1.0)  # shown in percent
            got = None if value == "null" else float(value)
            self.assertTrue(rd.same(w, got), f"{key}: data-value {value}, logs {w}")
            if got is None:
                self.assertEqual(text.strip(), "\u2013", key)
                continue
            shown = float(text.strip())
            decimals = len(text.strip().split(".")[1]) if "." in text else 0
            self.assertLessEqual(abs(shown - w), 0.5 * 10 ** -decimals + 1e-9, f"{key}: shown {text}, logs {w}")
        for kind, (value, text) in p.kinds.items():
            self.assertEqual(int(value), want["alerts_by_kind"][kind])
            self.assertEqual(text, f"{kind} {value}")
        self.assertEqual(set(p.kinds), set(want["alerts_by_kind"]))

    def test_single_shift_numbers(self):
        page, p = self.parse(SHIFTS[0], "--config", rd.DEMO_CONF)
        want = rd.figures([SHIFTS[0]])
        self.check(p, want)
        self.assertEqual(p.fields, {"machine": "sg4", "job": "plate-1200", "wheel": "cx60-vitrified",
                                    "shift": "2024-03-05_early"})
        self.assertEqual(p.svgs, 3)
        self.assertEqual(p.scripts, 0, "no script in the report")
        self.assertEqual(p.external, [], "nothing fetched from outside")
        self.assertIn("Never exceed the wheel's marked maximum operating speed", page)
        self.assertIn("licensed practice", page)
        self.assertIn('data-source="config"', page)
        for i in ("chart-energy", "chart-aggr", "chart-power", "cycles", "alerts", "advice", "caution"):
            self.assertIn(i, p.ids)

    def test_several_shifts_numbers(self):
        page, p = self.parse(MACHINE)
        want = rd.figures(SHIFTS)
        self.check(p, want)
        self.assertEqual(len(re.findall(r'<tr data-cycle="\d+">', page)), want["cycles"], "one row a dress cycle")
        self.assertEqual(len(re.findall(r'<td class="tag">A\d+</td>', page)), want["alerts_raised"])
        self.assertIn('id="shifts"', page)
        self.assertIn("time of the pass (local time, UTC)", page)
        self.assertIn("No configuration given", page, "the report says the limits are defaults")

    def test_svg_is_well_formed_xml(self):
        import xml.etree.ElementTree as ET
        page, _ = self.parse(SHIFTS[1])
        svgs = re.findall(r"<svg.*?</svg>", page, re.S)
        self.assertEqual(len(svgs), 3)
        for s in svgs:
            root = ET.fromstring(s)  # raises on malformed XML
            self.assertTrue(root.tag.endswith("svg"))


class SummaryJson(FigureCheck):
    def setUp(self):
        self.dir = os.path.join(TMP, "copy", "sg4", "2024-03-05_early")
        shutil.rmtree(os.path.join(TMP, "copy"), ignore_errors=True)
        shutil.copytree(SHIFTS[0], self.dir)
        r = rd.run([SUMWRITE, self.dir, "15", "20"])
        self.assertEqual(r.returncode, 0, r.stderr)

    def test_used_when_valid(self):
        j = report_json(self.dir)
        self.assertEqual(j["shifts"][0]["figures_from"], "summary.json")
        self.assert_figures(j["summary"], rd.figures([self.dir]), "from summary.json")
        # the file holds the same figures as a fresh computation
        with open(os.path.join(self.dir, "summary.json")) as f:
            s = json.load(f)
        self.assert_figures(s, rd.figures([self.dir]), "summary.json")
        # and it is what the report reads: a changed figure shows
        s["passes"] = 4242
        with open(os.path.join(self.dir, "summary.json"), "w") as f:
            json.dump(s, f)
        self.assertEqual(report_json(self.dir)["summary"]["passes"], 4242)

    def test_ignored_when_stale(self):
        with open(os.path.join(self.dir, "passes.csv")) as f:
            lines = f.read().splitlines()
        last = lines[-1].split(",")
        last[0] = str(int(last[0]) + 1)
        with open(os.path.join(self.dir, "passes.csv"), "a") as f:
            f.write(",".join(last) + "\n")
        j = report_json(self.dir)
        self.assertEqual(j["shifts"][0]["figures_from"], "computed (the logs changed since summary.json)")
        self.assertEqual(j["summary"]["passes"], len(lines))

    def test_ignored_for_other_window(self):
        conf = os.path.join(TMP, "wide.conf")
        with open(rd.DEMO_CONF) as f:
            text = f.read().replace("aggr_low = 15", "aggr_low = 12")
        with open(conf, "w") as f:
            f.write(text)
        j = report_json(self.dir, "--config", conf)
        self.assertEqual(j["shifts"][0]["figures_from"], "computed (summary.json is for other limits)")
        self.assert_figures(j["summary"], rd.figures([self.dir], 12, 20), "window 12-20")

    def test_ignored_when_broken(self):
        with open(os.path.join(self.dir, "summary.json"), "w") as f:
            f.write('{"format": "gritline-summary/1", "passes": ')
        j = report_json(self.dir)
        self.assertTrue(j["shifts"][0]["figures_from"].startswith("computed"))
        self.assert_figures(j["summary"], rd.figures([self.dir]), "broken summary.json")


class Inputs(unittest.TestCase):
    def test_files(self):
        d = SHIFTS[1]
        files = [os.path.join(d, n) for n in ("events.csv", "passes.csv", "dress_cycles.csv")]
        a = report_json(*files)
        b = report_json(d)
        for k in rd.NUMBER_KEYS:
            self.assertTrue(rd.same(a["summary"][k], b["summary"][k]), k)
        self.assertEqual(a["summary"]["label"], "2024-03-05_late")
        only = report_json(os.path.join(d, "passes.csv"))["summary"]
        self.assertEqual(only["passes"], b["summary"]["passes"])
        self.assertEqual(only["alerts_raised"], 0, "no events.csv given: no alert")

    def test_filters(self):
        def labels(*args):
            return [os.path.basename(s["folder"]) for s in report_json(MACHINE, *args)["shifts"]]
        self.assertEqual(labels("--shift", "late"), ["2024-03-05_late"])
        self.assertEqual(labels("--shift", "2024-03-05_early"), ["2024-03-05_early"])
        self.assertEqual(labels("--from", "2024-03-05", "--to", "2024-03-05"), ["2024-03-05_early", "2024-03-05_late"])
        r = report(MACHINE, "--from", "2024-03-06", ok=False)
        self.assertEqual(r.returncode, 66)
        self.assertIn("no shift folder matches", r.stderr)

    def test_text(self):
        r = report(SHIFTS[0])
        want = rd.figures([SHIFTS[0]])
        self.assertIn(f"  Passes                   {want['passes']} (", r.stdout)
        self.assertIn("Limits: no --config given, defaults used: window 15-20, dull limit 1.30, burn\n"
                      "        margin 0.80", r.stdout)
        self.assertIn(f"{want['volume_mm3']:.1f} mm^3", r.stdout)
        self.assertIn(f"median {want['specific_energy_median_j_mm3']:.2f}, mean", r.stdout)
        self.assertIn("Caution: Never exceed the wheel's marked maximum operating speed", r.stdout)
        long = [line for line in r.stdout.splitlines() if len(line) > 80]
        self.assertEqual(long, [], "lines for a terminal or an e-mail")
        self.assertEqual(r.stderr, "")

    def test_help(self):
        r = report("--help")
        self.assertIn("never exceed the wheel's marked maximum operating speed", r.stdout)
        r = rd.run([G, "--help"])
        self.assertIn("report", r.stdout)


class Large(unittest.TestCase):
    def test_forty_thousand_passes(self):
        """Tens of thousands of passes: downsampled per pixel column, the file stays small."""
        big = os.path.join(TMP, "big", "sg4", "2024-03-05_early")
        shutil.rmtree(os.path.join(TMP, "big"), ignore_errors=True)
        os.makedirs(big)
        src = rd.read_csv(os.path.join(SHIFTS[0], "passes.csv"))
        with open(os.path.join(SHIFTS[0], "passes.csv")) as f:
            header = f.readline()
        span = float(src[-1]["end_time"]) - float(src[0]["start_time"]) + 60.0
        n = 40000
        with open(os.path.join(big, "passes.csv"), "w") as f:
            f.write(header)
            for i in range(n):
                r = dict(src[i % len(src)])
                k = i // len(src)
                r["pass"] = str(i + 1)
                r["start_time"] = f"{float(r['start_time']) + k * span:.3f}"
                r["end_time"] = f"{float(r['end_time']) + k * span:.3f}"
                f.write(",".join(r[c] for c in header.strip().split(",")) + "\n")
        shutil.copy(os.path.join(SHIFTS[0], "events.csv"), big)
        shutil.copy(os.path.join(SHIFTS[0], "dress_cycles.csv"), big)
        out = os.path.join(TMP, "big.html")
        t = time.monotonic()
        report(big, "-o", out)
        took = time.monotonic() - t
        size = os.path.getsize(out)
        with open(out) as f:
            page = f.read()
        self.assertIn('id="downsampled"', page)
        self.assertIn("<b>40000 passes</b>", page)
        self.assertEqual(page.count('data-mode="columns"'), 8, "every series of the three charts")
        self.assertLess(size, 1_000_000, f"{size} bytes")
        self.assertLess(took, 20.0)
        print(f"40000 passes: {size} bytes of HTML in {took:.2f} s", file=sys.stderr)
        self.assertEqual(report_json(big)["summary"]["passes"], n)


class Errors(unittest.TestCase):
    def expect(self, code, *args, text=None):
        r = report(*args, ok=False)
        self.assertEqual(r.returncode, code, f"{args}: {r.stderr}")
        self.assertEqual(len(r.stderr.strip().splitlines()), 1, f"one line: {r.stderr!r}")
        self.assertTrue(r.stderr.startswith("gritline report: "), r.stderr)
        if text:
            self.assertIn(text, r.stderr)
        self.assertEqual(r.stdout, "")

    def test_usage(self):
        self.expect(64)
        self.expect(64, "--bogus", SHIFTS[0], text='unknown option "--bogus"')
        self.expect(64, SHIFTS[0], "--from", "2024-13-01", text="--from: expected a date YYYY-MM-DD")
        self.expect(64, SHIFTS[0], "--text", "--json", text="only one of --html, --text and --json")
        self.expect(64, SHIFTS[0], "--shift", text="--shift: missing value")
        self.expect(64, SHIFTS[0], "--from", "2024-03-06", "--to", "2024-03-05", text="is after --to")

    def test_no_input(self):
        self.expect(66, os.path.join(TMP, "absent"), text="No such file or directory")
        empty = os.path.join(TMP, "empty")
        os.makedirs(empty, exist_ok=True)
        self.expect(66, empty, text="no shift folder")
        self.expect(66, MACHINE, "--shift", "night", text="no shift folder matches")
        self.expect(66, os.path.join(SHIFTS[0], "events.csv"), text="no passes.csv among the files")

    def test_malformed_log(self):
        bad = os.path.join(TMP, "bad", "sg4", "2024-03-05_early")
        shutil.rmtree(os.path.join(TMP, "bad"), ignore_errors=True)
        shutil.copytree(SHIFTS[0], bad)
        path = os.path.join(bad, "passes.csv")
        with open(path) as f:
            lines = f.read().splitlines()
        fields = lines[4].split(",")
        fields[7] = "fast"
        lines[4] = ",".join(fields)
        with open(path, "w") as f:
            f.write("\n".join(lines) + "\n")
        self.expect(65, bad, text=f"{path}:5: column \"work_speed_mm_min\": not a number: \"fast\"")
        other = os.path.join(TMP, "notalog.csv")
        with open(other, "w") as f:
            f.write("a,b\n1,2\n")
        self.expect(65, other, text="not one of gritline's logs")

    def test_cannot_write(self):
        self.expect(73, SHIFTS[0], "-o", os.path.join(TMP, "no", "such", "dir", "r.html"), text="-o ")

    def test_bad_config(self):
        self.expect(78, SHIFTS[0], "--config", os.path.join(TMP, "absent.conf"), text="--config:")

    def test_output_file_replaced_whole(self):
        out = os.path.join(TMP, "atomic.html")
        with open(out, "w") as f:
            f.write("old")
        report(SHIFTS[1], "-o", out)
        with open(out) as f:
            self.assertTrue(f.read().startswith("<!DOCTYPE html>"))
        self.assertEqual([n for n in os.listdir(TMP) if n.startswith("atomic.html.")], [], "no temporary left")
        report(SHIFTS[1], "-o", out, "--json")
        with open(out) as f:
            json.load(f)


if __name__ == "__main__":
    unittest.main(verbosity=2)
