"""test_interop.py: gritlined against an independent Modbus server, every type and word order.

The server is tests/modbus/mb_server.py: Debian's python3-pymodbus 3.0 (run with
/usr/bin/python3, datastore zero_mode=True) serving tests/modbus/values.txt, each
value encoded by pymodbus's BinaryPayloadBuilder in its table, type and word
order. Six gritlined configurations map the recorded channels onto those values
(holding and input registers, coils and discrete inputs, u16 s16 u32 s32 f32 u64
in the orders abcd badc cdab dcba, one u64 clock, one NaN and one infinity), and
each samples.csv must hold exactly the served values, decoded (value = raw * scale
+ offset, then the unit into the recording's unit) and printed with the
recording's decimals (docs/recording-format.md). NaN and infinity give empty
fields.
"""
import os
import struct
import sys
import unittest

import livetest as L

VALUES = os.path.join(L.SRC, "tests", "modbus", "values.txt")

# (channel, table, address, type, order, scale, unit) per configuration; the unit is
# the recording's unless named. "-" order: 16-bit values and bits have none.
CONFIGS = {
    "u16-s16-u32": [
        ("spindle_power", "holding", 0, "u16", "-", 1, "W"),
        ("spindle_speed", "holding", 1, "s16", "-", 1, "rpm"),
        ("work_speed", "holding", 10, "u32", "abcd", 1, "mm/min"),
        ("infeed_position", "holding", 12, "u32", "badc", 1, "mm"),
        ("depth_of_cut", "holding", 14, "u32", "cdab", 1, "um"),
        ("wheel_diameter", "holding", 16, "u32", "dcba", 1, "mm"),
        ("dress_count", "holding", 20, "s32", "abcd", 1, "count"),
        ("grinding", "coil", 0, "u16", "-", 1, "bool"),
    ],
    "s32-f32": [
        ("spindle_power", "holding", 22, "s32", "badc", 1, "W"),
        ("spindle_speed", "holding", 24, "s32", "cdab", 1, "rpm"),
        ("work_speed", "holding", 26, "s32", "dcba", 1, "mm/min"),
        ("infeed_position", "holding", 30, "f32", "abcd", 1, "mm"),
        ("depth_of_cut", "holding", 32, "f32", "badc", 1, "mm"),
        ("wheel_diameter", "holding", 34, "f32", "cdab", 1, "mm"),
        ("dress_count", "holding", 36, "f32", "dcba", 1, "count"),
        ("grinding", "coil", 1, "u16", "-", 1, "bool"),
    ],
    "u64-clock-nan": [
        ("clock", "holding", 44, "u64", "badc", 1, "ms"),
        ("spindle_power", "holding", 40, "u64", "abcd", 1, "W"),
        ("spindle_speed", "holding", 48, "u64", "cdab", 1, "rpm"),
        ("work_speed", "holding", 52, "u64", "dcba", 1, "mm/min"),
        ("infeed_position", "holding", 60, "f32", "abcd", 1, "mm"),
        ("depth_of_cut", "input", 0, "u16", "-", 0.0001, "mm"),
        ("wheel_diameter", "input", 1, "s16", "-", 1, "mm"),
        ("dress_count", "input", 10, "u32", "abcd", 1, "count"),
        ("grinding", "coil", 7, "u16", "-", 1, "bool"),
    ],
    "input-u32-s32": [
        ("spindle_power", "input", 12, "u32", "badc", 1, "W"),
        ("spindle_speed", "input", 14, "u32", "cdab", 1, "rpm"),
        ("work_speed", "input", 16, "u32", "dcba", 1, "mm/min"),
        ("infeed_position", "input", 20, "s32", "abcd", 0.0001, "mm"),
        ("depth_of_cut", "input", 22, "s32", "badc", 1, "mm"),
        ("wheel_diameter", "input", 24, "s32", "cdab", 1, "mm"),
        ("dress_count", "input", 26, "s32", "dcba", 1, "count"),
        ("grinding", "discrete", 3, "u16", "-", 1, "bool"),
    ],
    "input-f32-u64": [
        ("spindle_power", "input", 30, "f32", "abcd", 1, "W"),
        ("spindle_speed", "input", 32, "f32", "badc", 1, "rpm"),
        ("work_speed", "input", 34, "f32", "cdab", 1, "mm/min"),
        ("infeed_position", "input", 36, "f32", "dcba", 1, "mm"),
        ("depth_of_cut", "input", 40, "u64", "abcd", 1, "mm"),
        ("wheel_diameter", "input", 44, "u64", "badc", 1, "mm"),
        ("dress_count", "input", 48, "u64", "cdab", 1, "count"),
        ("grinding", "discrete", 0, "u16", "-", 1, "bool"),
    ],
    "bits-inf": [
        ("spindle_power", "input", 52, "u64", "dcba", 1, "kW"),
        ("spindle_speed", "input", 60, "f32", "cdab", 1, "rpm"),
        ("work_speed", "discrete", 1999, "u16", "-", 1, "mm/min"),
        ("dress_count", "coil", 300, "u16", "-", 1, "count"),
        ("wheel_diameter", "coil", 1999, "u16", "-", 1, "mm"),
        ("grinding", "discrete", 1500, "u16", "-", 1, "bool"),
    ],
}

