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
from dataclasses import dataclass, field

import paho.mqtt.client as paho
from paho.mqtt.packettypes import PacketTypes
from paho.mqtt.properties import Properties
from paho.mqtt.subscribeoptions import SubscribeOptions

from frostwatch.config import Config
from frostwatch.errors import StoreError
from frostwatch.ingest.limits import RejectionLimiter
from frostwatch.ingest.parse import Mapping, parse_mqtt_message
from frostwatch.models import Reading, Rejection
from frostwatch.secrets import read_secret_file
from frostwatch.store import Store
from frostwatch.store.db import store_failure

log = logging.getLogger("frostwatch.mqtt")

# [[mappings]] and [broker] tls are validated in frostwatch.ingest.mappings (no paho there, so
# load_config need not import this module); re-exported here for existing callers
from frostwatch.ingest.mappings import MAPPING_KEYS, TLS_KEYS, mappings_from_config  # noqa: E402, F401

# ---- the client ------------------------------------------------------------------------------


@dataclass
class IngestSettings:
    batch_rows: int = 200
    batch_delay_s: float = 20.0  # SD-card wear; readings near a trigger are committed within urgent_delay_s
    queue_max: int = 5000
    session_expiry_s: int = 7 * 24 * 3600
    status_topic: str = "frostwatch/status"
    heartbeat_s: float = 15.0
    max_future_s: float = 600.0
    reconnect_max_s: float = 3.0
    stall_idle_s: float = 0.05  # a part-filled batch with no new message this long is committed
    stall_rows: int = 10
    # a quiet part-batch is committed early only when it came as a flood (at least this many rows
    # a second): the broker's in-flight window is then holding the rest back until we acknowledge
    # (reliability.md finding 6); readings trickling in from scattered sensors wait for batch_delay_s
    stall_flood_rows_per_s: float = 20.0
    ack_topic: str = ""  # alert acknowledgements arrive here (empty: "{prefix}/ack")
    # a batch holding a reading the `urgent` predicate flags (near a block's trigger in the watch
    # window) is committed this soon, whatever batch_delay_s says: alert latency on a risky night
    urgent_delay_s: float = 1.0
    # topics under this prefix are the site's own fleet state (frostwatch.fleet): acknowledged, not read
    ignore_prefix: str = ""

    # a writer that cannot commit for this long is a problem (heartbeat, watchdog, health alert)
    store_stall_s: float = 30.0


@dataclass
class IngestStats:
    received: int = 0
    stored: int = 0
    duplicates: int = 0
    conflicts: int = 0
    rejected: int = 0
    rejections_counted: int = 0  # beyond the per-source hourly limit: counted, not stored one by one
    acked: int = 0
    commits: int = 0
    store_errors: int = 0
    connects: int = 0
    session_present: bool | None = None
    last_reading_utc: str | None = None
    by_station: dict = field(default_factory=dict)

    def as_dict(self) -> dict:
        d = dict(self.__dict__)
        d.pop("by_station")
        return d


@dataclass(frozen=True)
class _Msg:
    topic: str
    payload: bytes
    mid: int
    qos: int
    generation: int
    received_utc: dt.datetime
    retain: bool = False


def _utc_now() -> dt.datetime:
    return dt.datetime.now(dt.UTC)


