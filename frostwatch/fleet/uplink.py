"""The site side: publish this site's state for a fleet view, on its own MQTT connection.

The daemon calls `evaluated()` after each evaluation and `beat()` from its heartbeat job. States
go out retained at QoS 1 when they change (frostwatch.fleet.site), the heartbeat every
`[fleet] heartbeat_s`, and the connection's last will marks the site "offline".

Why a connection of its own: MQTT gives one will per connection, and the ingest connection's will
already marks `{status}/online` offline (documented for local dashboards). This one lives and
dies with the daemon process like the ingest's, so a killed daemon fires both wills at once.
It publishes only, to the local broker; a Mosquitto bridge (deploy/mosquitto/bridge-fleet.conf)
carries `{prefix}/{site}/#` to the centre. Publishing never blocks or raises into the daemon:
paho queues up to 1000 messages while the local broker is away.
"""

from __future__ import annotations

import datetime as dt
import logging
import threading
import time
from collections.abc import Callable, Iterable

import paho.mqtt.client as paho
from paho.mqtt.packettypes import PacketTypes
from paho.mqtt.properties import Properties

from frostwatch.config import Config
from frostwatch.fleet import site as fs
from frostwatch.fleet.settings import FleetSettings, fleet_settings

log = logging.getLogger("frostwatch.fleet")

ACK_FROM_RANK = 3  # an alert of this rank or more asks someone to acknowledge it (standby and up)


def acknowledged_by_block(store, since_utc: dt.datetime, now_utc: dt.datetime) -> dict[str, bool | None]:
    """{block: whether its latest alert since `since_utc` is acknowledged}; None where that alert
    asks for no acknowledgement (rank below ACK_FROM_RANK) or there is none."""
    from frostwatch.store import reports as q

    latest: dict[str, dict] = {}
    for a in store.alerts(since_utc, now_utc + dt.timedelta(minutes=1)):
        latest[a["block"]] = a
    keys = [a["key"] for a in latest.values() if a["rank"] >= ACK_FROM_RANK]
    states = q.alert_states(store, keys)
    acks = q.acks_for(store, keys)
    out: dict[str, bool | None] = {}
    for b, a in latest.items():
        if a["rank"] < ACK_FROM_RANK:
            out[b] = None
        else:
            out[b] = bool(acks.get(a["key"])) or (states.get(a["key"]) or {}).get("state") == "acked"
    return out


