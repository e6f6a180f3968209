"""The cost of a flood of bad input (issue 18, item 3): 30 station messages of about 60 KB, each
with 5,000 unknown keys, sent to the real daemon through a real Mosquitto, then one good reading.

    python -m bench.flood [--python PATH] [--limits none|shipped] [--json FILE]

Measured: how much the store (database and WAL files) and the daemon's log grow, how many
rejection rows the flood costs, and how long the good reading sent right after it takes to be
stored (the delay a grower's alert would see). `--limits shipped` starts the broker with the
message_size_limit and max_packet_size lines of deploy/mosquitto/frostwatch.conf; `none` lets the
flood through to the daemon (its own defence alone). `--python` runs the daemon with another
interpreter, e.g. a venv holding an older frostwatch, for a before/after figure.
The floor is the delay of the same good reading with no flood before it, measured in the same run.
"""

from __future__ import annotations

import argparse
import datetime as dt
import json
import os
import signal
import sqlite3
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from bench import soak

SHIPPED_CONF = Path(__file__).resolve().parent.parent / "deploy" / "mosquitto" / "frostwatch.conf"
MESSAGES = 30
KEYS = 5000


def attack_payload(t: dt.datetime, keys: int = KEYS) -> bytes:
    return json.dumps({"time": t.isoformat(), **{f"q{i:04d}": 1 for i in range(keys)}}).encode()


def _store_bytes(db: Path) -> int:
    return sum(p.stat().st_size for p in (db, db.with_name(db.name + "-wal")) if p.exists())


def _stored(db: Path, station: str, t: dt.datetime) -> bool:
    try:
        con = sqlite3.connect(f"file:{db}?mode=ro", uri=True, timeout=1)
        try:
            return con.execute("SELECT 1 FROM readings WHERE station=? AND time_utc_ms=?",
                               (station, int(t.timestamp() * 1000))).fetchone() is not None
        finally:
            con.close()
    except sqlite3.Error:
        return False


def _good_reading_delay(pub, db: Path, station: str, t: dt.datetime, timeout_s: float = 120.0) -> float:
    t0 = time.monotonic()
    pub.publish(f"frostwatch/{station}", json.dumps({"time": t.isoformat(), "air_temperature": 3.0}), qos=1)
    while time.monotonic() - t0 < timeout_s:
        if _stored(db, station, t):
            return time.monotonic() - t0
        time.sleep(0.02)
    return float("inf")


