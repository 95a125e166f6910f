"""test_sim_server.py: the real gritline-sim read with mbpoll, pymodbus and hand-built frames.

The register map checked here is the one documented in docs/simulator.md.
Outside references: Debian's mbpoll and python3-pymodbus, and the Modbus
Application Protocol specification V1.1b3 (exception codes, section 7).
"""
import csv
import os
import struct
import threading
import time
import unittest

import simharness as h


class QuietRegisters(unittest.TestCase):
    """An idle machine with no noise: every register has a known value."""

    @classmethod
    def setUpClass(cls):
        cls.log = h.temp_path("writes.csv")
        cls.sim = h.Sim(h.scenario("quiet.ini"), "--write-log", cls.log).start()

    @classmethod
    def tearDownClass(cls):
        assert cls.sim.stop() == 0, "SIGTERM must end the simulator with status 0"

    def test_mbpoll_holding_registers_16_bit(self):
        # mbpoll counts references from 1 unless -0 (its man page and -h: "-0 First reference is 0
        # (PDU addressing)"); -0 here, so [14] is PDU address 14.
        rc, v, out = h.mbpoll(self.sim.port, "-0", "-r", "0", "-c", "20", "-t", "4")
        self.assertEqual(rc, 0, out)
        self.assertEqual(len(v), 20, out)
        # 350.0 as IEEE 754 binary32 is 0x43AF0000, abcd: high word first.
        self.assertEqual(int(v[14]), 0x43AF)
        self.assertEqual(int(v[15]), 0x0000)
        self.assertEqual([int(v[i]) for i in range(16, 20)], [0, 0, 0, 0])  # dresses, grinding, idle, pass

    def test_mbpoll_floats_and_integers(self):
        # -B: big-endian word order (abcd); mbpoll's default word order is cdab.
        rc, v, out = h.mbpoll(self.sim.port, "-0", "-B", "-r", "4", "-c", "3", "-t", "4:float")
        self.assertEqual(rc, 0, out)
        self.assertAlmostEqual(float(v[4]), 1500.0)   # idle power, W
        self.assertAlmostEqual(float(v[6]), 1640.0)   # spindle rpm
        self.assertAlmostEqual(float(v[8]), 0.0)      # table stands
        rc, v, out = h.mbpoll(self.sim.port, "-0", "-B", "-r", "10", "-c", "2", "-t", "4:int")
        self.assertEqual(rc, 0, out)
        self.assertEqual(int(v[10]), -25000)  # infeed -2.5 mm in 0.1 um, signed
        self.assertEqual(int(v[12]), 100)     # depth 0.01 mm in 0.1 um

    def test_mbpoll_one_based_references(self):
        # Without -0, reference 15 is PDU address 14: the wheel diameter.
        rc, v, out = h.mbpoll(self.sim.port, "-B", "-r", "15", "-t", "4:float")
        self.assertEqual(rc, 0, out)
        self.assertAlmostEqual(float(v[15]), 350.0)

    def test_mbpoll_input_registers_in_its_default_cdab_order(self):
        rc, v, out = h.mbpoll(self.sim.port, "-0", "-r", "0", "-t", "3:int")
        self.assertEqual(rc, 0, out)
        self.assertEqual(int(v[0]), 1500)      # power u32 W cdab
        rc, v, out = h.mbpoll(self.sim.port, "-0", "-r", "7", "-t", "3:int")
        self.assertEqual(int(v[7]), 350000)    # diameter u32 um cdab
        rc, v, out = h.mbpoll(self.sim.port, "-0", "-r", "11", "-t", "3:int")
        self.assertEqual(int(v[11]), -25000)   # infeed s32 cdab
        rc, v, out = h.mbpoll(self.sim.port, "-0", "-r", "9", "-t", "3:float")
        self.assertAlmostEqual(float(v[9]), 1500.0)  # power f32 cdab
        rc, v, out = h.mbpoll(self.sim.port, "-0", "-r", "0", "-c", "14", "-t", "3")
        self.assertEqual(int(v[2]), 150)       # power u16 in 10 W
        self.assertEqual(int(v[13]), 1640)     # rpm u16
        rc, v, out = h.mbpoll(self.sim.port, "-0", "-r", "0", "-t", "1")
        self.assertEqual(int(v[0]), 0)         # discrete input 0: not grinding

    def test_pymodbus_decoders_and_word_orders(self):
        from pymodbus.constants import Endian
        from pymodbus.payload import BinaryPayloadDecoder
        c = h.client(self.sim.port)
        try:
            rr = c.read_input_registers(0, 14, slave=1)
            self.assertFalse(rr.isError(), rr)
            r = rr.registers

            # pymodbus: byteorder swaps bytes inside each word, wordorder swaps the words.
            def dec(regs, byteorder, wordorder):
                return BinaryPayloadDecoder.fromRegisters(regs, byteorder=byteorder,
                                                          wordorder=wordorder)
            self.assertEqual(dec(r[0:2], Endian.Big, Endian.Little).decode_32bit_uint(), 1500)
            self.assertEqual(r[2], 150)
            self.assertEqual(dec(r[3:5], Endian.Little, Endian.Little).decode_32bit_float(), 0.0)
            self.assertEqual(dec(r[5:7], Endian.Little, Endian.Big).decode_32bit_float(), 350.0)
            self.assertEqual(dec(r[7:9], Endian.Big, Endian.Little).decode_32bit_uint(), 350000)
            self.assertEqual(dec(r[9:11], Endian.Big, Endian.Little).decode_32bit_float(), 1500.0)
            self.assertEqual(dec(r[11:13], Endian.Big, Endian.Little).decode_32bit_int(), -25000)
            self.assertEqual(r[13], 1640)
            # The same by hand (struct, big-endian registers per the specification).
            self.assertEqual(h.f32(r[5:7], "badc"), 350.0)
            self.assertEqual(h.s32(r[11:13], "cdab"), -25000)

            rr = c.read_holding_registers(0, 20, slave=1)
            self.assertFalse(rr.isError(), rr)
            hr = rr.registers
            self.assertEqual(dec(hr[14:16], Endian.Big, Endian.Big).decode_32bit_float(), 350.0)
            self.assertEqual(dec(hr[4:6], Endian.Big, Endian.Big).decode_32bit_float(), 1500.0)
            self.assertEqual(dec(hr[10:12], Endian.Big, Endian.Big).decode_32bit_int(), -25000)
            self.assertEqual(dec(hr[12:14], Endian.Big, Endian.Big).decode_32bit_uint(), 100)
            self.assertEqual(dec(hr[0:4], Endian.Big, Endian.Big).decode_64bit_uint(), h.u64(hr[0:4]))
            rr = c.read_discrete_inputs(0, 1, slave=1)
            self.assertFalse(rr.isError(), rr)
            self.assertFalse(rr.bits[0])
        finally:
            c.close()

    def test_clock_is_sim_time(self):
        # Default epoch = start-up and speed 1: the clock is the wall clock.
        with h.connect(self.sim.port) as s:
            before = time.time()
            clock = h.u64(h.read_registers(s, 0, 4)) / 1000.0
            after = time.time()
        self.assertGreaterEqual(clock, before - 0.002)
        self.assertLessEqual(clock, after + 0.002)

    def test_writes_inside_and_outside_the_write_back_area(self):
        c = h.client(self.sim.port)
        try:
            rr = c.write_register(100, 42, slave=1)
            self.assertFalse(rr.isError(), rr)
            self.assertEqual(c.read_holding_registers(100, 1, slave=1).registers, [42])
            rr = c.write_registers(110, [1, 2, 3], slave=1)
            self.assertFalse(rr.isError(), rr)
            rr = c.write_register(5, 7, slave=1)          # a live register
            self.assertTrue(rr.isError())
            self.assertEqual(rr.exception_code, 2)        # illegal data address
            rr = c.write_registers(114, [1, 2, 3], slave=1)  # runs past 115
            self.assertEqual(rr.exception_code, 2)
            rr = c.write_coil(15, True, slave=1)
            self.assertFalse(rr.isError(), rr)
            rr = c.write_coil(16, True, slave=1)
            self.assertEqual(rr.exception_code, 2)
            rr = c.read_coils(0, 16, slave=1)
            self.assertTrue(rr.bits[15])
            rr = c.read_holding_registers(20, 1, slave=1)  # a gap in the map
            self.assertEqual(rr.exception_code, 2)
            rr = c.read_holding_registers(19, 2, slave=1)  # runs into the gap
            self.assertEqual(rr.exception_code, 2)
            rr = c.read_holding_registers(0, 1, slave=7)   # another unit
            self.assertEqual(rr.exception_code, 0x0B)     # gateway target failed to respond
        finally:
            c.close()
        rc, _, out = h.mbpoll(self.sim.port, "-0", "-r", "101", "-t", "4", write=[77])
        self.assertEqual(rc, 0, out)
        rc, _, out = h.mbpoll(self.sim.port, "-0", "-r", "18", "-t", "4", write=[1])
        self.assertNotEqual(rc, 0, out)
        self.assertIn("Illegal data address", out)
        time.sleep(0.1)
        with open(self.log) as f:
            rows = list(csv.DictReader(f))
        got = [(r["function"], r["address"], r["values"], r["result"]) for r in rows]
        self.assertIn(("6", "100", "42", "accepted"), got)
        self.assertIn(("16", "110", "1 2 3", "accepted"), got)
        self.assertIn(("6", "5", "7", "exception 02"), got)
        self.assertIn(("16", "114", "1 2 3", "exception 02"), got)
        self.assertIn(("5", "15", "1", "accepted"), got)
        self.assertIn(("5", "16", "1", "exception 02"), got)
        self.assertIn(("6", "101", "77", "accepted"), got)
        self.assertIn(("6", "18", "1", "exception 02"), got)
        # Nothing outside the write-back area was accepted.
        for r in rows:
            if r["result"] == "accepted":
                a, n = int(r["address"]), int(r["count"])
                if r["function"] in ("5", "15"):
                    self.assertLessEqual(a + n, 16, r)
                else:
                    self.assertTrue(100 <= a and a + n <= 116, r)
        for r in rows:
            self.assertRegex(r["client"], r"^127\.0\.0\.1:\d+$")

    def test_several_clients_at_once(self):
        socks = [h.connect(self.sim.port) for _ in range(8)]
        errors = []
        try:
            for _ in range(10):
                for s in socks:  # interleaved on open connections
                    regs = h.read_registers(s, 14, 2)
                    self.assertEqual(h.f32(regs), 350.0)

            def worker():
                try:
                    c = h.client(self.sim.port)
                    last = 0
                    for _ in range(30):
                        rr = c.read_holding_registers(0, 4, slave=1)
                        now = h.u64(rr.registers)
                        if now < last:
                            errors.append("clock went back")
                        last = now
                    c.close()
                except Exception as e:  # noqa: BLE001 - reported below
                    errors.append(repr(e))
            threads = [threading.Thread(target=worker) for _ in range(6)]
            for t in threads:
                t.start()
            rc, v, out = h.mbpoll(self.sim.port, "-0", "-r", "16", "-c", "4", "-t", "4")
            for t in threads:
                t.join(20)
            self.assertEqual(rc, 0, out)
            self.assertEqual(errors, [])
        finally:
            for s in socks:
                s.close()


