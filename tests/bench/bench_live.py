#!/usr/bin/python3
# bench_live.py: live polling benchmark: gritlined against gritline-sim on 127.0.0.1; CPU share, sample jitter, pass and alert latency, peak RSS.
"""Runs gritlined against gritline-sim (scenario tests/bench/bench.ini, speed 1)
on 127.0.0.1 at each poll interval asked (default 10 ms and 1 ms) and prints:

- the daemon's share of one core: utime + stime from /proc/PID/stat over the
  measured window, divided by the window (and the same from schedstat, in ns);
- the sample-interval jitter: |dt - period| over the recording's time column
  (timestamp = local: the daemon's clock right after each read), p50 and p99,
  and the share of polls that came late by more than one period;
- the delay from the end of a pass to its record in passes.csv, and from the
  sample that closed an alert to its line in events.csv and to the start of the
  exec hook (see "Latency" below);
- the daemon's peak RSS (VmHWM in /proc/PID/status).

Latency. A pass is over when the wheel leaves the work: the simulator's truth
gives that instant (end_time, sim clock = UNIX time at speed 1). The daemon
knows it only at the sample that closes the pass: the power must stay under
the end threshold for [segmentation] end_hold_s (0.1 s by default), then the
next poll closes it. Which sample that is, is found exactly by replaying the
daemon's own recording through the same pipeline (passclose: the files come
out byte for byte as live). This script stamps (CLOCK_REALTIME, the daemon's
timestamp clock) every line the moment inotify reports it appended. So:

    detection  = closing sample's time - truth end of contact  (the algorithm)
    processing = line on disk - closing sample's time          (the daemon's work)
    total      = line on disk - truth end of contact

The processing figure includes the write(2) and the wake-up of this script's
watcher thread (tens of microseconds), so it is an upper bound.

    bench_live.py --gritlined PATH --sim PATH --passclose PATH --hookstamp PATH \\
                  --conf tests/bench/bench.conf --scenario tests/bench/bench.ini \\
                  [--seconds 90] [--intervals 10,1] [--end-hold 0.1] [--rt PRIO] [--work DIR]
"""
import argparse
import ctypes
import ctypes.util
import os
import re
import shutil
import signal
import struct
import subprocess
import sys
import threading
import time

CLK_TCK = os.sysconf("SC_CLK_TCK")


def pct(values, q):
    """The q-th percentile (0..100), nearest rank; NaN for no values."""
    if not values:
        return float("nan")
    v = sorted(values)
    k = max(0, min(len(v) - 1, int(round(q / 100.0 * len(v) + 0.5)) - 1))
    return v[k]


def set_key(text, section, key, value):
    """Sets KEY = VALUE in [SECTION] of an INI text (adds the key, or the section, when missing)."""
    lines = text.splitlines()
    out, in_sec, done, seen_sec = [], False, False, False
    for line in lines:
        m = re.match(r"^\[(.+)\]\s*$", line)
        if m:
            if in_sec and not done:
                out.append("%s = %s" % (key, value))
                done = True
            in_sec = m.group(1) == section
            seen_sec = seen_sec or in_sec
        elif in_sec and re.match(r"^%s\s*=" % re.escape(key), line):
            out.append("%s = %s" % (key, value))
            done = True
            continue
        out.append(line)
    if in_sec and not done:
        out.append("%s = %s" % (key, value))
        done = True
    if not seen_sec:
        out += ["", "[%s]" % section, "%s = %s" % (key, value)]
    return "\n".join(out) + "\n"


