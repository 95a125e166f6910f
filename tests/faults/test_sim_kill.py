"""test_sim_kill.py: the controller dies 100 times under gritlined during one run.

gritline-sim is killed (SIGKILL, as a power cut of the controller would end it)
and started again on the same port with the same --epoch and --speed (so the run
goes on, docs/simulator.md "Time") 100 times, after outages of random length
(seeded). gritlined must live through every one, reconnect by itself with its
capped backoff, record each outage as failed polls (rows with the time alone,
docs/recording-format.md "Empty fields"), raise and clear communication_lost once
per outage whose failed polls span comm_lost_after_s and never for a shorter one
(docs/conditions.md), and `gritline replay` of the recording must write the same
passes.csv, events.csv and dress_cycles.csv as the live run.

The reconnect delays are read from outside the project: strace(1) records every
connect(2) of the daemon with the kernel's time of day.
"""
import os
import random
import re
import shutil
import signal
import sys
import time
import unittest

import livetest as L

SEED = 20260302
KILLS = 100
OUTAGE_S = (0.1, 0.5)    # real seconds without a controller (our choice: 100 of them fit in a minute)
UPTIME_S = (0.15, 0.3)   # real seconds with it, after gritlined has values again
COMM_LOST_AFTER_S = 0.3  # between the two: both kinds of outage occur
BACKOFF_MIN_S = 0.02
BACKOFF_MAX_S = 0.12
POLL_S = 0.01
# A poll starts on the next tick after the backoff ran out; a loaded machine adds some (our choice).
SLACK_S = 0.05 * L.SLOW

CONNECT_RE = re.compile(r"^(?:\d+ +)?(\d+\.\d+) connect\(\d+, \{sa_family=AF_INET, sin_port=htons\((\d+)\).*\) = "
                        r"(-?\d+)(?: (\w+))?")
SO_ERROR_RE = re.compile(r"^(?:\d+ +)?\d+\.\d+ getsockopt\(\d+, SOL_SOCKET, SO_ERROR, \[(\w+)\]")


def failed_runs(rows):
    """Runs of failed polls: [(index of the first, index of the last)]."""
    runs, start = [], None
    for i, r in enumerate(rows):
        empty = all(f == "" for f in r[1:])
        if empty and start is None:
            start = i
        elif not empty and start is not None:
            runs.append((start, i - 1))
            start = None
    if start is not None:
        runs.append((start, len(rows) - 1))
    return runs


def connects(path, port):
    """(time, ok) of each connect(2) to the port, from strace -ttt. libmodbus connects without
    blocking: connect(2) says EINPROGRESS, and getsockopt(SO_ERROR) tells afterwards whether the
    connection was made (0) or refused (strace names the error: ECONNREFUSED)."""
    out, pending = [], None
    with open(path, errors="replace") as f:
        for line in f:
            m = CONNECT_RE.match(line)
            if m and int(m.group(2)) == port:
                if m.group(4) == "EINPROGRESS":
                    pending = float(m.group(1))
                else:
                    out.append((float(m.group(1)), m.group(3) == "0"))
                continue
            m = SO_ERROR_RE.match(line)
            if m and pending is not None:
                out.append((pending, m.group(1) == "0"))
                pending = None
    return out