class SiteUplink:
    """This site's publisher: states, heartbeat and will under `{prefix}/{site}/`."""

    def __init__(self, cfg: Config, settings: FleetSettings | None = None,
                 monotonic: Callable[[], float] = time.monotonic):
        self.cfg = cfg
        self.s = settings or fleet_settings(cfg)
        self.site = cfg.site.id
        self.prefix = cfg.broker.prefix.strip("/")
        self.topics = fs.SiteTopics(self.prefix, self.site)
        self.mono = monotonic
        self.filter = fs.StateFilter(self.s.min_change_c, self.s.min_change_min * 60.0, self.s.refresh_min * 60.0)
        self.lock = threading.Lock()
        self.evaluated_at: str | None = None
        self.changed_at: str | None = None
        self.blocks = len(cfg.blocks)
        self.last_beat = -1e18
        self.info_sent: tuple[dict, float] | None = None
        self.connected = False
        self.sent_messages = 0
        self.sent_bytes = 0  # topic + payload of every message handed to paho (the uplink's payload)
        self.client = self._make_client()

    def _make_client(self) -> paho.Client:
        from frostwatch.secrets import read_secret_file

        b = self.cfg.broker
        c = paho.Client(paho.CallbackAPIVersion.VERSION2, client_id=f"{b.client_id}-site", protocol=paho.MQTTv5)
        c.reconnect_delay_set(1, 3)
        c.max_queued_messages_set(1000)
        topic, payload = fs.will_message(self.prefix, self.site)
        props = None
        if self.s.will_delay_s:
            props = Properties(PacketTypes.WILLMESSAGE)
            props.WillDelayInterval = int(self.s.will_delay_s)
        c.will_set(topic, payload, qos=1, retain=True, properties=props)
        if b.username:
            pw = (read_secret_file(b.password_file, "broker.password_file", self.cfg.path.parent if self.cfg.path else None)
                  if b.password_file else None)
            c.username_pw_set(b.username, pw)
        tls = b.tls or {}
        if tls:
            c.tls_set(ca_certs=tls.get("ca_file"), certfile=tls.get("cert_file"), keyfile=tls.get("key_file"),
                      ciphers=tls.get("ciphers"))
        c.on_connect = self._on_connect
        c.on_disconnect = self._on_disconnect
        return c

    # -- paho callbacks (never raise: an exception would kill paho's thread) --------------------
    def _on_connect(self, client, userdata, flags, reason_code, properties) -> None:
        try:
            if reason_code.is_failure:
                log.error("fleet publisher: broker refused the connection: %s", reason_code)
                return
            self.connected = True
            self._publish(*fs.online_message(self.prefix, self.site), qos=1)
            with self.lock:
                self.filter.forget()  # the broker may have lost what it held: send every state again
                self.last_beat = -1e18
                self.info_sent = None
        except Exception:  # noqa: BLE001
            log.exception("fleet publisher: error on connect (ignored)")

    def _on_disconnect(self, client, userdata, flags, reason_code, properties) -> None:
        self.connected = False

    # -- lifecycle -----------------------------------------------------------------------------
    def start(self) -> None:
        b = self.cfg.broker
        self.client.connect_async(b.host, b.port, keepalive=b.keepalive_s, clean_start=True)
        self.client.loop_start()
        log.info("fleet publisher: site %r on %s/#", self.site, self.topics.root)

    def stop(self, timeout_s: float = 2.0) -> None:
        """A clean stop: say "offline" (nobody is watching now), then disconnect."""
        try:
            if self.connected:
                info = self._publish(*fs.will_message(self.prefix, self.site), qos=1)
                if info is not None:
                    info.wait_for_publish(timeout_s)
        except Exception:  # noqa: BLE001 - best effort on the way out
            log.debug("fleet publisher: could not say offline", exc_info=True)
        try:
            self.client.disconnect()
        finally:
            self.client.loop_stop()

    def _publish(self, topic: str, payload: bytes, qos: int = 1):
        try:
            info = self.client.publish(topic, payload, qos=qos, retain=True)
            if info.rc not in (paho.MQTT_ERR_SUCCESS, paho.MQTT_ERR_NO_CONN):
                log.warning("fleet publisher: %s not queued: %s", topic, paho.error_string(info.rc))
            self.sent_messages += 1
            self.sent_bytes += len(topic) + len(payload)
            return info
        except Exception:  # noqa: BLE001 - the fleet view must never disturb the site's own work
            log.exception("fleet publisher: could not publish %s", topic)
            return None

    # -- what the daemon calls -------------------------------------------------------------------
    def evaluated(self, blocks: Iterable[dict]) -> int:
        """After an evaluation: send the states worth sending. Returns how many were sent."""
        docs = [fs.state_doc(self.site, b) for b in blocks]
        with self.lock:
            now = self.mono()
            chosen = self.filter.select(docs, now)
            for d in chosen:
                self._publish(self.topics.state(d["block"]), fs.encode(d))
            self.filter.mark_sent(chosen, now)
            as_of = max((d["as_of"] for d in docs if d["as_of"]), default=None)
            self.evaluated_at = as_of or self.evaluated_at
            if chosen:
                self.changed_at = max((d["as_of"] for d in chosen if d["as_of"]), default=self.changed_at)
            self.blocks = max(self.blocks, len(docs))
        return len(chosen)

    def beat(self, now_utc: dt.datetime, problems: Iterable[str] = (), force: bool = False) -> bool:
        """The heartbeat job: publish the site heartbeat when one is due, and the site's info
        (name, blocks, problems) when it changed or is due for its refresh. True when beating."""
        with self.lock:
            mono = self.mono()
            if not force and mono - self.last_beat < self.s.heartbeat_s - 0.5:
                return False
            self.last_beat = mono
            hb = fs.heartbeat_doc(now_utc, self.s.heartbeat_s, self.evaluated_at, self.changed_at)
            info = fs.info_doc(self.site, self.cfg.site.name, self.blocks, problems, now_utc)
            last = self.info_sent
            send_info = (last is None or {**last[0], "time": None} != {**info, "time": None}
                         or mono - last[1] >= self.s.refresh_min * 60.0)
            if send_info:
                self.info_sent = (info, mono)
        if send_info:
            self._publish(*fs.info_message(self.prefix, info))
        self._publish(*fs.heartbeat_message(self.prefix, self.site, hb))
        return True


def states_from_status_docs(docs: dict[str, dict], acked: dict[str, bool | None]) -> list[dict]:
    """Per-block state dicts from the daemon's block documents (its `{status}/blocks/BLOCK`: the
    stored decision as `frostwatch status --json` shows it). The decision's own rank is kept; a
    document without one takes its level's rank."""
    from frostwatch.alerts.levels import rank_of

    return [fs.block_state_from_status_doc(d, d["rank"] if isinstance(d.get("rank"), int)
                                           else rank_of(d.get("level") or "rest"), acked.get(b))
            for b, d in docs.items()]
