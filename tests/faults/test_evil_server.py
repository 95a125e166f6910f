"""test_evil_server.py: gritlined against a Modbus TCP server that misbehaves (evil_server.py).

The server, written on raw sockets from the Modbus Application Protocol
Specification V1.1b3 and the Modbus Messaging on TCP/IP Implementation Guide
V1.0b, answers normally, then in turn: not at all mid-request, half an answer,
byte by byte slower than the timeouts, with exception 04, with a wrong
transaction identifier, with a wrong unit identifier, with NaN, infinity and
3.0e38 as spindle power, and with frozen registers; a second of normal answers
lies between two faults.

What the documentation promises (docs/modbus.md "Polling, timeouts, backoff",
"Frozen values"; docs/recording-format.md "Empty fields"; docs/conditions.md):
- no crash and no hang: the poll loop keeps its period (a poll blocks at most
  about one response timeout) and the control socket answers throughout;
- a poll that got no value is a row with the time alone; a value that is NaN,
  infinite or outside the channel's min..max is an empty field;
- communication_lost is raised once per fault that left comm_lost_after_s
  without values, and cleared by the next values; never for rejected values;
- stale_data is raised when spindle power stays the same bit for bit for
  stale_after_s, and cleared when it moves again;
- the replay of the recording writes the same passes.csv and events.csv.
"""
import json
import os
import sys
import time
import unittest

import livetest as L
from evil_server import EvilServer

PERIOD_S = 0.01
TIMEOUT_S = 0.1          # response_timeout_ms 100; the byte timeout is the same (mbclient.c)
COMM_LOST_AFTER_S = 0.5
STALE_AFTER_S = 0.5
FAULT_S = 1.5
NORMAL_S = 1.2
MAX_POWER_W = 50000      # [channel.spindle_power] max: huge values are dropped
# (mode, what its rows hold): "none" no value at all, "power" the power alone missing, "all" values.
FAULTS = [("silent", "none"), ("half", "none"), ("trickle", "none"), ("exception", "none"), ("tid", "none"),
          ("unit", "none"), ("length", "none"), ("nan", "power"), ("inf", "power"), ("huge", "power"), ("freeze", "all")]


