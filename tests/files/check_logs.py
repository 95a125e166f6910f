#!/usr/bin/python3
"""check_logs.py: the logs and the recording as other programs read them.

Run by meson as: check_logs.py LOGS_GEN DOCS_DIR. LOGS_GEN (tests/files/logs_gen.c)
writes passes.csv, events.csv, dress_cycles.csv and samples.csv into a temporary
folder, with the values behind them in expected.json. This script reads the files
with Python's csv module (RFC 4180 dialect) and with pandas (Debian's
python3-pandas), and checks them against expected.json and against the column
tables of docs/log-formats.md and docs/recording-format.md (names, order, decimals).
"""
import csv
import datetime
import json
import math
import os
import re
import subprocess
import sys
import tempfile
import unittest

GEN = sys.argv.pop(1) if len(sys.argv) > 1 else "logs_gen"
DOCS = sys.argv.pop(1) if len(sys.argv) > 1 else os.path.join(os.path.dirname(__file__), "..", "..", "docs")

try:
    import pandas as pd
except ImportError:  # listed in tests/tools/packages.txt; skip only that part when absent
    pd = None

# Pass flags, bit 0 first, as docs/log-formats.md lists them.
FLAGS = ["gap", "depth_unknown", "new_part", "spark_out", "after_dress", "no_speed", "truncated"]


def read_text(path):
    with open(path, encoding="utf-8") as f:
        return f.read()


def doc_columns(doc, heading):
    """The column table under `## heading`: [(name, decimals)], decimals an int or None for text."""
    text = read_text(os.path.join(DOCS, doc))
    m = re.search(r"^## " + re.escape(heading) + r"\s*$(.*?)(?=^## |\Z)", text, re.M | re.S)
    if not m:
        raise AssertionError(f"{doc}: no section '## {heading}'")
    cols, in_table = [], False
    for line in m.group(1).splitlines():
        if not line.startswith("|"):
            in_table = False
            continue
        cells = [c.strip() for c in line.strip().strip("|").split("|")]
        if cells[:3] == ["column", "unit", "decimals"]:  # the header of a column table
            in_table = True
            continue
        if not in_table or not re.fullmatch(r"`[a-z0-9_]+`", cells[0]):
            continue
        dec = cells[2]
        cols.append((cells[0].strip("`"), int(dec) if dec.isdigit() else None))
    if not cols:
        raise AssertionError(f"{doc} '## {heading}': no column table")
    return cols


def check_number(test, where, text, expected, decimals):
    """text is `expected` written with `decimals` decimals, or empty when expected is None."""
    if expected is None:
        test.assertEqual(text, "", f"{where}: an unknown value is an empty field")
        return
    pattern = r"-?\d+" + (r"\.\d{%d}" % decimals if decimals else "")
    test.assertRegex(text, "^" + pattern + "$", f"{where}: {decimals} decimals")
    test.assertLessEqual(abs(float(text) - expected), 0.5 * 10.0 ** -decimals * (1 + 1e-9) + abs(expected) * 1e-15,
                         f"{where}: {text} for {expected!r}")


