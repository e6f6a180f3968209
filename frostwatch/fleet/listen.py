"""The fleet view's MQTT side: subscribe to every site's state on the central broker.

Read-only: it subscribes (QoS 0, clean session) to `{prefix}/+/state/+`, `{prefix}/+/heartbeat`,
`{prefix}/+/info`, `{prefix}/+/online` and `{prefix}/+/bridge` and publishes nothing. Retained messages give the
whole picture at once on every (re)connect, so nothing is kept between sessions.

`gather()` (for `--json`) waits until the retained messages have settled: after the subscription
it subscribes once more to a topic that carries nothing; the broker answers that second
subscription after it has queued the retained messages of the first (QoS 0 messages are sent in
order), and then a short quiet spell ends it. The whole wait is bounded.

Raises `UsageError` for a bad address or secret file, `FleetBrokerError` when the broker cannot be
reached or refuses us within the wait.
"""

from __future__ import annotations

import datetime as dt
import logging
import os
import threading
import time
import uuid
from dataclasses import dataclass
from pathlib import Path

import paho.mqtt.client as paho

from frostwatch.errors import FrostwatchError, UsageError
from frostwatch.fleet.view import FleetModel
from frostwatch.mqtt_callbacks import guarded

log = logging.getLogger("frostwatch.fleet")

QUIET_S = 0.3  # no message for this long after the sync answer: the retained messages are in


class FleetBrokerError(FrostwatchError):
    """The central broker could not be reached or refused the view."""


@dataclass(frozen=True)
class BrokerAddress:
    host: str
    port: int
    prefix: str = "frostwatch"
    ca_file: str | None = None
    cert_file: str | None = None
    key_file: str | None = None
    username: str | None = None
    password_file: str | None = None
    tls: bool = False


def parse_broker(text: str) -> tuple[str, int]:
    """`HOST:PORT` (or `[v6addr]:PORT`, or HOST alone for 1883) -> (host, port); UsageError otherwise."""
    t = (text or "").strip()
    if not t:
        raise UsageError("--broker: empty; expected HOST:PORT, e.g. central.example.coop:8883")
    if t.startswith("["):
        host, _, rest = t[1:].partition("]")
        port_text = rest.removeprefix(":") if rest else "1883"
    elif t.count(":") == 1:
        host, port_text = t.split(":")
    elif ":" not in t:
        host, port_text = t, "1883"
    else:
        raise UsageError(f"--broker: {text!r}; write an IPv6 address as [ADDR]:PORT")
    try:
        port = int(port_text)
    except ValueError:
        raise UsageError(f"--broker: port {port_text!r} is not a number; expected HOST:PORT") from None
    if not host or not 0 < port < 65536:
        raise UsageError(f"--broker: {text!r}; expected HOST:PORT with a port 1..65535")
    return host, port


def read_password(path_text: str) -> str:
    """The broker password from a file that only its owner may read."""
    from frostwatch.secrets import read_secret_file

    return read_secret_file(path_text, "--password-file")


def _check_file(option: str, path: str | None) -> None:
    if path is not None and not Path(os.path.expanduser(path)).is_file():
        raise UsageError(f"{option}: {path} is not a readable file")


