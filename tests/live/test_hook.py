"""test_hook.py: the [alerts] exec hook, live.

short.ini runs below the aggressiveness window configured here (25 to 30), so
low_aggressiveness is raised within the first part. A hook written by the test
dumps its arguments and environment to a file: it must get the alert's fields
(GRITLINE_MACHINE, _KIND, _SEVERITY, _STATE, _TIME, _TIME_ISO, _PASS, _VALUE,
_LIMIT, _MESSAGE, _SHIFT_DIR) matching the alert's row in events.csv, and nothing
of the daemon's own environment. A second hook sleeps far beyond hook_timeout_s:
it is killed with whatever it started, and gritlined keeps polling meanwhile.
"""
import calendar
import os
import signal
import stat
import sys
import time
import unittest

import livetest as L

SPEED = 10.0
WINDOW = {"aggr_low": 25, "aggr_high": 30}  # short.ini: Aggr 20.2 rough, 11.6 finish

DUMP = """#!/bin/sh
# test hook: writes its first argument and its environment, whole, into OUT/<pid>.env
tmp=OUT/$$.tmp
echo "ARGV1=$1" > "$tmp"
/usr/bin/env >> "$tmp"
mv "$tmp" OUT/$$.env
"""

SLEEPER = """#!/bin/sh
# test hook: starts a child and sleeps far longer than hook_timeout_s
echo $$ > OUT/hook.pid.tmp && mv OUT/hook.pid.tmp OUT/hook.pid
sleep 60 &
echo $! > OUT/child.pid.tmp && mv OUT/child.pid.tmp OUT/child.pid
wait
"""


def alive(pid):
    """A process that exists and is not a zombie."""
    try:
        with open("/proc/%d/stat" % pid) as f:
            return f.read().rsplit(")", 1)[1].split()[0] != "Z"
    except OSError:
        return False


