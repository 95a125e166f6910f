#!/usr/bin/python3
"""test_browser.py: the HTML report rendered by a real browser (Debian's chromium, headless).

For a one-shift report (every pass drawn) and a two-shift report (drawn per pixel
column), through the DevTools protocol (python3-websocket): the page loads from the
file with no console message, no exception and no request beyond the file itself;
every chart's SVG is there with tick labels on both axes, a legend, its data points,
and fits the page. Then chromium's own --dump-dom and --screenshot: the DOM it built
holds the three charts and the caution, and the screenshot is a PNG of the asked size
that is not blank. The screenshots are kept when REPORT_SCREENSHOTS names a folder.
Each browser run is bounded (45 s); the three run side by side, the whole test takes
about 15 s on an idle machine.
"""
import json
import os
import shutil
import struct
import subprocess
import tempfile
import time
import unittest
import zlib

import reportdata as rd

try:
    import websocket  # Debian's python3-websocket
except ImportError:
    websocket = None
try:
    import numpy as np  # only speeds up the PNG decoding (comes with python3-pandas)
except ImportError:
    np = None

CHROMIUM = shutil.which("chromium") or "/usr/bin/chromium"
FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         "--disable-dev-shm-usage", "--disable-extensions", "--hide-scrollbars", "--mute-audio"]
TMP = None
PAGES = {}
RUNS = {}  # background chromium runs by name
BROWSER = None  # the chromium driven over the DevTools protocol


def setUpModule():
    global TMP
    TMP, machine, shifts = rd.make_logs()
    for name, args in (("one-shift", [shifts[0], "--config", rd.DEMO_CONF]), ("two-shifts", [machine])):
        out = os.path.join(TMP, name + ".html")
        r = rd.run([rd.GRITLINE, "report", *args, "-o", out])
        assert r.returncode == 0, r.stderr
        PAGES[name] = out
    # a short shift, every pass drawn as its own marker
    short = os.path.join(TMP, "short", "sg4", "2024-03-05_early")
    os.makedirs(short)
    with open(os.path.join(shifts[0], "passes.csv")) as f:
        lines = f.readlines()[:301]
    with open(os.path.join(short, "passes.csv"), "w") as f:
        f.writelines(lines)
    for n in ("events.csv", "dress_cycles.csv"):
        shutil.copy(os.path.join(shifts[0], n), short)
    out = os.path.join(TMP, "short.html")
    r = rd.run([rd.GRITLINE, "report", short, "-o", out])
    assert r.returncode == 0, r.stderr
    PAGES["short"] = out
    # chromium starts slowly here (seconds): its command-line runs go on while the DevTools test runs
    RUNS["screenshot"] = start_chromium([f"--screenshot={os.path.join(TMP, 'one-shift.png')}",
                                         "--window-size=1280,2400", "file://" + PAGES["one-shift"]])
    RUNS["dump-dom"] = start_chromium(["--dump-dom", "file://" + PAGES["two-shifts"]])
    global BROWSER
    if websocket is not None:
        BROWSER = DevTools()


def tearDownModule():
    if BROWSER is not None:
        BROWSER.close()
    for p in RUNS.values():
        if p.poll() is None:
            p.kill()
            p.wait()
    keep = os.environ.get("REPORT_SCREENSHOTS")
    if keep:
        os.makedirs(keep, exist_ok=True)
        for n in os.listdir(TMP):
            if n.endswith(".png") or n.endswith(".html"):
                shutil.copy(os.path.join(TMP, n), keep)
    rd.remove(TMP)


def start_chromium(args):
    """chromium with its own new profile, in the background; its output goes to files."""
    profile = tempfile.mkdtemp(prefix="chromium-", dir=TMP)
    out = open(os.path.join(profile, "stdout"), "wb")
    err = open(os.path.join(profile, "stderr"), "wb")
    env = dict(os.environ, HOME=profile, TZ="UTC")
    p = subprocess.Popen([CHROMIUM, *FLAGS, f"--user-data-dir={profile}", *args], stdout=out, stderr=err, env=env)
    out.close()
    err.close()
    p.profile = profile
    return p


