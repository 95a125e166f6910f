#!/usr/bin/python3
"""test_config.py: `gritlined --check-config` over broken configurations.

Run by meson as: test_config.py GRITLINED CONF_KEYS SOURCE_ROOT. Every broken file is
conf/demo.conf with one edit; the test asserts exit 78 (EX_CONFIG of <sysexits.h>),
exactly one line on stderr, "gritlined: FILE:LINE: " with the line of the fault (or
"gritlined: FILE: " when no line applies), and words naming the section and key.
It also checks that the effective configuration printed for conf/demo.conf reads
back to the same output, and that docs/configuration.md documents every key the
parser accepts (CONF_KEYS prints them, one "section key" per line).
"""
import os
import re
import subprocess
import sys
import tempfile
import unittest

GRITLINED = sys.argv.pop(1) if len(sys.argv) > 1 else "gritlined"
CONF_KEYS = sys.argv.pop(1) if len(sys.argv) > 1 else "conf_keys"
ROOT = sys.argv.pop(1) if len(sys.argv) > 1 else os.path.join(os.path.dirname(__file__), "..", "..")
DEMO = os.path.join(ROOT, "conf", "demo.conf")
EX_CONFIG = 78  # <sysexits.h>

with open(DEMO, encoding="utf-8") as _f:
    DEMO_LINES = _f.read().split("\n")


def find(lines, text, section=None, start=0):
    """Index of the first line equal to text (after the section header when given)."""
    if section is not None:
        start = lines.index(section)
    for i in range(start, len(lines)):
        if lines[i] == text:
            return i
    raise AssertionError(f"demo.conf has no line {text!r}" + (f" in {section}" if section else ""))


# Edits: each takes the demo lines and returns (new lines, index of the line the edit is about).
def replace(old, new, section=None):
    def edit(lines):
        i = find(lines, old, section)
        return lines[:i] + new.split("\n") + lines[i + 1:], i
    return edit


def insert_after(anchor, new, section=None):
    def edit(lines):
        i = find(lines, anchor, section)
        return lines[:i + 1] + new.split("\n") + lines[i + 1:], i + 1
    return edit


def delete(old, section=None):
    def edit(lines):
        i = find(lines, old, section)
        return lines[:i] + lines[i + 1:], i
    return edit


def delete_section(header):
    def edit(lines):
        i = lines.index(header)
        j = i + 1
        while j < len(lines) and not lines[j].startswith("["):
            j += 1
        return lines[:i] + lines[j:], i
    return edit


def append(text):
    def edit(lines):
        return lines + text.split("\n"), len(lines)
    return edit


# Where the message must point: the edited line ("at"), the line of a section header in
# the edited file (a header text), or nowhere (None).
AT = "at"

LONG = "description = " + "x" * 240

