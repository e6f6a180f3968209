"""The daemon against a real Mosquitto (issue 4 tests): kill -9 loops, offline queueing, a broker
restart, poison payloads. The daemon runs as a subprocess; every wait is bounded."""

from __future__ import annotations

import datetime as dt
import json
import random
import signal
import sqlite3
import threading
import time

import pytest
from daemon_helpers import DaemonProc, connect_publisher, db_count, publish_all, reading_msgs, wait_until

pytestmark = pytest.mark.broker

NOW = dt.datetime.now(dt.UTC).replace(microsecond=0)
START = NOW - dt.timedelta(hours=6)


def _integrity(db) -> str:
    con = sqlite3.connect(str(db))
    try:
        return con.execute("PRAGMA integrity_check").fetchone()[0]
    finally:
        con.close()


def _times(db) -> list[int]:
    con = sqlite3.connect(str(db))
    try:
        return [r[0] for r in con.execute("SELECT time_utc_ms FROM readings ORDER BY time_utc_ms")]
    finally:
        con.close()


def test_kill9_loop_stores_every_reading_exactly_once(site, mosquitto, daemon_proc):
    """3000 QoS 1 readings while the daemon is SIGKILLed four times: all stored once, integrity ok
    (reliability.md 9, test 1)."""
    cfg, db = site
    n = 3000
    msgs = reading_msgs(n, START)
    daemon_proc.start()
    assert wait_until(lambda: "connected to" in daemon_proc.log_text(), 20)
    pub = connect_publisher(mosquitto.port)
    done = threading.Event()

    def publish():
        for i in range(0, n, 100):  # about 500 readings/s, so the kills land mid-stream
            publish_all(pub, msgs[i : i + 100])
            time.sleep(0.2)
        done.set()

    th = threading.Thread(target=publish)
    th.start()
    rng = random.Random(4)
    kills = 0
    while kills < 4:
        time.sleep(rng.uniform(0.6, 1.4))
        daemon_proc.kill()
        kills += 1
        time.sleep(rng.uniform(0.1, 0.5))
        daemon_proc.start()
        assert wait_until(lambda k=kills: daemon_proc.log_text().count("connected to") > k, 20)
    th.join(60)
    assert done.is_set()
    assert wait_until(lambda: db_count(db) >= n, 30), f"{db_count(db)} of {n} stored"
    time.sleep(1.0)  # nothing extra arrives later
    assert daemon_proc.terminate() == 0
    want = sorted(int((START + dt.timedelta(seconds=k)).timestamp() * 1000) for k in range(n))
    assert _times(db) == want  # every reading exactly once: no loss, no extra
    assert _integrity(db) == "ok"
    pub.loop_stop()


def test_readings_published_while_stopped_arrive_on_start(site, mosquitto, daemon_proc):
    """Persistent session (MQTT 5 clean_start False + session expiry): 500 readings published
    while the daemon is stopped are all stored when it starts. With paho's default clean start
    the broker would drop the session and this fails (reliability.md finding 1)."""
    cfg, db = site
    daemon_proc.start()
    assert wait_until(lambda: "connected to" in daemon_proc.log_text(), 20)
    assert daemon_proc.terminate() == 0
    pub = connect_publisher(mosquitto.port)
    publish_all(pub, reading_msgs(500, START))
    pub.loop_stop()
    assert db_count(db) == 0
    daemon_proc.start()
    assert wait_until(lambda: db_count(db) >= 500, 30), f"{db_count(db)} of 500 stored"
    assert "session resumed" in daemon_proc.log_text()
    assert daemon_proc.terminate() == 0
    assert db_count(db) == 500


def test_broker_restart_mid_stream_loses_nothing(site, mosquitto, daemon_proc):
    """The broker restarts while readings flow: the daemon reconnects (its backoff is 1-3 s, checked
    without a clock in tests/daemon/test_urgent_commit.py::test_the_ingest_client_retries_the_broker_every_1_to_3_s;
    here a generous 30 s wait) and every reading published before and after is stored."""
    cfg, db = site
    daemon_proc.start()
    assert wait_until(lambda: "connected to" in daemon_proc.log_text(), 20)
    pub = connect_publisher(mosquitto.port, "pub-a")
    publish_all(pub, reading_msgs(1500, START))
    pub.disconnect()
    pub.loop_stop()
    mosquitto.restart()  # SIGTERM (the broker saves its sessions), then start again
    assert wait_until(lambda: daemon_proc.log_text().count("connected to") >= 2, 30.0), "no reconnect within 30 s"
    pub = connect_publisher(mosquitto.port, "pub-b")
    publish_all(pub, reading_msgs(500, START, offset=1500))
    pub.loop_stop()
    # generous: under heavy disk load from other suites each synchronous=FULL commit can take long
    assert wait_until(lambda: db_count(db) >= 2000, 90), (
        f"{db_count(db)} of 2000 stored; daemon log:\n{daemon_proc.log_text()[-3000:]}")
    assert daemon_proc.terminate() == 0
    assert db_count(db) == 2000


