"""livetest.py: harness of the live tests: starts gritline-sim, gritlined and helpers on 127.0.0.1.

Every process a test starts is registered with its LiveCase and killed when
the test ends, passed or not; every wait is bounded. Output of the programs
goes to files in the test's temporary folder (never to pipes that could fill
up), and a sanitizer report found there fails the test.
"""
import csv
import os
import shutil
import signal
import socket
import struct
import subprocess
import sys
import tempfile
import time
import unittest

HERE = os.path.dirname(os.path.abspath(__file__))
SRC = os.path.normpath(os.path.join(HERE, "..", ".."))
# Set by tests/live/meson.build; the defaults serve a run by hand against /tmp/build-live.
BUILD = os.environ.get("GRITLINE_BUILD", "/tmp/build-live")
GRITLINED = os.environ.get("GRITLINED", os.path.join(BUILD, "daemon", "gritlined"))
GRITLINE = os.environ.get("GRITLINE", os.path.join(BUILD, "daemon", "gritline"))
SIM = os.environ.get("GRITLINE_SIM", os.path.join(BUILD, "daemon", "sim", "gritline-sim"))
SCENARIOS = os.path.join(SRC, "conf", "scenarios")
DATA = os.path.join(HERE, "data")
MB_SERVER = os.path.join(SRC, "tests", "modbus", "mb_server.py")
PYTHON = "/usr/bin/python3"

# Slower programs (a sanitized build) get longer waits, never other checks.
SLOW = float(os.environ.get("GRITLINE_LIVE_SLOW", "1"))

# The recording's columns (docs/recording-format.md) and their decimals.
SAMPLE_COLUMNS = ["time", "spindle_power_w", "spindle_speed_rpm", "work_speed_mm_min", "infeed_position_mm",
                  "depth_of_cut_mm", "wheel_diameter_mm", "dress_count", "grinding"]
SAMPLE_DECIMALS = {"time": 6, "spindle_power_w": 1, "spindle_speed_rpm": 1, "work_speed_mm_min": 2,
                   "infeed_position_mm": 6, "depth_of_cut_mm": 6, "wheel_diameter_mm": 4, "dress_count": 0,
                   "grinding": 0}


def scenario(name):
    """A scenario of this folder (tests/live/data) or a shipped one (conf/scenarios)."""
    for folder in (DATA, SCENARIOS):
        path = os.path.join(folder, name)
        if os.path.exists(path):
            return path
    raise FileNotFoundError(name)


def wait_for(pred, timeout, what, interval=0.05):
    """Polls pred() until it returns something true; fails the test after timeout * SLOW seconds."""
    deadline = time.monotonic() + timeout * SLOW
    while True:
        got = pred()
        if got:
            return got
        if time.monotonic() > deadline:
            raise AssertionError("timed out after %.0f s waiting for %s" % (timeout * SLOW, what))
        time.sleep(interval)


def check_sanitizers(name, text):
    for marker in ("ERROR: AddressSanitizer", "ERROR: LeakSanitizer", "runtime error:"):
        if marker in text:
            raise AssertionError("sanitizer report from %s:\n%s" % (name, text[-4000:]))


class Proc:
    """One child process with its output in files; stop() is idempotent."""

    def __init__(self, case, name, argv, env=None):
        self.case = case
        self.name = name
        self.argv = argv
        self.out_path = os.path.join(case.tmp, "%s.%d.out" % (name, case.serial()))
        self.err_path = self.out_path[:-4] + ".err"
        full_env = dict(os.environ)
        full_env.update(env or {})
        with open(self.out_path, "w") as out, open(self.err_path, "w") as err:
            self.proc = subprocess.Popen(argv, stdout=out, stderr=err, stdin=subprocess.DEVNULL, env=full_env)
        self.pid = self.proc.pid
        self.returncode = None
        case.procs.append(self)

    def alive(self):
        return self.proc.poll() is None

    def send(self, sig):
        if self.alive():
            self.proc.send_signal(sig)

    def wait(self, timeout):
        try:
            self.returncode = self.proc.wait(timeout * SLOW)
        except subprocess.TimeoutExpired:
            raise AssertionError("%s did not end within %.0f s" % (self.name, timeout * SLOW))
        return self.returncode

    def stop(self, sig=signal.SIGTERM, timeout=10.0):
        """Ends the process (SIGKILL when it does not end in time); returns its status."""
        if self.alive():
            self.proc.send_signal(sig)
            try:
                self.proc.wait(timeout * SLOW)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait()
        self.returncode = self.proc.returncode
        return self.returncode

    def stderr(self):
        with open(self.err_path, errors="replace") as f:
            return f.read()

    def stdout(self):
        with open(self.out_path, errors="replace") as f:
            return f.read()


