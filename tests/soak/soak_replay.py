"""soak_replay.py: gritline replay of 100 million samples read from a FIFO.

soakgen (tests/soak/soakgen.c) writes a synthetic recording of 100 million samples
(27.8 hours at 1 kHz, a pass every 3 s) into a FIFO (mkfifo(3)) that `gritline
replay` reads, so nothing large lands on disk. The replay's resident memory (VmRSS
of /proc/PID/status, proc(5)) is sampled every second and must stay flat after the
warm-up by the rule of soak_live.py, and stay below 8 MiB; every stroke must come out
as a pass. The warm-up lasts until the first change of shift has been written: the
closing shift's summary.json is computed from its logs once (daemon/summary.c), which sets
the allocator's high-water mark; what counts is that nothing grows after it, through the
following changes of shift. Suite 'soak': run by `tests/run-tests.sh --soak`, never by default.
"""
import os
import glob
import subprocess
import sys
import threading
import time
import unittest

import livetest as L
import rss

SAMPLES = int(os.environ.get("GRITLINE_SOAK_SAMPLES", "100000000"))
SOAKGEN = os.environ.get("SOAKGEN", "soakgen")
START = 1709618400  # 2024-03-05 06:00 UTC
WARMUP_S = 3.0


class SoakReplay(L.LiveCase):
    def test_hundred_million_samples(self):
        fifo = self.path("samples.fifo")
        os.mkfifo(fifo)
        conf = self.path("replay.conf")
        L.write_file(conf, L.sim_conf(5020, speed=1.0))
        out = self.path("out")
        replay = L.Proc(self, "replay", [L.GRITLINE, "replay", fifo, "--config", conf, "--out", out],
                        env={"TZ": "UTC"})
        sampler = rss.Sampler(replay.pid)
        t0 = time.monotonic()
        first_summary = []

        def watch():
            # The first shift's summary.json marks the end of the warm-up.
            while not first_summary and replay.alive():
                if glob.glob(os.path.join(out, "sg4", "*", "summary.json")):
                    first_summary.append(time.monotonic() - t0)
                time.sleep(0.2)
        watcher = threading.Thread(target=watch, daemon=True)
        watcher.start()
        fd = os.open(fifo, os.O_WRONLY)  # waits for the replay to open it
        try:
            gen = subprocess.Popen([SOAKGEN, str(SAMPLES), str(START)], stdout=fd, stdin=subprocess.DEVNULL)
        finally:
            os.close(fd)
        self.addCleanup(lambda: gen.poll() is None and gen.kill())
        self.assertEqual(gen.wait(1500), 0, "soakgen")
        rc = replay.wait(300)
        elapsed = time.monotonic() - t0
        points = sampler.stop()
        self.assertEqual(rc, 0, replay.stderr())
        L.check_sanitizers("gritline replay", replay.stderr())
        passes = 0
        root = os.path.join(out, "sg4")
        for f in sorted(os.listdir(root)):
            if os.path.isdir(os.path.join(root, f)):
                with open(os.path.join(root, f, "passes.csv")) as pf:
                    passes += sum(1 for _ in pf) - 1
        strokes = SAMPLES // 3000
        warmup = max(WARMUP_S, first_summary[0] + 1.0) if first_summary else WARMUP_S
        split = warmup + (points[-1][0] - warmup) / 5.0 if points else 0.0
        early, late, growth, top = rss.flatness(points, warmup, split)
        print("warm-up: %.1f s (the first change of shift written at %s s)" %
              (warmup, "%.1f" % first_summary[0] if first_summary else "-"), file=sys.stderr)
        print("soak replay: %d samples through a FIFO in %.1f s (%.2f million a second), %d passes for %d strokes; "
              "%s" % (SAMPLES, elapsed, SAMPLES / elapsed / 1e6, passes, strokes, replay.stderr().strip()),
              file=sys.stderr)
        print("gritline replay VmRSS every second (%d samples), per tenth of the run: %s" %
              (len(points), rss.curve(points)), file=sys.stderr)
        print("VmRSS max %d kB in the first fifth after the warm-up, %d kB later: growth %+d kB (limit %d); highest "
              "%d kB" % (early, late, growth, rss.FLAT_KB, top), file=sys.stderr)
        self.assertLessEqual(abs(passes - strokes), 1)
        self.assertLessEqual(growth, rss.FLAT_KB, "resident memory grows")
        own = max(kb for _, kb in sampler.anon)
        print("RssAnon (the memory it owns) at most %d kB (limit %d), per tenth of the run: %s" %
              (own, rss.LIMIT_KB, rss.curve(sampler.anon)), file=sys.stderr)
        self.assertLess(top, rss.LIMIT_KB, "resident memory (VmRSS) above 8 MiB")


if __name__ == "__main__":
    if os.environ.get("GRITLINE_SANITIZED", "0") != "0":
        print("sanitized build: the sanitizers' own memory hides the replay's", file=sys.stderr)
        sys.exit(77)
    unittest.main(verbosity=2)
