"""rss.py: resident memory of a process over time, and the flatness rule of the soak tests.

The resident set size is the VmRSS line of /proc/PID/status (proc(5)), in kB: what the
limit holds. RssAnon, its anonymous part, is the memory the process owns (heap, stacks,
data); the rest are the file-backed pages of the program and its shared libraries (about
5.8 MB for gritlined with its HTTP server; libmosquitto and its TLS libraries are loaded
only when MQTT is enabled). Both are reported.
"""
import threading
import time

FLAT_KB = 64          # growth allowed between the early and the late part of a run (our choice)
LIMIT_KB = 8 * 1024   # the ceiling of the resident set, VmRSS (issue "reliability and speed")


def rss_kb(pid):
    """(VmRSS, RssAnon) in kB, or None once the process is gone."""
    got = {}
    try:
        with open("/proc/%d/status" % pid) as f:
            for line in f:
                key = line.split(":", 1)[0]
                if key in ("VmRSS", "RssAnon"):
                    got[key] = int(line.split()[1])
    except OSError:
        return None
    return (got["VmRSS"], got["RssAnon"]) if len(got) == 2 else None


class Sampler:
    """Samples VmRSS of pid every `every` seconds in a thread until stop()."""

    def __init__(self, pid, every=1.0):
        self.pid = pid
        self.every = every
        self.points = []  # (seconds since start, VmRSS kB)
        self.anon = []    # (seconds since start, RssAnon kB)
        self._stop = threading.Event()
        self._t0 = time.monotonic()
        self._thread = threading.Thread(target=self._run, daemon=True)
        self._thread.start()

    def _run(self):
        while not self._stop.is_set():
            kb = rss_kb(self.pid)
            if kb is None:
                return
            t = time.monotonic() - self._t0
            self.points.append((t, kb[0]))
            self.anon.append((t, kb[1]))
            self._stop.wait(self.every)

    def stop(self):
        self._stop.set()
        self._thread.join(5)
        return self.points


def flatness(points, warmup_s, split_s):
    """(max of the early part, max of the late part, growth, overall max), in kB; the early part runs
    from warmup_s to split_s, the late part from split_s to the end."""
    early = [kb for t, kb in points if warmup_s <= t < split_s]
    late = [kb for t, kb in points if t >= split_s]
    if not early or not late:
        raise AssertionError("too few RSS samples: %d early, %d late" % (len(early), len(late)))
    return max(early), max(late), max(late) - max(early), max(kb for _, kb in points)


def curve(points, buckets=10):
    """The curve in a few words: min..max per tenth of the run."""
    if not points:
        return "no samples"
    end = points[-1][0] or 1.0
    parts = []
    for i in range(buckets):
        sel = [kb for t, kb in points if i * end / buckets <= t < (i + 1) * end / buckets or (i == buckets - 1 and t == end)]
        if sel:
            parts.append("%d-%d" % (min(sel), max(sel)) if min(sel) != max(sel) else "%d" % min(sel))
    return " | ".join(parts) + " kB"