class DressOnCoil(unittest.TestCase):
    """[schedule] dress_on_coil: the operator dresses at the next part change."""

    SCENARIO = """; coil.ini: short parts (about 6 sim s) so a part change comes quickly.
[job]
length_mm = 100
table_speed_mm_min = 6000
rough_passes = 2
finish_passes = 0
spark_out_passes = 0
load_s = 2
[wheel]
dress_s = 1
[schedule]
dress_on_coil = 3
[noise]
power_sd_w = 0
"""

    def test_coil_requests_a_dress(self):
        path = h.temp_path("coil.ini")
        with open(path, "w") as f:
            f.write(self.SCENARIO)
        dresses = h.temp_path("dresses.csv")
        with h.Sim(path, "--speed", "10", "--truth-dresses", dresses) as sim:
            with h.connect(sim.port) as s:
                time.sleep(1.0)
                self.assertEqual(h.read_registers(s, 16, 1), [0], "no dress without the request")
                h.transact(s, struct.pack(">BHH", 5, 3, 0xFF00))  # write coil 3 on
                deadline = time.monotonic() + 5.0
                while time.monotonic() < deadline and h.read_registers(s, 16, 1) == [0]:
                    time.sleep(0.1)
                self.assertEqual(h.read_registers(s, 16, 1), [1])
                self.assertEqual(h.read_bits(s, 0, 16)[3], 0, "the lamp goes out after the dress")
                time.sleep(1.5)
                self.assertEqual(h.read_registers(s, 16, 1), [1], "one request, one dress")
        with open(dresses) as f:
            rows = list(csv.DictReader(f))
        self.assertEqual([r["reason"] for r in rows], ["request"])