CASES = [
    # name, edit, line, words the message must hold
    ("unknown section", replace("[modbus]", "[modbuss]"), AT, ["unknown section [modbuss]"]),
    ("unknown channel", replace("[channel.dress_count]", "[channel.dress_counter]"), AT,
     ["unknown channel [channel.dress_counter]", "dress_count"]),
    ("bad job section name", replace("[job.plate-1200]", "[job.plate 1200]"), AT, ["[job.plate 1200]"]),
    ("unknown key", replace("port = 5020", "prot = 5020"), AT, ["[modbus]", '"prot"', "port"]),
    ("duplicate key", insert_after("port = 5020", "port = 5021"), AT, ["[modbus] port: given twice"]),
    ("duplicate channel section", replace("[channel.dress_count]", "[channel.wheel_diameter]"), AT,
     ["section [channel.wheel_diameter] appears twice", "first at line %d" % (DEMO_LINES.index("[channel.wheel_diameter]") + 1)]),
    ("duplicate machine section", append("[machine]\nname = sg5"), AT,
     ["section [machine] appears twice", "first at line %d" % (DEMO_LINES.index("[machine]") + 1)]),
    ("duplicate job section", append("[job.plate-1200]\nwidth_mm = 20"), AT,
     ["section [job.plate-1200] appears twice", "first at line %d" % (DEMO_LINES.index("[job.plate-1200]") + 1)]),
    ("bad number", replace("width_mm = 40", "width_mm = 4O"), AT, ["[job.plate-1200] width_mm", "not a number", "4O"]),
    ("bad whole number", replace("port = 5020", "port = 50.5"), AT, ["[modbus] port", "not a whole number"]),
    ("negative whole number", replace("unit_id = 1", "unit_id = -1"), AT, ["[modbus] unit_id", "not a whole number"]),
    ("port out of range", replace("port = 5020", "port = 70000"), AT, ["[modbus] port", "between 1 and 65535"]),
    ("unit id out of range", replace("unit_id = 1", "unit_id = 256"), AT, ["[modbus] unit_id", "between 0 and 255"]),
    ("speed out of range", replace("max_speed_m_s = 35", "max_speed_m_s = 600"), AT,
     ["[wheel.cx60-vitrified] max_speed_m_s", "at most 500"]),
    ("zero poll interval", replace("poll_interval_ms = 10", "poll_interval_ms = 0"), AT,
     ["[machine] poll_interval_ms", "positive"]),
    ("number too large for a double", replace("stale_after_s = 30", "stale_after_s = 1e999"), AT,
     ["[modbus] stale_after_s", "not a number"]),
    ("empty value", replace("host = 127.0.0.1", "host ="), AT, ["[modbus] host", "empty value"]),
    ("name with a space", replace("name = sg4", "name = sg 4"), AT, ["[machine] name", "letters, digits"]),
    ("relative data_dir", replace("data_dir = /var/lib/gritline", "data_dir = var/lib/gritline"), AT,
     ["[machine] data_dir", "absolute path"]),
    ("missing name", delete("name = sg4"), "[machine]", ["[machine] name: required"]),
    ("missing job", delete("job = plate-1200"), "[machine]", ["[machine] job: required"]),
    ("missing wheel", delete("wheel = cx60-vitrified"), "[machine]", ["[machine] wheel: required"]),
    ("missing channel address", delete("address = 6", "[channel.spindle_speed]"), "[channel.spindle_speed]",
     ["[channel.spindle_speed] address: required"]),
    ("missing max_speed_m_s", delete("max_speed_m_s = 35"), "[wheel.cx60-vitrified]",
     ["[wheel.cx60-vitrified] max_speed_m_s: required"]),
    ("missing job width", delete("width_mm = 40"), "[job.plate-1200]", ["[job.plate-1200] width_mm"]),
    ("missing wheel diameter without a diameter channel",
     lambda lines: delete("diameter_mm = 400")(delete_section("[channel.wheel_diameter]")(lines)[0]),
     "[wheel.cx60-vitrified]", ["[wheel.cx60-vitrified] diameter_mm: required"]),
    ("job not defined", replace("job = plate-1200", "job = plate-1300"), "[machine]",
     ["[machine] job", "no section [job.plate-1300]"]),
    ("wheel not defined", replace("wheel = cx60-vitrified", "wheel = wa46-soft"), "[machine]",
     ["[machine] wheel", "no section [wheel.wa46-soft]"]),
    ("unknown table", replace("table = holding", "table = holdings", "[channel.spindle_power]"), AT,
     ["[channel.spindle_power] table", '"holdings"', "holding, input, coil, discrete"]),
    ("unknown type", replace("type = f32", "type = float32", "[channel.spindle_power]"), AT,
     ["[channel.spindle_power] type", '"float32"', "u16, s16, u32, s32, f32, u64"]),
    ("unknown order", replace("order = abcd", "order = abdc", "[channel.spindle_power]"), AT,
     ["[channel.spindle_power] order", '"abdc"', "abcd, badc, cdab, dcba"]),
    ("unknown unit", replace("unit = W", "unit = watt", "[channel.spindle_power]"), AT,
     ["[channel.spindle_power] unit", '"watt"']),
    ("unknown geometry", replace("geometry = surface", "geometry = flat"), AT,
     ["[job.plate-1200] geometry", '"flat"', "surface, creep-feed, external, internal or plunge"]),
    ("unknown material", replace("material = steel", "material = brass"), AT,
     ["[job.plate-1200] material", '"brass"']),
    ("unknown transport", replace("transport = tcp", "transport = udp"), AT,
     ["[modbus] transport", '"udp"', "tcp or rtu"]),
    ("unknown parity", insert_after("transport = tcp", "parity = mark"), AT,
     ["[modbus] parity", '"mark"', "none, even or odd"]),
    ("unknown timestamp", replace("timestamp = controller", "timestamp = ntp"), AT,
     ["[machine] timestamp", '"ntp"', "local or controller"]),
    ("unit not allowed for the channel", replace("unit = rpm", "unit = mm", "[channel.spindle_speed]"),
     "[channel.spindle_speed]", ["[channel.spindle_speed] unit", "mm is not a unit of this channel", "rpm"]),
    ("spindle power missing", delete_section("[channel.spindle_power]"), None,
     ["missing section [channel.spindle_power]"]),
    ("controller time without a clock", delete_section("[channel.clock]"), "[machine]",
     ["[machine] timestamp", "[channel.clock]"]),
    ("line longer than 200 characters", replace("description = Alder Street Works, cell B, surface grinder 4", LONG),
     AT, ["line longer than 198 characters"]),
    ("internal grinding with a wheel larger than the bore",
     replace("geometry = surface", "geometry = internal\nworkpiece_diameter_mm = 300"), "[wheel.cx60-vitrified]",
     ["[wheel.cx60-vitrified] diameter_mm", "smaller than the bore"]),
    ("burn constants without material = custom", insert_after("material = steel", "burn_a = 7.5"), "[job.plate-1200]",
     ["[job.plate-1200] burn_a", "material = custom"]),
    ("shift starts not ascending", replace("starts = 06:00,14:00,22:00", "starts = 06:00,14:00,12:00"), "[shifts]",
     ["[shifts]", "ascending"]),
    ("shift start not a time", replace("starts = 06:00,14:00,22:00", "starts = 06:00,14:00,22h"), "[shifts]",
     ["[shifts]", '"22h" is not a time']),
    ("shift names do not match", replace("names = early,late,night", "names = early,late"), "[shifts]",
     ["[shifts]", "2 shift names for 3 shift starts"]),
    ("neither key = value nor a section", replace("port = 5020", "port 5020"), AT,
     ["not a key = value line or a [section] header"]),
    ("section header without its bracket", replace("[modbus]", "[modbus"), AT,
     ["not a key = value line or a [section] header"]),
    ("inline comment without a space", replace("port = 5020", "port = 5020;simulator"), AT,
     ["[modbus] port", "not a whole number"]),
    ("aggressiveness window upside down", replace("aggr_high = 20", "aggr_high = 10"), "[wheel.cx60-vitrified]",
     ["[wheel.cx60-vitrified] aggr_high", "above aggr_low"]),
    ("backoff upside down", replace("backoff_max_ms = 2000", "backoff_max_ms = 100"), "[modbus]",
     ["[modbus] backoff_max_ms", "backoff_min_ms"]),
]


