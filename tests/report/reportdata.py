"""reportdata.py: shift logs for the report tests, and their headline figures recomputed in Python.

make_logs() writes a synthetic recording of an 8-hour run (tests/report/recgen.c) and
feeds it through `gritline replay` with conf/demo.conf, so the logs are the daemon
pipeline's own: two shift folders, 2024-03-05_early and 2024-03-05_late (TZ=UTC).

figures() recomputes the report's headline figures from the CSV files with Python's
csv module only, following the definitions of docs/report.md, independently of the C
code. The aggressiveness inverse uses the definition of the aggressiveness number,
Aggr = 1e6 * (vw / vs) * sqrt(ae / de) with vw and vs in the same unit (docs/formulas.md).
"""
import csv
import math
import os
import re
import shutil
import statistics
import subprocess
import tempfile

GRITLINE = os.environ.get("GRITLINE", "gritline")
RECGEN = os.environ.get("RECGEN", "recgen")
DEMO_CONF = os.environ.get("DEMO_CONF", os.path.join(os.path.dirname(__file__), "..", "..", "conf", "demo.conf"))
START = 1709629200  # 2024-03-05T09:00:00Z


def run(args, **kw):
    kw.setdefault("capture_output", True)
    kw.setdefault("text", True)
    kw.setdefault("timeout", 60)
    env = dict(os.environ, TZ="UTC")
    return subprocess.run(args, env=env, **kw)


def make_logs(hours=8):
    """A temporary folder with logs/sg4/<shift>/; returns (tmp, machine_dir, [shift dirs])."""
    tmp = tempfile.mkdtemp(prefix="gritline-report-")
    rec = os.path.join(tmp, "samples.csv")
    r = run([RECGEN, rec, str(START), str(hours)])
    assert r.returncode == 0, r.stderr
    r = run([GRITLINE, "replay", rec, "--config", DEMO_CONF, "--out", os.path.join(tmp, "logs")])
    assert r.returncode == 0, r.stderr
    machine = os.path.join(tmp, "logs", "sg4")
    shifts = sorted(os.path.join(machine, d) for d in os.listdir(machine) if os.path.isdir(os.path.join(machine, d)))
    return tmp, machine, shifts


def remove(tmp):
    shutil.rmtree(tmp, ignore_errors=True)


def read_csv(path):
    if not os.path.exists(path):
        return []
    with open(path, newline="", encoding="utf-8") as f:
        return list(csv.DictReader(f))


def num(text):
    return float(text) if text != "" else math.nan


def median(values):
    return statistics.median(values) if values else math.nan


def mean(values):
    return sum(values) / len(values) if values else math.nan


