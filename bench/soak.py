"""Soak: the real daemon (`python -m frostwatch run`) against a real Mosquitto, fed by simulated
sensors, for a chosen time; reports memory, open files, WAL size, missed jobs and bytes written.

    /work/venv/bin/python -m bench.soak --minutes 10 [--sensors 50] [--rate-x 1] [--json FILE]

The site is the benchmark site of bench/synth.py (12 blocks of 4 stations + 2 site-wide = 50
sensors). Each sensor sends one message a minute with two quantities (native JSON form on
`frostwatch/<station>`), at QoS 1; `--rate-x 10` sends ten times as often (reliability.md 9,
test 23: "10x the expected rate"). `--speed S` compresses time: S simulated seconds of readings
per real second, stamped in the past so that they are all accepted (the memory benchmark uses
this to push an hour of readings through in minutes). `--morning` starts the daemon in the
site's morning (longitude and time zone chosen for the current time) with last night's readings
stored, so it draws that night's report at once: the memory figure then includes the report.

Every `--sample-s` seconds the daemon's /proc/<pid>/status (VmRSS), /proc/<pid>/fd, /proc/<pid>/io
(write_bytes) and the store's -wal file are read. Missed jobs are the scheduler warnings the
daemon logs ("scheduler: job ... missed / skipped (still running)"). The broker and the daemon
are processes this program starts; it stops them by their own pids only. Loopback only.
"""

from __future__ import annotations

import argparse
import datetime as dt
import json
import os
import shutil
import signal
import socket
import sqlite3
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

