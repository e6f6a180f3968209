"""Helpers of the fault-injection tests: a site config on the test broker, the real daemon as a
subprocess (optionally with a small prelude that patches one function to inject a fault), a
QoS 1 publisher, store queries and bounded waits. Every process is stopped by its own pid."""

from __future__ import annotations

import datetime as dt
import json
import os
import signal
import sqlite3
import subprocess
import sys
import textwrap
import time
from importlib import resources
from pathlib import Path

import paho.mqtt.client as paho

STATIONS = ("east-low", "river-low", "hill-low")


def write_config(tmp: Path, port: int, daemon: str = "", broker: str = "", tail: str = "") -> Path:
    text = resources.files("frostwatch.sample_logs").joinpath("demo-farm.toml").read_text(encoding="utf-8")
    text = text.replace("port = 1883", f"port = {port}" + (f"\n{broker}" if broker else ""), 1)
    text += "\n[daemon]\nbatch_delay_s = 0.3\nheartbeat_s = 1\nhealth_interval_s = 1\nlearn_nights = 1\n" + daemon
    text += tail
    p = tmp / "site.toml"
    p.write_text(text, encoding="utf-8")
    return p


class DaemonProc:
    """`frostwatch run` in a subprocess. `prelude` is Python run first in the child (to patch in
    a fault); `env` adds variables (NOTIFY_SOCKET, WATCHDOG_USEC, ...)."""

    def __init__(self, config: Path, prelude: str = "", env: dict | None = None):
        self.config = config
        self.log = config.parent / "daemon.log"
        self.prelude = textwrap.dedent(prelude)
        self.env = env or {}
        self.proc: subprocess.Popen | None = None

    def start(self) -> None:
        env = dict(os.environ, PYTHONUNBUFFERED="1", FROSTWATCH_LOG_LEVEL="INFO")
        for k in ("NOTIFY_SOCKET", "WATCHDOG_USEC", "WATCHDOG_PID"):
            env.pop(k, None)
        env.update(self.env)
        code = self.prelude + "\nimport sys\nfrom frostwatch.cli import main\nsys.exit(main(sys.argv[1:]))\n"
        with self.log.open("ab") as f:
            self.proc = subprocess.Popen([sys.executable, "-c", code, "run", "--config", str(self.config)],
                                         stdout=f, stderr=subprocess.STDOUT, env=env)

    def alive(self) -> bool:
        return self.proc is not None and self.proc.poll() is None

    def terminate(self, timeout: float = 20) -> int | None:
        if self.alive():
            self.proc.send_signal(signal.SIGTERM)
            try:
                return self.proc.wait(timeout)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait(10)
        return self.proc.returncode if self.proc else None

    def log_text(self) -> str:
        return self.log.read_text(errors="replace") if self.log.exists() else ""


def connect_publisher(port: int, client_id: str = "fault-publisher") -> paho.Client:
    c = paho.Client(paho.CallbackAPIVersion.VERSION2, client_id=client_id, protocol=paho.MQTTv5)
    c.max_inflight_messages_set(100)
    c.connect("127.0.0.1", port, keepalive=10)
    c.loop_start()
    return c


def publish(c: paho.Client, msgs: list[tuple[str, bytes]], wait_s: float = 20.0) -> bool:
    infos = [c.publish(t, p, qos=1) for t, p in msgs]
    deadline = time.monotonic() + wait_s
    for i in infos:
        i.wait_for_publish(max(0.1, deadline - time.monotonic()))
    return all(i.is_published() for i in infos)


def reading(station: str, t: dt.datetime, value: float) -> tuple[str, bytes]:
    stamp = t.astimezone(dt.UTC).isoformat().replace("+00:00", "Z")
    return f"frostwatch/{station}/air_temperature", json.dumps({"time": stamp, "value": value}).encode()


def query(db: Path, sql: str, args=()) -> list[tuple]:
    if not db.exists():
        return []
    con = sqlite3.connect(f"file:{db}?mode=ro", uri=True, timeout=10)
    try:
        return con.execute(sql, args).fetchall()
    except sqlite3.OperationalError:
        return []
    finally:
        con.close()


def health_events(db: Path, like: str = "%") -> list[tuple[int, str, str]]:
    return query(db, "SELECT time_utc_ms, subject, detail FROM events WHERE kind='health' AND subject LIKE ? "
                     "ORDER BY id", (like,))


def wait_until(pred, timeout_s: float, step_s: float = 0.1) -> bool:
    deadline = time.monotonic() + timeout_s
    while time.monotonic() < deadline:
        if pred():
            return True
        time.sleep(step_s)
    return bool(pred())
