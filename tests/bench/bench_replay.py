#!/usr/bin/python3
# bench_replay.py: replay benchmark: throughput of `gritline replay --speed max` on an 8-hour shift at 100 Hz, against cat and pandas; RSS; cost growth.
"""Prints, for docs/performance.md:

1. replay throughput: `gritline replay --speed max` over an 8-hour shift at
   100 Hz (2.88 million samples, written by shiftgen), best and median of
   --runs runs: samples per second and bytes per second, against a plain
   sequential read of the same file (`cat FILE >/dev/null`) with a warm and a
   cold page cache (cold: the file's pages dropped with
   posix_fadvise(POSIX_FADV_DONTNEED), nothing else touched); and one replay
   from a cold cache;
2. the same computation with pandas (passes_pandas.py), timed in the same run,
   and the ratio;
3. peak RSS of the replay (ru_maxrss of wait4);
4. cost growth: replay time against samples (0.5, 1, 2 and 4 shifts) and
   against passes per hour (the same 8 hours with the machine's whole cycle
   run faster or slower, shiftgen --pace, so the shares of idle and contact
   time stay), each fitted with a straight line (least squares, R^2 and the
   largest relative residual).

Recordings are generated once into --work and reused while the generator's
arguments stay the same.
"""
import argparse
import json
import os
import platform
import shutil
import statistics
import subprocess
import sys
import time

TMP = "/tmp"


def machine_info(build_root):
    cpu = "?"
    with open("/proc/cpuinfo") as f:
        for line in f:
            if line.startswith("model name"):
                cpu = line.split(":", 1)[1].strip()
                break
    cc = "?"
    buildtype = "?"
    if build_root:
        try:
            with open(os.path.join(build_root, "meson-info", "intro-buildoptions.json")) as f:
                opts = {o["name"]: o["value"] for o in json.load(f)}
            buildtype = "%s (optimization %s)" % (opts.get("buildtype"), opts.get("optimization"))
        except (OSError, ValueError, KeyError):
            pass
        try:
            with open(os.path.join(build_root, "meson-info", "intro-targets.json")) as f:
                for t in json.load(f):
                    for src in t.get("target_sources", []):
                        if src.get("language") == "c" and src.get("compiler"):
                            cc = src["compiler"][0]
                            raise StopIteration
        except StopIteration:
            pass
        except (OSError, ValueError, KeyError):
            pass
    if cc != "?":
        try:
            cc = subprocess.run([cc, "--version"], capture_output=True, text=True).stdout.splitlines()[0]
        except (OSError, IndexError):
            pass
    return {"nproc": os.cpu_count(), "cpu": cpu, "kernel": platform.release(), "compiler": cc,
            "buildtype": buildtype, "load": os.getloadavg()}


def generate(a, name, args):
    """A recording made by shiftgen with args, reused when already made with the same args."""
    path = os.path.join(a.work, name + ".csv")
    info = path + ".info"
    want = " ".join(args)
    if os.path.exists(path) and os.path.exists(info):
        with open(info) as f:
            got = json.load(f)
        if got.get("args") == want:
            return path, got
    p = subprocess.run([a.shiftgen] + args + [path], capture_output=True, text=True, check=True)
    # "shiftgen: PATH: N samples, M passes begun, ..."
    words = p.stderr.split(": ", 2)[2].split(", ")
    got = {"args": want, "samples": int(words[0].split()[0]), "passes": int(words[1].split()[0]),
           "bytes": os.path.getsize(path)}
    with open(info, "w") as f:
        json.dump(got, f)
    return path, got


def drop_cache(path):
    """Drops the file's pages from the page cache (clean pages only: written back first)."""
    fd = os.open(path, os.O_RDONLY)
    try:
        os.fsync(fd)
        os.posix_fadvise(fd, 0, 0, os.POSIX_FADV_DONTNEED)
    finally:
        os.close(fd)


TIME = "/usr/bin/time"  # Debian's package time: a small parent, so ru_maxrss is the program's


