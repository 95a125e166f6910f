#!/usr/bin/python3
"""gen_recording.py: writes a synthetic recording (docs/recording-format.md) with known passes.

Surface grinding, 100 Hz: passes of 2 s every 3 s, parts of 10 passes at 0.01 mm, an idle
baseline with drift and noise, and a wheel that dulls: the specific energy of pass k is
u0 * r(k) with r rising linearly from `onset` to `r_end` at the last pass. Invented data for
tests only; deterministic for a seed.
"""
import argparse
import math
import random

HEADER = ("time,spindle_power_w,spindle_speed_rpm,work_speed_mm_min,infeed_position_mm,"
          "depth_of_cut_mm,wheel_diameter_mm,dress_count,grinding")


def dull_ratio(k, passes, onset, r_end):
    if k < onset:
        return 1.0
    return 1.0 + (r_end - 1.0) * (k - onset) / max(1, passes - 1 - onset)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("out")
    ap.add_argument("--passes", type=int, default=260)
    ap.add_argument("--onset", type=int, default=40)
    ap.add_argument("--r-end", type=float, default=1.5)
    ap.add_argument("--seed", type=int, default=3)
    ap.add_argument("--start", type=float, default=1767254400.0)  # 2026-01-01T08:00:00Z
    args = ap.parse_args()
    rnd = random.Random(args.seed)
    rate = 100.0
    # Aggr = 17.5 at these settings: inside a 15-20 window; u* about 30 J/mm^3.
    width, depth, vw_mm_min, u0 = 20.0, 0.01, 5000.0, 20.0
    q = width * depth * vw_mm_min / 60.0  # mm^3/s
    rpm, ds = 2300.0, 250.0
    t0 = args.start
    with open(args.out, "w") as f:
        f.write("# format: gritline-samples/1\n# machine: testbench\n# geometry: surface\n")
        f.write("# grinding_width_mm: %g\n# wheel_diameter_mm: %g\n" % (width, ds))
        iso = __import__("datetime").datetime.utcfromtimestamp(t0).strftime("%Y-%m-%dT%H:%M:%S.000Z")
        f.write("# started: %s\n# wheel: test-wheel\n# job: test-job\n%s\n" % (iso, HEADER))
        f.write("# mark: %.6f start synthetic state=fresh\n" % t0)
        n = int((args.passes * 3.0 + 3.0) * rate)
        for i in range(n):
            t = t0 + i / rate
            k = int((t - t0 - 1.0) // 3.0)          # pass index whose window holds t
            within = (t - t0 - 1.0) - 3.0 * k
            power = 1500.0 + 0.02 * (t - t0) + rnd.gauss(0.0, 6.0)
            grinding = 0 <= k < args.passes and 0.0 <= within < 2.0
            if grinding:
                power += u0 * dull_ratio(k, args.passes, args.onset, args.r_end) * q
            # The infeed steps down at each reversal; a new part every 10 passes.
            pos = 5.0 + depth * ((k % 10) + 1) if k >= 0 else 5.0
            f.write("%.6f,%.1f,%.1f,%.2f,%.6f,,%.4f,0,\n" % (t, power, rpm, vw_mm_min, pos, ds))


if __name__ == "__main__":
    main()
