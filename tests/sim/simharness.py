"""simharness.py: starts the real gritline-sim for the integration tests and speaks Modbus TCP to it.

Frames are built by hand from the Modbus Application Protocol specification
V1.1b3 and the Modbus Messaging on TCP/IP Implementation Guide V1.0b (MBAP
header: transaction id, protocol id 0, length, unit id; big-endian fields), so
the tests do not trust the simulator's own encoder.
"""
import os
import select
import signal
import socket
import struct
import subprocess
import sys
import tempfile
import time

# Set by tests/sim/meson.build; the defaults serve a run by hand from the source tree.
HERE = os.path.dirname(os.path.abspath(__file__))
SIM = os.environ.get("GRITLINE_SIM", "gritline-sim")
SCENARIOS = os.environ.get("GRITLINE_SCENARIOS", os.path.join(HERE, "..", "..", "conf", "scenarios"))
DATA = os.environ.get("SIM_TEST_DATA", os.path.join(HERE, "data"))


def scenario(name):
    """Path of a shipped scenario (conf/scenarios) or of a test one (tests/sim/data)."""
    for folder in (DATA, SCENARIOS):
        path = os.path.join(folder, name)
        if os.path.exists(path):
            return path
    raise FileNotFoundError(name)


def pymodbus_client_class():
    """Debian 12's pymodbus 3.0 imports serial_asyncio from pymodbus.client even
    for TCP; the package python3-serial-asyncio provides it. Without it, a
    placeholder module lets the TCP client load (serial is never used here)."""
    try:
        from pymodbus.client import ModbusTcpClient
    except ModuleNotFoundError as e:
        if e.name != "serial_asyncio":
            raise
        import types
        stub = types.ModuleType("serial_asyncio")
        stub.create_serial_connection = None
        sys.modules["serial_asyncio"] = stub
        from pymodbus.client import ModbusTcpClient
    return ModbusTcpClient


def client(port, timeout=2):
    """A pymodbus TCP client. pymodbus 3.0 keeps int(timeout): 0.5 would become
    0, a non-blocking socket whose connect fails, so whole seconds only."""
    cls = pymodbus_client_class()
    c = cls("127.0.0.1", port=port, timeout=max(1, int(timeout)), retries=0)
    if not c.connect():
        raise ConnectionError("pymodbus could not connect to port %d" % port)
    return c


class Sim:
    """One gritline-sim process on 127.0.0.1, port 0 (the port it prints)."""

    def __init__(self, scenario_path, *args):
        self.args = [SIM, "--port", "0", *args, scenario_path]
        self.proc = None
        self.port = None
        self.stdout_lines = []
        self.stderr_text = ""

    def start(self, timeout=10.0):
        self.proc = subprocess.Popen(self.args, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                                     text=True)
        deadline = time.monotonic() + timeout
        line = ""
        while time.monotonic() < deadline:
            ready, _, _ = select.select([self.proc.stdout], [], [], 0.1)
            if ready:
                line = self.proc.stdout.readline()
                break
            if self.proc.poll() is not None:
                break
        if not line.startswith("listening on 127.0.0.1:"):
            err = self.proc.stderr.read() if self.proc.poll() is not None else ""
            self.stop(signal.SIGKILL)
            raise RuntimeError("gritline-sim did not start: %r %r" % (line, err))
        self.stdout_lines.append(line)
        self.port = int(line.strip().rsplit(":", 1)[1])
        self.stdout_lines.append(self.proc.stdout.readline())
        return self

    def stop(self, sig=signal.SIGTERM, timeout=5.0):
        """Ends the process; returns its exit status."""
        if self.proc is None:
            return None
        if self.proc.poll() is None:
            self.proc.send_signal(sig)
            try:
                self.proc.wait(timeout)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait()
        if self.proc.stderr is not None and not self.proc.stderr.closed:
            self.stderr_text = self.proc.stderr.read()
        for f in (self.proc.stdout, self.proc.stderr):
            if f is not None:
                f.close()
        check_sanitizers(self.stderr_text)
        return self.proc.returncode

    def __enter__(self):
        return self.start()

    def __exit__(self, *exc):
        self.stop()


def check_sanitizers(stderr_text):
    """A build with -Db_sanitize=address,undefined reports on stderr; any report fails the test."""
    for marker in ("ERROR: AddressSanitizer", "ERROR: LeakSanitizer", "runtime error:"):
        if marker in stderr_text:
            raise AssertionError("sanitizer report from gritline-sim:\n" + stderr_text)


