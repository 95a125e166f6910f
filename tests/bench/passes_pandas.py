#!/usr/bin/python3
# passes_pandas.py: the benchmark's comparison: passes and their specific energy from a recording, as an engineer would script it with pandas.
"""Reads a recording (samples.csv) with pandas and finds the grinding passes by
a power threshold (100 W) over a rolling idle level, integrates the net energy of each
pass (trapezoids), and computes its specific energy from the depth (infeed
step since the previous pass), the table speed and the grinding width.

    /usr/bin/python3 passes_pandas.py RECORDING [--width MM] [--out PASSES.csv]

Prints one summary line, and the time spent reading and computing, to stdout.
Debian 12's python3-pandas and python3-numpy; no gritline code.
"""
import argparse
import sys
import time

import numpy as np
import pandas as pd


def passes(df, width_mm, threshold_w=100.0, min_s=0.2):
    t = df["time"].to_numpy()
    p = df["spindle_power_w"].to_numpy()
    # Idle level: the median, over about 30 s around each sample, of the power
    # while the table stands (it cannot be grinding then).
    idle = (df["spindle_power_w"].where(df["work_speed_mm_min"] == 0.0)
            .rolling(3001, center=True, min_periods=1).median().ffill().bfill().to_numpy())
    net = p - idle
    on = net > threshold_w
    edges = np.diff(on.astype(np.int8), prepend=0, append=0)
    starts = np.flatnonzero(edges == 1)
    ends = np.flatnonzero(edges == -1)  # one past the last sample in contact
    keep = (t[ends - 1] - t[starts]) >= min_s
    starts, ends = starts[keep], ends[keep]
    # Energy: cumulative trapezoids, differenced at the pass edges.
    cum = np.concatenate(([0.0], np.cumsum(0.5 * (net[1:] + net[:-1]) * np.diff(t))))
    energy = cum[ends - 1] - cum[starts]
    duration = t[ends - 1] - t[starts]
    # Mean table speed over each pass, from a cumulative sum.
    cws = np.concatenate(([0.0], np.cumsum(df["work_speed_mm_min"].to_numpy())))
    vw_mm_s = (cws[ends] - cws[starts]) / (ends - starts) / 60.0
    infeed = df["infeed_position_mm"].to_numpy()[ends - 1]
    depth = np.diff(infeed, prepend=np.nan)
    depth[depth < 0.0] = np.nan  # a new part: the infeed went back
    volume = width_mm * depth * vw_mm_s * duration
    with np.errstate(divide="ignore", invalid="ignore"):
        u = np.where(volume > 0.0, energy / volume, np.nan)
    return pd.DataFrame({"start_time": t[starts], "end_time": t[ends - 1], "duration_s": duration,
                         "energy_j": energy, "depth_mm": depth, "specific_energy_j_mm3": u})


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("recording")
    ap.add_argument("--width", type=float, default=40.0, help="grinding width b, mm (default 40)")
    ap.add_argument("--out", help="write the passes to this CSV")
    a = ap.parse_args()
    t0 = time.perf_counter()
    df = pd.read_csv(a.recording, comment="#",
                     usecols=["time", "spindle_power_w", "work_speed_mm_min", "infeed_position_mm"])
    df = df.dropna(subset=["spindle_power_w"]).reset_index(drop=True)  # lost polls
    t1 = time.perf_counter()
    res = passes(df, a.width)
    t2 = time.perf_counter()
    if a.out:
        res.to_csv(a.out, index=False)
    u = res["specific_energy_j_mm3"]
    print(f"pandas: {len(df)} samples, {len(res)} passes, median specific energy {np.nanmedian(u):.2f} J/mm^3; "
          f"read {t1 - t0:.3f} s, compute {t2 - t1:.3f} s")
    return 0


if __name__ == "__main__":
    sys.exit(main())