def run(verbose: bool = True, quick: bool = False, python: str | None = None, limits: str = "none",
        out_dir: Path | None = None) -> dict:
    import paho.mqtt.client as paho

    work = Path(out_dir or tempfile.mkdtemp(prefix="frostwatch-bench-flood-"))
    work.mkdir(parents=True, exist_ok=True)
    broker = soak.Broker(work / "broker")
    if limits == "shipped":
        lines = [ln for ln in SHIPPED_CONF.read_text().splitlines() if ln.startswith(("message_size_limit", "max_packet_size"))]
        broker.conf.write_text(broker.conf.read_text() + "\n".join(lines) + "\n")
    broker.start()
    cfg_path = soak.write_site(work, broker.port, {"batch_delay_s": 1.0})
    db = work / "frostwatch.db"
    log = work / "daemon.log"
    env = dict(os.environ, PYTHONUNBUFFERED="1", FROSTWATCH_LOG_LEVEL="INFO")
    env.pop("NOTIFY_SOCKET", None)
    say = print if verbose else (lambda *a, **k: None)
    daemon = None
    try:
        with log.open("ab") as lf:
            daemon = subprocess.Popen([python or sys.executable, "-m", "frostwatch", "run", "--config", str(cfg_path)],
                                      stdout=lf, stderr=subprocess.STDOUT, env=env, cwd=work)
        deadline = time.monotonic() + 30
        while "connected to" not in log.read_text(errors="replace"):
            if daemon.poll() is not None or time.monotonic() > deadline:
                raise RuntimeError(f"the daemon did not connect:\n{log.read_text(errors='replace')[-2000:]}")
            time.sleep(0.1)
        good = paho.Client(paho.CallbackAPIVersion.VERSION2, client_id="flood-good", protocol=paho.MQTTv5)
        good.connect("127.0.0.1", broker.port)
        good.loop_start()
        now = dt.datetime.now(dt.UTC).replace(microsecond=0)
        time.sleep(3)  # start-up writes settle
        floor_s = _good_reading_delay(good, db, "b000-low0", now - dt.timedelta(minutes=3))
        time.sleep(2)
        store0, log0 = _store_bytes(db), log.stat().st_size
        rej0 = soak._count(db, "SELECT count(*) FROM rejections")
        bad = paho.Client(paho.CallbackAPIVersion.VERSION2, client_id="flood-bad", protocol=paho.MQTTv5)
        bad.connect("127.0.0.1", broker.port)
        bad.loop_start()
        wait_until = time.monotonic() + 10
        while not bad.is_connected() and time.monotonic() < wait_until:
            time.sleep(0.02)
        payload = attack_payload(now - dt.timedelta(minutes=2))
        t_flood = time.monotonic()
        for _ in range(MESSAGES):
            if bad.is_connected():  # a broker with the shipped limits disconnects it
                bad.publish("frostwatch/b000-low1", payload, qos=1)
        # the good reading queued right behind the flood, on the same connection when it still
        # stands (a broker with the shipped limits has closed it: then from another sensor)
        delay_s = _good_reading_delay(good if limits == "shipped" else bad, db, "b000-low0", now - dt.timedelta(minutes=1))
        last, still = -1, time.monotonic()
        while time.monotonic() - still < 3 and time.monotonic() - t_flood < 600:  # the flood's rows and log lines land
            n = soak._count(db, "SELECT count(*) FROM rejections")
            if n != last:
                last, still = n, time.monotonic()
            time.sleep(0.2)
        store_growth = _store_bytes(db) - store0
        log_growth = log.stat().st_size - log0
        rejections = soak._count(db, "SELECT count(*) FROM rejections") - rej0
        bad.loop_stop()
        good.loop_stop()
        daemon.send_signal(signal.SIGTERM)
        daemon.wait(30)
    finally:
        if daemon is not None and daemon.poll() is None:
            daemon.kill()
            daemon.wait(10)
        broker.stop()
    version = subprocess.run([python or sys.executable, "-c", "import frostwatch; print(frostwatch.__version__)"],
                             capture_output=True, text=True, cwd=work).stdout.strip()
    res = {"messages": MESSAGES, "payload_bytes": len(payload), "keys": KEYS, "limits": limits,
           "frostwatch": version, "store_growth_mib": round(store_growth / 2**20, 2),
           "log_growth_mib": round(log_growth / 2**20, 3), "rejection_rows": rejections,
           "good_reading_delay_s": round(delay_s, 2), "floor_delay_s": round(floor_s, 2), "work": str(work)}
    res["figures"] = [
        {"figure": f"store growth, {MESSAGES} x {len(payload) / 1000:.1f} KB of 5,000 unknown keys (broker limits: {limits})",
         "value": res["store_growth_mib"], "unit": "MiB", "target": "< 1 MiB", "floor": None, "floor_label": "",
         "ratio": None, "pass": store_growth < 2**20},
        {"figure": "log growth for the same flood", "value": res["log_growth_mib"], "unit": "MiB", "target": "< 1 MiB",
         "floor": None, "floor_label": "", "ratio": None, "pass": log_growth < 2**20},
        {"figure": "delay of a good reading sent right after the flood", "value": res["good_reading_delay_s"],
         "unit": "s", "target": "< 2x floor + 1 s", "floor": res["floor_delay_s"],
         "floor_label": "the same reading with no flood before it",
         "ratio": round(delay_s / floor_s, 2) if floor_s > 0 else None, "pass": delay_s < 2 * floor_s + 1.0},
    ]
    if verbose:
        say(f"flood ({version}, broker limits {limits}): {MESSAGES} x {len(payload)} bytes -> store +{res['store_growth_mib']} MiB, "
            f"log +{res['log_growth_mib']} MiB, {rejections} rejection rows; good reading stored after "
            f"{res['good_reading_delay_s']} s (floor {res['floor_delay_s']} s)")
    return res


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(prog="python -m bench.flood", description=__doc__.split("\n\n")[0])
    ap.add_argument("--python", help="interpreter that runs the daemon (default: this one)")
    ap.add_argument("--limits", choices=("none", "shipped"), default="none")
    ap.add_argument("--json", type=Path)
    a = ap.parse_args(argv)
    res = run(python=a.python, limits=a.limits)
    if a.json:
        a.json.write_text(json.dumps(res, indent=2) + "\n", encoding="utf-8")
    return 0


if __name__ == "__main__":
    sys.exit(main())


__all__ = ["attack_payload", "run"]
