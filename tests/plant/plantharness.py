"""plantharness.py: a small plant on 127.0.0.1 for the tests: gritline-sim, gritlined
configured like conf/demo.conf, a real mosquitto broker, mosquitto_sub, curl, promtool.

Everything listens on 127.0.0.1 with ports the kernel hands out; every wait is bounded.
The outside references are Debian's programs: mosquitto and mosquitto_sub
(mosquitto, mosquitto-clients), promtool (prometheus), curl and chromium.
"""
import json
import os
import queue
import re
import selectors
import shutil
import signal
import socket
import subprocess
import tempfile
import threading
import time

import simharness

HERE = os.path.dirname(os.path.abspath(__file__))
GRITLINED = os.environ.get("GRITLINED", "gritlined")
ROOT = os.environ.get("GRITLINE_ROOT", os.path.join(HERE, "..", ".."))
DEMO_CONF = os.path.join(ROOT, "conf", "demo.conf")
DEMO_INI = os.path.join(ROOT, "conf", "scenarios", "demo.ini")


def free_port():
    """A TCP port free on 127.0.0.1 now (the kernel's choice)."""
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def port_open(port):
    try:
        with socket.create_connection(("127.0.0.1", port), timeout=0.2):
            return True
    except OSError:
        return False


def wait_until(what, predicate, timeout, step=0.1):
    """Calls predicate until it returns something true; fails after timeout seconds.
    A predicate that fails (a server not up yet) counts as not yet."""
    deadline = time.monotonic() + timeout
    last = None
    while True:
        try:
            value = predicate()
        except (AssertionError, AttributeError, OSError, ValueError, KeyError, TypeError) as e:
            value, last = None, e
        if value:
            return value
        if time.monotonic() > deadline:
            raise AssertionError("timed out after %.0f s waiting for %s%s" % (
                timeout, what, " (last: %s)" % last if last else ""))
        time.sleep(step)


class Workdir:
    """A temporary folder removed at the end."""

    def __init__(self, prefix="gritline-plant-"):
        self.path = tempfile.mkdtemp(prefix=prefix)

    def file(self, name):
        return os.path.join(self.path, name)

    def close(self):
        if not os.environ.get("GRITLINE_LIVE_KEEP"):  # as the live tests: keep it for a look by hand
            shutil.rmtree(self.path, ignore_errors=True)


# ---- the broker -----------------------------------------------------------

class Broker:
    """mosquitto with its own configuration file: one listener on 127.0.0.1, persistence off."""

    def __init__(self, work, port=None, extra=""):
        self.work = work
        self.port = port or free_port()
        self.conf = work.file("mosquitto-%d.conf" % self.port)
        with open(self.conf, "w", encoding="utf-8") as f:
            f.write("listener %d 127.0.0.1\npersistence false\n" % self.port)
            f.write(extra if extra else "allow_anonymous true\n")
        self.proc = None
        self.log = None

    def start(self, timeout=10):
        self.log = open(self.work.file("mosquitto-%d.log" % self.port), "a", encoding="utf-8")
        self.proc = subprocess.Popen(["mosquitto", "-c", self.conf], stdout=self.log, stderr=subprocess.STDOUT)
        wait_until("mosquitto on port %d" % self.port, lambda: self.proc.poll() is not None or port_open(self.port),
                   timeout, 0.05)
        if self.proc.poll() is not None:
            raise RuntimeError("mosquitto did not start, see " + self.log.name)
        return self

    def stop(self):
        if self.proc and self.proc.poll() is None:
            self.proc.terminate()
            try:
                self.proc.wait(5)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait()
        if self.log:
            self.log.close()
            self.log = None
        self.proc = None


