"""MQTT publish for a siren, strobe or relay in the house or shed (QoS 1, waits for PUBACK).

This is the only place besides frostwatch/ingest/mqtt.py that imports paho: the ingest client
subscribes to readings, this publisher connects per notification to the configured broker (often
the same local Mosquitto), publishes and disconnects, every step bounded by `timeout_s`.
Payload "json" (default) carries key, seq, level, rank, block, title, the short form and the
acknowledgement code; "text" the short form (the title where there is none); "on" the bare word
ON for a relay. Counts as local (a LAN broker needs no internet).
"""

from __future__ import annotations

import json
import threading
import time

import paho.mqtt.client as paho

from frostwatch.alerts.channels.message import Permanent, Transient
from frostwatch.secrets import read_secret


def payload_for(channel, msg) -> bytes:
    form = channel.options.get("payload", "json")
    if form == "on":
        return b"ON"
    if form == "text":
        return (msg.short or msg.title).encode("utf-8")
    return json.dumps({"key": msg.alert_key, "seq": msg.seq, "idempotency_key": msg.idem_key, "level": msg.level,
                       "rank": msg.rank, "block": msg.block, "title": msg.title, "kind": msg.kind,
                       "short": msg.short, "code": msg.code}).encode("utf-8")


def send(channel, msg, to, base_dir=None) -> str:
    o = channel.options
    host, port, topic = o.get("host", "127.0.0.1"), int(o.get("port", 1883)), o["topic"]
    t = channel.timeout_s
    deadline = time.monotonic() + t
    connected = threading.Event()
    result: dict = {}

    def on_connect(client, userdata, flags, reason_code, properties):
        result["rc"] = reason_code
        connected.set()

    client = paho.Client(paho.CallbackAPIVersion.VERSION2, client_id="", protocol=paho.MQTTv311)
    client.connect_timeout = t
    client.on_connect = on_connect
    if o.get("username"):
        try:
            client.username_pw_set(o["username"], read_secret(o, base_dir))
        except OSError as exc:
            raise Permanent(f"mqtt channel {channel.name}: cannot read the password: {exc}") from None
    try:
        client.connect(host, port, keepalive=max(5, int(t) * 2))
    except (OSError, ValueError) as exc:
        raise Transient(f"mqtt {host}:{port}: cannot connect: {exc}") from None
    client.loop_start()
    try:
        if not connected.wait(max(0.0, deadline - time.monotonic())):
            raise Transient(f"mqtt {host}:{port}: no CONNACK within {t:g} s")
        if result.get("rc") is not None and result["rc"].is_failure:
            raise Permanent(f"mqtt {host}:{port}: connection refused: {result['rc']}")
        info = client.publish(topic, payload_for(channel, msg), qos=int(o.get("qos", 1)), retain=bool(o.get("retain", False)))
        try:
            info.wait_for_publish(timeout=max(0.1, deadline - time.monotonic()))
        except (RuntimeError, ValueError) as exc:
            raise Transient(f"mqtt {host}:{port}: publish failed: {exc}") from None
        if not info.is_published():
            raise Transient(f"mqtt {host}:{port}: no PUBACK within {t:g} s")
    finally:
        try:
            client.disconnect()
        finally:
            client.loop_stop()
    return f"published to {topic}"
