"""Helpers of the fleet tests: the daemon helpers (a site on the test broker, the daemon as a
subprocess), a recording MQTT subscriber, `frostwatch fleet` as a subprocess, and simulated sites
that publish through a real broker with frostwatch's own publisher payloads."""

from __future__ import annotations

import datetime as dt
import json
import os
import socket
import subprocess
import sys
import threading
import time
from pathlib import Path

import paho.mqtt.client as paho

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "daemon"))

from daemon_helpers import DaemonProc, wait_until, write_config  # noqa: E402

from frostwatch.fleet import site as fs  # noqa: E402

__all__ = ["DaemonProc", "wait_until", "write_config", "Recorder", "fleet", "SimSite", "LEVELS", "REPO", "free_port"]

REPO = Path(__file__).resolve().parents[2]


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]

LEVELS = [("rest", 0), ("wait", 2), ("ready", 3), ("protect", 4), ("all-hands", 5)]


class Recorder:
    """A subscriber that keeps every message (topic, payload, retain) in arrival order."""

    def __init__(self, port: int, topic: str = "#", client_id: str = "", persistent: bool = False,
                 username: str | None = None, password: str | None = None, ca_file: str | None = None):
        self.msgs: list[tuple[str, bytes, bool]] = []
        self.lock = threading.Lock()
        self.topic = topic
        self.c = paho.Client(paho.CallbackAPIVersion.VERSION2, client_id=client_id, protocol=paho.MQTTv5)
        if username:
            self.c.username_pw_set(username, password)
        if ca_file:
            self.c.tls_set(ca_certs=ca_file)
        self.c.on_message = self._on_message
        self.c.on_connect = lambda c, u, f, rc, p: c.subscribe(self.topic, qos=1)
        self.c.reconnect_delay_set(1, 1)
        props = None
        if persistent:
            from paho.mqtt.packettypes import PacketTypes
            from paho.mqtt.properties import Properties

            props = Properties(PacketTypes.CONNECT)
            props.SessionExpiryInterval = 3600
        self.c.connect("127.0.0.1", port, keepalive=10, clean_start=not persistent, properties=props)
        self.c.loop_start()

    def _on_message(self, client, userdata, msg) -> None:
        with self.lock:
            self.msgs.append((msg.topic, bytes(msg.payload), bool(msg.retain)))

    def payloads(self, topic: str) -> list[bytes]:
        with self.lock:
            return [p for t, p, _ in self.msgs if t == topic]

    def last(self, topic: str) -> bytes | None:
        p = self.payloads(topic)
        return p[-1] if p else None

    def stop(self) -> None:
        self.c.disconnect()
        self.c.loop_stop()


def fleet(port: int, *args: str, timeout: float = 60.0) -> subprocess.CompletedProcess:
    """`frostwatch fleet --broker 127.0.0.1:PORT ARGS` as a subprocess (the installed command)."""
    env = dict(os.environ, PYTHONUNBUFFERED="1")
    return subprocess.run([sys.executable, "-m", "frostwatch", "fleet", "--broker", f"127.0.0.1:{port}", *args],
                          capture_output=True, text=True, timeout=timeout, env=env)


def fleet_json(port: int, *args: str) -> dict:
    p = fleet(port, "--json", *args)
    assert p.returncode == 0, p.stderr
    return json.loads(p.stdout)


class SimSite:
    """A simulated site: its own MQTT connection with the site's will, publishing its blocks'
    states and heartbeats with frostwatch.fleet.site's payloads, like the daemon's publisher."""

    def __init__(self, port: int, site: str, blocks: dict[str, tuple[str, int]], prefix: str = "frostwatch",
                 every_s: int = 60):
        self.site, self.prefix, self.blocks, self.every_s = site, prefix, dict(blocks), every_s
        self.c = paho.Client(paho.CallbackAPIVersion.VERSION2, client_id=f"sim-{site}", protocol=paho.MQTTv5)
        self.c.will_set(*fs.will_message(prefix, site), qos=1, retain=True)
        self.c.max_inflight_messages_set(200)
        self.c.connect("127.0.0.1", port, keepalive=10)
        self.c.loop_start()
        self.infos = []

    def _pub(self, topic: str, payload: bytes) -> None:
        self.infos.append(self.c.publish(topic, payload, qos=1, retain=True))

    def publish_all(self, now: dt.datetime | None = None, heartbeat_time: dt.datetime | None = None) -> None:
        now = now or dt.datetime.now(dt.UTC)
        self._pub(*fs.online_message(self.prefix, self.site))
        states = [{"block": b, "level": lvl, "rank": rank, "monitored": rank != 1, "as_of": now,
                   "predicted_min_c": 2.0 - rank, "band_c": 1.0, "predicted_min_at": now + dt.timedelta(hours=3),
                   "t10_crossing_at": now + dt.timedelta(hours=2) if rank >= 3 else None,
                   "action": f"{lvl} at {self.site}/{b}", "acknowledged": (rank % 2 == 0) if rank >= 3 else None}
                  for b, (lvl, rank) in self.blocks.items()]
        for t, p in fs.state_messages(self.prefix, self.site, states):
            self._pub(t, p)
        iso = fs.iso_utc(now)
        self._pub(*fs.info_message(self.prefix, fs.info_doc(self.site, self.site.title(), len(self.blocks), [], now)))
        hb = fs.heartbeat_doc(heartbeat_time or now, self.every_s, iso, iso)
        self._pub(*fs.heartbeat_message(self.prefix, self.site, hb))

    def wait(self, timeout_s: float = 20.0) -> None:
        deadline = time.monotonic() + timeout_s
        for i in self.infos:
            i.wait_for_publish(max(0.1, deadline - time.monotonic()))
            assert i.is_published(), f"{self.site}: the broker did not acknowledge a publication"
        self.infos.clear()

    def die(self) -> None:
        """The connection drops without a DISCONNECT (a killed process): the broker sends the will."""
        self.c.loop_stop()
        self.c.socket().close()

    def stop(self) -> None:
        try:
            self.c.disconnect()
        finally:
            self.c.loop_stop()
