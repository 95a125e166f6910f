"""test_reload.py: SIGHUP with a good and with a bad configuration while gritlined polls.

A good file (another job, with another grinding width) is taken: a "config" event
"configuration loaded: ..." and the passes after it computed with the new width.
A bad file is refused: a "config" warning "configuration refused, running one
kept: FILE:LINE: ...", and the daemon goes on polling and writing with the
running configuration.
"""
import os
import signal
import sys
import unittest

import livetest as L

SPEED = 10.0


def conf_with_job(port, job):
    """Two jobs on the same plate: the configuration tells which one runs."""
    extra = {"job.plate-200-narrow": {"geometry": "surface", "width_mm": "20", "material": "steel"},
             "wheel.cx60-spare": {"diameter_mm": "400", "max_speed_m_s": "35", "aggr_low": "12",
                                  "aggr_high": "24"},
             "machine": {"job": job, "wheel": "cx60-vitrified" if job == "plate-200" else "cx60-spare"}}
    return L.sim_conf(port, speed=SPEED, extra=extra)


class Reload(L.LiveCase):
    def test_good_then_bad_configuration(self):
        sim = self.start_sim(L.scenario("short.ini"), SPEED)
        d = self.start_daemon(conf_with_job(sim.port, "plate-200"))
        def folder_of():
            return L.shift_folder(d.data_dir)

        def events():
            f = L.try_shift_folder(d.data_dir)
            return L.file_rows(f, "events.csv") if f else []

        def passes():
            f = L.try_shift_folder(d.data_dir)
            return L.file_rows(f, "passes.csv") if f else []

        def wait_passes(after_time, n, what):
            L.wait_for(lambda: len([p for p in passes() if float(p["start_time"]) > after_time]) >= n, 20, what)

        L.wait_for(lambda: len(passes()) >= 8, 20, "a part with the first job")
        # The good configuration: the narrow job and the spare wheel.
        L.write_file(d.conf, conf_with_job(sim.port, "plate-200-narrow"))
        d.send(signal.SIGHUP)
        loaded = L.wait_for(lambda: [e for e in events() if e["kind"] == "config"], 10, "the config event")
        self.assertEqual(len(loaded), 1)
        e = loaded[0]
        self.assertEqual((e["severity"], e["state"]), ("info", "info"))
        self.assertEqual(e["message"], "configuration loaded: %s, job plate-200-narrow, wheel cx60-spare" % d.conf)
        t_loaded = float(e["time"])
        wait_passes(t_loaded, 8, "a part with the new job")
        status = L.control(d.socket, "status\n")
        self.assertIn('"job":"plate-200-narrow"', status)
        self.assertIn('"wheel":"cx60-spare"', status)

        # The bad one: a key the parser does not know.
        bad = conf_with_job(sim.port, "plate-200").replace("[segmentation]\n", "[segmentation]\nflux = 3\n")
        L.write_file(d.conf, bad)
        d.send(signal.SIGHUP)
        refused = L.wait_for(lambda: [e for e in events() if e["kind"] == "config"][1:], 10, "the refusal")
        r = refused[0]
        self.assertEqual((r["severity"], r["state"]), ("warning", "info"))
        bad_line = bad.split("\n").index("flux = 3") + 1
        want = "configuration refused, running one kept: %s:%d: " % (d.conf, bad_line)
        self.assertTrue(r["message"].startswith(want),
                        r["message"])
        self.assertIn("flux", r["message"])
        t_refused = float(r["time"])
        n_samples_then = len(L.read_recording(os.path.join(folder_of(), "samples.csv"))[0])
        wait_passes(t_refused, 8, "passes after the refusal")
        self.assertTrue(d.alive())
        self.assertIn('"job":"plate-200-narrow"', L.control(d.socket, "status\n"), "the running one is kept")
        self.stop_daemon(d)
        sim.stop()

        folder = folder_of()
        L.whole_lines(self, folder)
        rows, marks = L.read_recording(os.path.join(folder, "samples.csv"))
        self.assertGreater(len(rows), n_samples_then + 100, "samples keep coming after the refusal")
        self.assertEqual([m[1] for m in marks], ["start", "config", "config", "stop"])
        self.assertTrue(marks[1][2].startswith("loaded: ") and marks[2][2].startswith("refused"), marks)

        # The settings in use: the removal rate of a roughing pass is b * ae * vw, with the
        # configured b: 30 mm before the reload, 20 mm after it, also after the refusal (a pass
        # takes the settings in force when it ends).
        def widths(t0, t1):
            out = set()
            for p in L.file_rows(folder, "passes.csv"):
                if t0 < float(p["end_time"]) <= t1 and p["depth_of_cut_mm"] not in ("", "0.000000"):
                    q, ae = float(p["removal_rate_mm3_s"]), float(p["depth_of_cut_mm"])
                    vw = float(p["work_speed_mm_min"])
                    out.add(round(q / (ae * vw / 60.0), 3))
            return out
        first, second, third = widths(0, t_loaded), widths(t_loaded, t_refused), widths(t_refused, 1e12)
        print("grinding widths seen: before the reload %s, after it %s, after the refusal %s" % (first, second, third),
              file=sys.stderr)
        self.assertEqual(first, {30.0})
        self.assertEqual(second, {20.0})
        self.assertEqual(third, {20.0})


    def test_writeback_moves_with_reload(self):
        """A reload that moves a write-back lamp: the old coil is put out, the new one set.

        reload() once rebuilt the Modbus client (and its list of writable addresses) only when
        [modbus] or the channels changed: after moving low_aggressiveness from coil 2 to coil 3
        the old coil stayed on and the new one was never written."""
        sim = self.start_sim(L.scenario("short.ini"), SPEED)
        window = {"aggr_low": 25, "aggr_high": 30}  # short.ini runs below it: low_aggressiveness
        conf = L.sim_conf(sim.port, speed=SPEED, extra={"writeback": {"low_aggressiveness": "coil 2"}}, **window)
        d = self.start_daemon(conf)
        try:
            L.wait_for(lambda: L.events_raised(d.data_dir, "low_aggressiveness"), 20, "low_aggressiveness")
            # Coils read with frames built from the Modbus Application Protocol Specification
            # V1.1b3, 6.1 (function 01).
            L.wait_for(lambda: L.modbus_read(sim.port, 1, 0, 4) == [0, 0, 1, 0], 5, "coil 2 on")
            L.write_file(d.conf, L.sim_conf(sim.port, speed=SPEED,
                                            extra={"writeback": {"low_aggressiveness": "coil 3"}}, **window))
            d.send(signal.SIGHUP)
            L.wait_for(lambda: L.modbus_read(sim.port, 1, 0, 4) == [0, 0, 0, 1], 5, "coil 2 off, coil 3 on")
        finally:
            self.stop_daemon(d)
            sim.stop()


if __name__ == "__main__":
    unittest.main(verbosity=2)
