"""Ingest benchmark: readings through a real Mosquitto into SQLite, committed and acknowledged.

Three parts, each against the real daemon (`python -m frostwatch run` in a subprocess):

1. rate: N QoS 1 readings published as fast as one paho publisher can, stored by the daemon
   (commit before PUBACK), against a bare paho subscriber that only counts them (auto-ack), with
   the same publisher in the same run. Targets: >= 50 % of the floor and >= 2,000 readings/s.
2. disk: 50 sensors each reporting once a minute at their own phase, spread over the demo farm's
   three blocks, in two runs of --disk-s each: a frost night (the site's clock set to 01:00 local
   solar time, air falling through every block's trigger band: urgent commits, evaluations
   prompted by readings, decisions and alerts) and a quiet day (13:00, 14 degC); bytes written
   by the daemon process (/proc/PID/io write_bytes, WAL, checkpoints and all), per day. Target
   <= 200 MiB/day on the frost night. `--disk-s 1800` gives the honest daily figures.
3. memory: a steady 50 readings/s; resident memory (VmRSS) sampled every 5 s. Target <= 100 MB
   and flat (growth over the second half reported in MB per hour). Default 90 s; `--full-hour`
   runs the hour.

    python -m bench.ingest [--n 20000] [--disk-s 120] [--mem-s 90] [--full-hour]

Writes bench/results/ingest.json. `run(verbose=True) -> dict` for the `python -m bench` runner.
"""

from __future__ import annotations

import argparse
import datetime as dt
import json
import os
import random
import re
import shutil
import signal
import socket
import sqlite3
import subprocess
import sys
import tempfile
import threading
import time
from importlib import resources
from pathlib import Path

import paho.mqtt.client as paho