POISON: list[tuple[str, bytes, str]] = [
    ("frostwatch/east-low/air_temperature", b'{"time": "%s", "value": NaN}', "not a finite number"),
    ("frostwatch/east-low/air_temperature", b'{"time": "%s", "value": Infinity}', "not a finite number"),
    ("frostwatch/east-low/air_temperature", b'{"time": "%s", "value": 1e999}', "not a finite number"),
    ("frostwatch/east-low/air_temperature", b"-Infinity", "not a finite number"),
    ("frostwatch/east-low/air_temperature", b'{"time": "%s", "value": true}', "not a number"),
    ("frostwatch/east-low/air_temperature", b'{"time": "%s", "value": "cold"}', "not a number"),
    ("frostwatch/east-low/air_temperature", b'{"time": "%s", "value": 999}', "plausible range"),
    ("frostwatch/east-low/air_temperature", b"\xff\xfe\x00garbage", "UTF-8"),
    ("frostwatch/east-low/air_temperature", b"[" * 3000 + b"]" * 3000, "nests deeper"),
    ("frostwatch/east-low/air_temperature", b"7" * 5000, "more than 4300 digits"),
    ("frostwatch/east-low/air_temperature", b"x" * (1024 * 1024), "exceeds the limit"),
    ("frostwatch/east-low", b'{"time": "%s", "air_temperature": NaN}', "not a finite number"),
    ("frostwatch/nosuch/air_temperature", b'{"time": "%s", "value": 3}', "unknown station"),
    ("frostwatch/east-low/colour", b"3", "unknown quantity"),
    ("frostwatch/a/b/c/d", b"3", "is not frostwatch/STATION"),
]


def test_poison_payloads_are_rejected_with_reasons_and_ingest_carries_on(site, mosquitto, daemon_proc):
    cfg, db = site
    daemon_proc.start()
    assert wait_until(lambda: "connected to" in daemon_proc.log_text(), 20)
    valid = reading_msgs(300, START)
    future = (NOW + dt.timedelta(days=1)).isoformat()
    ancient = (NOW - dt.timedelta(days=800)).isoformat()
    poison = [(t, p.replace(b"%s", START.isoformat().encode()) if b"%s" in p else p, why) for t, p, why in POISON]
    poison.append(("frostwatch/east-low/air_temperature", json.dumps({"time": future, "value": 3}).encode(), "ahead of the receipt"))
    poison.append(("frostwatch/east-low/air_temperature", json.dumps({"time": ancient, "value": 3}).encode(), "retention horizon"))
    mixed: list[tuple[str, bytes]] = []
    for i, m in enumerate(valid):
        mixed.append(m)
        if i % 17 == 0 and i // 17 < len(poison):
            mixed.append(poison[i // 17][:2])
    pub = connect_publisher(mosquitto.port)
    publish_all(pub, mixed)
    assert wait_until(lambda: db_count(db) >= 300 and db_count(db, "SELECT count(*) FROM rejections") >= len(poison), 30)
    assert daemon_proc.alive()
    con = sqlite3.connect(str(db))
    reasons = [r[0] for r in con.execute("SELECT reason FROM rejections ORDER BY id")]
    con.close()
    assert len(reasons) == len(poison)
    for (_t, _p, why), reason in zip(poison, reasons, strict=True):
        assert why in reason, (why, reason)
    assert db_count(db) == 300  # every valid reading stored, no invalid one
    # still alive and ingesting
    publish_all(pub, reading_msgs(50, START, offset=300))
    assert wait_until(lambda: db_count(db) >= 350, 20)
    pub.loop_stop()
    daemon_proc.proc.send_signal(signal.SIGUSR1)
    assert wait_until(lambda: "thread MainThread" in daemon_proc.log_text(), 10)
    assert daemon_proc.terminate() == 0


def test_ready_watchdog_and_status(site, mosquitto, tmp_path):
    """READY=1 once started, WATCHDOG=1 pings while healthy (a fake NOTIFY_SOCKET), and
    `frostwatch status --json` shows the stations, blocks and heartbeat."""
    import socket
    import subprocess
    import sys

    cfg, db = site
    sock_path = tmp_path / "notify.sock"
    srv = socket.socket(socket.AF_UNIX, socket.SOCK_DGRAM)
    srv.bind(str(sock_path))
    srv.settimeout(20)
    d = DaemonProc(cfg, env={"NOTIFY_SOCKET": str(sock_path), "WATCHDOG_USEC": "2000000"})
    try:
        d.start()
        got = []
        while "WATCHDOG=1" not in got:
            got.append(srv.recv(4096).decode())
        assert "READY=1" in got and got.index("READY=1") < got.index("WATCHDOG=1")
        pub = connect_publisher(mosquitto.port)
        publish_all(pub, reading_msgs(30, NOW - dt.timedelta(minutes=30)))
        pub.loop_stop()
        assert wait_until(lambda: db_count(db) >= 30, 20)
        assert wait_until(lambda: db_count(db, "SELECT count(DISTINCT block) FROM decisions") == 3, 20)
        out = subprocess.run(
            [sys.executable, "-m", "frostwatch", "status", "--config", str(cfg), "--json"],
            capture_output=True, text=True, timeout=60,
        )
        assert out.returncode == 0, out.stderr
        doc = json.loads(out.stdout)
        by_id = {s["station"]: s for s in doc["stations"]}
        assert by_id["east-low"]["age_s"] is not None and by_id["east-tower"]["age_s"] is None
        assert {b["block"] for b in doc["blocks"]} == {"east", "river", "hill"}
        assert all(b["level"] for b in doc["blocks"])
        assert doc["daemon"]["pid"] == d.proc.pid and doc["daemon"]["broker_connected"] is True
        assert doc["daemon_alive"] is True
        assert d.terminate() == 0
        got = []
        srv.settimeout(5)
        while "STOPPING=1" not in got:
            got.append(srv.recv(4096).decode())
    finally:
        srv.close()
        if d.alive():
            d.kill()