class Sim(Proc):
    """gritline-sim on 127.0.0.1: port 0 (a free one), or a given port (a restart)."""

    def __init__(self, case, scenario_path, speed, epoch, port=0, args=()):
        self.port_file = os.path.join(case.tmp, "sim-port.%d" % case.serial())
        self.truth = os.path.join(case.tmp, "truth.csv")
        self.dresses = os.path.join(case.tmp, "truth-dresses.csv")
        argv = [SIM, "--port", str(port), "--port-file", self.port_file, "--speed", "%g" % speed,
                "--epoch", "%.3f" % epoch, "--truth", self.truth, "--truth-dresses", self.dresses,
                *args, scenario_path]
        super().__init__(case, "sim", argv)
        self.speed = speed
        self.epoch = epoch

        def port_written():
            if not self.alive():
                raise AssertionError("gritline-sim ended at start: %s" % self.stderr())
            try:
                with open(self.port_file) as f:
                    return int(f.read().split()[0])
            except (OSError, ValueError, IndexError):
                return None
        self.port = wait_for(port_written, 10, "gritline-sim's port file")

    def sim_time(self):
        """The simulator's clock now (docs/simulator.md: epoch + (real - epoch) * speed)."""
        return self.epoch + (time.time() - self.epoch) * self.speed

    def truth_rows(self):
        return read_csv(self.truth)

    def dress_rows(self):
        return read_csv(self.dresses)


class Daemon(Proc):
    """gritlined with a configuration written by the test, its own data folder and control socket."""

    def __init__(self, case, conf_path, data_dir, socket_path, args=(), env=None, wrapper=()):
        # wrapper: a command the daemon runs under (valgrind ...); it must keep the daemon's pid.
        argv = [*wrapper, GRITLINED, "-c", conf_path, "--data-dir", data_dir, "--socket", socket_path, *args]
        e = {"TZ": "UTC"}
        e.update(env or {})
        super().__init__(case, "gritlined", argv, env=e)
        self.conf = conf_path
        self.data_dir = data_dir
        self.socket = socket_path


class LiveCase(unittest.TestCase):
    """A test case with a temporary folder and the processes it started, all ended at its end."""

    keep = os.environ.get("GRITLINE_LIVE_KEEP")  # keep the folder for a look by hand

    def setUp(self):
        self.tmp = tempfile.mkdtemp(prefix="gritline-live-")
        self.procs = []
        self._serial = 0
        self.addCleanup(self._cleanup)

    def serial(self):
        self._serial += 1
        return self._serial

    def _cleanup(self):
        reports = []
        for p in self.procs:
            if p.alive():
                p.proc.kill()
                p.proc.wait()
            try:
                text = p.stderr()
                check_sanitizers(p.name, text)
            except AssertionError as e:
                reports.append(str(e))
            except OSError:
                pass
        if self.keep:
            print("kept", self.tmp, file=sys.stderr)
        else:
            shutil.rmtree(self.tmp, ignore_errors=True)
        if reports:
            raise AssertionError("\n".join(reports))

    def path(self, name):
        return os.path.join(self.tmp, name)

    # ---- starting things ----

    def start_sim(self, scenario_path, speed, epoch=None, port=0, args=()):
        """epoch defaults to one second from now, so gritlined connects before the first pass."""
        if epoch is None:
            epoch = round(time.time() + 1.0, 3)
        return Sim(self, scenario_path, speed, epoch, port, args)

    def start_daemon(self, conf_text, name="d", args=(), env=None, data_dir=None, wrapper=()):
        conf = self.path(name + ".conf")
        write_file(conf, conf_text)
        data_dir = data_dir or self.path(name + "-data")
        os.makedirs(data_dir, exist_ok=True)
        return Daemon(self, conf, data_dir, self.path(name + ".sock"), args, env, wrapper)

    def stop_daemon(self, d, sig=signal.SIGTERM):
        rc = d.stop(sig, timeout=15)
        self.assertEqual(rc, 0, "gritlined exit status; stderr:\n" + d.stderr()[-3000:])
        check_sanitizers("gritlined", d.stderr())
        return rc

    def run_tool(self, argv, timeout=60, check=True):
        """A short-lived program (gritline, mbpoll): (status, stdout, stderr)."""
        r = subprocess.run(argv, capture_output=True, text=True, timeout=timeout * SLOW,
                           env=dict(os.environ, TZ="UTC"), stdin=subprocess.DEVNULL)
        check_sanitizers(argv[0], r.stderr)
        if check and r.returncode != 0:
            raise AssertionError("%s: status %d\n%s%s" % (" ".join(argv), r.returncode, r.stdout, r.stderr))
        return r.returncode, r.stdout, r.stderr