RESULTS = Path(__file__).resolve().parent / "results"
STATIONS = ("east-low", "east-tower", "river-low", "river-low-b", "hill-low")


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class _Broker:
    def __init__(self, work: Path):
        self.port = _free_port()
        (work / "data").mkdir(parents=True)
        self.conf = work / "mosquitto.conf"
        self.conf.write_text(
            f"listener {self.port} 127.0.0.1\nallow_anonymous true\npersistence true\n"
            f"persistence_location {work / 'data'}/\nautosave_interval 10\nmax_queued_messages 1000000\n"
            f"max_inflight_messages 200\nlog_dest file {work / 'mosquitto.log'}\n"
        )
        exe = shutil.which("mosquitto") or "/usr/sbin/mosquitto"
        self.proc = subprocess.Popen([exe, "-c", str(self.conf)], stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        for _ in range(200):
            try:
                with socket.create_connection(("127.0.0.1", self.port), timeout=0.2):
                    return
            except OSError:
                time.sleep(0.05)
        raise RuntimeError("mosquitto did not start")

    def stop(self) -> None:
        self.proc.terminate()
        self.proc.wait(10)


def _config(work: Path, port: int, extra: str = "") -> Path:
    text = resources.files("frostwatch.sample_logs").joinpath("demo-farm.toml").read_text(encoding="utf-8")
    text = text.replace("port = 1883", f"port = {port}")
    p = work / "site.toml"
    p.write_text(text + "\n[daemon]\n" + extra, encoding="utf-8")
    return p


class _Daemon:
    def __init__(self, cfg: Path):
        self.log = cfg.parent / "daemon.log"
        env = dict(os.environ, PYTHONUNBUFFERED="1")
        env.pop("NOTIFY_SOCKET", None)
        self.proc = subprocess.Popen(
            [sys.executable, "-m", "frostwatch", "run", "--config", str(cfg)],
            stdout=self.log.open("ab"), stderr=subprocess.STDOUT, env=env,
        )
        deadline = time.monotonic() + 60
        while "connected to" not in self.text():
            if time.monotonic() > deadline or self.proc.poll() is not None:
                raise RuntimeError(f"the daemon did not connect:\n{self.text()[-2000:]}")
            time.sleep(0.05)

    def text(self) -> str:
        return self.log.read_text(errors="replace") if self.log.exists() else ""

    def io_write_bytes(self) -> int:
        with open(f"/proc/{self.proc.pid}/io", encoding="ascii") as f:
            return int(dict(line.split(": ") for line in f.read().splitlines())["write_bytes"])

    def rss_mb(self) -> float:
        with open(f"/proc/{self.proc.pid}/status", encoding="ascii") as f:
            for line in f:
                if line.startswith("VmRSS:"):
                    return int(line.split()[1]) / 1024.0
        return float("nan")

    def stop(self) -> int:
        self.proc.send_signal(signal.SIGTERM)
        return self.proc.wait(30)


def _publisher(port: int, cid: str) -> paho.Client:
    c = paho.Client(paho.CallbackAPIVersion.VERSION2, client_id=cid, protocol=paho.MQTTv5)
    c.max_inflight_messages_set(1000)
    c.max_queued_messages_set(0)
    c.connect("127.0.0.1", port, keepalive=30)
    c.loop_start()
    return c


def _msgs(n: int, start: dt.datetime, offset: int = 0) -> list[tuple[str, bytes]]:
    out = []
    for k in range(offset, offset + n):
        st = STATIONS[k % len(STATIONS)]
        t = (start + dt.timedelta(milliseconds=200 * k)).isoformat().replace("+00:00", "Z")
        out.append((f"frostwatch/{st}/air_temperature", json.dumps({"time": t, "value": round(4 + (k % 40) / 10, 1)}).encode()))
    return out


def _publish_all(c: paho.Client, msgs: list[tuple[str, bytes]]) -> None:
    infos = [c.publish(t, p, qos=1) for t, p in msgs]
    for i in infos:
        i.wait_for_publish(120)


def _count(db: Path) -> int:
    try:
        con = sqlite3.connect(str(db), timeout=10)
        try:
            return con.execute("SELECT count(*) FROM readings").fetchone()[0]
        finally:
            con.close()
    except sqlite3.Error:
        return 0


def bench_rate(work: Path, n: int, verbose: bool) -> dict:
    broker = _Broker(work / "broker")
    try:
        start = dt.datetime.now(dt.UTC) - dt.timedelta(hours=12)
        msgs = _msgs(n, start)
        # the floor: a bare subscriber that only counts (auto-ack on return from on_message)
        got, done, t_last = [0], threading.Event(), [0.0]

        def on_message(c, u, m):
            got[0] += 1
            if got[0] >= n:
                t_last[0] = time.perf_counter()
                done.set()

        sub = paho.Client(paho.CallbackAPIVersion.VERSION2, client_id="bench-floor", protocol=paho.MQTTv5)
        sub.on_message = on_message
        sub.connect("127.0.0.1", broker.port)
        sub.subscribe("frostwatch/#", qos=1)
        sub.loop_start()
        time.sleep(0.5)
        pub = _publisher(broker.port, "bench-pub-floor")
        t0 = time.perf_counter()
        _publish_all(pub, msgs)
        done.wait(120)
        floor = n / (t_last[0] - t0)
        pub.disconnect()
        pub.loop_stop()
        sub.unsubscribe("frostwatch/#")
        sub.disconnect()
        sub.loop_stop()
        # ours: the daemon, commit then PUBACK
        cfg = _config(work, broker.port)
        db = work / "frostwatch.db"
        d = _Daemon(cfg)
        pub = _publisher(broker.port, "bench-pub-daemon")
        t0 = time.perf_counter()
        th = threading.Thread(target=_publish_all, args=(pub, msgs))
        th.start()
        while _count(db) < n and time.perf_counter() - t0 < 300:
            time.sleep(0.02)
        t1 = time.perf_counter()
        th.join(60)
        stored = _count(db)
        pub.disconnect()
        pub.loop_stop()
        rc = d.stop()
        ours = stored / (t1 - t0)
        out = {
            "readings": n, "stored": stored, "daemon_exit": rc,
            "floor_readings_per_s": round(floor), "daemon_readings_per_s": round(ours),
            "ratio_to_floor": round(ours / floor, 3),
            "target": ">= 0.5 of the floor and >= 2000 readings/s",
            "pass": bool(stored == n and ours >= 2000 and ours / floor >= 0.5),
        }
        if verbose:
            print(f"rate: floor {floor:,.0f}/s, daemon {ours:,.0f}/s ({ours / floor:.0%} of the floor), {stored}/{n} stored")
        return out
    finally:
        broker.stop()


def _steady(port: int, per_s: float, seconds: float, sensors: list[str], stop: threading.Event, jitter_phase: bool,
            value=None) -> int:
    """Each sensor publishes at its own phase: per_s readings a second in all. `value(elapsed_s,
    rng)` gives the air temperature (default: anywhere from -2 to 8 degC)."""
    pub = _publisher(port, f"bench-steady-{random.randrange(1 << 30)}")
    period = len(sensors) / per_s
    rng = random.Random(7)
    phase = {s: (rng.uniform(0, period) if jitter_phase else 0.0) for s in sensors}
    t0 = time.monotonic()
    nxt = {s: t0 + phase[s] for s in sensors}
    sent = 0
    while not stop.is_set() and time.monotonic() - t0 < seconds:
        now = time.monotonic()
        for s in sensors:
            if nxt[s] <= now:
                t = dt.datetime.now(dt.UTC).isoformat().replace("+00:00", "Z")
                v = rng.uniform(-2, 8) if value is None else value(now - t0, rng)
                pub.publish(f"frostwatch/{s}/air_temperature", json.dumps({"time": t, "value": round(v, 2)}), qos=1)
                nxt[s] += period
                sent += 1
        time.sleep(max(0.0, min(nxt.values()) - time.monotonic()))
    pub.disconnect()
    pub.loop_stop()
    return sent


def _many_station_config(work: Path, port: int, n: int, extra: str, spread: bool = False, site: dict | None = None) -> Path:
    """The demo farm with `n` more crop-height stations (all in block east, or spread over the
    three blocks) and, when given, [site] longitude/timezone replaced (bench.soak.site_at_solar_hour)."""
    cfg = _config(work, port, extra)
    text = cfg.read_text()
    head, daemon = text.split("\n[daemon]\n")
    blocks = ("east", "river", "hill") if spread else ("east",)
    more = "".join(f'\n[[stations]]\nid = "probe-{i:02d}"\nblock = "{blocks[i % len(blocks)]}"\nheight_m = 1.5\n'
                   f'interval_s = 60\n' for i in range(n))
    head = head.replace("[storage]", more + "\n[storage]", 1)
    if site:
        head = re.sub(r"(?m)^longitude = .*$", f"longitude = {site['longitude']}", head, count=1)
        head = re.sub(r"(?m)^timezone = .*$", f"timezone = \"{site['timezone']}\"", head, count=1)
    cfg.write_text(head + "\n[daemon]\n" + daemon)
    return cfg


DISK_SCENARIOS = {
    # local solar hour at the start, and the air temperature the 50 sensors report (degC) against
    # the seconds since the start: a frost night falls through every block's trigger band
    # (T10 + margin + risk band: readings near the trigger, urgent commits, prompt evaluations,
    # decisions, alerts); a quiet day stays far from all of them
    "frost night": (1.0, lambda s, rng: 1.5 - 3.0 * min(1.0, s / 3600.0) + rng.gauss(0.0, 0.15)),
    "quiet day": (13.0, lambda s, rng: 14.0 + rng.gauss(0.0, 0.3)),
}


def bench_disk(work: Path, seconds: float, verbose: bool) -> dict:
    """Both DISK_SCENARIOS, `seconds` each, through the real daemon; bytes written per day."""
    from bench.soak import site_at_solar_hour

    out = {}
    for name, (solar_hour, value) in DISK_SCENARIOS.items():
        w = work / name.replace(" ", "-")
        w.mkdir(parents=True, exist_ok=True)
        out[name] = _disk_run(w, seconds, verbose, name, site_at_solar_hour(time.time(), solar_hour), value)
    frost, quiet = out["frost night"], out["quiet day"]
    out.update({"mib_per_day": frost["mib_per_day"], "quiet_mib_per_day": quiet["mib_per_day"], "seconds": frost["seconds"],
                "target": "<= 200 MiB/day on the frost night", "pass": frost["pass"] and quiet["pass"]})
    return out


def _disk_run(work: Path, seconds: float, verbose: bool, name: str, site: dict, value) -> dict:
    broker = _Broker(work / "broker")
    try:
        sensors = [f"probe-{i:02d}" for i in range(50)]
        cfg = _many_station_config(work, broker.port, 50, "", spread=True, site=site)
        d = _Daemon(cfg)
        stop = threading.Event()
        warm_s = 75.0  # start-up writes (schema, first evaluation, the first health round) are not the daily rate
        sent_box = []
        th = threading.Thread(target=lambda: sent_box.append(
            _steady(broker.port, 50 / 60.0, warm_s + seconds, sensors, stop, True, value)))
        th.start()
        time.sleep(warm_s)
        b0, t0 = d.io_write_bytes(), time.monotonic()
        th.join(seconds + 60)
        sent = sent_box[0] if sent_box else 0
        time.sleep(1.0)
        # read while running: the shutdown's final checkpoint of the whole WAL is a once-per-stop
        # cost, not a daily rate (scaled from 2 minutes to a day it would count ~700 times);
        # checkpoints in a day's run are in bench/storage.py's figures
        b1, elapsed = d.io_write_bytes(), time.monotonic() - t0
        text = d.text()
        rc = d.stop()
        m = re.findall(r"io write_bytes (\d+)", d.text())
        b_stop = int(m[-1]) if m else None
        mib = (b1 - b0) / elapsed * 86400.0 / 2**20
        db = work / "frostwatch.db"
        with sqlite3.connect(str(db), timeout=10) as con:
            alerts = con.execute("SELECT count(*) FROM alerts").fetchone()[0]
            decisions = con.execute("SELECT count(*) FROM decisions").fetchone()[0]
        res = {
            "scenario": name, "site": site, "sensors": 50, "interval_s": 60, "seconds": round(elapsed, 1),
            "readings_sent": sent, "stored": _count(db), "bytes_written": b1 - b0, "mib_per_day": round(mib, 1),
            "shutdown_bytes": None if b_stop is None else b_stop - b1,
            "evaluations": text.count("evaluated "), "evaluations_not_stored": text.count("no change, not stored"),
            "decisions_stored": decisions, "alerts": alerts,
            "includes": "WAL writes and fsyncs of readings, heartbeats, evaluations (scheduled and prompted by readings "
                        "near a trigger), decisions, health and outbox rounds; not the shutdown's final checkpoint",
            "daemon_exit": rc, "target": "<= 200 MiB/day", "pass": bool(mib <= 200),
        }
        if verbose:
            print(f"disk, {name}: {mib:.1f} MiB/day at 50 sensors each minute ({b1 - b0} bytes in {elapsed:.0f} s; "
                  f"{res['evaluations']} evaluations, {res['evaluations_not_stored']} not stored, {alerts} alerts)")
        return res
    finally:
        broker.stop()


def bench_memory(work: Path, seconds: float, verbose: bool) -> dict:
    broker = _Broker(work / "broker")
    try:
        sensors = [f"probe-{i:02d}" for i in range(50)]
        cfg = _many_station_config(work, broker.port, 50, "")
        d = _Daemon(cfg)
        stop = threading.Event()
        th = threading.Thread(target=_steady, args=(broker.port, 50.0, seconds, sensors, stop, True))
        t0 = time.monotonic()
        th.start()
        samples = []
        while th.is_alive():
            samples.append((time.monotonic() - t0, d.rss_mb()))
            th.join(5.0)
        samples.append((time.monotonic() - t0, d.rss_mb()))
        rc = d.stop()
        half = [s for s in samples if s[0] >= seconds / 2]
        if len(half) >= 2:
            ts = [s[0] for s in half]
            vs = [s[1] for s in half]
            mt, mv = sum(ts) / len(ts), sum(vs) / len(vs)
            slope = sum((t - mt) * (v - mv) for t, v in zip(ts, vs, strict=True)) / max(1e-9, sum((t - mt) ** 2 for t in ts))
        else:
            slope = 0.0
        peak = max(v for _, v in samples)
        out = {
            "readings_per_s": 50, "seconds": round(samples[-1][0], 1), "stored": _count(work / "frostwatch.db"),
            "rss_mb_first": round(samples[0][1], 1), "rss_mb_last": round(samples[-1][1], 1), "rss_mb_peak": round(peak, 1),
            "growth_second_half_mb_per_h": round(slope * 3600, 1),
            "samples": [(round(t), round(v, 1)) for t, v in samples],
            "daemon_exit": rc, "target": "<= 100 MB and flat",
            "pass": bool(peak <= 100 and samples[-1][1] - samples[len(samples) // 2][1] < 5),
        }
        if verbose:
            print(f"memory: {samples[-1][1]:.1f} MB after {samples[-1][0]:.0f} s at 50 readings/s (peak {peak:.1f} MB, "
                  f"second-half growth {slope * 3600:+.1f} MB/h)")
        return out
    finally:
        broker.stop()


def _figures(r: dict) -> list[dict]:
    rate, disk, mem = r["rate"], r["disk"], r["memory"]
    return [
        {"figure": "ingest through the broker into SQLite, committed and acknowledged", "value": rate["daemon_readings_per_s"],
         "unit": "readings/s", "target": ">= 2000 and >= 50 % of the floor", "floor": rate["floor_readings_per_s"],
         "floor_label": "bare paho subscriber that only counts", "ratio": rate["ratio_to_floor"], "pass": rate["pass"]},
        {"figure": f"whole daemon, bytes written per day on a frost night ({disk['seconds']:.0f} s run, 50 sensors each minute)",
         "value": disk["mib_per_day"], "unit": "MiB/day", "target": "<= 200", "floor": None, "floor_label": None,
         "ratio": None, "pass": disk["frost night"]["pass"]},
        {"figure": f"whole daemon, bytes written per day on a quiet day ({disk['quiet day']['seconds']:.0f} s run)",
         "value": disk["quiet_mib_per_day"], "unit": "MiB/day", "target": "<= 200", "floor": None, "floor_label": None,
         "ratio": None, "pass": disk["quiet day"]["pass"]},
        {"figure": f"resident memory after {mem['seconds']:.0f} s at 50 readings/s", "value": mem["rss_mb_last"], "unit": "MB",
         "target": "<= 100 and flat", "floor": None, "floor_label": None, "ratio": None, "pass": mem["pass"]},
    ]


def run(verbose: bool = True, quick: bool = False, out_dir: Path | None = None,
        n: int | None = None, disk_s: float | None = None, mem_s: float | None = None) -> dict:
    n = n or (10000 if quick else 20000)
    disk_s = disk_s or (60.0 if quick else 120.0)
    mem_s = mem_s or (45.0 if quick else 90.0)
    results: dict = {"machine": {"cpus": os.cpu_count(), "python": sys.version.split()[0]}}
    with tempfile.TemporaryDirectory(prefix="fw-bench-") as tmp:
        base = Path(tmp)
        for name, fn, arg in (("rate", bench_rate, n), ("disk", bench_disk, disk_s), ("memory", bench_memory, mem_s)):
            work = base / name
            work.mkdir()
            results[name] = fn(work, arg, verbose)
    results["pass"] = all(results[k]["pass"] for k in ("rate", "disk", "memory"))
    results["figures"] = _figures(results)
    out = Path(out_dir) if out_dir else RESULTS
    out.mkdir(parents=True, exist_ok=True)
    (out / "ingest.json").write_text(json.dumps(results, indent=2) + "\n", encoding="utf-8")
    return results


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(prog="python -m bench.ingest", description=__doc__.splitlines()[0])
    ap.add_argument("--n", type=int, default=20000, help="readings in the rate test")
    ap.add_argument("--disk-s", type=float, default=120.0, help="seconds of the disk test")
    ap.add_argument("--mem-s", type=float, default=90.0, help="seconds of the memory test")
    ap.add_argument("--full-hour", action="store_true", help="the memory test for a whole hour")
    a = ap.parse_args(argv)
    r = run(True, n=a.n, disk_s=a.disk_s, mem_s=3600.0 if a.full_hour else a.mem_s)
    print(f"written {RESULTS / 'ingest.json'}; all targets met: {r['pass']}")
    return 0 if r["pass"] else 1


if __name__ == "__main__":
    raise SystemExit(main())
