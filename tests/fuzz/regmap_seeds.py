#!/usr/bin/python3
"""regmap_seeds.py: writes the seed inputs of fuzz_regmap in the layout fuzz_regmap.c reads.

    /usr/bin/python3 tests/fuzz/regmap_seeds.py tests/fuzz/corpus/regmap

The maps are conf/demo.conf's (gritline-sim's register map) and variants with
every table, type, order and unit; register contents are plausible readings of
Alder Street Works' sg4 and edge patterns (NaN and infinity in f32, all ones).
"""
import struct
import sys

CHANNELS = ["spindle_power", "spindle_speed", "wheel_speed", "work_speed", "infeed_position",
            "depth_of_cut", "wheel_diameter", "dress_count", "grinding", "clock"]
TABLES = ["holding", "input", "coil", "discrete"]
TYPES = ["u16", "s16", "u32", "s32", "f32", "u64"]
WORDS = {"u16": 1, "s16": 1, "u32": 2, "s32": 2, "f32": 2, "u64": 4}
ORDERS = ["abcd", "badc", "cdab", "dcba"]
UNITS = ["W", "kW", "hp", "rpm", "m/s", "ft/min", "mm/min", "mm/s", "m/min", "in/min",
         "mm", "um", "in", "count", "bool", "s", "ms"]


def number(x):
    """A number as fuzz_regmap's number() reads it: 0xff then the IEEE 754 bits."""
    return b"\xff" + struct.pack(">d", x)


def encode(channels, values, gap=8, max_regs=0, max_bits=0, fallback=400.0, ok=0xffff, base=0):
    """channels: name -> dict(table, type, order, unit, address, scale, offset, min, max).
    values: name -> raw integer value of the channel (placed at its address)."""
    out = bytearray([gap % 130, max_regs % 130]) + struct.pack(">H", max_bits % 2100)
    out += number(fallback) + bytes([ok & 0xff, ok >> 8]) + struct.pack(">H", base)
    for name in CHANNELS:
        c = channels.get(name)
        if c is None:
            out += b"\x00\x00\x00"
            continue
        rng = "min" in c
        flags = 1 | (2 if rng else 0) | (TABLES.index(c.get("table", "holding")) << 2)
        flags |= 0x10 if "unit" in c else 0
        flags |= 0x20 if ("scale" in c or "offset" in c) else 0
        out.append(flags)
        out.append(ORDERS.index(c.get("order", "abcd")) | TYPES.index(c.get("type", "u16")) << 2)
        if "unit" in c:
            out.append(UNITS.index(c["unit"]))
        out.append(0xff)
        out += struct.pack(">H", c["address"])
        if flags & 0x20:
            out += number(c.get("scale", 1.0)) + number(c.get("offset", 0.0))
        if rng:
            out += number(c["min"]) + number(c["max"])
    out += struct.pack(">4H", 0x4148, 0x0000, 0x7fc0, 0xffff)  # words for RMP_Assemble
    out += bytes([TYPES.index("f32")]) + number(1.0) + number(0.0) + struct.pack(">Q", 0x7f800000)
    # Blocks as RMP_MakePlan makes them: per table, by address, greedy.
    limit_regs = max_regs or 125
    limit_bits = max_bits or 2000
    for t in TABLES:
        chans = sorted((c["address"], n) for n, c in channels.items() if c.get("table", "holding") == t)
        blocks = []
        for addr, n in chans:
            c = channels[n]
            width = 1 if t in ("coil", "discrete") else WORDS[c.get("type", "u16")]
            limit = limit_bits if t in ("coil", "discrete") else limit_regs
            end = addr + width
            if blocks and (addr <= blocks[-1][1] or addr - blocks[-1][1] <= gap) \
                    and max(end, blocks[-1][1]) - blocks[-1][0] <= limit:
                blocks[-1][1] = max(end, blocks[-1][1])
                blocks[-1][2].append(n)
            else:
                blocks.append([addr, end, [n]])
        for start, end, names in blocks:
            if t in ("coil", "discrete"):
                bits = [0] * (end - start)
                for n in names:
                    bits[channels[n]["address"] - start] = 1 if values.get(n, 0) else 0
                for i in range(0, len(bits), 8):
                    out.append(sum(b << k for k, b in enumerate(bits[i:i + 8])))
                continue
            regs = [0] * (end - start)
            for n in names:
                c = channels[n]
                w = WORDS[c.get("type", "u16")]
                raw = values.get(n, 0) & ((1 << (16 * w)) - 1)
                words = [(raw >> (16 * (w - 1 - k))) & 0xffff for k in range(w)]
                order = c.get("order", "abcd") if w > 1 else "abcd"
                if order in ("cdab", "dcba"):
                    words.reverse()
                if order in ("badc", "dcba"):
                    words = [((x & 0xff) << 8) | (x >> 8) for x in words]
                regs[c["address"] - start:c["address"] - start + w] = words
            out += b"".join(struct.pack(">H", r) for r in regs)
    return bytes(out)