def write_file(path, text):
    tmp = path + ".tmp"
    with open(tmp, "w") as f:
        f.write(text)
    os.replace(tmp, path)


def read_csv(path):
    with open(path, newline="", encoding="utf-8") as f:
        return list(csv.DictReader(f))


def shift_folder(data_dir, machine="sg4"):
    """The one shift folder a short test run writes (the tests' schedule has one shift a day)."""
    root = os.path.join(data_dir, machine)
    dirs = sorted(d for d in os.listdir(root) if os.path.isdir(os.path.join(root, d)))
    if len(dirs) != 1:
        raise AssertionError("expected one shift folder in %s, found %r" % (root, dirs))
    return os.path.join(root, dirs[0])


def try_shift_folder(data_dir, machine="sg4"):
    """The shift folder once gritlined has made it, else None (for waits)."""
    root = os.path.join(data_dir, machine)
    if not os.path.isdir(root) or not [d for d in os.listdir(root) if os.path.isdir(os.path.join(root, d))]:
        return None
    return shift_folder(data_dir, machine)


def events_raised(data_dir, kind):
    """The rows of events.csv that raised kind (empty before the shift folder exists)."""
    folder = try_shift_folder(data_dir)
    if not folder:
        return []
    return [e for e in file_rows(folder, "events.csv") if e["kind"] == kind and e["state"] == "raised"]


def file_rows(folder, name):
    path = os.path.join(folder, name)
    return read_csv(path) if os.path.exists(path) else []


def read_recording(path):
    """samples.csv -> (sample rows as lists of texts, marks as (time, kind, text)); the reading rules of
    docs/recording-format.md."""
    rows, marks, header_seen = [], [], False
    with open(path, encoding="utf-8") as f:
        for line in f:
            line = line.rstrip("\n")
            if line.startswith("# mark: "):
                t, kind, *text = line[8:].split(" ", 2)
                marks.append((float(t), kind, text[0] if text else ""))
            elif line.startswith("#"):
                continue
            elif line == ",".join(SAMPLE_COLUMNS):
                header_seen = True
            else:
                rows.append(line.split(","))
    if not header_seen:
        raise AssertionError("%s: no header row" % path)
    return rows, marks


def whole_lines(testcase, folder, names=("samples.csv", "passes.csv", "events.csv", "dress_cycles.csv")):
    """Every file ends in a complete line and every CSV row has as many fields as its header."""
    for name in names:
        path = os.path.join(folder, name)
        with open(path, "rb") as f:
            data = f.read()
        testcase.assertTrue(data.endswith(b"\n"), "%s does not end with a newline" % path)
        testcase.assertNotIn(b"\r", data, path)
        if name != "samples.csv":
            rows = list(csv.reader(data.decode("utf-8").splitlines()))
            for i, r in enumerate(rows):
                testcase.assertEqual(len(r), len(rows[0]), "%s line %d: %r" % (path, i + 1, r))
        else:
            for i, line in enumerate(data.decode("utf-8").splitlines()):
                if not line.startswith("#"):
                    testcase.assertEqual(line.count(","), 8, "%s line %d: %r" % (path, i + 1, line))


# ---- the daemon's configuration ----

def shift_start_hhmm():
    """One shift a day that began 12 hours ago (UTC): a test run never crosses a change of shift."""
    t = time.gmtime(time.time() - 12 * 3600)
    return "%02d:%02d" % (t.tm_hour, t.tm_min)


# What a configuration must know of each scenario (its [job] width_mm, its wheel) and
# an aggressiveness window that contains the job, unless a test asks otherwise.
SCENARIO_SETUP = {
    "short.ini": dict(job="plate-200", width_mm=30, wheel="cx60-vitrified", wheel_diameter_mm=400,
                      aggr_low=10, aggr_high=25),
    "dulling-short.ini": dict(job="block-150", width_mm=20, wheel="wa60-hard", wheel_diameter_mm=300,
                              aggr_low=10, aggr_high=20),
    "aggressive-short.ini": dict(job="plate-250", width_mm=20, wheel="wa46-soft", wheel_diameter_mm=250,
                                 aggr_low=15, aggr_high=35),
    "stable-short.ini": dict(job="block-300", width_mm=25, wheel="wa46-soft", wheel_diameter_mm=350,
                             aggr_low=20, aggr_high=40),
}