def timed(argv, env=None, cwd=None, stdout=subprocess.DEVNULL):
    """Runs argv under /usr/bin/time; returns (wall s, user s, sys s, peak RSS kB, stderr text).
    The wall time is this script's clock around the run; user and sys come from wait4(2) on time,
    which holds those of its child, in microseconds (time prints them in 10 ms steps); the peak
    RSS is time's %M, the child's own (wait4 would also count the pages of this Python process
    that time was forked from)."""
    out = os.path.join(TMP, "time.out")
    t0 = time.perf_counter()
    p = subprocess.Popen([TIME, "-q", "-o", out, "-f", "%M"] + argv, stdout=stdout, stderr=subprocess.PIPE,
                         env=env, cwd=cwd)
    err = p.stderr.read().decode(errors="replace")
    _, status, ru = os.wait4(p.pid, 0)
    wall = time.perf_counter() - t0
    p.returncode = os.waitstatus_to_exitcode(status)
    if p.returncode != 0:
        raise RuntimeError("%s: exit %d: %s" % (" ".join(argv), p.returncode, err))
    with open(out) as f:
        rss = int(f.read().split()[-1])
    return wall, ru.ru_utime, ru.ru_stime, rss, err

def replay(a, path, out_name="out"):
    out = os.path.join(a.work, out_name)
    shutil.rmtree(out, ignore_errors=True)
    env = dict(os.environ, TZ="UTC")
    r = timed([a.gritline, "replay", path, "--config", a.conf, "--out", out, "--speed", "max"], env=env)
    passes = int(r[4].strip().splitlines()[-1].split(": ", 1)[1].split()[0])
    return r[:4] + (passes,)


def best_of(n, fn):
    """n runs of fn; the best is the one with the least CPU time (user + sys): on a shared
    machine the wall time also holds the time spent waiting for a CPU."""
    runs = [fn() for _ in range(n)]
    return min(runs, key=lambda r: r[1] + r[2]), runs


