"""test_kill.py: gritlined stopped and killed while it writes a thousand rows a second.

First a SIGTERM in the middle of heavy writing (poll_interval_ms = 1): status 0,
every file ends with a complete line, the recording's last line is the stop mark.
Then 20 times, in the same shift folder, the daemon is started and killed with
SIGKILL at a random moment (seeded). After each kill every file holds complete
lines only, except perhaps a torn last line of samples.csv; `gritline replay` reads
every complete line (it writes the same passes.csv as the live run) and reports a
torn line as file:line (docs/recording-format.md, "Torn last line"). A single
write(2) of a whole line is not torn by SIGKILL, so every fourth kill is followed
by what a power cut mid-write leaves: half a row without its newline, appended by
the test. On restart gritlined cuts the torn line away (drivers/logfile.c) and
says so in its log.
"""
import os
import random
import re
import signal
import sys
import time
import unittest

import livetest as L

SEED = 4242
KILLS = 20
SPEED = 10.0
NAMES = ("samples.csv", "passes.csv", "events.csv", "dress_cycles.csv")


def read_bytes(path):
    with open(path, "rb") as f:
        return f.read()


class KillWhileWriting(L.LiveCase):
    def check_lines(self, folder, torn_allowed):
        """Complete lines everywhere; returns the torn tail of samples.csv (b"" when none)."""
        tail = b""
        for name in NAMES:
            data = read_bytes(os.path.join(folder, name))
            if name == "samples.csv" and torn_allowed and not data.endswith(b"\n"):
                tail = data[data.rfind(b"\n") + 1:]
                data = data[:len(data) - len(tail)]
            self.assertTrue(data.endswith(b"\n"), "%s does not end with a newline" % name)
            for i, line in enumerate(data.decode("utf-8").splitlines()):
                if name == "samples.csv":
                    if not line.startswith("#"):
                        self.assertEqual(line.count(","), 8, "%s:%d: %r" % (name, i + 1, line))
                elif i:
                    first = data.split(b"\n", 1)[0].decode()
                    self.assertEqual(len(line.split(",")) >= len(first.split(",")), True, "%s:%d" % (name, i + 1))
        return tail

    def replay_equals_live(self, folder, conf, tag):
        out = self.path("replay-" + tag)
        rc, _, err = self.run_tool([L.GRITLINE, "replay", os.path.join(folder, "samples.csv"), "--config", conf,
                                    "--out", out])
        rfolder = L.shift_folder(out)
        self.assertEqual(read_bytes(os.path.join(folder, "passes.csv")),
                         read_bytes(os.path.join(rfolder, "passes.csv")), "passes.csv after %s" % tag)
        return err

    def test_sigterm_then_sigkill(self):
        rng = random.Random(SEED)
        sim = self.start_sim(L.scenario("short.ini"), SPEED)
        conf = L.sim_conf(sim.port, speed=SPEED, extra={"machine": {"poll_interval_ms": "1"}})
        data = self.path("data")

        # SIGTERM while writing about a thousand rows a second.
        d = self.start_daemon(conf, data_dir=data)
        L.wait_for(lambda: L.try_shift_folder(data), 10, "the shift folder")
        folder = L.shift_folder(data)
        time.sleep(1.5)
        rows_before = len(L.read_recording(os.path.join(folder, "samples.csv"))[0])
        self.stop_daemon(d, signal.SIGTERM)
        self.check_lines(folder, torn_allowed=False)
        with open(os.path.join(folder, "samples.csv")) as f:
            last = f.read().rstrip("\n").rsplit("\n", 1)[-1]
        self.assertIn(" stop gritlined stopped", last)
        self.assertGreater(rows_before, 700, "about a thousand rows a second")
        print("SIGTERM after 1.5 s: %d rows, every file in whole lines" % rows_before, file=sys.stderr)

        torn_made = torn_reported = cut_logged = 0
        for i in range(KILLS):
            d = self.start_daemon(conf, data_dir=data, name="k%d" % i)
            samples = os.path.join(folder, "samples.csv")
            size0 = os.path.getsize(samples)
            L.wait_for(lambda: os.path.getsize(samples) > size0 + 2000, 10, "rows of run %d" % (i + 2))
            time.sleep(rng.uniform(0.05, 1.0))
            d.send(signal.SIGKILL)
            d.wait(10)
            L.check_sanitizers("gritlined", d.stderr())
            if torn_made and i == torn_at + 1:
                # The run after a torn line: the daemon cut it and said so.
                self.assertRegex(d.stderr(), r"samples\.csv: incomplete last line \(%d bytes\) cut away" % torn_len)
                cut_logged += 1
            tail = self.check_lines(folder, torn_allowed=True)
            if not tail and i % 4 == 3:
                # A power cut mid-write: half a row, no newline.
                row = b"%.6f,1500.0,1450.0,6000.00,0.0" % time.time()
                with open(samples, "ab") as f:
                    f.write(row)
                tail = row
                torn_made += 1
                torn_at, torn_len = i, len(row)
            err = self.replay_equals_live(folder, d.conf, "kill%d" % (i + 1))
            if tail:
                with open(samples, "rb") as f:
                    line_no = f.read().count(b"\n") + 1
                self.assertIn("samples.csv:%d: incomplete last line (%d bytes)" % (line_no, len(tail)), err)
                torn_reported += 1
            else:
                self.assertNotIn("incomplete last line", err)

        # A last clean run: the recording holds every run, and the replay still agrees.
        size0 = os.path.getsize(samples)
        d = self.start_daemon(conf, data_dir=data, name="last")
        L.wait_for(lambda: os.path.getsize(samples) > size0 + 2000, 10, "rows of the last run")
        self.stop_daemon(d)
        if torn_made and torn_at == KILLS - 1:
            self.assertRegex(d.stderr(), r"samples\.csv: incomplete last line \(%d bytes\) cut away" % torn_len)
            cut_logged += 1
        self.check_lines(folder, torn_allowed=False)
        rows, marks = L.read_recording(os.path.join(folder, "samples.csv"))
        kinds = [m[1] for m in marks]
        self.assertEqual(kinds.count("start"), KILLS + 2)
        self.assertEqual(kinds.count("stop"), 2)
        self.replay_equals_live(folder, d.conf, "last")
        sim.stop()
        self.assertEqual(cut_logged, torn_made)
        self.assertGreaterEqual(torn_made, KILLS // 4 - 1)
        print("%d SIGKILLs: %d rows in all, %d torn last lines (made as a power cut would), each reported "
              "by the replay with its line and cut away by the next run; replay equals live after every kill" %
              (KILLS, len(rows), torn_reported), file=sys.stderr)


if __name__ == "__main__":
    unittest.main(verbosity=2)