def finish(name, timeout=45):
    """Waits for a background chromium run (bounded); returns its exit code, stdout and stderr."""
    p = RUNS[name]
    try:
        p.wait(timeout)
    except subprocess.TimeoutExpired:
        p.kill()
        p.wait()
        raise AssertionError(f"chromium {name}: no end within {timeout} s")
    with open(os.path.join(p.profile, "stdout"), "rb") as f:
        out = f.read()
    with open(os.path.join(p.profile, "stderr"), "rb") as f:
        err = f.read()
    return p.returncode, out, err


class DevTools:
    """A headless chromium with its DevTools protocol on a free local port."""

    def __init__(self):
        self.profile = tempfile.mkdtemp(prefix="chromium-", dir=TMP)
        env = dict(os.environ, HOME=self.profile, TZ="UTC")
        self.proc = subprocess.Popen([CHROMIUM, *FLAGS, f"--user-data-dir={self.profile}",
                                      "--remote-debugging-address=127.0.0.1", "--remote-debugging-port=0",
                                      "--window-size=1280,2400", "about:blank"],
                                     stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, env=env)
        port_file = os.path.join(self.profile, "DevToolsActivePort")
        deadline = time.monotonic() + 20
        words = []
        while len(words) < 2:
            if time.monotonic() > deadline or self.proc.poll() is not None:
                raise AssertionError("chromium did not open its DevTools port")
            time.sleep(0.05)
            if os.path.exists(port_file):
                with open(port_file) as f:
                    words = f.read().split()
        port = int(words[0])
        import urllib.request
        targets = json.load(urllib.request.urlopen(f"http://127.0.0.1:{port}/json/list", timeout=10))
        page = next(t for t in targets if t["type"] == "page")
        self.ws = websocket.create_connection(page["webSocketDebuggerUrl"], timeout=10, suppress_origin=True)
        self.next_id = 0
        self.events = []

    def call(self, method, **params):
        self.next_id += 1
        self.ws.send(json.dumps({"id": self.next_id, "method": method, "params": params}))
        while True:
            m = json.loads(self.ws.recv())
            if m.get("id") == self.next_id:
                if "error" in m:
                    raise AssertionError(f"{method}: {m['error']}")
                return m.get("result", {})
            self.events.append(m)

    def wait_for(self, method, seconds=15):
        deadline = time.monotonic() + seconds
        while time.monotonic() < deadline:
            for e in self.events:
                if e.get("method") == method:
                    return e
            self.ws.settimeout(max(0.1, deadline - time.monotonic()))
            try:
                self.events.append(json.loads(self.ws.recv()))
            except websocket.WebSocketTimeoutException:
                break
        raise AssertionError(f"no {method} within {seconds} s")

    def drain(self, seconds):
        self.ws.settimeout(seconds)
        try:
            while True:
                self.events.append(json.loads(self.ws.recv()))
        except websocket.WebSocketTimeoutException:
            pass

    def evaluate(self, expression):
        r = self.call("Runtime.evaluate", expression=expression, returnByValue=True)
        if "exceptionDetails" in r:
            raise AssertionError(f"evaluate: {r['exceptionDetails']}")
        return r["result"]["value"]

    def close(self):
        try:
            self.ws.close()
        finally:
            self.proc.terminate()
            try:
                self.proc.wait(10)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait()


# What the page shows, read in the browser's DOM after layout.
PROBE = r"""
(() => {
  const charts = [...document.querySelectorAll('svg.chart')].map(svg => {
    const box = svg.getBoundingClientRect();
    const series = [...svg.querySelectorAll('g.series')].map(g => ({
      key: g.dataset.series, points: +g.dataset.points, mode: g.dataset.mode,
      circles: g.querySelectorAll('circle').length, paths: g.querySelectorAll('path').length,
      marks: g.querySelectorAll('circle, path, rect').length,
      pathLength: [...g.querySelectorAll('path')].reduce((n, p) => n + (p.getAttribute('d') || '').length, 0)}));
    const text = sel => [...svg.querySelectorAll(sel)].map(t => t.textContent.trim()).filter(t => t);
    return {id: svg.id, width: box.width, height: box.height, series,
            xTicks: text('.x-ticks text'), yTicks: text('.y-ticks text'),
            legend: text('.legend-item'), labels: text('.axis-label'),
            marks: svg.querySelectorAll('g.mark').length,
            title: (svg.querySelector('title') || {}).textContent};
  });
  return {charts,
          figures: document.querySelectorAll('[data-figure]').length,
          scrollWidth: document.documentElement.scrollWidth,
          caution: (document.getElementById('caution') || {}).textContent || '',
          title: document.title,
          fonts: getComputedStyle(document.body).fontFamily};
})()
"""