class Logs(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        cls.tmp = tempfile.TemporaryDirectory(prefix="gritline-logs-")
        cls.dir = cls.tmp.name
        r = subprocess.run([GEN, cls.dir], capture_output=True, text=True, timeout=30)
        if r.returncode != 0:
            raise AssertionError(f"logs_gen failed ({r.returncode}): {r.stderr}")
        with open(os.path.join(cls.dir, "expected.json"), encoding="utf-8") as f:
            cls.exp = json.load(f)

    @classmethod
    def tearDownClass(cls):
        cls.tmp.cleanup()

    def rows(self, name):
        # newline="" as the csv module asks; the files are UTF-8 text.
        with open(os.path.join(self.dir, name), newline="", encoding="utf-8") as f:
            return list(csv.reader(f))

    def check_table(self, name, doc_heading, expected_rows, value_of):
        rows = self.rows(name)
        cols = doc_columns("log-formats.md", doc_heading)
        self.assertEqual(rows[0], [c for c, _ in cols], f"{name}: header differs from docs/log-formats.md")
        self.assertEqual(len(rows) - 1, len(expected_rows))
        for i, (row, exp) in enumerate(zip(rows[1:], expected_rows)):
            self.assertEqual(len(row), len(cols), f"{name} row {i + 2}: {len(row)} columns")
            for (col, dec), text in zip(cols, row):
                want = value_of(col, exp)
                where = f"{name} row {i + 2} {col}"
                if dec is None:
                    self.assertEqual(text, want, where)
                else:
                    check_number(self, where, text, want, dec)

    def test_passes(self):
        scale = {"work_speed_mm_min": ("work_speed_mm_s", 60.0),
                 "equivalent_chip_thickness_um": ("chip_thickness_mm", 1000.0),
                 "max_chip_thickness_um": ("max_chip_thickness_mm", 1000.0)}
        rename = {"pass": "number", "depth_of_cut_mm": "depth_mm",
                  "reference_specific_energy_j_mm3": "u_ref_j_mm3", "dull_ratio_smoothed": "smoothed_ratio",
                  "volume_since_dress_mm3_mm": "v_prime_mm3_mm",
                  "forecast_volume_left_mm3_mm": "forecast_v_prime_left",
                  "rubbing_intercept_w_mm": "power_intercept_w_mm",
                  "incremental_energy_j_mm3": "power_slope_j_mm3"}

        def value_of(col, p):
            if col == "flags":
                return "|".join(n for b, n in enumerate(FLAGS) if p["flags"] >> b & 1)
            if col in ("dress_cycle", "passes_since_dress"):  # empty without a cycle
                return (p["cycle"] if col == "dress_cycle" else p["pass_in_cycle"]) if p["cycle"] else None
            if col in scale:
                src, k = scale[col]
                return None if p[src] is None else p[src] * k
            return p[rename.get(col, col)]
        self.check_table("passes.csv", "passes.csv", self.exp["passes"], value_of)

    def test_events(self):
        def value_of(col, e):
            if col == "pass":
                return e["pass"] if e["pass"] else None
            if col == "message":  # a row stays one line: line breaks become spaces
                return e["message"].replace("\r", " ").replace("\n", " ")
            return e[col]
        self.check_table("events.csv", "events.csv", self.exp["events"], value_of)

    def test_dress_cycles(self):
        rename = {"volume_mm3_mm": "v_prime_mm3_mm", "reference_specific_energy_j_mm3": "u_ref_j_mm3",
                  "reference_exponent": "ref_exponent", "final_dull_ratio": "final_ratio",
                  "wheel_wear_um": "wear_um", "limit_volume_mm3_mm": "v_prime_at_limit"}

        def value_of(col, c):
            if col == "forecast_right":
                return {-1: "", 0: "no", 1: "yes"}[c["forecast_right"]]
            if col == "forecast_pass":
                return c["forecast_pass"] if c["forecast_made"] else None
            if col == "forecast_volume_mm3_mm":
                return c["forecast_v_prime_mm3_mm"] if c["forecast_made"] else None
            if col == "limit_pass":
                return c["pass_at_limit"] or None
            return c[rename.get(col, col)]
        self.check_table("dress_cycles.csv", "dress_cycles.csv", self.exp["cycles"], value_of)

    def test_flags_and_kinds_are_documented(self):
        text = read_text(os.path.join(DOCS, "log-formats.md"))
        for name in FLAGS + ["info", "warning", "critical", "raised", "cleared",
                             "start", "alert", "schedule", "operator", "counter", "end"]:
            self.assertIn(f"`{name}`", text)
        for e in self.exp["events"]:
            if e["kind"] != "note":
                self.assertIn(f"`{e['kind']}`", text)

    @unittest.skipIf(pd is None, "python3-pandas is not installed")
    def test_pandas_reads_the_logs(self):
        p = pd.read_csv(os.path.join(self.dir, "passes.csv"))
        self.assertEqual(len(p), len(self.exp["passes"]))
        self.assertEqual(list(p["pass"]), [x["number"] for x in self.exp["passes"]])
        for col, src in (("specific_energy_j_mm3", "specific_energy_j_mm3"), ("dull_ratio", "dull_ratio")):
            self.assertTrue(pd.api.types.is_float_dtype(p[col]), col)
            for got, x in zip(p[col], self.exp["passes"]):
                if x[src] is None:
                    self.assertTrue(math.isnan(got))
                else:
                    self.assertAlmostEqual(got, x[src], places=3)
        e = pd.read_csv(os.path.join(self.dir, "events.csv"), keep_default_na=False, na_values={"pass": [""],
                        "value": [""], "limit": [""]})
        self.assertEqual(list(e["message"]),
                         [x["message"].replace("\r", " ").replace("\n", " ") for x in self.exp["events"]])
        self.assertEqual(list(e["severity"]), [x["severity"] for x in self.exp["events"]])
        c = pd.read_csv(os.path.join(self.dir, "dress_cycles.csv"))
        self.assertEqual(list(c["ended_by"]), [x["ended_by"] for x in self.exp["cycles"]])
        self.assertEqual(list(c["job"]), [x["job"] for x in self.exp["cycles"]])
        self.assertEqual(int(c["g_ratio"].isna().sum()), sum(x["g_ratio"] is None for x in self.exp["cycles"]))


class Recording(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        cls.tmp = tempfile.TemporaryDirectory(prefix="gritline-rec-")
        r = subprocess.run([GEN, cls.tmp.name], capture_output=True, text=True, timeout=30)
        if r.returncode != 0:
            raise AssertionError(f"logs_gen failed ({r.returncode}): {r.stderr}")
        with open(os.path.join(cls.tmp.name, "expected.json"), encoding="utf-8") as f:
            cls.exp = json.load(f)
        cls.path = os.path.join(cls.tmp.name, "samples.csv")

    @classmethod
    def tearDownClass(cls):
        cls.tmp.cleanup()

    def test_metadata_marks_and_rows(self):
        meta, marks, rows = {}, [], []
        with open(self.path, newline="", encoding="utf-8") as f:
            for line in f:
                self.assertTrue(line.endswith("\n"))
                line = line[:-1]
                if line.startswith("# mark: "):
                    t, kind, *text = line[len("# mark: "):].split(" ", 2)
                    marks.append((float(t), kind, text[0] if text else ""))
                elif line.startswith("#"):
                    self.assertFalse(rows, "metadata only before the header")
                    key, _, value = line[1:].strip().partition(": ")
                    meta[key] = value
                else:
                    rows.append(next(csv.reader([line])))
        self.assertEqual(meta["format"], "gritline-samples/1")
        for key in ("machine", "geometry", "wheel", "job"):
            self.assertEqual(meta[key], self.exp["meta"][key])
        for key in ("grinding_width_mm", "wheel_diameter_mm"):
            self.assertEqual(float(meta[key]), self.exp["meta"][key])
        # ISO 8601 in UTC as Python's datetime reads it (fromisoformat takes "Z" since 3.11).
        started = datetime.datetime.fromisoformat(meta["started"])
        self.assertEqual(started.utcoffset(), datetime.timedelta(0))
        self.assertEqual(started.timestamp(), self.exp["meta"]["started"])
        self.assertEqual([k for _, k, _ in marks], ["start", "dress", "config"])
        self.assertEqual(marks[2][2], "accepted, job plate-1200")
        cols = doc_columns("recording-format.md", "Columns")
        self.assertEqual(rows[0], [c for c, _ in cols], "header differs from docs/recording-format.md")
        self.assertEqual(len(rows) - 1, len(self.exp["samples"]))
        for i, (row, s) in enumerate(zip(rows[1:], self.exp["samples"])):
            self.assertEqual(len(row), len(cols))
            for (col, dec), text in zip(cols, row):
                check_number(self, f"row {i + 2} {col}", text, s[col], dec)
        # Documented keys of the metadata are the ones written.
        doc = read_text(os.path.join(DOCS, "recording-format.md"))
        for key in meta:
            self.assertIn(f"`{key}`", doc)

    @unittest.skipIf(pd is None, "python3-pandas is not installed")
    def test_pandas_as_the_docs_say(self):
        # docs/recording-format.md: pd.read_csv(f, comment='#'), then the time to the microsecond.
        df = pd.read_csv(self.path, comment="#")
        self.assertEqual(list(df.columns), [c for c, _ in doc_columns("recording-format.md", "Columns")])
        self.assertEqual(len(df), len(self.exp["samples"]))
        for col in df.columns:
            self.assertTrue(pd.api.types.is_numeric_dtype(df[col]), col)
            want = [s[col] for s in self.exp["samples"]]
            self.assertEqual(int(df[col].isna().sum()), sum(w is None for w in want), col)
        t = pd.to_datetime(df["time"], unit="s", utc=True).dt.round("us")
        self.assertEqual(t.iloc[0].isoformat(), "2024-03-05T06:00:00.250000+00:00")
        self.assertAlmostEqual(df["spindle_power_w"].iloc[1], self.exp["samples"][1]["spindle_power_w"], places=1)


if __name__ == "__main__":
    unittest.main(verbosity=2)