class SpeedAndEpoch(unittest.TestCase):
    def test_clock_runs_at_speed_from_the_epoch(self):
        epoch = round(time.time() - 30.0, 3)
        with h.Sim(h.scenario("quiet.ini"), "--speed", "60", "--epoch", "%.3f" % epoch) as sim:
            with h.connect(sim.port) as s:
                for _ in range(3):
                    before = time.time()
                    clock = h.u64(h.read_registers(s, 0, 4)) / 1000.0
                    after = time.time()
                    # sim = epoch + (real - epoch) * speed (docs/simulator.md)
                    self.assertGreaterEqual(clock, epoch + (before - epoch) * 60 - 0.002)
                    self.assertLessEqual(clock, epoch + (after - epoch) * 60 + 0.002)
                    time.sleep(0.5)
                t0 = time.monotonic()
                c0 = h.u64(h.read_registers(s, 0, 4))
                time.sleep(1.0)
                c1 = h.u64(h.read_registers(s, 0, 4))
                dt = time.monotonic() - t0
                self.assertAlmostEqual((c1 - c0) / 1000.0, 60 * dt, delta=60 * 0.05)


class DemoDuringAPass(unittest.TestCase):
    """The demo at speed 1, started in the middle of pass 3's contact: the
    registers must show what the truth says about that pass."""

    def test_registers_during_contact_match_the_truth(self):
        demo = h.scenario("demo.ini")
        truth = h.temp_path("truth.csv")
        epoch0 = 1709532000
        import subprocess
        subprocess.run([h.SIM, "--truth-only", "--until", "+20m", "--epoch", str(epoch0),
                        "--truth", truth, demo], check=True, timeout=30)
        with open(truth) as f:
            p3 = [r for r in csv.DictReader(f) if r["pass"] == "3"][0]
        start_rel = float(p3["start_time"]) - epoch0
        # Put "now" 8 s into the contact: epoch = now - (start_rel + 8).
        epoch = time.time() - (start_rel + 8.0)
        with h.Sim(demo, "--epoch", "%.3f" % epoch) as sim:
            with h.connect(sim.port) as s:
                hr = h.read_registers(s, 0, 20)
                bits = h.read_bits(s, 0, 1, function=2)
        self.assertEqual(hr[17], 1, "grinding flag")
        self.assertEqual(bits, [1], "discrete input 0")
        self.assertEqual(hr[18], 1, "state grinding")
        self.assertEqual(hr[19], 3, "pass number")
        self.assertEqual(hr[16], 0, "no dress yet")
        self.assertAlmostEqual(h.f32(hr[8:10]), float(p3["work_speed_mm_min"]), places=3)
        self.assertAlmostEqual(h.f32(hr[14:16]), float(p3["wheel_diameter_mm"]), places=3)
        self.assertEqual(h.u32(hr[12:14]), round(float(p3["depth_of_cut_mm"]) * 1e4))
        self.assertEqual(h.s32(hr[10:12]), 3 * round(float(p3["depth_of_cut_mm"]) * 1e4))
        self.assertAlmostEqual(h.f32(hr[6:8]), float(p3["spindle_rpm"]), delta=2.0)
        net = h.f32(hr[4:6]) - 2400.0  # idle 2400 W, warm-up <= 300 W, drift <= 60 W, noise 25 W sd
        self.assertGreater(net, float(p3["grinding_power_w"]) - 200.0)
        self.assertLess(net, float(p3["grinding_power_w"]) + 500.0)


if __name__ == "__main__":
    unittest.main(verbosity=2)