@unittest.skipIf(websocket is None, "python3-websocket not installed (tests/tools/packages.txt)")
class Render(unittest.TestCase):
    def load(self, name):
        d = BROWSER
        d.call("Runtime.enable")
        d.call("Log.enable")
        d.call("Network.enable")
        d.call("Page.enable")
        d.call("Emulation.setDeviceMetricsOverride", width=1280, height=2400, deviceScaleFactor=1, mobile=False)
        d.call("Page.navigate", url="about:blank")
        d.drain(0.2)
        d.events.clear()
        url = "file://" + PAGES[name]
        d.call("Page.navigate", url=url)
        d.wait_for("Page.loadEventFired")
        d.drain(0.5)
        return d, url

    def check_page(self, name, mode):
        d, url = self.load(name)
        console = [e["params"] for e in d.events if e.get("method") == "Runtime.consoleAPICalled"]
        errors = [e["params"] for e in d.events if e.get("method") == "Runtime.exceptionThrown"]
        logs = [e["params"]["entry"] for e in d.events if e.get("method") == "Log.entryAdded"
                and e["params"]["entry"]["level"] in ("error", "warning")]
        requests = [e["params"]["request"]["url"] for e in d.events if e.get("method") == "Network.requestWillBeSent"]
        self.assertEqual(console, [], "console messages")
        self.assertEqual(errors, [], "exceptions")
        self.assertEqual(logs, [], "error or warning log entries")
        self.assertEqual(requests, [url], "the page fetches nothing but itself")
        info = d.evaluate(PROBE)
        self.assertEqual([c["id"] for c in info["charts"]], ["chart-energy", "chart-aggr", "chart-power"])
        for c in info["charts"]:
            where = c["id"]
            self.assertGreaterEqual(len(c["xTicks"]), 4, f"{where}: x tick labels {c['xTicks']}")
            self.assertGreaterEqual(len(c["yTicks"]), 3, f"{where}: y tick labels {c['yTicks']}")
            for t in c["yTicks"]:
                float(t)  # every value tick is a number
            self.assertEqual(len(c["labels"]), 2, f"{where}: axis labels")
            self.assertTrue(any("," in label for label in c["labels"][1:]), f"{where}: y label with a unit")
            self.assertGreaterEqual(len(c["legend"]), 1, where)
            self.assertGreater(c["width"], 900, f"{where}: the chart fills the page width")
            self.assertGreater(c["marks"], 0, f"{where}: dress and alert markers")
            self.assertTrue(c["title"], where)
            for s in c["series"]:
                self.assertEqual(s["mode"], mode, f"{where} {s['key']}")
                self.assertGreater(s["points"], 100, f"{where} {s['key']}: points")
                if mode == "points" and s["key"] in ("u", "aggr", "power_mean"):
                    self.assertEqual(s["circles"], s["points"], f"{where} {s['key']}: one circle a point")
                elif mode == "points" and s["key"] == "power_peak":
                    self.assertEqual(s["paths"], s["points"], f"{where} {s['key']}: one triangle a point")
                else:
                    self.assertGreater(s["pathLength"], 100, f"{where} {s['key']}: a drawn path")
        legend = {t for c in info["charts"] for t in c["legend"]}
        for want in ("specific energy u", "sharp-wheel reference u_ref", "burn threshold u*", "aggressiveness",
                     "mean net power", "peak net power"):
            self.assertIn(want, legend)
        self.assertTrue(any(t.startswith("dulling limit") for t in legend))
        self.assertTrue(any(t.startswith("window ") for t in legend))
        self.assertGreaterEqual(info["figures"], 15)
        self.assertLessEqual(info["scrollWidth"], 1280, "nothing wider than the window")
        self.assertIn("Never exceed the wheel's marked maximum operating speed", info["caution"])
        return info

    def test_one_shift_downsampled(self):
        self.check_page("one-shift", "columns")

    def test_two_shifts_on_a_time_axis(self):
        info = self.check_page("two-shifts", "columns")
        self.assertTrue(any(":" in t for t in info["charts"][0]["xTicks"]), "clock times on the axis")

    def test_short_shift_every_pass(self):
        self.check_page("short", "points")


