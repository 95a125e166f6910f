"""test_valgrind.py: gritlined and gritline replay under valgrind's memcheck.

gritlined runs under `valgrind --leak-check=full --errors-for-leak-kinds=definite,indirect
--error-exitcode=99` against gritline-sim for about 30 s (passes, a reload, a dress
through the control socket, a stop by SIGTERM), then `gritline replay` of its
recording runs under the same memcheck. Memcheck must report no error and no leak
(definitely or indirectly lost); its status would be 99 otherwise (valgrind(1)).
A sanitized build is not run under valgrind (the two do not mix): the test is
skipped there (status 77).
"""
import os
import re
import shutil
import signal
import sys
import time
import unittest

import livetest as L

SPEED = 10.0
RUN_S = 30.0
VALGRIND = ["valgrind", "--leak-check=full", "--errors-for-leak-kinds=definite,indirect", "--error-exitcode=99",
            "--track-fds=no", "--num-callers=30"]


def summary(log):
    """The figures of memcheck's summaries: (errors, definitely lost, indirectly lost, in use at exit)."""
    with open(log, errors="replace") as f:
        text = f.read()
    errors = re.findall(r"ERROR SUMMARY: (\d+) errors", text)
    definite = re.findall(r"definitely lost: ([\d,]+) bytes", text)
    indirect = re.findall(r"indirectly lost: ([\d,]+) bytes", text)
    in_use = re.findall(r"in use at exit: ([\d,]+) bytes in ([\d,]+) blocks", text)
    n = lambda v: int(v.replace(",", "")) if v else 0
    return (n(errors[-1]) if errors else None, n(definite[-1]) if definite else 0,
            n(indirect[-1]) if indirect else 0, in_use[-1] if in_use else ("0", "0"), text)


class Memcheck(L.LiveCase):
    def test_daemon_and_replay(self):
        sim = self.start_sim(L.scenario("short.ini"), SPEED)
        conf = L.sim_conf(sim.port, speed=SPEED)
        log = self.path("memcheck-gritlined.log")
        # Valgrind runs the daemon about ten times slower: waits are stretched, never the checks.
        d = self.start_daemon(conf, wrapper=VALGRIND + ["--log-file=" + log])
        L.wait_for(lambda: L.try_shift_folder(d.data_dir), 60, "the shift folder")
        t0 = time.monotonic()
        time.sleep(RUN_S / 3)
        os.kill(d.pid, signal.SIGHUP)  # a reload
        time.sleep(RUN_S / 3)
        reply = L.control(d.socket, "dress operator memcheck\n", timeout=20)
        time.sleep(max(0.0, RUN_S - (time.monotonic() - t0)))
        rc = d.stop(signal.SIGTERM, timeout=60)
        sim.stop()
        errors, definite, indirect, in_use, text = summary(log)
        print("gritlined under memcheck for %.0f s (dress: %s): %s errors, definitely lost %d bytes, indirectly "
              "lost %d bytes, in use at exit %s bytes in %s blocks" %
              (time.monotonic() - t0, reply, errors, definite, indirect, in_use[0], in_use[1]), file=sys.stderr)
        self.assertEqual(rc, 0, "valgrind status %s:\n%s" % (rc, text[-6000:]))
        self.assertEqual((errors, definite, indirect), (0, 0, 0), text[-6000:])

        folder = L.shift_folder(d.data_dir)
        rows, marks = L.read_recording(os.path.join(folder, "samples.csv"))
        passes = L.file_rows(folder, "passes.csv")
        self.assertGreater(len(passes), 10, "passes under valgrind")
        self.assertIn("config", [m[1] for m in marks])

        rlog = self.path("memcheck-replay.log")
        out = self.path("replay")
        rc, _, err = self.run_tool(VALGRIND + ["--log-file=" + rlog, L.GRITLINE, "replay",
                                               os.path.join(folder, "samples.csv"), "--config", d.conf, "--out", out],
                                   timeout=300, check=False)
        errors, definite, indirect, in_use, text = summary(rlog)
        print("gritline replay of %d samples under memcheck: %s errors, definitely lost %d bytes, indirectly lost "
              "%d bytes, in use at exit %s bytes in %s blocks" % (len(rows), errors, definite, indirect, in_use[0],
                                                                   in_use[1]), file=sys.stderr)
        self.assertEqual(rc, 0, "valgrind status %s:\n%s\n%s" % (rc, err, text[-6000:]))
        self.assertEqual((errors, definite, indirect), (0, 0, 0), text[-6000:])
        with open(os.path.join(folder, "passes.csv"), "rb") as a, \
                open(os.path.join(L.shift_folder(out), "passes.csv"), "rb") as b:
            self.assertEqual(a.read(), b.read(), "passes.csv: live and replay differ")


if __name__ == "__main__":
    if os.environ.get("GRITLINE_SANITIZED", "0") != "0":
        print("sanitized build: memcheck runs on the plain build only", file=sys.stderr)
        sys.exit(77)
    if not shutil.which("valgrind"):
        print("valgrind is not installed (Debian package valgrind)", file=sys.stderr)
        sys.exit(77)
    unittest.main(verbosity=2)
