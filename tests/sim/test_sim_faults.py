"""test_sim_faults.py: every fault kind of gritline-sim, as a client sees it.

Requests and responses are built and parsed by hand after the Modbus
Application Protocol specification V1.1b3 and the Modbus Messaging on TCP/IP
Implementation Guide V1.0b (MBAP header); pymodbus (Debian python3-pymodbus)
is the second client. Fault times are sim seconds after start-up ("@+S+D").
"""
import os
import socket
import struct
import time
import unittest

import simharness as h

QUIET = h.scenario("quiet.ini")
NAN_BITS = 0x7FC00000  # a quiet NaN, IEEE 754 binary32
INF_BITS = 0x7F800000  # +infinity


def sim(*args):
    return h.Sim(QUIET, *args).start()


def wait_until(start, seconds):
    delay = start + seconds - time.monotonic()
    if delay > 0:
        time.sleep(delay)


class Drop(unittest.TestCase):
    def test_drop_once_closes_every_client(self):
        s = sim("--fault", "drop@+1")
        t0 = time.monotonic()
        try:
            a, b = h.connect(s.port), h.connect(s.port)
            self.assertEqual(h.f32(h.read_registers(a, 14, 2)), 350.0)
            self.assertEqual(h.f32(h.read_registers(b, 14, 2)), 350.0)
            wait_until(t0, 1.5)
            for sock in (a, b):
                with self.assertRaises((ConnectionError, OSError)):
                    h.read_registers(sock, 14, 2)
                sock.close()
            with h.connect(s.port) as c:  # one-shot: new connections are served
                self.assertEqual(h.f32(h.read_registers(c, 14, 2)), 350.0)
        finally:
            s.stop()

    def test_drop_window_refuses_new_connections(self):
        s = sim("--fault", "drop@+1+1.5")
        t0 = time.monotonic()
        try:
            wait_until(t0, 1.4)
            with h.connect(s.port) as c:  # accepted by the kernel, closed by the simulator
                with self.assertRaises((ConnectionError, OSError)):
                    h.read_registers(c, 14, 2)
            wait_until(t0, 3.0)
            with h.connect(s.port) as c:
                self.assertEqual(h.f32(h.read_registers(c, 14, 2)), 350.0)
        finally:
            s.stop()


class Silent(unittest.TestCase):
    def test_silent_reads_but_never_replies(self):
        log = h.temp_path("w.csv")
        s = sim("--fault", "silent@+0+2.5", "--write-log", log)
        t0 = time.monotonic()
        try:
            with h.connect(s.port, timeout=0.7) as c:
                with self.assertRaises(socket.timeout):
                    h.read_registers(c, 14, 2)
            with h.connect(s.port, timeout=0.3) as c:
                with self.assertRaises(socket.timeout):
                    h.write_register(c, 104, 9)
            with open(log) as f:
                self.assertTrue(f.read().rstrip().endswith(",6,104,1,9,no reply"))
            pm = h.client(s.port, timeout=1)
            rr = None
            try:
                rr = pm.read_holding_registers(14, 2, slave=1)
            except Exception:  # noqa: BLE001 - pymodbus raises or returns an error: both are "no answer"
                pass
            finally:
                pm.close()
            self.assertTrue(rr is None or rr.isError())
            wait_until(t0, 3.0)
            with h.connect(s.port) as c:
                self.assertEqual(h.f32(h.read_registers(c, 14, 2)), 350.0)
        finally:
            s.stop()


class Exceptions(unittest.TestCase):
    def test_exception_default_code_4(self):
        s = sim("--fault", "exception")
        try:
            with h.connect(s.port) as c:
                with self.assertRaises(h.ModbusError) as e:
                    h.read_registers(c, 0, 4)
                self.assertEqual(e.exception.code, 4)  # server device failure
                with self.assertRaises(h.ModbusError) as e:
                    h.read_registers(c, 0, 2, function=4)
                self.assertEqual(e.exception.code, 4)
            pm = h.client(s.port)
            try:
                rr = pm.read_holding_registers(0, 4, slave=1)
                self.assertTrue(rr.isError())
                self.assertEqual(rr.exception_code, 4)
            finally:
                pm.close()
        finally:
            s.stop()

    def test_exception_code_and_window(self):
        s = sim("--fault", "exception:6@+0+1.5")
        t0 = time.monotonic()
        try:
            with h.connect(s.port) as c:
                with self.assertRaises(h.ModbusError) as e:
                    h.read_registers(c, 14, 2)
                self.assertEqual(e.exception.code, 6)  # server device busy
                wait_until(t0, 2.0)
                self.assertEqual(h.f32(h.read_registers(c, 14, 2)), 350.0)
        finally:
            s.stop()

    def test_fault_from_the_scenario_file(self):
        path = h.temp_path("faulty.ini")
        with open(QUIET) as f, open(path, "w") as out:
            out.write(f.read() + "\n[faults]\nfault = exception:3\n")
        s = h.Sim(path).start()
        try:
            with h.connect(s.port) as c:
                with self.assertRaises(h.ModbusError) as e:
                    h.read_registers(c, 14, 2)
                self.assertEqual(e.exception.code, 3)
        finally:
            s.stop()


