"""soak_live.py: gritlined polls gritline-sim a thousand times a second for ten minutes.

poll_interval_ms = 1, shifts of one minute ([shifts] starts = the next eleven minute
boundaries, names s00..s10; up to 32 shifts a day, drivers/shift.h): ten changes of
shift and about 600 000 samples. gritlined's resident memory (VmRSS of
/proc/PID/status, proc(5)) is sampled every second. It must stay flat after the
warm-up (the largest value over the last eight minutes exceeds the largest over
the two minutes after the warm-up by at most 64 kB), and the memory it owns
must stay below 8 MiB of VmRSS; its owned part (RssAnon) is reported too
(docs/reliability.md). The figures go to the test log.
Suite 'soak': run by `tests/run-tests.sh --soak`, never by default.
"""
import os
import signal
import sys
import time
import unittest

import livetest as L
import rss

RUN_S = float(os.environ.get("GRITLINE_SOAK_SECONDS", "600"))
WARMUP_S = 30.0
SHIFTS = 11


class SoakLive(L.LiveCase):
    def test_ten_minutes_at_1khz(self):
        sim = self.start_sim(L.scenario("short.ini"), 1.0)
        # The daemon runs with TZ=UTC (livetest.Daemon): its local time is UTC.
        now = time.time()
        first = (int(now // 60) + 1) * 60
        starts = sorted(("%02d:%02d" % (time.gmtime(first + 60 * i).tm_hour, time.gmtime(first + 60 * i).tm_min),
                         "s%02d" % i) for i in range(SHIFTS))
        conf = L.sim_conf(sim.port, speed=1.0, extra={
            "machine": {"poll_interval_ms": "1"},
            "shifts": {"starts": ",".join(s for s, _ in starts), "names": ",".join(n for _, n in starts)}})
        d = self.start_daemon(conf)
        sampler = rss.Sampler(d.pid)
        t0 = time.monotonic()
        while time.monotonic() - t0 < RUN_S:
            time.sleep(5)
            self.assertTrue(d.alive(), d.stderr()[-3000:])
        points = sampler.stop()
        self.stop_daemon(d)
        sim.stop()

        root = os.path.join(d.data_dir, "sg4")
        folders = sorted(f for f in os.listdir(root) if os.path.isdir(os.path.join(root, f)))
        rows = 0
        for f in folders:
            L.whole_lines(self, os.path.join(root, f))
            rows += len(L.read_recording(os.path.join(root, f, "samples.csv"))[0])
        split = WARMUP_S + (RUN_S - WARMUP_S) / 5.0  # the two minutes after the warm-up, of ten
        early, late, growth, top = rss.flatness(points, WARMUP_S, split)
        print("soak live: %.0f s at poll_interval_ms = 1: %d samples (%.0f a second), %d shift folders %s" %
              (RUN_S, rows, rows / RUN_S, len(folders), ", ".join(folders)), file=sys.stderr)
        print("gritlined VmRSS every second (%d samples), per tenth of the run: %s" % (len(points), rss.curve(points)),
              file=sys.stderr)
        print("VmRSS max %d kB in the first fifth after the warm-up, %d kB later: growth %+d kB (limit %d); "
              "highest %d kB" % (early, late, growth, rss.FLAT_KB, top), file=sys.stderr)
        self.assertLessEqual(growth, rss.FLAT_KB, "resident memory grows")
        own = max(kb for _, kb in sampler.anon)
        print("RssAnon (the memory it owns) at most %d kB (limit %d), per tenth of the run: %s" %
              (own, rss.LIMIT_KB, rss.curve(sampler.anon)), file=sys.stderr)
        self.assertLess(top, rss.LIMIT_KB, "resident memory (VmRSS) above 8 MiB")
        if RUN_S >= 600:
            self.assertGreaterEqual(len(folders), SHIFTS - 1, "ten changes of shift")
            self.assertGreater(rows, 0.95 * RUN_S * 1000, "about a thousand samples a second")


if __name__ == "__main__":
    if os.environ.get("GRITLINE_SANITIZED", "0") != "0":
        print("sanitized build: the sanitizers' own memory hides the daemon's", file=sys.stderr)
        sys.exit(77)
    unittest.main(verbosity=2)