class SimKilled100Times(L.LiveCase):
    def test_hundred_kills(self):
        rng = random.Random(SEED)
        scen = L.scenario("short.ini")
        sim = self.start_sim(scen, 1.0)
        port, epoch = sim.port, sim.epoch
        conf = L.sim_conf(port, speed=1.0, extra={
            "machine": {"timestamp": "local", "comm_lost_after_s": COMM_LOST_AFTER_S},
            "modbus": {"backoff_min_ms": int(BACKOFF_MIN_S * 1000), "backoff_max_ms": int(BACKOFF_MAX_S * 1000),
                       "response_timeout_ms": 200}})
        # LeakSanitizer cannot work in a process under ptrace (strace); memcheck and the other
        # sanitized tests look for leaks.
        d = self.start_daemon(conf, env={"ASAN_OPTIONS": os.environ.get("ASAN_OPTIONS", "") + ":detect_leaks=0"})

        def values_now():
            try:
                import json
                st = json.loads(L.control(d.socket, "status\n"))
            except (OSError, ValueError):
                return False
            return st["connected"] and st["live"]["spindle_power_w"] is not None and st["last_sample_age_s"] < 0.1
        L.wait_for(values_now, 10, "the first values")
        tracer = None
        if shutil.which("strace"):
            trace = self.path("connect.trace")
            tracer = L.Proc(self, "strace", ["strace", "-f", "-ttt", "-e", "trace=connect,getsockopt", "-o", trace,
                                             "-p", str(d.pid)])
            time.sleep(0.5)  # strace attaches
        outages = []
        for i in range(KILLS):
            sim.stop(signal.SIGKILL)
            killed = time.time()
            time.sleep(rng.uniform(*OUTAGE_S))
            self.assertTrue(d.alive(), "gritlined died at outage %d:\n%s" % (i + 1, d.stderr()[-2000:]))
            starting = time.time()
            sim = self.start_sim(scen, 1.0, epoch=epoch, port=port)
            back = time.time()  # the simulator listened between starting and back
            outages.append((killed, starting, back))
            L.wait_for(values_now, 5, "values after outage %d" % (i + 1), interval=0.01)
            time.sleep(rng.uniform(*UPTIME_S))
        time.sleep(0.5)
        self.stop_daemon(d)
        sim.stop()
        if tracer:
            tracer.wait(10)

        folder = L.shift_folder(d.data_dir)
        L.whole_lines(self, folder)
        samples = os.path.join(folder, "samples.csv")
        rows, marks = L.read_recording(samples)
        self.assertEqual([m[1] for m in marks], ["start", "stop"], "one daemon run")
        times = [float(r[0]) for r in rows]
        self.assertEqual(times, sorted(times), "sample times go back")

        # Every outage is one run of failed polls that begins after the kill and ends when
        # the simulator was back, within the longest backoff.
        runs = failed_runs(rows)
        matched, delays = [], []
        for killed, starting, back in outages:
            mine = [r for r in runs if killed - 0.05 <= times[r[0]] <= back]
            self.assertEqual(len(mine), 1, "outage %.3f..%.3f: failed runs %r" % (killed, back, mine))
            first, last = mine[0]
            self.assertLess(last + 1, len(rows), "values after the outage")
            again = times[last + 1]
            self.assertGreaterEqual(again, starting)
            delays.append(again - back)
            self.assertLessEqual(again - back, BACKOFF_MAX_S + POLL_S + SLACK_S,
                                 "values %.3f s after the simulator was back" % (again - back))
            matched.append(mine[0])
        others = [r for r in runs if r not in matched]
        print("%d outages, %d failed runs (%d besides the outages: timeouts of a loaded machine); values "
              "again %.0f..%.0f ms after the test saw the simulator's port file (mean %.0f ms)" %
              (len(outages), len(runs), len(others), 1e3 * min(delays), 1e3 * max(delays),
               1e3 * sum(delays) / len(delays)), file=sys.stderr)

        # communication_lost (docs/conditions.md: raise_after 1, clear_after 1; gritlined raises it at
        # the first failed poll comm_lost_after_s after the first of the run, and clears it at the
        # next poll with values): one raised/cleared pair per run that long, none for a shorter one.
        events = L.file_rows(folder, "events.csv")
        comm = [(e["time"], e["state"]) for e in events if e["kind"] == "communication_lost"]
        expect, long_outages = [], 0
        for first, last in runs:
            late = [times[k] for k in range(first, last + 1) if times[k] - times[first] >= COMM_LOST_AFTER_S]
            if late:
                # events.csv writes times with 3 decimals (docs/log-formats.md)
                expect += [("%.3f" % late[0], "raised"), ("%.3f" % times[last + 1], "cleared")]
                long_outages += 1
        self.assertEqual(comm, expect)
        short = len(runs) - long_outages
        self.assertGreaterEqual(long_outages, 10, "outages longer than comm_lost_after_s")
        self.assertGreaterEqual(short, 10, "outages shorter than comm_lost_after_s")
        print("communication_lost raised and cleared %d times; %d shorter outages without it" %
              (long_outages, short), file=sys.stderr)

        # The daemon's log: one line when the link fails, one when it is back (gritlined.c).
        err = d.stderr()
        self.assertEqual(len(re.findall(r"connected to the controller", err)), KILLS + 1 + len(others), err[-2000:])
        L.check_sanitizers("gritlined", err)

        # Reconnect delays, from strace: between a refused connect and the next attempt the
        # daemon waits its backoff, doubling from backoff_min up to backoff_max (docs/modbus.md).
        if tracer:
            cs = connects(trace, port)
            waits = [b[0] - a[0] for a, b in zip(cs, cs[1:]) if not a[1]]
            self.assertGreaterEqual(len([c for c in cs if c[1]]), KILLS, "successful connects")
            self.assertTrue(waits, "refused connects")
            for w in waits:
                self.assertGreaterEqual(w, BACKOFF_MIN_S - 0.002)
                self.assertLessEqual(w, BACKOFF_MAX_S + POLL_S + SLACK_S)
            capped = [w for w in waits if w >= BACKOFF_MAX_S - 0.002]
            self.assertTrue(capped, "some outage reached the cap of the backoff")
            print("strace: %d connects, %d refused; waits after a refusal %.0f..%.0f ms (backoff %g..%g ms)" %
                  (len(cs), len(waits), 1e3 * min(waits), 1e3 * max(waits), BACKOFF_MIN_S * 1e3,
                   BACKOFF_MAX_S * 1e3), file=sys.stderr)
        else:
            print("strace not installed: reconnect delays checked from the recording only", file=sys.stderr)

        # The replay of the recording writes what the live run wrote.
        out = self.path("replay")
        self.run_tool([L.GRITLINE, "replay", samples, "--config", d.conf, "--out", out])
        rfolder = L.shift_folder(out)
        for name in ("passes.csv", "events.csv", "dress_cycles.csv"):
            with open(os.path.join(folder, name), "rb") as a, open(os.path.join(rfolder, name), "rb") as b:
                self.assertEqual(a.read(), b.read(), name + ": live and replay differ")
        passes = L.file_rows(folder, "passes.csv")
        print("replay identical: %d passes (%d flagged gap), %d samples, %d failed polls" %
              (len(passes), len([p for p in passes if "gap" in p["flags"].split("|")]), len(rows),
               sum(b - a + 1 for a, b in runs)), file=sys.stderr)


if __name__ == "__main__":
    unittest.main(verbosity=2)