class Garbage(unittest.TestCase):
    def test_garbage_instead_of_a_reply(self):
        s = sim("--fault", "garbage@+0+1.5")
        t0 = time.monotonic()
        try:
            with h.connect(s.port, timeout=1.0) as c:
                tid = 0x4242
                c.sendall(struct.pack(">HHHBBHH", tid, 0, 6, 1, 3, 14, 2))
                data = c.recv(512)
                self.assertGreater(len(data), 0, "bytes came back")
                valid = (len(data) == 13 and struct.unpack(">HHHBBB", data[:9]) ==
                         (tid, 0, 7, 1, 3, 4))
                self.assertFalse(valid, "garbage must not be a valid response: %r" % data)
            wait_until(t0, 2.0)
            with h.connect(s.port) as c:
                self.assertEqual(h.f32(h.read_registers(c, 14, 2)), 350.0)
        finally:
            s.stop()


class Values(unittest.TestCase):
    def test_freeze_stops_every_register(self):
        # Speed 60: the window 60..180 sim s is 1..3 s of real time.
        s = sim("--speed", "60", "--fault", "freeze@+60+120")
        t0 = time.monotonic()
        try:
            with h.connect(s.port) as c:
                a = h.u64(h.read_registers(c, 0, 4))
                time.sleep(0.2)
                b = h.u64(h.read_registers(c, 0, 4))
                self.assertGreater(b, a, "clock runs before the fault")
                wait_until(t0, 1.4)
                f1 = h.read_registers(c, 0, 20), h.read_registers(c, 0, 14, function=4)
                time.sleep(0.5)
                f2 = h.read_registers(c, 0, 20), h.read_registers(c, 0, 14, function=4)
                self.assertEqual(f1, f2, "frozen registers do not change")
                # They hold the moment the freeze began: 60 sim s after start-up, at the
                # epoch (second line of the output), within one 50 ms loop (3 sim s).
                epoch_ms = round(float(s.stdout_lines[1].split()[1]) * 1000)
                frozen = h.u64(f1[0][0:4]) - epoch_ms
                self.assertGreaterEqual(frozen, 60000)
                self.assertLess(frozen, 60000 + 4000)
                wait_until(t0, 3.5)
                after = h.u64(h.read_registers(c, 0, 4))
                self.assertGreater(after, h.u64(f1[0][0:4]) + 60000)
        finally:
            s.stop()

    def check_floats(self, port, bits):
        with h.connect(port) as c:
            hr = h.read_registers(c, 0, 20)
            ir = h.read_registers(c, 0, 14, function=4)
        for regs in (hr[4:6], hr[6:8], hr[8:10], hr[14:16]):
            self.assertEqual(h.u32(regs, "abcd"), bits)
        self.assertEqual(h.u32(ir[3:5], "dcba"), bits)
        self.assertEqual(h.u32(ir[5:7], "badc"), bits)
        self.assertEqual(h.u32(ir[9:11], "cdab"), bits)
        return hr, ir

    def test_nan_in_every_float(self):
        s = sim("--fault", "nan@+0+1.5")
        t0 = time.monotonic()
        try:
            hr, ir = self.check_floats(s.port, NAN_BITS)
            self.assertEqual(h.u32(ir[7:9], "cdab"), 350000, "integers keep their values")
            self.assertEqual(hr[16:20], [0, 0, 0, 0])
            wait_until(t0, 2.0)
            with h.connect(s.port) as c:
                self.assertEqual(h.f32(h.read_registers(c, 14, 2)), 350.0)
        finally:
            s.stop()

    def test_inf_in_every_float(self):
        s = sim("--fault", "inf")
        try:
            self.check_floats(s.port, INF_BITS)
        finally:
            s.stop()

    def test_huge_values(self):
        s = sim("--fault", "huge")
        try:
            with h.connect(s.port) as c:
                hr = h.read_registers(c, 0, 20)
                ir = h.read_registers(c, 0, 14, function=4)
            self.assertEqual(h.f32(hr[4:6]), struct.unpack(">f", struct.pack(">f", 3.0e38))[0])
            self.assertEqual(h.s32(hr[10:12]), 2**31 - 1)
            self.assertEqual(h.u32(hr[12:14]), 2**32 - 1)
            self.assertEqual(h.u32(ir[0:2], "cdab"), 2**32 - 1)
            self.assertEqual(ir[2], 0xFFFF)
            self.assertEqual(h.u32(ir[7:9], "cdab"), 2**32 - 1)
        finally:
            s.stop()


class ControlFile(unittest.TestCase):
    def test_faults_toggled_at_run_time(self):
        control = h.temp_path("control")
        s = sim("--control", control)
        try:
            with h.connect(s.port) as c:
                self.assertEqual(h.f32(h.read_registers(c, 14, 2)), 350.0)
                with open(control + ".new", "w") as f:
                    f.write("# switched on by the test\nexception:6\n")
                os.rename(control + ".new", control)
                time.sleep(0.3)
                with self.assertRaises(h.ModbusError) as e:
                    h.read_registers(c, 14, 2)
                self.assertEqual(e.exception.code, 6)
                with open(control + ".new", "w") as f:
                    f.write("nan\n")
                os.rename(control + ".new", control)
                time.sleep(0.3)
                self.assertEqual(h.u32(h.read_registers(c, 14, 2)), NAN_BITS)
                with open(control + ".new", "w") as f:
                    f.write("nan\nbogus\n")
                os.rename(control + ".new", control)
                time.sleep(0.3)
                self.assertEqual(h.f32(h.read_registers(c, 14, 2)), 350.0,
                                 "a bad control file adds no fault")
                os.unlink(control)
                time.sleep(0.3)
                self.assertEqual(h.f32(h.read_registers(c, 14, 2)), 350.0)
        finally:
            s.stop()
        self.assertIn(control + ":2: fault \"bogus\": unknown kind", s.stderr_text)


if __name__ == "__main__":
    unittest.main(verbosity=2)