class FleetListener:
    """A paho client that feeds a FleetModel from the central broker."""

    def __init__(self, addr: BrokerAddress, model: FleetModel | None = None, client_id: str | None = None):
        for option, path in (("--ca-file", addr.ca_file), ("--cert-file", addr.cert_file), ("--key-file", addr.key_file)):
            _check_file(option, path)
        if (addr.cert_file is None) != (addr.key_file is None):
            raise UsageError("--cert-file and --key-file go together (a client certificate and its key)")
        self.addr = addr
        self.model = model or FleetModel(addr.prefix)
        self.lock = threading.Lock()
        self.connected = threading.Event()
        self.refused: str | None = None
        self.connected_since_utc: dt.datetime | None = None
        self.disconnected_since_utc: dt.datetime | None = dt.datetime.now(dt.UTC)
        self.last_message_mono = time.monotonic()
        self.sync_mid: int | None = None
        self.stopping = False
        self.synced = threading.Event()
        pre = addr.prefix.strip("/")
        self.filters = [f"{pre}/+/state/+", f"{pre}/+/heartbeat", f"{pre}/+/info", f"{pre}/+/online", f"{pre}/+/bridge"]
        self.sync_topic = f"{pre}/fleet-sync-{uuid.uuid4().hex[:12]}/nothing/here"
        c = paho.Client(paho.CallbackAPIVersion.VERSION2, client_id=client_id or f"frostwatch-fleet-{uuid.uuid4().hex[:8]}",
                        protocol=paho.MQTTv5)
        c.reconnect_delay_set(1, 10)
        if addr.username:
            c.username_pw_set(addr.username, read_password(addr.password_file) if addr.password_file else None)
        if addr.tls or addr.ca_file or addr.cert_file:
            c.tls_set(ca_certs=addr.ca_file, certfile=addr.cert_file, keyfile=addr.key_file)
        c.on_connect = self._guard(self._on_connect)
        c.on_disconnect = self._guard(self._on_disconnect)
        c.on_message = self._guard(self._on_message)
        c.on_subscribe = self._guard(self._on_subscribe)
        self.client = c

    @staticmethod
    def _guard(fn):
        return guarded(fn, log, "fleet view")

    def _on_connect(self, client, userdata, flags, reason_code, properties) -> None:
        if reason_code.is_failure:
            self.refused = str(reason_code)
            log.error("fleet view: %s:%d refused the connection: %s", self.addr.host, self.addr.port, reason_code)
            return
        self.refused = None
        self.connected_since_utc = dt.datetime.now(dt.UTC)
        self.disconnected_since_utc = None
        self.synced.clear()
        client.subscribe([(f, 0) for f in self.filters])
        _, self.sync_mid = client.subscribe(self.sync_topic, 0)
        self.connected.set()
        log.info("fleet view: connected to %s:%d", self.addr.host, self.addr.port)

    def _on_subscribe(self, client, userdata, mid, reason_code_list, properties) -> None:
        bad = [str(rc) for rc in reason_code_list if rc.is_failure]
        if bad and mid != self.sync_mid:
            log.error("fleet view: the broker refused a subscription: %s", ", ".join(bad))
            self.refused = "subscription refused: " + ", ".join(bad)
        if mid == self.sync_mid:
            self.last_message_mono = time.monotonic()
            self.synced.set()

    def _on_disconnect(self, client, userdata, flags, reason_code, properties) -> None:
        self.connected.clear()
        if self.disconnected_since_utc is None:
            self.disconnected_since_utc = dt.datetime.now(dt.UTC)
        if self.stopping:
            return
        log.warning("fleet view: disconnected from %s:%d (%s); reconnecting", self.addr.host, self.addr.port, reason_code)

    def _on_message(self, client, userdata, msg) -> None:
        self.last_message_mono = time.monotonic()
        with self.lock:
            reason = self.model.on_message(msg.topic, bytes(msg.payload), dt.datetime.now(dt.UTC), bool(msg.retain))
        if reason:
            log.info("fleet view: refused %s: %s", msg.topic, reason)

    # -- lifecycle -----------------------------------------------------------------------------
    def start(self) -> None:
        self.client.connect_async(self.addr.host, self.addr.port, keepalive=30, clean_start=True)
        self.client.loop_start()

    def stop(self) -> None:
        self.stopping = True
        try:
            self.client.disconnect()
        finally:
            self.client.loop_stop()

    def gather(self, wait_s: float = 10.0) -> bool:
        """Connect, take every retained message, return once they have settled (at most `wait_s`).
        False when messages were still arriving at the end of the wait (the picture may lack sites)."""
        deadline = time.monotonic() + wait_s
        self.start()
        while not self.synced.is_set():
            if self.refused:
                raise FleetBrokerError(f"the broker at {self.addr.host}:{self.addr.port} refused the fleet view: {self.refused}")
            if time.monotonic() > deadline:
                raise FleetBrokerError(f"no answer from the broker at {self.addr.host}:{self.addr.port} within "
                                       f"{wait_s:g} s; check --broker, TLS and credentials, or raise --wait")
            self.synced.wait(0.05)
        while time.monotonic() - self.last_message_mono < QUIET_S:
            if time.monotonic() >= deadline:
                return False
            time.sleep(0.05)
        return True

    def snapshot(self, now_utc: dt.datetime | None = None, only_site: str | None = None) -> dict:
        now = now_utc or dt.datetime.now(dt.UTC)
        with self.lock:
            doc = self.model.snapshot(now, only_site)
        doc["broker"] = f"{self.addr.host}:{self.addr.port}"
        doc["broker_connected"] = self.connected.is_set()
        since = self.disconnected_since_utc
        doc["broker_lost_since"] = None if since is None else since.isoformat(timespec="seconds").replace("+00:00", "Z")
        return doc