class Watcher(threading.Thread):
    """Stamps every line appended to passes.csv, events.csv in a folder (inotify, IN_MODIFY)."""

    IN_MODIFY = 0x2
    NAMES = ("passes.csv", "events.csv")

    def __init__(self, folder):
        super().__init__(daemon=True)
        self.libc = ctypes.CDLL(ctypes.util.find_library("c"), use_errno=True)
        self.fd = self.libc.inotify_init1(os.O_CLOEXEC)
        if self.fd < 0:
            raise OSError(ctypes.get_errno(), "inotify_init1")
        if self.libc.inotify_add_watch(self.fd, folder.encode(), self.IN_MODIFY) < 0:
            raise OSError(ctypes.get_errno(), "inotify_add_watch " + folder)
        self.folder = folder
        self.offset = {}
        self.partial = {}
        self.lines = {n: [] for n in self.NAMES}  # (stamp, line)
        for n in self.NAMES:  # what is there already is not timed
            p = os.path.join(folder, n)
            self.offset[n] = os.path.getsize(p) if os.path.exists(p) else 0
            self.partial[n] = b""
        self.stop = False

    def run(self):
        while not self.stop:
            try:
                buf = os.read(self.fd, 65536)
            except OSError:
                return
            stamp = time.time()
            pos, names = 0, set()
            while pos + 16 <= len(buf):
                _wd, _mask, _cookie, ln = struct.unpack_from("iIII", buf, pos)
                name = buf[pos + 16:pos + 16 + ln].split(b"\0", 1)[0].decode()
                pos += 16 + ln
                if name in self.lines:
                    names.add(name)
            for n in names:
                with open(os.path.join(self.folder, n), "rb") as f:
                    f.seek(self.offset[n])
                    data = f.read()
                self.offset[n] += len(data)
                data = self.partial[n] + data
                *whole, self.partial[n] = data.split(b"\n")
                for line in whole:
                    self.lines[n].append((stamp, line.decode()))

    def close(self):
        self.stop = True
        os.close(self.fd)


def read_cpu(pid):
    """(utime + stime in s, schedstat ns summed over threads, VmHWM kB, VmRSS kB)."""
    with open("/proc/%d/stat" % pid) as f:
        fields = f.read().rsplit(")", 1)[1].split()
    ticks = int(fields[11]) + int(fields[12])  # utime, stime: fields 14 and 15 of proc(5)
    ns = 0
    for tid in os.listdir("/proc/%d/task" % pid):
        with open("/proc/%d/task/%s/schedstat" % (pid, tid)) as f:
            ns += int(f.read().split()[0])
    hwm = rss = 0
    with open("/proc/%d/status" % pid) as f:
        for line in f:
            if line.startswith("VmHWM:"):
                hwm = int(line.split()[1])
            elif line.startswith("VmRSS:"):
                rss = int(line.split()[1])
    return ticks / CLK_TCK, ns, hwm, rss


def wait_file(path, timeout):
    deadline = time.monotonic() + timeout
    while not os.path.exists(path):
        if time.monotonic() > deadline:
            raise RuntimeError("timed out waiting for " + path)
        time.sleep(0.01)


def csv_rows(path):
    with open(path) as f:
        head = f.readline().strip().split(",")
        return [dict(zip(head, line.rstrip("\n").split(","))) for line in f if line.strip()]