from bench import synth


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class Broker:
    """A foreground Mosquitto on a free loopback port with its own persistence folder."""

    def __init__(self, work: Path):
        self.port = free_port()
        self.work = work
        (work / "data").mkdir(parents=True, exist_ok=True)
        self.conf = work / "mosquitto.conf"
        self.conf.write_text(
            f"listener {self.port} 127.0.0.1\nallow_anonymous true\npersistence true\n"
            f"persistence_location {work / 'data'}/\nautosave_interval 30\nmax_queued_messages 100000\n"
            f"log_dest file {work / 'mosquitto.log'}\n"
        )
        self.proc: subprocess.Popen | None = None

    def start(self) -> None:
        exe = shutil.which("mosquitto") or "/usr/sbin/mosquitto"
        self.proc = subprocess.Popen([exe, "-c", str(self.conf)], stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        deadline = time.monotonic() + 10
        while time.monotonic() < deadline:
            try:
                with socket.create_connection(("127.0.0.1", self.port), timeout=0.2):
                    return
            except OSError:
                time.sleep(0.05)
        raise RuntimeError(f"mosquitto did not listen on {self.port}")

    def stop(self) -> None:
        if self.proc and self.proc.poll() is None:
            self.proc.terminate()
            try:
                self.proc.wait(10)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait(10)


def write_site(work: Path, port: int, daemon_extra: dict | None = None, morning: bool = False) -> Path:
    raw = synth.site_raw(12, work / "frostwatch.db", extra_stations=2, broker_port=port)
    raw["daemon"] = {"learn_nights": 3, **(daemon_extra or {})}
    if morning:
        raw["site"].update(morning_site(time.time()))
    p = work / "site.toml"
    p.write_text(synth.toml_of(raw), encoding="utf-8")
    return p


def morning_site(now_s: float, solar_hour: float = 9.5) -> dict:
    """[site] longitude and time zone that put `now_s` at about 09:30 local solar time: after
    sunrise + 1 h (the morning report is due) and before local noon at the site's latitude all
    year, so a daemon started now draws the night report at once."""
    return site_at_solar_hour(now_s, solar_hour)


def site_at_solar_hour(now_s: float, solar_hour: float) -> dict:
    """[site] longitude and time zone (a whole-hour Etc/GMT zone) that put `now_s` at about
    `solar_hour` local solar time."""
    utc_h = (now_s % 86400.0) / 3600.0
    lon = ((solar_hour - utc_h) % 24.0) * 15.0
    lon = lon - 360.0 if lon > 180.0 else lon
    k = round(lon / 15.0)
    tz = "Etc/GMT" if k == 0 else f"Etc/GMT{'-' if k > 0 else '+'}{abs(k)}"  # Etc/GMT-8 is UTC+8
    return {"longitude": round(lon, 3), "timezone": tz}


def fill_last_night(cfg) -> int:
    """Every station's 1-minute readings of the night now ending (sunset - 6 h to now), so that
    its report has twelve blocks to draw."""
    from frostwatch.night import night_at
    from frostwatch.pipeline import LOOKBACK

    s = cfg.site
    now = dt.datetime.now(dt.UTC)
    night = night_at(s.latitude, s.longitude, s.tz, now)
    return synth.fill_store(cfg.storage.path, synth.station_rows(cfg, night.sunset_utc - LOOKBACK, now,
                                                                 sunset=night.sunset_utc))


def proc_rss_kib(pid: int) -> int:
    return proc_status_kib(pid).get("VmRSS", 0)


def proc_status_kib(pid: int) -> dict[str, int]:
    """VmRSS and its parts (RssAnon: malloc and numpy; RssFile: mapped files such as the store's
    -shm; RssShmem) in KiB, and the thread count, from /proc/<pid>/status."""
    out: dict[str, int] = {}
    try:
        with open(f"/proc/{pid}/status") as f:
            for line in f:
                k, _, rest = line.partition(":")
                if k in ("VmRSS", "RssAnon", "RssFile", "RssShmem", "Threads"):
                    out[k] = int(rest.split()[0])
    except OSError:
        pass
    return out


def proc_write_bytes(pid: int) -> int:
    try:
        with open(f"/proc/{pid}/io") as f:
            for line in f:
                if line.startswith("write_bytes:"):
                    return int(line.split()[1])
    except OSError:
        pass
    return 0


def proc_fds(pid: int) -> int:
    try:
        return len(os.listdir(f"/proc/{pid}/fd"))
    except OSError:
        return -1


class Sensors:
    """Simulated sensors publishing at QoS 1 from one paho client (loopback only)."""

    def __init__(self, port: int, stations: list, rate_x: float = 1.0, speed: float = 1.0, sim_span_s: float = 0.0):
        import paho.mqtt.client as paho

        self.c = paho.Client(paho.CallbackAPIVersion.VERSION2, client_id="bench-sensors", protocol=paho.MQTTv5)
        self.c.max_inflight_messages_set(200)
        self.c.connect("127.0.0.1", port, keepalive=30)
        self.c.loop_start()
        self.stations = stations
        self.period_s = 60.0 / rate_x  # simulated seconds between one sensor's messages
        self.speed = speed
        self.sim_span_s = sim_span_s
        self.sent = 0
        self._stop = threading.Event()
        self.thread = threading.Thread(target=self._run, daemon=True)

    def start(self):
        self.thread.start()
        return self

    def _run(self) -> None:
        real0 = time.monotonic()
        sim0 = time.time() - self.sim_span_s  # readings stamped in the past when time is compressed
        k = 0
        while not self._stop.is_set():
            sim_t = sim0 + k * self.period_s
            due_real = real0 + k * self.period_s / self.speed
            wait = due_real - time.monotonic()
            if wait > 0 and self._stop.wait(wait):
                break
            stamp = dt.datetime.fromtimestamp(min(sim_t, time.time()), dt.UTC).isoformat(timespec="seconds")
            for i, st in enumerate(self.stations):
                q2 = "wind_speed" if (st.height_m > 3 or st.block is None) else "relative_humidity"
                v2 = 1.2 if q2 == "wind_speed" else 80.0
                doc = {"time": stamp, "air_temperature": round(6.0 + 0.1 * (i % 7) - 0.0001 * k, 2), q2: v2}
                self.c.publish(f"frostwatch/{st.id}", json.dumps(doc), qos=1)
                self.sent += 1
            k += 1

    def stop(self) -> None:
        self._stop.set()
        self.thread.join(10)
        time.sleep(0.5)
        self.c.loop_stop()
        self.c.disconnect()


def run_soak(minutes: float, work: Path | None = None, rate_x: float = 1.0, speed: float = 1.0,
             sample_s: float = 10.0, verbose: bool = True, daemon_extra: dict | None = None,
             probe: bool = False, morning: bool = False) -> dict:
    from frostwatch.config import load_config

    work = Path(work or tempfile.mkdtemp(prefix="frostwatch-soak-"))
    work.mkdir(parents=True, exist_ok=True)
    broker = Broker(work / "broker")
    broker.start()
    cfg_path = write_site(work, broker.port, daemon_extra, morning)
    cfg = load_config(str(cfg_path))
    if morning:  # the daemon starts in the site's morning with last night stored: it draws the report
        fill_last_night(cfg)
    db = cfg.storage.path
    wal = db.with_name(db.name + "-wal")
    log = work / "daemon.log"
    env = dict(os.environ, PYTHONUNBUFFERED="1", FROSTWATCH_LOG_LEVEL="INFO")
    env.pop("NOTIFY_SOCKET", None)
    say = print if verbose else (lambda *a, **k: None)
    daemon = None
    sensors = None
    samples = []
    try:
        with log.open("ab") as lf:
            if probe:  # bench/probe.py inside the daemon: malloc, SQLite and (optionally) Python heap
                env["PYTHONPATH"] = os.pathsep.join([str(Path(__file__).absolute().parent.parent), env.get("PYTHONPATH", "")])
                code = (f"import sys, bench.probe; bench.probe.start({str(work / 'probe.jsonl')!r}, {sample_s!r}); "
                        "from frostwatch.cli import main; sys.exit(main(sys.argv[1:]))")
                argv = [sys.executable, "-c", code, "run", "--config", str(cfg_path)]
            else:
                argv = [sys.executable, "-m", "frostwatch", "run", "--config", str(cfg_path)]
            daemon = subprocess.Popen(argv, stdout=lf, stderr=subprocess.STDOUT, env=env)
        deadline = time.monotonic() + 30
        while time.monotonic() < deadline and "connected to" not in log.read_text(errors="replace"):
            if daemon.poll() is not None:
                raise RuntimeError(f"the daemon exited {daemon.returncode}:\n{log.read_text(errors='replace')[-2000:]}")
            time.sleep(0.2)
        span = minutes * 60.0 * speed if speed > 1 else 0.0
        sensors = Sensors(broker.port, list(cfg.stations), rate_x, speed, span).start()
        t0 = time.monotonic()
        wb0 = proc_write_bytes(daemon.pid)
        end = t0 + minutes * 60.0
        while True:
            now = time.monotonic()
            if daemon.poll() is not None:
                raise RuntimeError(f"the daemon exited {daemon.returncode} during the soak")
            ps = proc_status_kib(daemon.pid)
            samples.append({
                "t_s": round(now - t0, 1), "rss_kib": ps.get("VmRSS", 0), "anon_kib": ps.get("RssAnon", 0),
                "file_kib": ps.get("RssFile", 0), "shmem_kib": ps.get("RssShmem", 0), "threads": ps.get("Threads", 0),
                "fds": proc_fds(daemon.pid),
                "wal_bytes": wal.stat().st_size if wal.exists() else 0,
                "write_bytes": proc_write_bytes(daemon.pid) - wb0, "sent": sensors.sent,
            })
            s = samples[-1]
            say(f"  {s['t_s']:>7.0f} s  rss {s['rss_kib'] / 1024:6.1f} MiB (anon {s['anon_kib'] / 1024:6.1f}, "
                f"file {s['file_kib'] / 1024:5.1f}, shm {s['shmem_kib'] / 1024:4.1f})  thr {s['threads']:>2}  fds {s['fds']:>3}  "
                f"wal {s['wal_bytes'] / 2**20:5.2f} MiB  written {s['write_bytes'] / 2**20:7.1f} MiB  sent {s['sent']}",
                flush=True)
            if now >= end:
                break
            time.sleep(min(sample_s, max(0.05, end - now)))
        sensors.stop()
        sent = sensors.sent
        sensors = None
        # let the last batches commit, then stop the daemon cleanly
        want = sent
        deadline = time.monotonic() + 30
        stored = 0
        while time.monotonic() < deadline:
            stored = _count(db, "SELECT count(*) FROM readings")
            if stored >= 2 * want:
                break
            time.sleep(0.5)
        elapsed = time.monotonic() - t0
        wb = proc_write_bytes(daemon.pid) - wb0
        daemon.send_signal(signal.SIGTERM)
        rc = daemon.wait(30)
    finally:
        if sensors is not None:
            sensors.stop()
        if daemon is not None and daemon.poll() is None:
            daemon.kill()
            daemon.wait(10)
        broker.stop()
    text = log.read_text(errors="replace")
    missed = sum(1 for ln in text.splitlines() if "scheduler: job" in ln)
    errors = sum(1 for ln in text.splitlines() if " ERROR " in ln or ln.startswith("ERROR"))
    rss = [s["rss_kib"] for s in samples]
    warm = max(1, len(rss) // 3)
    res = {
        "minutes": minutes, "rate_x": rate_x, "speed": speed, "sensors": len(cfg.stations),
        "messages_sent": sent, "readings_stored": stored, "exit_code": rc,
        "rss_start_mib": round(rss[0] / 1024, 1), "rss_after_warmup_mib": round(rss[warm] / 1024, 1) if len(rss) > warm else None,
        "rss_end_mib": round(rss[-1] / 1024, 1), "rss_max_mib": round(max(rss) / 1024, 1),
        "rss_growth_after_warmup_pct": round(100.0 * (rss[-1] - rss[warm]) / rss[warm], 1) if len(rss) > warm else None,
        "fds_min": min(s["fds"] for s in samples), "fds_max": max(s["fds"] for s in samples),
        "wal_max_mib": round(max(s["wal_bytes"] for s in samples) / 2**20, 2),
        "write_bytes": wb, "write_mib_per_day": round(wb / 2**20 * 86400.0 / max(1.0, elapsed), 1),
        "missed_jobs": missed, "error_lines": errors, "samples": samples, "work": str(work),
        "morning": morning, "night_reports": [ln.split("night report for ", 1)[1] for ln in text.splitlines()
                                              if "night report for " in ln],
    }
    res.update(rss_trend(samples, warm))
    # tonight's readings held in memory by design (frostwatch/nightcache.py: a time and a value,
    # 16 bytes, per reading of the night window): growth that is data, emptied each morning
    res["night_cache_mib_at_end"] = round(stored * 16 / 2**20, 1)
    return res


def rss_trend(samples: list[dict], warm: int, hours: float = 12.0) -> dict:
    """Least-squares slope of RSS after warm-up (MiB per hour) and where it leads in `hours`
    from the end of warm-up: the 12-hour projection of a shorter run."""
    pts = [(s["t_s"] / 3600.0, s["rss_kib"] / 1024.0) for s in samples[warm:]]
    if len(pts) < 3:
        return {"rss_slope_mib_per_h": None, f"rss_{hours:g}h_projection_mib": None}
    n = len(pts)
    mx, my = sum(x for x, _ in pts) / n, sum(y for _, y in pts) / n
    sxx = sum((x - mx) ** 2 for x, _ in pts)
    slope = sum((x - mx) * (y - my) for x, y in pts) / sxx if sxx else 0.0
    start = my + slope * (pts[0][0] - mx)  # the fitted value at the end of warm-up
    return {"rss_slope_mib_per_h": round(slope, 3), f"rss_{hours:g}h_projection_mib": round(start + slope * hours, 1),
            f"rss_{hours:g}h_projection_growth_pct": round(100.0 * slope * hours / start, 1) if start else None}


def _count(db: Path, sql: str) -> int:
    try:
        con = sqlite3.connect(f"file:{db}?mode=ro", uri=True, timeout=5)
        try:
            return con.execute(sql).fetchone()[0]
        finally:
            con.close()
    except sqlite3.Error:
        return 0


def report(res: dict) -> None:
    print(f"soak: {res['minutes']:g} min, {res['sensors']} sensors at {res['rate_x']:g}x"
          + (f", time x{res['speed']:g}" if res["speed"] > 1 else "") +
          f": {res['messages_sent']} messages, {res['readings_stored']} readings stored, daemon exit {res['exit_code']}")
    print(f"  memory (RSS): start {res['rss_start_mib']} MiB, after warm-up {res['rss_after_warmup_mib']} MiB, "
          f"end {res['rss_end_mib']} MiB, max {res['rss_max_mib']} MiB, growth after warm-up {res['rss_growth_after_warmup_pct']} %")
    print(f"  open files: {res['fds_min']}..{res['fds_max']};  WAL max {res['wal_max_mib']} MiB;  "
          f"missed jobs {res['missed_jobs']};  ERROR lines {res['error_lines']}")
    print(f"  bytes written by the daemon: {res['write_bytes'] / 2**20:.1f} MiB = {res['write_mib_per_day']} MiB/day at this rate")
    print(f"  RSS trend after warm-up: {res.get('rss_slope_mib_per_h')} MiB/h; 12 h from the end of warm-up: "
          f"{res.get('rss_12h_projection_mib')} MiB ({res.get('rss_12h_projection_growth_pct')} %); tonight's readings "
          f"held in the night cache at the end: {res.get('night_cache_mib_at_end')} MiB")
    for line in res.get("night_reports", []):
        print(f"  night report for {line}")
    print(f"  files: {res['work']}")


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(prog="python -m bench.soak", description=__doc__.split("\n\n")[0])
    ap.add_argument("--minutes", type=float, default=10.0)
    ap.add_argument("--rate-x", type=float, default=1.0, help="messages per sensor per minute (1 = the expected rate)")
    ap.add_argument("--speed", type=float, default=1.0, help="simulated seconds of readings per real second")
    ap.add_argument("--sample-s", type=float, default=10.0)
    ap.add_argument("--json", type=Path, help="write the result here too")
    ap.add_argument("--work", type=Path, help="folder for the store, logs and probe (default: a new temp folder)")
    ap.add_argument("--morning", action="store_true",
                    help="start in the site's morning with last night stored, so the daemon draws the night report at once")
    ap.add_argument("--probe", action="store_true",
                    help="sample malloc, SQLite and Python heap inside the daemon into WORK/probe.jsonl (bench/probe.py)")
    a = ap.parse_args(argv)
    res = run_soak(a.minutes, work=a.work, rate_x=a.rate_x, speed=a.speed, sample_s=a.sample_s, probe=a.probe,
                   morning=a.morning)
    report(res)
    if a.json:
        a.json.write_text(json.dumps(res, indent=2) + "\n", encoding="utf-8")
    return 0 if res["exit_code"] == 0 else 1


if __name__ == "__main__":
    sys.exit(main())
