"""test_control.py: the control socket while gritlined polls the simulator.

`gritline status --json` gives the live state (connected, a fresh last sample,
the passes so far); malformed, NUL-holding and oversized requests get error
replies and the daemon lives on; two clients interleaving their requests are
both answered; the socket file has mode 0660.
"""
import json
import os
import socket
import stat
import sys
import time
import unittest

import livetest as L

SPEED = 10.0
REQUEST_MAX = 256  # bytes of one request, newline included (daemon/control.h)


def connect(path):
    s = socket.socket(socket.AF_UNIX, socket.SOCK_STREAM)
    s.settimeout(5 * L.SLOW)
    s.connect(path)
    return s


def read_line(s):
    data = b""
    while not data.endswith(b"\n"):
        chunk = s.recv(65536)
        if not chunk:
            break
        data += chunk
    return data.decode("utf-8", "replace")


class Control(L.LiveCase):
    def test_status_errors_and_two_clients(self):
        sim = self.start_sim(L.scenario("short.ini"), SPEED)
        d = self.start_daemon(L.sim_conf(sim.port, speed=SPEED))
        L.wait_for(lambda: os.path.exists(d.socket), 10, "the control socket")
        mode = stat.S_IMODE(os.stat(d.socket).st_mode)
        self.assertTrue(stat.S_ISSOCK(os.stat(d.socket).st_mode))
        self.assertEqual(mode, 0o660, oct(mode))
        L.wait_for(lambda: json.loads(L.control(d.socket, "status\n"))["passes_shift"] >= 4, 15, "a few passes")

        folder = L.shift_folder(d.data_dir)
        rows_before = len(L.file_rows(folder, "passes.csv"))
        rc, out, err = self.run_tool([L.GRITLINE, "status", "--json", "--socket", d.socket])
        st = json.loads(out)
        rows = len(L.file_rows(folder, "passes.csv"))
        self.assertIs(st["connected"], True)
        self.assertIs(st["communication_lost"], False)
        self.assertEqual((st["machine"], st["mode"], st["job"], st["wheel"]),
                         ("sg4", "live", "plate-200", "cx60-vitrified"))
        self.assertLess(st["last_sample_age_s"], 1.0 * L.SLOW)
        self.assertGreaterEqual(st["last_sample_age_s"], 0.0)
        self.assertTrue(rows_before <= st["passes_shift"] <= rows, (rows_before, st["passes_shift"], rows))
        self.assertEqual(st["shift_dir"], folder)
        self.assertEqual(st["last_pass"]["pass"], st["passes_shift"])
        rc, text, err = self.run_tool([L.GRITLINE, "status", "--socket", d.socket])
        self.assertIn("controller  connected", text)
        print("status: connected %s, last sample %.3f s old, %d passes (passes.csv %d rows), %d polls" %
              (st["connected"], st["last_sample_age_s"], st["passes_shift"], rows, st["polls"]), file=sys.stderr)

        # Malformed requests: error replies, the connection stays usable.
        with connect(d.socket) as s:
            for req, want in ((b"bogus\n", "error unknown request \"bogus\""),
                              (b"status now\n", "error unknown request"),
                              (b"dress sideways\n", "error dress: unknown trigger \"sideways\""),
                              (b"sta\x00tus\n", "error request holds a NUL byte"),
                              (b"\xff\xfe\n", "error unknown request")):
                s.sendall(req)
                reply = read_line(s)
                self.assertTrue(reply.startswith(want), (req, reply))
            s.sendall(b"ping\n")
            self.assertEqual(read_line(s), "pong\n")
        # Oversized: refused, and that connection is closed.
        with connect(d.socket) as s:
            s.sendall(b"x" * (4 * REQUEST_MAX))
            reply = read_line(s)
            self.assertEqual(reply, "error request too long (at most %d bytes)\n" % (REQUEST_MAX - 1))
            try:  # closed: an end of file, or a reset for the bytes the daemon never read
                self.assertEqual(s.recv(100), b"", "the connection is closed after an oversized request")
            except ConnectionResetError:
                pass

        # Two clients at once, their requests interleaved byte by byte; a third stays idle.
        idle = connect(d.socket)
        a, b = connect(d.socket), connect(d.socket)
        try:
            a.sendall(b"sta")
            b.sendall(b"pi")
            time.sleep(0.05)
            b.sendall(b"ng\nstat")
            self.assertEqual(read_line(b), "pong\n")
            a.sendall(b"tus\n")
            b.sendall(b"us\n")
            ja, jb = json.loads(read_line(a)), json.loads(read_line(b))
            self.assertTrue(ja["connected"] and jb["connected"])
        finally:
            for s in (a, b, idle):
                s.close()
        self.assertTrue(d.alive())
        st2 = json.loads(L.control(d.socket, "status\n"))
        self.assertGreaterEqual(st2["polls"], st["polls"])
        self.stop_daemon(d)
        sim.stop()
        self.assertFalse(os.path.exists(d.socket), "the socket is removed at the stop")


if __name__ == "__main__":
    unittest.main(verbosity=2)