class MqttIngest:
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
        def wrapped(*a, **k):
            try:
                fn(*a, **k)
            except Exception:  # noqa: BLE001 - an exception here would silently kill paho's thread
                log.exception("error in MQTT callback %s (ignored, the client keeps running)", fn.__name__)

        wrapped.__name__ = fn.__name__
        return wrapped

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

    # -- the writer ----------------------------------------------------------------------------
    def _writer_main(self) -> None:
        batch: list[_Msg] = []
        opened = 0.0
        urgent_at: float | None = None
        last_put = time.monotonic()
        while True:
            self.last_writer_loop = time.monotonic()
            stopping = self._stop.is_set()
            try:
                m = self.q.get(timeout=0.01 if batch else 0.5)
                batch.append(m)
                last_put = time.monotonic()
                if len(batch) == 1:
                    opened = last_put
                if urgent_at is None and self.urgent is not None and self._is_urgent(m):
                    urgent_at = last_put
            except queue.Empty:
                if stopping and not batch:
                    return
            if not batch:
                continue
            now = time.monotonic()
            due = (
                len(batch) >= self.s.batch_rows
                or now - opened >= self.s.batch_delay_s
                or (len(batch) >= self.s.stall_rows and self.q.empty() and now - last_put >= self.s.stall_idle_s
                    and len(batch) >= self.s.stall_flood_rows_per_s * (last_put - opened))
                or (urgent_at is not None and now - urgent_at >= self.s.urgent_delay_s)
                or (stopping and self.q.empty())
            )
            if due:
                batch = self._commit_or_keep(batch)
                if batch:  # the store cannot write: kept unacknowledged, retried
                    if stopping:
                        return
                    time.sleep(1.0)
                    continue
                urgent_at = None

    def _ignored(self, topic: str) -> bool:
        return bool(self.s.ignore_prefix) and topic.startswith(self.s.ignore_prefix)

    def _commit_or_keep(self, batch: list[_Msg]) -> list[_Msg]:
        """Commit a batch; return the messages left uncommitted (empty unless the store itself
        cannot write). A batch that fails for any other reason is committed message by message:
        a message that still fails is set aside as a rejection and acknowledged, so one poison
        message costs only itself."""
        self.commit_started = time.monotonic()
        try:
            try:
                self._commit(batch)
                self._store_ok()
                return []
            except Exception as exc:  # noqa: BLE001 - sorted below
                if self._store_failed(exc, len(batch)):
                    return batch
                log.warning("a batch of %d messages failed (%s: %s); committing them one by one",
                            len(batch), type(exc).__name__, exc)
            for i, m in enumerate(batch):
                try:
                    self._commit([m])
                    continue
                except Exception as exc:  # noqa: BLE001
                    if self._store_failed(exc, len(batch) - i):
                        return batch[i:]
                    reason = f"could not be stored ({type(exc).__name__}: {str(exc)[:160]}); set aside"
                    log.error("message on %s set aside: %s", m.topic, reason)
                try:
                    self.store.add_rejections([Rejection(f"mqtt:{m.topic}", None, reason, _raw(m.payload))], m.received_utc)
                except Exception as exc:  # noqa: BLE001
                    if self._store_failed(exc, len(batch) - i):
                        return batch[i:]
                    log.exception("could not record the rejection of a message on %s; acknowledged anyway", m.topic)
                self.stats.rejected += 1
                self.stats.received += 1
                self._ack([m])
            self._store_ok()
            return []
        finally:
            self.commit_started = None

    def _store_failed(self, exc: BaseException, n: int) -> bool:
        """True (and noted) when `exc` says the store itself cannot write."""
        why = store_failure(exc.__cause__ or exc) if isinstance(exc, StoreError) else store_failure(exc)
        if why is None and isinstance(exc, StoreError):
            why = str(exc)
        if why is None:
            return False
        now = time.monotonic()
        self.stats.store_errors += 1
        self.failure_reason = why
        if self.failing_since is None:
            self.failing_since = now
            self._failure_logged = now
            log.error("cannot store readings: %s; %d messages kept unacknowledged and retried every second "
                      "(the broker keeps them)", why, n)
        elif now - self._failure_logged >= 60:
            self._failure_logged = now
            log.error("still cannot store readings after %.0f s: %s; %d messages waiting", now - self.failing_since, why, n)
        return True

    def _store_ok(self) -> None:
        if self.failing_since is not None:
            log.warning("readings are stored again after %.0f s (%s)", time.monotonic() - self.failing_since,
                        self.failure_reason)
        self.failing_since = None
        self.failure_reason = ""

    def _ack(self, batch: list[_Msg]) -> None:
        for m in batch:
            if m.qos > 0 and m.generation == self.generation:
                self.client.ack(m.mid, m.qos)
                self.stats.acked += 1
            # a message from an earlier connection is redelivered by the broker; that copy is
            # acknowledged then (and stored once)

    def _already_rejected(self, r: Rejection) -> bool:
        try:
            return self.store.has_rejection(r.source, r.raw)
        except Exception:  # noqa: BLE001 - when in doubt, record it
            return False

    def _parse(self, m: _Msg) -> list:
        return parse_mqtt_message(
            m.topic, m.payload, self.b.prefix, m.received_utc, self.known,
            self.b.max_payload_bytes, self.s.max_future_s, self.max_age_s, self.mappings,
        )

    def _is_urgent(self, m: _Msg) -> bool:
        """Parse a message on arrival (kept for its commit) and ask the urgency predicate."""
        if m.topic.startswith(self.status() + "/") or m.topic == self.ack_topic or self._ignored(m.topic):
            return False
        try:
            items = self._parse(m)
            self._parsed[id(m)] = items
            return bool(self.urgent([r for r in items if isinstance(r, Reading)]))
        except Exception:  # noqa: BLE001 - urgency is an optimisation; the commit parses again
            log.exception("urgency check failed (ignored)")
            return False

    def _commit(self, batch: list[_Msg]) -> None:
        """Parse, store (one transaction), handle acknowledgements, then PUBACK. Raises when
        nothing was committed."""
        readings: list[Reading] = []
        origins: list[tuple[str, int | None, str]] = []
        rejections: list[Rejection] = []
        status_root = self.status() + "/"
        ack_msgs: list[_Msg] = []
        for m in batch:
            if m.topic.startswith(status_root) or self._ignored(m.topic):
                continue  # our own status, heartbeat echo and fleet state: acknowledged, not stored
            if m.topic == self.ack_topic and self.on_ack is not None:
                ack_msgs.append(m)  # an alert acknowledgement, not a reading
                continue
            items = self._parsed.get(id(m))
            items = items if items is not None else self._parse(m)
            bad = [r for r in items if isinstance(r, Rejection)]
            if bad and m.retain and self._already_rejected(bad[0]):
                bad = []  # a retained message seen again (a new session): recorded once already
            rejections += bad
            for r in items:
                if isinstance(r, Reading):
                    readings.append(r)
                    origins.append((f"mqtt:{m.topic}", None, _raw(m.payload)))
                    self.heard[r.station] = m.received_utc.timestamp()
        now_s = time.time()
        for r in rejections:
            if "plausible range" in r.reason:  # every one counts here, stored or only counted
                station = self.station_of(r.source.removeprefix("mqtt:"))
                self.out_of_range.setdefault(station, deque(maxlen=1000)).append(time.monotonic())
        n_bad = len(rejections)
        saved = self.limiter.snapshot()
        keep = self.limiter.admit(rejections, now_s) + self.limiter.due(now_s)
        stored = dups = 0
        aside: list[Rejection] = []
        try:
            if readings or keep:
                stored, dups, aside = self.store.add_ingest(readings, keep, self.clock(), "mqtt", origins)
        except BaseException:
            self.limiter.restore(saved)  # nothing stored: the retry admits these again
            raise
        for m in ack_msgs:  # recorded by the outbox (its own transaction) before the PUBACK
            try:
                self.on_ack(m.payload, m.received_utc)
            except Exception as exc:  # noqa: BLE001 - a bad acknowledgement must not stop ingest
                if store_failure(exc) is not None:
                    raise  # the store cannot write: keep it unacknowledged, retried with the batch
                log.exception("could not handle an acknowledgement on %s", m.topic)
        # committed: now, and only now, acknowledge
        self._ack(batch)
        for m in batch:
            self._parsed.pop(id(m), None)
        conflicts = [r for r in aside if "already stored" in r.reason]
        st = self.stats
        st.received += len(batch)
        st.stored += stored
        st.duplicates += dups
        st.conflicts += len(conflicts)
        st.rejected += n_bad + len(aside) - len(conflicts)
        st.rejections_counted = self.limiter.counted_total
        st.commits += 1
        self.last_commit = time.monotonic()
        for r in keep:  # the log takes what the store takes: a flood costs a line per source and hour
            log.info("rejected %s: %s", r.source, r.reason)
        if readings:
            newest = max(r.time_utc for r in readings)
            st.last_reading_utc = newest.isoformat()
        if readings and self.on_committed:
            try:
                self.on_committed(readings)
            except Exception:  # noqa: BLE001
                log.exception("error after committing readings (ignored)")


def _raw(payload: bytes) -> str:
    return payload[:200].decode("utf-8", "replace")


__all__ = ["MqttIngest", "IngestSettings", "IngestStats", "mappings_from_config", "StoreError"]
