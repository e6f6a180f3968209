"""Helpers for the daemon tests (imported by conftest.py and the tests): a site config pointing at the test broker, the daemon as a real
subprocess (`python -m frostwatch run`), and a QoS 1 publisher that waits for each PUBACK."""

from __future__ import annotations

import datetime as dt
import json
import os
import signal
import sqlite3
import subprocess
import sys
import time
from importlib import resources
from pathlib import Path

import paho.mqtt.client as paho

STATIONS = ("east-low", "river-low", "hill-low")


def write_config(tmp: Path, port: int, extra: str = "") -> Path:
    text = resources.files("frostwatch.sample_logs").joinpath("demo-farm.toml").read_text(encoding="utf-8")
    text = text.replace("port = 1883", f"port = {port}")
    text += (
        "\n[daemon]\nbatch_delay_s = 0.3\nheartbeat_s = 2\nheartbeat_store_s = 2\nhealth_interval_s = 5\nlearn_nights = 3\n" + extra
    )
    p = tmp / "site.toml"
    p.write_text(text, encoding="utf-8")
    return p


class DaemonProc:
    """`frostwatch run` in a subprocess, owned by the test (stopped by its own pid only)."""

    def __init__(self, config: Path, env: dict | None = None, command: list[str] | None = None):
        self.config = config
        self.command = command or [sys.executable, "-m", "frostwatch"]
        self.extra_env = env or {}
        self.log = config.parent / "daemon.log"
        self.proc: subprocess.Popen | None = None

    def start(self) -> None:
        env = dict(os.environ, PYTHONUNBUFFERED="1", FROSTWATCH_LOG_LEVEL="INFO")
        env.pop("NOTIFY_SOCKET", None)
        env.update(self.extra_env)
        f = self.log.open("ab")
        self.proc = subprocess.Popen(
            [*self.command, "run", "--config", str(self.config)],
            stdout=f, stderr=subprocess.STDOUT, env=env,
        )

    def alive(self) -> bool:
        return self.proc is not None and self.proc.poll() is None

    def kill(self) -> None:
        if self.alive():
            self.proc.send_signal(signal.SIGKILL)
            self.proc.wait(10)

    def terminate(self, timeout: float = 20) -> int:
        if self.alive():
            self.proc.send_signal(signal.SIGTERM)
            return self.proc.wait(timeout)
        return self.proc.returncode

    def log_text(self) -> str:
        return self.log.read_text(errors="replace") if self.log.exists() else ""


def connect_publisher(port: int, client_id: str = "test-publisher") -> paho.Client:
    c = paho.Client(paho.CallbackAPIVersion.VERSION2, client_id=client_id, protocol=paho.MQTTv5)
    c.max_inflight_messages_set(100)
    c.max_queued_messages_set(0)
    c.reconnect_delay_set(1, 2)
    c.connect("127.0.0.1", port, keepalive=10)
    c.loop_start()
    return c


def publish_all(c: paho.Client, msgs: list[tuple[str, bytes]], wait_s: float = 60.0) -> None:
    infos = [c.publish(t, p, qos=1) for t, p in msgs]
    deadline = time.monotonic() + wait_s
    for i in infos:
        i.wait_for_publish(max(0.1, deadline - time.monotonic()))
        assert i.is_published(), "the broker did not acknowledge a test publication"


def reading_msgs(n: int, start: dt.datetime, offset: int = 0, prefix: str = "frostwatch") -> list[tuple[str, bytes]]:
    """n distinct readings: station cycles, time steps one second, value plausible."""
    out = []
    for k in range(offset, offset + n):
        st = STATIONS[k % len(STATIONS)]
        t = (start + dt.timedelta(seconds=k)).isoformat().replace("+00:00", "Z")
        out.append((f"{prefix}/{st}/air_temperature", json.dumps({"time": t, "value": round(5 + (k % 50) / 10, 1)}).encode()))
    return out


def db_count(db: Path, sql: str = "SELECT count(*) FROM readings", args=()) -> int:
    if not db.exists():
        return 0
    con = sqlite3.connect(str(db), timeout=10)
    try:
        return con.execute(sql, args).fetchone()[0]
    except sqlite3.OperationalError:
        return 0
    finally:
        con.close()


def wait_until(pred, timeout_s: float, step_s: float = 0.1) -> bool:
    deadline = time.monotonic() + timeout_s
    while time.monotonic() < deadline:
        if pred():
            return True
        time.sleep(step_s)
    return pred()