def run_one(a, interval_ms, work):
    shutil.rmtree(work, ignore_errors=True)
    os.makedirs(os.path.join(work, "run"))
    data = os.path.join(work, "data")
    procs = []
    try:
        sim = subprocess.Popen([a.sim, "--port", "0", "--port-file", os.path.join(work, "port"),
                                "--truth", os.path.join(work, "truth.csv"), a.scenario],
                               stdout=open(os.path.join(work, "sim.out"), "w"),
                               stderr=open(os.path.join(work, "sim.err"), "w"))
        procs.append(sim)
        wait_file(os.path.join(work, "port"), 10)
        port = int(open(os.path.join(work, "port")).read().strip())
        conf = open(a.conf).read()
        for sec, key, val in (("machine", "poll_interval_ms", "%g" % interval_ms),
                              ("machine", "timestamp", "local"),
                              ("machine", "data_dir", data),
                              ("machine", "runtime_dir", os.path.join(work, "run")),
                              ("modbus", "port", str(port)),
                              # rough passes (Aggr 30) above the window, finishing ones (17) in it:
                              # alerts raised and cleared every part
                              ("wheel.cx60-vitrified", "aggr_low", "12"),
                              ("wheel.cx60-vitrified", "aggr_high", "25"),
                              ("segmentation", "end_hold_s", "%g" % a.end_hold),
                              ("alerts", "hook", a.hookstamp)):
            conf = set_key(conf, sec, key, val)
        conf_path = os.path.join(work, "gritline.conf")
        with open(conf_path, "w") as f:
            f.write(conf)
        env = dict(os.environ, TZ="UTC")
        rt = ["chrt", "--fifo", str(a.rt)] if a.rt else []  # as CPUSchedulingPolicy=fifo would in the unit
        d = subprocess.Popen(rt + [a.gritlined, "-c", conf_path, "--socket", os.path.join(work, "run", "sock")],
                             stdout=open(os.path.join(work, "daemon.out"), "w"),
                             stderr=open(os.path.join(work, "daemon.err"), "w"), env=env)
        procs.append(d)
        # The shift folder appears with the first sample.
        machine_dir = os.path.join(data, "sg4")
        wait_file(machine_dir, 10)
        deadline = time.monotonic() + 10
        while not [x for x in os.listdir(machine_dir) if os.path.isdir(os.path.join(machine_dir, x))]:
            if time.monotonic() > deadline:
                raise RuntimeError("no shift folder in " + machine_dir)
            time.sleep(0.01)
        shift = [x for x in os.listdir(machine_dir) if os.path.isdir(os.path.join(machine_dir, x))][0]
        shift_dir = os.path.join(machine_dir, shift)
        wait_file(os.path.join(shift_dir, "passes.csv"), 10)
        w = Watcher(shift_dir)
        w.start()
        time.sleep(a.warmup)
        c0, n0, _, _ = read_cpu(d.pid)
        t0 = time.monotonic()
        time.sleep(a.seconds)
        c1, n1, hwm, rss = read_cpu(d.pid)
        t1 = time.monotonic()
        d.send_signal(signal.SIGTERM)
        d.wait(20)
        w.close()
        sim.send_signal(signal.SIGTERM)
        sim.wait(10)
    finally:
        for p in procs:
            if p.poll() is None:
                p.kill()
                p.wait()
    window = t1 - t0
    res = {"interval_ms": interval_ms, "window_s": window,
           "cpu_share": (c1 - c0) / window, "cpu_share_sched": (n1 - n0) * 1e-9 / window,
           "vmhwm_kb": hwm, "vmrss_kb": rss}

    # Jitter: the recording's time column after the first second.
    times = []
    with open(os.path.join(shift_dir, "samples.csv")) as f:
        for line in f:
            if line[:1].isdigit():
                times.append(float(line.split(",", 1)[0]))
    period = interval_ms / 1000.0
    times = [t for t in times if t > times[0] + 1.0] if times else []
    dts = [b - a_ for a_, b in zip(times, times[1:])]
    dev = [abs(x - period) for x in dts]
    res.update({"samples": len(times), "jitter_p50_ms": pct(dev, 50) * 1e3, "jitter_p99_ms": pct(dev, 99) * 1e3,
                "jitter_max_ms": max(dev) * 1e3 if dev else float("nan"),
                "late_share": sum(1 for x in dts if x > 2 * period) / max(1, len(dts))})

    # Latency: the closing samples from a replay of the daemon's recording.
    out = subprocess.run([a.passclose, os.path.join(shift_dir, "samples.csv"), conf_path,
                          os.path.join(work, "replay")], capture_output=True, text=True, env=env, check=True)
    close_pass, close_alert = {}, {}
    for line in out.stdout.splitlines():
        f = line.split(",")
        if f[0] == "pass":
            close_pass[int(f[1])] = (float(f[2]), float(f[3]))
        elif f[0] == "alert":
            close_alert[(f[1], f[2], f[3])] = float(f[4])
    truth_end = sorted(float(r["end_time"]) for r in csv_rows(os.path.join(work, "truth.csv")))
    det, proc, total = [], [], []
    for stamp, line in w.lines["passes.csv"]:
        f = line.split(",")
        num = int(f[0])
        if num not in close_pass:
            continue
        end_time, closed = close_pass[num]
        proc.append(stamp - closed)
        near = min(truth_end, key=lambda t: abs(t - end_time)) if truth_end else None
        if near is not None and abs(near - end_time) < 0.5:
            det.append(closed - near)
            total.append(stamp - near)
    aproc = []
    for stamp, line in w.lines["events.csv"]:
        f = line.split(",")
        if len(f) > 4 and f[3] in ("raised", "cleared"):
            key = (f[1], f[3], f[4])
            if key in close_alert:
                aproc.append(stamp - close_alert[key])
    hook = []
    hp = os.path.join(shift_dir, "hookstamps.csv")
    if os.path.exists(hp):
        for line in open(hp):
            kind, state, pas, started = line.strip().split(",")
            if (kind, state, pas) in close_alert:
                hook.append(float(started) - close_alert[(kind, state, pas)])
    for name, vals in (("pass_detection", det), ("pass_processing", proc), ("pass_total", total),
                       ("alert_processing", aproc), ("hook_start", hook)):
        res[name] = (len(vals), pct(vals, 50) * 1e3, pct(vals, 99) * 1e3, (max(vals) if vals else float("nan")) * 1e3)
    return res


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--gritlined", required=True)
    ap.add_argument("--sim", required=True)
    ap.add_argument("--passclose", required=True)
    ap.add_argument("--hookstamp", required=True)
    ap.add_argument("--conf", required=True)
    ap.add_argument("--scenario", required=True)
    ap.add_argument("--seconds", type=float, default=90.0, help="measured window per interval (default 90)")
    ap.add_argument("--warmup", type=float, default=3.0, help="seconds before the window (default 3)")
    ap.add_argument("--intervals", default="10,1", help="poll intervals in ms (default 10,1)")
    ap.add_argument("--end-hold", type=float, default=0.1, help="[segmentation] end_hold_s (default 0.1)")
    ap.add_argument("--rt", type=int, default=0, metavar="PRIO",
                    help="run the daemon under chrt --fifo PRIO (root; default 0: normal scheduling)")
    ap.add_argument("--work", default="/tmp/gritline-bench-live")
    a = ap.parse_args()
    # meson passes the built programs relative to the build folder; the hook must be absolute.
    for k in ("gritlined", "sim", "passclose", "hookstamp", "conf", "scenario"):
        setattr(a, k, os.path.abspath(getattr(a, k)))
    print("live polling: gritlined %s against gritline-sim %s (%s), %.0f s per interval, end_hold_s %g%s"
          % (a.gritlined, a.sim, os.path.basename(a.scenario), a.seconds, a.end_hold,
             ", daemon under SCHED_FIFO %d" % a.rt if a.rt else ""))
    print("load average at start: %.2f %.2f %.2f" % os.getloadavg())
    for ms in [float(x) for x in a.intervals.split(",")]:
        r = run_one(a, ms, os.path.join(a.work, "poll-%gms" % ms))
        print("\npoll_interval_ms = %g (%.0f Hz), window %.1f s, %d samples" % (ms, 1000.0 / ms, r["window_s"],
                                                                           r["samples"]))
        print("  CPU share of one core: %.3f %% (utime+stime), %.3f %% (schedstat)"
              % (100 * r["cpu_share"], 100 * r["cpu_share_sched"]))
        print("  sample interval |dt - %g ms|: p50 %.3f ms, p99 %.3f ms, max %.3f ms; late by > 1 period: %.3f %%"
              % (ms, r["jitter_p50_ms"], r["jitter_p99_ms"], r["jitter_max_ms"], 100 * r["late_share"]))
        for name, label in (("pass_detection", "pass end -> closing sample (detection)"),
                            ("pass_processing", "closing sample -> passes.csv line (processing)"),
                            ("pass_total", "pass end -> passes.csv line (total)"),
                            ("alert_processing", "closing sample -> events.csv alert line"),
                            ("hook_start", "closing sample -> exec hook started")):
            n, p50, p99, mx = r[name]
            print("  %-48s n %4d  p50 %8.3f ms  p99 %8.3f ms  max %8.3f ms" % (label, n, p50, p99, mx))
        print("  peak RSS (VmHWM): %d kB" % r["vmhwm_kb"])
    print("\nload average at end: %.2f %.2f %.2f" % os.getloadavg())
    return 0


if __name__ == "__main__":
    sys.exit(main())