class EvilServerFaults(L.LiveCase):
    def test_misbehaving_server(self):
        srv = EvilServer(trickle_s=0.15)
        self.addCleanup(srv.stop)
        conf = L.sim_conf(srv.port, extra={
            "machine": {"timestamp": "local", "comm_lost_after_s": COMM_LOST_AFTER_S,
                        "poll_interval_ms": int(PERIOD_S * 1000)},
            "modbus": {"response_timeout_ms": int(TIMEOUT_S * 1000), "backoff_min_ms": 50, "backoff_max_ms": 200,
                       "stale_after_s": STALE_AFTER_S},
            "channel.spindle_power": {"min": 0, "max": MAX_POWER_W}})
        d = self.start_daemon(conf)
        L.wait_for(lambda: L.try_shift_folder(d.data_dir), 10, "the shift folder")
        phases, replies = [], []

        def run_phase(mode, seconds):
            srv.mode = mode
            t0 = time.time()
            while time.time() - t0 < seconds:
                # The control socket is served by the poll loop: it answers while the link fails.
                q = time.monotonic()
                st = json.loads(L.control(d.socket, "status\n"))
                replies.append(time.monotonic() - q)
                self.assertTrue(d.alive(), d.stderr()[-2000:])
                time.sleep(0.1)
            phases.append((mode, t0, time.time(), st))

        run_phase("normal", NORMAL_S)
        for mode, _ in FAULTS:
            run_phase(mode, FAULT_S)
            run_phase("normal", NORMAL_S)
        self.stop_daemon(d)
        srv.stop()

        folder = L.shift_folder(d.data_dir)
        L.whole_lines(self, folder)
        samples = os.path.join(folder, "samples.csv")
        rows, marks = L.read_recording(samples)
        times = [float(r[0]) for r in rows]
        self.assertEqual(times, sorted(times))
        self.assertEqual([m[1] for m in marks], ["start", "stop"])
        events = L.file_rows(folder, "events.csv")

        def rows_in(t0, t1):
            return [r for r in rows if t0 <= float(r[0]) < t1]

        def raised(kind, t0, t1):
            return [e for e in events if e["kind"] == kind and t0 <= float(e["time"]) < t1]

        kinds = dict(FAULTS)
        report = []
        for i, (mode, t0, t1, st) in enumerate(phases):
            # The first poll of a phase may still see the one before; the link needs a backoff to recover.
            inner = rows_in(t0 + 0.35, t1)
            self.assertTrue(inner, "%s: no rows at all (poll loop hung?)" % mode)
            step = max(b - a for a, b in zip(times, times[1:]) if t0 <= a < t1)
            # A poll blocks at most the response timeout (or one byte timeout per byte of a trickle:
            # libmodbus gives up at the first late byte), then the next tick comes (docs/modbus.md).
            self.assertLessEqual(step, TIMEOUT_S + 2 * PERIOD_S + 0.05 * L.SLOW, "%s: a poll stalled" % mode)
            n_expected = (t1 - t0) / PERIOD_S
            empty = [r for r in inner if all(f == "" for f in r[1:])]
            no_power = [r for r in inner if r[1] == "" and r[2] != ""]
            if mode == "normal":
                self.assertFalse(empty or no_power, "normal answers after %s: rows without values" %
                                 phases[i - 1][0] if i else "start")
                # Values come back: the previous fault's conditions are cleared in this phase.
                self.assertFalse({"communication_lost", "stale_data"} & set(st["conditions"]), st)
                continue
            what = kinds[mode]
            if what == "none":
                self.assertEqual(len(empty), len(inner), "%s: rows with values" % mode)
                self.assertEqual(len(raised("communication_lost", t0, t1)), 1, "%s: communication_lost" % mode)
                self.assertEqual([e["state"] for e in raised("communication_lost", t0, t1 + NORMAL_S)],
                                 ["raised", "cleared"], mode)
            elif what == "power":
                self.assertEqual(len(no_power), len(inner), "%s: spindle power not dropped" % mode)
                self.assertFalse(raised("communication_lost", t0, t1), mode)
            else:
                self.assertFalse(empty or no_power, mode)
                self.assertEqual([e["state"] for e in raised("stale_data", t0, t1 + NORMAL_S)],
                                 ["raised", "cleared"], "%s: stale_data" % mode)
            report.append("%s: %d rows (%.0f%% of the polls), longest step %.0f ms, %s" %
                          (mode, len(rows_in(t0, t1)), 100.0 * len(rows_in(t0, t1)) / n_expected, step * 1e3,
                           "no values" if what == "none" else "power dropped" if what == "power" else "values"))
        self.assertFalse(raised("stale_data", 0, phases[-2][1]), "stale_data only for frozen values")
        self.assertFalse([e for e in events if e["kind"] == "logging_failed"])
        print("\n".join(report), file=sys.stderr)
        print("control socket: %d requests answered, the slowest in %.0f ms; server: %d connections, requests %s" %
              (len(replies), 1e3 * max(replies), srv.connections,
               {m: n for m, n in srv.requests.items() if n}), file=sys.stderr)
        self.assertLess(max(replies), 0.5 * L.SLOW, "the control socket waited for the Modbus link")

        out = self.path("replay")
        self.run_tool([L.GRITLINE, "replay", samples, "--config", d.conf, "--out", out])
        rfolder = L.shift_folder(out)
        for name in ("passes.csv", "events.csv"):
            with open(os.path.join(folder, name), "rb") as a, open(os.path.join(rfolder, name), "rb") as b:
                self.assertEqual(a.read(), b.read(), name + ": live and replay differ")


if __name__ == "__main__":
    unittest.main(verbosity=2)