class Subscriber:
    """mosquitto_sub printing topic, QoS, retain flag and payload of every message
    (the -v output with the two flags added: -F '%t %q %r %p')."""

    def __init__(self, port, topics, qos=1, extra=()):
        args = ["mosquitto_sub", "-h", "127.0.0.1", "-p", str(port), "-q", str(qos), "-v",
                "-F", "%t\t%q\t%r\t%p", *extra]
        for t in topics:
            args += ["-t", t]
        self.proc = subprocess.Popen(args, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
        self.lines = queue.Queue()
        self.messages = []
        self.reader = threading.Thread(target=self._read, daemon=True)
        self.reader.start()

    def _read(self):
        for line in self.proc.stdout:
            self.lines.put(line.rstrip("\n"))

    def poll(self):
        """Takes what arrived: a list of (topic, qos, retain, payload text)."""
        while True:
            try:
                line = self.lines.get_nowait()
            except queue.Empty:
                return self.messages
            topic, qos, retain, payload = line.split("\t", 3)
            self.messages.append((topic, int(qos), int(retain), payload))

    def wait_for(self, what, predicate, timeout):
        """Waits for a message satisfying predicate(topic, qos, retain, payload); returns it."""
        def look():
            for m in self.poll():
                try:
                    if predicate(*m):
                        return m
                except (ValueError, KeyError, TypeError):  # not JSON, or another shape: not this one
                    continue
            return None
        return wait_until(what, look, timeout, 0.05)

    def ready(self, port, timeout=10):
        """Publishes a probe until this subscriber has seen it: it is then subscribed."""
        token = "probe-%d" % time.monotonic_ns()
        deadline = time.monotonic() + timeout
        while time.monotonic() < deadline:
            subprocess.run(["mosquitto_pub", "-h", "127.0.0.1", "-p", str(port), "-t", "plant-test/probe",
                            "-m", token], timeout=5, check=False)
            try:
                self.wait_for("probe", lambda t, q, r, p: p == token, 0.5)
                return self
            except AssertionError:
                continue
        raise AssertionError("mosquitto_sub did not subscribe")

    def stop(self):
        if self.proc.poll() is None:
            self.proc.terminate()
            try:
                self.proc.wait(5)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait()
        self.reader.join(2)
        self.proc.stdout.close()
        self.proc.stderr.close()
        self.poll()


class Gate:
    """A TCP relay in front of the broker that the test opens and closes: while
    closed, connections are refused and the open ones are cut, as if the broker
    were gone. It decides when gritlined may come back, so a test can have its
    subscriber listening first."""

    def __init__(self, target_port):
        self.target = target_port
        self.port = free_port()
        self.sel = selectors.DefaultSelector()
        self.listener = None
        self.pairs = {}
        self.lock = threading.Lock()
        self.stopping = False
        self.todo = None
        self.wake_r, self.wake_w = socket.socketpair()
        self.sel.register(self.wake_r, selectors.EVENT_READ, ("wake", None))
        self.thread = threading.Thread(target=self._run, daemon=True)
        self.thread.start()

    def _call(self, fn):
        done = threading.Event()
        with self.lock:
            self.todo = (fn, done)
        self.wake_w.send(b"x")
        done.wait(5)

    def open(self):
        def fn():
            if self.listener is None:
                ls = socket.socket(socket.AF_INET, socket.SOCK_STREAM)
                ls.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
                ls.bind(("127.0.0.1", self.port))
                ls.listen(8)
                ls.setblocking(False)
                self.listener = ls
                self.sel.register(ls, selectors.EVENT_READ, ("accept", None))
        self._call(fn)

    def close(self):
        def fn():
            if self.listener is not None:
                self.sel.unregister(self.listener)
                self.listener.close()
                self.listener = None
            for s in list(self.pairs):
                self._drop(s)
        self._call(fn)

    def shutdown(self):
        self.close()
        self.stopping = True
        self.wake_w.send(b"x")
        self.thread.join(5)
        self.sel.close()
        self.wake_r.close()
        self.wake_w.close()

    def _drop(self, s):
        other = self.pairs.pop(s, None)
        for x in (s, other):
            if x is not None:
                try:
                    self.sel.unregister(x)
                except (KeyError, ValueError):
                    pass
                self.pairs.pop(x, None)
                x.close()

    def _run(self):
        while not self.stopping:
            for key, _ in self.sel.select(0.5):
                kind, _ = key.data
                if kind == "wake":
                    self.wake_r.recv(64)
                    with self.lock:
                        todo, self.todo = self.todo, None
                    if todo:
                        todo[0]()
                        todo[1].set()
                elif kind == "accept":
                    try:
                        c, _ = self.listener.accept()
                    except OSError:
                        continue
                    try:
                        b = socket.create_connection(("127.0.0.1", self.target), timeout=2)
                    except OSError:
                        c.close()
                        continue
                    c.setblocking(False)
                    b.setblocking(False)
                    self.pairs[c] = b
                    self.pairs[b] = c
                    self.sel.register(c, selectors.EVENT_READ, ("data", None))
                    self.sel.register(b, selectors.EVENT_READ, ("data", None))
                else:
                    s = key.fileobj
                    try:
                        data = s.recv(65536)
                    except OSError:
                        data = b""
                    other = self.pairs.get(s)
                    if not data or other is None:
                        self._drop(s)
                        continue
                    try:
                        other.setblocking(True)
                        other.sendall(data)
                        other.setblocking(False)
                    except OSError:
                        self._drop(s)


# ---- gritline-sim and gritlined ----------------------------------------------

def demo_config(work, sim_port, metrics_port=0, mqtt=None, extra=""):
    """conf/demo.conf pointed at the simulator, the data in the work folder, with
    [metrics] and [mqtt] sections; returns the path."""
    with open(DEMO_CONF, encoding="utf-8") as f:
        text = f.read()
    text = re.sub(r"(?m)^port = 5020$", "port = %d" % sim_port, text)
    text = re.sub(r"(?m)^data_dir = .*$", "data_dir = " + work.file("data"), text)
    text += "\n[metrics]\nport = %d\n" % metrics_port
    if mqtt:
        text += "\n[mqtt]\nenabled = yes\n" + "".join("%s = %s\n" % kv for kv in mqtt.items())
    text += extra
    path = work.file("gritline.conf")
    with open(path, "w", encoding="utf-8") as f:
        f.write(text)
    return path


class Daemon:
    """The real gritlined; its journal lines are kept in a file."""

    def __init__(self, work, config):
        self.work = work
        self.log_path = work.file("gritlined.log")
        self.log = open(self.log_path, "a", encoding="utf-8")
        self.proc = subprocess.Popen([GRITLINED, "-c", config, "--socket", work.file("sg4.sock")],
                                     stdout=self.log, stderr=subprocess.STDOUT)

    def text(self):
        with open(self.log_path, encoding="utf-8", errors="replace") as f:
            return f.read()

    def stop(self, sig=signal.SIGTERM, timeout=10):
        """Returns the exit status (negative: killed by a signal)."""
        if self.proc.poll() is None:
            self.proc.send_signal(sig)
            try:
                self.proc.wait(timeout)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait()
                raise AssertionError("gritlined did not stop within %d s" % timeout)
        self.log.close()
        simharness.check_sanitizers(self.text())
        return self.proc.returncode


def start_sim(work, *args):
    return simharness.Sim(DEMO_INI, "--speed", "60", *args).start()


# ---- HTTP ---------------------------------------------------------------------

def curl(url, *args, timeout=10):
    """curl -sS; returns (status code, headers text, body bytes)."""
    hdr = os.path.join(tempfile.gettempdir(), "plant-curl-%d-%d.h" % (os.getpid(), time.monotonic_ns()))
    try:
        r = subprocess.run(["curl", "-sS", "--max-time", str(timeout), "-D", hdr, "-o", "-", *args, url],
                           capture_output=True, timeout=timeout + 5)
        head = ""
        if os.path.exists(hdr):
            with open(hdr, encoding="latin-1") as f:
                head = f.read()
    finally:
        if os.path.exists(hdr):
            os.unlink(hdr)
    m = re.match(r"HTTP/[0-9.]+ (\d+)", head)
    return (int(m.group(1)) if m else 0), head, r.stdout


def metrics(port):
    """Scrapes /metrics; returns {(name, frozenset(labels)): value} and the text."""
    code, _, body = curl("http://127.0.0.1:%d/metrics" % port)
    if code != 200:
        raise AssertionError("/metrics answered %d" % code)
    text = body.decode("utf-8")
    values = {}
    for line in text.splitlines():
        if not line or line.startswith("#"):
            continue
        m = re.match(r'^([a-zA-Z_:][a-zA-Z0-9_:]*)(\{(.*)\})? (\S+)$', line)
        if not m:
            raise AssertionError("not a sample line: %r" % line)
        labels = frozenset(re.findall(r'(\w+)="((?:[^"\\]|\\.)*)"', m.group(3) or ""))
        values[(m.group(1), labels)] = float(m.group(4))
    return values, text


def metric(values, name, **labels):
    """The value of one series; machine="sg4" is implied."""
    labels.setdefault("machine", "sg4")
    return values.get((name, frozenset(labels.items())))


def status(port):
    code, _, body = curl("http://127.0.0.1:%d/status.json" % port)
    if code != 200:
        raise AssertionError("/status.json answered %d" % code)
    return json.loads(body)
