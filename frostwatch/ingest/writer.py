"""The ingest writer: one thread that takes MQTT messages off the bounded queue in batches,
parses them (any exception becomes the message's rejection), commits readings and rejections to
SQLite and only then acknowledges each message to the broker. A batch that fails for one message
is committed message by message; a store that cannot write keeps the batch, unacknowledged, to
retry. No paho here: `IngestWriter` is a part of `frostwatch.ingest.mqtt.MqttIngest` and acknowledges
through its client.
"""

from __future__ import annotations

import datetime as dt
import logging
import queue
import time
from collections import deque
from dataclasses import dataclass, field

from frostwatch.errors import StoreError
from frostwatch.ingest.parse import parse_mqtt_message
from frostwatch.models import Reading, Rejection
from frostwatch.store.db import store_failure

log = logging.getLogger("frostwatch.mqtt")


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


class IngestWriter:
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
            station = self.station_of(r.source.removeprefix("mqtt:"))
            if self.cfg.station(station) is not None:  # declared stations only: a flood of names costs nothing
                self.last_rejection[station] = (now_s, f"{r.reason} ({r.source})")
            if "plausible range" in r.reason:  # every one counts here, stored or only counted
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
