#!/usr/bin/python3
"""test_guide.py: the installer's guide and the example configuration say what is true.

Run by meson as: test_guide.py GRITLINED GRITLINE SOURCE_ROOT.

- Every register table of docs/guide.md marked <!-- test_guide: ... --> is recomputed with
  Python's struct module (IEEE 754 single precision, two's complement, the big-endian byte
  order of each register that the Modbus Application Protocol specification V1.1b3, 4.2,
  prescribes) and decoded again with Debian's python3-pymodbus (BinaryPayloadDecoder, its own
  byte and word order switches).
- Every `gritline calc` run the guide shows is run, and each output line it quotes must be in
  the real output.
- conf/gritline.conf.example passes `gritlined --check-config`, and its data_dir and runtime_dir
  are the directories the systemd units give the daemon (StateDirectory=, RuntimeDirectory=,
  systemd.exec(5)).
"""
import os
import re
import shlex
import struct
import subprocess
import sys
import unittest

GRITLINED = sys.argv.pop(1) if len(sys.argv) > 1 else "gritlined"
GRITLINE = sys.argv.pop(1) if len(sys.argv) > 1 else "gritline"
ROOT = sys.argv.pop(1) if len(sys.argv) > 1 else os.path.join(os.path.dirname(__file__), "..", "..")

# Position in the bytes that travel of the value's bytes a..d (most significant first), for
# each order name as docs/modbus.md defines it.
TRAVEL = {"abcd": "abcd", "badc": "badc", "cdab": "cdab", "dcba": "dcba"}

try:
    from pymodbus.constants import Endian
    from pymodbus.payload import BinaryPayloadDecoder
    # pymodbus's names: byteorder within a register, wordorder between registers.
    PYMODBUS_ORDER = {"abcd": (Endian.Big, Endian.Big), "badc": (Endian.Little, Endian.Big),
                      "cdab": (Endian.Big, Endian.Little), "dcba": (Endian.Little, Endian.Little)}
except ImportError:  # the struct checks still run
    BinaryPayloadDecoder = None


def guide():
    with open(os.path.join(ROOT, "docs", "guide.md"), encoding="utf-8") as f:
        return f.read()


def marked_blocks(text, kind):
    """(marker arguments, block) for each <!-- test_guide: KIND ... --> and the lines after it."""
    out = []
    for m in re.finditer(r"<!-- test_guide: %s(.*?)-->\n" % re.escape(kind), text):
        rest = text[m.end():]
        end = rest.find("\n\n")
        out.append((m.group(1).split(), rest[:end if end >= 0 else len(rest)]))
    return out


def table_rows(block):
    rows = [[c.strip() for c in line.strip().strip("|").split("|")] for line in block.splitlines()
            if line.startswith("|")]
    return [r for r in rows[2:]]  # header and rule


def travel(value_bytes, order):
    """The bytes as they travel for a value's big-endian bytes (a, b, c, d) in the given order."""
    index = {"a": 0, "b": 1, "c": 2, "d": 3}
    return bytes(value_bytes[index[ch]] for ch in TRAVEL[order])