class Hook(L.LiveCase):
    def write_hook(self, name, text):
        out = self.path(name + "-out")
        os.mkdir(out)
        path = self.path(name + ".sh")
        with open(path, "w") as f:
            f.write(text.replace("OUT", out))
        os.chmod(path, stat.S_IRWXU)
        return path, out

    def test_hook_environment_and_time_limit(self):
        sim = self.start_sim(L.scenario("short.ini"), SPEED)
        dump, dump_out = self.write_hook("dump", DUMP)
        conf = L.sim_conf(sim.port, speed=SPEED, extra={"alerts": {"hook": dump, "hook_timeout_s": "5"}}, **WINDOW)
        d = self.start_daemon(conf, env={"GRITLINE_LIVE_PRIVATE": "daemon-only"})

        def raised_env():
            for name in os.listdir(dump_out):
                if name.endswith(".env"):
                    with open(os.path.join(dump_out, name)) as f:
                        env = dict(line.rstrip("\n").split("=", 1) for line in f if "=" in line)
                    if env.get("GRITLINE_KIND") == "low_aggressiveness" and env.get("GRITLINE_STATE") == "raised":
                        return env
            return None
        env = L.wait_for(raised_env, 60 / SPEED + 10, "the hook's dump of low_aggressiveness raised")
        folder = L.shift_folder(d.data_dir)
        ev = [e for e in L.file_rows(folder, "events.csv")
              if e["kind"] == "low_aggressiveness" and e["state"] == "raised"][0]
        self.assertEqual(env["ARGV1"], "low_aggressiveness")
        self.assertEqual(env["GRITLINE_MACHINE"], "sg4")
        self.assertEqual(env["GRITLINE_KIND"], ev["kind"])
        self.assertEqual(env["GRITLINE_SEVERITY"], "warning")
        self.assertEqual(env["GRITLINE_STATE"], "raised")
        self.assertEqual(env["GRITLINE_TIME"], ev["time"])
        t = float(ev["time"])
        iso = time.strftime("%Y-%m-%dT%H:%M:%S", time.gmtime(int(t)))
        self.assertTrue(env["GRITLINE_TIME_ISO"].startswith(iso) and env["GRITLINE_TIME_ISO"].endswith("Z"),
                        (env["GRITLINE_TIME_ISO"], iso))
        self.assertAlmostEqual(calendar.timegm(time.strptime(env["GRITLINE_TIME_ISO"][:19], "%Y-%m-%dT%H:%M:%S"))
                               + float("0." + env["GRITLINE_TIME_ISO"][20:23]), t, delta=0.0015)
        self.assertEqual(env["GRITLINE_PASS"], ev["pass"])
        self.assertAlmostEqual(float(env["GRITLINE_VALUE"]), float(ev["value"]), delta=1e-4)
        self.assertAlmostEqual(float(env["GRITLINE_LIMIT"]), float(ev["limit"]), delta=1e-4)
        self.assertEqual(float(env["GRITLINE_LIMIT"]), 25.0)
        self.assertEqual(env["GRITLINE_MESSAGE"], ev["message"])
        self.assertEqual(env["GRITLINE_SHIFT_DIR"], folder)
        self.assertNotIn("GRITLINE_LIVE_PRIVATE", env, "the hook sees nothing of the daemon's environment")
        self.assertEqual(env["PATH"], "/usr/local/bin:/usr/bin:/bin")
        print("hook got: " + ", ".join("%s=%s" % (k, env[k][:60]) for k in sorted(env) if k.startswith("GRITLINE_")),
              file=sys.stderr)
        self.stop_daemon(d)

        # The sleeper: killed after hook_timeout_s (1 s) with its child; polling goes on.
        sleeper, sleep_out = self.write_hook("sleeper", SLEEPER)
        conf = L.sim_conf(sim.port, speed=SPEED, extra={"alerts": {"hook": sleeper, "hook_timeout_s": "1"}},
                          **WINDOW)
        d2 = self.start_daemon(conf, name="d2")
        pid_file = os.path.join(sleep_out, "child.pid")
        L.wait_for(lambda: os.path.exists(pid_file), 60 / SPEED + 10, "the sleeping hook")
        started = time.monotonic()
        with open(os.path.join(sleep_out, "hook.pid")) as f:
            hook_pid = int(f.read())
        with open(pid_file) as f:
            child_pid = int(f.read())
        self.addCleanup(self.kill_if_alive, hook_pid, child_pid)
        folder2 = L.shift_folder(d2.data_dir)
        rows0 = len(L.read_recording(os.path.join(folder2, "samples.csv"))[0])
        L.wait_for(lambda: not alive(hook_pid) and not alive(child_pid), 5, "the hook and its child killed")
        killed_after = time.monotonic() - started
        time.sleep(0.5)
        rows1 = len(L.read_recording(os.path.join(folder2, "samples.csv"))[0])
        self.assertTrue(d2.alive())
        self.stop_daemon(d2)
        sim.stop()
        self.assertIn("killed after 1 s (time limit)", d2.stderr())
        elapsed = time.monotonic() - started
        # 10 ms polls: at least a quarter of them recorded while the hook hung and after it
        # (a loaded test machine delays polls, never stops them).
        self.assertGreater(rows1 - rows0, 0.25 * elapsed / 0.01 / L.SLOW)
        print("sleeping hook killed %.1f s after it started (limit 1 s); %d samples recorded meanwhile" %
              (killed_after, rows1 - rows0), file=sys.stderr)

    def test_reload_keeps_running_hook_supervised(self):
        """A SIGHUP while a hook runs: the hook is still killed at its time limit, and reaped.

        reload() once re-initialised the hook table, so a hook running at the reload was never
        killed nor reaped (it outlived hook_timeout_s, then stayed a zombie)."""
        sim = self.start_sim(L.scenario("short.ini"), SPEED)
        sleeper, sleep_out = self.write_hook("sleeper", SLEEPER)
        conf = L.sim_conf(sim.port, speed=SPEED, extra={"alerts": {"hook": sleeper, "hook_timeout_s": "1"}},
                          **WINDOW)
        d = self.start_daemon(conf)
        pid_file = os.path.join(sleep_out, "child.pid")
        L.wait_for(lambda: os.path.exists(pid_file), 60 / SPEED + 10, "the sleeping hook")
        with open(os.path.join(sleep_out, "hook.pid")) as f:
            hook_pid = int(f.read())
        with open(pid_file) as f:
            child_pid = int(f.read())
        self.addCleanup(self.kill_if_alive, hook_pid, child_pid)
        d.send(signal.SIGHUP)  # the same, good, configuration
        try:
            L.wait_for(lambda: not alive(hook_pid) and not alive(child_pid), 4, "the hook killed after the reload")
            L.wait_for(lambda: not os.path.exists("/proc/%d" % hook_pid), 2, "the hook reaped")
        finally:
            self.stop_daemon(d)
            sim.stop()

    def kill_if_alive(self, *pids):
        for pid in pids:
            if alive(pid):
                os.kill(pid, signal.SIGKILL)


if __name__ == "__main__":
    unittest.main(verbosity=2)