def sim_conf(port, scenario_name="short.ini", grinding=True, extra=None, speed=10.0, **over):
    """A gritlined configuration for gritline-sim's register map (docs/simulator.md, conf/demo.conf)
    and one of the scenarios of SCENARIO_SETUP; keyword arguments override its entries.

    extra: {section: {key: value}} merged in (a value None removes the key)."""
    setup = dict(SCENARIO_SETUP[scenario_name])
    setup.update(over)
    job, wheel = setup["job"], setup["wheel"]
    sections = {
        "machine": {"name": "sg4", "description": "Alder Street Works, cell B, surface grinder 4 (live test)",
                    "spindle_rating_kw": "11", "poll_interval_ms": "10", "timestamp": "controller",
                    "comm_lost_after_s": "1", "job": job, "wheel": wheel},
        "modbus": {"transport": "tcp", "host": "127.0.0.1", "port": str(port), "unit_id": "1",
                   "response_timeout_ms": "200", "backoff_min_ms": "100", "backoff_max_ms": "500",
                   "stale_after_s": "0"},
        "channel.clock": {"table": "holding", "address": "0", "type": "u64", "unit": "ms"},
        "channel.spindle_power": {"table": "holding", "address": "4", "type": "f32", "order": "abcd", "unit": "W"},
        "channel.spindle_speed": {"table": "holding", "address": "6", "type": "f32", "unit": "rpm"},
        "channel.work_speed": {"table": "holding", "address": "8", "type": "f32", "unit": "mm/min"},
        "channel.infeed_position": {"table": "holding", "address": "10", "type": "s32", "scale": "0.0001",
                                    "unit": "mm"},
        "channel.wheel_diameter": {"table": "holding", "address": "14", "type": "f32", "unit": "mm"},
        "channel.dress_count": {"table": "holding", "address": "16", "type": "u16", "unit": "count"},
        "job." + job: {"geometry": "surface", "width_mm": "%g" % setup["width_mm"], "material": "steel"},
        "wheel." + wheel: {"diameter_mm": "%g" % setup["wheel_diameter_mm"], "max_speed_m_s": "35",
                           "aggr_low": "%g" % setup["aggr_low"], "aggr_high": "%g" % setup["aggr_high"]},
        "shifts": {"starts": shift_start_hhmm(), "names": "day"},
        # At --speed N one poll of 10 ms spans N/100 s of the simulator's time: the default
        # gap of 1 s is 100 polls at speed 1, and stays 100 ms of real time up to speed 10.
        "segmentation": {"max_interval_s": "%g" % max(1.0, 0.1 * speed)},
    }
    if grinding:
        sections["channel.grinding"] = {"table": "holding", "address": "17", "type": "u16", "unit": "bool"}
    for sec, keys in (extra or {}).items():
        d = sections.setdefault(sec, {})
        for k, v in keys.items():
            if v is None:
                d.pop(k, None)
            else:
                d[k] = str(v)
    return conf_text(sections)


_known_sections = {}


def daemon_knows(section):
    """Whether this gritlined reads a [section] (its effective configuration lists every one)."""
    if section not in _known_sections:
        fd, path = tempfile.mkstemp(prefix="gritline-live-", suffix=".conf")
        with os.fdopen(fd, "w") as f:
            f.write("[machine]\nname = sg4\njob = j\nwheel = w\n[channel.spindle_power]\naddress = 4\n"
                    "[channel.spindle_speed]\naddress = 6\n[job.j]\nwidth_mm = 30\n"
                    "[wheel.w]\ndiameter_mm = 400\nmax_speed_m_s = 35\n")
        try:
            r = subprocess.run([GRITLINED, "--check-config", path], capture_output=True, text=True, timeout=30)
            _known_sections[section] = "[%s]" % section in r.stdout.splitlines()
        finally:
            os.unlink(path)
    return _known_sections[section]


def conf_text(sections):
    """{section: {key: value}} as an INI file gritlined reads. When the daemon serves HTTP
    ([metrics]), the tests switch it off: no fixed port is ever bound."""
    if "metrics" not in sections and daemon_knows("metrics"):
        sections = dict(sections, metrics={"port": "0"})
    out = ["; written by tests/live/livetest.py"]
    for sec, keys in sections.items():
        out.append("[%s]" % sec)
        out.extend("%s = %s" % kv for kv in keys.items())
        out.append("")
    return "\n".join(out)


# ---- the control socket ----

