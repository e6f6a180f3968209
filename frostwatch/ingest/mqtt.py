"""MQTT ingest: the only module that imports paho. Readings are acknowledged to the broker only
after they are committed to SQLite.

Design (reliability.md findings 1-6 and section 1):

- paho 2.x with CallbackAPIVersion.VERSION2, MQTT 5, a fixed client id, `clean_start=False` and a
  Session Expiry Interval, so readings published while the daemon is down are kept by the broker
  and arrive when it returns (paho's default, clean start on the first connect, would drop them).
- `manual_ack=True`: `on_message` only puts the message on a bounded queue; one writer thread
  parses a batch, commits it (readings and rejections) and then sends each PUBACK. A kill -9 at
  any point loses nothing: unacknowledged messages are redelivered and duplicates are stored once.
- A poison message costs only itself: parsing is total (any exception becomes the message's
  rejection), a batch that fails for one row is committed row by row (Store.add_ingest) and one
  that fails for one message is committed message by message, the bad one set aside as a
  rejection and acknowledged. Only a store that cannot write at all (disk full, I/O error) keeps
  the batch unacknowledged and retried; after `store_stall_s` that is a problem the heartbeat,
  the watchdog and the health alert name ("readings are not being stored: the disk is full").
- A retained message is subscribed with retain handling 1 (sent when the subscription is new,
  not on every reconnect) and a retained message already rejected once is not recorded again.
- Mosquitto 2.0.11 does not enforce its inflight window (finding 6), so the queue is bounded and
  `on_message` blocks when it is full (TCP back-pressure), never drops.
- Every callback is guarded: an exception in a paho callback silently kills its network thread.
- Liveness is judged from message flow (an echo of our own heartbeat), never from is_connected().
- `connect_async` + `loop_start` with a bounded reconnect backoff (1..3 s): the daemon may start
  before the broker and is back within seconds of the broker's return.

This module holds the paho client (connection, subscriptions, callbacks, status, health); the
writer thread that parses, commits and acknowledges is `frostwatch.ingest.writer`.
"""

from __future__ import annotations

import datetime as dt
import json
import logging
import queue
import threading
import time
from collections import deque
from collections.abc import Callable

import paho.mqtt.client as paho
from paho.mqtt.packettypes import PacketTypes
from paho.mqtt.properties import Properties
from paho.mqtt.subscribeoptions import SubscribeOptions

from frostwatch.config import Config
from frostwatch.errors import StoreError
from frostwatch.ingest.layouts import Mapping
from frostwatch.ingest.limits import RejectionLimiter
from frostwatch.ingest.writer import IngestSettings, IngestStats, IngestWriter, _Msg
from frostwatch.models import Reading
from frostwatch.mqtt_callbacks import guarded
from frostwatch.secrets import read_secret_file
from frostwatch.store import Store

log = logging.getLogger("frostwatch.mqtt")

# [[mappings]] and [broker] tls are validated in frostwatch.ingest.mappings (no paho there, so
# load_config need not import this module); re-exported here for existing callers
from frostwatch.ingest.mappings import MAPPING_KEYS, TLS_KEYS, mappings_from_config  # noqa: E402, F401

# ---- the client ------------------------------------------------------------------------------


def _utc_now() -> dt.datetime:
    return dt.datetime.now(dt.UTC)