FIELD = {"spindle_power": "spindle_power_w", "spindle_speed": "spindle_speed_rpm",
         "work_speed": "work_speed_mm_min", "infeed_position": "infeed_position_mm",
         "depth_of_cut": "depth_of_cut_mm", "wheel_diameter": "wheel_diameter_mm",
         "dress_count": "dress_count", "grinding": "grinding", "clock": "time"}


def served_values():
    """values.txt: {(table, address): (type, number)}; the number as the type holds it."""
    out = {}
    with open(VALUES) as f:
        for line in f:
            words = line.split("#", 1)[0].split()
            if not words:
                continue
            table, addr, typ, _order, text = words
            if typ == "f32":
                # IEEE 754 binary32 (what pymodbus packs): the nearest float to the text.
                number = struct.unpack(">f", struct.pack(">f", float(text)))[0]
            elif typ == "bit":
                number = float(text == "1")
            else:
                number = float(int(text))
            out[(table, int(addr))] = (typ, number)
    return out


def expected_text(channel, table, address, typ, scale, unit, served):
    """The recording's text for one channel (empty when the value is not finite)."""
    styp, x = served[(table, address)]
    if table in ("holding", "input"):
        assert styp == typ, (channel, table, address, styp, typ)
    v = x * scale + 0.0
    v = {"um": v / 1000.0, "kW": v * 1000.0, "ms": v / 1000.0, "bool": 1.0 if v != 0.0 else 0.0}.get(unit, v)
    if v != v or v in (float("inf"), float("-inf")):
        return ""
    return "%.*f" % (L.SAMPLE_DECIMALS[FIELD[channel]], v)


def config_for(port, channels):
    sections = {
        "machine": {"name": "sg4", "poll_interval_ms": "20", "job": "plate-200", "wheel": "cx60-vitrified",
                    "timestamp": "controller" if any(c[0] == "clock" for c in channels) else "local"},
        "modbus": {"transport": "tcp", "host": "127.0.0.1", "port": str(port), "unit_id": "1",
                   "response_timeout_ms": "500", "backoff_min_ms": "100", "backoff_max_ms": "500"},
    }
    for ch, table, addr, typ, order, scale, unit in channels:
        sec = {"table": table, "address": str(addr), "unit": unit}
        if table in ("holding", "input"):
            sec["type"] = typ
            if order != "-":
                sec["order"] = order
        if scale != 1:
            sec["scale"] = "%g" % scale
        sections["channel." + ch] = sec
    sections["job.plate-200"] = {"geometry": "surface", "width_mm": "30"}
    sections["wheel.cx60-vitrified"] = {"diameter_mm": "400", "max_speed_m_s": "35"}
    sections["shifts"] = {"starts": L.shift_start_hhmm(), "names": "day"}
    return L.conf_text(sections)


class Interop(L.LiveCase):
    def test_every_type_and_order_from_pymodbus(self):
        server = L.Proc(self, "mb_server", [L.PYTHON, L.MB_SERVER, "--values", VALUES, "--port", "0"])

        def port():
            if not server.alive():
                if server.proc.returncode == 77:
                    self.skipTest("pymodbus not available: " + server.stderr())
                raise AssertionError("mb_server.py ended: " + server.stderr())
            for line in server.stdout().splitlines():
                if line.startswith("PORT "):
                    return int(line.split()[1])
            return None
        mb_port = L.wait_for(port, 15, "the pymodbus server")
        served = served_values()
        daemons = {}
        for name, channels in CONFIGS.items():
            daemons[name] = self.start_daemon(config_for(mb_port, channels), name=name, args=("--run-for", "2"))
        checked = 0
        for name, d in daemons.items():
            self.assertEqual(d.wait(20), 0, name + ": " + d.stderr())
            L.check_sanitizers("gritlined", d.stderr())
            folder = L.shift_folder(d.data_dir)
            L.whole_lines(self, folder)
            rows, marks = L.read_recording(os.path.join(folder, "samples.csv"))
            self.assertGreaterEqual(len(rows), 10, name)
            want = {}
            for ch, table, addr, typ, order, scale, unit in CONFIGS[name]:
                want[L.SAMPLE_COLUMNS.index(FIELD[ch])] = expected_text(ch, table, addr, typ, scale, unit, served)
            for col in range(1, len(L.SAMPLE_COLUMNS)):
                want.setdefault(col, "")  # a channel not configured is empty
            for r in rows:
                for col, text in want.items():
                    self.assertEqual(r[col], text, "%s: column %s" % (name, L.SAMPLE_COLUMNS[col]))
            checked += len(want)
            print("%s: %d rows, %s" % (name, len(rows), ",".join(rows[-1])), file=sys.stderr)
        print("%d channel mappings checked against pymodbus's encoding" % checked, file=sys.stderr)
        server.stop()


if __name__ == "__main__":
    unittest.main(verbosity=2)
