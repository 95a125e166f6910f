"""evil_server.py: a Modbus TCP server on raw sockets that misbehaves on request, for tests/faults.

Frames follow the Modbus Application Protocol Specification V1.1b3 (function 03
"Read Holding Registers", 6.3; exception responses, 7: function code + 0x80 and
one exception code) and the Modbus Messaging on TCP/IP Implementation Guide
V1.0b (MBAP header, 3.1.3: transaction identifier, protocol identifier 0,
length = bytes that follow, unit identifier; every field big-endian, and the
server copies the transaction and unit identifiers of the request into its
response). The server holds the register map of gritline-sim (docs/simulator.md):
clock u64 ms at 0, spindle power f32 at 4, spindle speed f32 at 6, work speed f32
at 8, infeed s32 in 0.1 um at 10, wheel diameter f32 at 14, dress count at 16,
grinding flag at 17. The machine idles: about 1500 W that jitters.

`mode` (set by the test at any time) decides the answer to each request:

| mode | answer |
| --- | --- |
| normal | the registers |
| silent | none: the request is read and never answered (a controller that hangs) |
| half | the first 5 bytes of the answer, then silence (stops mid-reply) |
| trickle | the whole answer, one byte every `trickle_s` (slower than the client's timeouts) |
| exception | exception 04, server device failure (spec 7) |
| tid | the answer with another transaction identifier |
| unit | the answer with another unit identifier |
| length | the answer with an MBAP length 40 bytes longer than what follows (spec: Modbus Messaging on TCP/IP Implementation Guide V1.0b, 3.1.3) |
| nan, inf, huge | spindle power as a quiet NaN, +infinity, or 3.0e38 (IEEE 754 binary32) |
| freeze | every register bit for bit the same, answer after answer |

Run alone (`python3 evil_server.py MODE`) it serves on a free port and prints it.
"""
import random
import socket
import struct
import sys
import threading
import time

MODES = ("normal", "silent", "half", "trickle", "exception", "tid", "unit", "length", "nan", "inf", "huge", "freeze")
REGISTERS = 64


class EvilServer:
    def __init__(self, unit=1, trickle_s=0.15, seed=7):
        self.unit = unit
        self.trickle_s = trickle_s
        self.mode = "normal"
        self.rng = random.Random(seed)
        self.lock = threading.Lock()
        self.requests = {m: 0 for m in MODES}  # requests answered (or not) per mode
        self.connections = 0
        self.stopping = False
        self.listener = socket.socket(socket.AF_INET, socket.SOCK_STREAM)
        self.listener.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
        self.listener.bind(("127.0.0.1", 0))
        self.listener.listen(16)
        self.port = self.listener.getsockname()[1]
        self.thread = threading.Thread(target=self._accept, daemon=True)
        self.thread.start()

    def stop(self):
        self.stopping = True
        try:
            self.listener.close()
        except OSError:
            pass

    # ---- the register image ----

    def _image(self, mode):
        regs = [0] * REGISTERS
        if mode == "freeze":
            now_ms, power = 1709618400000, 1500.0
        else:
            now_ms = int(time.time() * 1000)
            with self.lock:
                power = 1500.0 + self.rng.uniform(-5.0, 5.0)
        if mode == "nan":
            power = float("nan")
        elif mode == "inf":
            power = float("inf")
        elif mode == "huge":
            power = 3.0e38

        def put_f32(addr, v):
            # IEEE 754 binary32, most significant word first ("abcd")
            hi, lo = struct.unpack(">HH", struct.pack(">f", v))
            regs[addr], regs[addr + 1] = hi, lo

        for i in range(4):  # u64, most significant word first
            regs[i] = (now_ms >> (16 * (3 - i))) & 0xFFFF
        put_f32(4, power)
        put_f32(6, 1450.0)
        put_f32(8, 0.0)
        regs[10], regs[11] = 0, 0       # infeed 0 mm
        put_f32(14, 400.0)
        regs[16] = 3                    # dress count
        regs[17] = 0                    # not grinding
        return regs

    # ---- the connection ----

    def _accept(self):
        while not self.stopping:
            try:
                conn, _ = self.listener.accept()
            except OSError:
                return
            with self.lock:
                self.connections += 1
            threading.Thread(target=self._serve, args=(conn,), daemon=True).start()

    @staticmethod
    def _recv_exact(conn, n):
        data = b""
        while len(data) < n:
            chunk = conn.recv(n - len(data))
            if not chunk:
                return None
            data += chunk
        return data

    def _serve(self, conn):
        conn.setsockopt(socket.IPPROTO_TCP, socket.TCP_NODELAY, 1)
        try:
            while not self.stopping:
                head = self._recv_exact(conn, 7)
                if head is None:
                    return
                tid, proto, length, unit = struct.unpack(">HHHB", head)
                pdu = self._recv_exact(conn, length - 1)
                if pdu is None:
                    return
                mode = self.mode
                with self.lock:
                    self.requests[mode] += 1
                reply = self._answer(mode, tid, proto, unit, pdu)
                if mode == "silent":
                    continue
                if mode == "half":
                    conn.sendall(reply[:5])
                    continue
                if mode == "trickle":
                    for b in reply:
                        conn.sendall(bytes([b]))
                        time.sleep(self.trickle_s)
                    continue
                conn.sendall(reply)
        except OSError:
            return
        finally:
            conn.close()

    def _answer(self, mode, tid, proto, unit, pdu):
        fc = pdu[0]
        if mode == "exception":
            body = struct.pack(">BB", fc | 0x80, 4)
        elif fc != 3 or len(pdu) != 5:
            body = struct.pack(">BB", fc | 0x80, 1)    # illegal function
        else:
            addr, count = struct.unpack(">HH", pdu[1:5])
            if count < 1 or count > 125 or addr + count > REGISTERS:
                body = struct.pack(">BB", fc | 0x80, 2)  # illegal data address
            else:
                regs = self._image(mode)[addr:addr + count]
                body = struct.pack(">BB%dH" % count, fc, 2 * count, *regs)
        if mode == "tid":
            tid ^= 0x5A5A
        if mode == "unit":
            unit = (unit + 1) & 0xFF
        length = len(body) + 1 + (40 if mode == "length" else 0)
        return struct.pack(">HHHB", tid, proto, length, unit) + body


if __name__ == "__main__":
    s = EvilServer()
    s.mode = sys.argv[1] if len(sys.argv) > 1 else "normal"
    print("listening on 127.0.0.1:%d, mode %s" % (s.port, s.mode), flush=True)
    try:
        while True:
            time.sleep(3600)
    except KeyboardInterrupt:
        s.stop()