class MqttIngest(IngestWriter):
    """Subscribe, queue, commit, acknowledge; publish the daemon's retained status.

    `on_committed(readings)` is called from the writer thread after each commit (the daemon uses
    it for its debounced evaluation). `clock` gives the receipt time.
    """

    def __init__(
        self,
        cfg: Config,
        store: Store,
        settings: IngestSettings,
        mappings: tuple[Mapping, ...] = (),
        on_committed: Callable[[list[Reading]], None] | None = None,
        clock: Callable[[], dt.datetime] = _utc_now,
        on_ack: Callable[[bytes, dt.datetime], object] | None = None,
        urgent: Callable[[list[Reading]], bool] | None = None,
    ):
        self.cfg = cfg
        self.b = cfg.broker
        self.store = store
        self.s = settings
        self.mappings = mappings
        self.on_committed = on_committed
        self.on_ack = on_ack
        self.urgent = urgent
        self._parsed: dict[int, list] = {}  # id(msg) -> parse result, for messages parsed on arrival
        self.clock = clock
        self.ack_topic = (settings.ack_topic or f"{cfg.broker.prefix.strip('/')}/ack").strip("/")
        self.known = {st.id for st in cfg.stations}
        self.max_age_s = cfg.storage.retention_days * 86400.0
        self.q: queue.Queue[_Msg] = queue.Queue(maxsize=settings.queue_max)
        self.stats = IngestStats()
        self.generation = 0
        self.connected = False
        self.last_flow = time.monotonic()  # any message in
        self.last_echo = time.monotonic()  # our own heartbeat came back: the path works end to end
        self.last_writer_loop = time.monotonic()
        self.last_commit = time.monotonic()
        self.commit_started: float | None = None  # a commit in progress since (monotonic)
        self.failing_since: float | None = None  # commits failing since (monotonic): the store cannot write
        self.failure_reason = ""
        self._failure_logged = 0.0
        # station -> receipt time (epoch s) of its latest valid reading, stored or not: a sensor
        # that reports while the store cannot write is not silent (health checks)
        self.heard: dict[str, float] = {}
        self.limiter = RejectionLimiter(cfg.storage.rejections_per_source_per_hour)
        self.disconnected_since: float | None = time.monotonic()
        self.out_of_range: dict[str, deque] = {}
        # station -> (epoch s, source and reason) of its latest rejected message: a sensor whose
        # every message is refused is not simply silent, and the health alert says why
        self.last_rejection: dict[str, tuple[float, str]] = {}
        self._stop = threading.Event()
        self._writer: threading.Thread | None = None
        self.client = self._make_client()

    # -- paho setup --------------------------------------------------------------------------
    def _make_client(self) -> paho.Client:
        c = paho.Client(
            paho.CallbackAPIVersion.VERSION2,
            client_id=self.b.client_id,
            protocol=paho.MQTTv5,
            manual_ack=True,
            reconnect_on_failure=True,
        )
        c.reconnect_delay_set(1, max(1, int(self.s.reconnect_max_s)))
        c.max_queued_messages_set(1000)  # outgoing status only; readings are never published by us
        c.will_set(self.status("online"), b"offline", qos=1, retain=True)
        if self.b.username:
            pw = (read_secret_file(self.b.password_file, "broker.password_file", self.cfg.path.parent if self.cfg.path else None)
                  if self.b.password_file else None)
            c.username_pw_set(self.b.username, pw)
        tls = self.b.tls or {}
        if tls:
            c.tls_set(ca_certs=tls.get("ca_file"), certfile=tls.get("cert_file"), keyfile=tls.get("key_file"), ciphers=tls.get("ciphers"))
        c.on_connect = self._guard(self._on_connect)
        c.on_disconnect = self._guard(self._on_disconnect)
        c.on_message = self._guard(self._on_message)
        c.on_subscribe = self._guard(self._on_subscribe)
        return c

    def status(self, *parts: str) -> str:
        return "/".join([self.s.status_topic.rstrip("/"), *parts])

    @staticmethod
    def _guard(fn):
        return guarded(fn, log, "ingest")

    def _on_connect(self, client, userdata, flags, reason_code, properties) -> None:
        if reason_code.is_failure:
            log.error("broker %s:%d refused the connection: %s", self.b.host, self.b.port, reason_code)
            return
        self.generation += 1
        self.connected = True
        self.disconnected_since = None
        self.last_echo = self.last_flow = time.monotonic()
        self.stats.connects += 1
        self.stats.session_present = bool(flags.session_present)
        # retain handling 1: a retained message comes when the subscription is new, not again on
        # every reconnect of a resumed session (a retained poison would cost a rejection each time)
        opts = SubscribeOptions(qos=1, retainHandling=SubscribeOptions.RETAIN_SEND_IF_NEW_SUB)
        subs = [(f"{self.b.prefix.strip('/')}/#", opts)]
        subs += [(m.subscription, opts) for m in self.mappings]
        if not self.status().startswith(self.b.prefix.strip("/") + "/"):
            subs.append((self.status("heartbeat"), SubscribeOptions(qos=1)))
        if self.on_ack is not None and not self.ack_topic.startswith(self.b.prefix.strip("/") + "/"):
            subs.append((self.ack_topic, SubscribeOptions(qos=1)))
        client.subscribe(subs)
        client.publish(self.status("online"), b"online", qos=1, retain=True)
        log.info(
            "connected to %s:%d as %s (session %s)", self.b.host, self.b.port, self.b.client_id,
            "resumed" if flags.session_present else "new",
        )

    def _on_subscribe(self, client, userdata, mid, reason_code_list, properties) -> None:
        bad = [rc for rc in reason_code_list if rc.is_failure]
        if bad:
            log.error("broker refused a subscription: %s", ", ".join(str(rc) for rc in bad))

    def _on_disconnect(self, client, userdata, flags, reason_code, properties) -> None:
        self.connected = False
        self.disconnected_since = time.monotonic()
        if not self._stop.is_set():
            log.warning("disconnected from the broker (%s); reconnecting", reason_code)

    def _on_message(self, client, userdata, msg) -> None:
        self.last_flow = time.monotonic()
        if msg.topic == self.status("heartbeat"):
            self.last_echo = self.last_flow
        m = _Msg(msg.topic, bytes(msg.payload), msg.mid, msg.qos, self.generation, self.clock(), bool(msg.retain))
        while not self._stop.is_set():
            try:
                self.q.put(m, timeout=0.5)  # full queue: block (back-pressure), never drop
                return
            except queue.Full:
                continue
        # stopping: not acknowledged, so the broker redelivers it next session

    # -- lifecycle -----------------------------------------------------------------------------
    def start(self) -> None:
        props = Properties(PacketTypes.CONNECT)
        props.SessionExpiryInterval = int(self.s.session_expiry_s)
        props.ReceiveMaximum = max(1, min(65535, self.s.batch_rows))
        props.MaximumPacketSize = max(4 * 1024 * 1024, 2 * self.b.max_payload_bytes)
        self._writer = threading.Thread(target=self._writer_main, name="frostwatch-writer", daemon=True)
        self._writer.start()
        self.client.connect_async(self.b.host, self.b.port, keepalive=self.b.keepalive_s, clean_start=False, properties=props)
        self.client.loop_start()

    def stop(self, timeout_s: float = 10.0) -> None:
        """Flush: commit and acknowledge what is queued, publish offline, disconnect."""
        self._stop.set()
        if self._writer:
            self._writer.join(timeout_s)
        try:  # rejections counted beyond the hourly limit: their summary rows, before leaving
            rows = self.limiter.flush(time.time())
            if rows:
                self.store.add_rejections(rows, self.clock())
        except Exception:  # noqa: BLE001 - best effort on the way out
            log.exception("could not store the summary of counted rejections")
        try:
            if self.connected:
                info = self.client.publish(self.status("online"), b"offline", qos=1, retain=True)
                info.wait_for_publish(2.0)
        except Exception:  # noqa: BLE001 - best effort on the way out
            log.debug("could not publish offline status", exc_info=True)
        try:
            self.client.disconnect()
        finally:
            self.client.loop_stop()

    def publish_json(self, subtopic: str, doc: object, retain: bool = True) -> None:
        """Publish a retained status document (QoS 1); never raises, never blocks."""
        try:
            info = self.client.publish(self.status(subtopic), json.dumps(doc, default=str).encode(), qos=1, retain=retain)
            if info.rc not in (paho.MQTT_ERR_SUCCESS, paho.MQTT_ERR_NO_CONN):
                log.warning("status %s not queued: %s", subtopic, paho.error_string(info.rc))
        except Exception:  # noqa: BLE001
            log.exception("could not publish status %s", subtopic)

    def heartbeat(self) -> None:
        """Publish the echo heartbeat; its return proves the whole message path works."""
        try:
            self.client.publish(self.status("heartbeat"), str(time.time()).encode(), qos=1)
        except Exception:  # noqa: BLE001
            log.exception("could not publish heartbeat")

    # -- health --------------------------------------------------------------------------------
    def net_thread_alive(self) -> bool:
        t = getattr(self.client, "_thread", None)
        return t is not None and t.is_alive()

    def problems(self) -> list[str]:
        """What keeps ingest from working now (empty when healthy); the watchdog uses this."""
        now = time.monotonic()
        out = []
        if not self._writer or not self._writer.is_alive():
            out.append("the writer thread is dead")
        elif now - self.last_writer_loop > 60:
            out.append(f"the writer thread has been stuck for {now - self.last_writer_loop:.0f} s")
        stalled = self.not_storing_s()
        if stalled >= self.s.store_stall_s:
            out.append(f"readings are not being stored ({self.failure_reason or 'a commit has not returned'}) "
                       f"for {stalled:.0f} s")
        if not self.net_thread_alive():
            out.append("the MQTT network thread is dead")
        deaf_after = 3 * self.s.heartbeat_s + self.b.keepalive_s
        # while commits fail nothing is acknowledged, so the broker's in-flight window holds our
        # heartbeat back: that is the store's fault, not the broker's
        if self.connected and not self.q.full() and not stalled and now - self.last_echo > deaf_after:
            out.append(f"connected but no message for {now - self.last_echo:.0f} s, not even our own heartbeat")
        return out

    def not_storing_s(self) -> float:
        """Seconds the writer has been unable to commit (failing commits, or one that has not
        returned); 0 while commits succeed."""
        now = time.monotonic()
        since = [t for t in (self.failing_since, self.commit_started) if t is not None]
        return now - min(since) if since else 0.0

    def broker_down_s(self) -> float:
        return 0.0 if self.disconnected_since is None else time.monotonic() - self.disconnected_since

    def recent_out_of_range(self, window_s: float = 3600.0) -> dict[str, int]:
        cut = time.monotonic() - window_s
        out = {}
        for st, dq in list(self.out_of_range.items()):
            while dq and dq[0] < cut:
                dq.popleft()
            if dq:
                out[st] = len(dq)
        return out

    def station_of(self, topic: str) -> str:
        for m in self.mappings:
            st = m.station_for(topic)
            if st is not None:
                return st
        pre = self.b.prefix.strip("/") + "/"
        return topic.removeprefix(pre).split("/")[0]


__all__ = ["MqttIngest", "IngestSettings", "IngestStats", "mappings_from_config", "StoreError"]