def f32(x):
    return struct.unpack(">I", struct.pack(">f", x))[0]


# conf/demo.conf: gritline-sim's map.
DEMO = {
    "clock": dict(address=0, type="u64", unit="ms"),
    "spindle_power": dict(address=4, type="f32", order="abcd", unit="W"),
    "spindle_speed": dict(address=6, type="f32", unit="rpm"),
    "work_speed": dict(address=8, type="f32", unit="mm/min"),
    "infeed_position": dict(address=10, type="s32", scale=0.0001, unit="mm"),
    "wheel_diameter": dict(address=14, type="f32", unit="mm"),
    "dress_count": dict(address=16, type="u16", unit="count"),
}
DEMO_VALUES = {"clock": 1796168143816, "spindle_power": f32(2692.8), "spindle_speed": f32(1199.7),
               "work_speed": f32(2400.0), "infeed_position": 150, "wheel_diameter": f32(399.9977),
               "dress_count": 3}

# Every table, type and order, other units, ranges, a wheel speed turned into rpm.
SERIAL = {
    "spindle_power": dict(table="input", address=100, type="s32", order="cdab", scale=0.01, unit="kW",
                          min=0.0, max=30.0),
    "wheel_speed": dict(table="input", address=102, type="u16", scale=0.1, unit="ft/min"),
    "wheel_diameter": dict(address=200, type="u32", order="badc", unit="um", min=1e5, max=5e5),
    "work_speed": dict(address=202, type="f32", order="dcba", unit="m/min"),
    "infeed_position": dict(address=204, type="s16", scale=0.001, unit="in"),
    "depth_of_cut": dict(address=205, type="u16", unit="um"),
    "dress_count": dict(address=206, type="u64", order="abcd", unit="count"),
    "grinding": dict(table="coil", address=3, unit="bool"),
    "clock": dict(table="input", address=300, type="u32", order="badc", unit="s"),
}
SERIAL_VALUES = {"spindle_power": 750, "wheel_speed": 65535, "wheel_diameter": 250000,
                 "work_speed": f32(1.2), "infeed_position": -1200, "depth_of_cut": 10, "dress_count": 1 << 40,
                 "grinding": 1, "clock": 1796191200}

SEEDS = {
    "demo-map": encode(DEMO, DEMO_VALUES),
    "demo-map-nan-power": encode(DEMO, dict(DEMO_VALUES, spindle_power=0x7fc00000)),
    "demo-map-inf-speed": encode(DEMO, dict(DEMO_VALUES, spindle_speed=0x7f800000, clock=(1 << 64) - 1)),
    "serial-map": encode(SERIAL, SERIAL_VALUES, gap=4, max_regs=32),
    "serial-map-out-of-range": encode(SERIAL, dict(SERIAL_VALUES, spindle_power=-5, wheel_diameter=1)),
    "serial-map-no-diameter": encode(SERIAL, SERIAL_VALUES, fallback=0.0, ok=0x1),
    "hp-discrete": encode({"spindle_power": dict(address=65534, type="s32", unit="hp", scale=1e12),
                           "grinding": dict(table="discrete", address=1999, unit="bool"),
                           "wheel_speed": dict(address=0, type="f32", order="cdab", unit="m/s")},
                          {"spindle_power": 0x80000000, "grinding": 1, "wheel_speed": f32(35.0)},
                          gap=0, max_regs=1, max_bits=1),
}

if __name__ == "__main__":
    for name, data in SEEDS.items():
        with open(f"{sys.argv[1]}/{name}", "wb") as f:
            f.write(data)