def fit(xs, ys):
    """Least-squares line y = a + b x: (a, b, R^2, largest |residual| / y)."""
    n = len(xs)
    mx, my = sum(xs) / n, sum(ys) / n
    sxx = sum((x - mx) ** 2 for x in xs)
    b = sum((x - mx) * (y - my) for x, y in zip(xs, ys)) / sxx
    a0 = my - b * mx
    ss_res = sum((y - a0 - b * x) ** 2 for x, y in zip(xs, ys))
    ss_tot = sum((y - my) ** 2 for y in ys)
    worst = max(abs(y - a0 - b * x) / y for x, y in zip(xs, ys))
    return a0, b, 1.0 - ss_res / ss_tot if ss_tot > 0 else 1.0, worst


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--gritline", required=True)
    ap.add_argument("--shiftgen", required=True)
    ap.add_argument("--conf", required=True)
    ap.add_argument("--pandas", help="passes_pandas.py (default: beside this script)")
    ap.add_argument("--build-root", help="meson build folder, for the build type and compiler shown")
    ap.add_argument("--work", default="/tmp/gritline-bench")
    ap.add_argument("--runs", type=int, default=7, help="replays of the shift; best and median shown (default 7)")
    ap.add_argument("--pandas-runs", type=int, default=3)
    ap.add_argument("--scale-runs", type=int, default=5, help="replays per point of the growth fits (default 5)")
    ap.add_argument("--no-pandas", action="store_true")
    ap.add_argument("--no-growth", action="store_true")
    a = ap.parse_args()
    here = os.path.dirname(os.path.abspath(__file__))
    a.pandas = a.pandas or os.path.join(here, "passes_pandas.py")
    if not a.build_root:
        a.build_root = os.path.dirname(os.path.dirname(os.path.abspath(a.gritline)))
    os.makedirs(a.work, exist_ok=True)
    global TMP
    TMP = a.work

    m = machine_info(a.build_root)
    print("machine: %d CPUs, %s, kernel %s, compiler %s, build %s" % (m["nproc"], m["cpu"], m["kernel"],
                                                                       m["compiler"], m["buildtype"]))
    print("load average at start: %.2f %.2f %.2f" % m["load"])

    shift, info = generate(a, "shift-8h", ["--hours", "8"])
    n, size = info["samples"], info["bytes"]
    print("\nrecording: %s: %d samples (8 h at 100 Hz), %.1f MB, %d passes begun" % (shift, n, size / 1e6,
                                                                                     info["passes"]))

    # 1. Sequential read, warm and cold.
    cat_warm, _ = best_of(a.runs, lambda: timed(["cat", shift]))
    cold = []
    for _ in range(3):
        drop_cache(shift)
        cold.append(timed(["cat", shift]))
    cat_cold = min(cold, key=lambda r: r[0])
    print("cat FILE >/dev/null: warm %.3f s (%.0f MB/s), cold %.3f s (%.0f MB/s) (best of %d / 3)"
          % (cat_warm[0], size / cat_warm[0] / 1e6, cat_cold[0], size / cat_cold[0] / 1e6, a.runs))

    # 1. Replay, warm (after the reads above) and cold.
    best, runs = best_of(a.runs, lambda: replay(a, shift))
    walls = sorted(r[0] for r in runs)
    cpus = sorted(r[1] + r[2] for r in runs)
    cpu = best[1] + best[2]
    print("gritline replay --speed max, %d runs; %d passes:" % (a.runs, best[4]))
    print("  wall: best %.3f s, median %.3f s; CPU (user + sys): best %.3f s (%.3f + %.3f), median %.3f s"
          % (walls[0], statistics.median(walls), cpu, best[1], best[2], statistics.median(cpus)))
    print("  throughput: %.2f million samples/s of CPU time, %.2f of wall time (best); %.0f MB/s of CPU time;"
          " cat reads the file %.1f times as fast (warm)" % (n / cpu / 1e6, n / walls[0] / 1e6, size / cpu / 1e6,
                                                            cpu / cat_warm[0]))
    print("  CPU: %.0f ns per sample" % (cpu / n * 1e9))
    drop_cache(shift)
    c = replay(a, shift)
    print("  from a cold page cache: wall %.3f s, CPU %.3f s" % (c[0], c[1] + c[2]))
    target = 1e7
    print("  target >= 10 million samples/s on one core (shift < 0.288 s of CPU): %s"
          % ("met" if n / cpu >= target else "NOT met"))
    print("peak RSS of the replay: %d kB (ru_maxrss, largest of the runs)" % max(r[3] for r in runs))

    # 2. pandas.
    if not a.no_pandas:
        pbest, pruns = best_of(a.pandas_runs,
                               lambda: timed(["/usr/bin/python3", a.pandas, shift]))
        print("\npandas (passes_pandas.py, whole process), %d runs: best wall %.3f s, CPU %.3f s (%.3f + %.3f);"
              " peak RSS %d kB" % (a.pandas_runs, pbest[0], pbest[1] + pbest[2], pbest[1], pbest[2], pbest[3]))
        out = subprocess.run(["/usr/bin/python3", a.pandas, shift], capture_output=True, text=True, check=True)
        print("  " + out.stdout.strip())
        print("  gritline replay is %.1f times faster in CPU time, %.1f times in wall time (best against best)"
              % ((pbest[1] + pbest[2]) / cpu, pbest[0] / walls[0]))

    # 5. Growth.
    if not a.no_growth:
        print("\ncost against samples (0.5 to 4 shifts of the same machine; best of %d):" % a.scale_runs)
        xs, ys = [], []
        for hours in (4, 8, 16, 32):
            path, inf = generate(a, "shift-%dh" % hours, ["--hours", str(hours)])
            b, _ = best_of(a.scale_runs, lambda: replay(a, path))
            xs.append(inf["samples"])
            ys.append(b[1] + b[2])
            print("  %2d h: %9d samples, %7.1f MB: CPU %.3f s (wall %.3f s), %.2f million samples/s, RSS %d kB,"
                  " %d passes" % (hours, inf["samples"], inf["bytes"] / 1e6, b[1] + b[2], b[0],
                                  inf["samples"] / (b[1] + b[2]) / 1e6, b[3], b[4]))
        a0, b0, r2, worst = fit(xs, ys)
        print("  fit CPU t = %.4f s + %.1f ns x samples; R^2 %.5f; largest residual %.1f %%" % (a0, b0 * 1e9, r2,
                                                                                             100 * worst))
        print("\ncost against passes per hour (8 h at 100 Hz, the same shares of idle and contact time:"
              " shiftgen --pace; best of %d):" % a.scale_runs)
        xs, ys = [], []
        for pace in ("0.5", "1", "2", "4"):
            path, inf = generate(a, "pace-%s" % pace, ["--hours", "8", "--pace", pace])
            b, _ = best_of(a.scale_runs, lambda: replay(a, path))
            xs.append(b[4] / 8.0)
            ys.append(b[1] + b[2])
            print("  pace %-3s: %5d passes (%4.0f per hour): CPU %.3f s (wall %.3f s)"
                  % (pace, b[4], b[4] / 8.0, b[1] + b[2], b[0]))
        a0, b0, r2, worst = fit(xs, ys)
        print("  fit CPU t = %.4f s + %.3f ms x passes per hour (= %.1f us per pass); R^2 %.4f;"
              " largest residual %.1f %%" % (a0, b0 * 1e3, b0 * 1e6 / 8.0, r2, 100 * worst))
    print("\nload average at end: %.2f %.2f %.2f" % os.getloadavg())
    return 0


if __name__ == "__main__":
    sys.exit(main())
