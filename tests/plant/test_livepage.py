#!/usr/bin/python3
"""test_livepage.py: the live page in Debian's headless chromium, against gritline-sim.

Chromium is driven over its DevTools protocol on a pipe (--remote-debugging-pipe:
JSON messages ended by a NUL byte on file descriptors 3 and 4), so the test sees
every console message, uncaught exception and failed load of the page, reads the
text the page shows, and takes a screenshot (kept when GRITLINE_SCREENSHOT names
a file). The page must load with no error, draw the simulator's machine, job and
wheel and the pass count of /status.json, and keep refreshing by itself.
"""
import base64
import json
import os
import re
import subprocess
import tempfile
import time
import unittest

from plantharness import Daemon, Workdir, demo_config, free_port, metric, metrics, start_sim, status, wait_until

CHROMIUM_FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                  "--disable-background-networking", "--disable-component-update", "--disable-sync",
                  "--window-size=1280,800", "--remote-debugging-pipe"]


class Chromium:
    """One headless chromium; commands and events of the DevTools protocol over the pipe."""

    def __init__(self, profile):
        to_chrome_r, self.to_chrome = os.pipe()
        self.from_chrome, from_chrome_w = os.pipe()
        os.set_inheritable(to_chrome_r, True)
        os.set_inheritable(from_chrome_w, True)

        def fds():  # the browser reads commands on 3 and writes answers on 4
            os.dup2(to_chrome_r, 3)
            os.dup2(from_chrome_w, 4)
        self.proc = subprocess.Popen(["chromium", *CHROMIUM_FLAGS, "--user-data-dir=" + profile, "about:blank"],
                                     preexec_fn=fds, pass_fds=(3, 4),  # kept after preexec_fn, by number
                                     stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        os.close(to_chrome_r)
        os.close(from_chrome_w)
        self.buf = b""
        self.next_id = 0
        self.events = []
        self.session = None

    def _read_message(self, deadline):
        import select
        while b"\0" not in self.buf:
            left = deadline - time.monotonic()
            if left <= 0:
                raise AssertionError("chromium did not answer in time")
            ready, _, _ = select.select([self.from_chrome], [], [], left)
            if ready:
                chunk = os.read(self.from_chrome, 1 << 20)
                if not chunk:
                    raise AssertionError("chromium closed its pipe")
                self.buf += chunk
        msg, self.buf = self.buf.split(b"\0", 1)
        return json.loads(msg)

    def call(self, method, params=None, timeout=20, session=True):
        self.next_id += 1
        msg = {"id": self.next_id, "method": method, "params": params or {}}
        if session and self.session:
            msg["sessionId"] = self.session
        os.write(self.to_chrome, json.dumps(msg).encode() + b"\0")
        deadline = time.monotonic() + timeout
        while True:
            m = self._read_message(deadline)
            if m.get("id") == self.next_id:
                if "error" in m:
                    raise AssertionError("%s: %s" % (method, m["error"]))
                return m.get("result", {})
            self.events.append(m)

    def pump(self, seconds):
        """Collects events for a while."""
        deadline = time.monotonic() + seconds
        try:
            while True:
                self.events.append(self._read_message(deadline))
        except AssertionError as e:
            if "in time" not in str(e):
                raise

    def close(self):
        try:
            self.call("Browser.close", session=False, timeout=5)
        except (AssertionError, OSError):
            pass
        try:
            self.proc.wait(10)
        except subprocess.TimeoutExpired:
            self.proc.kill()
            self.proc.wait()
        os.close(self.to_chrome)
        os.close(self.from_chrome)


def problems(events):
    """Console errors and warnings, uncaught exceptions, failed loads (CDP Runtime, Log, Network)."""
    out = []
    for e in events:
        m, p = e.get("method"), e.get("params", {})
        if m == "Runtime.consoleAPICalled" and p.get("type") in ("error", "warning", "assert"):
            out.append("console %s: %s" % (p["type"], [a.get("value", a.get("description")) for a in p["args"]]))
        elif m == "Runtime.exceptionThrown":
            out.append("exception: %s" % p["exceptionDetails"].get("exception", {}).get("description",
                                                                                     p["exceptionDetails"]["text"]))
        elif m == "Log.entryAdded" and p["entry"]["level"] in ("error", "warning"):
            out.append("log %s: %s %s" % (p["entry"]["level"], p["entry"]["text"], p["entry"].get("url", "")))
        elif m == "Network.loadingFailed":
            out.append("load failed: %s" % p.get("errorText"))
    return out


class LivePage(unittest.TestCase):
    def test_page_shows_the_simulator(self):
        work = Workdir()
        sim = start_sim(work)
        port = free_port()
        daemon = Daemon(work, demo_config(work, sim.port, port))
        browser = None
        try:
            wait_until("two passes", lambda: (metric(metrics(port)[0], "gritline_passes_total") or 0) >= 2, 30, 0.3)
            browser = Chromium(work.file("profile"))
            targets = browser.call("Target.getTargets", session=False)["targetInfos"]
            page = next(t for t in targets if t["type"] == "page")
            browser.session = browser.call("Target.attachToTarget", {"targetId": page["targetId"], "flatten": True},
                                           session=False)["sessionId"]
            for domain in ("Runtime", "Log", "Network", "Page"):
                browser.call(domain + ".enable")
            browser.call("Page.navigate", {"url": "http://127.0.0.1:%d/" % port})
            browser.pump(3.5)  # the page fetches /status.json once a second

            def shown():
                return browser.call("Runtime.evaluate", {"expression": "document.body.innerText",
                                                         "returnByValue": True})["result"]["value"]
            text = shown()
            st = status(port)
            self.assertIn("sg4", text)
            self.assertIn("job plate-1200 \u00b7 wheel cx60-vitrified", text)
            self.assertIn("CONTROLLER OK", text)
            self.assertRegex(text, r"(GRINDING|IDLE)")
            self.assertRegex(text, r"\d+(\.\d)? k?W")  # the net power
            # The pass count follows the status JSON (a pass may end in between).
            shown_pass = int(re.search(r"(?i)pass\s+(\d+)", text).group(1))
            self.assertLessEqual(abs(shown_pass - st["last_pass"]["pass"]), 2, text)
            # It refreshes by itself: a later pass appears without a reload.
            wait_until("a newer pass on the page", lambda: int(re.search(r"(?i)pass\s+(\d+)", shown()).group(1))
                       > shown_pass, 15, 0.5)
            body_class = browser.call("Runtime.evaluate", {"expression": "document.body.className",
                                                           "returnByValue": True})["result"]["value"]
            self.assertNotEqual(body_class, "stale")
            shot = base64.b64decode(browser.call("Page.captureScreenshot", {"format": "png"})["data"])
            self.assertEqual(shot[:8], b"\x89PNG\r\n\x1a\n")
            keep = os.environ.get("GRITLINE_SCREENSHOT")
            if keep:
                with open(keep, "wb") as f:
                    f.write(shot)
            browser.pump(0.2)
            self.assertEqual(problems(browser.events), [])

            # When gritlined is gone the page says so instead of showing old figures.
            self.assertEqual(daemon.stop(), 0)
            wait_until("the no-data banner", lambda: browser.call(
                "Runtime.evaluate", {"expression": "document.body.className", "returnByValue": True}
            )["result"]["value"] == "stale", 15, 0.5)
        finally:
            if browser:
                browser.close()
            if daemon.proc.poll() is None:
                daemon.stop()
            sim.stop()
            work.close()


if __name__ == "__main__":
    unittest.main()