def unfilter_row(ftype, line, prev, bpp):
    """One scanline of a PNG with its filter undone (PNG specification, section 9: filters 0-4)."""
    if ftype == 0:
        return bytes(line)
    if np is not None and ftype in (1, 2):
        cur = np.frombuffer(bytes(line), dtype=np.uint8).astype(np.int64)
        if ftype == 2:
            return ((cur + np.frombuffer(bytes(prev), dtype=np.uint8)) % 256).astype(np.uint8).tobytes()
        return (cur.reshape(-1, bpp).cumsum(axis=0) % 256).astype(np.uint8).tobytes()
    out = bytearray(line)
    for i in range(len(out)):
        a = out[i - bpp] if i >= bpp else 0
        b = prev[i]
        c = prev[i - bpp] if i >= bpp else 0
        if ftype == 1:
            out[i] = (out[i] + a) & 255
        elif ftype == 2:
            out[i] = (out[i] + b) & 255
        elif ftype == 3:
            out[i] = (out[i] + (a + b) // 2) & 255
        else:
            p = a + b - c
            pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
            out[i] = (out[i] + (a if pa <= pb and pa <= pc else b if pb <= pc else c)) & 255
    return bytes(out)


def png_pixels(path):
    """Width, height, bytes a pixel and the rows of an 8-bit truecolour PNG, decoded with zlib."""
    with open(path, "rb") as f:
        data = f.read()
    assert data[:8] == b"\x89PNG\r\n\x1a\n", "PNG signature"
    pos, idat, w = 8, b"", None
    while pos < len(data):
        n, kind = struct.unpack(">I4s", data[pos:pos + 8])
        body = data[pos + 8:pos + 8 + n]
        if kind == b"IHDR":
            w, h, depth, colour = struct.unpack(">IIBB", body[:10])
            assert depth == 8 and colour in (2, 6), (depth, colour)
            bpp = 3 if colour == 2 else 4
        elif kind == b"IDAT":
            idat += body
        pos += 12 + n
    raw = zlib.decompress(idat)
    stride = w * bpp
    assert len(raw) == h * (stride + 1), "image data of the size IHDR gives"
    rows, prev = [], bytes(stride)
    for y in range(h):
        start = y * (stride + 1)
        prev = unfilter_row(raw[start], raw[start + 1:start + 1 + stride], prev, bpp)
        rows.append(prev)
    return w, h, bpp, rows


class Chromium(unittest.TestCase):
    def test_dump_dom(self):
        code, out, err = finish("dump-dom")
        self.assertEqual(code, 0, err[-2000:])
        dom = out.decode()
        self.assertEqual(dom.count('<svg xmlns="http://www.w3.org/2000/svg" class="chart"'), 3)
        self.assertIn("Never exceed the wheel's marked maximum operating speed", dom)
        self.assertIn('data-figure="passes"', dom)

    def test_screenshot(self):
        code, _, err = finish("screenshot")
        self.assertEqual(code, 0, err[-2000:])
        w, h, bpp, rows = png_pixels(os.path.join(TMP, "one-shift.png"))
        self.assertEqual((w, h), (1280, 2400))
        # not blank: a good share of the page is ink, in many colours, and the series blue is there
        sample = [rows[y][x * bpp:x * bpp + 3] for y in range(0, h, 4) for x in range(0, w, 4)]
        ink = sum(1 for p in sample if min(p) < 200)
        self.assertGreater(ink / len(sample), 0.03, f"{ink} of {len(sample)} sampled pixels inked")
        self.assertGreater(len(set(sample)), 50, "colours")
        blue = sum(1 for p in sample if abs(p[0] - 0x1f) < 40 and abs(p[1] - 0x4e) < 40 and abs(p[2] - 0x8c) < 40)
        self.assertGreater(blue, 50, "the data points' blue")
        # the page's top band is the title on white, its lower part the charts: ink in both halves
        top = sum(1 for y in range(0, h // 2, 4) for x in range(0, w, 4) if min(rows[y][x * bpp:x * bpp + 3]) < 200)
        self.assertGreater(top, 1000)
        self.assertLess(top, ink)


if __name__ == "__main__":
    unittest.main(verbosity=2)