def figures(folders, aggr_low=15.0, aggr_high=20.0):
    """The headline figures of one or more shift folders, as docs/report.md defines them."""
    passes, events, cycles = [], [], []
    for d in folders:
        passes += read_csv(os.path.join(d, "passes.csv"))
        events += read_csv(os.path.join(d, "events.csv"))
        cycles += read_csv(os.path.join(d, "dress_cycles.csv"))
    f = {"passes": len(passes)}
    f["passes_depth_known"] = sum(1 for p in passes if p["depth_of_cut_mm"] != "")
    spark = [p for p in passes if "spark_out" in p["flags"].split("|")]
    f["spark_out_passes"] = len(spark)
    aggr = [num(p["aggressiveness"]) for p in passes
            if "spark_out" not in p["flags"].split("|") and p["aggressiveness"] != "" and num(p["aggressiveness"]) > 0]
    f["aggr_passes"] = len(aggr)
    f["in_window_passes"] = sum(1 for a in aggr if aggr_low <= a <= aggr_high)
    f["below_window_passes"] = sum(1 for a in aggr if a < aggr_low)
    f["above_window_passes"] = sum(1 for a in aggr if a > aggr_high)
    f["window_share"] = f["in_window_passes"] / len(aggr) if aggr else math.nan
    f["aggressiveness_mean"] = mean(aggr)
    f["aggressiveness_median"] = median(aggr)
    vol = [p for p in passes if p["volume_mm3"] != ""]
    f["volume_mm3"] = sum(num(p["volume_mm3"]) for p in vol)
    f["volume_mm3_mm"] = sum(num(p["volume_mm3"]) * num(p["specific_removal_rate_mm2_s"]) / num(p["removal_rate_mm3_s"])
                             for p in vol if p["removal_rate_mm3_s"] != "" and p["specific_removal_rate_mm2_s"] != ""
                             and num(p["removal_rate_mm3_s"]) > 0)
    f["energy_j"] = sum(num(p["energy_j"]) for p in passes if p["energy_j"] != "")
    u = [num(p["specific_energy_j_mm3"]) for p in passes if p["specific_energy_j_mm3"] != ""]
    f["specific_energy_passes"] = len(u)
    f["specific_energy_mean_j_mm3"] = mean(u)
    f["specific_energy_median_j_mm3"] = median(u)
    burn = [num(p["burn_ratio"]) for p in passes if p["burn_ratio"] != ""]
    f["burn_ratio_max"] = max(burn) if burn else math.nan
    peaks = [num(p["net_power_peak_w"]) for p in passes if p["net_power_peak_w"] != ""]
    f["net_power_peak_max_w"] = max(peaks) if peaks else math.nan
    f["dresses"] = sum(1 for e in events if e["kind"] == "dress")
    raised = [e for e in events if e["state"] == "raised"]
    f["alerts_raised"] = len(raised)
    kinds = {}
    for e in raised:
        kinds[e["kind"]] = kinds.get(e["kind"], 0) + 1
    f["alerts_by_kind"] = kinds
    # a cycle written twice (same number and start) counts once, the later row
    last = {}
    for c in cycles:
        last[(c["cycle"], c["start_time"])] = c
    uniq = list(last.values())
    f["cycles"] = len(uniq)
    f["closed_cycles"] = sum(1 for c in uniq if c["ended_by"] != "end")
    lim = [num(c["limit_volume_mm3_mm"]) for c in uniq if c["limit_volume_mm3_mm"] != ""]
    f["limit_cycles"] = len(lim)
    f["limit_v_prime_median_mm3_mm"] = median(lim)
    f["limit_v_prime_min_mm3_mm"] = min(lim) if lim else math.nan
    f["limit_v_prime_max_mm3_mm"] = max(lim) if lim else math.nan
    judged = [c for c in uniq if c["forecast_right"] in ("yes", "no")]
    f["forecasts_judged"] = len(judged)
    f["forecasts_right"] = sum(1 for c in judged if c["forecast_right"] == "yes")
    cut = [p for p in passes if p["depth_of_cut_mm"] != "" and num(p["depth_of_cut_mm"]) > 0
           and p["work_speed_mm_min"] != ""]
    f["work_speed_median_mm_min"] = median([num(p["work_speed_mm_min"]) for p in cut])
    centre = 0.5 * (aggr_low + aggr_high)
    f["window_centre"] = centre
    known = [p for p in cut if p["wheel_speed_m_s"] != "" and p["equivalent_diameter_mm"] != ""
             and num(p["wheel_speed_m_s"]) > 0 and num(p["equivalent_diameter_mm"]) > 0]
    f["centre_passes"] = len(known)
    # vw = Aggr / 1e6 * vs * sqrt(de / ae), vs in mm/min (m/s * 60000)
    f["centre_work_speed_mm_min"] = median([centre / 1e6 * num(p["wheel_speed_m_s"]) * 60000.0
                                            * math.sqrt(num(p["equivalent_diameter_mm"]) / num(p["depth_of_cut_mm"]))
                                            for p in known])
    f["depth_median_mm"] = median([num(p["depth_of_cut_mm"]) for p in known])
    starts = [num(p["start_time"]) for p in passes]
    ends = [num(p["end_time"]) for p in passes]
    f["first_pass_start"] = min(starts) if starts else math.nan
    f["last_pass_end"] = max(ends) if ends else math.nan
    job = wheel = ""
    for e in events:
        if e["kind"] in ("monitoring", "config"):
            m = re.search(r"(?:^| )job ([A-Za-z0-9_-]+)", e["message"])
            job = m.group(1) if m else job
            m = re.search(r"(?:^| )wheel ([A-Za-z0-9_-]+)", e["message"])
            wheel = m.group(1) if m else wheel
    f["job"] = job or (uniq[-1]["job"] if uniq else "")
    f["wheel"] = wheel or (uniq[-1]["wheel"] if uniq else "")
    return f


NUMBER_KEYS = [
    "passes", "passes_depth_known", "spark_out_passes", "aggr_passes", "in_window_passes", "below_window_passes",
    "above_window_passes", "window_share", "volume_mm3", "volume_mm3_mm", "energy_j", "aggressiveness_mean",
    "aggressiveness_median", "specific_energy_passes", "specific_energy_mean_j_mm3", "specific_energy_median_j_mm3",
    "burn_ratio_max", "net_power_peak_max_w", "dresses", "alerts_raised", "cycles", "closed_cycles", "limit_cycles",
    "limit_v_prime_median_mm3_mm", "limit_v_prime_min_mm3_mm", "limit_v_prime_max_mm3_mm", "forecasts_judged",
    "forecasts_right", "work_speed_median_mm_min", "window_centre", "centre_passes", "centre_work_speed_mm_min",
    "depth_median_mm", "first_pass_start", "last_pass_end",
]


def same(a, b, rel=1e-9):
    """Equal numbers (NaN and None stand for 'unknown' alike)."""
    if a is None or (isinstance(a, float) and math.isnan(a)):
        return b is None or (isinstance(b, float) and math.isnan(b))
    if b is None:
        return False
    return math.isclose(a, b, rel_tol=rel, abs_tol=1e-9)