def registers(wire):
    """16-bit registers from the bytes on the wire, each high byte first (the spec, 4.2)."""
    return list(struct.unpack(">%dH" % (len(wire) // 2), wire))


def hexwords(cell):
    return [int(w, 16) for w in re.findall(r"0x[0-9A-Fa-f]{4}\b", cell)]


class Encodings(unittest.TestCase):
    def decode_pymodbus(self, regs, order, kind):
        if BinaryPayloadDecoder is None:
            return None
        byteorder, wordorder = PYMODBUS_ORDER[order]
        d = BinaryPayloadDecoder.fromRegisters(regs, byteorder=byteorder, wordorder=wordorder)
        return {"f32": d.decode_32bit_float, "s32": d.decode_32bit_int, "u32": d.decode_32bit_uint}[kind]()

    def test_f32_tables(self):
        blocks = marked_blocks(guide(), "f32")
        self.assertTrue(blocks)
        for args, block in blocks:
            value = float(args[0])
            vb = struct.pack(">f", value)
            rows = table_rows(block)
            self.assertEqual(sorted(r[0].strip("`") for r in rows), sorted(TRAVEL))
            for row in rows:
                order = row[0].strip("`")
                with self.subTest(value=value, order=order):
                    regs = hexwords(row[1]) + hexwords(row[2])
                    self.assertEqual(regs, registers(travel(vb, order)))
                    decoded = self.decode_pymodbus(regs, order, "f32")
                    if decoded is not None:
                        self.assertEqual(struct.pack(">f", decoded), vb)

    def test_misread_table(self):
        blocks = marked_blocks(guide(), "misread f32")
        self.assertTrue(blocks)
        for args, block in blocks:
            regs = [int(a, 16) for a in args]
            wire = struct.pack(">2H", *regs)
            for row in table_rows(block):
                order = row[0].strip("`")
                with self.subTest(order=order):
                    # The value whose bytes, sent in this order, are these registers.
                    index = {"a": 0, "b": 1, "c": 2, "d": 3}
                    vb = [0] * 4
                    for pos, ch in enumerate(TRAVEL[order]):
                        vb[index[ch]] = wire[pos]
                    value = struct.unpack(">f", bytes(vb))[0]
                    quoted = float(row[1])
                    self.assertAlmostEqual(value / quoted, 1.0, delta=0.005, msg="%s: %r" % (order, value))
                    decoded = self.decode_pymodbus(regs, order, "f32")
                    if decoded is not None:
                        self.assertEqual(decoded, value)

    def test_u16_tables(self):
        blocks = marked_blocks(guide(), "u16")
        self.assertTrue(blocks)
        for args, block in blocks:
            raw = int(args[0])
            for row in table_rows(block):
                self.assertEqual(int(row[1]), raw)
                self.assertEqual(hexwords(row[2]), registers(struct.pack(">H", raw)))
                # kW x 100: the quoted value is raw * 0.01.
                self.assertAlmostEqual(float(row[0].split()[0]), raw * 0.01)

    def test_32bit_integer_tables(self):
        for kind, fmt, scale in (("s32", ">i", 0.0001), ("u32", ">I", 0.001)):
            blocks = marked_blocks(guide(), kind)
            self.assertTrue(blocks, kind)
            for args, block in blocks:
                raw = int(args[0])
                vb = struct.pack(fmt, raw)
                for row in table_rows(block):
                    with self.subTest(kind=kind, raw=raw):
                        self.assertAlmostEqual(float(row[0].split()[0]), raw * scale)
                        number, _, hexed = row[1].partition("=")
                        self.assertEqual(int(number), raw)
                        self.assertEqual(int(hexed, 16), int.from_bytes(vb, "big"))
                        for order, cell in (("abcd", row[2]), ("cdab", row[3])):
                            regs = hexwords(cell)
                            self.assertEqual(regs, registers(travel(vb, order)), order)
                            decoded = self.decode_pymodbus(regs, order, kind)
                            if decoded is not None:
                                self.assertEqual(decoded, raw)


class Calc(unittest.TestCase):
    def test_quoted_output(self):
        blocks = re.findall(r"<!-- test_guide: calc -->\n```\n(.*?)```", guide(), re.S)
        self.assertGreaterEqual(len(blocks), 2)
        for block in blocks:
            lines = block.rstrip("\n").split("\n")
            self.assertTrue(lines[0].startswith("$ gritline calc "), lines[0])
            argv = shlex.split(lines[0][2:])
            run = subprocess.run([GRITLINE] + argv[1:], capture_output=True, text=True, timeout=30)
            self.assertEqual(run.returncode, 0, run.stderr)
            have = run.stdout.splitlines()
            for line in lines[1:]:
                with self.subTest(command=lines[0], line=line):
                    self.assertIn(line, have)


class ExampleConfig(unittest.TestCase):
    def test_checks_and_matches_units(self):
        path = os.path.join(ROOT, "conf", "gritline.conf.example")
        run = subprocess.run([GRITLINED, "--check-config", path], capture_output=True, text=True, timeout=30)
        self.assertEqual(run.returncode, 0, run.stderr)
        effective = dict(re.findall(r"(?m)^(\w+) = (.*)$", run.stdout.split("\n[modbus]")[0]))
        with open(os.path.join(ROOT, "conf", "gritlined.service"), encoding="utf-8") as f:
            unit = f.read()
        state = re.search(r"(?m)^StateDirectory=(\S+)$", unit).group(1)
        runtime = re.search(r"(?m)^RuntimeDirectory=(\S+)$", unit).group(1)
        self.assertEqual(effective["data_dir"], "/var/lib/" + state)
        self.assertEqual(effective["runtime_dir"], "/run/" + runtime)
        # The example sits in the demo shop, with a marked wheel speed on every wheel.
        self.assertIn("Alder Street Works", effective["description"])
        with open(path, encoding="utf-8") as f:
            text = f.read()
        for line in text.splitlines():
            self.assertLessEqual(len(line), 198, line)
        self.assertIn("marked maximum operating speed", text)


if __name__ == "__main__":
    unittest.main(verbosity=2)