def check_config(path):
    return subprocess.run([GRITLINED, "--check-config", path], capture_output=True, text=True, timeout=10)


class BrokenConfigurations(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        cls.tmp = tempfile.TemporaryDirectory(prefix="gritline-conf-")

    @classmethod
    def tearDownClass(cls):
        cls.tmp.cleanup()

    def expect_refused(self, path, line, words):
        r = check_config(path)
        self.assertEqual(r.returncode, EX_CONFIG, f"exit {r.returncode}; stderr: {r.stderr}")
        self.assertEqual(r.stdout, "", "nothing printed on stdout")
        self.assertTrue(r.stderr.endswith("\n"), repr(r.stderr))
        self.assertEqual(len(r.stderr.splitlines()), 1, f"one line on stderr: {r.stderr!r}")
        prefix = f"gritlined: {path}:{line}: " if line is not None else f"gritlined: {path}: "
        self.assertTrue(r.stderr.startswith(prefix), f"{r.stderr!r} does not start with {prefix!r}")
        for w in words:
            self.assertIn(w, r.stderr)
        return r.stderr

    def test_demo_is_valid(self):
        r = check_config(DEMO)
        self.assertEqual(r.returncode, 0, r.stderr)
        self.assertEqual(r.stderr, "")

    def test_each_broken_configuration(self):
        for name, edit, where, words in CASES:
            with self.subTest(name):
                lines, i = edit(list(DEMO_LINES))
                path = os.path.join(self.tmp.name, re.sub(r"[^a-z0-9]+", "-", name) + ".conf")
                with open(path, "w", encoding="utf-8") as f:
                    f.write("\n".join(lines))
                if where == AT:
                    line = i + 1
                elif where is None:
                    line = None
                else:
                    line = lines.index(where) + 1
                self.expect_refused(path, line, words)

    def test_missing_file(self):
        path = os.path.join(self.tmp.name, "no-such.conf")
        self.expect_refused(path, None, ["no-such.conf", "No such file or directory"])

    def test_empty_file(self):
        path = os.path.join(self.tmp.name, "empty.conf")
        open(path, "w").close()
        self.expect_refused(path, None, ["missing section [machine]"])

    def test_line_length_limit(self):
        # inih r55 reads a line into 200 bytes with its newline and NUL: 198 characters fit.
        for length, ok in ((198, True), (199, False), (200, False), (201, False)):
            with self.subTest(length=length):
                comment = "; " + "c" * (length - 2)
                path = os.path.join(self.tmp.name, f"comment{length}.conf")
                with open(path, "w", encoding="utf-8") as f:
                    f.write("\n".join(DEMO_LINES[:1] + [comment] + DEMO_LINES[1:]))
                if ok:
                    r = check_config(path)
                    self.assertEqual(r.returncode, 0, r.stderr)
                else:
                    self.expect_refused(path, 2, ["line longer than 198 characters"])

    def test_accepted_spellings(self):
        # Inline comments after a space, blanks around '=', CRLF line ends, a final line
        # without its newline: all read as the demo itself.
        want = check_config(DEMO).stdout.split("\n", 1)[1]
        variants = {
            "inline": [l + " ; note" if l.startswith("port") else l for l in DEMO_LINES],
            "blanks": [l.replace(" = ", "=") for l in DEMO_LINES],
            "crlf": [l + "\r" for l in DEMO_LINES],
        }
        for name, lines in variants.items():
            with self.subTest(name):
                path = os.path.join(self.tmp.name, f"{name}.conf")
                with open(path, "w", encoding="utf-8", newline="") as f:
                    f.write("\n".join(lines).rstrip("\n"))
                r = check_config(path)
                self.assertEqual(r.returncode, 0, r.stderr)
                self.assertEqual(r.stdout.split("\n", 1)[1], want)


class EffectiveConfiguration(unittest.TestCase):
    def test_printed_configuration_reads_back_the_same(self):
        first = check_config(DEMO)
        self.assertEqual(first.returncode, 0, first.stderr)
        self.assertTrue(first.stdout.startswith(f"; effective configuration of {DEMO}\n"))
        for line in first.stdout.splitlines():
            self.assertLessEqual(len(line), 198, f"printed line too long to read back: {line!r}")
        with tempfile.TemporaryDirectory(prefix="gritline-conf-") as tmp:
            path = os.path.join(tmp, "effective.conf")
            with open(path, "w", encoding="utf-8") as f:
                f.write(first.stdout)
            second = check_config(path)
            self.assertEqual(second.returncode, 0, second.stderr)
            self.assertEqual(second.stdout, first.stdout.replace(DEMO, path, 1))
            # And once more: a fixed point.
            path2 = os.path.join(tmp, "again.conf")
            with open(path2, "w", encoding="utf-8") as f:
                f.write(second.stdout)
            third = check_config(path2)
            self.assertEqual(third.stdout, second.stdout.replace(path, path2, 1))


class Documentation(unittest.TestCase):
    def test_every_key_is_documented(self):
        keys = subprocess.run([CONF_KEYS], capture_output=True, text=True, timeout=10, check=True).stdout.split("\n")
        with open(os.path.join(ROOT, "docs", "configuration.md"), encoding="utf-8") as f:
            doc = f.read()
        # Each section of the parser has a "## [section]" heading; each key a table row "| `key` |" under it.
        missing = []
        for entry in filter(None, keys):
            section, key = entry.split(" ")
            m = re.search(r"^## \[" + re.escape(section) + r"\]\s*$(.*?)(?=^## |\Z)", doc, re.M | re.S)
            if not m or not re.search(r"^\| `" + re.escape(key) + r"` \|", m.group(1), re.M):
                missing.append(entry)
        self.assertEqual(missing, [], "keys missing from docs/configuration.md")

    def test_annotated_example_is_the_demo(self):
        with open(os.path.join(ROOT, "docs", "configuration.md"), encoding="utf-8") as f:
            doc = f.read()
        m = re.search(r"^## Annotated example$.*?^```ini\n(.*?)^```$", doc, re.M | re.S)
        self.assertIsNotNone(m, "no ```ini block under '## Annotated example'")
        block = m.group(1)
        kept = [l for l in block.split("\n") if not l.startswith(";;")]
        self.assertEqual("\n".join(kept).rstrip("\n"), "\n".join(DEMO_LINES).rstrip("\n"),
                         "the example, without its ';;' notes, differs from conf/demo.conf")
        with tempfile.TemporaryDirectory(prefix="gritline-conf-") as tmp:
            path = os.path.join(tmp, "annotated.conf")
            with open(path, "w", encoding="utf-8") as f:
                f.write(block)
            r = check_config(path)
            self.assertEqual(r.returncode, 0, r.stderr)
            self.assertEqual(r.stdout.split("\n", 1)[1], check_config(DEMO).stdout.split("\n", 1)[1])


if __name__ == "__main__":
    unittest.main(verbosity=2)
