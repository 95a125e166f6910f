#!/usr/bin/python3
"""measure_shift.py: the sizes of docs/plant.md, counted over one simulated shift.

gritline-sim plays conf/scenarios/demo.ini (one 8-hour shift of sg4, compressed by
--speed), gritlined publishes to a real mosquitto broker, and mosquitto_sub counts
every message and byte per topic; /metrics and /status.json are scraped at the end.
Prints figures, asserts nothing (a benchmark, see DEVELOPERS.md).

    measure_shift.py [--speed 60] [--hours 8]

Bytes on the wire add the MQTT 3.1.1 PUBLISH framing to topic and payload: a fixed
header of 1 byte plus 1 to 4 bytes of remaining length, 2 bytes of topic length,
2 bytes of packet identifier at QoS 1 and a 4-byte PUBACK (OASIS MQTT 3.1.1,
sections 2.2, 3.3 and 3.4; from memory). TCP/IP headers are not counted.
"""
import argparse
import json
import os
import statistics
import sys
import time

from plantharness import (Broker, Daemon, Subscriber, Workdir, curl, demo_config, free_port, metric, metrics,
                          start_sim)


def remaining_length_bytes(n):
    return 1 if n < 128 else 2 if n < 16384 else 3 if n < 2097152 else 4


def wire_bytes(topic, payload, qos):
    rem = 2 + len(topic) + (2 if qos else 0) + len(payload)
    return 1 + remaining_length_bytes(rem) + rem + (4 if qos else 0)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--speed", type=float, default=60.0)
    ap.add_argument("--hours", type=float, default=8.0)
    args = ap.parse_args()
    work = Workdir()
    broker = Broker(work).start()
    sub = Subscriber(broker.port, ["gritline/#", "plant-test/probe"]).ready(broker.port)
    sim = start_sim(work) if args.speed == 60 else None
    if sim is None:
        import simharness
        from plantharness import DEMO_INI
        sim = simharness.Sim(DEMO_INI, "--speed", "%g" % args.speed).start()
    mport = free_port()
    daemon = Daemon(work, demo_config(work, sim.port, mport, {"port": broker.port}))
    real_s = args.hours * 3600.0 / args.speed
    t0 = time.monotonic()
    try:
        while time.monotonic() - t0 < real_s:
            time.sleep(5)
            sub.poll()
            print("  %4.0f%%  %d messages" % (100 * (time.monotonic() - t0) / real_s, len(sub.messages)),
                  file=sys.stderr, flush=True)
        values, text = metrics(mport)
        _, _, status_body = curl("http://127.0.0.1:%d/status.json" % mport)
        _, _, page = curl("http://127.0.0.1:%d/" % mport)
    finally:
        daemon.stop()
        time.sleep(0.5)
        sub.stop()
        sim.stop()
        broker.stop()
        work.close()

    msgs = [m for m in sub.messages if m[0].startswith("gritline/")]
    classes = {}
    for topic, qos, retain, payload in msgs:
        cls = topic.split("/")[2]
        classes.setdefault(cls, []).append((topic, qos, payload))
    shift_s = args.hours * 3600.0
    print("one simulated shift of %.1f h (demo.ini at %gx, %.0f s of real time)" % (args.hours, args.speed, real_s))
    total_payload = total_wire = 0
    for cls in sorted(classes):
        rows = classes[cls]
        sizes = [len(p.encode()) for _, _, p in rows]
        wire = sum(wire_bytes(t.encode(), p.encode(), q) for t, q, p in rows)
        total_payload += sum(sizes)
        total_wire += wire
        print("  %-7s %6d messages, payload mean %4.0f B (min %d, max %d), %8d B payload, %8d B on the wire"
              % (cls, len(rows), statistics.mean(sizes), min(sizes), max(sizes), sum(sizes), wire))
    print("  total   %6d messages, %d B payload, %d B on the wire per shift" % (len(msgs), total_payload, total_wire))
    passes = classes.get("pass", [])
    print("  mean rate %.4f messages/s per machine (%.1f per hour), %.1f B/s on the wire"
          % (len(msgs) / shift_s, len(msgs) / args.hours, total_wire / shift_s))
    # The busiest minute of the shift, on the simulator's clock (pass end times).
    ends = [json.loads(p)["end_time"] for _, _, p in passes]
    if ends:
        per_min = {}
        for t in ends:
            per_min[int(t // 60)] = per_min.get(int(t // 60), 0) + 1
        print("  busiest minute: %d pass messages" % max(per_min.values()))
    print("  passes %d, alerts raised %d (metrics: passes_total %d)"
          % (len(passes), sum(1 for t, _, p in classes.get("alert", []) if json.loads(p)["state"] == "raised"),
             metric(values, "gritline_passes_total")))
    print("  one /metrics scrape: %d B, %d series; /status.json: %d B; live page: %d B"
          % (len(text.encode()), sum(1 for l in text.splitlines() if l and not l.startswith("#")),
             len(status_body), len(page)))


if __name__ == "__main__":
    main()