# ---- Modbus TCP by hand ----

class ModbusError(Exception):
    def __init__(self, code):
        super().__init__("Modbus exception %02X" % code)
        self.code = code


def connect(port, timeout=2.0):
    s = socket.create_connection(("127.0.0.1", port), timeout=timeout)
    s.settimeout(timeout)
    return s


def recv_exact(sock, n):
    data = b""
    while len(data) < n:
        chunk = sock.recv(n - len(data))
        if not chunk:
            raise ConnectionError("connection closed")
        data += chunk
    return data


_tid = [0]


def transact(sock, pdu, unit=1):
    """Sends one request PDU, returns the response PDU. Raises ModbusError for
    an exception response (function code + 0x80, then the code)."""
    _tid[0] = (_tid[0] + 1) & 0xFFFF
    tid = _tid[0]
    sock.sendall(struct.pack(">HHHB", tid, 0, len(pdu) + 1, unit) + pdu)
    head = recv_exact(sock, 7)
    rtid, proto, length, runit = struct.unpack(">HHHB", head)
    if rtid != tid or proto != 0 or runit != unit or length < 2 or length > 254:
        raise ValueError("bad MBAP header %r" % head)
    body = recv_exact(sock, length - 1)
    if body[0] & 0x80:
        if body[0] != pdu[0] | 0x80 or len(body) != 2:
            raise ValueError("bad exception response %r" % body)
        raise ModbusError(body[1])
    if body[0] != pdu[0]:
        raise ValueError("function %d answered for %d" % (body[0], pdu[0]))
    return body


def read_registers(sock, address, count, function=3, unit=1):
    body = transact(sock, struct.pack(">BHH", function, address, count), unit)
    if body[1] != 2 * count or len(body) != 2 + 2 * count:
        raise ValueError("bad byte count in %r" % body)
    return list(struct.unpack(">%dH" % count, body[2:]))


def read_bits(sock, address, count, function=1, unit=1):
    body = transact(sock, struct.pack(">BHH", function, address, count), unit)
    nbytes = (count + 7) // 8
    if body[1] != nbytes:
        raise ValueError("bad byte count")
    return [(body[2 + i // 8] >> (i % 8)) & 1 for i in range(count)]


def write_register(sock, address, value, unit=1):
    return transact(sock, struct.pack(">BHH", 6, address, value), unit)


# 32-bit decoding from two registers, byte order on the wire: reg0 hi, reg0 lo, reg1 hi, reg1 lo.
def to_bytes(regs):
    return struct.pack(">%dH" % len(regs), *regs)


def f32(regs, order="abcd"):
    b = to_bytes(regs)
    return struct.unpack(">f", reorder(b, order))[0]


def u32(regs, order="abcd"):
    return struct.unpack(">I", reorder(to_bytes(regs), order))[0]


def s32(regs, order="abcd"):
    return struct.unpack(">i", reorder(to_bytes(regs), order))[0]


def reorder(b, order):
    """Bytes as they arrive (positions a b c d as named by `order`) -> big-endian value bytes."""
    pos = {ch: i for i, ch in enumerate(order)}
    return bytes(b[pos[ch]] for ch in "abcd")


def u64(regs):
    return struct.unpack(">Q", to_bytes(regs))[0]


def mbpoll(port, *args, write=(), timeout=10):
    """Runs Debian's mbpoll once against the simulator (writing `write` when
    given: values go after the host); returns (status, {reference: text}, output)."""
    cmd = ["mbpoll", "-m", "tcp", "-a", "1", "-1", "-o", "2", "-p", str(port), *args, "127.0.0.1",
           *[str(v) for v in write]]
    out = subprocess.run(cmd, capture_output=True, text=True, timeout=timeout)
    values = {}
    for line in out.stdout.splitlines():
        line = line.strip()
        if line.startswith("[") and "]:" in line:
            ref, val = line[1:].split("]:", 1)
            values[int(ref)] = val.strip()
    return out.returncode, values, out.stdout + out.stderr


_tmp = tempfile.TemporaryDirectory(prefix="gritline-sim-test-")  # removed at exit
_tmp_count = [0]


def temp_path(name):
    """A fresh path in this process's temporary folder."""
    _tmp_count[0] += 1
    d = os.path.join(_tmp.name, str(_tmp_count[0]))
    os.mkdir(d)
    return os.path.join(d, name)