def control(socket_path, request, timeout=5.0):
    """One request on the daemon's control socket; returns the reply line (without its newline)."""
    s = socket.socket(socket.AF_UNIX, socket.SOCK_STREAM)
    s.settimeout(timeout * SLOW)
    try:
        s.connect(socket_path)
        s.sendall(request if isinstance(request, bytes) else request.encode())
        data = b""
        while not data.endswith(b"\n"):
            chunk = s.recv(65536)
            if not chunk:
                break
            data += chunk
        return data.decode("utf-8", "replace").rstrip("\n")
    finally:
        s.close()


# ---- Modbus reads of the simulator, frames built by hand (Modbus Application Protocol
# Specification V1.1b3, 6.1 and 6.3; Modbus Messaging on TCP/IP Implementation Guide V1.0b, MBAP) ----

def modbus_read(port, function, address, count, unit=1, timeout=2.0):
    with socket.create_connection(("127.0.0.1", port), timeout=timeout * SLOW) as s:
        s.sendall(struct.pack(">HHHBBHH", 7, 0, 6, unit, function, address, count))
        head = b""
        while len(head) < 7:
            chunk = s.recv(7 - len(head))
            if not chunk:
                raise ConnectionError("closed")
            head += chunk
        tid, proto, length, runit = struct.unpack(">HHHB", head)
        body = b""
        while len(body) < length - 1:
            chunk = s.recv(length - 1 - len(body))
            if not chunk:
                raise ConnectionError("closed")
            body += chunk
    if tid != 7 or proto != 0 or runit != unit or body[0] != function:
        raise ValueError("bad answer %r %r" % (head, body))
    if function in (1, 2):
        return [(body[2 + i // 8] >> (i % 8)) & 1 for i in range(count)]
    return list(struct.unpack(">%dH" % count, body[2:2 + 2 * count]))


# ---- advice in messages, against `gritline calc --target-aggr` ----

ADVICE_RE = (r"work speed (\d+) mm/min at depth (\d+\.\d{4}) mm, or depth (\d+\.\d{4}) mm at (\d+) mm/min, "
             r"brings it to (\d+\.\d)")


def pass_conditions(folder, p):
    """The means gritlined took over one pass, from the recording: the contact samples
    (grinding flag 1) of the pass, summed in their order as the segmentation does."""
    rows, _ = read_recording(os.path.join(folder, "samples.csv"))
    t0, t1 = float(p["start_time"]) - 0.1, float(p["end_time"]) + 0.1
    contact = [r for r in rows if r[8] == "1" and t0 <= float(r[0]) <= t1]
    if not contact:
        raise AssertionError("no contact samples for pass %s" % p["pass"])

    def mean(col):
        vals = [float(r[col]) for r in contact if r[col] != ""]
        return sum(vals) / len(vals)
    return {"ds": mean(6), "rpm": mean(2), "vw": mean(3), "samples": len(contact)}


def calc_advice(case, cond, depth_mm, width_mm, target):
    """`gritline calc --json` for one pass's conditions: (work speed, depth) for the target."""
    import json
    rc, out, err = case.run_tool([GRITLINE, "calc", "--wheel-diameter", repr(cond["ds"]), "--rpm", repr(cond["rpm"]),
                                  "--work-speed", repr(cond["vw"]), "--depth", repr(depth_mm),
                                  "--width", repr(float(width_mm)), "--target-aggr", repr(float(target)), "--json"])
    j = json.loads(out)
    return j["target_work_speed_mm_min"], j["target_depth_of_cut_mm"], j


# ---- passes against the truth ----

def largest_step(times, t0, t1):
    """The longest step between recorded samples that touches [t0, t1] (a stalled poll)."""
    import bisect
    i = max(bisect.bisect_left(times, t0) - 1, 0)
    j = min(bisect.bisect_right(times, t1) + 1, len(times))
    return max((b - a for a, b in zip(times[i:j], times[i + 1:j])), default=0.0)


def match_tolerance(times, t):
    """How far a start found by gritlined may lie from the truth's: 0.25 s, widened by a poll that
    stalled at that edge (the edge is then known only to the samples' spacing); at most 1 s, which
    is less than half the spacing of passes in the test scenarios."""
    return min(1.0, 0.25 + largest_step(times, t - 0.5, t + 0.5))


def sample_times(rows):
    return [float(r[0]) for r in rows]


def densely_sampled(times, t0, t1, nominal_step):
    """No poll stalled around [t0, t1] (with the idle time on either side that tells where a pass
    begins and ends): no step between samples over three nominal polls. A loaded test machine can
    stall a poll by tens of milliseconds, which --speed turns into tenths of a second of the
    simulator's time: a pass seen through such a hole is only as good as its samples."""
    return largest_step(times, t0 - 0.7, t1 + 0.7) <= 3.0 * nominal_step
